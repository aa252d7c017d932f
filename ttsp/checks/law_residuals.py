"""Law residuals: a systematic pattern in the residuals of the fitted shift law (too few sign
runs, or curvature in temperature) suggests a transition inside the temperature range."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..laws import ShiftLawFit
    from ..shifting import ShiftResult

import math

import numpy as np

from .._validation import bad_value
from ._inputs import _array
from .result import CheckResult

__all__ = ["check_law_residuals", "LAW_PATTERN_ALPHA", "LAW_RESIDUAL_FLOOR_DECADES",
           "LAW_RESIDUAL_FAIL_DECADES"]


#: Law residuals: significance level of the pattern tests (runs and curvature; each is tested at
#: half of it, Bonferroni).
LAW_PATTERN_ALPHA = 0.05
#: Residuals whose rms is below this (decades) carry no pattern worth a warning: 0.02 decade is
#: about the accuracy of good automatic shifts at 2 % noise (rms 0.017 decade on
#: benchmarks/bench_shifting.py).
LAW_RESIDUAL_FLOOR_DECADES = 0.02
#: A law that misses the shift factors by more than this rms (decades; a factor 2 in time) fails.
LAW_RESIDUAL_FAIL_DECADES = 0.3

_RESIDUAL_ZERO_DECADES = 1e-9


def _runs_p_value(signs: np.ndarray) -> tuple[int, float, float]:
    """Exact lower-tail probability of at most the observed number of sign runs.

    Under independence, with n1 positive and n2 negative signs in random order, the number of
    runs R has P(R = 2k) = 2 C(n1−1, k−1) C(n2−1, k−1) / C(n, n1) and P(R = 2k+1) =
    [C(n1−1, k) C(n2−1, k−1) + C(n1−1, k−1) C(n2−1, k)] / C(n, n1) (Wald & Wolfowitz, Ann. Math.
    Stat. 11, 147-162, 1940). Returns (runs, expected runs, P(R ≤ runs)).
    """
    n1 = int(np.sum(signs > 0))
    n2 = int(np.sum(signs < 0))
    n = n1 + n2
    runs = 1 + int(np.sum(signs[1:] != signs[:-1]))
    if n1 == 0 or n2 == 0:
        return runs, 1.0, 1.0
    expected = 1.0 + 2.0 * n1 * n2 / n
    total = math.comb(n, n1)

    def prob(r):
        k, odd = divmod(r, 2)
        if not odd:
            return 2 * math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k - 1) / total
        return (math.comb(n1 - 1, k) * math.comb(n2 - 1, k - 1)
                + math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k)) / total

    return runs, expected, float(min(1.0, sum(prob(r) for r in range(2, runs + 1))))


def _curvature_p_value(t: np.ndarray, r: np.ndarray) -> tuple[float, float]:
    """Two-sided p-value of the quadratic term of r ~ c0 + c1 τ + c2 τ², τ the centred,
    scaled temperature (ordinary least squares t-test; Draper & Smith, Applied Regression
    Analysis, 3rd ed., 1998, ch. 3). Returns (t statistic, p)."""
    from scipy import stats

    if t.size < 5:
        return math.nan, 1.0
    tau = (t - t.mean()) / (np.ptp(t) or 1.0)
    x = np.column_stack([np.ones_like(tau), tau, tau ** 2])
    coef, *_ = np.linalg.lstsq(x, r, rcond=None)
    dof = t.size - 3
    resid = r - x @ coef
    s2 = float(resid @ resid) / dof
    cov = s2 * np.linalg.inv(x.T @ x)
    se = math.sqrt(max(cov[2, 2], 0.0))
    if se == 0:
        return (math.inf, 0.0) if abs(coef[2]) > 0 else (0.0, 1.0)
    tstat = float(coef[2] / se)
    return tstat, float(2.0 * stats.t.sf(abs(tstat), dof))


def check_law_residuals(law_fit: ShiftLawFit, *, shifts: ShiftResult | None = None) -> CheckResult:
    """A systematic pattern in the residuals of the fitted shift law.

    The residuals (data − law, decades) ordered by temperature are tested for too few sign
    runs (Wald & Wolfowitz 1940) and for curvature (t-test of a quadratic in T); each at
    :data:`LAW_PATTERN_ALPHA`/2 (Bonferroni). A pattern only counts when the residuals exceed
    both :data:`LAW_RESIDUAL_FLOOR_DECADES` and twice the typical shift standard error. A
    pattern in a single law suggests the temperature dependence changes inside the range, most
    often on crossing the glass transition: WLF above Tg, Arrhenius below (Struik 1978;
    docs/methods.md §6.4, §3.1), so the law across Tg ('wlf-arrhenius') is suggested.

    Parameters
    ----------
    law_fit : ShiftLawFit
        ``residuals``, ``temperature_K``, ``law.model`` (and ``log10_aT_stderr`` if known).
    shifts : shift result, optional
        Its ``log10_aT_stderr`` is used when the law fit carries none.

    Returns
    -------
    CheckResult
        Value: the smaller Bonferroni-corrected p-value of the two pattern tests.
    """
    try:
        r = np.asarray(law_fit.residuals, dtype=float).ravel()
        t = np.asarray(law_fit.temperature_K, dtype=float).ravel()
    except AttributeError:
        raise bad_value("law_fit", "a shift-law fit with residuals and temperature_K",
                        type(law_fit).__name__) from None
    if r.size != t.size:
        raise bad_value("law_fit.residuals", f"one value per temperature ({t.size})",
                        f"{r.size} values")
    model = str(getattr(getattr(law_fit, "law", None), "model", None)
                or getattr(law_fit, "model", "") or "")
    stderr = np.asarray(getattr(law_fit, "log10_aT_stderr", np.full(t.size, np.nan)),
                        dtype=float).ravel()
    if not np.isfinite(stderr).any() and shifts is not None:
        stderr = _array(shifts, "log10_aT_stderr", np.size(shifts.temperature_K), np.nan)
    typical_se = float(np.nanmedian(stderr)) if np.isfinite(stderr).any() else 0.0
    order = np.argsort(t, kind="stable")
    t, r = t[order], r[order]
    informative = np.abs(r) > _RESIDUAL_ZERO_DECADES
    t, r = t[informative], r[informative]
    rms = float(np.sqrt(np.mean(r ** 2))) if r.size else 0.0
    floor = max(LAW_RESIDUAL_FLOOR_DECADES, 2.0 * typical_se)
    runs, expected, p_runs = _runs_p_value(np.sign(r)) if r.size else (0, 0.0, 1.0)
    tstat, p_curv = _curvature_p_value(t, r)
    p = min(1.0, 2.0 * min(p_runs, p_curv))
    details = {"unit": "p-value", "model": model, "rms_residual_decades": rms,
               "residual_floor_decades": floor, "runs": runs, "expected_runs": expected,
               "runs_p_value": p_runs, "curvature_t": tstat, "curvature_p_value": p_curv,
               "points": int(r.size)}
    if rms > LAW_RESIDUAL_FAIL_DECADES:
        status = "fail"
    elif rms > floor and p < LAW_PATTERN_ALPHA:
        status = "warn"
    else:
        status = "pass"
    suggest = None
    if status != "pass":
        if model in ("wlf", "vft", "arrhenius"):
            suggest = "wlf-arrhenius"
            advice = ("The temperature dependence changes inside the range, as on crossing Tg: "
                      "try the law across Tg (--law wlf-arrhenius), or fit only one side.")
        else:
            advice = ("The law does not follow the shift factors; look for a transition in the "
                      "range or a wrong shift, and fit the law on a narrower range.")
    details["suggested_law"] = suggest
    if status == "pass":
        why = ("within the shift uncertainty" if rms <= floor else "without a systematic pattern")
        msg = (f"The {model or 'shift'} law follows the shift factors (rms residual "
               f"{rms:.2g} decade, {why}).")
    elif status == "warn":
        msg = (f"The residuals of the {model} law follow a systematic pattern in temperature "
               f"(rms {rms:.2g} decade, {runs} sign runs, p = {p:.2g}). {advice}")
    else:
        msg = (f"The {model} law misses the shift factors by {rms:.2g} decade rms. {advice}")
    return CheckResult("law_residuals", status, p, LAW_PATTERN_ALPHA, msg, details)
