"""Figures written to files: PNG and SVG, byte for byte reproducible, with the minor ticks
merged into one artist per side to save faster.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from .._validation import bad_value

__all__ = ["figure_files", "save_figures", "load_matplotlib"]

_PNG_DPI = 150
_SVG_SALT = "ttsp"             # fixes the ids matplotlib writes into SVG files


def load_matplotlib() -> None:
    """Import matplotlib's figure machinery and the PNG and SVG backends now.

    About half a second of CPU; a process that forks figure drawers calls this first, so that
    every child shares the loaded modules instead of importing them again.
    """
    import matplotlib.backends.backend_agg  # noqa: F401
    import matplotlib.backends.backend_svg  # noqa: F401
    import matplotlib.figure  # noqa: F401


def _merge_minor_ticks(fig) -> None:
    """Draw the minor tick marks of the axes of ``fig`` as one line of tick markers per side.

    matplotlib makes every tick an artist of its own (two marks, a grid line and two labels,
    each laid out and drawn); the 40-odd minor ticks of a log axis over five decades cost about
    40 % of the time to save a figure. Where an axis' minor ticks are marks only (no labels, no
    grid lines, on a visible axis), they are drawn with the markers, sizes, widths and colours
    of the axis' own minor ticks, at the positions its locator gives for the final limits, and
    its minor locator is then switched off; positions are taken for every axes before any
    locator changes, since axes that share an axis share its locator. The files look the
    same (the demo's PNGs are pixel for pixel identical but for the antialiasing where a tick
    meets the frame, or a layout moved by under a pixel) and save about 15 % faster. The
    figure keeps the frozen ticks: :func:`save_figures` is for figures made to be saved.
    """
    from matplotlib.lines import Line2D
    from matplotlib.ticker import NullFormatter, NullLocator

    plan = []
    for ax in fig.axes:
        if not ax.axison:
            continue
        for axis, on_x in ((ax.xaxis, True), (ax.yaxis, False)):
            if (not axis.get_visible() or isinstance(axis.get_minor_locator(), NullLocator)
                    or not isinstance(axis.get_minor_formatter(), NullFormatter)):
                continue
            lo, hi = sorted(axis.get_view_interval())
            locs = np.asarray(axis.get_minorticklocs(), dtype=float)
            locs = locs[(locs >= lo) & (locs <= hi)]
            tick = axis.get_minor_ticks(1)[0] if locs.size else None
            if tick is not None and tick.gridline.get_visible():
                continue
            plan.append((ax, axis, on_x, locs, tick))
    for ax, axis, on_x, locs, tick in plan:
        if tick is None or not tick.get_visible():
            continue
        for mark, which, at in ((tick.tick1line, "tick1", 0.0), (tick.tick2line, "tick2", 1.0)):
            if not mark.get_visible():
                continue
            side = np.full(locs.size, at)
            ax.add_artist(Line2D(
                locs if on_x else side, side if on_x else locs,
                transform=(ax.get_xaxis_transform(which=which) if on_x
                           else ax.get_yaxis_transform(which=which)),
                linestyle="none", marker=mark.get_marker(), markersize=mark.get_markersize(),
                markeredgewidth=mark.get_markeredgewidth(), color=mark.get_color(),
                alpha=mark.get_alpha(), clip_on=False, zorder=axis.get_zorder(),
                label="_nolegend_"))
    for _, axis, _, _, _ in plan:
        axis.set_minor_locator(NullLocator())


def figure_files(folder: str | Path, name: str) -> dict:
    """``{"png": Path, "svg": Path}``: where :func:`save_figures` writes the figure ``name``."""
    folder = Path(folder)
    return {"png": folder / f"{name}.png", "svg": folder / f"{name}.svg"}


def save_figures(figures, folder: str | Path) -> dict:
    """Write each figure as ``<name>.png`` (150 dpi) and ``<name>.svg`` into ``folder``.

    Output is byte-for-byte reproducible: no date or software version is written into the
    files, and the ids inside the SVG are derived from a fixed salt.

    Parameters
    ----------
    figures : mapping of str to matplotlib Figure
        As returned by :func:`render_figures`.
    folder : str or Path
        Created if missing.

    Returns
    -------
    dict
        ``{name: {"png": Path, "svg": Path}}``.
    """
    import matplotlib

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    written = {}
    for name, fig in figures.items():
        if not isinstance(name, str) or not re.fullmatch(r"[A-Za-z0-9_\-]+", name):
            raise bad_value("figure name", "letters, digits, '_' or '-' (it becomes a file name)",
                            name)
        files = figure_files(folder, name)
        png, svg = files["png"], files["svg"]
        # Lay the figure out once and keep that layout for both files: with a layout engine
        # active, every savefig would lay out again. Running the engine alone places the axes
        # exactly as a full draw would (same bytes), at about a third of the cost. The engine
        # is then removed, not set to "none": savefig draws a figure that has any engine (a
        # "none" placeholder included) once without output before the real draw, which cost
        # a third of every save.
        _merge_minor_ticks(fig)
        engine = fig.get_layout_engine()
        if engine is not None:
            engine.execute(fig)
        with matplotlib.rc_context({"figure.autolayout": False,   # so that None means none
                                    "figure.constrained_layout.use": False}):
            fig.set_layout_engine(None)
        try:
            with matplotlib.rc_context({"svg.hashsalt": _SVG_SALT, "svg.fonttype": "path"}):
                fig.savefig(png, format="png", dpi=_PNG_DPI, metadata={"Software": None},
                            facecolor="white")
                fig.savefig(svg, format="svg", metadata={"Date": None, "Creator": None},
                            facecolor="white")
        finally:
            fig.set_layout_engine(engine)
        written[name] = files
    return written
