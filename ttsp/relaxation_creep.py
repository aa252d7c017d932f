"""Relaxation against creep of the same material: the convolution identity.

The relaxation modulus E(t) and the creep compliance D(t) of one linear viscoelastic material
are not independent: their Laplace transforms obey s Ē(s) · s D̄(s) = 1, so that

    ∫₀ᵗ E(t − u) D(u) du = t        for every t ≥ 0

(Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 3; Tschoegl, The
Phenomenological Theory of Linear Viscoelastic Behavior, 1989, ch. 4). Written with the
Stieltjes form the same identity reads ∫₀ᵗ E(t − u) dD(u) = 1. When both curves were measured
this is a check of either against the other that needs no model of the material.

Each measured master curve is first smoothed by a non-negative Prony series fitted to it
(:func:`ttsp.prony.fit_prony_time`; a retardation series for D), so that the integral runs over
smooth functions defined down to t = 0; the integral of two such series is then exact in
closed form (:func:`convolution_integral`). Below the shortest measured time the series
extrapolate; the part of the integral they carry is at most about t_min/t of t (there
D(u) ≤ D(t_min) and E(t − u)·D(t) ≤ 1), so the identity is judged only from
``SHORT_TIME_MARGIN_DECADES`` above the later of the two curves' first times.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .prony import PronySeries

import warnings
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from ._validation import bad_value
from .exceptions import DataError
from .prony import fit_prony_time

__all__ = ["convolution_integral", "RelaxationCreepComparison", "compare_relaxation_creep",
           "SHORT_TIME_MARGIN_DECADES"]

#: the identity is judged from this many decades above the later first time of the two curves,
#: where the extrapolated short-time part carries under 1 % of the integral (module notes)
SHORT_TIME_MARGIN_DECADES = 2.0


def convolution_integral(series: PronySeries, creep, t_s: ArrayLike) -> np.ndarray:
    """I(t) = ∫₀ᵗ E(t − u) D(u) du of a Prony relaxation series and a retardation series.

    With E(s) = E_∞ + Σ_i E_i e^{−s/τ_i} and D(u) = A + φu − Σ_j D_j e^{−u/λ_j}
    (A = D_g + Σ_j D_j):

    I = E_∞ [A t + φt²/2 − Σ_j D_j λ_j (1 − e^{−t/λ_j})]
      + Σ_i E_i [A τ_i (1 − e^{−t/τ_i}) + φ (τ_i t − τ_i² (1 − e^{−t/τ_i}))
                 − Σ_j D_j (e^{−t/λ_j} − e^{−t/τ_i}) / (1/τ_i − 1/λ_j)],

    the last fraction read as t e^{−t/τ_i} when τ_i = λ_j (integrals of exponentials, worked
    out here). For an exact pair (:func:`ttsp.interconvert.relaxation_to_creep`) I(t) = t.

    Parameters
    ----------
    series : PronySeries
        E(t) (Pa), τ_i in s.
    creep : CreepSeries
        D(t) (1/Pa), λ_j in s, fluidity φ in 1/(Pa·s).
    t_s : array_like
        Times (s), ≥ 0.

    Returns
    -------
    array
        I(t) in s.
    """
    t = np.asarray(t_s, dtype=float)[..., None, None]
    tau = np.asarray(series.tau_s, dtype=float)[:, None]
    ei = np.asarray(series.modulus_Pa, dtype=float)[:, None]
    lam = np.asarray(creep.retardation_times_s, dtype=float)[None, :]
    dj = np.asarray(creep.compliance_1_per_Pa, dtype=float)[None, :]
    phi = float(creep.fluidity_1_per_Pa_s)
    e_inf = float(series.equilibrium_modulus_Pa)
    a = float(creep.glassy_compliance_1_per_Pa) + float(dj.sum())
    t1 = t[..., 0, 0]
    decay_tau = -np.expm1(-t[..., :, 0] / tau[:, 0])           # 1 − e^{−t/τ_i}
    decay_lam = -np.expm1(-t[..., 0, :] / lam[0, :])           # 1 − e^{−t/λ_j}
    rate = 1.0 / tau - 1.0 / lam
    close = np.abs(rate) * np.maximum(t, 1e-300) < 1e-9
    safe = np.where(close, 1.0, rate)
    cross = np.where(close, t * np.exp(-t / tau),
                     (np.exp(-t / lam) - np.exp(-t / tau)) / safe)
    out = e_inf * (a * t1 + 0.5 * phi * t1 ** 2 - np.sum(dj[0] * lam[0] * decay_lam, axis=-1))
    arms = (a * tau[:, 0] * decay_tau
            + phi * (tau[:, 0] * t[..., :, 0] - tau[:, 0] ** 2 * decay_tau)
            - np.sum(dj * cross, axis=-1))
    return out + np.sum(ei[:, 0] * arms, axis=-1)


@dataclass(frozen=True)
class RelaxationCreepComparison:
    """E(t) and D(t) of one material judged against each other.

    Attributes
    ----------
    time_s : array
        Reduced times (s) where the identity is judged.
    departure_percent : array
        100 (I(t)/t − 1) at those times.
    max_departure_percent : float
        Largest |departure| (%).
    relaxation_series, creep_series
        The smoothing fits of the two measured curves.
    creep_from_relaxation_1_per_Pa : array
        D(t) interconverted exactly from the relaxation series, at ``time_s``, to draw over the
        measured creep curve.
    """

    time_s: np.ndarray
    departure_percent: np.ndarray
    max_departure_percent: float
    relaxation_series: object
    creep_series: object
    creep_from_relaxation_1_per_Pa: np.ndarray

    def to_dict(self) -> dict:
        return {"max_departure_percent": float(self.max_departure_percent),
                "time_range_s": [float(self.time_s[0]), float(self.time_s[-1])],
                "points": int(self.time_s.size)}


def compare_relaxation_creep(relaxation_time_s: ArrayLike, relaxation_Pa: ArrayLike,
                             creep_time_s: ArrayLike, creep_1_per_Pa: ArrayLike, *,
                             terms_per_decade: float = 2.0,
                             points: int = 60) -> RelaxationCreepComparison:
    """Fit a Prony series to each measured master curve and judge ∫₀ᵗ E(t−u) D(u) du = t.

    Parameters
    ----------
    relaxation_time_s, relaxation_Pa : array_like
        Reduced times (s) and E(t) (Pa) of the relaxation master curve.
    creep_time_s, creep_1_per_Pa : array_like
        Reduced times (s) and D(t) (1/Pa) of the creep master curve.
    terms_per_decade : float
        Density of the smoothing series' time constants.
    points : int
        Log-spaced times at which the identity is evaluated.

    Returns
    -------
    RelaxationCreepComparison

    Raises
    ------
    DataError
        If the two curves share less than ``SHORT_TIME_MARGIN_DECADES`` + 0.5 decades of time.
    """
    te, e = np.asarray(relaxation_time_s, float), np.asarray(relaxation_Pa, float)
    td, d = np.asarray(creep_time_s, float), np.asarray(creep_1_per_Pa, float)
    lo = max(te.min(), td.min()) * 10 ** SHORT_TIME_MARGIN_DECADES
    hi = min(te.max(), td.max())
    if not hi > lo * 10 ** 0.5:
        raise DataError(f"relaxation and creep master curves overlap from "
                        f"{max(te.min(), td.min()):.3g} s to {hi:.3g} s; the convolution check "
                        f"needs {SHORT_TIME_MARGIN_DECADES + 0.5:g} decades")
    if points < 2:
        raise bad_value("points", "at least 2", points)
    with warnings.catch_warnings():   # the smoothing fits' own quality is not this check's
        warnings.simplefilter("ignore")
        fe = fit_prony_time(te, e, quantity="relaxation_modulus",
                            terms_per_decade=terms_per_decade)
        fd = fit_prony_time(td, d, quantity="creep_compliance",
                            terms_per_decade=terms_per_decade,
                            fluid=_looks_fluid(td, d))
    t = np.geomspace(lo, hi, points)
    creep = fd.creep
    dep = 100.0 * (convolution_integral(fe.series, creep, t) / t - 1.0)
    return RelaxationCreepComparison(t, dep, float(np.max(np.abs(dep))), fe.series, creep,
                                     fe.series.creep_compliance(t))


def _looks_fluid(t, d) -> bool:
    """A creep curve whose log–log slope over its last half decade exceeds 0.5 is flowing."""
    order = np.argsort(t)
    lt, ld = np.log10(t[order]), np.log10(d[order])
    tail = lt >= lt[-1] - 0.5
    if tail.sum() < 3 or np.ptp(lt[tail]) <= 0:
        return False
    return bool(np.polyfit(lt[tail], ld[tail], 1)[0] > 0.5)
