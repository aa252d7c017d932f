"""Conversions between series: exact relaxation <-> creep, and shear <-> tensile.

- :func:`relaxation_to_creep` and :func:`creep_to_relaxation`: the exact interconversion of a
  Prony (relaxation) series and a retardation (creep) series, [sE(s)][sD(s)] = 1 (Ferry,
  *Viscoelastic Properties of Polymers*, 3rd ed., Wiley 1980, ch. 3; Tschoegl, *The
  Phenomenological Theory of Linear Viscoelastic Behavior*, Springer 1989, ch. 4). They live
  in the Prony package (:mod:`ttsp.prony.exact_conversion`, derivation there), because the
  fit of creep data converts its series with them, and are offered here with
  :class:`CreepSeries`.
- :func:`shear_to_tensile` and :func:`tensile_to_shear`: a constant Poisson's ratio, exact
  only for an elastic solid.

Computation module: imports numpy only.
"""

from __future__ import annotations

import math

from ._validation import bad_value
from .prony import PronySeries
from .prony.creep_series import CreepSeries
from .prony.exact_conversion import creep_to_relaxation, relaxation_to_creep

__all__ = [
    "CreepSeries",
    "relaxation_to_creep",
    "creep_to_relaxation",
    "shear_to_tensile",
    "tensile_to_shear",
]


# ----------------------------------------------------------------------------------------
# shear <-> tensile with a constant Poisson's ratio
# ----------------------------------------------------------------------------------------
def _poisson(poisson_ratio: float) -> float:
    try:
        nu = float(poisson_ratio)
    except (TypeError, ValueError):
        raise bad_value("poisson_ratio", "a number", poisson_ratio) from None
    if not (math.isfinite(nu) and 0.0 <= nu < 0.5):
        raise bad_value("poisson_ratio", "in [0, 0.5)", poisson_ratio)
    return nu


def _scaled(series, factor: float, new_kind: str, note: dict):
    if isinstance(series, PronySeries):
        prov = dict(series.provenance or {})
        prov.update(note)
        return PronySeries(series.equilibrium_modulus_Pa * factor, series.tau_s,
                           series.modulus_Pa * factor, modulus_kind=new_kind,
                           reference_temperature_K=series.reference_temperature_K,
                           valid_reduced_time_range_s=series.valid_reduced_time_range_s,
                           fit_rms_percent=series.fit_rms_percent,
                           fit_max_percent=series.fit_max_percent, provenance=prov)
    prov = dict(series.provenance or {})
    prov.update(note)
    return CreepSeries(series.glassy_compliance_1_per_Pa / factor, series.retardation_times_s,
                       series.compliance_1_per_Pa / factor, series.fluidity_1_per_Pa_s / factor,
                       modulus_kind=new_kind,
                       reference_temperature_K=series.reference_temperature_K,
                       valid_reduced_time_range_s=series.valid_reduced_time_range_s,
                       provenance=prov)


def _check_kind(series, expected: str):
    if not isinstance(series, (PronySeries, CreepSeries)):
        raise bad_value("series", "a PronySeries or a CreepSeries", type(series).__name__)
    if series.modulus_kind != expected:
        raise bad_value("series.modulus_kind", repr(expected), series.modulus_kind)


def shear_to_tensile(series: PronySeries | CreepSeries, poisson_ratio: float):
    """Tensile series from a shear series with a constant Poisson's ratio: E = 2(1 + ν) G.

    For a relaxation series every modulus (G_∞ and each G_i) is multiplied by 2(1 + ν); for a
    creep series every compliance (and the fluidity) is divided by it, D = J/(2(1 + ν)). Times
    are unchanged. This is exact only for an elastic solid: for a viscoelastic material ν
    itself depends on time, and the exact route needs a second function such as the bulk
    modulus, G̃ = 3K̃Ẽ/(9K̃ − Ẽ) in Carson transforms (Tschoegl, Knauss & Emri, Mech.
    Time-Depend. Mater. 6:3, 2002). The result says so in ``provenance["approximation"]``.

    Parameters
    ----------
    series : PronySeries or CreepSeries
        Series with ``modulus_kind == "shear"``.
    poisson_ratio : float
        Constant Poisson's ratio ν (dimensionless), 0 ≤ ν < 0.5.

    Returns
    -------
    PronySeries or CreepSeries
        Same type, ``modulus_kind == "tensile"``.

    Raises
    ------
    DataError
        If ν is outside [0, 0.5), or the series is not a shear series.
    """
    nu = _poisson(poisson_ratio)
    _check_kind(series, "shear")
    return _scaled(series, 2.0 * (1.0 + nu), "tensile",
                   {"approximation": f"constant Poisson's ratio {nu:g}",
                    "converted_from": "shear", "poisson_ratio": nu})


def tensile_to_shear(series: PronySeries | CreepSeries, poisson_ratio: float):
    """Shear series from a tensile series with a constant Poisson's ratio: G = E/(2(1 + ν)).

    The inverse of :func:`shear_to_tensile`; the same caveat applies (exact only for an elastic
    solid; recorded in ``provenance["approximation"]``).

    Parameters
    ----------
    series : PronySeries or CreepSeries
        Series with ``modulus_kind == "tensile"``.
    poisson_ratio : float
        Constant Poisson's ratio ν (dimensionless), 0 ≤ ν < 0.5.

    Returns
    -------
    PronySeries or CreepSeries
        Same type, ``modulus_kind == "shear"``.

    Raises
    ------
    DataError
        If ν is outside [0, 0.5), or the series is not a tensile series.
    """
    nu = _poisson(poisson_ratio)
    _check_kind(series, "tensile")
    return _scaled(series, 1.0 / (2.0 * (1.0 + nu)), "shear",
                   {"approximation": f"constant Poisson's ratio {nu:g}",
                    "converted_from": "tensile", "poisson_ratio": nu})
