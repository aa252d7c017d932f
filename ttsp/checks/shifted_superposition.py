"""Superposition after shifting: the spread of the shifted isotherms about each other
(:mod:`ttsp.checks.spread`), on tan δ for frequency data and on the measured function for time
data."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..shifting import ShiftResult

import math

import numpy as np

from ..data import Campaign
from ..shifting import USED_STDERR_CAP
from ._inputs import _align_shifts, _as_campaign, _keep, _reduced_log_x
from .data_quality import OUTLIER_WARN_PERCENT
from .noise import NOISE_FLOOR_LOG10, _typical_noise, estimate_noise
from .result import CheckResult
from .spread import SPREAD_TOLERANCE_LOG10, _curve, _pairwise_spread, _spread_result

__all__ = ["check_shifted_superposition"]


def check_shifted_superposition(campaign: Campaign, shifts: ShiftResult) -> CheckResult | None:
    """Superposition error after shifting: spread of overlapping shifted isotherms.

    Frequency data: log10 tan δ against log10(ω·a_T). tan δ is unchanged by a vertical shift, so
    this tests the horizontal shifts alone (docs/methods.md §6.1; common practice). Time data: log10 of
    the measured function divided by b_T (times b_T for a compliance) against log10(t/a_T).
    Every pair of isotherms whose reduced ranges overlap is compared as in
    :func:`check_van_gurp_palmen`, the shift standard errors entering as noise of the abscissa.
    Points flagged as outliers are left out while they are few (at most
    :data:`OUTLIER_WARN_PERCENT` of the points); when more are flagged they are kept, since
    so many "outliers" are the misfit this check is about.

    Parameters
    ----------
    campaign : Campaign
    shifts : shift result
        ``temperature_K``, ``log10_aT`` and optionally ``log10_aT_stderr``, ``log10_bT``,
        ``outlier_mask``.

    Returns
    -------
    CheckResult or None
        None when the campaign has no function to compare.
    """
    c = _as_campaign(campaign).with_derived()
    table = _align_shifts(c, shifts)
    quantity: str | None
    if c.domain == "frequency":
        if "tan_delta" not in c.quantities:
            return None
        quantity, vertical = "tan_delta", False
    else:
        quantity = next((q for q in ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
                         if q in c.quantities), None)
        if quantity is None:
            return None
        vertical = True
    noise = estimate_noise(c)
    sy = _typical_noise(noise, quantity)
    # an undetermined shift reports a stderr up to 100 decades; more abscissa noise than the cap
    # would turn its pairs into ordinate-only comparisons, so it counts as at most that
    sx = np.clip(np.where(np.isfinite(table.stderr), table.stderr, 0.0), NOISE_FLOOR_LOG10,
                 USED_STDERR_CAP)
    flagged = sum(int(m.sum()) for m in table.outliers) if table.outliers is not None else 0
    drop_outliers = 0 < flagged <= OUTLIER_WARN_PERCENT / 100.0 * c.n_points
    curves = []
    for k, iso in enumerate(c.isotherms):
        keep = _keep(table if drop_outliers else None, k, iso.n_points)
        y = np.log10(iso.values[quantity])
        if vertical:
            y = y - (table.log10_bT[k] if quantity != "creep_compliance_1_per_Pa"
                     else -table.log10_bT[k])
        curves.append(_curve(_reduced_log_x(c, table, k)[keep], y[keep]))
    # tan δ combines two moduli, so its tolerance is √2 that of one; the abscissa carries the
    # shift standard errors and no tolerance
    ty = SPREAD_TOLERANCE_LOG10 * (math.sqrt(2.0) if quantity == "tan_delta" else 1.0)
    value, raw, pairs, classes = _pairwise_spread(c.temperatures_K, curves, sx, sy, 0.0, ty)
    for p in pairs + classes:
        p["rms_decades"] = p.pop("rms")
    symbol = "tan δ" if quantity == "tan_delta" else c.symbol(quantity)
    xname = "reduced frequency" if c.domain == "frequency" else "reduced time"
    result = _spread_result(
        "shifted_superposition", f"shifted {symbol} against {xname}", f"decades of {symbol}",
        value, raw, pairs, classes,
        "The shifted isotherms do not superpose: either the shift factors are wrong (check the "
        "flagged isotherms) or the material is thermorheologically complex.")
    details = dict(result.details)
    details["quantity"] = quantity
    details["outliers_left_out"] = flagged if drop_outliers else 0
    return CheckResult(result.name, result.status, result.value, result.threshold,
                       result.message, details)
