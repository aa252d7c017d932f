"""The retardation (creep) series, and the exact one of a relaxation series.

A retardation (generalized Kelvin-Voigt) series describes the creep compliance,

.. math:: D(t) = D_g + \\sum_{j} D_j \\left(1 - e^{-t/\\lambda_j}\\right) + \\varphi\\, t,

(Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley 1980, ch. 3; Tschoegl, *The
Phenomenological Theory of Linear Viscoelastic Behavior*, Springer 1989, ch. 3-4).
:func:`creep_series_of` gives the exact creep series of a relaxation (Prony) series; it sits
here, below :class:`ttsp.prony.PronySeries`, so that the series can offer its own creep
compliance without importing the conversion module above it
(:mod:`ttsp.prony.exact_conversion` holds the derivation and both public conversions).

Computation module: imports numpy only (pandas lazily inside ``to_frame``).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import KW_ONLY, dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike

from .._arrays import as_1d_finite as _as_1d_finite
from .._arrays import fmt_html as _fmt
from .._arrays import nonnegative_argument as _nonnegative_argument
from .._arrays import readonly as _readonly
from .._arrays import scalar_or_array as _shape_like
from .._arrays import to_plain as _plain
from .._validation import bad_value, check_choice, check_positive
from ._terms import terms_from_dict
from .secular import merge_terms, residue_weights, secular_roots

if TYPE_CHECKING:
    from .series import PronySeries

__all__ = ["CreepSeries", "creep_series_of"]

_KINDS = ("tensile", "shear")
_KELVIN_OFFSET = 273.15


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

    def replace(self, **changes) -> CreepSeries:
        """Return a copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    # ------------------------------------------------------------------ material functions
    def creep_compliance(self, t_s: ArrayLike):
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

    def complex_compliance(self, omega_rad_s: ArrayLike):
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

    def storage_compliance(self, omega_rad_s: ArrayLike):
        """Storage compliance D'(ω) = D_g + Σ D_j/(1 + ω²λ_j²) (1/Pa); ω in rad/s, ≥ 0."""
        return _shape_like(np.real(self.complex_compliance(omega_rad_s)), omega_rad_s)

    def loss_compliance(self, omega_rad_s: ArrayLike):
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
                      for t, d in zip(self.retardation_times_s, self.compliance_1_per_Pa,
                                      strict=True)],
            "modulus_kind": self.modulus_kind,
            "reference_temperature_K": self.reference_temperature_K,
            "valid_reduced_time_range_s": None if rng is None else [rng[0], rng[1]],
            "provenance": self.provenance,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> CreepSeries:
        """Build a series from :meth:`to_dict` output.

        Raises
        ------
        DataError
            If a required key is missing or a term is malformed.
        """
        lam, dj = terms_from_dict(data, "creep series data", "glassy_compliance_1_per_Pa",
                                 "retardation_time_s", "compliance_1_per_Pa")
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
                                                      self.compliance_1_per_Pa, strict=True),
                                                  start=1))
        return (f"<div>{head}<table><thead><tr><th>j</th><th>&lambda;<sub>j</sub> (s)</th>"
                f"<th>{sym}<sub>j</sub> (1/Pa)</th></tr></thead><tbody>{rows}</tbody>"
                "</table></div>")

    def __repr__(self) -> str:
        return (f"CreepSeries(glassy_compliance_1_per_Pa={self.glassy_compliance_1_per_Pa!r}, "
                f"n_terms={self.n_terms}, fluidity_1_per_Pa_s={self.fluidity_1_per_Pa_s!r}, "
                f"modulus_kind={self.modulus_kind!r})")


def creep_series_of(series: PronySeries) -> CreepSeries:
    """Exact creep (retardation) series of a Prony relaxation series.

    Solves F(λ) = E_∞ + Σ E_i τ_i/(τ_i − λ) = 0 for the retardation times λ_j (one root between
    each pair of consecutive τ_i and, for a solid, one above τ_N), then

    .. math::
       D_g = 1/E_0,\\quad D_j = \\Big[\\lambda_j \\sum_i \\frac{E_i\\tau_i}{(\\lambda_j-\\tau_i)^2}
       \\Big]^{-1},\\quad \\varphi = 1/\\eta_0 = 1/\\sum_i E_i\\tau_i \\text{ if } E_\\infty = 0.

    Ferry 1980, ch. 3; Tschoegl 1989, ch. 4; docs/methods.md §5.2 (derivation in
    :mod:`ttsp.prony.exact_conversion`). Terms with E_i = 0 carry no relaxation and are left
    out; terms with equal τ_i are merged (sum of E_i): the function E(t) is unchanged. The
    argument is not type-checked here: :func:`ttsp.interconvert.relaxation_to_creep` does that.

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
    FitError
        If the root finder fails (not expected for a valid series).
    """
    tau, e_i = merge_terms(np.asarray(series.tau_s, float), np.asarray(series.modulus_Pa, float))
    e_inf = float(series.equilibrium_modulus_Pa)
    e0 = e_inf + float(np.sum(e_i))
    w = e_i / e0
    c = e_inf / e0
    if e_inf > 0 and tau.size:
        eta_n = float(np.dot(w, tau))
        last = tau[-1] + 2.0 * eta_n / c
    else:
        last = None
    lam, d = secular_roots(tau, w, c, 0.0, True, first_lower_x=None, last_upper_x=last)
    dj = residue_weights(lam, d, tau, w, 0.0) / e0
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
