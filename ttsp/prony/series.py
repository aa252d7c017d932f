"""The Prony series (generalized Maxwell model): evaluation of its material functions.

The relaxation modulus is

.. math:: E(t) = E_\\infty + \\sum_{i=1}^{N} E_i \\exp(-t/\\tau_i), \\qquad E_i \\ge 0,\\ E_\\infty \\ge 0,

and everything else follows from it in closed form (Ferry, *Viscoelastic Properties of
Polymers*, 3rd ed., Wiley 1980, ch. 3-4; Tschoegl, *The Phenomenological Theory of Linear
Viscoelastic Behavior*, Springer 1989):

.. math::
   E'(\\omega) = E_\\infty + \\sum_i E_i \\frac{\\omega^2\\tau_i^2}{1+\\omega^2\\tau_i^2}, \\quad
   E''(\\omega) = \\sum_i E_i \\frac{\\omega\\tau_i}{1+\\omega^2\\tau_i^2}, \\quad
   \\bar E(s) = \\frac{E_\\infty}{s} + \\sum_i \\frac{E_i \\tau_i}{1 + s\\tau_i}.

The symbol E stands for the tensile modulus; the same code serves the shear modulus G
(``modulus_kind="shear"``). The creep compliance comes from the exact conversion of
:mod:`ttsp.prony.creep_series`; the fits that make a series are in
:mod:`ttsp.prony.fit_frequency` and :mod:`ttsp.prony.fit_time`.

This module imports numpy only (pandas lazily, inside ``to_frame``-like methods); it reads and
writes no files (:mod:`ttsp.io.prony_csv` does).
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Mapping
from dataclasses import KW_ONLY, dataclass, field
from pathlib import Path

import numpy as np
from numpy.typing import ArrayLike

from .._arrays import as_1d_finite as _as_1d_finite
from .._arrays import fmt_html as _fmt
from .._arrays import nonnegative_argument as _evaluation_argument
from .._arrays import readonly as _readonly
from .._arrays import scalar_or_array as _scalar_or_array
from .._arrays import to_plain as _plain
from .._validation import bad_value, check_choice, check_positive
from ..exceptions import FitQualityWarning
from ..units import ZERO_CELSIUS_K
from ._terms import terms_from_dict
from .creep_series import CreepSeries, creep_series_of

__all__ = ["PronySeries", "NormalisedPronySeries", "MODULUS_KINDS"]

_KELVIN_OFFSET = ZERO_CELSIUS_K
#: The moduli a series can describe (tensile E or shear G).
MODULUS_KINDS = ("tensile", "shear")


# ----------------------------------------------------------------------------------------
# the series
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class NormalisedPronySeries:
    """Normalised (dimensionless) Prony coefficients, as finite-element programs take them.

    g(t) = E(t)/E_0 = g_∞ + Σ g_i exp(−t/τ_i) = 1 − Σ g_i (1 − exp(−t/τ_i)), with
    g_i = E_i/E_0, g_∞ = E_∞/E_0 = 1 − Σ g_i and E_0 the instantaneous modulus.

    Attributes
    ----------
    instantaneous_modulus_Pa : float
        E_0 = E_∞ + Σ E_i (Pa).
    g_infinity : float
        Normalised long-term modulus g_∞ (dimensionless).
    g : numpy.ndarray
        Normalised coefficients g_i (dimensionless), in the order of ``tau_s``.
    tau_s : numpy.ndarray
        Relaxation times τ_i (s, reduced time at the reference temperature).
    """

    instantaneous_modulus_Pa: float
    g_infinity: float
    g: np.ndarray
    tau_s: np.ndarray

    @property
    def long_term_modulus_Pa(self) -> float:
        """E_∞ (Pa)."""
        return self.g_infinity * self.instantaneous_modulus_Pa

    def relaxation_function(self, t_s: ArrayLike):
        """g(t) = g_∞ + Σ g_i exp(−t/τ_i) (dimensionless) at times ``t_s`` (s)."""
        t = _evaluation_argument("t_s", t_s)
        out = self.g_infinity + np.exp(-t[..., None] / self.tau_s) @ self.g
        return _scalar_or_array(np.asarray(out), t_s)

    def to_dict(self) -> dict:
        """JSON-ready dict: instantaneous modulus, g_infinity, terms [{tau_s, g}]."""
        return {
            "instantaneous_modulus_Pa": float(self.instantaneous_modulus_Pa),
            "long_term_modulus_Pa": float(self.long_term_modulus_Pa),
            "g_infinity": float(self.g_infinity),
            "sum_g": float(np.sum(self.g)),
            "terms": [{"tau_s": float(t), "g": float(g)}
                      for t, g in zip(self.tau_s, self.g, strict=True)],
        }

    def to_frame(self):
        """Tidy table: one row per term with ``term``, ``tau_s`` and ``g``."""
        import pandas as pd

        return pd.DataFrame({"term": np.arange(1, self.g.size + 1), "tau_s": self.tau_s,
                             "g": self.g})


@dataclass(frozen=True, eq=False)
class PronySeries:
    """Prony series E(t) = E_∞ + Σ E_i exp(−t/τ_i) with E_i ≥ 0, E_∞ ≥ 0.

    Generalized Maxwell model: a spring E_∞ in parallel with N Maxwell arms (E_i, τ_i)
    (Ferry 1980, ch. 3; Tschoegl 1989, ch. 3). Terms are stored sorted by τ, in read-only
    arrays. ``E`` is read as ``G`` when ``modulus_kind == "shear"``.

    Parameters
    ----------
    equilibrium_modulus_Pa : float
        Long-term (equilibrium, rubbery) modulus E_∞ (Pa), >= 0; 0 for a liquid.
    tau_s : array_like
        Relaxation times τ_i (s, reduced time at the reference temperature), each > 0.
    modulus_Pa : array_like
        Prony coefficients E_i (Pa), each >= 0, same length as ``tau_s``.
    modulus_kind : {"tensile", "shear"}
        Which modulus the series describes.
    reference_temperature_K : float, optional
        Reference temperature of the reduced time scale (K).
    valid_reduced_time_range_s : (float, float), optional
        Reduced-time window covered by the data the series was fitted to (s); outside it the
        series is extrapolation.
    fit_rms_percent, fit_max_percent : float, optional
        Quality of the fit that produced the series (% relative deviation).
    provenance : dict, optional
        JSON-ready information on how the series was made (method, settings, version).

    Raises
    ------
    DataError
        If a value breaks a rule above, or if the instantaneous modulus is not positive.
    """

    equilibrium_modulus_Pa: float
    tau_s: np.ndarray
    modulus_Pa: np.ndarray
    _: KW_ONLY
    modulus_kind: str = "tensile"
    reference_temperature_K: float | None = None
    valid_reduced_time_range_s: tuple[float, float] | None = None
    fit_rms_percent: float | None = None
    fit_max_percent: float | None = None
    provenance: dict | None = field(default=None)

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        e_inf = check_positive("equilibrium_modulus_Pa", self.equilibrium_modulus_Pa,
                               allow_zero=True)
        tau = _as_1d_finite("tau_s", self.tau_s)
        mod = _as_1d_finite("modulus_Pa", self.modulus_Pa)
        if tau.size != mod.size:
            raise bad_value("modulus_Pa", f"as long as tau_s ({tau.size} values)",
                            f"{mod.size} values")
        if (tau <= 0).any():
            i = int(np.flatnonzero(tau <= 0)[0])
            raise bad_value(f"tau_s[{i}]", "positive", float(tau[i]))
        if (mod < 0).any():
            i = int(np.flatnonzero(mod < 0)[0])
            raise bad_value(f"modulus_Pa[{i}]", "non-negative", float(mod[i]))
        e0 = e_inf + float(np.sum(mod))
        if not e0 > 0 or not math.isfinite(e0):
            raise bad_value("instantaneous modulus (equilibrium_modulus_Pa + sum of modulus_Pa)",
                            "positive and finite", e0)
        order = np.argsort(tau, kind="stable")
        set_(self, "equilibrium_modulus_Pa", e_inf)
        set_(self, "tau_s", _readonly(tau[order]))
        set_(self, "modulus_Pa", _readonly(mod[order]))
        check_choice("modulus_kind", self.modulus_kind, MODULUS_KINDS)
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
        for name in ("fit_rms_percent", "fit_max_percent"):
            v = getattr(self, name)
            if v is not None:
                set_(self, name, check_positive(name, v, allow_zero=True))
        if self.provenance is not None:
            if not isinstance(self.provenance, Mapping):
                raise bad_value("provenance", "a dict", self.provenance)
            set_(self, "provenance", _plain(dict(self.provenance)))

    # ---------------------------------------------------------------- basic properties
    @property
    def n_terms(self) -> int:
        """Number of Maxwell terms N."""
        return int(self.tau_s.size)

    @property
    def instantaneous_modulus_Pa(self) -> float:
        """Glassy (instantaneous) modulus E_0 = E(0) = E_∞ + Σ E_i (Pa)."""
        return float(self.equilibrium_modulus_Pa + np.sum(self.modulus_Pa))

    @property
    def zero_shear_viscosity_Pa_s(self) -> float:
        """Σ E_i τ_i (Pa·s): the zero-rate viscosity for a liquid (E_∞ = 0).

        For tensile data this is the tensile (Trouton) viscosity.
        """
        return float(np.dot(self.modulus_Pa, self.tau_s))

    @property
    def reference_temperature_C(self) -> float | None:
        """Reference temperature in °C (for reports), or None."""
        if self.reference_temperature_K is None:
            return None
        return self.reference_temperature_K - _KELVIN_OFFSET

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, PronySeries):
            return NotImplemented
        return (self.equilibrium_modulus_Pa == other.equilibrium_modulus_Pa
                and np.array_equal(self.tau_s, other.tau_s)
                and np.array_equal(self.modulus_Pa, other.modulus_Pa)
                and self.modulus_kind == other.modulus_kind
                and self.reference_temperature_K == other.reference_temperature_K
                and self.valid_reduced_time_range_s == other.valid_reduced_time_range_s
                and self.fit_rms_percent == other.fit_rms_percent
                and self.fit_max_percent == other.fit_max_percent
                and self.provenance == other.provenance)

    __hash__ = None  # type: ignore[assignment]  # arrays inside: not hashable

    def replace(self, **changes) -> PronySeries:
        """Return a copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    # ---------------------------------------------------------------- material functions
    def relaxation_modulus(self, t_s: ArrayLike):
        """Relaxation modulus E(t) = E_∞ + Σ E_i exp(−t/τ_i) (Pa).

        Parameters
        ----------
        t_s : float or array_like
            Reduced times (s), >= 0.

        Returns
        -------
        float or numpy.ndarray
            E(t) (Pa), same shape as ``t_s``.
        """
        t = _evaluation_argument("t_s", t_s)
        out = self.equilibrium_modulus_Pa + np.exp(-t[..., None] / self.tau_s) @ self.modulus_Pa
        return _scalar_or_array(np.asarray(out), t_s)

    def _wt(self, omega_rad_s) -> tuple[np.ndarray, np.ndarray]:
        w = _evaluation_argument("omega_rad_s", omega_rad_s)
        return w, w[..., None] * self.tau_s

    def storage_modulus(self, omega_rad_s: ArrayLike):
        """Storage modulus E'(ω) = E_∞ + Σ E_i ω²τ_i²/(1 + ω²τ_i²) (Pa).

        Parameters
        ----------
        omega_rad_s : float or array_like
            Angular (reduced) frequency ω (rad/s), >= 0.
        """
        w, wt = self._wt(omega_rad_s)
        out = self.equilibrium_modulus_Pa + (wt * wt / (1.0 + wt * wt)) @ self.modulus_Pa
        return _scalar_or_array(np.asarray(out), omega_rad_s)

    def loss_modulus(self, omega_rad_s: ArrayLike):
        """Loss modulus E''(ω) = Σ E_i ωτ_i/(1 + ω²τ_i²) (Pa); ω in rad/s, >= 0."""
        w, wt = self._wt(omega_rad_s)
        out = (wt / (1.0 + wt * wt)) @ self.modulus_Pa
        return _scalar_or_array(np.asarray(out), omega_rad_s)

    def complex_modulus(self, omega_rad_s: ArrayLike):
        """Complex modulus E*(ω) = E_∞ + Σ E_i iωτ_i/(1 + iωτ_i) = E' + iE'' (Pa, complex)."""
        w, wt = self._wt(omega_rad_s)
        den = 1.0 + wt * wt
        re = self.equilibrium_modulus_Pa + (wt * wt / den) @ self.modulus_Pa
        im = (wt / den) @ self.modulus_Pa
        out = np.asarray(re + 1j * im)
        if np.ndim(omega_rad_s) == 0:
            return complex(out.reshape(()))
        return out

    def abs_complex_modulus(self, omega_rad_s: ArrayLike):
        """Dynamic modulus |E*(ω)| = sqrt(E'² + E''²) (Pa); ω in rad/s."""
        return _scalar_or_array(np.abs(np.asarray(self.complex_modulus(omega_rad_s))),
                                omega_rad_s)

    def tan_delta(self, omega_rad_s: ArrayLike):
        """Loss factor tan δ = E''/E' (dimensionless); ω in rad/s, > 0 if E_∞ = 0."""
        z = np.asarray(self.complex_modulus(omega_rad_s))
        with np.errstate(invalid="ignore", divide="ignore"):
            out = z.imag / z.real
        return _scalar_or_array(out, omega_rad_s)

    def laplace_modulus(self, s):
        """Laplace transform Ē(s) = E_∞/s + Σ E_i τ_i/(1 + sτ_i) (Pa·s).

        Parameters
        ----------
        s : float, complex or array_like
            Laplace variable (1/s) with positive real part.
        """
        try:
            z = np.asarray(s, dtype=complex)
        except (TypeError, ValueError):
            raise bad_value("s", "an array of numbers", s) from None
        bad = ~np.isfinite(z) | ~(z.real > 0)
        if bad.any():
            i = np.flatnonzero(bad.ravel())[0]
            raise bad_value("s", "finite with positive real part", z.ravel()[i])
        out = self.equilibrium_modulus_Pa / z + (
            1.0 / (1.0 + z[..., None] * self.tau_s)) @ (self.modulus_Pa * self.tau_s)
        if not np.iscomplexobj(np.asarray(s)):
            out = out.real
        if np.ndim(s) == 0:
            return out.reshape(()).item()
        return out

    # ---------------------------------------------------------------- creep
    def creep_series(self) -> CreepSeries:
        """The equivalent retardation (creep) series, by exact interconversion.

        :func:`ttsp.prony.creep_series.creep_series_of` (docs/methods.md §5.2); the same as
        :func:`ttsp.interconvert.relaxation_to_creep`.
        """
        return creep_series_of(self)

    def creep_compliance(self, t_s: ArrayLike):
        """Creep compliance D(t) (1/Pa) at reduced times ``t_s`` (s), via :meth:`creep_series`."""
        return self.creep_series().creep_compliance(t_s)

    # ---------------------------------------------------------------- normalised / FE
    def normalised(self) -> NormalisedPronySeries:
        """Normalised coefficients g_i = E_i/E_0 and g_∞ = E_∞/E_0 (dimensionless)."""
        e0 = self.instantaneous_modulus_Pa
        return NormalisedPronySeries(instantaneous_modulus_Pa=e0,
                                     g_infinity=self.equilibrium_modulus_Pa / e0,
                                     g=_readonly(self.modulus_Pa / e0), tau_s=self.tau_s)

    def finite_element_table(self):
        """A plain table for a finite-element material definition (pandas DataFrame).

        One row per term, columns ``term`` (1..N), ``g`` (g_i = E_i/E_0), ``tau_s`` (τ_i, s,
        reduced time at the reference temperature), and the two scalars repeated on every
        row: ``instantaneous_modulus_Pa`` (E_0) and ``long_term_modulus_Pa`` (E_∞), plus
        ``g_infinity``. The same g_i serve both usual conventions,
        g(t) = g_∞ + Σ g_i e^{−t/τ_i} = 1 − Σ g_i (1 − e^{−t/τ_i}). Terms with E_i = 0 are left
        out. The temperature dependence must be supplied separately (as the shift law).

        Warns
        -----
        FitQualityWarning
            If E_∞ = 0, so that Σ g_i = 1: many finite-element programs require Σ g_i < 1.
        """
        import pandas as pd

        norm = self.normalised()
        keep = self.modulus_Pa > 0
        if self.equilibrium_modulus_Pa == 0:
            warnings.warn("the long-term modulus is 0, so the normalised coefficients sum to 1;"
                          " many finite-element programs require a sum below 1",
                          FitQualityWarning, stacklevel=2)
        n = int(keep.sum())
        return pd.DataFrame({
            "term": np.arange(1, n + 1),
            "g": norm.g[keep],
            "tau_s": self.tau_s[keep],
            "instantaneous_modulus_Pa": np.full(n, norm.instantaneous_modulus_Pa),
            "long_term_modulus_Pa": np.full(n, self.equilibrium_modulus_Pa),
            "g_infinity": np.full(n, norm.g_infinity),
        })

    # ---------------------------------------------------------------- export / import
    def to_dict(self) -> dict:
        """JSON-ready dict (plain floats and lists); :meth:`from_dict` inverts it exactly.

        Keys: ``equilibrium_modulus_Pa``, ``instantaneous_modulus_Pa``, ``terms``
        ([{``tau_s``, ``modulus_Pa``}]), ``modulus_kind``, ``reference_temperature_K``,
        ``reference_temperature_C``, ``valid_reduced_time_range_s`` ([lo, hi] or None),
        ``fit_rms_percent``, ``fit_max_percent``, ``provenance``.
        """
        rng = self.valid_reduced_time_range_s
        return {
            "equilibrium_modulus_Pa": float(self.equilibrium_modulus_Pa),
            "instantaneous_modulus_Pa": self.instantaneous_modulus_Pa,
            "terms": [{"tau_s": float(t), "modulus_Pa": float(m)}
                      for t, m in zip(self.tau_s, self.modulus_Pa, strict=True)],
            "modulus_kind": self.modulus_kind,
            "reference_temperature_K": self.reference_temperature_K,
            "reference_temperature_C": self.reference_temperature_C,
            "valid_reduced_time_range_s": None if rng is None else [rng[0], rng[1]],
            "fit_rms_percent": self.fit_rms_percent,
            "fit_max_percent": self.fit_max_percent,
            "provenance": self.provenance,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> PronySeries:
        """Build a series from :meth:`to_dict` output (or the ``prony`` block of a summary).

        ``reference_temperature_K`` is used when present, else ``reference_temperature_C``.

        Raises
        ------
        DataError
            If a required key is missing or a term is malformed.
        """
        tau, mod = terms_from_dict(data, "Prony series data", "equilibrium_modulus_Pa",
                                 "tau_s", "modulus_Pa")
        t_ref = data.get("reference_temperature_K")
        if t_ref is None and data.get("reference_temperature_C") is not None:
            t_ref = float(data["reference_temperature_C"]) + _KELVIN_OFFSET
        rng = data.get("valid_reduced_time_range_s")
        return cls(data["equilibrium_modulus_Pa"], np.array(tau), np.array(mod),
                   modulus_kind=data.get("modulus_kind", "tensile"),
                   reference_temperature_K=t_ref,
                   valid_reduced_time_range_s=None if rng is None else tuple(rng),
                   fit_rms_percent=data.get("fit_rms_percent"),
                   fit_max_percent=data.get("fit_max_percent"),
                   provenance=data.get("provenance"))

    def to_frame(self):
        """Tidy table of the terms: ``tau_s``, ``modulus_Pa``, ``normalised_modulus``.

        The equilibrium modulus is the first row, with ``tau_s = inf`` (a Maxwell arm that
        never relaxes).
        """
        import pandas as pd

        e0 = self.instantaneous_modulus_Pa
        tau = np.concatenate([[np.inf], self.tau_s])
        mod = np.concatenate([[self.equilibrium_modulus_Pa], self.modulus_Pa])
        return pd.DataFrame({"tau_s": tau, "modulus_Pa": mod, "normalised_modulus": mod / e0})

    def to_csv(self, path: str | Path) -> None:
        """Write the series as CSV, exact on re-reading: :func:`ttsp.io.prony_csv.write_prony_csv`.

        A thin delegation kept because the tests call it; the file layout and the writing
        live in :mod:`ttsp.io.prony_csv` (layer 4), imported at call time: the edges import
        the series, and the series (layer 2) never loads an edge module when it is imported.
        """
        from ..io.prony_csv import write_prony_csv

        write_prony_csv(self, path)

    @classmethod
    def from_csv(cls, path: str | Path) -> PronySeries:
        """Read a series written by :meth:`to_csv`: :func:`ttsp.io.prony_csv.read_prony_csv`.

        Raises
        ------
        DataError
            If the file is not in that layout (the message names file and row).
        """
        from ..io.prony_csv import read_prony_csv

        return read_prony_csv(path)

    def _repr_html_(self) -> str:
        sym = "E" if self.modulus_kind == "tensile" else "G"
        rng = self.valid_reduced_time_range_s
        head = (f"<b>Prony series</b> ({self.modulus_kind}, {self.n_terms} terms)<br>"
                f"{sym}<sub>&infin;</sub> = {_fmt(self.equilibrium_modulus_Pa)} Pa, "
                f"{sym}<sub>0</sub> = {_fmt(self.instantaneous_modulus_Pa)} Pa")
        if self.reference_temperature_K is not None:
            head += f", T<sub>ref</sub> = {self.reference_temperature_C:.2f} &deg;C"
        if rng is not None:
            head += f"<br>valid reduced time: {_fmt(rng[0])} &ndash; {_fmt(rng[1])} s"
        if self.fit_rms_percent is not None:
            head += f"; fit rms {self.fit_rms_percent:.3g} %"
        rows = "".join(f"<tr><td>{i}</td><td>{_fmt(t)}</td><td>{_fmt(m)}</td>"
                       f"<td>{_fmt(m / self.instantaneous_modulus_Pa)}</td></tr>"
                       for i, (t, m) in enumerate(zip(self.tau_s, self.modulus_Pa, strict=True),
                                                  start=1))
        return (f"<div>{head}<table><thead><tr><th>i</th><th>&tau;<sub>i</sub> (s)</th>"
                f"<th>{sym}<sub>i</sub> (Pa)</th><th>g<sub>i</sub></th></tr></thead>"
                f"<tbody>{rows}</tbody></table></div>")

    def __repr__(self) -> str:
        return (f"PronySeries(equilibrium_modulus_Pa={self.equilibrium_modulus_Pa!r}, "
                f"n_terms={self.n_terms}, instantaneous_modulus_Pa="
                f"{self.instantaneous_modulus_Pa!r}, modulus_kind={self.modulus_kind!r})")


