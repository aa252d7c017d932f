"""Model curves on a figure: solid where the Prony series was fitted, dashed and shaded where
it is extrapolated, with the uncertainty band when the build made one.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

from ..bands import band_columns
from ._build_data import BAND_LEVEL
from ._look import _GREY


def _shade_extrapolation(ax, lo, hi, xmin, xmax):
    """Shade the parts of [xmin, xmax] outside [lo, hi] (where the model is extrapolated)."""
    kw = dict(color="#8c8c8c", alpha=0.10, linewidth=0, zorder=0)
    if xmin < lo:
        ax.axvspan(xmin, lo, **kw)
    if xmax > hi:
        ax.axvspan(hi, xmax, **kw)


def _extrapolation_handle():
    from matplotlib.lines import Line2D

    return Line2D([], [], color=_GREY, lw=1.3, ls=(0, (4, 2.5)), label="extrapolated")


def _band(ax, frame, quantity, x, factor, colour, order=slice(None)):
    """Shade the band of ``quantity`` when the table has it; True if drawn."""
    low, high = band_columns(quantity)
    if low not in frame:
        return False
    ax.fill_between(x, frame[low].to_numpy()[order] / factor,
                    frame[high].to_numpy()[order] / factor, color=colour, alpha=0.18, lw=0,
                    zorder=2)
    return True


def _band_handle():
    from matplotlib.patches import Patch

    return Patch(facecolor="0.55", alpha=0.35, lw=0,
                 label=f"{BAND_LEVEL * 100:g} % band")


def _split_by_validity(x, y, extrapolated):
    """Segments of a curve: (x, y, inside?) with the joints shared so the line is unbroken."""
    segments = []
    start = 0
    n = len(x)
    for i in range(1, n + 1):
        if i == n or extrapolated[i] != extrapolated[start]:
            stop = min(i + 1, n)
            segments.append((x[start:stop], y[start:stop], not bool(extrapolated[start])))
            start = i
    return segments


def _model_line(ax, x, y, extrapolated, *, colour, label=None, lw=1.6, zorder=4):
    first = True
    for xs, ys, inside in _split_by_validity(x, y, extrapolated):
        ax.plot(xs, ys, color=colour, lw=lw, ls="-" if inside else (0, (4, 2.5)),
                label=label if (first and inside) else None, zorder=zorder)
        first = first and not inside
    return ax
