"""Figures of the Prony series and the relaxation spectrum: the fit to the master curve with its
residuals and discrete spectrum, and the continuous spectrum H(τ) with its regularisation.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..prony import PronySeries

import math
from dataclasses import dataclass

import numpy as np

from .._arrays import outside_log_range
from ..units import kelvin_to_celsius
from ._build_data import _functions, _valid_range
from ._curves import _extrapolation_handle, _model_line, _shade_extrapolation
from ._labels import (
    _TREF,
    _compliance_unit,
    _frequency_unit,
    _letters,
    _modulus_unit,
    _reduced_x_label,
)
from ._look import _BLUE, _GREEN, _INK, _VERMILLION, _style, _tidy_log_axis, _tref_title
from ._thinning import drawn_indices

__all__ = ["plot_prony_fit", "plot_relaxation_spectrum"]


_FIT_COLOURS = {"storage_modulus": _BLUE, "loss_modulus": _VERMILLION,
                "relaxation_modulus": _BLUE, "creep_compliance": _GREEN}
_MODEL_COLUMNS = {"storage_modulus": "storage_modulus_Pa", "loss_modulus": "loss_modulus_Pa",
                  "relaxation_modulus": "relaxation_modulus_Pa",
                  "creep_compliance": "creep_compliance_1_per_Pa"}


@dataclass(frozen=True)
class _PronyFitData:
    """The fit and residual panels in display units: the master-curve points the series was
    fitted to (thinned for drawing), their residuals, and the series over them (half a decade
    beyond the points at most)."""

    quantities: tuple
    symbols: dict                   # quantity → E′, E″, E(t), D(t) (G, J for shear)
    x: np.ndarray                   # reduced frequency or time of the drawn points
    measured: dict                  # quantity → drawn points, in ``unit``
    residual_percent: dict          # quantity → their residuals (%)
    model_x: np.ndarray
    model: dict                     # quantity → the series at ``model_x``, in ``unit``
    model_extrapolated: np.ndarray
    unit: str
    x_label: str
    residual_limit: float           # the residual axis spans ± this (%)


def _prony_fit_data(result) -> _PronyFitData:
    campaign, fit = result.campaign, result.prony_fit
    letter, cletter = _letters(campaign.modulus_kind)
    freq = fit.domain == "frequency"
    xunit, xfactor = _frequency_unit(campaign) if freq else ("s", 1.0)
    symbols = {"storage_modulus": f"{letter}′", "loss_modulus": f"{letter}″",
               "relaxation_modulus": f"{letter}(t)", "creep_compliance": f"{cletter}(t)"}
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
    pick = np.argsort(x)
    pick = pick[drawn_indices(x.size, 2 * len(fit.quantities))]   # fit and residual panels
    resid = np.concatenate([np.asarray(fit.residuals_percent[q], dtype=float)
                            for q in fit.quantities])
    return _PronyFitData(
        quantities=tuple(fit.quantities),
        symbols={q: symbols.get(q, q) for q in fit.quantities},
        x=x[pick] / xfactor,
        measured={q: np.asarray(fit.measured[q])[pick] / factor for q in fit.quantities},
        residual_percent={q: np.asarray(fit.residuals_percent[q])[pick]
                          for q in fit.quantities},
        model_x=xs[idx] / xfactor,
        model={q: frame[_MODEL_COLUMNS[q]].to_numpy()[idx] / factor
               for q in fit.quantities if q in _MODEL_COLUMNS},
        model_extrapolated=ext[idx], unit=unit, x_label=_reduced_x_label(campaign, xunit),
        residual_limit=max(1.0, float(np.nanmax(np.abs(resid))) * 1.15) if resid.size else 1.0)


def _prony_fit_axes():
    """A new figure: the fit above its residuals on the left, the discrete spectrum right."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(10.0, 4.8), layout="constrained")
    grid = fig.add_gridspec(2, 2, height_ratios=(3.0, 1.25), width_ratios=(1.35, 1.0))
    ax_fit = fig.add_subplot(grid[0, 0])
    ax_res = fig.add_subplot(grid[1, 0], sharex=ax_fit)
    ax_spec = fig.add_subplot(grid[:, 1])
    fig.align_ylabels([ax_fit, ax_res])
    return ax_fit, ax_res, ax_spec


def _draw_fit_and_residuals(ax_fit, ax_res, data: _PronyFitData):
    for q in data.quantities:
        c = _FIT_COLOURS.get(q, _INK)
        ax_fit.plot(data.x, data.measured[q], ls="none", marker="o", ms=2.8, mfc="none", mec=c,
                    mew=0.6, alpha=0.75, zorder=2, label=f"{data.symbols[q]} master curve")
        if q in data.model:
            _model_line(ax_fit, data.model_x, data.model[q], data.model_extrapolated, colour=c,
                        lw=1.5, label=f"{data.symbols[q]} Prony series")
        ax_res.plot(data.x, data.residual_percent[q], ls="none", marker="o", ms=2.6, mfc=c,
                    mec=c, mew=0.0, alpha=0.8, zorder=2)
    _style(ax_fit, logx=True, logy=True)
    _style(ax_res, logx=True)
    ax_res.axhline(0.0, color=_INK, lw=0.8)
    ax_fit.set_ylabel(", ".join(data.symbols[q] for q in data.quantities) + f" ({data.unit})")
    handles, labels = ax_fit.get_legend_handles_labels()
    if data.model_extrapolated.any():
        handles.append(_extrapolation_handle())
        labels.append("extrapolated")
    ax_fit.legend(handles, labels, fontsize=8, frameon=False, loc="best")
    _tidy_log_axis(ax_fit.yaxis)
    ax_fit.tick_params(labelbottom=False)
    ax_res.set_ylabel("Residual (%)")
    ax_res.set_xlabel(data.x_label)
    ax_res.set_ylim(-data.residual_limit, data.residual_limit)


def _positive_terms(series):
    """(τ_i, E_i) of the terms with E_i > 0, and E_∞ (Pa)."""
    tau = np.asarray(series.tau_s, dtype=float)
    e_i = np.asarray(series.modulus_Pa, dtype=float)
    keep = e_i > 0
    return tau[keep], e_i[keep], float(series.equilibrium_modulus_Pa)


def _draw_discrete_spectrum(ax_spec, series, valid_range_s, letter: str):
    """Stems E_i at τ_i, E_∞ as a line, the reduced-time range of the data shaded."""
    from matplotlib.ticker import LogLocator

    tau, e_i, einf = _positive_terms(series)
    sunit, sfactor = _modulus_unit(np.concatenate([e_i, [einf] if einf > 0 else []]))
    positive = np.concatenate([e_i, [einf] if einf > 0 else []]) / sfactor
    bottom = float(positive.min()) / 8.0 if positive.size else 1e-3
    top = float(positive.max()) * 40.0 if positive.size else 1.0
    if valid_range_s is not None:
        ax_spec.axvspan(valid_range_s[0], valid_range_s[1], color=_BLUE, alpha=0.07, lw=0,
                        zorder=0, label="range of the data (reduced time)")
    if tau.size:
        ax_spec.vlines(tau, bottom, e_i / sfactor, color=_INK, lw=1.1, zorder=3)
        ax_spec.plot(tau, e_i / sfactor, ls="none", marker="o", ms=4.5, color=_INK, zorder=4,
                     label=rf"${letter}_i$ at $\tau_i$")
    if einf > 0:
        ax_spec.axhline(einf / sfactor, color=_VERMILLION, lw=1.1, ls=(0, (4, 2)), zorder=2,
                        label=rf"${letter}_\infty$ = {einf / sfactor:.3g} {sunit}")
    _style(ax_spec, logx=True, logy=True)
    ax_spec.xaxis.set_major_locator(LogLocator(numticks=7))
    ax_spec.set_ylim(bottom, top)
    if tau.size:
        ax_spec.set_xlim(tau.min() / 10.0, tau.max() * 10.0)
    ax_spec.set_xlabel(r"Relaxation time $\tau_i$ (s)")
    ax_spec.set_ylabel(rf"Prony coefficient ${letter}_i$ ({sunit})")
    ax_spec.legend(fontsize=8, frameon=False, loc="upper right")
    ax_spec.set_title("discrete relaxation spectrum", loc="left", fontsize=9, color=_INK, pad=4)


def plot_prony_fit(result, axes: Sequence[Axes] | None = None):
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
    ax_fit, ax_res, ax_spec = _prony_fit_axes() if axes is None else axes
    fit, series = result.prony_fit, result.series
    _draw_fit_and_residuals(ax_fit, ax_res, _prony_fit_data(result))
    _tref_title(ax_fit, result, f"{series.n_terms} terms, rms {fit.rms_percent:.2g} %, "
                                f"max {fit.max_percent:.2g} %")
    letter, _ = _letters(result.campaign.modulus_kind)
    _draw_discrete_spectrum(ax_spec, series, _valid_range(result), letter)
    return ax_fit, ax_res, ax_spec


def _relaxation_spectrum_axes():
    """A new 10 × 4.2 in figure: H(τ) on the left, the choice of λ on the right."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(10.0, 4.2), layout="constrained")
    grid = fig.add_gridspec(1, 2, width_ratios=(1.6, 1.0))
    return fig.add_subplot(grid[0, 0]), fig.add_subplot(grid[0, 1])


def _terms_as_density(series):
    """(τ_i, E_i / Δln τ_i) of the positive Prony terms (Pa), None with fewer than two: a term
    of strength E_i spread over its share of ln τ has the area H has there."""
    t_i = np.asarray(series.tau_s, dtype=float)
    e_i = np.asarray(series.modulus_Pa, dtype=float)
    keep = e_i > 0
    if keep.sum() < 2:
        return None
    width = np.gradient(np.log(t_i[keep]))          # each term's share of ln τ
    return t_i[keep], e_i[keep] / width


def _draw_continuous_spectrum(ax, spectrum, series):
    """H(τ), solid inside the τ range the data determine and dashed outside, with E_∞ and
    (given a series) its terms as a density."""
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
    terms = None if series is None else _terms_as_density(series)
    if terms is not None:
        ax.plot(terms[0], terms[1] / factor, ls="none", marker="o", ms=4.0, mfc="none",
                mec=_INK, mew=0.8, zorder=5, label=f"Prony terms {letter}ᵢ/Δln τᵢ")
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


def _draw_regularisation_choice(ax_sel, spectrum):
    """The selection criterion over the λ tried (GCV value or L-curve corner score), the chosen
    λ circled."""
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


def plot_relaxation_spectrum(spectrum, axes: Sequence[Axes] | None = None, *,
                             series: PronySeries | None = None):
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
    ax, ax_sel = _relaxation_spectrum_axes() if axes is None else axes
    _draw_continuous_spectrum(ax, spectrum, series)
    _draw_regularisation_choice(ax_sel, spectrum)
    return ax, ax_sel
