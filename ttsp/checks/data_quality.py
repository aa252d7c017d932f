"""Data quality: the share of points the shifting flagged as outliers, and the noise level of
the measurements (per isotherm, from third differences)."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..shifting import ShiftResult

import math

import numpy as np

from ..data import Campaign
from ._inputs import _align_shifts, _as_campaign
from .noise import _LN10, NOISE_FLOOR_LOG10, _noise_percent, estimate_noise
from .result import CheckResult, _grade

__all__ = ["check_outliers", "check_noise_level", "OUTLIER_WARN_PERCENT", "OUTLIER_FAIL_PERCENT",
           "NOISE_WARN_PERCENT", "NOISE_FAIL_PERCENT", "NOISE_ISOTHERM_RATIO",
           "NOISE_ISOTHERM_PERCENT"]


#: Outliers: share of points (%) flagged by the shifting. A few per cent are usual in real data
#: (spikes at the ends of sweeps); a fifth of the data not fitting means superposition or the
#: data are doubtful [common practice, no source].
OUTLIER_WARN_PERCENT = 5.0
OUTLIER_FAIL_PERCENT = 20.0

#: Noise: relative noise (%) of a campaign's moduli. DMA moduli usually repeat within a few %
#: [common practice, no source]; above 15 % the checks here lose their power. The warn level
#: sits above what the third-difference estimate reads on campaigns with up to 5 % true noise
#: (10 points per isotherm: up to 5.9 % measured on benchmarks/bench_checks.py, where 5.0 warned
#: on 13 % of simple campaigns); measured rates are in DEVELOPERS.md.
NOISE_WARN_PERCENT = 7.5
NOISE_FAIL_PERCENT = 15.0
#: An isotherm whose noise is this many times the campaign's typical noise, and above
#: NOISE_ISOTHERM_PERCENT, is named (warn). With 10 points per isotherm the third-difference
#: estimate of one isotherm scatters widely: on simple benchmark campaigns the noisiest of 20
#: isotherms read 3-4 times the median (up to 13 % at 4 % true noise), so 3 times and 5 %
#: warned on 5 % of simple campaigns (benchmarks/bench_checks.py --quick).
NOISE_ISOTHERM_RATIO = 5.0
NOISE_ISOTHERM_PERCENT = 10.0


def check_outliers(campaign: Campaign, shifts: ShiftResult) -> CheckResult | None:
    """Share of points the shifting flagged as outliers, per isotherm.

    Parameters
    ----------
    campaign : Campaign
    shifts : shift result
        Its ``outlier_mask`` (one bool array per isotherm).

    Returns
    -------
    CheckResult or None
        None when the shift result carries no outlier flags. Value: % of points flagged.
    """
    c = _as_campaign(campaign)
    table = _align_shifts(c, shifts)
    if table.outliers is None:
        return None
    counts = [int(m.sum()) for m in table.outliers]
    total = int(sum(counts))
    share = 100.0 * total / max(c.n_points, 1)
    per = [{"temperature_C": iso.temperature_C, "outliers": n, "points": iso.n_points}
           for iso, n in zip(c.isotherms, counts, strict=True) if n]
    status = _grade(share, OUTLIER_WARN_PERCENT, OUTLIER_FAIL_PERCENT)
    named = ", ".join(f"{p['outliers']} at {p['temperature_C']:.4g} °C" for p in per[:8])
    details = {"unit": "% of points", "outliers": total, "points": c.n_points,
               "per_isotherm": per, "fail_threshold": OUTLIER_FAIL_PERCENT}
    if total == 0:
        msg = "The shifting flagged no point as an outlier."
    elif status == "pass":
        msg = (f"The shifting flagged {total} of {c.n_points} points as outliers ({named}); they "
               "are kept in the outputs and left out of the fits.")
    else:
        msg = (f"The shifting flagged {total} of {c.n_points} points ({share:.2g} %) as outliers "
               f"({named}). So many points that do not fit the others point to bad data or a "
               "material that does not superpose; inspect those isotherms.")
    return CheckResult("outliers", status, share, OUTLIER_WARN_PERCENT, msg, details)


def check_noise_level(campaign: Campaign) -> CheckResult:
    """Noise level of the data, estimated per isotherm from third differences.

    The relative noise (%) of each measured modulus or compliance is 100·ln 10 times the
    standard deviation of its log10 values from :func:`estimate_noise`. The value is the
    campaign's typical noise (median over isotherms, largest over the functions); isotherms
    noisier than :data:`NOISE_ISOTHERM_RATIO` times that are named.

    Returns
    -------
    CheckResult
        Value: typical relative noise in %.
    """
    c = _as_campaign(campaign)
    noise = estimate_noise(c)
    floored, rows, keys = _noise_percent(noise)
    floor = 100.0 * _LN10 * NOISE_FLOOR_LOG10
    # The headline is the measured scatter (median over isotherms of the per-isotherm estimate,
    # largest over the functions); the floor the other checks assume is only stated as a floor.
    measured = []
    for q in keys:
        vals = np.array([row.get(q, math.nan) for row in noise["per_isotherm"]], dtype=float)
        vals = vals[np.isfinite(vals)]
        if vals.size:
            measured.append(100.0 * _LN10 * float(np.median(vals)))
    typical = max(measured) if measured else floored
    noisy = [r for r in rows if r["noise_percent"] is not None
             and r["noise_percent"] > max(NOISE_ISOTHERM_RATIO * typical, NOISE_ISOTHERM_PERCENT)]
    status = _grade(typical, NOISE_WARN_PERCENT, NOISE_FAIL_PERCENT)
    if status == "pass" and noisy:
        status = "warn"
    details = {"unit": "%", "quantities": keys, "per_isotherm": rows,
               "noisy_isotherms": [r["temperature_C"] for r in noisy],
               "floor_percent": floor, "assumed_by_checks_percent": floored,
               "fail_threshold": NOISE_FAIL_PERCENT}
    named = ", ".join(f"{r['temperature_C']:.4g} °C ({r['noise_percent']:.2g} %)" for r in noisy)
    if status == "pass":
        msg = f"The data scatter by about {typical:.2g} % about smooth curves; that is usual."
        if typical < floor:
            msg += (f" The other checks assume at least {floor:.2g} % (a floor for "
                    "reproducibility between isotherms).")
    elif typical <= NOISE_WARN_PERCENT:
        msg = (f"Most isotherms scatter by about {typical:.2g} %, but some are much noisier: "
               f"{named}. Check those measurements (soak time, clamping, strain amplitude).")
    else:
        msg = (f"The data scatter by about {typical:.2g} % about smooth curves, which blurs the "
               "shift factors and weakens the other checks; average repeated sweeps or "
               "increase the strain amplitude within the linear range.")
    return CheckResult("noise_level", status, typical, NOISE_WARN_PERCENT, msg, details)
