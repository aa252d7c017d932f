"""Prony series (generalized Maxwell model): the series object and its non-negative fits.

The relaxation modulus is

.. math:: E(t) = E_\\infty + \\sum_{i=1}^{N} E_i \\exp(-t/\\tau_i), \\qquad E_i \\ge 0,\\ E_\\infty \\ge 0,

and everything else follows from it in closed form (Ferry, *Viscoelastic Properties of
Polymers*, 3rd ed., Wiley 1980, ch. 3-4; Tschoegl, *The Phenomenological Theory of Linear
Viscoelastic Behavior*, Springer 1989):

.. math::
   E'(\\omega) = E_\\infty + \\sum_i E_i \\frac{\\omega^2\\tau_i^2}{1+\\omega^2\\tau_i^2}, \\quad
   E''(\\omega) = \\sum_i E_i \\frac{\\omega\\tau_i}{1+\\omega^2\\tau_i^2}, \\quad
   \\bar E(s) = \\frac{E_\\infty}{s} + \\sum_i \\frac{E_i \\tau_i}{1 + s\\tau_i}.

Fitting uses fixed, log-spaced relaxation times and non-negative least squares (Lawson &
Hanson, *Solving Least Squares Problems*, Prentice-Hall 1974) with relative residuals, so that
every decade of modulus carries comparable weight. The symbol E stands for the tensile
modulus; the same code serves the shear modulus G (``modulus_kind="shear"``).

This module imports numpy and scipy only (pandas lazily, inside ``to_frame``-like methods).
"""

from __future__ import annotations

import csv
import dataclasses
import html
import json
import math
import warnings
from dataclasses import KW_ONLY, dataclass, field
from typing import Any, Mapping

import numpy as np

from ._arrays import as_1d_finite as _as_1d_finite
from ._arrays import fmt_html as _fmt
from ._arrays import nonnegative_argument as _evaluation_argument
from ._arrays import readonly as _readonly
from ._arrays import scalar_or_array as _scalar_or_array
from ._arrays import to_plain as _plain
from ._validation import bad_value, check_choice, check_positive
from .exceptions import DataError, FitError, FitQualityWarning
from .units import ZERO_CELSIUS_K

__all__ = [
    "PronySeries",
    "NormalisedPronySeries",
    "PronyFit",
    "fit_prony_frequency",
    "fit_prony_time",
    "log_spaced_relaxation_times",
]

_KELVIN_OFFSET = ZERO_CELSIUS_K
_MODULUS_KINDS = ("tensile", "shear")
_CSV_MAGIC = "# ttsp Prony series"


# ----------------------------------------------------------------------------------------
# small private helpers
# ----------------------------------------------------------------------------------------
def log_spaced_relaxation_times(lo_s: float, hi_s: float, *, terms_per_decade: float = 2.0,
                                margin_decades: float = 1.0) -> np.ndarray:
    """Relaxation times log-spaced over ``[lo_s, hi_s]`` widened by a margin at each end.

    The grid runs from ``lo_s / 10**margin_decades`` to ``hi_s * 10**margin_decades`` with a
    spacing of at most ``1/terms_per_decade`` decades (docs/methods.md §4.2; Park & Schapery,
    Int. J. Solids Struct. 36:1653, 1999, use the same construction).

    Parameters
    ----------
    lo_s, hi_s : float
        Shortest and longest reduced time covered by the data (s); ``0 < lo_s <= hi_s``.
    terms_per_decade : float
        Density of the grid (terms per decade of time), > 0.
    margin_decades : float
        Extension of the grid beyond the data at each end (decades), >= 0.

    Returns
    -------
    numpy.ndarray
        Increasing relaxation times (s), at least one.
    """
    lo = check_positive("lo_s", lo_s)
    hi = check_positive("hi_s", hi_s)
    if hi < lo:
        raise bad_value("hi_s", f"at least lo_s = {lo!r}", hi_s)
    density = check_positive("terms_per_decade", terms_per_decade)
    margin = check_positive("margin_decades", margin_decades, allow_zero=True)
    return _log_grid(math.log10(lo) - margin, math.log10(hi) + margin, density)


def _log_grid(a: float, b: float, density: float) -> np.ndarray:
    """10**x for x from a to b (b >= a) in equal steps of at most 1/density."""
    if b <= a:
        return np.array([10.0 ** a])
    n = max(1, int(math.ceil((b - a) * density - 1e-9))) + 1
    return np.logspace(a, b, n)


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

    def relaxation_function(self, t_s):
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
            "terms": [{"tau_s": float(t), "g": float(g)} for t, g in zip(self.tau_s, self.g)],
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
        check_choice("modulus_kind", self.modulus_kind, _MODULUS_KINDS)
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

    def replace(self, **changes) -> "PronySeries":
        """Return a copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    # ---------------------------------------------------------------- material functions
    def relaxation_modulus(self, t_s):
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

    def storage_modulus(self, omega_rad_s):
        """Storage modulus E'(ω) = E_∞ + Σ E_i ω²τ_i²/(1 + ω²τ_i²) (Pa).

        Parameters
        ----------
        omega_rad_s : float or array_like
            Angular (reduced) frequency ω (rad/s), >= 0.
        """
        w, wt = self._wt(omega_rad_s)
        out = self.equilibrium_modulus_Pa + (wt * wt / (1.0 + wt * wt)) @ self.modulus_Pa
        return _scalar_or_array(np.asarray(out), omega_rad_s)

    def loss_modulus(self, omega_rad_s):
        """Loss modulus E''(ω) = Σ E_i ωτ_i/(1 + ω²τ_i²) (Pa); ω in rad/s, >= 0."""
        w, wt = self._wt(omega_rad_s)
        out = (wt / (1.0 + wt * wt)) @ self.modulus_Pa
        return _scalar_or_array(np.asarray(out), omega_rad_s)

    def complex_modulus(self, omega_rad_s):
        """Complex modulus E*(ω) = E_∞ + Σ E_i iωτ_i/(1 + iωτ_i) = E' + iE'' (Pa, complex)."""
        w, wt = self._wt(omega_rad_s)
        den = 1.0 + wt * wt
        re = self.equilibrium_modulus_Pa + (wt * wt / den) @ self.modulus_Pa
        im = (wt / den) @ self.modulus_Pa
        out = np.asarray(re + 1j * im)
        if np.ndim(omega_rad_s) == 0:
            return complex(out.reshape(()))
        return out

    def abs_complex_modulus(self, omega_rad_s):
        """Dynamic modulus |E*(ω)| = sqrt(E'² + E''²) (Pa); ω in rad/s."""
        return _scalar_or_array(np.abs(np.asarray(self.complex_modulus(omega_rad_s))),
                                omega_rad_s)

    def tan_delta(self, omega_rad_s):
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

    # ---------------------------------------------------------------- creep (delegated)
    def creep_series(self):
        """The equivalent retardation (creep) series, by exact interconversion.

        Delegates to :func:`ttsp.interconvert.relaxation_to_creep` (docs/methods.md §5.2).
        """
        from .interconvert import relaxation_to_creep

        return relaxation_to_creep(self)

    def creep_compliance(self, t_s):
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
                      for t, m in zip(self.tau_s, self.modulus_Pa)],
            "modulus_kind": self.modulus_kind,
            "reference_temperature_K": self.reference_temperature_K,
            "reference_temperature_C": self.reference_temperature_C,
            "valid_reduced_time_range_s": None if rng is None else [rng[0], rng[1]],
            "fit_rms_percent": self.fit_rms_percent,
            "fit_max_percent": self.fit_max_percent,
            "provenance": self.provenance,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "PronySeries":
        """Build a series from :meth:`to_dict` output (or the ``prony`` block of a summary).

        ``reference_temperature_K`` is used when present, else ``reference_temperature_C``.

        Raises
        ------
        DataError
            If a required key is missing or a term is malformed.
        """
        if not isinstance(data, Mapping):
            raise bad_value("Prony series data", "a dict", data)
        for key in ("equilibrium_modulus_Pa", "terms"):
            if key not in data:
                raise bad_value("Prony series data", f"a dict with the key {key!r}",
                                sorted(data))
        terms = data["terms"]
        try:
            tau = [float(t["tau_s"]) for t in terms]
            mod = [float(t["modulus_Pa"]) for t in terms]
        except (TypeError, KeyError, ValueError):
            raise bad_value("terms", "a list of {'tau_s': ..., 'modulus_Pa': ...}",
                            terms) from None
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

    def to_csv(self, path) -> None:
        """Write the series as CSV with shortest round-trip float text (exact on re-reading).

        Layout: comment lines ``# key: value`` carrying the metadata (JSON values), then the
        table of :meth:`to_frame` (``tau_s,modulus_Pa,normalised_modulus``; the equilibrium
        modulus is the row with ``tau_s = inf``). Readers that skip ``#`` lines see a plain
        table.
        """
        meta = self.to_dict()
        lines = [_CSV_MAGIC]
        for key in ("modulus_kind", "reference_temperature_K", "valid_reduced_time_range_s",
                    "fit_rms_percent", "fit_max_percent", "provenance"):
            lines.append(f"# {key}: {json.dumps(meta[key], allow_nan=False)}")
        e0 = self.instantaneous_modulus_Pa
        with open(path, "w", newline="", encoding="utf-8") as fh:
            fh.write("\n".join(lines) + "\n")
            w = csv.writer(fh, lineterminator="\n")
            w.writerow(["tau_s", "modulus_Pa", "normalised_modulus"])
            w.writerow(["inf", repr(float(self.equilibrium_modulus_Pa)),
                        repr(float(self.equilibrium_modulus_Pa / e0))])
            for t, m in zip(self.tau_s, self.modulus_Pa):
                w.writerow([repr(float(t)), repr(float(m)), repr(float(m / e0))])

    @classmethod
    def from_csv(cls, path) -> "PronySeries":
        """Read a series written by :meth:`to_csv`.

        Raises
        ------
        DataError
            If the file is not in that layout (the message names file and row).
        """
        from ._validation import where

        meta: dict[str, Any] = {}
        rows: list[list[str]] = []
        with open(path, newline="", encoding="utf-8") as fh:
            lines = fh.read().splitlines()
        header_row = None
        for k, line in enumerate(lines, start=1):
            if line.startswith("#"):
                body = line[1:].strip()
                if ":" in body:
                    key, _, value = body.partition(":")
                    try:
                        meta[key.strip()] = json.loads(value)
                    except json.JSONDecodeError:
                        raise DataError(f"{where(str(path), row=k)}metadata line must hold a "
                                        f"JSON value; got {value.strip()!r}") from None
                continue
            if not line.strip():
                continue
            if header_row is None:
                header_row = k
                cols = next(csv.reader([line]))
                if cols[:2] != ["tau_s", "modulus_Pa"]:
                    raise DataError(f"{where(str(path), row=k)}header must start with "
                                    f"'tau_s,modulus_Pa'; got {line!r}")
                continue
            rows.append([k] + next(csv.reader([line])))
        e_inf = None
        tau, mod = [], []
        for row in rows:
            k, cells = row[0], row[1:]
            try:
                t, m = float(cells[0]), float(cells[1])
            except (ValueError, IndexError):
                raise DataError(f"{where(str(path), row=k)}tau_s and modulus_Pa must be numbers;"
                                f" got {','.join(cells)!r}") from None
            if math.isinf(t):
                if e_inf is not None:
                    raise DataError(f"{where(str(path), row=k)}the equilibrium row (tau_s = inf)"
                                    " must appear once; got a second one")
                e_inf = m
            else:
                tau.append(t)
                mod.append(m)
        if e_inf is None:
            raise DataError(f"{where(str(path))}the table must contain the equilibrium row "
                            "(tau_s = inf); got none")
        rng = meta.get("valid_reduced_time_range_s")
        return cls(e_inf, np.array(tau), np.array(mod),
                   modulus_kind=meta.get("modulus_kind", "tensile"),
                   reference_temperature_K=meta.get("reference_temperature_K"),
                   valid_reduced_time_range_s=None if rng is None else tuple(rng),
                   fit_rms_percent=meta.get("fit_rms_percent"),
                   fit_max_percent=meta.get("fit_max_percent"),
                   provenance=meta.get("provenance"))

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
                       for i, (t, m) in enumerate(zip(self.tau_s, self.modulus_Pa), start=1))
        return (f"<div>{head}<table><thead><tr><th>i</th><th>&tau;<sub>i</sub> (s)</th>"
                f"<th>{sym}<sub>i</sub> (Pa)</th><th>g<sub>i</sub></th></tr></thead>"
                f"<tbody>{rows}</tbody></table></div>")

    def __repr__(self) -> str:
        return (f"PronySeries(equilibrium_modulus_Pa={self.equilibrium_modulus_Pa!r}, "
                f"n_terms={self.n_terms}, instantaneous_modulus_Pa="
                f"{self.instantaneous_modulus_Pa!r}, modulus_kind={self.modulus_kind!r})")


# ----------------------------------------------------------------------------------------
# fitting
# ----------------------------------------------------------------------------------------
_QUANTITY_SYMBOL = {"storage_modulus": "E'", "loss_modulus": "E''",
                    "relaxation_modulus": "E(t)", "creep_compliance": "D(t)"}


def _solve_nnls(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """min ||a x − b|| with x ≥ 0 (Lawson & Hanson 1974), columns scaled to unit norm."""
    from scipy.optimize import nnls

    norms = np.linalg.norm(a, axis=0)
    norms[norms == 0] = 1.0
    try:
        xs, _ = nnls(a / norms, b, maxiter=max(200, 50 * a.shape[1]))
    except RuntimeError as exc:  # iteration limit of the active-set method
        raise FitError(f"non-negative least squares did not converge: {exc}") from None
    return xs / norms


def _measured(name: str, values: Any, n: int, relative: bool) -> np.ndarray:
    a = _as_1d_finite(name, values)
    if a.size != n:
        raise bad_value(name, f"as long as the abscissa ({n} values)", f"{a.size} values")
    bad = (a <= 0) if relative else (a < 0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        rule = "positive (relative residuals divide by it)" if relative else "non-negative"
        raise bad_value(f"{name}[{i}]", rule, float(a[i]))
    return a


def _abscissa(name: str, values: Any) -> np.ndarray:
    a = _as_1d_finite(name, values)
    if a.size < 2:
        raise bad_value(name, "at least 2 points", f"{a.size} point(s)")
    if (a <= 0).any():
        i = int(np.flatnonzero(a <= 0)[0])
        raise bad_value(f"{name}[{i}]", "positive", float(a[i]))
    return a


def _tau_grid(tau_s, lo, hi, terms_per_decade, margin_decades) -> np.ndarray:
    if tau_s is None:
        return log_spaced_relaxation_times(lo, hi, terms_per_decade=terms_per_decade,
                                           margin_decades=margin_decades)
    tau = _as_1d_finite("tau_s", tau_s)
    if tau.size == 0 or (tau <= 0).any():
        raise bad_value("tau_s", "a non-empty array of positive times", tau_s)
    return np.unique(tau)


class _LinearProblem:
    """A weighted NNLS problem min ||W(A x − y)|| with optional pruning of term columns.

    ``design`` is the unweighted model matrix (rows: stacked observations, columns: fixed
    columns first, then one column per candidate term); ``offset`` a fixed part of the model.
    """

    def __init__(self, design, measured, weights, offset, n_fixed):
        self.design = design
        self.measured = measured
        self.weights = weights
        self.offset = offset
        self.n_fixed = n_fixed
        self.aw = design * weights[:, None]
        self.bw = (measured - offset) * weights

    def solve(self, cols: np.ndarray) -> np.ndarray:
        x = np.zeros(self.design.shape[1])
        x[cols] = _solve_nnls(self.aw[:, cols], self.bw)
        return x

    def model(self, x: np.ndarray) -> np.ndarray:
        return self.offset + self.design @ x

    def rms_percent(self, x: np.ndarray) -> float:
        rel = self.model(x) / self.measured - 1.0
        return float(100.0 * np.sqrt(np.mean(rel * rel)))

    def prune(self, x: np.ndarray, tolerance_percent: float) -> tuple[np.ndarray, int]:
        """Backward elimination: drop the term whose removal (with a refit) costs least,
        while the relative rms stays within ``tolerance_percent`` of the full fit's."""
        limit = self.rms_percent(x) + tolerance_percent
        fixed = list(range(self.n_fixed))
        removed = 0
        while True:
            active = [j for j in range(self.n_fixed, x.size) if x[j] > 0]
            if not active:
                break
            best = None
            for j in active:
                cols = np.array(fixed + [k for k in active if k != j], dtype=int)
                if cols.size == 0:
                    continue
                trial = self.solve(cols)
                if not np.any(trial > 0) or (self.n_fixed == 0 and
                                             not np.any(trial[self.n_fixed:] > 0)):
                    continue
                r = self.rms_percent(trial)
                if best is None or r < best[0]:
                    best = (r, trial)
            if best is None or best[0] > limit:
                break
            removed += len(active) - int(np.sum(best[1][self.n_fixed:] > 0))
            x = best[1]
        return x, removed

    def stderr(self, x: np.ndarray) -> np.ndarray:
        """Linearised standard errors of the non-zero coefficients (NaN where x = 0)."""
        out = np.full(x.size, np.nan)
        act = np.flatnonzero(x > 0)
        m, k = self.aw.shape[0], act.size
        if k == 0 or m <= k:
            return out
        j = self.aw[:, act]
        norms = np.linalg.norm(j, axis=0)
        js = j / norms
        r = self.aw @ x - self.bw
        s2 = float(r @ r) / (m - k)
        cov = np.linalg.pinv(js.T @ js) * s2 / np.outer(norms, norms)
        out[act] = np.sqrt(np.clip(np.diag(cov), 0, None))
        return out


@dataclass(frozen=True, eq=False)
class PronyFit:
    """Result of a non-negative Prony fit (frozen): the series, its quality and its verdicts.

    Attributes
    ----------
    series : PronySeries
        The fitted relaxation series (zero terms dropped), carrying the valid reduced-time
        range and the fit rms/max deviations.
    domain : {"frequency", "time"}
        Kind of data fitted.
    quantities : tuple of str
        Fitted quantities, e.g. ``("storage_modulus", "loss_modulus")``.
    x : numpy.ndarray
        Abscissa of the data: reduced angular frequency (rad/s) or reduced time (s).
    measured, fitted, residuals_percent : mapping of str to numpy.ndarray
        Per quantity: the data, the fitted model at the data, and 100·(fitted/measured − 1).
    rms_percent, max_percent : float
        Root-mean-square and largest absolute relative deviation (%) over all fitted points.
    rms_percent_by_quantity : mapping of str to float
        The rms deviation (%) of each quantity.
    reaches_glassy_plateau, reaches_rubbery_plateau : bool
        Whether the local log-log slope of the fitted curve at the short-time (high-frequency)
        and long-time (low-frequency) end of the data is within ``plateau_slope``.
    reaches_terminal_zone : bool
        Whether the long-time end reaches terminal flow instead (E' ∝ ω² or fast decay).
    warnings : tuple of str
        Human-readable warnings (also emitted as :class:`FitQualityWarning`).
    candidate_tau_s : numpy.ndarray
        The full grid of relaxation times offered to the solver (s).
    params, stderr : mapping of str to float
        Fitted coefficients (Pa) and their linearised standard errors (None at the bound 0).
    settings : mapping
        The options of the fit.
    creep : object or None
        For ``quantity="creep_compliance"``: the fitted retardation series.
    """

    series: PronySeries
    domain: str
    quantities: tuple
    x: np.ndarray
    measured: Mapping
    fitted: Mapping
    residuals_percent: Mapping
    rms_percent: float
    max_percent: float
    rms_percent_by_quantity: Mapping
    reaches_glassy_plateau: bool
    reaches_rubbery_plateau: bool
    reaches_terminal_zone: bool
    warnings: tuple
    candidate_tau_s: np.ndarray
    params: Mapping
    stderr: Mapping
    settings: Mapping
    creep: Any = None

    @property
    def x_name(self) -> str:
        """Column name of the abscissa: ``omega_rad_s`` or ``time_s``."""
        return "omega_rad_s" if self.domain == "frequency" else "time_s"

    @property
    def n_terms(self) -> int:
        """Number of non-zero terms in the fitted series."""
        return self.series.n_terms

    def to_dict(self) -> dict:
        """JSON-ready summary (no data arrays; see :meth:`to_frame` for those)."""
        return _plain({
            "series": self.series.to_dict(),
            "domain": self.domain,
            "quantities": list(self.quantities),
            "n_points": int(self.x.size),
            "n_terms": self.n_terms,
            "n_candidate_terms": int(self.candidate_tau_s.size),
            "rms_percent": self.rms_percent,
            "max_percent": self.max_percent,
            "rms_percent_by_quantity": dict(self.rms_percent_by_quantity),
            "reaches_glassy_plateau": self.reaches_glassy_plateau,
            "reaches_rubbery_plateau": self.reaches_rubbery_plateau,
            "reaches_terminal_zone": self.reaches_terminal_zone,
            "warnings": list(self.warnings),
            "params": dict(self.params),
            "stderr": dict(self.stderr),
            "settings": dict(self.settings),
        })

    def to_frame(self):
        """Tidy table of the fitted data: abscissa, quantity, measured, fitted, residual_percent."""
        import pandas as pd

        parts = [pd.DataFrame({self.x_name: self.x, "quantity": q,
                               "measured": self.measured[q], "fitted": self.fitted[q],
                               "residual_percent": self.residuals_percent[q]})
                 for q in self.quantities]
        return pd.concat(parts, ignore_index=True)

    def _repr_html_(self) -> str:
        rows = "".join(
            f"<tr><td>{html.escape(_QUANTITY_SYMBOL.get(q, q))}</td>"
            f"<td>{self.rms_percent_by_quantity[q]:.3g}</td>"
            f"<td>{np.max(np.abs(self.residuals_percent[q])):.3g}</td></tr>"
            for q in self.quantities)
        rng = self.series.valid_reduced_time_range_s
        warn = "".join(f"<li>{html.escape(w)}</li>" for w in self.warnings)
        return (f"<div><b>Prony fit</b> ({self.domain} data, {self.x.size} points, "
                f"{self.n_terms} of {self.candidate_tau_s.size} terms non-zero)<br>"
                f"valid reduced time {_fmt(rng[0])} &ndash; {_fmt(rng[1])} s; "
                f"glassy plateau {'reached' if self.reaches_glassy_plateau else 'not reached'}, "
                f"rubbery plateau {'reached' if self.reaches_rubbery_plateau else 'not reached'}"
                f"<table><thead><tr><th>quantity</th><th>rms (%)</th><th>max (%)</th></tr>"
                f"</thead><tbody>{rows}</tbody></table>"
                + (f"<ul>{warn}</ul>" if warn else "") + "</div>"
                + self.series._repr_html_())


def _frozen_map(d: dict) -> Mapping:
    from types import MappingProxyType

    return MappingProxyType({k: (_readonly(v) if isinstance(v, np.ndarray) else v)
                             for k, v in d.items()})


def _slope_frequency(series: PronySeries, omega: float) -> float:
    """d ln E'/d ln ω of a series at ω (dimensionless)."""
    x = omega * series.tau_s
    num = float(np.sum(series.modulus_Pa * 2 * x * x / (1 + x * x) ** 2))
    return num / float(series.storage_modulus(omega))


def _slope_time(level: float, rate: float, coef: np.ndarray, times: np.ndarray, t: float,
                creep: bool) -> float:
    """|d ln F/d ln t| at t for F = E(t) = level + Σ c e^{−t/τ} or
    F = D(t) = level + rate·t + Σ c (1 − e^{−t/λ}) (dimensionless)."""
    e = np.exp(-t / times)
    if creep:
        value = level + rate * t + float(np.sum(coef * (1 - e)))
        deriv = rate * t + float(np.sum(coef * (t / times) * e))
    else:
        value = level + float(np.sum(coef * e))
        deriv = float(np.sum(coef * (t / times) * e))
    return abs(deriv / value) if value > 0 else math.inf


def _plateau_verdicts(slope_short: float, slope_long: float, plateau_slope: float,
                      terminal_slope: float, what_short: str, what_long: str,
                      symbol: str, x: str) -> tuple[bool, bool, bool, list[str]]:
    glassy = slope_short <= plateau_slope
    rubbery = slope_long <= plateau_slope
    terminal = slope_long >= terminal_slope
    msgs = []
    if not glassy:
        msgs.append(f"the data do not reach the glassy plateau: |d ln {symbol}/d ln {x}| = "
                    f"{slope_short:.3g} at the {what_short} (a plateau has <= {plateau_slope}); "
                    "the instantaneous modulus and the short-time end of the series are "
                    "extrapolated")
    if not rubbery and not terminal and slope_long >= _APPROACHING_TERMINAL_SLOPE:
        msgs.append(f"the data end on the way into the terminal (flow) zone: |d ln {symbol}/"
                    f"d ln {x}| = {slope_long:.3g} at the {what_long}, rising towards the "
                    f"{terminal_slope:g}-or-more of a liquid's flow; for a melt that is the "
                    "expected end, and its equilibrium modulus is zero by physics; the "
                    "long-time end of the series is extrapolated")
    elif not rubbery and not terminal:
        msgs.append(f"the data do not reach the rubbery plateau: |d ln {symbol}/d ln {x}| = "
                    f"{slope_long:.3g} at the {what_long} (a plateau has <= {plateau_slope}); "
                    "the equilibrium modulus and the long-time end of the series are "
                    "extrapolated")
    return glassy, rubbery, terminal, msgs


#: A long-time slope of the storage modulus above this (|d ln E'/d ln ω|, or of E(t) in time)
#: is read as the approach to a liquid's terminal zone (slope 2 for G', 1 for G'' in flow:
#: Ferry 1980, ch. 3), not as a rubber short of its plateau, where the slopes of the transition
#: zone stay near 0.5-1 (Rouse behaviour; Ferry 1980, ch. 10) [from memory].
_APPROACHING_TERMINAL_SLOPE = 1.2


def _finish(problem: _LinearProblem, x: np.ndarray, tau: np.ndarray, *, domain, quantities,
            abscissa, blocks, fixed_names, term_name, series, settings, verdicts,
            creep=None) -> PronyFit:
    """Assemble the frozen result: residuals, rms/max, params/stderr, plateau verdicts."""
    fitted_all = problem.model(x)
    rel_all = 100.0 * (fitted_all / problem.measured - 1.0)
    measured, fitted, resid, rms_by = {}, {}, {}, {}
    for q, sl in zip(quantities, blocks):
        measured[q] = problem.measured[sl]
        fitted[q] = fitted_all[sl]
        resid[q] = rel_all[sl]
        rms_by[q] = float(np.sqrt(np.mean(rel_all[sl] ** 2)))
    rms = float(np.sqrt(np.mean(rel_all ** 2)))
    mx = float(np.max(np.abs(rel_all)))
    series = series.replace(fit_rms_percent=rms, fit_max_percent=mx)
    err = problem.stderr(x)
    nf = problem.n_fixed
    params, stderr = {}, {}
    for k, name in enumerate(fixed_names):
        params[name] = float(x[k])
        stderr[name] = float(err[k]) if x[k] > 0 and np.isfinite(err[k]) else None
    keep = np.flatnonzero(x[nf:] > 0) + nf
    for i, k in enumerate(keep, start=1):
        params[term_name.format(i)] = float(x[k])
        stderr[term_name.format(i)] = float(err[k]) if np.isfinite(err[k]) else None
    glassy, rubbery, terminal, msgs = verdicts()
    for m in msgs:
        warnings.warn(m, FitQualityWarning, stacklevel=3)
    return PronyFit(series=series, domain=domain, quantities=tuple(quantities),
                    x=_readonly(abscissa), measured=_frozen_map(measured),
                    fitted=_frozen_map(fitted), residuals_percent=_frozen_map(resid),
                    rms_percent=rms, max_percent=mx, rms_percent_by_quantity=_frozen_map(rms_by),
                    reaches_glassy_plateau=glassy, reaches_rubbery_plateau=rubbery,
                    reaches_terminal_zone=terminal, warnings=tuple(msgs),
                    candidate_tau_s=_readonly(tau), params=_frozen_map(params),
                    stderr=_frozen_map(stderr), settings=_frozen_map(_plain(settings)),
                    creep=creep)


def _common_options(terms_per_decade, margin_decades, prune_tolerance_percent, plateau_slope,
                    modulus_kind, reference_temperature_K):
    check_positive("terms_per_decade", terms_per_decade)
    check_positive("margin_decades", margin_decades, allow_zero=True)
    if prune_tolerance_percent is not None:
        check_positive("prune_tolerance_percent", prune_tolerance_percent, allow_zero=True)
    check_positive("plateau_slope", plateau_slope)
    check_choice("modulus_kind", modulus_kind, _MODULUS_KINDS)
    if reference_temperature_K is not None:
        check_positive("reference_temperature_K", reference_temperature_K)


def fit_prony_frequency(omega_rad_s, storage_modulus_Pa, loss_modulus_Pa, *,
                        terms_per_decade: float = 2.0, margin_decades: float = 1.0,
                        relative: bool = True, loss_weight: float = 1.0,
                        equilibrium_modulus_Pa: float | None = None, tau_s=None,
                        prune_tolerance_percent: float | None = None,
                        plateau_slope: float = 0.05, modulus_kind: str = "tensile",
                        reference_temperature_K: float | None = None) -> PronyFit:
    """Fit a non-negative Prony series to a frequency master curve E'(ω), E''(ω).

    With the relaxation times τ_i fixed on a log-spaced grid, the model is linear in
    (E_∞, E_i):

    .. math::
       E'(\\omega_j) = E_\\infty + \\sum_i E_i \\frac{\\omega_j^2\\tau_i^2}{1+\\omega_j^2\\tau_i^2},
       \\qquad E''(\\omega_j) = \\sum_i E_i \\frac{\\omega_j\\tau_i}{1+\\omega_j^2\\tau_i^2}.

    The E' and E'' rows are stacked and each row is divided by its measured value
    (relative residuals), so every decade of modulus counts and E'' is not swamped by E'
    when tan δ is small; the problem min ||W(Ax − y)||, x ≥ 0 is solved by non-negative least
    squares (Lawson & Hanson 1974; docs/methods.md §4.2). The grid spans
    [1/ω_max, 1/ω_min] widened by ``margin_decades`` at each end; the default two terms per
    decade keeps the ripple of a uniform series in E'' near 0.15 % (one per decade: ≈ 12 %).

    Parameters
    ----------
    omega_rad_s : array_like
        Reduced angular frequencies ω·a_T (rad/s), > 0.
    storage_modulus_Pa, loss_modulus_Pa : array_like or None
        Measured E' and E'' (Pa) at ``omega_rad_s``; > 0 when ``relative``. One of them may
        be None to fit the other alone (with E'' alone, E_∞ is not determined and is 0 unless
        given).
    terms_per_decade : float
        Density of the relaxation-time grid (terms per decade), default 2.
    margin_decades : float
        Extension of the grid beyond the data at each end (decades), default 1.
    relative : bool
        Relative residuals (default). If False, absolute residuals with each quantity
        scaled by its largest value.
    loss_weight : float
        Extra factor on the E'' rows (dimensionless, > 0), default 1.
    equilibrium_modulus_Pa : float, optional
        Fix E_∞ (Pa) instead of fitting it (0 for a liquid).
    tau_s : array_like, optional
        Use these relaxation times (s) instead of the log-spaced grid.
    prune_tolerance_percent : float, optional
        Prune terms by backward elimination (refitting after each removal) while the rms
        relative deviation stays within this many percentage points of the full fit's.
    plateau_slope : float
        Largest |d ln E'/d ln ω| at a data end that counts as a plateau, default 0.05.
    modulus_kind : {"tensile", "shear"}
        Which modulus the data are.
    reference_temperature_K : float, optional
        Reference temperature of the master curve (K), stored in the series.

    Returns
    -------
    PronyFit
        The series (valid reduced time range [1/ω_max, 1/ω_min]), rms and max relative
        deviation (%), residuals, and the plateau verdicts.

    Raises
    ------
    DataError
        If an input breaks its rule (non-positive ω or moduli, lengths differ, ...).
    FitError
        If the non-negative solver does not converge.

    Warns
    -----
    FitQualityWarning
        When the data reach neither the glassy nor the rubbery plateau (or terminal zone) at
        an end: that end of the series is extrapolated.
    """
    _common_options(terms_per_decade, margin_decades, prune_tolerance_percent, plateau_slope,
                    modulus_kind, reference_temperature_K)
    relative = bool(relative)
    w = _abscissa("omega_rad_s", omega_rad_s)
    if storage_modulus_Pa is None and loss_modulus_Pa is None:
        raise bad_value("storage_modulus_Pa and loss_modulus_Pa", "given (at least one)", None)
    lw = check_positive("loss_weight", loss_weight)
    quantities, ys = [], []
    if storage_modulus_Pa is not None:
        quantities.append("storage_modulus")
        ys.append(_measured("storage_modulus_Pa", storage_modulus_Pa, w.size, relative))
    if loss_modulus_Pa is not None:
        quantities.append("loss_modulus")
        ys.append(_measured("loss_modulus_Pa", loss_modulus_Pa, w.size, relative))
    e_fixed = None
    if equilibrium_modulus_Pa is not None:
        e_fixed = check_positive("equilibrium_modulus_Pa", equilibrium_modulus_Pa,
                                 allow_zero=True)
    elif "storage_modulus" not in quantities:
        e_fixed = 0.0
    tau = _tau_grid(tau_s, 1.0 / w.max(), 1.0 / w.min(), terms_per_decade, margin_decades)

    wt = w[:, None] * tau[None, :]
    den = 1.0 + wt * wt
    blocks_a, blocks_off, blocks_w, blocks = [], [], [], []
    start = 0
    for q, y in zip(quantities, ys):
        if q == "storage_modulus":
            a = wt * wt / den
            ones = np.ones((w.size, 1))
            off = np.full(w.size, e_fixed if e_fixed is not None else 0.0)
        else:
            a = wt / den
            ones = np.zeros((w.size, 1))
            off = np.zeros(w.size)
        if e_fixed is None:
            a = np.hstack([ones, a])
        weight = 1.0 / y if relative else np.full(w.size, 1.0 / y.max() if y.max() > 0 else 1.0)
        if q == "loss_modulus":
            weight = weight * lw
        blocks_a.append(a)
        blocks_off.append(off)
        blocks_w.append(weight)
        blocks.append(slice(start, start + w.size))
        start += w.size
    problem = _LinearProblem(np.vstack(blocks_a), np.concatenate(ys),
                             np.concatenate(blocks_w), np.concatenate(blocks_off),
                             n_fixed=0 if e_fixed is not None else 1)
    x = problem.solve(np.arange(problem.design.shape[1]))
    removed = 0
    if prune_tolerance_percent is not None:
        x, removed = problem.prune(x, float(prune_tolerance_percent))
    if not np.any(x[problem.n_fixed:] > 0) and (e_fixed or 0.0) == 0 and (
            problem.n_fixed == 0 or x[0] == 0):
        raise FitError("the non-negative fit returned an all-zero series; the data cannot be "
                       "described by a Prony series with these settings")
    wmin, wmax = float(w.min()), float(w.max())
    nf = problem.n_fixed
    keep = x[nf:] > 0
    e_inf = float(x[0]) if nf else float(e_fixed)
    settings = dict(terms_per_decade=terms_per_decade, margin_decades=margin_decades,
                    relative=relative, loss_weight=lw, equilibrium_fixed=e_fixed is not None,
                    user_tau=tau_s is not None, prune_tolerance_percent=prune_tolerance_percent,
                    pruned_terms=removed, plateau_slope=plateau_slope, solver="scipy.optimize.nnls")
    series = PronySeries(e_inf, tau[keep], x[nf:][keep], modulus_kind=modulus_kind,
                         reference_temperature_K=reference_temperature_K,
                         valid_reduced_time_range_s=(1.0 / wmax, 1.0 / wmin),
                         provenance={"method": "non-negative least squares on "
                                     + " and ".join(quantities), **settings})

    def verdicts():
        return _plateau_verdicts(_slope_frequency(series, wmax), _slope_frequency(series, wmin),
                                 plateau_slope, 1.8, "highest reduced frequency",
                                 "lowest reduced frequency",
                                 "G'" if modulus_kind == "shear" else "E'", "ω")

    return _finish(problem, x, tau, domain="frequency", quantities=quantities, abscissa=w,
                   blocks=blocks, fixed_names=["equilibrium_modulus_Pa"][:nf],
                   term_name="modulus_{}_Pa", series=series, settings=settings,
                   verdicts=verdicts)


_TIME_QUANTITIES = ("relaxation_modulus", "creep_compliance")


def fit_prony_time(time_s, values, *, quantity: str = "relaxation_modulus",
                   terms_per_decade: float = 2.0, margin_decades: float = 1.0,
                   short_time_margin_decades: float = 0.25, relative: bool = True,
                   equilibrium_modulus_Pa: float | None = None, fluid: bool = False,
                   tau_s=None, prune_tolerance_percent: float | None = None,
                   plateau_slope: float = 0.05, modulus_kind: str = "tensile",
                   reference_temperature_K: float | None = None) -> PronyFit:
    """Fit a non-negative Prony series to a time master curve E(t) or D(t).

    ``quantity="relaxation_modulus"``: with τ_i fixed on a log-spaced grid from
    t_min/10^short_time_margin_decades to t_max·10^margin_decades, E(t_j) = E_∞ + Σ E_i exp(−t_j/τ_i) is linear
    in (E_∞, E_i) and is solved by non-negative least squares with relative residuals
    (Lawson & Hanson 1974; docs/methods.md §4.2).

    ``quantity="creep_compliance"``: a retardation series
    D(t) = D_g + Σ D_j (1 − exp(−t/λ_j)) [+ φ t if ``fluid``], all coefficients ≥ 0, is fitted
    the same way on a log-spaced λ grid, then converted exactly into the relaxation series by
    :func:`ttsp.interconvert.creep_to_relaxation` (docs/methods.md §5.1-5.2; Tschoegl 1989, ch. 4).
    The fitted creep series is kept in ``PronyFit.creep``.

    Parameters
    ----------
    time_s : array_like
        Reduced times t/a_T (s), > 0.
    values : array_like
        E(t) (Pa) or D(t) (1/Pa) at ``time_s``; > 0 when ``relative``.
    quantity : {"relaxation_modulus", "creep_compliance"}
        What ``values`` are.
    terms_per_decade, relative, tau_s, prune_tolerance_percent, plateau_slope
        As for :func:`fit_prony_frequency` (``tau_s`` are the retardation times for creep).
    margin_decades : float
        Extension of the grid beyond the longest time (decades), default 1.
    short_time_margin_decades : float
        Extension of the grid below the shortest time (decades), default 0.25. A term with
        τ well below t_min is not determined by the data, since exp(−t_min/τ) vanishes,
        and only adds arbitrary stiffness to E_0 (docs/methods.md §4.4): with a full decade of
        margin, 2 % noise made E_0 several times too large in trials.
    equilibrium_modulus_Pa : float, optional
        Fix E_∞ (Pa) of a relaxation fit instead of fitting it (relaxation data only).
    fluid : bool
        Creep data only: add a steady-flow term φ·t (φ = 1/η0 ≥ 0, 1/(Pa·s)) for a liquid.
    modulus_kind : {"tensile", "shear"}
        Which modulus (or compliance) the data are.
    reference_temperature_K : float, optional
        Reference temperature of the master curve (K), stored in the series.

    Returns
    -------
    PronyFit
        With the valid reduced time range [t_min, t_max]; residuals are those of the fitted
        quantity.

    Raises
    ------
    DataError
        If an input breaks its rule.
    FitError
        If the solver fails or the fit finds no glassy compliance.

    Warns
    -----
    FitQualityWarning
        When an end of the data does not reach its plateau (that end is extrapolated).
    """
    check_choice("quantity", quantity, _TIME_QUANTITIES)
    _common_options(terms_per_decade, margin_decades, prune_tolerance_percent, plateau_slope,
                    modulus_kind, reference_temperature_K)
    relative = bool(relative)
    t = _abscissa("time_s", time_s)
    creep = quantity == "creep_compliance"
    y = _measured("values", values, t.size, relative)
    e_fixed = None
    if equilibrium_modulus_Pa is not None:
        if creep:
            raise bad_value("equilibrium_modulus_Pa", "None for creep-compliance data",
                            equilibrium_modulus_Pa)
        e_fixed = check_positive("equilibrium_modulus_Pa", equilibrium_modulus_Pa,
                                 allow_zero=True)
    if fluid and not creep:
        raise bad_value("fluid", "False for relaxation-modulus data (a liquid has E_inf = 0: "
                        "pass equilibrium_modulus_Pa=0)", fluid)
    short = check_positive("short_time_margin_decades", short_time_margin_decades,
                           allow_zero=True)
    tmin, tmax = float(t.min()), float(t.max())
    if tau_s is None:
        tau = _log_grid(math.log10(tmin) - short, math.log10(tmax) + float(margin_decades),
                        float(terms_per_decade))
    else:
        tau = _tau_grid(tau_s, tmin, tmax, terms_per_decade, margin_decades)
    e = np.exp(-t[:, None] / tau[None, :])
    fixed_cols = []
    if creep:
        a = 1.0 - e
        fixed_cols.append(np.ones(t.size))
        fixed_names = ["glassy_compliance_1_per_Pa"]
        if fluid:
            fixed_cols.append(t)
            fixed_names.append("fluidity_1_per_Pa_s")
        term_name = "compliance_{}_1_per_Pa"
    else:
        a = e
        fixed_names = []
        if e_fixed is None:
            fixed_cols.append(np.ones(t.size))
            fixed_names = ["equilibrium_modulus_Pa"]
        term_name = "modulus_{}_Pa"
    if fixed_cols:
        a = np.hstack([np.column_stack(fixed_cols), a])
    off = np.full(t.size, e_fixed if e_fixed is not None else 0.0)
    weight = 1.0 / y if relative else np.full(t.size, 1.0 / y.max() if y.max() > 0 else 1.0)
    problem = _LinearProblem(a, y, weight, off, n_fixed=len(fixed_cols))
    x = problem.solve(np.arange(a.shape[1]))
    removed = 0
    if prune_tolerance_percent is not None:
        x, removed = problem.prune(x, float(prune_tolerance_percent))
    nf = problem.n_fixed
    if creep and not x[0] > 0:
        raise FitError("the creep fit found no instantaneous compliance (D_g = 0), so the "
                       "glassy modulus is unbounded; the data must start at shorter times")
    if not creep and not np.any(x[nf:] > 0) and (e_fixed or 0.0) == 0 and (nf == 0 or x[0] == 0):
        raise FitError("the non-negative fit returned an all-zero series; the data cannot be "
                       "described by a Prony series with these settings")
    settings = dict(quantity=quantity, terms_per_decade=terms_per_decade,
                    margin_decades=margin_decades, short_time_margin_decades=short,
                    relative=relative,
                    equilibrium_fixed=e_fixed is not None, fluid=bool(fluid),
                    user_tau=tau_s is not None, prune_tolerance_percent=prune_tolerance_percent,
                    pruned_terms=removed, plateau_slope=plateau_slope,
                    solver="scipy.optimize.nnls")
    keep = x[nf:] > 0
    coef, times = x[nf:][keep], tau[keep]
    series_kwargs = dict(modulus_kind=modulus_kind, reference_temperature_K=reference_temperature_K,
                         valid_reduced_time_range_s=(tmin, tmax),
                         provenance={"method": f"non-negative least squares on {quantity}",
                                     **settings})
    creep_obj = None
    if creep:
        phi = float(x[1]) if fluid else 0.0
        series, creep_obj = _creep_to_relaxation(float(x[0]), phi, coef, times, series_kwargs)
        level, rate = float(x[0]), phi
    else:
        level = float(x[0]) if nf else float(e_fixed)
        rate = 0.0
        series = PronySeries(level, times, coef, **series_kwargs)

    def verdicts():
        return _plateau_verdicts(_slope_time(level, rate, coef, times, tmin, creep),
                                 _slope_time(level, rate, coef, times, tmax, creep),
                                 plateau_slope, 1.0 if creep else 2.0,
                                 "shortest reduced time", "longest reduced time",
                                 "D" if creep else "E", "t")

    return _finish(problem, x, tau, domain="time", quantities=[quantity], abscissa=t,
                   blocks=[slice(0, t.size)], fixed_names=fixed_names, term_name=term_name,
                   series=series, settings=settings, verdicts=verdicts, creep=creep_obj)


def _creep_to_relaxation(glassy_compliance: float, fluidity: float, compliance: np.ndarray,
                         retardation_s: np.ndarray, series_kwargs: dict):
    """Exact conversion of the fitted retardation series into a relaxation series.

    Delegates to :func:`ttsp.interconvert.creep_to_relaxation` (docs/methods.md §5.1-5.2).
    """
    from .interconvert import CreepSeries, creep_to_relaxation

    creep = CreepSeries(glassy_compliance, retardation_s, compliance, fluidity,
                        modulus_kind=series_kwargs["modulus_kind"],
                        reference_temperature_K=series_kwargs["reference_temperature_K"],
                        valid_reduced_time_range_s=series_kwargs["valid_reduced_time_range_s"],
                        provenance=series_kwargs["provenance"])
    return creep_to_relaxation(creep).replace(**series_kwargs), creep
