"""A material model at every temperature: a Prony series at the reference temperature plus a
shift law.

For a thermorheologically simple material (Ferry, *Viscoelastic Properties of Polymers*, 3rd ed.,
1980, ch. 11) every material function at temperature T follows from the reference curve by the
shift factor a_T:

.. math:: E(t, T) = b_T E_\\mathrm{ref}(t / a_T), \\qquad
          E'(\\omega, T) = b_T E'_\\mathrm{ref}(\\omega a_T), \\qquad
          D(t, T) = D_\\mathrm{ref}(t / a_T) / b_T,

with log10 a_T > 0 below the reference temperature and tan δ unchanged by b_T. The series
describes the reduced modulus at the reference temperature; the vertical shift b_T is 1 unless
the build used one (:class:`VerticalShift`: from density, b_T = T ρ(T)/(T_ref ρ_ref), or
interpolated in the table of fitted b_T).

Requests outside the reduced range the series was fitted to, or outside the temperature range of
the shift law, are extrapolations and raise :class:`~ttsp.exceptions.ExtrapolationWarning`.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import ArrayLike

from ._arrays import outside_log_range
from ._validation import bad_value, check_choice
from .data import REFERENCE_SNAP_K
from .exceptions import DataError, ExtrapolationWarning
from .interconvert import relaxation_to_creep
from .laws import ShiftLaw
from .prony import PronySeries

if TYPE_CHECKING:
    from .bands import BandEnsemble
    from .laws import ShiftLaw
    from .prony import PronySeries

__all__ = ["ViscoelasticModel", "VerticalShift", "QUANTITY_COLUMNS", "TIME_QUANTITIES",
           "FREQUENCY_QUANTITIES"]

TIME_QUANTITIES = ("relaxation_modulus", "creep_compliance")
FREQUENCY_QUANTITIES = ("storage_modulus", "loss_modulus", "tan_delta")
QUANTITY_COLUMNS = {
    "relaxation_modulus": "relaxation_modulus_Pa",
    "creep_compliance": "creep_compliance_1_per_Pa",
    "storage_modulus": "storage_modulus_Pa",
    "loss_modulus": "loss_modulus_Pa",
    "tan_delta": "tan_delta",
}


@dataclass(frozen=True)
class VerticalShift:
    """The vertical shift factor b_T at any temperature, as the build found it.

    ``mode="density"``: b_T = T ρ(T)/(T_ref ρ_ref) with ρ(T) = ρ_ref [1 − α_v (T − T_ref)]
    (Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 11). ``mode="fit"``:
    log10 b_T interpolated linearly in T between the fitted isotherms and held at the end values
    beyond them (common practice, no source; b_T varies slowly and a shift law is for a_T). The
    table holds the node (T_ref, 0) so that b_T(T_ref) = 1 also when the reference temperature
    was not measured.
    """

    mode: str
    reference_temperature_K: float
    expansion_coefficient_per_K: float | None = None
    temperature_K: tuple = ()
    log10_bT: tuple = ()

    def __post_init__(self):
        check_choice("mode", self.mode, ("density", "fit"))
        tr = self.reference_temperature_K
        if not (isinstance(tr, (int, float)) and math.isfinite(tr) and tr > 0):
            raise bad_value("reference_temperature_K", "a positive temperature in kelvin", tr)
        if self.mode == "density":
            a = self.expansion_coefficient_per_K
            if not (isinstance(a, (int, float)) and math.isfinite(a) and a >= 0):
                raise bad_value("expansion_coefficient_per_K",
                                "a finite, non-negative number for mode 'density'", a)
            return
        T = np.asarray(self.temperature_K, dtype=float)
        b = np.asarray(self.log10_bT, dtype=float)
        if T.ndim != 1 or T.size < 1 or T.shape != b.shape:
            raise bad_value("temperature_K, log10_bT", "two tables of the same, non-zero length",
                            (T.size, b.size))
        if not (np.all(np.isfinite(T)) and np.all(np.isfinite(b)) and np.all(np.diff(T) > 0)):
            raise bad_value("temperature_K, log10_bT",
                            "finite, with temperatures strictly increasing", (tuple(T), tuple(b)))

    @classmethod
    def from_table(cls, mode: str, reference_temperature_K: float,
                   expansion_coefficient_per_K: float | None, temperature_K: ArrayLike,
                   log10_bT: ArrayLike) -> VerticalShift:
        """From a shift table in any order: sorted by temperature, with the node (T_ref, 0)
        added in mode 'fit' when no isotherm lies within 0.05 K of the reference."""
        tr = float(reference_temperature_K)
        T = np.asarray(temperature_K, dtype=float)
        b = np.asarray(log10_bT, dtype=float)
        if mode == "fit" and T.size and np.min(np.abs(T - tr)) > REFERENCE_SNAP_K:
            T, b = np.append(T, tr), np.append(b, 0.0)
        order = np.argsort(T, kind="stable")
        return cls(mode, tr, expansion_coefficient_per_K,
                   tuple(float(v) for v in T[order]), tuple(float(v) for v in b[order]))

    @classmethod
    def from_shifts(cls, shifts) -> VerticalShift | None:
        """The vertical shift of a :class:`~ttsp.shifting.ShiftResult`, None for mode 'none'."""
        mode = getattr(shifts, "vertical_mode", "none")
        if mode == "none":
            return None
        return cls.from_table(mode, shifts.reference_temperature_K,
                              shifts.expansion_coefficient_per_K, shifts.temperature_K,
                              shifts.log10_bT)

    def factor(self, temperature_K: ArrayLike) -> np.ndarray:
        """b_T at ``temperature_K`` (K)."""
        T = np.asarray(temperature_K, dtype=float)
        if self.mode == "fit":
            return 10.0 ** np.interp(T, self.temperature_K, self.log10_bT)
        tr = self.reference_temperature_K
        alpha = self.expansion_coefficient_per_K
        assert alpha is not None   # mode 'density' has one (checked in __post_init__)
        b = T * (1.0 - alpha * (T - tr)) / tr
        if np.any(b <= 0):
            raise bad_value("temperature_K", f"below T_ref + 1/α_v = "
                            f"{tr + 1.0 / alpha:.6g} K (the density "
                            "law gives no positive density beyond)", float(np.max(T)))
        return b

    def to_dict(self) -> dict:
        out = {"mode": self.mode, "reference_temperature_C": self.reference_temperature_K - 273.15}
        if self.mode == "density" and self.expansion_coefficient_per_K is not None:
            out["expansion_coefficient_per_K"] = float(self.expansion_coefficient_per_K)
        else:
            out["temperature_C"] = [t - 273.15 for t in self.temperature_K]
            out["log10_bT"] = list(self.log10_bT)
        return out


@dataclass(frozen=True, repr=False)
class ViscoelasticModel:
    """Prony series at the reference temperature + a shift law = the material at any temperature.

    Parameters
    ----------
    series : ttsp.prony.PronySeries
        Relaxation (or shear relaxation) series in reduced time at the law's reference temperature.
    law : shift law
        Any object with ``log10_aT(temperature_K)``, ``reference_temperature_K`` and
        ``valid_temperature_range_K`` (see :mod:`ttsp.laws`).
    vertical : VerticalShift, optional
        The vertical shift of the build (None: b_T = 1 at every temperature).
    ensemble : ttsp.bands.BandEnsemble, optional
        The build's bootstrap ensemble (:mod:`ttsp.bands`); with it every material function
        takes ``band=LEVEL`` (e.g. 0.95) and returns a :class:`~ttsp.bands.Banded`
        (value, low, high, level) instead of the value alone.
    """

    series: PronySeries
    law: ShiftLaw
    vertical: VerticalShift | None = None
    ensemble: BandEnsemble | None = None

    def __post_init__(self):
        tr_law = float(self.law.reference_temperature_K)
        tr_series = self.series.reference_temperature_K
        if tr_series is not None and abs(float(tr_series) - tr_law) > 1e-6:
            raise bad_value("series.reference_temperature_K",
                            f"equal to the law's reference temperature {tr_law:g} K", tr_series)
        if self.vertical is not None and abs(self.vertical.reference_temperature_K - tr_law) > 1e-6:
            raise bad_value("vertical.reference_temperature_K",
                            f"equal to the law's reference temperature {tr_law:g} K",
                            self.vertical.reference_temperature_K)

    def vertical_factor(self, temperature_K: ArrayLike) -> np.ndarray:
        """b_T at ``temperature_K`` (K): 1 without a vertical shift."""
        if self.vertical is None:
            return np.ones(np.shape(temperature_K))
        return self.vertical.factor(temperature_K)

    @property
    def reference_temperature_K(self) -> float:
        return float(self.law.reference_temperature_K)

    # ---- shift --------------------------------------------------------------------------------
    def log10_aT(self, temperature_K: ArrayLike) -> np.ndarray:
        """log10 a_T at ``temperature_K`` (K) from the law (warns outside its fitted range)."""
        return np.asarray(self.law.log10_aT(np.asarray(temperature_K, dtype=float)), dtype=float)

    def _warn_reduced(self, reduced_time_s, what: str):
        rng = getattr(self.series, "valid_reduced_time_range_s", None)
        if rng is None:
            return
        lo, hi = rng
        r = np.asarray(reduced_time_s, dtype=float)
        outside = outside_log_range(r, lo, hi)
        if np.any(outside):
            warnings.warn(f"{int(outside.sum())} of {r.size} requested {what} lie outside the "
                          f"reduced-time range the series was fitted to ({lo:.3g}–{hi:.3g} s): "
                          f"those values are extrapolated", ExtrapolationWarning, stacklevel=3)

    # ---- time domain ------------------------------------------------------------------------
    def relaxation_modulus(self, time_s: ArrayLike, temperature_K: ArrayLike,
                           band: float | None = None):
        """E(t, T) = b_T E_ref(t / a_T) in Pa, for times in s and temperatures in K (broadcast).

        ``band=0.95`` returns a :class:`~ttsp.bands.Banded` with the interval (as for every
        material function below; :mod:`ttsp.bands` says how it is found)."""
        t, a = self._reduced_time(time_s, temperature_K)
        value = self._scaled(self.series.relaxation_modulus(t / a), temperature_K, t)
        return self._banded("relaxation_modulus", value, temperature_K, band, time_s=t, a=a)

    def creep_compliance(self, time_s: ArrayLike, temperature_K: ArrayLike,
                         band: float | None = None):
        """D(t, T) = D_ref(t / a_T) / b_T in 1/Pa, from the exact Prony interconversion."""
        t, a = self._reduced_time(time_s, temperature_K)
        value = self._scaled(self.creep_series.creep_compliance(t / a), temperature_K, t,
                             inverse=True)
        return self._banded("creep_compliance", value, temperature_K, band, time_s=t, a=a)

    def _banded(self, quantity, value, temperature_K, band, *, a, time_s=None,
                frequency_Hz=None):
        """``value`` alone (band None) or with its interval from the ensemble."""
        if band is None:
            return value
        from .bands import check_level

        level = check_level(band)
        if self.ensemble is None:
            raise DataError("this model has no uncertainty band: it was built with "
                            "BuildOptions(bands=False), or its summary.json has no 'bands' "
                            "section (a build older than bands); rebuild it to get one")
        x = {"time_s": time_s} if time_s is not None else {"frequency_Hz": frequency_Hz}
        return self.ensemble.interval(quantity, value, temperature_K, level,
                                      central_log10_aT=np.log10(a), **x)

    def _scaled(self, values, temperature_K, like, *, inverse=False):
        """Values times b_T (divided for a compliance), broadcast like ``like``."""
        if self.vertical is None:
            return values
        b = np.broadcast_to(self.vertical.factor(temperature_K), np.shape(like))
        out = np.asarray(values) / b if inverse else np.asarray(values) * b
        return out.reshape(()).item() if np.ndim(values) == 0 else out

    @property
    def creep_series(self):
        """The exact creep (retardation) series of the Prony series, computed once."""
        cached = self.__dict__.get("_creep_series")
        if cached is None:
            cached = relaxation_to_creep(self.series)
            object.__setattr__(self, "_creep_series", cached)
        return cached

    def _reduced_time(self, time_s, temperature_K):
        t = np.asarray(time_s, dtype=float)
        if np.any(~np.isfinite(t)) or np.any(t < 0):
            raise bad_value("time_s", "finite and non-negative", t[~(np.isfinite(t) & (t >= 0))][0])
        a = 10.0 ** self.log10_aT(temperature_K)
        t, a = np.broadcast_arrays(t, a)
        self._warn_reduced(t[t > 0] / a[t > 0], "reduced times")
        return t, a

    # ---- frequency domain ---------------------------------------------------------------------
    def _reduced_omega(self, frequency_Hz, temperature_K):
        f = np.asarray(frequency_Hz, dtype=float)
        if np.any(~np.isfinite(f)) or np.any(f <= 0):
            raise bad_value("frequency_Hz", "positive and finite", f[~(np.isfinite(f) & (f > 0))][0])
        a = 10.0 ** self.log10_aT(temperature_K)
        w = 2.0 * math.pi * f * a
        self._warn_reduced(1.0 / np.atleast_1d(w), "reduced frequencies (as 1/ω)")
        return w

    def _frequency_banded(self, quantity, frequency_Hz, temperature_K, band, scale=True):
        w = self._reduced_omega(frequency_Hz, temperature_K)
        value = getattr(self.series, quantity)(w)
        if scale:
            value = self._scaled(value, temperature_K, w)
        if band is None:
            return value
        f = np.broadcast_to(np.asarray(frequency_Hz, dtype=float), np.shape(w))
        return self._banded(quantity, value, temperature_K, band, frequency_Hz=f,
                            a=w / (2.0 * math.pi * f))

    def storage_modulus(self, frequency_Hz: ArrayLike, temperature_K: ArrayLike,
                        band: float | None = None):
        """E'(f, T) = b_T E'_ref(2πf·a_T) in Pa; frequency in Hz."""
        return self._frequency_banded("storage_modulus", frequency_Hz, temperature_K, band)

    def loss_modulus(self, frequency_Hz: ArrayLike, temperature_K: ArrayLike,
                     band: float | None = None):
        """E''(f, T) = b_T E''_ref(2πf·a_T) in Pa; frequency in Hz."""
        return self._frequency_banded("loss_modulus", frequency_Hz, temperature_K, band)

    def tan_delta(self, frequency_Hz: ArrayLike, temperature_K: ArrayLike,
                  band: float | None = None):
        """tan δ(f, T) = E''/E' at the reduced frequency 2πf·a_T."""
        return self._frequency_banded("tan_delta", frequency_Hz, temperature_K, band,
                                      scale=False)

    # ---- one call for the CLI and the API -----------------------------------------------------
    def evaluate(self, quantity: str, temperature_K: ArrayLike, *, time_s: ArrayLike | None = None,
                 frequency_Hz: ArrayLike | None = None, band: float | None = None):
        """Evaluate one quantity by name (``relaxation_modulus``, ``creep_compliance``,
        ``storage_modulus``, ``loss_modulus``, ``tan_delta``) at times (s) or frequencies (Hz);
        with ``band=LEVEL`` a :class:`~ttsp.bands.Banded`."""
        check_choice("quantity", quantity, QUANTITY_COLUMNS)
        if quantity in TIME_QUANTITIES:
            if time_s is None:
                raise DataError(f"quantity {quantity!r} needs times (time_s / --time), not frequencies")
            return getattr(self, quantity)(time_s, temperature_K, band=band)
        if frequency_Hz is None:
            raise DataError(f"quantity {quantity!r} needs frequencies (frequency_Hz / --frequency), "
                            f"not times")
        return getattr(self, quantity)(frequency_Hz, temperature_K, band=band)

    def isochrone(self, quantity: str, temperature_K: ArrayLike,
                  frequency_Hz: float = 1.0) -> np.ndarray:
        """E'(T), E''(T) or tan δ(T) at one fixed frequency (Hz) over temperatures (K)."""
        check_choice("quantity", quantity, FREQUENCY_QUANTITIES)
        return getattr(self, quantity)(np.full(np.shape(temperature_K), float(frequency_Hz)),
                                       temperature_K)

    def to_dict(self) -> dict:
        out = {"prony": self.series.to_dict(), "shift_law": self.law.to_dict()}
        if self.vertical is not None:
            out["vertical_shift"] = self.vertical.to_dict()
        return out

    def __repr__(self) -> str:
        return (f"ViscoelasticModel({self.series.n_terms} Prony terms, law {self.law.model}, "
                f"reference {self.reference_temperature_K - 273.15:.2f} °C)")

    def _repr_html_(self) -> str:
        return (f"<div><b>Viscoelastic model</b> at reference "
                f"{self.reference_temperature_K - 273.15:.2f} °C{self.law._repr_html_()}"
                f"{self.series._repr_html_()}</div>")

    @classmethod
    def from_summary(cls, summary: dict) -> ViscoelasticModel:
        """Rebuild the model from the ``summary.json`` that ``ttsp build`` writes."""
        for key in ("prony", "shift_law"):
            if not isinstance(summary.get(key), dict):
                raise DataError(f"summary has no {key!r} section; it must come from 'ttsp build'")
        law = ShiftLaw.from_dict(summary["shift_law"])
        ensemble = None
        if isinstance(summary.get("bands"), dict):
            from .bands import BandEnsemble

            ensemble = BandEnsemble.from_dict(summary["bands"], law)
        return cls(PronySeries.from_dict(summary["prony"]), law,
                   _vertical_from_summary(summary, float(law.reference_temperature_K)), ensemble)


def _vertical_from_summary(summary: dict, reference_temperature_K: float):
    """The build's vertical shift from its ``shifting`` section and shift table (None if none)."""
    shifting = summary.get("shifting") or {}
    mode = shifting.get("vertical_mode", "none")
    if mode in (None, "none"):
        return None
    if mode == "density":
        return VerticalShift("density", reference_temperature_K,
                             shifting.get("expansion_coefficient_per_K"))
    rows = summary.get("shift_factors")
    if not isinstance(rows, list):
        raise DataError(f"summary's vertical shift ({mode!r}) cannot be read: it has no "
                        "shift_factors table")
    temps, log_b = [], []
    for i, row in enumerate(rows):
        try:
            temps.append(float(row["temperature_C"]) + 273.15)
            log_b.append(float(row["log10_bT"]))
        except (KeyError, TypeError, ValueError):
            raise DataError(f"summary's vertical shift ({mode!r}) cannot be read: shift_factors "
                            f"row {i} has no usable temperature_C / log10_bT") from None
    return VerticalShift.from_table(mode, reference_temperature_K, None, temps, log_b)
