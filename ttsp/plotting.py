"""Figures of a campaign and of a build: raw isotherms, master curve, shift factors with their law,
the Prony fit, the material functions and the shift-free superposition check.

Every ``plot_*`` function draws on the :class:`~matplotlib.axes.Axes` it is given (a new
figure is made when ``ax`` is None) and returns it, so figures compose in a notebook or a paper.
matplotlib is imported inside the functions only, and pyplot never: figures are plain
:class:`matplotlib.figure.Figure` objects, so nothing global is touched and batch runs do not
accumulate open figures. Importing this module stays cheap.

Conventions of the figures
--------------------------
- Temperature is coded by a colourblind-safe sequential map (viridis without its palest end,
  which vanishes on white paper) with a colour bar in °C.
- Moduli are shown in Pa, kPa, MPa or GPa, whichever suits their magnitude; compliances in the
  inverse unit. Frequencies are in Hz or rad/s, following the unit the campaign was read in.
- Symbols follow the data: E, E′, E″, D for tensile campaigns; G, G′, G″, J for shear ones.
- Model curves are solid inside the range the Prony series was fitted to and dashed outside it
  (extrapolation); the outside is also shaded.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ._arrays import evenly_spaced_indices, outside_log_range
from ._validation import bad_value, check_choice
from .laws import law_prediction_stderr
from .laws.names import LAW_SHORT_TITLES as _LAW_NAMES
from .units import DISPLAY_MODULUS_UNITS, display_modulus_unit, kelvin_to_celsius

__all__ = [
    "FIGURE_NAMES",
    "OPTIONAL_FIGURES",
    "figure_files",
    "figure_names",
    "plot_isotherms",
    "plot_master_curve",
    "plot_shift_factors",
    "plot_prony_fit",
    "plot_time_functions",
    "plot_frequency_functions",
    "plot_superposition_check",
    "plot_relaxation_spectrum",
    "plot_cross_validation",
    "render_figures",
    "save_figures",
]

#: Names of the figures every build has (also the stems of the saved files); see
#: :func:`figure_names` for those of one build.
FIGURE_NAMES = ("isotherms", "master_curve", "shift_factors", "prony_fit", "time_functions",
                "frequency_functions", "superposition_check")
#: Figures a build makes only when asked (``BuildOptions.spectrum``) or when it has what they
#: show (held-out isotherms): see :func:`figure_names`.
OPTIONAL_FIGURES = ("relaxation_spectrum", "isochrone", "cross_validation")

# Okabe & Ito (2002, "Color Universal Design") colours: distinguishable with the common forms
# of colour-vision deficiency.
_BLUE = "#0072B2"
_VERMILLION = "#D55E00"
_GREEN = "#009E73"
_ORANGE = "#E69F00"
_GREY = "#7f7f7f"
_INK = "#1a1a1a"

_SINGLE_SIZE = (6.4, 4.4)      # inches: one panel plus a colour bar
_PNG_DPI = 150
_SVG_SALT = "ttsp"             # fixes the ids matplotlib writes into SVG files

_MODULUS_UNITS = DISPLAY_MODULUS_UNITS
_QUANTITY_ALIASES = {
    "storage_modulus": "storage_modulus_Pa",
    "loss_modulus": "loss_modulus_Pa",
    "complex_modulus": "complex_modulus_Pa",
    "phase_angle": "phase_angle_rad",
    "relaxation_modulus": "relaxation_modulus_Pa",
    "creep_compliance": "creep_compliance_1_per_Pa",
    "tan_delta": "tan_delta",
}


# ------------------------------------------------------------------------------------------
# small helpers: symbols, units, colours, the look
# ------------------------------------------------------------------------------------------
def _pretty(symbol: str) -> str:
    """Typographic primes: E'' → E″, E' → E′."""
    return symbol.replace("''", "″").replace("'", "′")


def _letters(modulus_kind: str) -> tuple[str, str]:
    """(modulus letter, compliance letter): ('E', 'D') tensile, ('G', 'J') shear."""
    return ("G", "J") if modulus_kind == "shear" else ("E", "D")


_modulus_unit = display_modulus_unit


def _compliance_unit(values_1_per_Pa) -> tuple[str, float]:
    """Inverse of :func:`_modulus_unit`: (unit, factor) with value_in_unit = value_SI / factor."""
    v = np.asarray(values_1_per_Pa, dtype=float).ravel()
    v = v[np.isfinite(v) & (v > 0)]
    unit, factor = "GPa", 1e9
    if v.size:
        # the smallest modulus unit in whose inverse the typical compliance is at least 1
        mid = 10.0 ** float(-np.median(np.log10(v)))
        for unit, factor in reversed(_MODULUS_UNITS):
            if factor >= mid * (1 - 1e-12):
                break
    return f"{unit}⁻¹", 1.0 / factor


def _frequency_unit(campaign) -> tuple[str, float]:
    """("Hz", 2π) or ("rad/s", 1): the unit the campaign's frequencies were read in (Hz if unknown).

    Returns (unit, factor) with value_in_unit = ω_rad_s / factor.
    """
    from .units import parse_unit

    for text in dict(getattr(campaign, "units_as_read", {}) or {}).values():
        try:
            unit = parse_unit(text)
        except Exception:  # a unit spelled for another purpose: not ours to judge here
            continue
        if unit.kind == "frequency":
            return ("rad/s", 1.0) if unit.scale == 1.0 else ("Hz", 2.0 * math.pi)
    return "Hz", 2.0 * math.pi


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


_AT = r"$a_T$"
_TREF = r"$T_\mathrm{ref}$"


def _tref_title(ax, result, extra: str = ""):
    """A small left-aligned line above the axes: the reference temperature and any note."""
    text = f"{_TREF} = {result.reference_temperature_C:.4g} °C" + (f";  {extra}" if extra else "")
    ax.set_title(text, loc="left", fontsize=9, color=_INK, pad=4)


def _extrapolation_handle():
    from matplotlib.lines import Line2D

    return Line2D([], [], color=_GREY, lw=1.3, ls=(0, (4, 2.5)), label="extrapolated")


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


_PARAM_DISPLAY = {  # parameter name → (mathtext symbol, unit, shown in °C?)
    "C1": (r"$C_1$", "", False),
    "C2_K": (r"$C_2$", "K", False),
    "activation_energy_kJ_per_mol": (r"$E_a$", "kJ/mol", False),
    "glass_transition_K": (r"$T_g$", "°C", True),
    "B_K": (r"$B$", "K", False),
    "T_inf_K": (r"$T_\infty$", "°C", True),
}


def _param_display(name: str):
    if name in _PARAM_DISPLAY:
        return _PARAM_DISPLAY[name]
    import re

    m = re.fullmatch(r"a(\d+)_per_K(\d*)", name)
    if m:
        k = m.group(1)
        return rf"$a_{{{k}}}$", "K⁻¹" if k == "1" else rf"K$^{{-{k}}}$", False
    return name, "", False


def _fmt(value, digits=3) -> str:
    if value is None or not np.isfinite(value):
        return "–"
    return f"{value:.{digits}g}"


def _shade_extrapolation(ax, lo, hi, xmin, xmax):
    """Shade the parts of [xmin, xmax] outside [lo, hi] (where the model is extrapolated)."""
    kw = dict(color="#8c8c8c", alpha=0.10, linewidth=0, zorder=0)
    if xmin < lo:
        ax.axvspan(xmin, lo, **kw)
    if xmax > hi:
        ax.axvspan(hi, xmax, **kw)


# ------------------------------------------------------------------------------------------
# access to the pieces of a build result
# ------------------------------------------------------------------------------------------
def _shift_table(result):
    """Temperatures (K), log10 a_T, their stderr and log10 b_T of a build, in temperature order."""
    shifts = result.shifts
    t = np.asarray(getattr(shifts, "temperature_K"), dtype=float)
    a = np.asarray(getattr(shifts, "log10_aT"), dtype=float)
    se = getattr(shifts, "log10_aT_stderr", None)
    se = np.full(t.shape, np.nan) if se is None else np.array(
        [np.nan if v is None else v for v in np.ravel(se)], dtype=float)
    b = getattr(shifts, "log10_bT", None)
    b = np.zeros(t.shape) if b is None else np.asarray(b, dtype=float)
    order = np.argsort(t, kind="stable")
    return t[order], a[order], se[order], b[order]


def _reduced_data(result):
    """Per isotherm: (temperature_C, reduced x, {quantity: shifted values}, outlier mask).

    Taken from the build's master-curve table (every input point, shifted), so the figure shows
    exactly what was written to ``master_curve.csv``.
    """
    campaign = result.campaign
    frame = result.master_curve_frame()
    xcol = "reduced_frequency_rad_s" if campaign.domain == "frequency" else "reduced_time_s"
    quantities = [q for q in campaign.quantities if q in frame.columns]
    out = []
    group_key = "isotherm" if "isotherm" in frame.columns else "temperature_K"
    for _, part in frame.groupby(group_key, sort=True):
        part = part.sort_values(xcol)
        tK = float(part["temperature_K"].iloc[0])
        outlier = (part["outlier"].to_numpy(dtype=bool) if "outlier" in part.columns
                   else np.zeros(len(part), dtype=bool))
        out.append((float(kelvin_to_celsius(tK)), part[xcol].to_numpy(dtype=float),
                    {q: part[q].to_numpy(dtype=float) for q in quantities}, outlier))
    out.sort(key=lambda item: item[0])
    return out


#: Level of the uncertainty band drawn around the model's material functions (ttsp.bands).
BAND_LEVEL = 0.95


def _functions(result):
    """The material-functions table of a build (model at the reference temperature), with its
    95 % band columns when the build made bands."""
    return result.material_functions_frame(points_per_decade=20, band=BAND_LEVEL)


def _band(ax, frame, quantity, x, factor, colour, order=slice(None)):
    """Shade the band of ``quantity`` when the table has it; True if drawn."""
    from .bands import band_columns

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


def _valid_range(result):
    rng = getattr(result.series, "valid_reduced_time_range_s", None)
    return None if rng is None else (float(rng[0]), float(rng[1]))


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


# ------------------------------------------------------------------------------------------
# campaign figures (no fitting needed)
# ------------------------------------------------------------------------------------------
def _resolve_quantities(campaign, quantity):
    present = campaign.quantities
    if quantity in (None, "auto"):
        if campaign.domain == "frequency":
            pick = [q for q in ("storage_modulus_Pa", "loss_modulus_Pa") if q in present]
            if not pick:
                pick = [q for q in ("complex_modulus_Pa", "tan_delta") if q in present][:1]
        else:
            pick = [q for q in ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
                    if q in present][:1]
        return pick or list(present[:1])
    names = [quantity] if isinstance(quantity, str) else list(quantity)
    out = []
    for name in names:
        full = _QUANTITY_ALIASES.get(name, name)
        check_choice("quantity", full, present)
        out.append(full)
    kinds = {_unit_kind(q) for q in out}
    if len(kinds) > 1:
        raise bad_value("quantity", "functions that share one axis unit (moduli together, or one "
                        "other function)", names)
    return out


def _unit_kind(quantity: str) -> str:
    if quantity.endswith("_1_per_Pa"):
        return "compliance"
    if quantity.endswith("_Pa"):
        return "modulus"
    return quantity


def _value_axis(campaign, quantities, values):
    """(label, factor, log?) for the y axis of ``quantities`` given all plotted values (SI)."""
    symbols = ", ".join(_pretty(campaign.symbol(q)) for q in quantities)
    kind = _unit_kind(quantities[0])
    if kind == "modulus":
        unit, factor = _modulus_unit(values)
        return f"{symbols} ({unit})", factor, True
    if kind == "compliance":
        unit, factor = _compliance_unit(values)
        return f"{symbols} ({unit})", factor, True
    if kind == "phase_angle_rad":
        return f"{symbols} (°)", math.pi / 180.0, False
    return symbols, 1.0, True


_MARKERS = ("o", "^", "s", "D")

# Points drawn per figure: a figure of a million points is a 30 MB SVG that a browser cannot
# open and that nobody can read. Every point stays in the CSVs; the figures draw an even subset
# of each curve (by rank of its abscissa), at least MIN_DRAWN_PER_CURVE of each.
DRAWN_POINTS_PER_FIGURE = 6_000
MIN_DRAWN_PER_CURVE = 24


def drawn_indices(n_points: int, n_curves: int) -> np.ndarray:
    """Indices of the points of one curve (of ``n_curves`` in a figure) that a figure draws:
    all of them when the figure stays within :data:`DRAWN_POINTS_PER_FIGURE`, else an even
    subset by rank (the data should be sorted along the curve)."""
    per_curve = max(MIN_DRAWN_PER_CURVE, DRAWN_POINTS_PER_FIGURE // max(n_curves, 1))
    return evenly_spaced_indices(n_points, per_curve)


def plot_isotherms(campaign, ax=None, quantity="auto"):
    """Plot the measured isotherms as read, coloured by temperature, with a colour bar in °C.

    Parameters
    ----------
    campaign : ttsp.Campaign
        The measurements (frequency sweeps or time-domain tests).
    ax : matplotlib Axes, optional
        Where to draw; a new figure is made when None.
    quantity : str or sequence of str
        ``"auto"`` (E′ and E″ for frequency data, E(t) or D(t) for time data) or names of
        measured functions (``"storage_modulus"``, ``"loss_modulus"``, ``"tan_delta"``,
        ``"complex_modulus"``, ``"phase_angle"``, ``"relaxation_modulus"``,
        ``"creep_compliance"``, with or without their unit suffix) that share one axis unit.

    Returns
    -------
    matplotlib Axes
        Log–log axes of the function against frequency (Hz or rad/s) or time (s).
    """
    campaign = campaign.with_derived() if campaign.domain == "frequency" else campaign
    quantities = _resolve_quantities(campaign, quantity)
    ax = _new_axes(ax)
    freq = campaign.domain == "frequency"
    xunit, xfactor = _frequency_unit(campaign) if freq else ("s", 1.0)
    values = np.concatenate([iso.values[q] for iso in campaign.isotherms for q in quantities
                             if q in iso.values])
    ylabel, yfactor, ylog = _value_axis(campaign, quantities, values)
    colours = _temperature_colours(campaign.temperatures_C)
    n_curves = len(campaign.isotherms) * len(quantities)
    for iso in campaign.isotherms:
        c = colours.to_rgba(iso.temperature_C)
        pick = drawn_indices(iso.n_points, n_curves)
        for k, q in enumerate(quantities):
            if q not in iso.values:
                continue
            filled = k == 0
            ax.plot(iso.x[pick] / xfactor, iso.values[q][pick] / yfactor, marker=_MARKERS[k % len(_MARKERS)],
                    ms=3.6, lw=0.8, color=c, mfc=c if filled else "white", mec=c, mew=0.9,
                    zorder=3)
    _style(ax, logx=True, logy=ylog)
    ax.set_xlabel(f"Frequency f ({xunit})" if freq and xunit == "Hz" else
                  f"Angular frequency ω ({xunit})" if freq else "Time t (s)")
    ax.set_ylabel(ylabel)
    if len(quantities) > 1:
        from matplotlib.lines import Line2D

        handles = [Line2D([], [], color=_INK, lw=0.8, marker=_MARKERS[k % len(_MARKERS)], ms=4,
                          mfc=_INK if k == 0 else "white", mec=_INK,
                          label=_pretty(campaign.symbol(q)))
                   for k, q in enumerate(quantities)]
        ax.legend(handles=handles, fontsize=8.5, frameon=False, loc="best")
    if ylog:
        _tidy_log_axis(ax.yaxis)
    _colour_bar(ax, colours)
    return ax


def _local_log_slope(x, y, half_window: int = 2):
    """d log10 y / d log10 x, smoothed over a fixed width in log x (:mod:`ttsp._log_slope`):
    at least ±``half_window`` neighbours, more on dense records."""
    from ._log_slope import local_log_slope

    return local_log_slope(x, y, min_points=half_window)


def plot_superposition_check(campaign, ax=None):
    """Shift-free check of thermorheological simplicity, coloured by temperature.

    Frequency data: the van Gurp–Palmen plot, phase angle δ against |E*| (van Gurp & Palmen,
    Rheology Bulletin 67, 5, 1998; Trinkle & Friedrich, Rheol. Acta 40, 322, 2001). Time data:
    the local log–log slope −d log E/d log t (or d log D/d log t) against E (or D). Both
    coordinates are unchanged by a horizontal shift, so the isotherms of a thermorheologically
    simple material fall on one curve without any shifting; fanning out shows complexity.

    Returns
    -------
    matplotlib Axes
    """
    ax = _new_axes(ax)
    colours = _temperature_colours(campaign.temperatures_C)
    letter, cletter = _letters(campaign.modulus_kind)
    if campaign.domain == "frequency":
        full = campaign.with_derived()
        if not {"complex_modulus_Pa", "phase_angle_rad"} <= set(full.quantities):
            raise bad_value("campaign", "frequency data with E′ and E″ (or |E*| and δ) for the van "
                            "Gurp–Palmen plot", ", ".join(full.quantities))
        mags = np.concatenate([i.values["complex_modulus_Pa"] for i in full.isotherms])
        unit, factor = _modulus_unit(mags)
        for iso in full.isotherms:
            c = colours.to_rgba(iso.temperature_C)
            m = iso.values["complex_modulus_Pa"]
            order = np.argsort(m)
            order = order[drawn_indices(order.size, len(full.isotherms))]
            ax.plot(m[order] / factor, np.degrees(iso.values["phase_angle_rad"][order]),
                    marker="o", ms=3.6, lw=0.8, color=c, mec=c, mfc=c, zorder=3)
        _style(ax, logx=True)
        ax.set_xlabel(f"|{letter}*| ({unit})")
        ax.set_ylabel("Phase angle δ (°)")
    else:
        quantity = ("relaxation_modulus_Pa" if "relaxation_modulus_Pa" in campaign.quantities
                    else "creep_compliance_1_per_Pa")
        sign = -1.0 if quantity == "relaxation_modulus_Pa" else 1.0
        values = np.concatenate([i.values[quantity] for i in campaign.isotherms])
        if quantity == "relaxation_modulus_Pa":
            unit, factor = _modulus_unit(values)
            xlabel = f"{letter}(t) ({unit})"
            ylabel = f"Local slope −d log {letter} / d log t"
        else:
            unit, factor = _compliance_unit(values)
            xlabel = f"{cletter}(t) ({unit})"
            ylabel = f"Local slope d log {cletter} / d log t"
        for iso in campaign.isotherms:
            c = colours.to_rgba(iso.temperature_C)
            y = iso.values[quantity]
            slope = sign * _local_log_slope(iso.x, y)
            ok = np.zeros(slope.size, dtype=bool)
            ok[drawn_indices(slope.size, len(campaign.isotherms))] = True
            ok &= np.isfinite(slope)
            ax.plot(y[ok] / factor, slope[ok], marker="o", ms=3.6, lw=0.8, color=c, mec=c, mfc=c,
                    zorder=3)
        _style(ax, logx=True)
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
    _colour_bar(ax, colours)
    return ax


# ------------------------------------------------------------------------------------------
# build figures
# ------------------------------------------------------------------------------------------
def _reduced_x_label(campaign, xunit: str, domain: str | None = None) -> str:
    if (domain or campaign.domain) != "frequency":
        return f"Reduced time t/{_AT} (s)"
    if xunit == "Hz":
        return f"Reduced frequency f·{_AT} (Hz)"
    return f"Reduced angular frequency ω·{_AT} (rad/s)"


def plot_master_curve(result, ax=None):
    """The master curve at the reference temperature: every point at its reduced frequency
    (f·a_T) or reduced time (t/a_T), coloured by its temperature, with the fitted Prony model.

    Parameters
    ----------
    result : ttsp.workflow.BuildResult

    Returns
    -------
    matplotlib Axes
        Log–log axes; the model is solid over the fitted range and dashed beyond it. Points
        the shifting flagged as outliers are drawn as grey crosses (they are kept, not dropped).
    """
    from matplotlib.lines import Line2D

    campaign = result.campaign
    freq = campaign.domain == "frequency"
    data = _reduced_data(result)
    quantities = [q for q in _resolve_quantities(campaign, "auto") if q in data[0][2]]
    ax = _new_axes(ax)
    xunit, xfactor = _frequency_unit(campaign) if freq else ("s", 1.0)
    values = np.concatenate([d[2][q] for d in data for q in quantities])
    ylabel, yfactor, ylog = _value_axis(campaign, quantities, values)
    colours = _temperature_colours([d[0] for d in data])
    n_outliers = 0
    xs_all = []
    for t_C, x, vals, outlier in data:
        c = colours.to_rgba(t_C)
        xs_all.append(x)
        drawn = np.zeros(x.size, dtype=bool)
        drawn[drawn_indices(x.size, len(data) * len(quantities))] = True
        for k, q in enumerate(quantities):
            y = vals[q]
            keep = drawn & ~outlier & np.isfinite(y)
            ax.plot(x[keep] / xfactor, y[keep] / yfactor, ls="none",
                    marker=_MARKERS[k % len(_MARKERS)], ms=3.4, mec=c, mfc=c if k == 0 else "white",
                    mew=0.8, zorder=3)
            if outlier.any():
                ax.plot(x[outlier] / xfactor, y[outlier] / yfactor, ls="none", marker="x", ms=5,
                        color=_GREY, mew=1.0, zorder=3)
        n_outliers += int(outlier.sum())   # points, as the outliers check counts them
    # the fitted model at the reference temperature, half a decade beyond the data at most
    xs_all = np.concatenate(xs_all)
    lo, hi = float(xs_all.min()) / 10 ** 0.5, float(xs_all.max()) * 10 ** 0.5
    frame = _functions(result)
    ext = frame["extrapolated"].to_numpy(dtype=bool)
    xm = 2.0 * math.pi * frame["frequency_Hz"].to_numpy() if freq else frame["time_s"].to_numpy()
    order = np.argsort(xm)
    window = (xm[order] >= lo) & (xm[order] <= hi)
    model_columns = {"storage_modulus_Pa", "loss_modulus_Pa", "tan_delta",
                     "relaxation_modulus_Pa", "creep_compliance_1_per_Pa"}
    drawn = False
    for q in quantities:
        if q in model_columns and q in frame.columns:
            idx = order[window]
            _model_line(ax, xm[idx] / xfactor, frame[q].to_numpy()[idx] / yfactor, ext[idx],
                        colour=_INK, lw=1.2)
            drawn = True
    handles = [Line2D([], [], ls="none", marker=_MARKERS[k % len(_MARKERS)], ms=4, mec=_INK,
                      mfc=_INK if k == 0 else "white", label=_pretty(campaign.symbol(q)))
               for k, q in enumerate(quantities)]
    if drawn:
        handles.append(Line2D([], [], color=_INK, lw=1.2, label="Prony series"))
        if ext[order][window].any():
            handles.append(_extrapolation_handle())
    if n_outliers:
        handles.append(Line2D([], [], ls="none", marker="x", color=_GREY,
                              label=f"flagged outlier points ({n_outliers})"))
    _style(ax, logx=True, logy=ylog)
    ax.set_xlabel(_reduced_x_label(campaign, xunit))
    ax.set_ylabel(ylabel)
    ax.legend(handles=handles, fontsize=8.5, frameon=False, loc="best")
    if ylog:
        _tidy_log_axis(ax.yaxis)
    _tref_title(ax, result, "master curve")
    _colour_bar(ax, colours)
    return ax


def _law_text(law_fit) -> str:
    law = law_fit.law
    lines = [f"{_LAW_NAMES.get(law.model, law.model)} law"]
    fixed = set(getattr(law_fit, "fixed_parameters", ()) or ())
    for name, value in law.params.items():
        symbol, unit, celsius = _param_display(name)
        shown = float(kelvin_to_celsius(value)) if celsius else value
        se = law_fit.stderr.get(name)
        if name in fixed:
            lines.append(f"{symbol} = {shown:.4g} {unit} (fixed)")
        else:
            lines.append(f"{symbol} = {shown:.4g} ± {_fmt(se, 2)} {unit}".rstrip())
    return "\n".join(lines)


def _shift_flags(result, temperature_K):
    """Per row of the shift table: its flags from the shifting (empty tuples if none)."""
    shifts = result.shifts
    flags = getattr(shifts, "flags", None)
    temps = getattr(shifts, "temperature_K", None)
    if flags is None or temps is None or len(flags) != len(temps):
        return [()] * len(temperature_K)
    by_t = {round(float(t), 6): tuple(f) for t, f in zip(temps, flags)}
    return [by_t.get(round(float(t), 6), ()) for t in temperature_K]


def _widen(mask):
    """``mask`` grown by one sample each way, so a dashed part meets the solid one."""
    out = mask.copy()
    out[1:] |= mask[:-1]
    out[:-1] |= mask[1:]
    return out


def _law_over_isotherms(law_fit, rng, t_K):
    """The law on a grid over its fitted range and every isotherm it is used for.

    Returns ``(grid_K, inside, curve, band, at_isotherms)``: ``inside`` marks the grid points
    within the fitted range ``rng`` (K); ``band`` is the law's ± one standard error (or None);
    ``at_isotherms`` is log10 a_T of the law at ``t_K`` itself, unclipped. Beyond the fitted
    range the law is an extrapolation; its warning is not repeated for a figure.
    """
    import warnings

    from .exceptions import ExtrapolationWarning

    lo, hi = min(rng[0], float(np.min(t_K))), max(rng[1], float(np.max(t_K)))
    grid_K = np.union1d(np.linspace(lo, hi, 241), [rng[0], rng[1]])
    inside = (grid_K >= rng[0]) & (grid_K <= rng[1])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        curve = np.asarray(law_fit.law.log10_aT(grid_K), dtype=float)
        band = law_prediction_stderr(law_fit, grid_K)
        at_isotherms = np.asarray(law_fit.law.log10_aT(t_K), dtype=float)
    return grid_K, inside, curve, band, at_isotherms


def plot_shift_factors(result, ax=None, residual_ax=None):
    """log10 a_T against temperature: the shifts found (± one standard error) and the fitted
    law with its ± one-standard-error band propagated from the parameter covariance; below it,
    the residuals of the shifts about the law.

    Parameters
    ----------
    result : ttsp.workflow.BuildResult
    ax : matplotlib Axes, optional
        Where to draw the shifts and the law. When None, a new figure is made with a residual
        panel below.
    residual_ax : matplotlib Axes, optional
        Where to draw the residuals (data − law, decades); only drawn when given or when
        ``ax`` is None.

    Returns
    -------
    matplotlib Axes
        Temperature in °C on x, log10 a_T on y (linear: it is already a logarithm).
    """
    if ax is None:
        from matplotlib.figure import Figure

        fig = Figure(figsize=(6.0, 5.2), layout="constrained")
        grid = fig.add_gridspec(2, 1, height_ratios=(3.0, 1.1))
        ax = fig.add_subplot(grid[0])
        residual_ax = fig.add_subplot(grid[1], sharex=ax)
        fig.align_ylabels([ax, residual_ax])
    t_K, log_a, se, _ = _shift_table(result)
    t_C = kelvin_to_celsius(t_K)
    law_fit = result.law_fit
    law = law_fit.law
    rng = law.valid_temperature_range_K or (float(t_K.min()), float(t_K.max()))
    grid_K, inside, curve, band, fitted = _law_over_isotherms(law_fit, rng, t_K)
    grid_C = kelvin_to_celsius(grid_K)
    name = _LAW_NAMES.get(law.model, law.model)
    if band is not None:
        ax.fill_between(grid_C, curve - band, curve + band, where=inside, color=_BLUE,
                        alpha=0.22, lw=0, label=f"{name} ± 1 s.e.", zorder=1)
    ax.plot(grid_C, np.where(inside, curve, np.nan), color=_BLUE, lw=1.6,
            label=f"{name} law, fitted", zorder=2)
    if not inside.all():   # the law over isotherms beyond its fitted range (bridged ones)
        ax.plot(grid_C, np.where(_widen(~inside), curve, np.nan), color=_BLUE, lw=1.3,
                ls=(0, (4, 2.5)), label=f"{name} law, extrapolated", zorder=2)
    flags = _shift_flags(result, t_K)
    bridged = np.array(["bridged" in f for f in flags], dtype=bool)
    weak = np.array(["low-information" in f for f in flags], dtype=bool) & ~bridged
    yerr = np.where(np.isfinite(se), se, 0.0)
    # a poorly determined shift keeps its error bar only while it fits on the axis (< 1 decade)
    yerr = np.where(weak & (yerr > 1.0), 0.0, yerr)
    groups = ((~bridged & ~weak, "o", _INK, "shift factors ± 1 s.e."),
              (weak, "D", _GREY, "poorly determined (low information)"),
              (bridged, "s", _VERMILLION, "placed across a gap by the law"))
    for mask, marker, colour, label in groups:
        if mask.any():
            ax.errorbar(t_C[mask], log_a[mask], yerr=yerr[mask], fmt=marker, ms=4.2,
                        color=colour, mfc="white", mew=1.0, elinewidth=0.9, capsize=2.2,
                        label=label, zorder=3)
    for a in (ax, residual_ax):
        if a is not None:
            a.axvline(result.reference_temperature_C, color=_GREY, lw=0.8, ls=(0, (2, 2)),
                      zorder=1)
    ax.axhline(0.0, color=_GREY, lw=0.6, zorder=1)
    _style(ax)
    ax.set_ylabel(r"Shift factor $\log_{10} a_T$")
    ax.legend(fontsize=8.5, frameon=False, loc="upper right")
    _note(ax, _law_text(law_fit), loc="lower left")
    _tref_title(ax, result)
    if residual_ax is None:
        ax.set_xlabel("Temperature T (°C)")
        return ax
    # residuals of the shifts about the law used for each isotherm (beyond the law's fitted
    # range too: a bridged isotherm is placed by it), with the law's own uncertainty as a band
    resid = log_a - fitted
    if band is not None:
        residual_ax.fill_between(grid_C, -band, band, where=inside, color=_BLUE, alpha=0.22,
                                 lw=0, zorder=1)
    residual_ax.axhline(0.0, color=_BLUE, lw=1.2, zorder=2)
    for mask, marker, colour, _label in groups:
        if mask.any():
            residual_ax.errorbar(t_C[mask], resid[mask], yerr=yerr[mask], fmt=marker, ms=3.6,
                                 color=colour, mfc="white", mew=0.9, elinewidth=0.8,
                                 capsize=2.0, zorder=3)
    _style(residual_ax)
    ax.tick_params(labelbottom=False)
    residual_ax.set_xlabel("Temperature T (°C)")
    residual_ax.set_ylabel("Data − law\n(decades)")
    # scaled to the residuals (and the band), not to the error bars of poorly determined shifts,
    # which may run off the panel
    lim = float(np.nanmax(np.abs(resid))) if resid.size else 0.0
    lim = max(lim * 1.4, float(np.nanmax(band[inside])) * 1.25 if band is not None else 0.0,
              0.01)
    residual_ax.set_ylim(-lim, lim)
    return ax


def plot_cross_validation(result, ax=None):
    """The held-out isotherms: rms prediction error (%) of each, left out of the build, at
    the shift its law gives and at its best shift, against temperature.

    The gap between the two markers of an isotherm is what the shift law costs there; the
    lower one is the error of the master curve itself (:mod:`ttsp.crossval`).

    Returns
    -------
    matplotlib Axes
        Temperature in °C on x, rms relative error in per cent on y (linear, from zero).
    """
    ax = _new_axes(ax, size=(6.0, 3.8))
    cv = result.cross_validation
    rows = [(h.temperature_C, h.rms_percent_at_law_aT.get("all", np.nan),
             h.rms_percent_at_best_aT.get("all", np.nan)) for h in cv.per_isotherm]
    t, at_law, at_best = (np.array(v, dtype=float) for v in zip(*rows))
    ok = np.isfinite(at_law) & np.isfinite(at_best)
    for ti, a, b in zip(t[ok], at_law[ok], at_best[ok]):
        ax.plot([ti, ti], [b, a], color=_GREY, lw=0.9, zorder=1)
    ax.plot(t[ok], at_law[ok], "o", color=_VERMILLION, ms=5.5, zorder=3,
            label="at the law's a$_T$ (the prediction)")
    ax.plot(t[ok], at_best[ok], "s", color=_BLUE, mfc="white", mew=1.2, ms=5.5, zorder=3,
            label="at the best a$_T$ (the master curve alone)")
    failed = ~ok
    if failed.any():
        for ti in t[failed]:
            ax.axvline(ti, color=_GREY, lw=0.8, ls=(0, (2, 2)), zorder=0)
    _style(ax)
    ax.set_xlabel("Temperature of the held-out isotherm T (°C)")
    ax.set_ylabel("rms prediction error (%)")
    params = cv.params
    _note(ax, f"median {params['median_rms_percent_at_law_aT']:.3g} % at the law's a$_T$, "
              f"{params['median_rms_percent_at_best_aT']:.3g} % at the best", loc="upper left")
    ax.legend(fontsize=8.5, frameon=False, loc="lower right")
    hi = float(np.nanmax(at_law[ok])) if ok.any() else 10.0
    ax.set_ylim(0.0, hi * 1.45)      # from zero: the errors compare as amounts
    return ax


def plot_prony_fit(result, axes=None):
    """The Prony fit: master-curve data with the fitted series, the residuals in per cent, and
    the discrete spectrum (stems E_i at τ_i) with the long-term modulus.

    Parameters
    ----------
    result : ttsp.workflow.BuildResult
    axes : sequence of three Axes, optional
        (fit, residuals, spectrum); a new figure with that layout is made when None.

    Returns
    -------
    tuple of three matplotlib Axes
    """
    if axes is None:
        from matplotlib.figure import Figure

        fig = Figure(figsize=(10.0, 4.8), layout="constrained")
        grid = fig.add_gridspec(2, 2, height_ratios=(3.0, 1.25), width_ratios=(1.35, 1.0))
        ax_fit = fig.add_subplot(grid[0, 0])
        ax_res = fig.add_subplot(grid[1, 0], sharex=ax_fit)
        ax_spec = fig.add_subplot(grid[:, 1])
        fig.align_ylabels([ax_fit, ax_res])
    else:
        ax_fit, ax_res, ax_spec = axes
    campaign = result.campaign
    fit = result.prony_fit
    series = result.series
    letter, cletter = _letters(campaign.modulus_kind)
    freq = fit.domain == "frequency"
    xunit, xfactor = _frequency_unit(campaign) if freq else ("s", 1.0)
    symbols = {"storage_modulus": f"{letter}′", "loss_modulus": f"{letter}″",
               "relaxation_modulus": f"{letter}(t)", "creep_compliance": f"{cletter}(t)"}
    colours = {"storage_modulus": _BLUE, "loss_modulus": _VERMILLION,
               "relaxation_modulus": _BLUE, "creep_compliance": _GREEN}
    compliance = list(fit.quantities) == ["creep_compliance"]
    all_meas = np.concatenate([np.asarray(fit.measured[q], dtype=float) for q in fit.quantities])
    unit, factor = (_compliance_unit(all_meas) if compliance else _modulus_unit(all_meas))
    x = np.asarray(fit.x, dtype=float)
    frame = _functions(result)
    ext = frame["extrapolated"].to_numpy(dtype=bool)
    xs = 2.0 * math.pi * frame["frequency_Hz"].to_numpy() if freq else frame["time_s"].to_numpy()
    order = np.argsort(xs)
    lo, hi = float(x.min()) / 10 ** 0.5, float(x.max()) * 10 ** 0.5
    idx = order[(xs[order] >= lo) & (xs[order] <= hi)]
    model_cols = {"storage_modulus": "storage_modulus_Pa", "loss_modulus": "loss_modulus_Pa",
                  "relaxation_modulus": "relaxation_modulus_Pa",
                  "creep_compliance": "creep_compliance_1_per_Pa"}
    pick = np.argsort(x)
    pick = pick[drawn_indices(x.size, 2 * len(fit.quantities))]   # fit and residual panels
    for q in fit.quantities:
        c = colours.get(q, _INK)
        ax_fit.plot(x[pick] / xfactor, np.asarray(fit.measured[q])[pick] / factor, ls="none", marker="o",
                    ms=2.8, mfc="none", mec=c, mew=0.6, alpha=0.75, zorder=2,
                    label=f"{symbols.get(q, q)} master curve")
        if q in model_cols:
            _model_line(ax_fit, xs[idx] / xfactor, frame[model_cols[q]].to_numpy()[idx] / factor,
                        ext[idx], colour=c, lw=1.5, label=f"{symbols.get(q, q)} Prony series")
        ax_res.plot(x[pick] / xfactor, np.asarray(fit.residuals_percent[q])[pick], ls="none", marker="o",
                    ms=2.6, mfc=c, mec=c, mew=0.0, alpha=0.8, zorder=2)
    _style(ax_fit, logx=True, logy=True)
    _style(ax_res, logx=True)
    ax_res.axhline(0.0, color=_INK, lw=0.8)
    ax_fit.set_ylabel(", ".join(symbols.get(q, q) for q in fit.quantities) + f" ({unit})")
    handles, labels = ax_fit.get_legend_handles_labels()
    if ext[idx].any():
        handles.append(_extrapolation_handle())
        labels.append("extrapolated")
    ax_fit.legend(handles, labels, fontsize=8, frameon=False, loc="best")
    _tidy_log_axis(ax_fit.yaxis)
    ax_fit.tick_params(labelbottom=False)
    ax_res.set_ylabel("Residual (%)")
    ax_res.set_xlabel(_reduced_x_label(campaign, xunit))
    resid = np.concatenate([np.asarray(fit.residuals_percent[q], dtype=float)
                            for q in fit.quantities])
    lim = max(1.0, float(np.nanmax(np.abs(resid))) * 1.15) if resid.size else 1.0
    ax_res.set_ylim(-lim, lim)
    _tref_title(ax_fit, result, f"{series.n_terms} terms, rms {fit.rms_percent:.2g} %, "
                                f"max {fit.max_percent:.2g} %")

    # spectrum
    tau = np.asarray(series.tau_s, dtype=float)
    e_i = np.asarray(series.modulus_Pa, dtype=float)
    keep = e_i > 0
    tau, e_i = tau[keep], e_i[keep]
    einf = float(series.equilibrium_modulus_Pa)
    sunit, sfactor = _modulus_unit(np.concatenate([e_i, [einf] if einf > 0 else []]))
    positive = np.concatenate([e_i, [einf] if einf > 0 else []]) / sfactor
    bottom = float(positive.min()) / 8.0 if positive.size else 1e-3
    top = float(positive.max()) * 40.0 if positive.size else 1.0
    rng = _valid_range(result)
    if rng is not None:
        ax_spec.axvspan(rng[0], rng[1], color=_BLUE, alpha=0.07, lw=0, zorder=0,
                        label="range of the data (reduced time)")
    if tau.size:
        ax_spec.vlines(tau, bottom, e_i / sfactor, color=_INK, lw=1.1, zorder=3)
        ax_spec.plot(tau, e_i / sfactor, ls="none", marker="o", ms=4.5, color=_INK, zorder=4,
                     label=rf"${letter}_i$ at $\tau_i$")
    if einf > 0:
        ax_spec.axhline(einf / sfactor, color=_VERMILLION, lw=1.1, ls=(0, (4, 2)), zorder=2,
                        label=rf"${letter}_\infty$ = {einf / sfactor:.3g} {sunit}")
    _style(ax_spec, logx=True, logy=True)
    from matplotlib.ticker import LogLocator

    ax_spec.xaxis.set_major_locator(LogLocator(numticks=7))
    ax_spec.set_ylim(bottom, top)
    if tau.size:
        ax_spec.set_xlim(tau.min() / 10.0, tau.max() * 10.0)
    ax_spec.set_xlabel(r"Relaxation time $\tau_i$ (s)")
    ax_spec.set_ylabel(rf"Prony coefficient ${letter}_i$ ({sunit})")
    ax_spec.legend(fontsize=8, frameon=False, loc="upper right")
    ax_spec.set_title("discrete relaxation spectrum", loc="left", fontsize=9, color=_INK, pad=4)
    return ax_fit, ax_res, ax_spec


def plot_relaxation_spectrum(spectrum, axes=None, *, series=None):
    """The continuous relaxation spectrum H(τ) and how its regularisation was chosen.

    Left: H(τ) on log–log axes, solid where the data determine it (τ within [1/ω_max, 1/ω_min])
    and dashed, on a shaded background, outside; the equilibrium modulus as a horizontal line;
    with ``series`` the discrete Prony terms E_i / Δln τ_i at τ_i for comparison (a discrete
    term of strength E_i spread over its share of ln τ has the same area as H there). Right: the
    selection criterion over the regularisation strengths tried (GCV value, or the L-curve
    corner score), the chosen one marked.

    Parameters
    ----------
    spectrum : ttsp.spectrum.RelaxationSpectrum
    axes : sequence of two Axes, optional
        (spectrum, selection); a new 10 × 4.2 in figure is made when None.
    series : ttsp.prony.PronySeries, optional
        A Prony series at the same reference temperature, shown as points.

    Returns
    -------
    tuple of two matplotlib Axes
    """
    if axes is None:
        from matplotlib.figure import Figure

        fig = Figure(figsize=(10.0, 4.2), layout="constrained")
        grid = fig.add_gridspec(1, 2, width_ratios=(1.6, 1.0))
        ax, ax_sel = fig.add_subplot(grid[0, 0]), fig.add_subplot(grid[0, 1])
    else:
        ax, ax_sel = axes
    letter, _ = _letters(spectrum.modulus_kind)
    tau = np.asarray(spectrum.tau_s, dtype=float)
    H = np.asarray(spectrum.H_Pa, dtype=float)
    lo, hi = spectrum.valid_tau_range_s
    positive = H > 0
    einf = float(spectrum.equilibrium_modulus_Pa)
    shown = np.concatenate([H[positive], [einf] if einf > 0 else []])
    unit, factor = _modulus_unit(shown if shown.size else np.array([1.0]))
    outside = outside_log_range(tau, lo, hi)
    if positive.any():
        _model_line(ax, tau[positive], H[positive] / factor, outside[positive], colour=_BLUE,
                    label="H(τ), Tikhonov")
    if einf > 0:
        ax.axhline(einf / factor, color=_VERMILLION, lw=1.1, ls=(0, (4, 2)), zorder=2,
                   label=f"{letter}∞ of the H(τ) fit = {einf / factor:.3g} {unit}")
    if series is not None:
        t_i = np.asarray(series.tau_s, dtype=float)
        e_i = np.asarray(series.modulus_Pa, dtype=float)
        keep = e_i > 0
        if keep.sum() >= 2:
            ln_t = np.log(t_i[keep])
            width = np.gradient(ln_t)          # each term's share of ln τ
            ax.plot(t_i[keep], e_i[keep] / width / factor, ls="none", marker="o", ms=4.0,
                    mfc="none", mec=_INK, mew=0.8, zorder=5,
                    label=f"Prony terms {letter}ᵢ/Δln τᵢ")
    _style(ax, logx=True, logy=True)
    if tau.size:
        _shade_extrapolation(ax, lo, hi, float(tau.min()), float(tau.max()))
        ax.set_xlim(float(tau.min()), float(tau.max()))
    if positive.any():
        top = float(np.max(H[positive])) / factor
        ax.set_ylim(top * 1e-4, top * 3.0)
    ax.set_xlabel("Relaxation time τ (s), reduced")
    ax.set_ylabel(f"Spectrum H(τ) ({unit})")
    handles, labels = ax.get_legend_handles_labels()
    if outside.any():
        handles.append(_extrapolation_handle())
        labels.append("outside the data (extrapolated)")
    ax.legend(handles, labels, fontsize=8, frameon=False, loc="lower center")
    ref = spectrum.reference_temperature_K
    where = "" if ref is None else f"{_TREF} = {kelvin_to_celsius(ref):.2f} °C; "
    ax.set_title(f"{where}continuous relaxation spectrum, fit rms {spectrum.rms_percent:.2g} %",
                 loc="left", fontsize=9, color=_INK, pad=4)

    lam = np.asarray(spectrum.lambda_grid, dtype=float)
    crit = np.asarray(spectrum.criterion, dtype=float)
    ok = np.isfinite(crit) & (lam > 0)
    ax_sel.plot(lam[ok], crit[ok], color=_GREEN, lw=1.4, marker="o", ms=3.0)
    chosen = np.isclose(lam, spectrum.regularisation, rtol=1e-12, atol=0.0) & ok
    if chosen.any():
        ax_sel.plot(lam[chosen], crit[chosen], ls="none", marker="o", ms=8.0, mfc="none",
                    mec=_VERMILLION, mew=1.6, label=f"chosen λ = {spectrum.regularisation:.3g}")
        ax_sel.legend(fontsize=8, frameon=False, loc="best")
    _style(ax_sel, logx=True, logy=spectrum.method == "gcv" and bool(np.all(crit[ok] > 0)))
    ax_sel.set_xlabel("Regularisation strength λ")
    ax_sel.set_ylabel("GCV value" if spectrum.method == "gcv" else "L-curve corner score")
    how = {"gcv": "generalised cross-validation", "lcurve": "L-curve corner",
           "fixed": "fixed by the user"}.get(spectrum.method, spectrum.method)
    ax_sel.set_title(f"choice of λ: {how}", loc="left", fontsize=9, color=_INK, pad=4)
    return ax, ax_sel


def _twin_legend(ax, twin, extra=()):
    """One legend for an axes and its twin, in a row below the x-axis label (curves that span
    the whole width leave no free corner inside)."""
    lines = [ln for ln in ax.get_lines() + twin.get_lines() if not ln.get_label().startswith("_")]
    handles = lines + list(extra)
    ax.legend(handles, [h.get_label() for h in handles], fontsize=8.5, frameon=False,
              loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=len(handles),
              handlelength=1.8, columnspacing=1.2)


def plot_time_functions(result, ax=None):
    """Relaxation modulus E(t) (left axis) and creep compliance D(t) (right axis) of the model
    at the reference temperature over reduced time; extrapolated parts dashed and shaded.

    Returns
    -------
    matplotlib Axes
        The E(t) axes; the D(t) axes is its twin (``ax.figure.axes``).
    """
    ax = _new_axes(ax, size=(6.4, 4.4))
    letter, cletter = _letters(result.campaign.modulus_kind)
    frame = _functions(result)
    t = frame["time_s"].to_numpy()
    e = frame["relaxation_modulus_Pa"].to_numpy()
    d = frame["creep_compliance_1_per_Pa"].to_numpy()
    ext = frame["extrapolated"].to_numpy(dtype=bool)
    eunit, efactor = _modulus_unit(e)
    dunit, dfactor = _compliance_unit(d)
    _model_line(ax, t, e / efactor, ext, colour=_BLUE, label=f"{letter}(t) relaxation modulus")
    banded = _band(ax, frame, "relaxation_modulus", t, efactor, _BLUE)
    twin = ax.twinx()
    _model_line(twin, t, d / dfactor, ext, colour=_VERMILLION,
                label=f"{cletter}(t) creep compliance")
    _measured_over_model(result, ax, twin, efactor, dfactor)
    _band(twin, frame, "creep_compliance", t, dfactor, _VERMILLION)
    rng = _valid_range(result)
    _style(ax, logx=True, logy=True)
    ax.tick_params(which="both", right=False)
    _log_scale(twin, "y")
    _style_twin(twin, _VERMILLION)
    _style_twin_left(ax, _BLUE)
    if rng is not None:
        _shade_extrapolation(ax, rng[0], rng[1], float(t.min()), float(t.max()))
    ax.set_xlim(float(t.min()), float(t.max()))
    ax.set_xlabel(f"Reduced time t/{_AT} (s)")
    ax.set_ylabel(f"Relaxation modulus {letter}(t) ({eunit})")
    twin.set_ylabel(f"Creep compliance {cletter}(t) ({dunit})")
    _tidy_log_axis(ax.yaxis)
    _tidy_log_axis(twin.yaxis)
    _twin_legend(ax, twin, ([_extrapolation_handle()] if ext.any() else [])
                 + ([_band_handle()] if banded else []))
    _tref_title(ax, result, "from the Prony series")
    return ax


def _measured_over_model(result, ax, twin, efactor, dfactor):
    """When both E(t) and D(t) were measured, their shifted points under the model lines: the
    D(t) line is interconverted from the series fitted to E(t), so the figure shows the one
    curve drawn over the other measured one (the check ``relaxation_creep`` gives the number).
    At most 400 points of each, evenly by rank of reduced time."""
    names = ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
    if result.campaign.domain != "time" or not set(names) <= set(result.campaign.quantities):
        return
    data = _reduced_data(result)
    t = np.concatenate([d[1] for d in data])
    for q, axis, colour, factor in ((names[0], ax, _BLUE, efactor),
                                    (names[1], twin, _VERMILLION, dfactor)):
        y = np.concatenate([d[2][q] for d in data])
        order = np.argsort(t)
        pick = order[np.unique(np.linspace(0, order.size - 1, min(400, order.size)).astype(int))]
        axis.plot(t[pick], y[pick] / factor, ls="none", marker="o", ms=2.2, alpha=0.35,
                  color=colour, zorder=2)


def _style_twin_left(ax, colour):
    ax.yaxis.label.set_color(colour)
    ax.tick_params(axis="y", which="both", colors=colour)
    ax.spines["left"].set_color(colour)


def plot_frequency_functions(result, ax=None):
    """Storage and loss modulus (left axis, log) and tan δ (right axis, linear) of the model at
    the reference temperature over reduced frequency; extrapolated parts dashed and shaded.

    Returns
    -------
    matplotlib Axes
        The modulus axes; the tan δ axes is its twin.
    """
    ax = _new_axes(ax, size=(6.4, 4.4))
    campaign = result.campaign
    letter, _ = _letters(campaign.modulus_kind)
    xunit, xfactor = _frequency_unit(campaign)
    frame = _functions(result)
    omega = 2.0 * math.pi * frame["frequency_Hz"].to_numpy()
    order = np.argsort(omega)
    x = omega[order] / xfactor
    ep = frame["storage_modulus_Pa"].to_numpy()[order]
    epp = frame["loss_modulus_Pa"].to_numpy()[order]
    tand = frame["tan_delta"].to_numpy()[order]
    ext = frame["extrapolated"].to_numpy(dtype=bool)[order]
    unit, factor = _modulus_unit(np.concatenate([ep, epp]))
    _model_line(ax, x, ep / factor, ext, colour=_BLUE, label=f"{letter}′ storage modulus")
    _model_line(ax, x, epp / factor, ext, colour=_VERMILLION, label=f"{letter}″ loss modulus")
    banded = _band(ax, frame, "storage_modulus", x, factor, _BLUE, order)
    _band(ax, frame, "loss_modulus", x, factor, _VERMILLION, order)
    twin = ax.twinx()
    _model_line(twin, x, tand, ext, colour=_GREEN, lw=1.3, label="tan δ")
    _style(ax, logx=True, logy=True)
    ax.tick_params(which="both", right=False)
    _style_twin(twin, _GREEN)
    finite = tand[np.isfinite(tand)]
    twin.set_ylim(0.0, float(finite.max()) * 1.08 if finite.size else 1.0)
    rng = _valid_range(result)
    if rng is not None:
        # the series' range is in reduced time; the matching angular frequencies are ω = 1/t
        _shade_extrapolation(ax, 1.0 / rng[1] / xfactor, 1.0 / rng[0] / xfactor,
                             float(x.min()), float(x.max()))
    ax.set_xlim(float(x.min()), float(x.max()))
    ax.set_xlabel(_reduced_x_label(campaign, xunit, "frequency"))
    ax.set_ylabel(f"{letter}′, {letter}″ ({unit})")
    twin.set_ylabel("Loss factor tan δ")
    _tidy_log_axis(ax.yaxis)
    _twin_legend(ax, twin, ([_extrapolation_handle()] if ext.any() else [])
                 + ([_band_handle()] if banded else []))
    _tref_title(ax, result, "from the Prony series")
    return ax


# ------------------------------------------------------------------------------------------
# all figures of a build, and saving them
# ------------------------------------------------------------------------------------------
#: Figures that need only the measured campaign (they can be drawn before any fitting).
CAMPAIGN_FIGURES = ("isotherms", "superposition_check")


def load_matplotlib() -> None:
    """Import matplotlib's figure machinery and the PNG and SVG backends now.

    About half a second of CPU; a process that forks figure drawers calls this first, so that
    every child shares the loaded modules instead of importing them again.
    """
    import matplotlib.backends.backend_agg  # noqa: F401
    import matplotlib.backends.backend_svg  # noqa: F401
    import matplotlib.figure  # noqa: F401


def render_campaign_figures(campaign) -> dict:
    """The figures of :data:`CAMPAIGN_FIGURES`, which need no shift, law or series."""
    return {"isotherms": plot_isotherms(campaign).figure,
            "superposition_check": plot_superposition_check(campaign).figure}


def _plot_isochrone(result):
    from .plot_isochrone import plot_isochrone

    return plot_isochrone(result)


def figure_names(result) -> tuple:
    """The names of the figures of this build: :data:`FIGURE_NAMES`, plus
    ``relaxation_spectrum`` when the build fitted the continuous spectrum,
    ``isochrone`` for frequency data (E', E'', tan δ against T with the Tg readings) and
    ``cross_validation`` when it predicted at least one held-out isotherm."""
    extra = []
    if getattr(result, "relaxation_spectrum", None) is not None:
        extra.append("relaxation_spectrum")
    if getattr(result, "glass_transition", None) is not None:
        extra.append("isochrone")
    cv = getattr(result, "cross_validation", None)
    if cv is not None and any(np.isfinite(h.rms_percent_at_law_aT.get("all", np.nan))
                              for h in cv.per_isotherm):
        extra.append("cross_validation")
    return FIGURE_NAMES + tuple(extra)


def render_figures(result, names=None) -> dict:
    """Every figure of a build (or those in ``names``) as ``{name: matplotlib Figure}``.

    Names are those of :func:`figure_names`. ``frequency_functions`` is made for every build: a
    series fitted to time-domain data has a frequency response too (Ferry 1980, ch. 3), it is
    simply further from the measurements.
    """
    makers = {
        "isotherms": lambda: plot_isotherms(result.campaign).figure,
        "master_curve": lambda: plot_master_curve(result).figure,
        "shift_factors": lambda: plot_shift_factors(result).figure,
        "prony_fit": lambda: plot_prony_fit(result)[0].figure,
        "time_functions": lambda: plot_time_functions(result).figure,
        "frequency_functions": lambda: plot_frequency_functions(result).figure,
        "superposition_check": lambda: plot_superposition_check(result.campaign).figure,
        "relaxation_spectrum": lambda: plot_relaxation_spectrum(
            result.relaxation_spectrum, series=result.series)[0].figure,
        "cross_validation": lambda: plot_cross_validation(result).figure,
        "isochrone": lambda: _plot_isochrone(result).figure,
    }
    available = figure_names(result)
    wanted = available if names is None else tuple(names)
    unknown = [n for n in wanted if n not in available]
    if unknown:
        raise bad_value("names", "figure names of this build (figure_names(result))", unknown)
    return {name: makers[name]() for name in wanted}


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


def figure_files(folder, name: str) -> dict:
    """``{"png": Path, "svg": Path}``: where :func:`save_figures` writes the figure ``name``."""
    folder = Path(folder)
    return {"png": folder / f"{name}.png", "svg": folder / f"{name}.svg"}


def save_figures(figures, folder) -> dict:
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
    import re

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
        # exactly as a full draw would (same bytes), at about a third of the cost.
        _merge_minor_ticks(fig)
        engine = fig.get_layout_engine()
        if engine is not None:
            engine.execute(fig)
        fig.set_layout_engine("none")
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
