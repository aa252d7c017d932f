"""The noise of every material function of every isotherm, shared by the checks.

Estimated once per campaign from third differences (:func:`ttsp._noise.third_difference_sigmas`)
and cached; the checks read it as the scale of their distances and the floor of their
thresholds.
"""

from __future__ import annotations

import math
import weakref

import numpy as np

from .._noise import NOISE_FLOOR_LOG10 as _NOISE_FLOOR_LOG10
from .._noise import third_difference_sigmas
from ..data import Campaign
from ._inputs import _as_campaign

__all__ = ["NOISE_FLOOR_LOG10", "NOISE_FLOOR_RAD", "estimate_noise"]


#: Smallest noise (decades of log10) assumed for a logarithmic quantity (see ttsp._noise).
NOISE_FLOOR_LOG10 = _NOISE_FLOOR_LOG10
#: Smallest noise (rad) assumed for the phase angle δ: what 0.46 % noise on E' and E'' gives at
#: δ = 45° (σ_δ = sin δ cos δ · √2 · ln 10 · 0.002 ≈ 0.0033 rad), rounded down.
NOISE_FLOOR_RAD = 0.003

_LN10 = math.log(10.0)


def _log_or_linear(quantity: str, values: np.ndarray) -> np.ndarray:
    v = np.asarray(values, dtype=float)
    if quantity == "phase_angle_rad":
        return v
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(v > 0, np.log10(np.where(v > 0, v, 1.0)), np.nan)


# Noise estimates by campaign identity (campaigns compare by value, so they are not hashable);
# a weak reference tells a live entry from a recycled id. Several checks need the same estimate.
_NOISE_CACHE: dict = {}
_NOISE_CACHE_SIZE = 16


def estimate_noise(campaign: Campaign) -> dict:
    """Noise of every material function of every isotherm (computed once per campaign; see
    :func:`_estimate_noise`). Treat the returned dict as read-only."""
    hit = _NOISE_CACHE.get(id(campaign))
    if hit is not None and hit[0]() is campaign:
        return hit[1]
    noise = _estimate_noise(campaign)
    try:
        ref = weakref.ref(campaign)
    except TypeError:  # not weak-referenceable: nothing to cache
        return noise
    if len(_NOISE_CACHE) >= _NOISE_CACHE_SIZE:
        _NOISE_CACHE.pop(next(iter(_NOISE_CACHE)))
    _NOISE_CACHE[id(campaign)] = (ref, noise)
    return noise


def _estimate_noise(campaign: Campaign) -> dict:
    """Noise of every material function of every isotherm, from third differences.

    The noise of a positive quantity is the standard deviation of its log10 values (decades;
    multiply by ln 10 for the relative noise), that of the phase angle δ in radians. See
    :func:`ttsp._noise.third_difference_sigmas` for the estimator.

    Parameters
    ----------
    campaign : Campaign
        The measured campaign (derived functions are filled in with ``with_derived``).

    Returns
    -------
    dict
        ``{"per_isotherm": [{"temperature_K": T, quantity: sigma, ...}, ...],
        "typical": {quantity: sigma}}``: per isotherm (NaN where fewer than 5 points), and the
        median over isotherms floored at :data:`NOISE_FLOOR_LOG10` or :data:`NOISE_FLOOR_RAD`.
    """
    campaign = _as_campaign(campaign).with_derived()
    cells = [(k, q, _log_or_linear(q, v)) for k, iso in enumerate(campaign.isotherms)
             for q, v in iso.values.items()]
    sigmas = third_difference_sigmas([y for _, _, y in cells])
    per = [{"temperature_K": iso.temperature_K} for iso in campaign.isotherms]
    pooled: dict[str, list[float]] = {}
    for (k, q, _), sd in zip(cells, sigmas, strict=True):
        per[k][q] = float(sd)
        pooled.setdefault(q, []).append(float(sd))
    typical = {}
    for q, pooled_q in pooled.items():
        vals = np.asarray(pooled_q, dtype=float)
        vals = vals[np.isfinite(vals)]
        floor = NOISE_FLOOR_RAD if q == "phase_angle_rad" else NOISE_FLOOR_LOG10
        typical[q] = max(float(np.median(vals)) if vals.size else floor, floor)
    return {"per_isotherm": per, "typical": typical}


def _typical_noise(noise: dict, quantity: str) -> np.ndarray:
    """Per-isotherm noise: the mean square of own and typical noise (stabilised, floored)."""
    typical = noise["typical"].get(quantity, NOISE_FLOOR_LOG10)
    own = np.array([row.get(quantity, math.nan) for row in noise["per_isotherm"]], dtype=float)
    own = np.where(np.isfinite(own), own, typical)
    return np.sqrt(0.5 * (own ** 2 + typical ** 2))


def _noise_percent(noise: dict):
    """(typical relative noise in % over the measured moduli, per-isotherm rows in %)."""
    keys = [q for q in noise["typical"] if q not in ("phase_angle_rad", "tan_delta",
                                                     "complex_modulus_Pa")]
    if not keys:
        keys = list(noise["typical"])
    typical = max(100.0 * _LN10 * noise["typical"][q] for q in keys)
    rows = []
    for row in noise["per_isotherm"]:
        vals = [row.get(q, math.nan) for q in keys]
        vals = [v for v in vals if math.isfinite(v)]
        rows.append({"temperature_C": row["temperature_K"] - 273.15,
                     "noise_percent": 100.0 * _LN10 * max(vals) if vals else None})
    return typical, rows, keys
