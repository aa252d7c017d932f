"""The look shared by every figure: the colourblind-safe palette, the temperature colour map
and its bar, axes styling, tick labels on log axes, small notes and the title line.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

import math

import numpy as np

from ._labels import _TREF

# Okabe & Ito (2002, "Color Universal Design") colours: distinguishable with the common forms
# of colour-vision deficiency.
_BLUE = "#0072B2"
_VERMILLION = "#D55E00"
_GREEN = "#009E73"
_ORANGE = "#E69F00"
_GREY = "#7f7f7f"
_INK = "#1a1a1a"

_SINGLE_SIZE = (6.4, 4.4)      # inches: one panel plus a colour bar


def _temperature_cmap():
    import matplotlib
    from matplotlib.colors import ListedColormap

    base = matplotlib.colormaps["viridis"]
    return ListedColormap(base(np.linspace(0.0, 0.9, 256)), name="ttsp_temperature")


def _temperature_colours(temperatures_C):
    """A Normalize over the temperatures and the colour map, as a ScalarMappable."""
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize

    t = np.asarray(temperatures_C, dtype=float)
    lo, hi = float(np.min(t)), float(np.max(t))
    if hi - lo < 1e-9:
        lo, hi = lo - 0.5, hi + 0.5
    return ScalarMappable(Normalize(lo, hi), _temperature_cmap())


def _colour_bar(ax, mappable):
    cbar = ax.figure.colorbar(mappable, ax=ax, pad=0.02, fraction=0.05, aspect=30)
    cbar.set_label("Temperature (°C)")
    cbar.ax.tick_params(labelsize=8.5, direction="out")
    cbar.outline.set_linewidth(0.6)
    return cbar


def _new_axes(ax, size=_SINGLE_SIZE):
    if ax is not None:
        return ax
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, layout="constrained")
    return fig.add_subplot()


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _power_label(value, _pos=None) -> str:
    """10⁻³, 2×10⁵ ... as plain Unicode text (no mathtext: it looks the same and draws faster)."""
    if not (np.isfinite(value) and value > 0):
        return ""
    exponent = math.floor(math.log10(value) + 1e-9)
    mantissa = value / 10.0 ** exponent
    power = "10" + str(exponent).translate(_SUPERSCRIPT)
    return power if abs(mantissa - 1.0) < 1e-6 else f"{mantissa:.3g}×{power}"


def _plain_label(value, _pos=None) -> str:
    if not (np.isfinite(value) and value > 0):
        return ""
    return f"{value:g}" if 1e-3 <= value < 1e5 else _power_label(value)


def _log_scale(ax, which: str):
    """Make the x or y axis of ``ax`` logarithmic with our tick labels (powers of ten only)."""
    from matplotlib.ticker import FuncFormatter, NullFormatter

    (ax.set_xscale if which == "x" else ax.set_yscale)("log")
    axis = ax.xaxis if which == "x" else ax.yaxis
    axis.set_major_formatter(FuncFormatter(_power_label))
    axis.set_minor_formatter(NullFormatter())


def _style(ax, *, logx=False, logy=False):
    """Our look: thin frame, ticks inside (major ones on all four sides, minor ones on the
    bottom and left: every tick is an artist of its own, and minor ticks on four sides made a
    fifth of the drawing time), a faint major grid."""
    if logx:
        _log_scale(ax, "x")
    if logy:
        _log_scale(ax, "y")
    for spine in ax.spines.values():
        spine.set_linewidth(0.7)
        spine.set_color(_INK)
    ax.tick_params(which="both", direction="in", top=True, right=True, colors=_INK,
                   labelsize=9)
    ax.tick_params(which="major", length=4.5, width=0.7)
    ax.tick_params(which="minor", length=2.5, width=0.5, top=False, right=False)
    ax.grid(True, which="major", color="#e3e3e3", linewidth=0.6, zorder=0)
    ax.set_axisbelow(True)
    ax.xaxis.label.set_size(10)
    ax.yaxis.label.set_size(10)
    return ax


def _style_twin(ax, colour):
    """A right-hand axis: ticks inside, its label and numbers in the colour of its curves."""
    ax.tick_params(which="both", direction="in", right=True, colors=colour, labelsize=9)
    ax.tick_params(which="major", length=4.5, width=0.7)
    ax.tick_params(which="minor", length=2.5, width=0.5)
    ax.yaxis.label.set_color(colour)
    ax.yaxis.label.set_size(10)
    ax.spines["right"].set_color(colour)


def _note(ax, text, loc="upper right"):
    """A small text in a corner of the axes (the reference temperature, a law)."""
    from matplotlib.offsetbox import AnchoredText

    box = AnchoredText(text, loc=loc, prop={"size": 8.5, "color": _INK}, frameon=True,
                       borderpad=0.6, pad=0.35)
    box.patch.set_boxstyle("round,pad=0.2,rounding_size=0.15")
    box.patch.set_facecolor("white")
    box.patch.set_edgecolor("#bdbdbd")
    box.patch.set_alpha(0.9)
    ax.add_artist(box)
    return box


def _tref_title(ax, result, extra: str = ""):
    """A small left-aligned line above the axes: the reference temperature and any note."""
    text = f"{_TREF} = {result.reference_temperature_C:.4g} °C" + (f";  {extra}" if extra else "")
    ax.set_title(text, loc="left", fontsize=9, color=_INK, pad=4)


def _tidy_log_axis(axis):
    """On a log axis spanning less than ~2.5 decades, put major ticks at 1-2-5 and label them
    as plain numbers: powers of ten alone leave one or two labels on a short axis.
    """
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    lo, hi = sorted(axis.get_view_interval())
    if not (lo > 0 and hi > lo) or math.log10(hi / lo) > 2.5:
        return
    axis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
    axis.set_major_formatter(FuncFormatter(_plain_label))
    axis.set_minor_formatter(NullFormatter())
