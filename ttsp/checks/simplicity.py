"""Thermorheological simplicity before any shift: the raw isotherms in planes without a
frequency axis (van Gurp–Palmen: δ against log|E*|; log E'' against log E').

In either plane the isotherms of a thermorheologically simple material fall on one curve, so
their spread (:mod:`ttsp.checks.spread`) tests superposition without shift factors.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..shifting import ShiftResult

import math

import numpy as np

from ..data import Campaign
from ._inputs import _align_shifts, _as_campaign
from .noise import _typical_noise, estimate_noise
from .result import CheckResult
from .spread import (
    SPREAD_TOLERANCE_LOG10,
    SPREAD_TOLERANCE_RAD,
    _curve,
    _pairwise_spread,
    _spread_result,
)

__all__ = ["check_van_gurp_palmen", "check_loss_vs_storage"]


_COMPLEX_ADVICE = ("The material looks thermorheologically complex (several mechanisms with "
                   "different temperature dependences, a phase change or a changing sample); "
                   "a single master curve will misrepresent it, so use a narrower temperature "
                   "range or model the processes separately.")


def _frequency_planes(campaign: Campaign):
    c = campaign.with_derived()
    both = {"storage_modulus_Pa", "loss_modulus_Pa"}
    if c.domain != "frequency" or not both <= set(c.quantities):
        return None
    return c


def _plane_spread(campaign, shifts, xq, yq, tx, ty):
    """Spread of the raw isotherms in the plane (log10 x-quantity, y-quantity); see callers.

    Every point is used: the outlier flags of the shifting are relative to a master curve, and a
    material that does not superpose produces many of them. Moduli are divided by b_T when the
    shifts carry vertical shifts (reduced modulus E/b_T).
    """
    c = _frequency_planes(_as_campaign(campaign))
    if c is None:
        return None
    table = _align_shifts(c, shifts) if shifts is not None else None
    noise = estimate_noise(c)
    sx, sy = _typical_noise(noise, xq), _typical_noise(noise, yq)
    curves = []
    for k, iso in enumerate(c.isotherms):
        log_b = table.log10_bT[k] if table is not None else 0.0
        x = np.log10(iso.values[xq]) - log_b
        y = (np.asarray(iso.values[yq], dtype=float) if yq == "phase_angle_rad"
             else np.log10(iso.values[yq]) - log_b)
        curves.append(_curve(x, y))
    return _pairwise_spread(c.temperatures_K, curves, sx, sy, tx, ty)


def check_van_gurp_palmen(campaign: Campaign, *,
                          shifts: ShiftResult | None = None) -> CheckResult | None:
    """Spread of the raw isotherms in the van Gurp–Palmen plane, δ against log10|E*|.

    If the material is thermorheologically simple (and b_T = 1), a change of temperature only
    slides each isotherm along one curve δ(|E*|), so the raw isotherms collapse without any
    shift factor (van Gurp & Palmen, Rheology Bulletin 67, 5-8, 1998; Trinkle & Friedrich,
    Rheol. Acta 40, 322-328, 2001). For pairs of isotherms whose |E*| ranges overlap, each
    point of one is measured to the curve of the other in units of the combined noise and
    tolerance (:data:`SPREAD_TOLERANCE_RAD`, :data:`SPREAD_TOLERANCE_LOG10`; see
    :func:`_distances`); the value is the largest rms of these normalised distances over the
    temperature separations of the pairs (see :func:`_pairwise_spread`). When ``shifts``
    carries vertical shifts, |E*| is divided by b_T first.

    Parameters
    ----------
    campaign : Campaign
        Frequency-domain data with E' and E'' (or |E*| and δ).
    shifts : shift result, optional
        Only its ``log10_bT`` is used.

    Returns
    -------
    CheckResult or None
        None when the campaign is not frequency-domain data with both moduli. Value: the rms
        spread in multiples of noise and tolerance; ``details["rms_spread"]`` in degrees.
    """
    out = _plane_spread(campaign, shifts, "complex_modulus_Pa", "phase_angle_rad",
                        SPREAD_TOLERANCE_LOG10, SPREAD_TOLERANCE_RAD)
    if out is None:
        return None
    value, raw, pairs, classes = out
    for p in pairs + classes:
        p["rms_degrees"] = math.degrees(p.pop("rms"))
    return _spread_result("simplicity_van_gurp_palmen", "phase angle against |E*| plane "
                          "(van Gurp–Palmen)", "degrees", value,
                          math.degrees(raw) if math.isfinite(raw) else raw, pairs, classes,
                          _COMPLEX_ADVICE)


def check_loss_vs_storage(campaign: Campaign, *,
                          shifts: ShiftResult | None = None) -> CheckResult | None:
    """Spread of the raw isotherms in the log10 E'' against log10 E' plane.

    Like :func:`check_van_gurp_palmen`, this plane has no frequency axis: the isotherms of a
    thermorheologically simple material fall on one curve without shifting (Ferry 1980, ch. 11;
    the log–log form of the Cole–Cole plot). Distances are normalised by the combined noise and
    tolerance as in :func:`check_van_gurp_palmen`.

    Returns
    -------
    CheckResult or None
        None when the campaign is not frequency-domain data with both moduli. Value: the rms
        spread in multiples of noise and tolerance; ``details["rms_spread"]`` in decades of E''.
    """
    out = _plane_spread(campaign, shifts, "storage_modulus_Pa", "loss_modulus_Pa",
                        SPREAD_TOLERANCE_LOG10, SPREAD_TOLERANCE_LOG10)
    if out is None:
        return None
    value, raw, pairs, classes = out
    for p in pairs + classes:
        p["rms_decades"] = p.pop("rms")
    return _spread_result("simplicity_loss_vs_storage", "log E'' against log E' plane",
                          "decades of E''", value, raw, pairs, classes, _COMPLEX_ADVICE)
