"""A material model at every temperature: a Prony series at the reference temperature plus a
shift law.

For a thermorheologically simple material (Ferry, *Viscoelastic Properties of Polymers*, 3rd ed.,
1980, ch. 11) every material function at temperature T follows from the reference curve by the
shift factor a_T:

.. math:: E(t, T) = E_\\mathrm{ref}(t / a_T), \\qquad E'(\\omega, T) = E'_\\mathrm{ref}(\\omega a_T),
          \\qquad D(t, T) = D_\\mathrm{ref}(t / a_T),

with log10 a_T > 0 below the reference temperature. Vertical shifts are not applied here: the
series describes the reduced modulus at the reference temperature.

Requests outside the reduced range the series was fitted to, or outside the temperature range of
the shift law, are extrapolations and raise :class:`~ttsp.exceptions.ExtrapolationWarning`.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from ._validation import bad_value, check_choice
from .exceptions import DataError, ExtrapolationWarning

__all__ = ["ViscoelasticModel", "QUANTITY_COLUMNS", "TIME_QUANTITIES", "FREQUENCY_QUANTITIES"]

TIME_QUANTITIES = ("relaxation_modulus", "creep_compliance")
FREQUENCY_QUANTITIES = ("storage_modulus", "loss_modulus", "tan_delta")
QUANTITY_COLUMNS = {
    "relaxation_modulus": "relaxation_modulus_Pa",
    "creep_compliance": "creep_compliance_1_per_Pa",
    "storage_modulus": "storage_modulus_Pa",
    "loss_modulus": "loss_modulus_Pa",
    "tan_delta": "tan_delta",
}


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
    """

    series: object
    law: object

    def __post_init__(self):
        tr_law = float(self.law.reference_temperature_K)
        tr_series = self.series.reference_temperature_K
        if tr_series is not None and abs(float(tr_series) - tr_law) > 1e-6:
            raise bad_value("series.reference_temperature_K",
                            f"equal to the law's reference temperature {tr_law:g} K", tr_series)

    @property
    def reference_temperature_K(self) -> float:
        return float(self.law.reference_temperature_K)

    # ---- shift --------------------------------------------------------------------------------
    def log10_aT(self, temperature_K) -> np.ndarray:
        """log10 a_T at ``temperature_K`` (K) from the law (warns outside its fitted range)."""
        return np.asarray(self.law.log10_aT(np.asarray(temperature_K, dtype=float)), dtype=float)

    def _warn_reduced(self, reduced_time_s, what: str):
        rng = getattr(self.series, "valid_reduced_time_range_s", None)
        if rng is None:
            return
        lo, hi = rng
        r = np.asarray(reduced_time_s, dtype=float)
        outside = (r < lo * (1 - 1e-9)) | (r > hi * (1 + 1e-9))
        if np.any(outside):
            warnings.warn(f"{int(outside.sum())} of {r.size} requested {what} lie outside the "
                          f"reduced-time range the series was fitted to ({lo:.3g}–{hi:.3g} s): "
                          f"those values are extrapolated", ExtrapolationWarning, stacklevel=3)

    # ---- time domain ------------------------------------------------------------------------
    def relaxation_modulus(self, time_s, temperature_K) -> np.ndarray:
        """E(t, T) = E_ref(t / a_T) in Pa, for times in s and temperatures in K (broadcast)."""
        t, a = self._reduced_time(time_s, temperature_K)
        return self.series.relaxation_modulus(t / a)

    def creep_compliance(self, time_s, temperature_K) -> np.ndarray:
        """D(t, T) = D_ref(t / a_T) in 1/Pa, from the exact Prony interconversion."""
        t, a = self._reduced_time(time_s, temperature_K)
        return self.creep_series.creep_compliance(t / a)

    @property
    def creep_series(self):
        """The exact creep (retardation) series of the Prony series, computed once."""
        cached = self.__dict__.get("_creep_series")
        if cached is None:
            from .interconvert import relaxation_to_creep

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

    def storage_modulus(self, frequency_Hz, temperature_K) -> np.ndarray:
        """E'(f, T) = E'_ref(2πf·a_T) in Pa; frequency in Hz."""
        return self.series.storage_modulus(self._reduced_omega(frequency_Hz, temperature_K))

    def loss_modulus(self, frequency_Hz, temperature_K) -> np.ndarray:
        """E''(f, T) = E''_ref(2πf·a_T) in Pa; frequency in Hz."""
        return self.series.loss_modulus(self._reduced_omega(frequency_Hz, temperature_K))

    def tan_delta(self, frequency_Hz, temperature_K) -> np.ndarray:
        """tan δ(f, T) = E''/E' at the reduced frequency 2πf·a_T."""
        return self.series.tan_delta(self._reduced_omega(frequency_Hz, temperature_K))

    # ---- one call for the CLI and the API -----------------------------------------------------
    def evaluate(self, quantity: str, temperature_K, *, time_s=None, frequency_Hz=None):
        """Evaluate one quantity by name (``relaxation_modulus``, ``creep_compliance``,
        ``storage_modulus``, ``loss_modulus``, ``tan_delta``) at times (s) or frequencies (Hz)."""
        check_choice("quantity", quantity, QUANTITY_COLUMNS)
        if quantity in TIME_QUANTITIES:
            if time_s is None:
                raise DataError(f"quantity {quantity!r} needs times (time_s / --time), not frequencies")
            return getattr(self, quantity)(time_s, temperature_K)
        if frequency_Hz is None:
            raise DataError(f"quantity {quantity!r} needs frequencies (frequency_Hz / --frequency), "
                            f"not times")
        return getattr(self, quantity)(frequency_Hz, temperature_K)

    def isochrone(self, quantity: str, temperature_K, frequency_Hz: float = 1.0) -> np.ndarray:
        """E'(T), E''(T) or tan δ(T) at one fixed frequency (Hz) over temperatures (K)."""
        check_choice("quantity", quantity, FREQUENCY_QUANTITIES)
        return getattr(self, quantity)(np.full(np.shape(temperature_K), float(frequency_Hz)),
                                       temperature_K)

    def to_dict(self) -> dict:
        return {"prony": self.series.to_dict(), "shift_law": self.law.to_dict()}

    def __repr__(self) -> str:
        return (f"ViscoelasticModel({self.series.n_terms} Prony terms, law {self.law.model}, "
                f"reference {self.reference_temperature_K - 273.15:.2f} °C)")

    def _repr_html_(self) -> str:
        return (f"<div><b>Viscoelastic model</b> at reference "
                f"{self.reference_temperature_K - 273.15:.2f} °C{self.law._repr_html_()}"
                f"{self.series._repr_html_()}</div>")

    @classmethod
    def from_summary(cls, summary: dict) -> "ViscoelasticModel":
        """Rebuild the model from the ``summary.json`` that ``ttsp build`` writes."""
        from .laws import ShiftLaw
        from .prony import PronySeries

        for key in ("prony", "shift_law"):
            if not isinstance(summary.get(key), dict):
                raise DataError(f"summary has no {key!r} section; it must come from 'ttsp build'")
        return cls(PronySeries.from_dict(summary["prony"]), ShiftLaw.from_dict(summary["shift_law"]))
