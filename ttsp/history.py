"""Responses to strain and stress histories under a temperature history (reduced time).

Reduced time. For a thermorheologically simple material at a varying temperature T(t), the
material clock runs at the rate 1/a_T (Morland & Lee, Trans. Soc. Rheol. 4:233, 1960;
Schapery, Polym. Eng. Sci. 9:295, 1969; Ferry 1980, ch. 11):

.. math:: \\xi(t) = \\int_{t_0}^{t} \\frac{dt'}{a_T(T(t'))}.

Boltzmann superposition in reduced time. With the relaxation series
:math:`E(\\xi) = E_\\infty + \\sum_i E_i e^{-\\xi/\\tau_i}` and the strain starting from zero
before the first sample,

.. math::
   \\sigma(\\xi) = \\int_{0^-}^{\\xi} E(\\xi - \\xi')\\, d\\varepsilon(\\xi')
   = E_\\infty \\varepsilon(\\xi) + \\sum_i h_i(\\xi), \\qquad
   h_i(\\xi) = \\int_{0^-}^{\\xi} E_i e^{-(\\xi-\\xi')/\\tau_i}\\, d\\varepsilon(\\xi').

Each internal variable obeys a one-step recursion. If ε is linear in ξ over a step
Δξ = ξ_{n+1} − ξ_n (strain increment Δε), integrating the exponential exactly over the step gives

.. math::
   h_i^{n+1} = e^{-\\Delta\\xi/\\tau_i} h_i^{n}
   + E_i \\frac{\\tau_i}{\\Delta\\xi}\\left(1 - e^{-\\Delta\\xi/\\tau_i}\\right)\\Delta\\varepsilon,

with the limit E_i Δε for Δξ → 0 (a jump). This is the classical recursive algorithm of
Taylor, Pister & Goudreau (Int. J. Numer. Meth. Eng. 2:45, 1970) in the form of Simo & Hughes
(*Computational Inelasticity*, Springer 1998, §10.3). It is exact for strain histories that are
piecewise linear in reduced time, and so exact for piecewise-linear strain in time under
isothermal conditions; otherwise its error is second order in the step. A history of n samples
costs O(n·N) for N terms. The strain under a stress history uses the same recursion with the
creep series :math:`D(\\xi) = D_g + \\sum_j D_j (1 - e^{-\\xi/\\lambda_j}) + \\varphi\\xi`:

.. math::
   \\varepsilon(\\xi) = (D_g + \\textstyle\\sum_j D_j)\\, \\sigma(\\xi)
   - \\sum_j \\int_{0^-}^{\\xi} D_j e^{-(\\xi-\\xi')/\\lambda_j}\\, d\\sigma(\\xi')
   + \\varphi \\int_0^{\\xi} \\sigma(\\xi')\\, d\\xi'.

Vertical shift. When the master curve is of the reduced modulus E/b_T (Ferry 1980, ch. 11: the
reduced stress is σ/b_T), the stress under a strain history is σ(t) = b_T(T(t)) σ_r(ξ(t)) with
σ_r the integral above, and the strain under a stress history is the creep integral of the
reduced stress σ(t)/b_T(T(t)). Pass the build's ``vertical_factor`` (b_T as a function of T) to
apply it; without it b_T = 1.

Implementation: the linear recursion is evaluated in blocks of about √n steps. Within all
blocks at once (vectorised across blocks) the recursion runs from a zero state; the states at
the block boundaries are then chained, and each block's start state is propagated with the
cumulative decay factor. The result is the same recursion, evaluated without a Python loop over
every step.

Computation module: imports numpy only (pandas lazily inside ``to_frame``).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ._arrays import LOG_RANGE_RTOL, as_1d_finite
from ._validation import bad_value, check_choice
from .exceptions import DataError, ExtrapolationWarning
from .interconvert import CreepSeries, creep_to_relaxation, relaxation_to_creep
from .prony import PronySeries

__all__ = [
    "HistoryResponse",
    "reduced_time",
    "stress_under_strain",
    "strain_under_stress",
]


# ----------------------------------------------------------------------------------------
# validation helpers
# ----------------------------------------------------------------------------------------
def _time(time_s: Any) -> np.ndarray:
    t = as_1d_finite("time_s", time_s, allow_empty=False)
    back = np.diff(t) < 0
    if back.any():
        i = int(np.flatnonzero(back)[0]) + 1
        raise bad_value(f"time_s[{i}]", f"at least time_s[{i - 1}] = {float(t[i - 1])!r} "
                        "(times must not decrease)", float(t[i]))
    return t


def _same_length(name: str, values: Any, n: int) -> np.ndarray:
    a = as_1d_finite(name, values, allow_empty=False)
    if a.size != n:
        raise bad_value(name, f"as long as time_s ({n} values)", f"{a.size} values")
    return a


def _temperatures(temperature_K: Any, n: int) -> np.ndarray:
    if np.ndim(temperature_K) == 0:
        temp = np.full(n, as_1d_finite("temperature_K", temperature_K, allow_empty=False)[0])
    else:
        temp = _same_length("temperature_K", temperature_K, n)
    if (temp <= 0).any():
        i = int(np.flatnonzero(temp <= 0)[0])
        raise bad_value(f"temperature_K[{i}]", "positive (kelvin)", float(temp[i]))
    return temp


def _rate(log10_aT: Callable, temperature_K: np.ndarray) -> np.ndarray:
    """1/a_T at the given temperatures, checked."""
    if not callable(log10_aT):
        raise bad_value("log10_aT", "a callable T_K -> log10 a_T", type(log10_aT).__name__)
    try:
        la = np.asarray(log10_aT(temperature_K), dtype=float)
    except DataError:
        raise   # the law's own message (a temperature at or below its divergence, say)
    except (TypeError, ValueError):
        raise bad_value("log10_aT(temperature_K)", "an array of numbers",
                        "something else") from None
    if la.shape != temperature_K.shape:
        if la.size == 1:
            la = np.full(temperature_K.shape, float(la.reshape(())))
        else:
            raise bad_value("log10_aT(temperature_K)",
                            f"of the same shape as its argument {temperature_K.shape}",
                            f"shape {la.shape}")
    with np.errstate(over="ignore"):
        rate = 10.0 ** (-la)
    bad = ~np.isfinite(rate) | ~(rate > 0)
    if bad.any():
        i = int(np.flatnonzero(bad.ravel())[0])
        raise bad_value(f"log10_aT at {float(temperature_K.ravel()[i])!r} K",
                        "a finite number with a finite 1/a_T", float(la.ravel()[i]))
    return rate


def _substeps(substeps: Any) -> int:
    if isinstance(substeps, bool) or not isinstance(substeps, (int, np.integer)) or substeps < 1:
        raise bad_value("substeps", "an integer >= 1", substeps)
    return int(substeps)


# ----------------------------------------------------------------------------------------
# reduced time
# ----------------------------------------------------------------------------------------
def reduced_time(time_s: ArrayLike, temperature_K: ArrayLike, log10_aT: Callable, *,
                 substeps: int = 1) -> np.ndarray:
    """Reduced time ξ(t) = ∫_{t_0}^{t} dt'/a_T(T(t')) of a temperature history (s).

    The temperature is taken as piecewise linear in time between the samples. Each interval
    is cut into ``substeps`` equal parts and 1/a_T(T) is integrated by the trapezoidal rule on
    them; the error is O((Δt/substeps)²) and vanishes for a constant temperature. Since 1/a_T
    depends strongly (exponentially, for Arrhenius) on T, use ``substeps > 1`` when T changes by
    more than about a kelvin between samples. Morland & Lee, Trans. Soc. Rheol. 4:233, 1960;
    Schapery, Polym. Eng. Sci. 9:295, 1969.

    Parameters
    ----------
    time_s : array_like
        Times (s), non-decreasing; ξ is counted from ``time_s[0]``.
    temperature_K : float or array_like
        Temperature (K) at each time, or one constant temperature.
    log10_aT : callable
        Shift law: takes an array of temperatures (K), returns log10 a_T (a_T > 1 below the
        reference temperature), e.g. the ``log10_aT`` method of a fitted law. It must refer to
        the reference temperature of the series the reduced time is used with.
    substeps : int
        Number of trapezoid sub-intervals per sample interval, ≥ 1.

    Returns
    -------
    numpy.ndarray
        Reduced time ξ (s) at each sample; ξ[0] = 0.

    Raises
    ------
    DataError
        On non-finite, decreasing or mismatched inputs, a non-callable ``log10_aT``, a law
        that returns non-finite values, or ``substeps < 1``.
    """
    t = _time(time_s)
    temp = _temperatures(temperature_K, t.size)
    m = _substeps(substeps)
    if t.size == 1:
        _rate(log10_aT, temp)   # validate the law all the same
        return np.zeros(1)
    frac = np.linspace(0.0, 1.0, m + 1)
    t_sub = temp[:-1, None] + (temp[1:] - temp[:-1])[:, None] * frac
    r = _rate(log10_aT, t_sub)
    mean_rate = (0.5 * (r[:, 0] + r[:, -1]) + r[:, 1:-1].sum(axis=1)) / m
    xi = np.concatenate([[0.0], np.cumsum(np.diff(t) * mean_rate)])
    return xi


def _vertical(vertical_factor: Callable | None, temp: np.ndarray,
              temperature_K) -> np.ndarray | None:
    """b_T at each sample (None without a vertical shift or at the reference temperature)."""
    if vertical_factor is None:
        return None
    if temperature_K is None:
        raise bad_value("temperature_K", "given when vertical_factor is given", None)
    b = np.broadcast_to(np.asarray(vertical_factor(temp), dtype=float), temp.shape)
    bad = ~(np.isfinite(b) & (b > 0))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise bad_value(f"vertical_factor at {float(temp[i])!r} K", "positive and finite",
                        float(b[i]))
    return b


def _reduced(t: np.ndarray, temperature_K, log10_aT, series,
             substeps: int) -> tuple[np.ndarray, np.ndarray]:
    """Reduced time and the temperature column for a history call."""
    substeps = _substeps(substeps)
    if temperature_K is None and log10_aT is None:
        t_ref = series.reference_temperature_K
        temp = np.full(t.size, np.nan if t_ref is None else float(t_ref))
        return t - t[0], temp
    if temperature_K is None:
        raise bad_value("temperature_K", "given when log10_aT is given", None)
    if log10_aT is None:
        raise bad_value("log10_aT", "given when temperature_K is given", None)
    temp = _temperatures(temperature_K, t.size)
    return reduced_time(t, temp, log10_aT, substeps=substeps), temp


# ----------------------------------------------------------------------------------------
# the recursion
# ----------------------------------------------------------------------------------------
def _linear_recurrence(a: np.ndarray, b: np.ndarray, h0: float) -> np.ndarray:
    """h_0 given; h_n = a_n h_{n−1} + b_n for n = 1..L (a, b of length L). Returns h_1..h_L.

    A constant ``a`` (equal reduced-time steps) goes to ``scipy.signal.lfilter``. Otherwise
    blocks of K ≈ √L steps: the recursion from a zero state runs in all blocks at once, then the
    block start states are chained and propagated with the cumulative products of a.
    """
    n = a.size
    if n == 0:
        return np.empty(0)
    if n > 1 and np.all(a == a[0]):
        from scipy.signal import lfilter

        return lfilter([1.0], [1.0, -a[0]], b, zi=[a[0] * h0])[0]
    k = max(1, int(math.isqrt(n)))
    nb = -(-n // k)
    pad = nb * k - n
    if pad:
        a = np.concatenate([a, np.ones(pad)])
        b = np.concatenate([b, np.zeros(pad)])
    a2 = a.reshape(nb, k).T.copy()   # (k, nb): row j = step j of every block
    b2 = b.reshape(nb, k).T.copy()
    local = np.empty_like(b2)
    local[0] = b2[0]
    for j in range(1, k):
        np.multiply(a2[j], local[j - 1], out=local[j])
        local[j] += b2[j]
    decay = np.cumprod(a2, axis=0)   # Π a over the block up to step j
    start = np.empty(nb)
    h = float(h0)
    last_local, last_decay = local[-1].tolist(), decay[-1].tolist()
    for blk in range(nb):
        start[blk] = h
        h = last_local[blk] + last_decay[blk] * h
    local += decay * start[None, :]
    return local.T.reshape(-1)[:n]


def _exponential_memory(xi: np.ndarray, u: np.ndarray, times: np.ndarray,
                        weights: np.ndarray, *, rising: bool = False) -> np.ndarray:
    """Prony memory integrals at the samples, for u piecewise linear in ξ.

    With ``rising=False``: Σ_i ∫_{0^-}^{ξ} w_i exp(−(ξ − ξ')/θ_i) du(ξ'), by the exact update
    h⁺ = a h + w c Δu, a = e^{−x}, c = (1 − e^{−x})/x, x = Δξ/θ (Taylor, Pister & Goudreau 1970);
    u jumps from 0 to u[0] at ξ[0], so h = w u[0] there.

    With ``rising=True``: Σ_i ∫_{0^-}^{ξ} w_i (1 − exp(−(ξ − ξ')/θ_i)) du(ξ'), i.e. w u − h, by
    its own update q⁺ = a q + w[(1 − a) u + (1 − c) Δu], q = 0 at ξ[0]. Same recursion, but no
    subtraction of nearly equal numbers when w u ≫ the result (creep at short times); the
    small increment (1 − c)Δu carries only an absolute rounding error of order eps·w·|Δu|.
    """
    dxi = np.diff(xi)
    du = np.diff(u)
    total = np.zeros(u.size)
    for theta, w in zip(times, weights, strict=True):
        if w == 0:
            continue
        x = dxi / theta
        em = np.expm1(-x)        # e^{−x} − 1
        a = 1.0 + em
        if rising:
            # 1 − c = (x + expm1(−x))/x: its rounding error is absolute, ~eps·|Δu| per step
            one_minus_c = np.divide(x + em, x, out=np.zeros_like(x), where=x > 0)
            b = w * (-em * u[:-1] + one_minus_c * du)
            h0 = 0.0
        else:
            c = np.divide(-em, x, out=np.ones_like(x), where=x > 0)
            b = w * c * du
            h0 = w * u[0]
        total[0] += h0
        total[1:] += _linear_recurrence(a, b, h0)
    return total


# ----------------------------------------------------------------------------------------
# the result
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class HistoryResponse:
    """Strain and stress along a loading history, with the temperature and reduced time.

    Attributes
    ----------
    time_s : numpy.ndarray
        Times (s) as given.
    reduced_time_s : numpy.ndarray
        Reduced time ξ (s) at the reference temperature, counted from the first sample.
    temperature_K : numpy.ndarray
        Temperature (K) at each sample; the reference temperature (or NaN when unknown) for an
        isothermal call without a temperature history.
    strain : numpy.ndarray
        Strain (dimensionless): given (strain control) or computed (stress control).
    stress_Pa : numpy.ndarray
        Stress (Pa): computed (strain control) or given (stress control).
    control : {"strain", "stress"}
        Which of the two was prescribed.
    modulus_kind : {"tensile", "shear"}
        Deformation mode of the material series (for shear: shear strain and shear stress).
    provenance : dict
        Method and settings (JSON-ready).
    """

    time_s: np.ndarray
    reduced_time_s: np.ndarray
    temperature_K: np.ndarray
    strain: np.ndarray
    stress_Pa: np.ndarray
    control: str
    modulus_kind: str = "tensile"
    provenance: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        check_choice("control", self.control, ("strain", "stress"))
        n = None
        for name in ("time_s", "reduced_time_s", "temperature_K", "strain", "stress_Pa"):
            a = np.array(getattr(self, name), dtype=float, copy=True)
            if a.ndim != 1 or (n is not None and a.size != n):
                raise bad_value(name, f"one-dimensional with {n} values", f"shape {a.shape}")
            n = a.size
            a.setflags(write=False)
            object.__setattr__(self, name, a)

    @property
    def n_samples(self) -> int:
        """Number of samples of the history."""
        return int(self.time_s.size)

    def to_frame(self):
        """Tidy table: ``time_s``, ``reduced_time_s``, ``temperature_K``, ``strain``,
        ``stress_Pa``, one row per sample."""
        import pandas as pd

        return pd.DataFrame({"time_s": self.time_s, "reduced_time_s": self.reduced_time_s,
                             "temperature_K": self.temperature_K, "strain": self.strain,
                             "stress_Pa": self.stress_Pa})

    def to_dict(self) -> dict:
        """JSON-ready dict of plain lists (NaN temperatures become None)."""
        temp = [None if not math.isfinite(v) else v for v in self.temperature_K.tolist()]
        return {"control": self.control, "modulus_kind": self.modulus_kind,
                "time_s": self.time_s.tolist(), "reduced_time_s": self.reduced_time_s.tolist(),
                "temperature_K": temp, "strain": self.strain.tolist(),
                "stress_Pa": self.stress_Pa.tolist(), "provenance": dict(self.provenance)}

    def _repr_html_(self) -> str:
        n = self.n_samples
        idx = list(range(n)) if n <= 8 else [0, 1, 2, 3, n - 4, n - 3, n - 2, n - 1]
        rows = []
        for k, i in enumerate(idx):
            if n > 8 and k == 4:
                rows.append("<tr><td colspan='6'>&hellip;</td></tr>")
            rows.append(f"<tr><td>{i}</td><td>{self.time_s[i]:.6g}</td>"
                        f"<td>{self.reduced_time_s[i]:.6g}</td>"
                        f"<td>{self.temperature_K[i]:.6g}</td><td>{self.strain[i]:.6g}</td>"
                        f"<td>{self.stress_Pa[i]:.6g}</td></tr>")
        return (f"<div><b>History response</b> ({self.control} control, {self.modulus_kind}, "
                f"{n} samples)<table><thead><tr><th>#</th><th>t (s)</th><th>&xi; (s)</th>"
                "<th>T (K)</th><th>strain</th><th>stress (Pa)</th></tr></thead><tbody>"
                + "".join(rows) + "</tbody></table></div>")


def _warn_span(series, xi: np.ndarray) -> None:
    rng = series.valid_reduced_time_range_s
    span = float(xi[-1] - xi[0])
    if rng is not None and span > rng[1] * (1 + LOG_RANGE_RTOL):
        warnings.warn(f"the history spans {span:.4g} s of reduced time, beyond the valid reduced "
                      f"time range of the series (up to {rng[1]:.4g} s): the response at late "
                      "times is extrapolated", ExtrapolationWarning, stacklevel=3)


def stress_under_strain(series: PronySeries | CreepSeries, time_s: ArrayLike, strain: ArrayLike,
                        temperature_K: ArrayLike | None = None, log10_aT: Callable | None = None, *,
                        substeps: int = 1,
                        vertical_factor: Callable | None = None) -> HistoryResponse:
    """Stress under a strain history, optionally at a varying temperature.

    σ(ξ) = E_∞ ε(ξ) + Σ_i h_i(ξ) by Boltzmann superposition in reduced time with the exact
    recursive Prony update (module docstring; Taylor, Pister & Goudreau 1970; Simo & Hughes
    1998, §10.3). The strain is zero before ``time_s[0]`` (so ``strain[0] ≠ 0`` is a step at the
    start) and linear in reduced time between samples; two equal consecutive times describe a
    jump.

    Parameters
    ----------
    series : PronySeries or CreepSeries
        The material (a creep series is converted exactly by :func:`creep_to_relaxation`).
    time_s : array_like
        Times (s), non-decreasing.
    strain : array_like
        Strain at each time (dimensionless).
    temperature_K : float or array_like, optional
        Temperature history (K). Without it (and without ``log10_aT``) the history runs at the
        reference temperature of the series.
    log10_aT : callable, optional
        Shift law T_K -> log10 a_T, referred to the series' reference temperature; required
        with ``temperature_K``.
    substeps : int
        Trapezoid sub-intervals per sample interval for the reduced time (see
        :func:`reduced_time`), ≥ 1; raise it when T changes by more than ~1 K between samples.
    vertical_factor : callable, optional
        T_K -> b_T, the vertical shift of the master curve (e.g.
        ``ViscoelasticModel.vertical_factor``); the stress is b_T(T(t)) times the reduced stress.
        Needs ``temperature_K``.

    Returns
    -------
    HistoryResponse
        With ``control == "strain"``.

    Raises
    ------
    DataError
        On a wrong series type, malformed arrays, or only one of temperature_K / log10_aT.

    Warns
    -----
    ExtrapolationWarning
        If the reduced-time span of the history exceeds the series' valid reduced-time range.
    """
    if isinstance(series, CreepSeries):
        series = creep_to_relaxation(series)
    if not isinstance(series, PronySeries):
        raise bad_value("series", "a PronySeries or a CreepSeries", type(series).__name__)
    t = _time(time_s)
    eps = _same_length("strain", strain, t.size)
    xi, temp = _reduced(t, temperature_K, log10_aT, series, substeps)
    _warn_span(series, xi)
    b = _vertical(vertical_factor, temp, temperature_K)
    sigma = series.equilibrium_modulus_Pa * eps + _exponential_memory(
        xi, eps, np.asarray(series.tau_s), np.asarray(series.modulus_Pa))
    if b is not None:
        sigma = b * sigma
    return HistoryResponse(t, xi, temp, eps, sigma, "strain", series.modulus_kind,
                           {"method": "Boltzmann superposition in reduced time, recursive "
                                      "Prony update (strain piecewise linear in reduced time)",
                            "isothermal": temperature_K is None, "substeps": int(substeps),
                            "vertical_shift": b is not None})


def strain_under_stress(series: PronySeries | CreepSeries, time_s: ArrayLike, stress_Pa: ArrayLike,
                        temperature_K: ArrayLike | None = None, log10_aT: Callable | None = None, *,
                        substeps: int = 1,
                        vertical_factor: Callable | None = None) -> HistoryResponse:
    """Strain under a stress history, optionally at a varying temperature.

    ε(ξ) = (D_g + Σ D_j) σ(ξ) − Σ_j ∫ D_j e^{−(ξ−ξ')/λ_j} dσ(ξ') + φ ∫_0^ξ σ dξ', the Boltzmann
    superposition integral of the creep series in reduced time, with the same exact recursive
    update as :func:`stress_under_strain` (Taylor, Pister & Goudreau 1970) and the flow
    integral by the trapezoidal rule (exact for σ linear in ξ between samples). The stress is
    zero before ``time_s[0]``.

    Parameters
    ----------
    series : CreepSeries or PronySeries
        The material (a relaxation series is converted exactly by :func:`relaxation_to_creep`).
    time_s : array_like
        Times (s), non-decreasing.
    stress_Pa : array_like
        Stress at each time (Pa).
    temperature_K : float or array_like, optional
        Temperature history (K); see :func:`stress_under_strain`.
    log10_aT : callable, optional
        Shift law T_K -> log10 a_T; required with ``temperature_K``.
    substeps : int
        As for :func:`stress_under_strain`.
    vertical_factor : callable, optional
        T_K -> b_T; the creep integral is taken of the reduced stress σ/b_T(T(t)). Needs
        ``temperature_K``.

    Returns
    -------
    HistoryResponse
        With ``control == "stress"``.

    Raises
    ------
    DataError
        On a wrong series type, malformed arrays, or only one of temperature_K / log10_aT.

    Warns
    -----
    ExtrapolationWarning
        If the reduced-time span of the history exceeds the series' valid reduced-time range.
    """
    if isinstance(series, PronySeries):
        series = relaxation_to_creep(series)
    if not isinstance(series, CreepSeries):
        raise bad_value("series", "a CreepSeries or a PronySeries", type(series).__name__)
    t = _time(time_s)
    sig = _same_length("stress_Pa", stress_Pa, t.size)
    xi, temp = _reduced(t, temperature_K, log10_aT, series, substeps)
    _warn_span(series, xi)
    b = _vertical(vertical_factor, temp, temperature_K)
    reduced = sig if b is None else sig / b
    lam = np.asarray(series.retardation_times_s)
    dj = np.asarray(series.compliance_1_per_Pa)
    eps = series.glassy_compliance_1_per_Pa * reduced + _exponential_memory(
        xi, reduced, lam, dj, rising=True)
    if series.is_fluid:
        flow = np.concatenate([[0.0], np.cumsum(0.5 * (reduced[1:] + reduced[:-1])
                                                * np.diff(xi))])
        eps = eps + series.fluidity_1_per_Pa_s * flow
    return HistoryResponse(t, xi, temp, eps, sig, "stress", series.modulus_kind,
                           {"method": "Boltzmann superposition in reduced time, recursive "
                                      "Prony update (stress piecewise linear in reduced time)",
                            "isothermal": temperature_K is None, "substeps": int(substeps),
                            "vertical_shift": b is not None})
