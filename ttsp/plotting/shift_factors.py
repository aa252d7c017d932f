"""The shift-factor figure: log10 a_T of each isotherm (± one standard error) against
temperature, the fitted shift law with its band, and the residuals about the law.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..build_result import BuildResult

import re
import warnings
from dataclasses import dataclass

import numpy as np

from ..exceptions import ExtrapolationWarning
from ..laws import law_prediction_stderr
from ..laws.names import LAW_SHORT_TITLES as _LAW_NAMES
from ..units import kelvin_to_celsius
from ._build_data import _shift_table
from ._look import _BLUE, _GREY, _INK, _VERMILLION, _note, _style, _tref_title

__all__ = ["plot_shift_factors"]

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
    m = re.fullmatch(r"a(\d+)_per_K(\d*)", name)
    if m:
        k = m.group(1)
        return rf"$a_{{{k}}}$", "K⁻¹" if k == "1" else rf"K$^{{-{k}}}$", False
    return name, "", False


def _fmt(value, digits=3) -> str:
    if value is None or not np.isfinite(value):
        return "–"
    return f"{value:.{digits}g}"


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
    by_t = {round(float(t), 6): tuple(f) for t, f in zip(temps, flags, strict=True)}
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
    lo, hi = min(rng[0], float(np.min(t_K))), max(rng[1], float(np.max(t_K)))
    grid_K = np.union1d(np.linspace(lo, hi, 241), [rng[0], rng[1]])
    inside = (grid_K >= rng[0]) & (grid_K <= rng[1])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        curve = np.asarray(law_fit.law.log10_aT(grid_K), dtype=float)
        band = law_prediction_stderr(law_fit, grid_K)
        at_isotherms = np.asarray(law_fit.law.log10_aT(t_K), dtype=float)
    return grid_K, inside, curve, band, at_isotherms


@dataclass(frozen=True)
class _ShiftFigureData:
    """What the shift-factor figure draws: the isotherms' shifts in temperature order (°C,
    decades) and the law on a temperature grid."""

    temperature_C: np.ndarray
    log10_aT: np.ndarray
    error_bar: np.ndarray         # stderr of each shift; 0 where unknown or longer than the axis
    residual: np.ndarray          # shift − law at each isotherm, decades
    bridged: np.ndarray           # placed across a gap by the law
    weak: np.ndarray              # poorly determined (low information), not bridged
    law_name: str
    grid_C: np.ndarray
    inside: np.ndarray            # grid points within the law's fitted range
    law_log10_aT: np.ndarray      # the law on the grid
    law_stderr: np.ndarray | None  # its ± one standard error on the grid


def _shift_figure_data(result) -> _ShiftFigureData:
    """The shifts of a build, their flags and error bars, and its law over every isotherm."""
    t_K, log_a, se, _ = _shift_table(result)
    law = result.law_fit.law
    rng = law.valid_temperature_range_K or (float(t_K.min()), float(t_K.max()))
    grid_K, inside, curve, band, fitted = _law_over_isotherms(result.law_fit, rng, t_K)
    flags = _shift_flags(result, t_K)
    bridged = np.array(["bridged" in f for f in flags], dtype=bool)
    weak = np.array(["low-information" in f for f in flags], dtype=bool) & ~bridged
    yerr = np.where(np.isfinite(se), se, 0.0)
    # a poorly determined shift keeps its error bar only while it fits on the axis (< 1 decade)
    yerr = np.where(weak & (yerr > 1.0), 0.0, yerr)
    return _ShiftFigureData(
        temperature_C=kelvin_to_celsius(t_K), log10_aT=log_a, error_bar=yerr,
        residual=log_a - fitted, bridged=bridged, weak=weak,
        law_name=_LAW_NAMES.get(law.model, law.model), grid_C=kelvin_to_celsius(grid_K),
        inside=inside, law_log10_aT=curve, law_stderr=band)


def _marker_groups(data: _ShiftFigureData):
    """(mask, marker, colour, label) of the three kinds of shift: ordinary, poorly determined,
    bridged."""
    bridged, weak = data.bridged, data.weak
    return ((~bridged & ~weak, "o", _INK, "shift factors ± 1 s.e."),
            (weak, "D", _GREY, "poorly determined (low information)"),
            (bridged, "s", _VERMILLION, "placed across a gap by the law"))


def _shift_factor_axes():
    """A new figure: the shifts and the law above, the residuals below, sharing temperature."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(6.0, 5.2), layout="constrained")
    grid = fig.add_gridspec(2, 1, height_ratios=(3.0, 1.1))
    ax = fig.add_subplot(grid[0])
    residual_ax = fig.add_subplot(grid[1], sharex=ax)
    fig.align_ylabels([ax, residual_ax])
    return ax, residual_ax


def _draw_law(ax, data: _ShiftFigureData):
    """The law with its band over its fitted range, dashed beyond it (over bridged isotherms)."""
    grid_C, inside, curve, band = data.grid_C, data.inside, data.law_log10_aT, data.law_stderr
    name = data.law_name
    if band is not None:
        ax.fill_between(grid_C, curve - band, curve + band, where=inside, color=_BLUE,
                        alpha=0.22, lw=0, label=f"{name} ± 1 s.e.", zorder=1)
    ax.plot(grid_C, np.where(inside, curve, np.nan), color=_BLUE, lw=1.6,
            label=f"{name} law, fitted", zorder=2)
    if not inside.all():   # the law over isotherms beyond its fitted range (bridged ones)
        ax.plot(grid_C, np.where(_widen(~inside), curve, np.nan), color=_BLUE, lw=1.3,
                ls=(0, (4, 2.5)), label=f"{name} law, extrapolated", zorder=2)


def _draw_shifts(ax, data: _ShiftFigureData, groups):
    for mask, marker, colour, label in groups:
        if mask.any():
            ax.errorbar(data.temperature_C[mask], data.log10_aT[mask],
                        yerr=data.error_bar[mask], fmt=marker, ms=4.2, color=colour,
                        mfc="white", mew=1.0, elinewidth=0.9, capsize=2.2, label=label,
                        zorder=3)


def _draw_residuals(residual_ax, data: _ShiftFigureData, groups):
    """Residuals of the shifts about the law used for each isotherm (beyond the law's fitted
    range too: a bridged isotherm is placed by it), with the law's own uncertainty as a band."""
    resid, band, inside = data.residual, data.law_stderr, data.inside
    if band is not None:
        residual_ax.fill_between(data.grid_C, -band, band, where=inside, color=_BLUE,
                                 alpha=0.22, lw=0, zorder=1)
    residual_ax.axhline(0.0, color=_BLUE, lw=1.2, zorder=2)
    for mask, marker, colour, _label in groups:
        if mask.any():
            residual_ax.errorbar(data.temperature_C[mask], resid[mask],
                                 yerr=data.error_bar[mask], fmt=marker, ms=3.6, color=colour,
                                 mfc="white", mew=0.9, elinewidth=0.8, capsize=2.0, zorder=3)
    _style(residual_ax)
    residual_ax.set_xlabel("Temperature T (°C)")
    residual_ax.set_ylabel("Data − law\n(decades)")
    # scaled to the residuals (and the band), not to the error bars of poorly determined shifts,
    # which may run off the panel
    lim = float(np.nanmax(np.abs(resid))) if resid.size else 0.0
    lim = max(lim * 1.4, float(np.nanmax(band[inside])) * 1.25 if band is not None else 0.0,
              0.01)
    residual_ax.set_ylim(-lim, lim)


def plot_shift_factors(result: BuildResult, ax: Axes | None = None,
                       residual_ax: Axes | None = None):
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
        ax, residual_ax = _shift_factor_axes()
    data = _shift_figure_data(result)
    groups = _marker_groups(data)
    _draw_law(ax, data)
    _draw_shifts(ax, data, groups)
    for a in (ax, residual_ax):
        if a is not None:
            a.axvline(result.reference_temperature_C, color=_GREY, lw=0.8, ls=(0, (2, 2)),
                      zorder=1)
    ax.axhline(0.0, color=_GREY, lw=0.6, zorder=1)
    _style(ax)
    ax.set_ylabel(r"Shift factor $\log_{10} a_T$")
    ax.legend(fontsize=8.5, frameon=False, loc="upper right")
    _note(ax, _law_text(result.law_fit), loc="lower left")
    _tref_title(ax, result)
    if residual_ax is None:
        ax.set_xlabel("Temperature T (°C)")
        return ax
    _draw_residuals(residual_ax, data, groups)
    ax.tick_params(labelbottom=False)
    return ax
