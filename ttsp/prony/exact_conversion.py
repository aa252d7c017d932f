"""Exact interconversion of Prony series: relaxation modulus <-> creep compliance.

A relaxation (generalized Maxwell) series

.. math:: E(t) = E_\\infty + \\sum_{i=1}^{N} E_i e^{-t/\\tau_i}

and a retardation (generalized Kelvin-Voigt) series

.. math:: D(t) = D_g + \\sum_{j} D_j \\left(1 - e^{-t/\\lambda_j}\\right) + t/\\eta_0

describe the same linear material when their Carson transforms are reciprocal,
:math:`[s\\bar E(s)]\\,[s\\bar D(s)] = 1` (Ferry, *Viscoelastic Properties of Polymers*,
3rd ed., Wiley 1980, ch. 3; Tschoegl, *The Phenomenological Theory of Linear Viscoelastic
Behavior*, Springer 1989, ch. 4). With

.. math:: s\\bar E(s) = E_\\infty + \\sum_i E_i \\frac{s\\tau_i}{1 + s\\tau_i},

the retardation times are :math:`\\lambda_j = -1/s_j` at the zeros :math:`s_j` of
:math:`s\\bar E(s)`. Put :math:`s = -1/\\lambda`:

.. math:: F(\\lambda) = E_\\infty + \\sum_i \\frac{E_i\\,\\tau_i}{\\tau_i - \\lambda} = 0 .

:math:`F` increases strictly between its poles :math:`\\tau_i`, runs from :math:`-\\infty` to
:math:`+\\infty` between two consecutive poles, is positive below :math:`\\tau_1` and tends to
:math:`E_\\infty` above :math:`\\tau_N`. So the roots interlace the relaxation times,
:math:`\\tau_1 < \\lambda_1 < \\tau_2 < \\dots < \\tau_N < \\lambda_N`, with the last root only
for a solid (:math:`E_\\infty > 0`). This is a *secular equation* of the kind met in rank-one
eigenvalue updates (Golub, SIAM Review 15:318, 1973; Bunch, Nielsen & Sorensen, Numer. Math.
31:31, 1978). The residues of :math:`1/(s\\bar E(s))` give

.. math::
   D_g = 1/E_0, \\qquad
   D_j = \\Big[\\lambda_j \\sum_i \\frac{E_i \\tau_i}{(\\lambda_j - \\tau_i)^2}\\Big]^{-1} > 0,
   \\qquad D_g + \\sum_j D_j = 1/E_\\infty,

and for a liquid (:math:`E_\\infty = 0`) the missing root becomes the flow term
:math:`t/\\eta_0` with :math:`\\eta_0 = \\sum_i E_i\\tau_i` (docs/methods.md §5.2; the same algebra is
given for Prony series by Luk-Cyr, Crochon, Li & Lévesque, Mech. Time-Depend. Mater. 17:53,
2013). The reverse conversion solves the same kind of equation on the compliance side.

The roots and residues are found by :mod:`ttsp.prony.secular`; the forward direction itself
lives beside the creep series (:func:`ttsp.prony.creep_series.creep_series_of`) so that
:class:`~ttsp.prony.PronySeries` can use it; this module adds the type check and the reverse
direction, which builds a :class:`~ttsp.prony.PronySeries`.

Computation module: imports numpy only.
"""

from __future__ import annotations

import numpy as np

from .._validation import bad_value
from .creep_series import CreepSeries, creep_series_of
from .secular import merge_terms, residue_weights, secular_roots
from .series import PronySeries

__all__ = ["relaxation_to_creep", "creep_to_relaxation"]


def relaxation_to_creep(series: PronySeries) -> CreepSeries:
    """Exact creep (retardation) series of a Prony relaxation series.

    Solves F(λ) = E_∞ + Σ E_i τ_i/(τ_i − λ) = 0 for the retardation times λ_j (one root between
    each pair of consecutive τ_i and, for a solid, one above τ_N), then

    .. math::
       D_g = 1/E_0,\\quad D_j = \\Big[\\lambda_j \\sum_i \\frac{E_i\\tau_i}{(\\lambda_j-\\tau_i)^2}
       \\Big]^{-1},\\quad \\varphi = 1/\\eta_0 = 1/\\sum_i E_i\\tau_i \\text{ if } E_\\infty = 0.

    Ferry 1980, ch. 3; Tschoegl 1989, ch. 4; docs/methods.md §5.2 (derivation in the module
    docstring; computed by :func:`ttsp.prony.creep_series.creep_series_of`). Terms with
    E_i = 0 carry no relaxation and are left out; terms with equal τ_i are merged (sum of
    E_i): the function E(t) is unchanged.

    Parameters
    ----------
    series : PronySeries
        Relaxation series (tensile E or shear G; the result has the same ``modulus_kind``).

    Returns
    -------
    CreepSeries
        D(t) with ``reference_temperature_K`` and ``valid_reduced_time_range_s`` carried over.

    Raises
    ------
    DataError
        If ``series`` is not a PronySeries.
    FitError
        If the root finder fails (not expected for a valid series).
    """
    if not isinstance(series, PronySeries):
        raise bad_value("series", "a PronySeries", type(series).__name__)
    return creep_series_of(series)


def creep_to_relaxation(creep: CreepSeries) -> PronySeries:
    """Exact Prony relaxation series of a creep (retardation) series.

    With sD̄(s) = D_g + Σ D_j/(1 + sλ_j) + φ/s, the relaxation times τ_i = −1/s_i come from the
    zeros of sD̄(s); at s = −1/τ:

    .. math:: G(\\tau) = D_g - \\varphi\\tau + \\sum_j \\frac{D_j\\,\\tau}{\\tau - \\lambda_j} = 0,

    which has one root in (0, λ_1), one between each pair of consecutive λ_j and, for a liquid
    (φ > 0), one above the last λ. The residues give

    .. math::
       E_i = \\Big[\\tau_i\\Big(\\sum_j \\frac{D_j\\lambda_j}{(\\tau_i-\\lambda_j)^2}
       + \\varphi\\Big)\\Big]^{-1},\\qquad E_\\infty = 1/(D_g + \\textstyle\\sum_j D_j)
       \\text{ (solid) or } 0 \\text{ (liquid)}.

    Tschoegl 1989, ch. 4; docs/methods.md §5.2 (derived here in the same way as the forward
    conversion). Zero D_j are left out and equal λ_j merged.

    Parameters
    ----------
    creep : CreepSeries
        Creep series (the result has the same ``modulus_kind``).

    Returns
    -------
    PronySeries

    Raises
    ------
    DataError
        If ``creep`` is not a CreepSeries.
    FitError
        If the root finder fails (not expected for a valid series).
    """
    if not isinstance(creep, CreepSeries):
        raise bad_value("creep", "a CreepSeries", type(creep).__name__)
    lam, dj = merge_terms(np.asarray(creep.retardation_times_s, float),
                          np.asarray(creep.compliance_1_per_Pa, float))
    dg = float(creep.glassy_compliance_1_per_Pa)
    phi = float(creep.fluidity_1_per_Pa_s)
    d_ss = dg + float(np.sum(dj))
    w = dj / d_ss
    c = -dg / d_ss
    b = phi / d_ss
    sum_w = float(np.sum(w))
    if lam.size == 0:
        if phi > 0:   # a single Maxwell element: D = D_g + φt  <->  E = exp(−t/τ)/D_g
            tau = np.array([dg / phi])
            e_i = np.array([1.0 / dg])
        else:
            tau, e_i = np.empty(0), np.empty(0)
    else:
        first = min(0.25 * lam[0], -c / (2.0 * b + 4.0 * sum_w / lam[0]))
        last = 2.0 * lam[-1] + 2.0 * (-c + 2.0 * sum_w) / b if phi > 0 else None
        tau, d = secular_roots(lam, w, c, b, False, first_lower_x=first, last_upper_x=last)
        # here d = λ_j − τ_i, and the residue sum is Σ w_j (λ_j/d)(τ_i/d) + b τ_i
        e_i = residue_weights(tau, d, lam, w, b) / d_ss
    e_inf = 0.0 if phi > 0 else 1.0 / d_ss
    prov = {"method": "exact Prony interconversion: relaxation times from the roots of "
                      "s*D(s), moduli from the residues",
            "source": "creep series", "n_retardation_terms": int(lam.size)}
    if creep.provenance:
        prov["source_provenance"] = creep.provenance
    return PronySeries(e_inf, tau, e_i, modulus_kind=creep.modulus_kind,
                       reference_temperature_K=creep.reference_temperature_K,
                       valid_reduced_time_range_s=creep.valid_reduced_time_range_s,
                       provenance=prov)
