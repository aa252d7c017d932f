"""Kramers–Kronig consistency: are E' and E'' of the master curve the two faces of one
relaxation spectrum? Each is fitted alone with a non-negative Prony series and the other is
predicted from it (Booij & Thoone, Rheol. Acta 21, 15-24, 1982)."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..prony import PronyFit
    from ..shifting import ShiftResult

import math

import numpy as np

from ..data import Campaign
from ..exceptions import FitError
from ._inputs import _align_shifts, _as_campaign, _keep, _reduced_log_x
from .noise import _noise_percent, estimate_noise
from .result import CheckResult, _fmt_C, _grade

__all__ = ["check_kramers_kronig", "KK_WARN_PERCENT", "KK_FAIL_PERCENT", "KK_MIN_RATIO",
           "KK_NOISE_FACTOR", "KK_EDGE_DECADES", "KK_TERMS_PER_DECADE"]


#: Kramers–Kronig: disagreement (rms, %) between a measured function and its prediction from the
#: other function of the master curve. It reads about as the error of the level of E'': on the
#: exact test spectra a copy of E'' scaled by 1.1 gives 9 %, by 1.2 18 %, by 1.6 (with a slope
#: change) 61 %, while a consistent curve gives 0.1 % (exact) or about 3 % (2 % noise)
#: [computed here, tests/test_checks.py]. But on finite windows of exact simple campaigns the
#: check's own truncation reads far more, so the thresholds are read off that null distribution
#: (benchmarks/bench_checks.py, 5 December 2026: its 192 simple frequency campaigns and 192 more
#: on fresh seeds 50000+i; percentiles 90/95/97/99 of 9.0/14.0/18.1/26.3 % and 16.4/20.3/23.8/
#: 29.4 %, above 35 % only 50.8 and 43.6 %). 35 % warns (on 1 of 384 simple frequency
#: campaigns, 0.3 %) and 50 % fails (1 of 384). At the former 20 % the check warned on 3 % of
#: the benchmark's simple frequency campaigns and 6 % of the fresh ones, for no detection the
#: other checks lacked: every complex campaign it flagged was flagged by function_agreement too.
#: A level error of E'' reads: ×1.3 passes (26.7 %), ×1.4 warns (35.6 %), ×1.6 fails (53.4 %);
#: E'' on its own shift law is caught by function_agreement.
KK_WARN_PERCENT = 35.0
KK_FAIL_PERCENT = 50.0
#: A function is predicted from the other only where it is at least this fraction of the other
#: (E'' where tan δ ≥ 0.2, E' where tan δ ≤ 5): E'' follows from the slope of E', and where
#: tan δ is small that slope drowns in the noise of E' (at 2 % noise the prediction of E'' is
#: off by about 2 % at tan δ = 0.26, 5 % at 0.13 and 20 % at 0.013; measured on exact spectra
#: with added noise). Symmetrically for E' in the terminal zone.
KK_MIN_RATIO = 0.2
#: The warn level is at least this many times the measured noise (%): no prediction can agree
#: better than the scatter of the data it comes from.
KK_NOISE_FACTOR = 2.5
#: Ends of the master curve left out of the Kramers–Kronig comparison (decades of reduced
#: frequency): there a predicted function depends on the spectrum outside the data.
KK_EDGE_DECADES = 0.5
#: Density of the relaxation-time grid of the Kramers–Kronig fits (per decade): two per decade
#: keep the ripple of E'' near 0.15 % (docs/methods.md §8).
KK_TERMS_PER_DECADE = 2.0


def _master_curve(campaign: Campaign | None, shifts, prony_fit):
    """(ω_r, E', E'') of the master curve: from the shifts if given, else from the Prony fit."""
    if shifts is not None:
        assert campaign is not None   # refused by _as_campaign before
        c = campaign.with_derived()
        if c.domain != "frequency" or not {"storage_modulus_Pa",
                                           "loss_modulus_Pa"} <= set(c.quantities):
            return None
        table = _align_shifts(c, shifts)
        ws, e1s, e2s, temps_each = [], [], [], []
        for k, iso in enumerate(c.isotherms):
            keep = _keep(table, k, iso.n_points)
            b = 10.0 ** table.log10_bT[k]
            ws.append(10.0 ** _reduced_log_x(c, table, k)[keep])
            e1s.append(iso.values["storage_modulus_Pa"][keep] / b)
            e2s.append(iso.values["loss_modulus_Pa"][keep] / b)
            temps_each.append(np.full(int(keep.sum()), iso.temperature_K))
        w, e1, e2, temps = (np.concatenate(v) for v in (ws, e1s, e2s, temps_each))
        source = "shifted campaign"
    elif prony_fit is not None:
        if getattr(prony_fit, "domain", None) != "frequency" or not {
                "storage_modulus", "loss_modulus"} <= set(prony_fit.quantities):
            return None
        w = np.asarray(prony_fit.x, dtype=float)
        e1 = np.asarray(prony_fit.measured["storage_modulus"], dtype=float)
        e2 = np.asarray(prony_fit.measured["loss_modulus"], dtype=float)
        temps = np.full(w.shape, np.nan)
        source = "data of the Prony fit"
    else:
        return None
    ok = np.isfinite(w) & np.isfinite(e1) & np.isfinite(e2) & (w > 0) & (e1 > 0) & (e2 > 0)
    order = np.argsort(w[ok], kind="stable")
    return w[ok][order], e1[ok][order], e2[ok][order], temps[ok][order], source


def _nnls_relative(design: np.ndarray, y: np.ndarray) -> np.ndarray:
    """min Σ ((A c)_j / y_j − 1)², c ≥ 0 (Lawson & Hanson, Solving Least Squares Problems,
    1974), with columns scaled to unit norm for conditioning."""
    from scipy.optimize import nnls

    a = design / y[:, None]
    norms = np.linalg.norm(a, axis=0)
    norms[norms == 0] = 1.0
    try:
        coef, _ = nnls(a / norms, np.ones_like(y), maxiter=max(200, 50 * a.shape[1]))
    except RuntimeError as exc:  # iteration limit of the active-set method
        raise FitError(f"non-negative least squares did not converge: {exc}") from None
    return coef / norms


def _kk_predictions(w, e1, e2):
    """Fit E' alone and E'' alone with non-negative Prony series; predict the other function.

    E' = E_∞ + Σ E_i ω²τ_i²/(1+ω²τ_i²) and E'' = Σ E_i ωτ_i/(1+ω²τ_i²) with common E_i ≥ 0
    (Ferry 1980, ch. 4): a series fitted to one function fixes the other, which is the discrete
    form of the Kramers–Kronig relations (Booij & Thoone 1982). E_∞ is not fixed by E'' and is
    chosen (≥ 0) to match E' best, since the relations leave that constant free.
    """
    lo, hi = math.log10(1.0 / w.max()) - 1.0, math.log10(1.0 / w.min()) + 1.0
    n_tau = max(2, int(math.ceil((hi - lo) * KK_TERMS_PER_DECADE)) + 1)
    tau = np.logspace(lo, hi, n_tau)
    wt = w[:, None] * tau[None, :]
    k1 = wt * wt / (1.0 + wt * wt)
    k2 = wt / (1.0 + wt * wt)
    c1 = _nnls_relative(np.hstack([np.ones((w.size, 1)), k1]), e1)
    pred2 = k2 @ c1[1:]
    c2 = _nnls_relative(k2, e2)
    shape = k1 @ c2
    # E_∞ ≥ 0 minimising Σ((E_∞ + shape)/E' − 1)²: closed form of the one-column problem
    e_inf = max(0.0, float(np.sum((1.0 - shape / e1) / e1) / np.sum(1.0 / e1 ** 2)))
    pred1 = e_inf + shape
    return pred1, pred2


def _kk_disagreement(w, e1, e2, inner):
    """rms (%) of E' predicted from E'' and of E'' predicted from E', where each is not tiny."""
    pred1, pred2 = _kk_predictions(w, e1, e2)
    ratio = e2 / e1
    use2 = inner & (ratio >= KK_MIN_RATIO)          # E'' predicted where it is not tiny
    use1 = inner & (ratio <= 1.0 / KK_MIN_RATIO)    # E' predicted where it is not tiny
    dev1 = 100.0 * (pred1[use1] / e1[use1] - 1.0)
    dev2 = 100.0 * (pred2[use2] / e2[use2] - 1.0)
    rms1 = float(np.sqrt(np.mean(dev1 ** 2))) if dev1.size >= 3 else math.nan
    rms2 = float(np.sqrt(np.mean(dev2 ** 2))) if dev2.size >= 3 else math.nan
    return rms1, rms2, dev1, dev2, use1, use2


def _kk_worst_isotherms(point_T, dev, n=3):
    """[(T_K, rms %)] of the isotherms with the largest rms deviation, at most n."""
    point_T = np.asarray(point_T, dtype=float)
    ok = np.isfinite(point_T)
    if not ok.any():
        return []
    rows = [(float(t), float(np.sqrt(np.mean(dev[ok & (point_T == t)] ** 2))))
            for t in np.unique(point_T[ok])]
    return sorted(rows, key=lambda r: -r[1])[:n]


def _kk_not_judged(why: str, w: np.ndarray, source: str) -> CheckResult:
    """The warning of a master curve on which the comparison cannot be made."""
    return CheckResult("kramers_kronig", "warn", None, KK_WARN_PERCENT, why,
                       {"points": int(w.size), "source": source})


def _kk_thresholds(campaign) -> tuple[float, float, float]:
    """(noise of the campaign in %, warn level, fail level): the warn level is at least
    :data:`KK_NOISE_FACTOR` times the noise, the fail level at least twice that."""
    noise_pct = math.nan
    if campaign is not None:
        noise_pct = _noise_percent(estimate_noise(campaign))[0]
    noise_warn = KK_NOISE_FACTOR * noise_pct if math.isfinite(noise_pct) else 0.0
    return (noise_pct, max(KK_WARN_PERCENT, noise_warn),
            max(KK_FAIL_PERCENT, 2.0 * noise_warn))


def _kk_details(source: str, n_points: int, storage_from_loss, loss_from_storage,
                noise_pct: float, fail: float) -> dict:
    """The supporting numbers; each direction is (rms %, deviations %, points used)."""
    rms1, dev1, use1 = storage_from_loss
    rms2, dev2, use2 = loss_from_storage
    return {"unit": "%", "source": source, "points": int(n_points),
            "loss_from_storage_points": int(use2.sum()),
            "loss_from_storage_rms_percent": rms2,
            "loss_from_storage_mean_percent": float(np.mean(dev2)) if dev2.size else None,
            "storage_from_loss_points": int(use1.sum()),
            "storage_from_loss_rms_percent": rms1,
            "storage_from_loss_mean_percent": float(np.mean(dev1)) if dev1.size else None,
            "noise_percent": noise_pct, "fail_threshold": fail}


def _kk_message(status: str, value: float, worse: str, where: str) -> str:
    """The verdict in words; ``worse`` names the prediction that misses more, ``where`` the
    isotherms where it misses most."""
    if status == "pass":
        return (f"E' and E'' of the master curve agree with one relaxation spectrum within "
                f"{value:.2g} % (Kramers–Kronig); they are consistent.")
    if status == "warn":
        return (f"{worse} misses the measured curve by {value:.2g} % rms{where}: "
                "E' and E'' agree only roughly with one spectrum. Check the ends of the master "
                "curve and the shifts; use the Prony series with care.")
    return (f"{worse} misses the measured curve by {value:.2g} % rms{where}, so "
            "E' and E'' cannot be the two faces of one relaxation spectrum "
            "(Kramers–Kronig). Look for instrument "
            "artefacts (inertia, clamp compliance, phase error), nonlinearity or shifts that "
            "differ between E' and E''.")


def check_kramers_kronig(campaign: Campaign | None = None, *, shifts: ShiftResult | None = None,
                         prony_fit: PronyFit | None = None) -> CheckResult | None:
    """Kramers–Kronig consistency of E' and E'' of the master curve.

    For a causal linear material E' and E'' are the two faces of one relaxation spectrum
    (Booij & Thoone, Rheol. Acta 21, 15-24, 1982; docs/methods.md §6.2). E' alone is fitted with a
    non-negative Prony series and E'' predicted from it, and E'' alone is fitted and E' predicted
    (common practice, docs/methods.md §6.2). The value is the larger rms relative disagreement (%)
    between a prediction and the measured function, over the master curve without its outer
    :data:`KK_EDGE_DECADES` (there a prediction depends on the spectrum beyond the data).

    Parameters
    ----------
    campaign : Campaign, optional
        Needed with ``shifts``.
    shifts : shift result, optional
        Builds the master curve from the campaign (outliers left out, b_T divided out).
    prony_fit : PronyFit, optional
        Used when ``shifts`` is not given: the master-curve data it was fitted to. Its joint-fit
        rms per quantity is reported in the details.

    Returns
    -------
    CheckResult or None
        None for time-domain data or without both moduli.
    """
    if shifts is not None:
        _as_campaign(campaign)
    curve = _master_curve(campaign, shifts, prony_fit)
    if curve is None:
        return None
    w, e1, e2, point_T, source = curve
    lw = np.log10(w)
    inner = (lw >= lw[0] + KK_EDGE_DECADES) & (lw <= lw[-1] - KK_EDGE_DECADES)
    if inner.sum() < 5 or w.size < 8:
        return _kk_not_judged("The master curve is too short to test whether E' and E'' agree; "
                              "measure over a wider range of reduced frequency.", w, source)
    rms1, rms2, dev1, dev2, use1, use2 = _kk_disagreement(w, e1, e2, inner)
    if not (math.isfinite(rms1) or math.isfinite(rms2)):
        return _kk_not_judged("The master curve has too few points where E' and E'' are "
                              "comparable to test whether they agree; measure over a wider "
                              "range.", w, source)
    value = float(np.nanmax([rms1, rms2]))
    noise_pct, warn, fail = _kk_thresholds(campaign)
    status = _grade(value, warn, fail)
    details = _kk_details(source, w.size, (rms1, dev1, use1), (rms2, dev2, use2), noise_pct,
                          fail)
    if prony_fit is not None and getattr(prony_fit, "rms_percent_by_quantity", None):
        details["joint_fit_rms_percent"] = {str(k): float(v) for k, v in
                                            prony_fit.rms_percent_by_quantity.items()}
    loss_worse = not rms1 >= rms2
    worse = ("E'' predicted from E'" if loss_worse else "E' predicted from E''")
    worst = _kk_worst_isotherms(point_T[use2] if loss_worse else point_T[use1],
                                dev2 if loss_worse else dev1)
    details["worst_isotherms"] = [{"temperature_C": t - 273.15, "rms_percent": r}
                                  for t, r in worst]
    where = ("; largest at " + ", ".join(f"{_fmt_C(t)} ({r:.2g} %)" for t, r in worst)
             if worst and status != "pass" else "")
    return CheckResult("kramers_kronig", status, value, warn,
                       _kk_message(status, value, worse, where), details)
