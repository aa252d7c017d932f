"""The Prony series against the master curve: how closely it follows the data, and whether the
data reach the plateaus or the series' ends are extrapolated."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..prony import PronyFit

import math

from .._validation import bad_value
from ..data import Campaign
from .noise import _noise_percent, estimate_noise
from .result import CheckResult, _grade

__all__ = ["check_prony_fit_quality", "check_master_curve_range", "PRONY_RMS_WARN_PERCENT",
           "PRONY_RMS_FAIL_PERCENT"]


#: Prony fit: rms relative deviation (%) above which the fit describes the master curve worse
#: than its noise explains. The warn level is at least 2.5 times the measured noise.
PRONY_RMS_WARN_PERCENT = 5.0
PRONY_RMS_FAIL_PERCENT = 15.0


def check_prony_fit_quality(prony_fit: PronyFit, *,
                            campaign: Campaign | None = None) -> CheckResult:
    """Residuals of the Prony fit against thresholds.

    The rms relative deviation (%) is judged against :data:`PRONY_RMS_WARN_PERCENT` (raised to
    2.5 times the measured noise of the campaign when that is larger: no fit can beat the
    noise) and :data:`PRONY_RMS_FAIL_PERCENT`; the largest deviation is reported.

    Parameters
    ----------
    prony_fit : PronyFit
        ``rms_percent``, ``max_percent``, optionally ``rms_percent_by_quantity``.
    campaign : Campaign, optional
        To measure the noise.
    """
    try:
        rms, mx = float(prony_fit.rms_percent), float(prony_fit.max_percent)
    except AttributeError:
        raise bad_value("prony_fit", "a Prony fit with rms_percent and max_percent",
                        type(prony_fit).__name__) from None
    noise_pct = math.nan
    if campaign is not None:
        noise_pct = _noise_percent(estimate_noise(campaign))[0]
    warn = max(PRONY_RMS_WARN_PERCENT, 2.5 * noise_pct) if math.isfinite(noise_pct) \
        else PRONY_RMS_WARN_PERCENT
    fail = max(PRONY_RMS_FAIL_PERCENT, 2 * warn)
    status = _grade(rms, warn, fail)
    details = {"unit": "%", "rms_percent": rms, "max_percent": mx, "fail_threshold": fail,
               "noise_percent": noise_pct}
    by = getattr(prony_fit, "rms_percent_by_quantity", None)
    if by:
        details["rms_percent_by_quantity"] = {str(k): float(v) for k, v in by.items()}
    if status == "pass":
        msg = (f"The Prony series follows the master curve within {rms:.2g} % rms "
               f"(largest {mx:.2g} %).")
    else:
        msg = (f"The Prony series misses the master curve by {rms:.2g} % rms (largest "
               f"{mx:.2g} %). Use more terms per decade, check the master curve for steps "
               "between isotherms, or check Kramers–Kronig consistency.")
    return CheckResult("prony_fit_quality", status, rms, warn, msg, details)


def check_master_curve_range(prony_fit: PronyFit) -> CheckResult:
    """Whether the master curve reaches its plateaus, or the series' ends are extrapolated.

    At a data end where the local slope |d ln E/d ln x| of the fitted curve exceeds the plateau
    criterion of the fit, the glassy (instantaneous) or rubbery (equilibrium) modulus is not
    measured but extrapolated by the series (docs/methods.md §4.4). Predictions beyond the
    valid reduced-time range are extrapolations too.

    Parameters
    ----------
    prony_fit : PronyFit
        ``reaches_glassy_plateau``, ``reaches_rubbery_plateau``, ``reaches_terminal_zone``,
        ``series.valid_reduced_time_range_s``.

    Returns
    -------
    CheckResult
        Value: the number of extrapolated ends (0, 1 or 2).
    """
    try:
        glassy = bool(prony_fit.reaches_glassy_plateau)
        rubbery = bool(prony_fit.reaches_rubbery_plateau)
    except AttributeError:
        raise bad_value("prony_fit", "a Prony fit with plateau verdicts",
                        type(prony_fit).__name__) from None
    terminal = bool(getattr(prony_fit, "reaches_terminal_zone", False))
    series = getattr(prony_fit, "series", None)
    rng = getattr(series, "valid_reduced_time_range_s", None)
    ends = []
    approaching = any("terminal (flow) zone" in str(w)
                      for w in getattr(prony_fit, "warnings", ()) or ())
    if not glassy:
        ends.append("short-time (glassy) end")
    if not (rubbery or terminal):
        ends.append("long-time (terminal, flow) end, which for a melt is the expected end "
                    "(its equilibrium modulus is zero by physics)" if approaching
                    else "long-time (rubbery) end")
    details = {"unit": "extrapolated ends", "glassy_plateau_reached": glassy,
               "rubbery_plateau_reached": rubbery, "terminal_zone_reached": terminal,
               "extrapolated_ends": ends,
               "valid_reduced_time_range_s": list(rng) if rng is not None else None}
    where = (f" (valid reduced time {rng[0]:.3g} s to {rng[1]:.3g} s)" if rng is not None else "")
    if not ends:
        msg = (f"The master curve reaches both ends of the relaxation{where}; the series is "
               "measured, not extrapolated, inside that window.")
        if terminal:
            msg += (" Its long-time end is the terminal (flow) zone of a liquid, whose "
                    "equilibrium modulus is zero by physics.")
        return CheckResult("master_curve_range", "pass", 0.0, 0.0, msg, details)
    msg = (f"The data do not reach the {' and the '.join(ends)}: the series is extrapolated "
           f"there{where}. That says nothing against superposition, but do not use the series "
           "outside that window; measure at more temperatures to reach the plateau.")
    # A note on the range, not a verdict on superposition: exact simple campaigns that stop
    # short of a plateau warned here on 73 % of benchmarks/bench_checks.py --quick (old code).
    return CheckResult("master_curve_range", "pass", float(len(ends)), 0.0, msg, details)
