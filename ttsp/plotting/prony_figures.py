"""Figures of the Prony series and the relaxation spectrum: the fit to the master curve with its
residuals and discrete spectrum, and the continuous spectrum H(τ) with its regularisation.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

import math

import numpy as np

from .._arrays import outside_log_range
from ..units import kelvin_to_celsius
from ._build_data import _functions, _valid_range
from ._curves import _extrapolation_handle, _model_line, _shade_extrapolation
from ._labels import (_TREF, _compliance_unit, _frequency_unit, _letters, _modulus_unit,
                      _reduced_x_label)
from ._look import _BLUE, _GREEN, _INK, _VERMILLION, _style, _tidy_log_axis, _tref_title
from ._thinning import drawn_indices

__all__ = ["plot_prony_fit", "plot_relaxation_spectrum"]


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
