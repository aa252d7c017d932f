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

Numerics. Each root is bracketed between consecutive poles and written as an offset from the
pole it is nearer to, ``x = p_k (1 + r)`` or ``x = p_{k+1} (1 − r)`` with r ≤ 1/2, and found by
bisection in ``ln r``.
Every difference ``p_i − x`` is then formed from ``p_i − p_k`` (exact for neighbouring poles by
Sterbenz's lemma) and the offset, so roots that lie extremely close to a pole, as happens for a
weak term, keep full relative accuracy, and the residues do not suffer cancellation. Bisection
runs on all roots at once (vectorised), so a 100-term series spread over 20 decades converts
in a few milliseconds.

Computation module: imports numpy only (pandas lazily inside ``to_frame``).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import KW_ONLY, dataclass, field
from typing import Any, Mapping

import numpy as np

from ._arrays import as_1d_finite as _as_1d_finite
from ._arrays import fmt_html as _fmt
from ._arrays import readonly as _readonly
from ._arrays import scalar_or_array as _shape_like
from ._arrays import to_plain as _plain
from ._validation import bad_value, check_choice, check_positive
from .exceptions import FitError
from .prony import PronySeries

__all__ = [
    "CreepSeries",
    "relaxation_to_creep",
    "creep_to_relaxation",
    "shear_to_tensile",
    "tensile_to_shear",
]

_KINDS = ("tensile", "shear")
_KELVIN_OFFSET = 273.15
_EPS = np.finfo(float).eps
# smallest relative offset of a root from its pole tried by the bisection (ln of it ~ -690)
_R_MIN = 1e-300


# ----------------------------------------------------------------------------------------
# small private helpers (kept local so that this module depends only on PronySeries' API)
# ----------------------------------------------------------------------------------------
def _nonnegative_argument(name: str, values: Any) -> np.ndarray:
    try:
        a = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise bad_value(name, "an array of numbers", values) from None
    bad = ~np.isfinite(a) | (a < 0)
    if bad.any():
        i = np.flatnonzero(bad.ravel())[0]
        raise bad_value(name, "non-negative and finite", float(a.ravel()[i]))
    return a


def _laplace_argument(s: Any) -> np.ndarray:
    try:
        z = np.asarray(s, dtype=complex)
    except (TypeError, ValueError):
        raise bad_value("s", "an array of numbers", s) from None
    bad = ~np.isfinite(z) | ~(z.real > 0)
    if bad.any():
        i = np.flatnonzero(bad.ravel())[0]
        raise bad_value("s", "finite with positive real part", z.ravel()[i])
    return z


# ----------------------------------------------------------------------------------------
# the retardation (creep) series
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class CreepSeries:
    """Creep compliance as a retardation series (generalized Kelvin-Voigt model).

    .. math:: D(t) = D_g + \\sum_j D_j \\left(1 - e^{-t/\\lambda_j}\\right) + \\varphi\\, t,

    with glassy compliance D_g > 0, retardation strengths D_j ≥ 0, retardation times λ_j > 0 and
    fluidity φ = 1/η0 ≥ 0 (0 for a solid). Ferry 1980, ch. 3; Tschoegl 1989, ch. 3. The symbol D
    stands for the tensile creep compliance; with ``modulus_kind="shear"`` the series is the
    shear creep compliance J(t). Terms are stored sorted by λ, in read-only arrays.

    Parameters
    ----------
    glassy_compliance_1_per_Pa : float
        D_g = D(0) (1/Pa), > 0.
    retardation_times_s : array_like
        λ_j (s, reduced time at the reference temperature), each > 0.
    compliance_1_per_Pa : array_like
        D_j (1/Pa), each ≥ 0, as many as ``retardation_times_s``.
    fluidity_1_per_Pa_s : float
        φ = 1/η0 (1/(Pa·s)), ≥ 0; 0 for a solid.
    modulus_kind : {"tensile", "shear"}
        Deformation mode (tensile: D(t); shear: J(t)).
    reference_temperature_K : float, optional
        Reference temperature of the reduced time scale (K).
    valid_reduced_time_range_s : (float, float), optional
        Reduced-time window covered by the underlying data (s).
    provenance : dict, optional
        JSON-ready information on how the series was made.

    Raises
    ------
    DataError
        If a value breaks a rule above.
    """

    glassy_compliance_1_per_Pa: float
    retardation_times_s: np.ndarray
    compliance_1_per_Pa: np.ndarray
    fluidity_1_per_Pa_s: float = 0.0
    _: KW_ONLY
    modulus_kind: str = "tensile"
    reference_temperature_K: float | None = None
    valid_reduced_time_range_s: tuple[float, float] | None = None
    provenance: dict | None = field(default=None)

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        dg = check_positive("glassy_compliance_1_per_Pa", self.glassy_compliance_1_per_Pa)
        lam = _as_1d_finite("retardation_times_s", self.retardation_times_s)
        dj = _as_1d_finite("compliance_1_per_Pa", self.compliance_1_per_Pa)
        if lam.size != dj.size:
            raise bad_value("compliance_1_per_Pa",
                            f"as long as retardation_times_s ({lam.size} values)",
                            f"{dj.size} values")
        if (lam <= 0).any():
            i = int(np.flatnonzero(lam <= 0)[0])
            raise bad_value(f"retardation_times_s[{i}]", "positive", float(lam[i]))
        if (dj < 0).any():
            i = int(np.flatnonzero(dj < 0)[0])
            raise bad_value(f"compliance_1_per_Pa[{i}]", "non-negative", float(dj[i]))
        phi = check_positive("fluidity_1_per_Pa_s", self.fluidity_1_per_Pa_s, allow_zero=True)
        order = np.argsort(lam, kind="stable")
        set_(self, "glassy_compliance_1_per_Pa", dg)
        set_(self, "retardation_times_s", _readonly(lam[order]))
        set_(self, "compliance_1_per_Pa", _readonly(dj[order]))
        set_(self, "fluidity_1_per_Pa_s", phi)
        check_choice("modulus_kind", self.modulus_kind, _KINDS)
        if self.reference_temperature_K is not None:
            set_(self, "reference_temperature_K",
                 check_positive("reference_temperature_K", self.reference_temperature_K))
        if self.valid_reduced_time_range_s is not None:
            rng = self.valid_reduced_time_range_s
            try:
                lo, hi = (float(v) for v in rng)
            except (TypeError, ValueError):
                raise bad_value("valid_reduced_time_range_s", "a pair (lo, hi) of numbers",
                                rng) from None
            if not (0 < lo <= hi < math.inf):
                raise bad_value("valid_reduced_time_range_s", "a pair 0 < lo <= hi < inf", rng)
            set_(self, "valid_reduced_time_range_s", (lo, hi))
        if self.provenance is not None:
            if not isinstance(self.provenance, Mapping):
                raise bad_value("provenance", "a dict", self.provenance)
            set_(self, "provenance", _plain(dict(self.provenance)))

    # ------------------------------------------------------------------ properties
    @property
    def n_terms(self) -> int:
        """Number of retardation terms."""
        return int(self.retardation_times_s.size)

    @property
    def is_fluid(self) -> bool:
        """True when the series has a flow term (φ > 0)."""
        return self.fluidity_1_per_Pa_s > 0

    @property
    def steady_state_compliance_1_per_Pa(self) -> float:
        """D_g + Σ D_j (1/Pa): the recoverable part of D(t) at long times."""
        return float(self.glassy_compliance_1_per_Pa + np.sum(self.compliance_1_per_Pa))

    @property
    def equilibrium_compliance_1_per_Pa(self) -> float:
        """D_∞ = lim D(t) = D_g + Σ D_j = 1/E_∞ for a solid (1/Pa); ``inf`` for a liquid."""
        return math.inf if self.is_fluid else self.steady_state_compliance_1_per_Pa

    @property
    def zero_rate_viscosity_Pa_s(self) -> float:
        """η0 = 1/φ (Pa·s); ``inf`` for a solid."""
        return math.inf if not self.is_fluid else 1.0 / self.fluidity_1_per_Pa_s

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, CreepSeries):
            return NotImplemented
        return (self.glassy_compliance_1_per_Pa == other.glassy_compliance_1_per_Pa
                and np.array_equal(self.retardation_times_s, other.retardation_times_s)
                and np.array_equal(self.compliance_1_per_Pa, other.compliance_1_per_Pa)
                and self.fluidity_1_per_Pa_s == other.fluidity_1_per_Pa_s
                and self.modulus_kind == other.modulus_kind
                and self.reference_temperature_K == other.reference_temperature_K
                and self.valid_reduced_time_range_s == other.valid_reduced_time_range_s
                and self.provenance == other.provenance)

    __hash__ = None  # type: ignore[assignment]

    def replace(self, **changes) -> "CreepSeries":
        """Return a copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    # ------------------------------------------------------------------ material functions
    def creep_compliance(self, t_s):
        """Creep compliance D(t) = D_g + Σ D_j (1 − e^{−t/λ_j}) + φ t (1/Pa).

        Parameters
        ----------
        t_s : float or array_like
            Reduced times (s), ≥ 0.

        Returns
        -------
        float or numpy.ndarray
            D(t) (1/Pa), same shape as ``t_s``.
        """
        t = _nonnegative_argument("t_s", t_s)
        rise = -np.expm1(-t[..., None] / self.retardation_times_s)
        out = (self.glassy_compliance_1_per_Pa + rise @ self.compliance_1_per_Pa
               + self.fluidity_1_per_Pa_s * t)
        return _shape_like(out, t_s)

    def complex_compliance(self, omega_rad_s):
        """Complex compliance D*(ω) = D'(ω) − i D''(ω) (1/Pa, complex).

        D*(ω) = D_g + Σ D_j/(1 + iωλ_j) + φ/(iω), the Carson transform sD̄(s) at s = iω, so that
        E*(ω)·D*(ω) = 1 with E* = E' + iE'' (Ferry 1980, ch. 1; docs/methods.md §5.1).

        Parameters
        ----------
        omega_rad_s : float or array_like
            Angular (reduced) frequency (rad/s), ≥ 0; at ω = 0 a liquid has D'' = inf.
        """
        w = _nonnegative_argument("omega_rad_s", omega_rad_s)
        wl = w[..., None] * self.retardation_times_s
        den = 1.0 + wl * wl
        re = self.glassy_compliance_1_per_Pa + (1.0 / den) @ self.compliance_1_per_Pa
        im = (wl / den) @ self.compliance_1_per_Pa
        if self.is_fluid:
            with np.errstate(divide="ignore"):
                im = im + self.fluidity_1_per_Pa_s / w
        return _shape_like(re - 1j * im, omega_rad_s)

    def storage_compliance(self, omega_rad_s):
        """Storage compliance D'(ω) = D_g + Σ D_j/(1 + ω²λ_j²) (1/Pa); ω in rad/s, ≥ 0."""
        return _shape_like(np.real(self.complex_compliance(omega_rad_s)), omega_rad_s)

    def loss_compliance(self, omega_rad_s):
        """Loss compliance D''(ω) = Σ D_j ωλ_j/(1 + ω²λ_j²) + φ/ω (1/Pa); ω in rad/s, ≥ 0."""
        return _shape_like(-np.imag(self.complex_compliance(omega_rad_s)), omega_rad_s)

    def laplace_compliance(self, s):
        """Laplace transform D̄(s) = D_g/s + Σ D_j/(s(1 + sλ_j)) + φ/s² (1/(Pa)·s).

        Parameters
        ----------
        s : float, complex or array_like
            Laplace variable (1/s) with positive real part.
        """
        z = _laplace_argument(s)
        carson = (self.glassy_compliance_1_per_Pa
                  + (1.0 / (1.0 + z[..., None] * self.retardation_times_s))
                  @ self.compliance_1_per_Pa + self.fluidity_1_per_Pa_s / z)
        out = carson / z
        if not np.iscomplexobj(np.asarray(s)):
            out = out.real
        return _shape_like(out, s)

    # ------------------------------------------------------------------ export / import
    def to_dict(self) -> dict:
        """JSON-ready dict (plain floats and lists); :meth:`from_dict` inverts it exactly.

        Keys: ``glassy_compliance_1_per_Pa``, ``fluidity_1_per_Pa_s``, ``terms``
        ([{``retardation_time_s``, ``compliance_1_per_Pa``}]), ``steady_state_compliance_1_per_Pa``,
        ``modulus_kind``, ``reference_temperature_K``, ``valid_reduced_time_range_s``,
        ``provenance``.
        """
        rng = self.valid_reduced_time_range_s
        return {
            "glassy_compliance_1_per_Pa": float(self.glassy_compliance_1_per_Pa),
            "fluidity_1_per_Pa_s": float(self.fluidity_1_per_Pa_s),
            "steady_state_compliance_1_per_Pa": self.steady_state_compliance_1_per_Pa,
            "terms": [{"retardation_time_s": float(t), "compliance_1_per_Pa": float(d)}
                      for t, d in zip(self.retardation_times_s, self.compliance_1_per_Pa)],
            "modulus_kind": self.modulus_kind,
            "reference_temperature_K": self.reference_temperature_K,
            "valid_reduced_time_range_s": None if rng is None else [rng[0], rng[1]],
            "provenance": self.provenance,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "CreepSeries":
        """Build a series from :meth:`to_dict` output.

        Raises
        ------
        DataError
            If a required key is missing or a term is malformed.
        """
        if not isinstance(data, Mapping):
            raise bad_value("creep series data", "a dict", data)
        for key in ("glassy_compliance_1_per_Pa", "terms"):
            if key not in data:
                raise bad_value("creep series data", f"a dict with the key {key!r}",
                                sorted(data))
        terms = data["terms"]
        try:
            lam = [float(t["retardation_time_s"]) for t in terms]
            dj = [float(t["compliance_1_per_Pa"]) for t in terms]
        except (TypeError, KeyError, ValueError):
            raise bad_value("terms",
                            "a list of {'retardation_time_s': ..., 'compliance_1_per_Pa': ...}",
                            terms) from None
        rng = data.get("valid_reduced_time_range_s")
        return cls(data["glassy_compliance_1_per_Pa"], np.array(lam), np.array(dj),
                   data.get("fluidity_1_per_Pa_s", 0.0),
                   modulus_kind=data.get("modulus_kind", "tensile"),
                   reference_temperature_K=data.get("reference_temperature_K"),
                   valid_reduced_time_range_s=None if rng is None else tuple(rng),
                   provenance=data.get("provenance"))

    def to_frame(self):
        """Tidy table of the terms: ``retardation_time_s``, ``compliance_1_per_Pa``.

        The glassy compliance is the first row, with ``retardation_time_s = 0`` (a spring that
        responds at once). The flow term is not a row; it is ``fluidity_1_per_Pa_s``.
        """
        import pandas as pd

        lam = np.concatenate([[0.0], self.retardation_times_s])
        dj = np.concatenate([[self.glassy_compliance_1_per_Pa], self.compliance_1_per_Pa])
        return pd.DataFrame({"retardation_time_s": lam, "compliance_1_per_Pa": dj})

    def _repr_html_(self) -> str:
        sym = "D" if self.modulus_kind == "tensile" else "J"
        head = (f"<b>Creep (retardation) series</b> ({self.modulus_kind}, {self.n_terms} terms)"
                f"<br>{sym}<sub>g</sub> = {_fmt(self.glassy_compliance_1_per_Pa)} 1/Pa, "
                f"{sym}<sub>g</sub> + &Sigma;{sym}<sub>j</sub> = "
                f"{_fmt(self.steady_state_compliance_1_per_Pa)} 1/Pa")
        if self.is_fluid:
            head += f", &eta;<sub>0</sub> = {_fmt(self.zero_rate_viscosity_Pa_s)} Pa&middot;s"
        if self.reference_temperature_K is not None:
            head += (f", T<sub>ref</sub> = {self.reference_temperature_K - _KELVIN_OFFSET:.2f}"
                     " &deg;C")
        rows = "".join(f"<tr><td>{i}</td><td>{_fmt(t)}</td><td>{_fmt(d)}</td></tr>"
                       for i, (t, d) in enumerate(zip(self.retardation_times_s,
                                                      self.compliance_1_per_Pa), start=1))
        return (f"<div>{head}<table><thead><tr><th>j</th><th>&lambda;<sub>j</sub> (s)</th>"
                f"<th>{sym}<sub>j</sub> (1/Pa)</th></tr></thead><tbody>{rows}</tbody>"
                "</table></div>")

    def __repr__(self) -> str:
        return (f"CreepSeries(glassy_compliance_1_per_Pa={self.glassy_compliance_1_per_Pa!r}, "
                f"n_terms={self.n_terms}, fluidity_1_per_Pa_s={self.fluidity_1_per_Pa_s!r}, "
                f"modulus_kind={self.modulus_kind!r})")


# ----------------------------------------------------------------------------------------
# the root finder
# ----------------------------------------------------------------------------------------
def _merge_terms(times: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Drop zero-weight terms and merge equal times (sum of weights): same function."""
    keep = weights > 0
    times, weights = times[keep], weights[keep]
    order = np.argsort(times, kind="stable")
    times, weights = times[order], weights[order]
    if times.size > 1:
        uniq, start = np.unique(times, return_index=True)
        if uniq.size < times.size:
            weights = np.add.reduceat(weights, start)
            times = uniq
    return times, weights


def _secular_roots(poles: np.ndarray, weights: np.ndarray, const: float, slope: float,
                   numerator_is_pole: bool, *, first_lower_x: float | None,
                   last_upper_x: float | None) -> tuple[np.ndarray, np.ndarray]:
    """All roots of F(x) = const + slope·x + Σ w_i n_i(x)/(p_i − x) on x > 0.

    ``n_i = p_i`` if ``numerator_is_pole`` else ``n_i = x``. F must increase strictly on every
    interval between poles (w_i > 0, slope ≥ 0). One root is sought in each interval
    (p_k, p_{k+1}); in (0, p_1) if ``first_lower_x`` is given (a point there with F < 0); in
    (p_N, ∞) if ``last_upper_x`` is given (a point there with F > 0).

    Returns
    -------
    x : ndarray
        The roots, increasing.
    diff : ndarray, shape (n_roots, n_poles)
        p_i − x_j, formed from pole differences and the root's offset from its anchor pole, so
        they keep full relative accuracy even when a root nearly coincides with a pole.
    """
    p = poles
    n = p.size
    anchor, scale, ylo, yhi, orient = [], [], [], [], []

    def direct(x: np.ndarray) -> np.ndarray:
        d = p[None, :] - x[:, None]
        num = p[None, :] if numerator_is_pole else x[:, None]
        return const + slope * x + (weights * num / d).sum(axis=1)

    if first_lower_x is not None:
        half = 0.5 * p[0]
        if direct(np.array([half]))[0] >= 0:   # root in (0, p_1/2]: x = p_1·e^y
            anchor.append(0.0), scale.append(p[0]), orient.append(1.0)
            ylo.append(math.log(first_lower_x / p[0])), yhi.append(math.log(0.5))
        else:                                    # root in (p_1/2, p_1): x = p_1(1 − e^y)
            anchor.append(p[0]), scale.append(-p[0]), orient.append(-1.0)
            ylo.append(math.log(_R_MIN)), yhi.append(math.log(0.5))
    if n > 1:
        lo_p, hi_p = p[:-1], p[1:]
        # split point: the geometric mean, but never below p_k+1/2, so that a root written
        # from the upper pole, x = p_k+1 (1 − r), has r ≤ 1/2 and keeps its relative accuracy
        mid = np.maximum(np.sqrt(lo_p * hi_p), 0.5 * hi_p)
        lower = direct(mid) >= 0
        for k in range(n - 1):
            if lower[k]:                         # root in (p_k, m_k]: x = p_k(1 + e^y)
                anchor.append(lo_p[k]), scale.append(lo_p[k]), orient.append(1.0)
                yhi.append(math.log((mid[k] - lo_p[k]) / lo_p[k]))
            else:                                # root in (m_k, p_k+1): x = p_k+1(1 − e^y)
                anchor.append(hi_p[k]), scale.append(-hi_p[k]), orient.append(-1.0)
                yhi.append(math.log((hi_p[k] - mid[k]) / hi_p[k]))
            ylo.append(math.log(_R_MIN))
    if last_upper_x is not None:                 # root in (p_N, ∞): x = p_N(1 + e^y)
        anchor.append(p[-1]), scale.append(p[-1]), orient.append(1.0)
        ylo.append(math.log(_R_MIN)), yhi.append(math.log((last_upper_x - p[-1]) / p[-1]))

    A = np.array(anchor)
    S = np.array(scale)
    o = np.array(orient)
    lo = np.array(ylo)
    hi = np.array(yhi)
    if A.size == 0:
        return np.empty(0), np.empty((0, n))
    pa = p[None, :] - A[:, None]   # exact zero in the anchor column

    def evaluate(y: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        off = S * np.exp(y)
        x = A + off
        d = pa - off[:, None]
        num = p[None, :] if numerator_is_pole else x[:, None]
        return const + slope * x + (weights * num / d).sum(axis=1), x, d

    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        for _ in range(300):
            y = 0.5 * (lo + hi)
            f, _, _ = evaluate(y)
            up = o * f > 0
            hi = np.where(up, y, hi)
            lo = np.where(up, lo, y)
            if np.all(hi - lo <= 4 * _EPS * np.maximum(1.0, np.maximum(np.abs(lo),
                                                                         np.abs(hi)))):
                break
        f, x, d = evaluate(0.5 * (lo + hi))
    if not (np.all(np.isfinite(f)) and np.all(np.isfinite(x)) and np.all(x > 0)
            and np.all(np.diff(x) > 0)):
        raise FitError("exact interconversion failed: the roots of the Laplace-domain "
                       "function are not finite, positive and increasing; got "
                       f"{x.tolist()!r}")
    return x, d


def _residue_weights(x: np.ndarray, d: np.ndarray, poles: np.ndarray, weights: np.ndarray,
                     extra: float) -> np.ndarray:
    """1 / (Σ_i w_i (p_i/d_ji)(x_j/d_ji) + extra·x_j) for each root x_j (overflow -> 0)."""
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        s = (weights * (poles[None, :] / d) * (x[:, None] / d)).sum(axis=1) + extra * x
        out = 1.0 / s
    out[~np.isfinite(out)] = 0.0
    return out


# ----------------------------------------------------------------------------------------
# public conversions
# ----------------------------------------------------------------------------------------
def relaxation_to_creep(series: PronySeries) -> CreepSeries:
    """Exact creep (retardation) series of a Prony relaxation series.

    Solves F(λ) = E_∞ + Σ E_i τ_i/(τ_i − λ) = 0 for the retardation times λ_j (one root between
    each pair of consecutive τ_i and, for a solid, one above τ_N), then

    .. math::
       D_g = 1/E_0,\\quad D_j = \\Big[\\lambda_j \\sum_i \\frac{E_i\\tau_i}{(\\lambda_j-\\tau_i)^2}
       \\Big]^{-1},\\quad \\varphi = 1/\\eta_0 = 1/\\sum_i E_i\\tau_i \\text{ if } E_\\infty = 0.

    Ferry 1980, ch. 3; Tschoegl 1989, ch. 4; docs/methods.md §5.2 (derivation in the module
    docstring). Terms with E_i = 0 carry no relaxation and are left out; terms with equal τ_i
    are merged (sum of E_i): the function E(t) is unchanged.

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
    tau, e_i = _merge_terms(np.asarray(series.tau_s, float), np.asarray(series.modulus_Pa, float))
    e_inf = float(series.equilibrium_modulus_Pa)
    e0 = e_inf + float(np.sum(e_i))
    w = e_i / e0
    c = e_inf / e0
    if e_inf > 0 and tau.size:
        eta_n = float(np.dot(w, tau))
        last = tau[-1] + 2.0 * eta_n / c
    else:
        last = None
    lam, d = _secular_roots(tau, w, c, 0.0, True, first_lower_x=None, last_upper_x=last)
    dj = _residue_weights(lam, d, tau, w, 0.0) / e0
    fluidity = 0.0 if e_inf > 0 else 1.0 / float(np.dot(e_i, tau))
    prov = {"method": "exact Prony interconversion: retardation times from the roots of "
                      "s*E(s), compliances from the residues",
            "source": "relaxation series", "n_relaxation_terms": int(tau.size)}
    if series.provenance:
        prov["source_provenance"] = series.provenance
    return CreepSeries(1.0 / e0, lam, dj, fluidity, modulus_kind=series.modulus_kind,
                       reference_temperature_K=series.reference_temperature_K,
                       valid_reduced_time_range_s=series.valid_reduced_time_range_s,
                       provenance=prov)


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
    lam, dj = _merge_terms(np.asarray(creep.retardation_times_s, float),
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
        tau, d = _secular_roots(lam, w, c, b, False, first_lower_x=first, last_upper_x=last)
        # here d = λ_j − τ_i, and the residue sum is Σ w_j (λ_j/d)(τ_i/d) + b τ_i
        e_i = _residue_weights(tau, d, lam, w, b) / d_ss
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


def shear_to_tensile(series, poisson_ratio: float):
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


def tensile_to_shear(series, poisson_ratio: float):
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
