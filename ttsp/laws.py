"""Shift-factor laws: WLF, Arrhenius, WLF above Tg with Arrhenius below, VFT and polynomial.

A *shift law* gives the horizontal shift factor log10 a_T as a function of the absolute
temperature T about a reference temperature T_ref, where log10 a_T(T_ref) = 0. The sign
follows the convention of the package: log10 a_T > 0 below the reference temperature, the
reduced frequency is omega * a_T and the reduced time t / a_T.

Contents
--------
* a registry :data:`SHIFT_LAWS` (model name -> law class) of frozen law objects that evaluate
  themselves (:meth:`ShiftLaw.log10_aT`, :meth:`ShiftLaw.activation_energy_kJ_per_mol`,
  :meth:`ShiftLaw.fragility`), change reference temperature (:meth:`ShiftLaw.at_reference`)
  and export themselves (``to_dict`` / ``from_dict`` / ``_repr_html_``);
* :func:`make_shift_law` to build a law from known constants without any data;
* :func:`fit_shift_law`, a weighted least-squares fit (lmfit) of a law to a shift table, with
  an ``"auto"`` choice by the Bayesian information criterion, returning a :class:`ShiftLawFit`;
* conversions between WLF constants at two reference temperatures and between WLF and VFT
  (:func:`wlf_at_reference`, :func:`wlf_to_vft`, :func:`vft_to_wlf`).

References
----------
Williams, M. L., Landel, R. F. & Ferry, J. D. (1955). J. Am. Chem. Soc. 77, 3701-3707.
Ferry, J. D. (1980). Viscoelastic Properties of Polymers, 3rd ed., Wiley, ch. 11.
Schwarz, G. (1978). Estimating the dimension of a model. Ann. Stat. 6, 461-464.
Kass, R. E. & Raftery, A. E. (1995). Bayes factors. J. Am. Stat. Assoc. 90, 773-795.
"""

from __future__ import annotations

import abc
import html
import math
import warnings
from dataclasses import dataclass, field
from typing import Any, ClassVar, Iterable, Mapping

import numpy as np
import scipy.constants

from ._arrays import evenly_spaced_indices
from ._validation import bad_value, check_choice, check_finite, check_positive
from .exceptions import DataError, ExtrapolationWarning, FitError, FitQualityWarning

__all__ = [
    "GAS_CONSTANT_J_PER_MOL_K",
    "SHIFT_LAWS",
    "AUTO_MODELS",
    "ShiftLaw",
    "WLFLaw",
    "ArrheniusLaw",
    "WLFArrheniusLaw",
    "VFTLaw",
    "PolynomialLaw",
    "ShiftLawFit",
    "make_shift_law",
    "fit_shift_law",
    "law_prediction_stderr",
    "wlf_at_reference",
    "wlf_to_vft",
    "vft_to_wlf",
]

#: Molar gas constant R in J/(mol K), CODATA value as shipped by scipy.constants.
GAS_CONSTANT_J_PER_MOL_K: float = scipy.constants.R

_ZERO_CELSIUS_K: float = scipy.constants.zero_Celsius
_LN10: float = math.log(10.0)
#: log10 a_T per (1/K) for an activation energy of 1 kJ/mol: 1000 / (ln 10 * R).
_ARRHENIUS_K_PER_KJ_MOL: float = 1000.0 / (_LN10 * GAS_CONSTANT_J_PER_MOL_K)
#: Temperatures closer than this to an end of the valid range count as inside it.
_RANGE_TOLERANCE_K = 1e-9
#: Resolution floor of the fit (decades), so exact data compare by parameter count, not rounding.
_RESIDUAL_FLOOR_DECADES = 1e-9
#: At most this many interior rows are left out in turn when laws are compared by held-out
#: prediction (evenly spread in temperature): 40 errors estimate a mean square to about ±22 %,
#: and a campaign of 500 isotherms spent 70 s refitting each law 498 times.
MAX_HELD_OUT_ROWS = 40


# --------------------------------------------------------------------------------------
# small helpers
# --------------------------------------------------------------------------------------
def _as_temperature_array(value: Any, name: str = "temperature_K") -> np.ndarray:
    """Return ``value`` as a float array of positive, finite absolute temperatures."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise bad_value(name, "an array of numbers in kelvin", value) from None
    bad = ~np.isfinite(arr) | (arr <= 0)
    if np.any(bad):
        raise bad_value(name, "positive and finite (an absolute temperature in kelvin)",
                        float(arr[bad][0]))
    return arr


def _to_celsius(value_K: float) -> float:
    return float(value_K) - _ZERO_CELSIUS_K


def _check_range_K(name: str, value: Any) -> tuple[float, float] | None:
    """Validate a (low, high) temperature range in kelvin, or None."""
    if value is None:
        return None
    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError):
        raise bad_value(name, "None or a pair (low, high) of temperatures in kelvin", value) from None
    if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo <= hi):
        raise bad_value(name, "a pair (low, high) with 0 < low <= high, in kelvin", value)
    return (lo, hi)


def _poly_name(k: int) -> str:
    """Name of the k-th polynomial coefficient: a1_per_K, a2_per_K2, a3_per_K3, ..."""
    return "a1_per_K" if k == 1 else f"a{k}_per_K{k}"


def _poly_unit(k: int) -> str:
    return "1/K" if k == 1 else f"1/K^{k}"


def _fmt(value: float) -> str:
    return "nan" if value is None or not np.isfinite(value) else f"{value:.6g}"


def _html_table(caption: str, rows: Iterable[tuple[str, str]]) -> str:
    body = "".join(
        f"<tr><th style='text-align:left'>{html.escape(k)}</th>"
        f"<td style='text-align:left'>{html.escape(v)}</td></tr>"
        for k, v in rows
    )
    return f"<table><caption>{html.escape(caption)}</caption>{body}</table>"


def _plain(value: Any) -> Any:
    """Turn a number into a JSON-ready float (None for NaN or infinity)."""
    v = float(value)
    return v if np.isfinite(v) else None


# --------------------------------------------------------------------------------------
# the law objects
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ShiftLaw(abc.ABC):
    """A shift law log10 a_T(T) about a reference temperature (base class of the registry).

    Build one with :func:`make_shift_law`, with a registry class directly
    (``WLFLaw(373.15, {"C1": 17.44, "C2_K": 51.6})``) or by fitting with :func:`fit_shift_law`.

    Parameters
    ----------
    reference_temperature_K : float
        Reference temperature T_ref in K, where log10 a_T = 0.
    params : mapping of str to float
        The law's constants, named with their units (see each law class).
    valid_temperature_range_K : (float, float) or None
        Temperatures (K) the law is trusted over, usually the range of the fitted data.
        Evaluating outside it issues an :class:`~ttsp.exceptions.ExtrapolationWarning`.
        None means no range is known and no warning is given.

    Attributes
    ----------
    model : str
        Registry name of the law (``"wlf"``, ``"arrhenius"``, ...).
    """

    reference_temperature_K: float
    params: dict
    valid_temperature_range_K: tuple[float, float] | None = None

    model: ClassVar[str] = ""
    _units: ClassVar[dict] = {}

    # ---- construction ------------------------------------------------------------
    def __post_init__(self) -> None:
        tr = check_positive("reference_temperature_K", self.reference_temperature_K)
        if not isinstance(self.params, Mapping):
            raise bad_value("params", "a mapping of parameter names to numbers", self.params)
        expected = self._expected_names(self.params)
        given = set(self.params)
        if given != set(expected):
            missing = [n for n in expected if n not in given]
            extra = sorted(given - set(expected))
            detail = []
            if missing:
                detail.append("missing " + ", ".join(missing))
            if extra:
                detail.append("unknown " + ", ".join(extra))
            raise bad_value(
                f"the parameters of the {self.model!r} law",
                "exactly " + ", ".join(expected) + " (" + "; ".join(detail) + ")",
                sorted(given),
            )
        clean = {n: check_finite(n, self.params[n]) for n in expected}
        self._check_params(clean, tr)
        object.__setattr__(self, "reference_temperature_K", tr)
        object.__setattr__(self, "params", clean)
        object.__setattr__(
            self, "valid_temperature_range_K",
            _check_range_K("valid_temperature_range_K", self.valid_temperature_range_K),
        )

    def __hash__(self) -> int:
        return hash((self.model, self.reference_temperature_K,
                     tuple(self.params.items()), self.valid_temperature_range_K))

    # ---- hooks each law implements -------------------------------------------------
    @classmethod
    def _expected_names(cls, params: Mapping[str, Any] | None = None) -> tuple[str, ...]:
        return tuple(cls._units)

    @classmethod
    def _check_params(cls, p: Mapping[str, float], tr: float) -> None:
        """Raise DataError when the constants do not define a usable law."""

    @staticmethod
    @abc.abstractmethod
    def _evaluate(p: Mapping[str, float], T: np.ndarray, tr: float) -> np.ndarray:
        """log10 a_T for constants ``p`` (no checks; also used inside the fit)."""

    @staticmethod
    @abc.abstractmethod
    def _slope(p: Mapping[str, float], T: np.ndarray, tr: float) -> np.ndarray:
        """d log10 a_T / dT in 1/K."""

    @staticmethod
    def _lower_limit_K(p: Mapping[str, float], tr: float) -> float | None:
        """Temperature (K) at or below which the law is undefined, or None."""
        return None

    _limit_name: ClassVar[str] = ""

    # ---- evaluation ------------------------------------------------------------------
    @property
    def reference_temperature_C(self) -> float:
        """Reference temperature in degrees Celsius."""
        return _to_celsius(self.reference_temperature_K)

    def _prepare(self, temperature_K: Any, stacklevel: int) -> np.ndarray:
        T = _as_temperature_array(temperature_K)
        limit = self._lower_limit_K(self.params, self.reference_temperature_K)
        if limit is not None and np.any(T <= limit):
            raise bad_value("temperature_K", f"above {self._limit_name} = {limit:.6g} K",
                            float(T[T <= limit][0]))
        rng = self.valid_temperature_range_K
        if rng is not None and T.size:
            outside = (T < rng[0] - _RANGE_TOLERANCE_K) | (T > rng[1] + _RANGE_TOLERANCE_K)
            if np.any(outside):
                warnings.warn(
                    f"{int(outside.sum())} of {T.size} temperatures lie outside the valid range "
                    f"{rng[0]:.6g}-{rng[1]:.6g} K of this {self.model} law (for example "
                    f"{float(T[outside][0]):.6g} K); the value there is an extrapolation",
                    ExtrapolationWarning, stacklevel=stacklevel + 1,
                )
        return T

    def _log10_aT(self, temperature_K: Any, stacklevel: int) -> Any:
        T = self._prepare(temperature_K, stacklevel + 1)
        out = self._evaluate(self.params, T, self.reference_temperature_K)
        return float(out) if np.ndim(out) == 0 else out

    def log10_aT(self, temperature_K: Any) -> Any:
        """Decimal logarithm of the shift factor a_T at absolute temperature(s).

        Parameters
        ----------
        temperature_K : float or array_like
            Absolute temperature(s) in K.

        Returns
        -------
        float or numpy.ndarray
            log10 a_T (decades), same shape as the input; > 0 below the reference temperature.

        Raises
        ------
        DataError
            A temperature is not positive and finite, or lies at or below the law's divergence
            (WLF: T <= T_ref - C2; VFT: T <= T_inf).

        Warns
        -----
        ExtrapolationWarning
            A temperature lies outside ``valid_temperature_range_K``.
        """
        return self._log10_aT(temperature_K, stacklevel=2)

    def _activation_energy(self, temperature_K: Any, stacklevel: int) -> Any:
        T = self._prepare(temperature_K, stacklevel + 1)
        slope = self._slope(self.params, T, self.reference_temperature_K)
        out = -_LN10 * GAS_CONSTANT_J_PER_MOL_K * T ** 2 * slope / 1000.0
        return float(out) if np.ndim(out) == 0 else out

    def activation_energy_kJ_per_mol(self, temperature_K: Any) -> Any:
        """Apparent (flow) activation energy of the law at absolute temperature(s).

        E_a(T) = -ln(10) * R * T^2 * d log10 a_T / dT, equivalently R * d ln a_T / d(1/T)
        (Ferry 1980, ch. 11), with R = :data:`GAS_CONSTANT_J_PER_MOL_K`. For WLF this is
        E_a = ln(10) R C1 C2 T^2 / (C2 + T - T_ref)^2; for Arrhenius it is the constant E_a.

        Parameters
        ----------
        temperature_K : float or array_like
            Absolute temperature(s) in K.

        Returns
        -------
        float or numpy.ndarray
            Apparent activation energy in kJ/mol.
        """
        return self._activation_energy(temperature_K, stacklevel=2)

    def fragility(self, glass_transition_K: float) -> float:
        """Fragility (steepness) index m at the glass transition.

        m = d log10 tau / d(Tg/T) at T = Tg, with tau proportional to a_T, i.e.
        m = -Tg * d log10 a_T/dT (Tg) = E_a(Tg) / (ln(10) R Tg) (Boehmer, Ngai, Angell & Plazek,
        J. Chem. Phys. 99, 4201, 1993; IUPAC, Pure Appl. Chem. 85, 1017, 2013). For WLF
        constants referred to Tg this is m = C1g * Tg / C2g.

        Parameters
        ----------
        glass_transition_K : float
            Glass transition temperature Tg in K.

        Returns
        -------
        float
            Fragility index m (dimensionless).
        """
        tg = check_positive("glass_transition_K", glass_transition_K)
        T = self._prepare(tg, stacklevel=2)
        return float(-tg * self._slope(self.params, T, self.reference_temperature_K))

    def at_reference(self, reference_temperature_K: float) -> "ShiftLaw":
        """The same law referred to another reference temperature T_ref'.

        log10 a_T' (T) = log10 a_T(T) - log10 a_T(T_ref'), so that a_T'(T_ref') = 1. The valid
        range is kept. Each law rewrites its own constants (WLF: C1' = C1 C2 / (C2 + T_ref' -
        T_ref), C2' = C2 + T_ref' - T_ref, Ferry 1980; Arrhenius and VFT constants do not change;
        polynomial coefficients are re-expanded about T_ref').

        Parameters
        ----------
        reference_temperature_K : float
            The new reference temperature in K.
        """
        new_tr = check_positive("reference_temperature_K", reference_temperature_K)
        limit = self._lower_limit_K(self.params, self.reference_temperature_K)
        if limit is not None and new_tr <= limit:
            raise bad_value("reference_temperature_K", f"above {self._limit_name} = {limit:.6g} K",
                            reference_temperature_K)
        return type(self)(new_tr, self._params_at(new_tr), self.valid_temperature_range_K)

    @abc.abstractmethod
    def _params_at(self, new_tr: float) -> dict:
        """The constants of the same law about the reference ``new_tr`` (K)."""

    # ---- export ------------------------------------------------------------------------
    def to_dict(self) -> dict:
        """JSON-ready description: model, parameters, reference temperature (K and degC), range."""
        rng = self.valid_temperature_range_K
        return {
            "model": self.model,
            "parameters": {k: float(v) for k, v in self.params.items()},
            "reference_temperature_K": float(self.reference_temperature_K),
            "reference_temperature_C": self.reference_temperature_C,
            "valid_temperature_range_K": None if rng is None else [float(rng[0]), float(rng[1])],
            "valid_temperature_range_C": None if rng is None else [_to_celsius(rng[0]),
                                                                    _to_celsius(rng[1])],
        }

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> "ShiftLaw":
        """Rebuild a law from :meth:`to_dict` output (or the ``shift_law`` of a summary).

        Kelvin keys are used when present; otherwise the degC keys are converted.
        """
        if not isinstance(data, Mapping):
            raise bad_value("shift law description", "a mapping (as written by to_dict)", data)
        model = check_choice("model", data.get("model"), SHIFT_LAWS)
        law_cls = SHIFT_LAWS[model]
        if cls is not ShiftLaw and law_cls is not cls:
            raise bad_value("model", f"{cls.model!r} for {cls.__name__}.from_dict", model)
        if "parameters" not in data:
            raise bad_value("shift law description", "a mapping with a 'parameters' entry",
                            sorted(data))
        if data.get("reference_temperature_K") is not None:
            tr = data["reference_temperature_K"]
        elif data.get("reference_temperature_C") is not None:
            tr = check_finite("reference_temperature_C", data["reference_temperature_C"]) \
                + _ZERO_CELSIUS_K
        else:
            raise bad_value("shift law description",
                            "a mapping with reference_temperature_K or reference_temperature_C",
                            sorted(data))
        rng = data.get("valid_temperature_range_K")
        if rng is None and data.get("valid_temperature_range_C") is not None:
            rc = data["valid_temperature_range_C"]
            try:
                rng = tuple(float(v) + _ZERO_CELSIUS_K for v in rc)
            except (TypeError, ValueError):
                raise bad_value("valid_temperature_range_C", "None or a pair (low, high)",
                                rc) from None
        return law_cls(tr, dict(data["parameters"]), None if rng is None else tuple(rng))

    def _repr_html_(self) -> str:
        rows = [("model", self.model),
                ("reference temperature", f"{self.reference_temperature_K:.6g} K "
                                          f"({self.reference_temperature_C:.6g} °C)")]
        for name, value in self.params.items():
            rows.append((name, f"{value:.6g} {self._unit_of(name)}".rstrip()))
        rng = self.valid_temperature_range_K
        rows.append(("valid range", "not known" if rng is None else
                     f"{rng[0]:.6g}-{rng[1]:.6g} K"))
        return _html_table(f"{self.model} shift law", rows)

    def _unit_of(self, name: str) -> str:
        return self._units.get(name, "")


class WLFLaw(ShiftLaw):
    """Williams-Landel-Ferry law.

    log10 a_T = -C1 (T - T_ref) / (C2 + T - T_ref)

    (Williams, Landel & Ferry, J. Am. Chem. Soc. 77, 3701, 1955; Ferry 1980, ch. 11).
    It diverges at T_inf = T_ref - C2 and tends to -C1 for T >> T_ref. The "universal"
    constants referred to Tg are C1g = 17.44 and C2g = 51.6 K (WLF 1955).

    Parameters (in ``params``)
    --------------------------
    C1 : dimensionless (decades).
    C2_K : K, > 0.
    """

    model: ClassVar[str] = "wlf"
    _units: ClassVar[dict] = {"C1": "", "C2_K": "K"}
    _limit_name: ClassVar[str] = "the WLF divergence T_ref - C2"

    @classmethod
    def _check_params(cls, p, tr):
        if p["C2_K"] <= 0:
            raise bad_value("C2_K", "positive (the WLF divergence T_ref - C2 must lie below "
                                    "the reference temperature)", p["C2_K"])

    @staticmethod
    def _evaluate(p, T, tr):
        x = T - tr
        return -p["C1"] * x / (p["C2_K"] + x)

    @staticmethod
    def _slope(p, T, tr):
        return -p["C1"] * p["C2_K"] / (p["C2_K"] + T - tr) ** 2

    @staticmethod
    def _lower_limit_K(p, tr):
        return tr - p["C2_K"]

    def _params_at(self, new_tr):
        return wlf_at_reference(self.params["C1"], self.params["C2_K"],
                                self.reference_temperature_K, new_tr)

    @property
    def T_inf_K(self) -> float:
        """Divergence (Vogel) temperature T_inf = T_ref - C2 in K; unchanged by a new reference."""
        return self.reference_temperature_K - self.params["C2_K"]

    def at_glass_transition(self, glass_transition_K: float) -> "WLFLaw":
        """The same law with the glass transition Tg (K) as reference: constants C1g, C2g."""
        return self.at_reference(glass_transition_K)

    def to_vft(self) -> "VFTLaw":
        """The identical law written in VFT form (log10 form: B_K = C1 C2, T_inf = T_ref - C2)."""
        vft = wlf_to_vft(self.params["C1"], self.params["C2_K"], self.reference_temperature_K)
        return VFTLaw(self.reference_temperature_K, vft, self.valid_temperature_range_K)

    def free_volume(self, glass_transition_K: float) -> dict:
        """Free-volume figures at Tg from the Doolittle interpretation of WLF.

        f_g / B = 1 / (ln(10) C1g) and alpha_f / B = 1 / (ln(10) C1g C2g), where C1g, C2g are the
        constants referred to Tg (Doolittle, J. Appl. Phys. 22, 1471, 1951; Ferry 1980, ch. 11).
        B is the Doolittle constant, usually taken as 1.

        Parameters
        ----------
        glass_transition_K : float
            Glass transition temperature Tg in K.

        Returns
        -------
        dict
            ``glass_transition_K``, ``C1g``, ``C2g_K``, ``fractional_free_volume_over_B``
            (dimensionless) and ``expansion_coefficient_over_B_per_K`` (1/K).
        """
        g = self.at_glass_transition(glass_transition_K).params
        c1g, c2g = g["C1"], g["C2_K"]
        return {
            "glass_transition_K": float(glass_transition_K),
            "C1g": c1g,
            "C2g_K": c2g,
            "fractional_free_volume_over_B": 1.0 / (_LN10 * c1g),
            "expansion_coefficient_over_B_per_K": 1.0 / (_LN10 * c1g * c2g),
        }


class ArrheniusLaw(ShiftLaw):
    """Arrhenius law.

    ln a_T = (E_a / R) (1/T - 1/T_ref), i.e. log10 a_T = E_a / (ln(10) R) (1/T - 1/T_ref)

    (Arrhenius, Z. Phys. Chem. 4, 226, 1889; Ferry 1980, ch. 11), T in K and R =
    :data:`GAS_CONSTANT_J_PER_MOL_K`.

    Parameters (in ``params``)
    --------------------------
    activation_energy_kJ_per_mol : kJ/mol.
    """

    model: ClassVar[str] = "arrhenius"
    _units: ClassVar[dict] = {"activation_energy_kJ_per_mol": "kJ/mol"}

    @staticmethod
    def _evaluate(p, T, tr):
        return p["activation_energy_kJ_per_mol"] * _ARRHENIUS_K_PER_KJ_MOL * (1.0 / T - 1.0 / tr)

    @staticmethod
    def _slope(p, T, tr):
        return -p["activation_energy_kJ_per_mol"] * _ARRHENIUS_K_PER_KJ_MOL / T ** 2

    def _params_at(self, new_tr):
        return dict(self.params)


class WLFArrheniusLaw(ShiftLaw):
    """WLF above the glass transition, Arrhenius below it, continuous in value at Tg.

    With W(T) = -C1 (T - T_ref) / (C2 + T - T_ref) and k = E_a / (ln(10) R),

        h(T) = W(T)                            for T >= Tg
        h(T) = W(Tg) + k (1/T - 1/Tg)          for T <  Tg
        log10 a_T = h(T) - h(T_ref)

    When T_ref >= Tg (the usual case) h(T_ref) = 0 and the WLF branch is the plain WLF law about
    T_ref. The slope is continuous at Tg only if E_a = ln(10) R C1 C2 Tg^2 / (C2 + Tg - T_ref)^2;
    otherwise the law has a kink there. A common engineering form (e.g. asphalt binders,
    Christensen & Anderson, J. Assoc. Asphalt Paving Technol. 61, 67, 1992; WLF part: Williams,
    Landel & Ferry 1955; Arrhenius part: Ferry 1980, ch. 11).

    Parameters (in ``params``)
    --------------------------
    C1 : dimensionless (decades), WLF branch about T_ref.
    C2_K : K, WLF branch about T_ref; C2 + Tg - T_ref > 0 so that WLF is finite above Tg.
    activation_energy_kJ_per_mol : kJ/mol, Arrhenius branch below Tg.
    glass_transition_K : K, the break temperature Tg.
    """

    model: ClassVar[str] = "wlf-arrhenius"
    _units: ClassVar[dict] = {"C1": "", "C2_K": "K", "activation_energy_kJ_per_mol": "kJ/mol",
                              "glass_transition_K": "K"}

    @classmethod
    def _check_params(cls, p, tr):
        tg = check_positive("glass_transition_K", p["glass_transition_K"])
        if p["C2_K"] + tg - tr <= 0:
            raise bad_value("C2_K", f"greater than T_ref - Tg = {tr - tg:.6g} K (so that the WLF "
                                    "branch stays finite above Tg)", p["C2_K"])

    @staticmethod
    def _h(p, T, tr):
        c1, c2 = p["C1"], p["C2_K"]
        tg = p["glass_transition_K"]
        k = p["activation_energy_kJ_per_mol"] * _ARRHENIUS_K_PER_KJ_MOL
        tw = np.maximum(T, tg)
        wlf = -c1 * (tw - tr) / (c2 + tw - tr)
        return wlf + np.where(T < tg, k * (1.0 / T - 1.0 / tg), 0.0)

    @classmethod
    def _evaluate(cls, p, T, tr):
        return cls._h(p, T, tr) - cls._h(p, np.asarray(float(tr)), tr)

    @staticmethod
    def _slope(p, T, tr):
        c1, c2 = p["C1"], p["C2_K"]
        k = p["activation_energy_kJ_per_mol"] * _ARRHENIUS_K_PER_KJ_MOL
        return np.where(T >= p["glass_transition_K"], -c1 * c2 / (c2 + T - tr) ** 2, -k / T ** 2)

    def _params_at(self, new_tr):
        p = self.params
        c2_new = p["C2_K"] + new_tr - self.reference_temperature_K
        if abs(c2_new) < 1e-9 * self.reference_temperature_K:
            raise bad_value("reference_temperature_K",
                            "different from the WLF divergence T_ref - C2", new_tr)
        out = dict(p)
        out["C1"] = p["C1"] * p["C2_K"] / c2_new
        out["C2_K"] = c2_new
        return out


class VFTLaw(ShiftLaw):
    """Vogel-Fulcher-Tammann law, written in decimal logarithms.

    log10 a_T = B / (T - T_inf) - B / (T_ref - T_inf)

    (Vogel, Phys. Z. 22, 645, 1921; Fulcher, J. Am. Ceram. Soc. 8, 339, 1925; Tammann & Hesse,
    Z. Anorg. Allg. Chem. 156, 245, 1926). ``B_K`` here is the **log10** constant: it equals
    C1 C2 of the equivalent WLF law (T_inf = T_ref - C2). The natural-log form
    ln a_T = B' / (T - T_inf) - ... has B' = ln(10) B_K = 2.303 C1 C2.

    Parameters (in ``params``)
    --------------------------
    B_K : K (log10 form).
    T_inf_K : K, the Vogel temperature, below the reference temperature.
    """

    model: ClassVar[str] = "vft"
    _units: ClassVar[dict] = {"B_K": "K", "T_inf_K": "K"}
    _limit_name: ClassVar[str] = "the VFT divergence T_inf"

    @classmethod
    def _check_params(cls, p, tr):
        if p["T_inf_K"] >= tr:
            raise bad_value("T_inf_K", f"below the reference temperature {tr:.6g} K", p["T_inf_K"])

    @staticmethod
    def _evaluate(p, T, tr):
        b, ti = p["B_K"], p["T_inf_K"]
        return b / (T - ti) - b / (tr - ti)

    @staticmethod
    def _slope(p, T, tr):
        return -p["B_K"] / (T - p["T_inf_K"]) ** 2

    @staticmethod
    def _lower_limit_K(p, tr):
        return p["T_inf_K"]

    def _params_at(self, new_tr):
        return dict(self.params)

    def to_wlf(self) -> WLFLaw:
        """The identical law in WLF form about the same reference (C2 = T_ref - T_inf, C1 = B/C2)."""
        wlf = vft_to_wlf(self.params["B_K"], self.params["T_inf_K"], self.reference_temperature_K)
        return WLFLaw(self.reference_temperature_K, wlf, self.valid_temperature_range_K)


class PolynomialLaw(ShiftLaw):
    """Polynomial law in (T - T_ref), zero at the reference temperature.

    log10 a_T = a1 (T - T_ref) + a2 (T - T_ref)^2 + ... + an (T - T_ref)^n

    An empirical law used for asphalt concrete and bituminous mixes, second order by default
    (compared with WLF, Arrhenius and others in e.g. Materials 15, 4325, 2022). It must not
    be extrapolated.

    Parameters (in ``params``)
    --------------------------
    a1_per_K : 1/K; a2_per_K2 : 1/K^2; a3_per_K3 : 1/K^3; ... (contiguous from a1).
    """

    model: ClassVar[str] = "polynomial"

    @classmethod
    def _expected_names(cls, params=None):
        order = 0
        if params:
            for name in params:
                if isinstance(name, str) and name.startswith("a"):
                    digits = name[1:].split("_", 1)[0]
                    if digits.isdigit() and _poly_name(int(digits)) == name:
                        order = max(order, int(digits))
        return tuple(_poly_name(k) for k in range(1, max(order, 1) + 1))

    @property
    def order(self) -> int:
        """Polynomial order n."""
        return len(self.params)

    def _unit_of(self, name):
        return _poly_unit(int(name[1:].split("_", 1)[0]))

    @staticmethod
    def _coefficients(p):
        return np.array([0.0] + [p[_poly_name(k)] for k in range(1, len(p) + 1)])

    @classmethod
    def _evaluate(cls, p, T, tr):
        return np.polynomial.polynomial.polyval(T - tr, cls._coefficients(p))

    @classmethod
    def _slope(cls, p, T, tr):
        c = np.polynomial.polynomial.polyder(cls._coefficients(p))
        return np.polynomial.polynomial.polyval(T - tr, c)

    def _params_at(self, new_tr):
        # P(x) about T_ref; about T_ref' = T_ref + d:  P(y + d) - P(d), y = T - T_ref'.
        d = new_tr - self.reference_temperature_K
        c = self._coefficients(self.params)
        n = len(c) - 1
        shifted = np.zeros(n + 1)
        for j in range(n + 1):
            for k in range(j, n + 1):
                shifted[j] += c[k] * math.comb(k, j) * d ** (k - j)
        return {_poly_name(k): float(shifted[k]) for k in range(1, n + 1)}


#: Registry of shift laws: model name -> law class.
SHIFT_LAWS: dict[str, type[ShiftLaw]] = {
    "wlf": WLFLaw,
    "arrhenius": ArrheniusLaw,
    "wlf-arrhenius": WLFArrheniusLaw,
    "vft": VFTLaw,
    "polynomial": PolynomialLaw,
}

#: Laws compared by ``fit_shift_law(model="auto")``, in order of preference on a tie.
#: VFT is left out: it is the same law as WLF written with other constants (T_inf = T_ref - C2,
#: B = C1 C2), so it would always tie with WLF; convert a WLF result with ``.to_vft()``.
AUTO_MODELS: tuple[str, ...] = ("wlf", "arrhenius", "polynomial", "wlf-arrhenius")


def make_shift_law(model: str, reference_temperature_K: float, *,
                   valid_temperature_range_K: tuple[float, float] | None = None,
                   **params: float) -> ShiftLaw:
    """Build a shift law from known constants, without data.

    Parameters
    ----------
    model : str
        One of ``"wlf"``, ``"arrhenius"``, ``"wlf-arrhenius"``, ``"vft"``, ``"polynomial"``.
    reference_temperature_K : float
        Reference temperature in K.
    valid_temperature_range_K : (float, float), optional
        Range (K) over which the constants are trusted; outside it evaluation warns.
    **params : float
        The law's constants with their unit-suffixed names, e.g. ``C1=17.44, C2_K=51.6``
        (see the law classes in :data:`SHIFT_LAWS`).

    Returns
    -------
    ShiftLaw

    Examples
    --------
    >>> law = make_shift_law("wlf", 373.15, C1=17.44, C2_K=51.6)
    >>> round(law.log10_aT(423.15), 4)
    -8.5827
    """
    check_choice("model", model, SHIFT_LAWS)
    return SHIFT_LAWS[model](reference_temperature_K, dict(params), valid_temperature_range_K)


# --------------------------------------------------------------------------------------
# conversions
# --------------------------------------------------------------------------------------
def wlf_at_reference(C1: float, C2_K: float, old_reference_K: float,
                     new_reference_K: float) -> dict:
    """WLF constants referred to another reference temperature.

    C1' = C1 C2 / (C2 + T' - T) and C2' = C2 + T' - T (Ferry 1980, ch. 11). The product C1 C2
    and T_inf = T - C2 do not change.

    Parameters
    ----------
    C1 : float
        C1 at the old reference (dimensionless).
    C2_K : float
        C2 at the old reference, in K.
    old_reference_K, new_reference_K : float
        Old reference T and new reference T', in K.

    Returns
    -------
    dict
        ``{"C1": C1', "C2_K": C2'}``.

    Raises
    ------
    DataError
        The new reference is at or below the divergence T_inf = T - C2.
    """
    c1 = check_finite("C1", C1)
    c2 = check_positive("C2_K", C2_K)
    t_old = check_positive("old_reference_K", old_reference_K)
    t_new = check_positive("new_reference_K", new_reference_K)
    c2_new = c2 + t_new - t_old
    if c2_new <= 0:
        raise bad_value("new_reference_K",
                        f"above the WLF divergence T - C2 = {t_old - c2:.6g} K", new_reference_K)
    return {"C1": c1 * c2 / c2_new, "C2_K": c2_new}


def wlf_to_vft(C1: float, C2_K: float, reference_temperature_K: float) -> dict:
    """VFT constants (log10 form) of a WLF law: T_inf = T_ref - C2 and B = C1 C2.

    log10 a_T = B/(T - T_inf) - B/(T_ref - T_inf) equals the WLF expression identically
    (Ferry 1980, ch. 11). For the natural-log VFT form multiply B by ln(10) (B' = 2.303 C1 C2).

    Returns
    -------
    dict
        ``{"B_K": C1*C2, "T_inf_K": T_ref - C2}``, both in K.
    """
    c1 = check_finite("C1", C1)
    c2 = check_positive("C2_K", C2_K)
    tr = check_positive("reference_temperature_K", reference_temperature_K)
    return {"B_K": c1 * c2, "T_inf_K": tr - c2}


def vft_to_wlf(B_K: float, T_inf_K: float, reference_temperature_K: float) -> dict:
    """WLF constants of a VFT law in log10 form: C2 = T_ref - T_inf and C1 = B / C2.

    Returns
    -------
    dict
        ``{"C1": B/(T_ref - T_inf), "C2_K": T_ref - T_inf}``.

    Raises
    ------
    DataError
        T_inf is not below the reference temperature.
    """
    b = check_finite("B_K", B_K)
    ti = check_finite("T_inf_K", T_inf_K)
    tr = check_positive("reference_temperature_K", reference_temperature_K)
    if ti >= tr:
        raise bad_value("T_inf_K", f"below the reference temperature {tr:.6g} K", T_inf_K)
    return {"C1": b / (tr - ti), "C2_K": tr - ti}


# --------------------------------------------------------------------------------------
# fitting
# --------------------------------------------------------------------------------------
#: the solver of the nonlinear laws, and of any law with bounds
_LMFIT_METHOD = "lmfit.minimize, leastsq (Levenberg-Marquardt)"
#: the solver of the linear laws without bounds
_DIRECT_METHOD = "weighted linear least squares, solved directly (numpy lstsq)"


@dataclass(frozen=True)
class ShiftLawFit:
    """Result of :func:`fit_shift_law`: the fitted law, its uncertainties and the fit figures.

    Attributes
    ----------
    law : ShiftLaw
        The fitted law; its valid range is the temperature range of the data.
    params, stderr : dict of str to float
        Fitted constants and their standard errors (units as in the law's names). The
        standard errors come from the covariance matrix scaled by the reduced chi-square
        (lmfit's default), so they reflect the actual scatter even when the supplied shift
        stderr are only relative. A fixed parameter has stderr 0.0; NaN when it could not
        be estimated. A fitted Tg (``glass_transition_K``) sits at a kink of the law: its
        standard error from the local linearisation is optimistic; read it as a resolution
        of about the spacing of the data temperatures.
    correlation : dict of (str, str) to float
        Correlation coefficient of each pair of free parameters.
    residuals : numpy.ndarray
        Data minus fitted log10 a_T (decades), one per input point, in input order.
    temperature_K, log10_aT_data, log10_aT_stderr : numpy.ndarray
        The shift table as fitted (stderr is NaN where not given).
    chi_square, reduced_chi_square, aic, bic : float
        Weighted chi-square (sum of squared residuals / stderr^2; unweighted when no stderr),
        chi-square per degree of freedom, and AIC = n ln(chi2/n) + 2k,
        BIC = n ln(chi2/n) + k ln n (Akaike, IEEE Trans. Autom. Control 19, 716, 1974;
        Schwarz, Ann. Stat. 6, 461, 1978). chi2 is floored at a residual of 1e-9 decades
        per point so that exact data compare by parameter count.
    n_points, n_free : int
        Points used in the fit and free parameters. A row at the reference temperature
        with log10 a_T = 0 is satisfied by every law by construction; it carries no
        information and is not counted in n_points (its residual is still reported).
    fixed_parameters : tuple of str
        Parameters held fixed.
    derived, derived_stderr : dict of str to float
        Derived figures and their standard errors by propagation through the covariance
        matrix. WLF family: ``T_inf_K`` = T_ref - C2 and ``C1_times_C2_K`` (the VFT constant B),
        both unchanged by a change of reference temperature, and ``C1_over_C2_per_K``
        = -d log10 a_T/dT at T_ref. C1 and C2 are strongly and positively correlated
        (typically > 0.95), so their ratio is usually determined about as well as the better
        of the two and the product less well; quote the pair with its correlation.
        VFT: the equivalent ``C1`` and ``C2_K``.
    candidates : tuple of dict
        For ``model="auto"``: every law tried, with ``status``, ``n_free``, ``chi_square``,
        ``aic``, ``bic`` and ``delta_bic`` to the chosen one. Otherwise the one law fitted.
    reason : str
        One sentence saying why this law was chosen.
    success : bool, message : str, nfev : int, method : str
        Solver provenance: lmfit ``leastsq`` (Levenberg-Marquardt) for the nonlinear laws and
        for any law with bounds; a direct weighted linear least-squares solve (``nfev`` 0) for
        the Arrhenius and polynomial laws without bounds.
    weighting : str
        ``"covariance"`` (generalised least squares with the shifts' covariance), ``"stderr"``
        (each residual over its stderr) or ``"none"``.
    degrees_of_freedom : int
        Weighted residuals minus free parameters (at least 1, or the law is not fitted): the
        divisor of the reduced chi-square. A covariance with a gauge direction of zero variance
        counts one residual fewer than ``n_points``.
    notes : tuple of str
        Doubts about the fit (a parameter at a bound, uncertainties not estimable); each is
        also issued as a :class:`~ttsp.exceptions.FitQualityWarning`.
    """

    law: ShiftLaw
    params: dict
    stderr: dict
    correlation: dict
    residuals: np.ndarray
    temperature_K: np.ndarray
    log10_aT_data: np.ndarray
    log10_aT_stderr: np.ndarray
    chi_square: float
    reduced_chi_square: float
    aic: float
    bic: float
    n_points: int
    n_free: int
    fixed_parameters: tuple
    derived: dict
    derived_stderr: dict
    candidates: tuple
    reason: str
    success: bool = True
    message: str = ""
    nfev: int = 0
    notes: tuple = ()
    method: str = field(default=_LMFIT_METHOD)
    weighting: str = "stderr"
    degrees_of_freedom: int = 1

    @property
    def model(self) -> str:
        """Registry name of the fitted law."""
        return self.law.model

    def log10_aT(self, temperature_K: Any) -> Any:
        """log10 a_T of the fitted law; see :meth:`ShiftLaw.log10_aT`."""
        return self.law._log10_aT(temperature_K, stacklevel=2)

    def activation_energy_kJ_per_mol(self, temperature_K: Any) -> Any:
        """Apparent activation energy (kJ/mol) of the fitted law; see :class:`ShiftLaw`."""
        return self.law._activation_energy(temperature_K, stacklevel=2)

    def to_dict(self) -> dict:
        """JSON-ready summary: the law's keys plus stderr, statistics and the choice made."""
        out = self.law.to_dict()
        out["parameter_stderr"] = {k: _plain(v) for k, v in self.stderr.items()}
        out["fixed_parameters"] = list(self.fixed_parameters)
        out["correlation"] = [{"parameters": [a, b], "value": _plain(r)}
                              for (a, b), r in self.correlation.items()]
        out["derived"] = {k: _plain(v) for k, v in self.derived.items()}
        out["derived_stderr"] = {k: _plain(v) for k, v in self.derived_stderr.items()}
        out["statistics"] = {
            "n_points": int(self.n_points), "n_free": int(self.n_free),
            "chi_square": _plain(self.chi_square),
            "reduced_chi_square": _plain(self.reduced_chi_square),
            "degrees_of_freedom": int(self.degrees_of_freedom),
            "aic": _plain(self.aic), "bic": _plain(self.bic),
            "rms_residual_log10_aT": _plain(np.sqrt(np.mean(self.residuals ** 2))),
        }
        out["selection"] = {"candidates": [dict(c) for c in self.candidates],
                            "reason": self.reason}
        out["solver"] = {"method": self.method, "weighting": self.weighting,
                         "success": bool(self.success), "message": self.message,
                         "nfev": int(self.nfev)}
        out["notes"] = list(self.notes)
        return out

    def to_frame(self):
        """Tidy per-point table: temperature, data, stderr, fitted value and residual."""
        import pandas as pd

        fitted = self.log10_aT_data - self.residuals
        return pd.DataFrame({
            "temperature_K": self.temperature_K,
            "temperature_C": self.temperature_K - _ZERO_CELSIUS_K,
            "log10_aT": self.log10_aT_data,
            "log10_aT_stderr": self.log10_aT_stderr,
            "log10_aT_fitted": fitted,
            "residual_log10_aT": self.residuals,
        })

    def _repr_html_(self) -> str:
        law = self.law
        rows = [("model", law.model),
                ("reference temperature", f"{law.reference_temperature_K:.6g} K "
                                          f"({law.reference_temperature_C:.6g} °C)")]
        for name, value in self.params.items():
            unit = law._unit_of(name)
            if name in self.fixed_parameters:
                text = f"{value:.6g} {unit} (fixed)"
            else:
                text = f"{value:.6g} ± {_fmt(self.stderr[name])} {unit}"
            rows.append((name, " ".join(text.split())))
        for name, value in self.derived.items():
            rows.append((name, f"{value:.6g} ± {_fmt(self.derived_stderr.get(name))}"))
        rng = law.valid_temperature_range_K
        rows += [("valid range", f"{rng[0]:.6g}-{rng[1]:.6g} K"),
                 ("points / free parameters", f"{self.n_points} / {self.n_free}"),
                 ("chi-square (reduced)", f"{self.chi_square:.4g} ({self.reduced_chi_square:.4g})"),
                 ("AIC / BIC", f"{self.aic:.4g} / {self.bic:.4g}"),
                 ("why this law", self.reason)]
        rows += [("note", n) for n in self.notes]
        return _html_table(f"fitted {law.model} shift law", rows)


@dataclass(frozen=True)
class _Outcome:
    """One law fitted to the table (internal)."""

    cls: type
    params: dict
    stderr: dict
    correlation: dict
    covariance: np.ndarray | None
    free_names: tuple
    chi_square: float
    success: bool
    message: str
    nfev: int
    notes: tuple
    method: str = _LMFIT_METHOD


class _Weighting:
    """How residuals r of the shift table are weighed: r_i/s_i, or whitened by a covariance.

    With a covariance C of the shifts (correlated, as shifts found along a chain of
    overlapping isotherms are) the fit minimises rᵀC⁻¹r, generalised least squares (Aitken,
    Proc. R. Soc. Edinburgh 55, 42, 1935): r ↦ W r with WᵀW = C⁺ from the eigen-decomposition
    of the correlation matrix D⁻¹CD⁻¹ (D the standard deviations, so that the cut does not
    depend on how precise each shift is). Directions of zero variance (a gauge condition such as
    log10 a_T = 0 interpolated at the reference) carry no information about the law and are
    dropped, so W has ``size`` ≤ n rows.
    """

    def __init__(self, w: np.ndarray | None = None, covariance: np.ndarray | None = None):
        self.w = w
        self.W = None
        if covariance is not None:
            # on the correlation matrix, so that a very precise shift is not mistaken for a
            # direction of zero variance: C = D R D with D the standard deviations
            d = np.sqrt(np.diag(covariance))
            R = covariance / np.outer(d, d)
            vals, vecs = np.linalg.eigh(0.5 * (R + R.T))
            tol = _COVARIANCE_RANK_TOLERANCE * R.shape[0]
            if vals.min() < -tol:
                raise bad_value("covariance", "positive semi-definite (a covariance matrix)",
                                f"an eigenvalue {vals.min():.3g} of its correlation matrix")
            keep = vals > tol
            self.W = (vecs[:, keep] / np.sqrt(vals[keep])).T / d

    @property
    def size(self) -> int:
        """Number of weighted residuals."""
        return self.w.size if self.W is None else self.W.shape[0]

    @property
    def total(self) -> float:
        """Σ of squared weights (the trace of WᵀW)."""
        return float(np.sum((self.w if self.W is None else self.W) ** 2))

    def __call__(self, a: np.ndarray, axis: int = -1) -> np.ndarray:
        """Weighted ``a`` along the table axis ``axis``."""
        if np.ndim(a) == 1:     # one residual vector: the solver's inner loop
            return a * self.w if self.W is None else self.W @ a
        if self.W is None:
            shape = [1] * np.ndim(a)
            shape[axis] = -1
            return a * self.w.reshape(shape)
        return np.moveaxis(np.tensordot(self.W, np.moveaxis(a, axis, 0), axes=1), 0, axis)


#: eigenvalues of a shift correlation matrix below this (times its size) count as zero
_COVARIANCE_RANK_TOLERANCE = 1e-10


#: largest (trials x table rows) solved as one batch by :func:`_grid_lstsq`
_GRID_BATCH = 200_000


def _grid_lstsq(columns: Mapping[str, np.ndarray], y: np.ndarray, weigh: _Weighting,
                fixed: Mapping[str, float]) -> tuple[dict, np.ndarray]:
    """Weighted linear least squares y ~ Σ c_n col_n for a whole grid of trials at once.

    ``columns`` maps each coefficient name to its column: shape (G, n) for one column per trial
    (the trials differ in a nonlinear parameter held fixed on a grid), or (n,) for a column
    shared by all trials. Coefficients named in ``fixed`` are held. Returns the coefficients,
    name -> (G,) array, and the weighted sums of squares (G,), inf where a trial's columns are
    not finite.
    """
    G = max((np.shape(c)[0] for c in columns.values() if np.ndim(c) == 2), default=1)
    n = y.size
    if G > 1 and G * n > _GRID_BATCH:   # many trials on a long table: in halves, bounded memory
        h = G // 2
        parts = [_grid_lstsq({k: (c[sl] if np.ndim(c) == 2 else c) for k, c in columns.items()},
                             y, weigh, fixed) for sl in (slice(0, h), slice(h, G))]
        return ({k: np.concatenate([parts[0][0][k], parts[1][0][k]]) for k in parts[0][0]},
                np.concatenate([parts[0][1], parts[1][1]]))
    cols = {name: np.broadcast_to(np.asarray(c, dtype=float), (G, n)) for name, c in
            columns.items()}
    ok = np.all([np.all(np.isfinite(c), axis=1) for c in cols.values()], axis=0)
    r = np.broadcast_to(y, (G, n)).copy()
    coefs = {}
    for name, col in cols.items():
        if name in fixed:
            coefs[name] = np.full(G, float(fixed[name]))
            r -= fixed[name] * np.where(ok[:, None], col, 0.0)
    rw = weigh(r)
    free = [name for name in cols if name not in fixed]
    if free:
        A = np.stack([np.where(ok[:, None], cols[name], 0.0) for name in free], axis=-1)
        A = weigh(A, axis=1)                                        # (G, n, k)
        sol = _batched_lstsq(A, rw)
        rw = rw - np.einsum("gnk,gk->gn", A, sol)
        coefs.update({name: sol[:, i] for i, name in enumerate(free)})
    sse = np.einsum("gn,gn->g", rw, rw)
    sse[~(ok & np.isfinite(sse))] = np.inf
    return coefs, sse


def _batched_lstsq(A: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Least-squares solutions of A[g] x = b[g] for a stack of small problems (G, n, k).

    A single problem goes to LAPACK's lstsq (the direct solve of a linear law is a final
    answer). A grid of start values is solved through its k × k normal equations at once; the
    trials whose equations are singular or badly conditioned (condition above 1e10, so that
    squaring it loses the answer) fall back to the pseudo-inverse.
    """
    if A.shape[0] == 1:
        return np.linalg.lstsq(A[0], b[0], rcond=None)[0][None, :]
    AtA = np.einsum("gnk,gnl->gkl", A, A)
    Atb = np.einsum("gnk,gn->gk", A, b)
    sol = np.full(Atb.shape, np.nan)
    with np.errstate(all="ignore"):
        if AtA.shape[1] == 2:    # eigenvalues of a symmetric 2 x 2 matrix in closed form
            tr = AtA[:, 0, 0] + AtA[:, 1, 1]
            det = AtA[:, 0, 0] * AtA[:, 1, 1] - AtA[:, 0, 1] * AtA[:, 1, 0]
            root = np.sqrt(np.maximum(tr * tr - 4.0 * det, 0.0))
            cond = (tr + root) / (tr - root)
        else:
            cond = np.linalg.cond(AtA) if AtA.shape[1] > 1 else np.ones(AtA.shape[0])
        good = np.isfinite(cond) & (cond < 1e10) & (np.abs(AtA[:, 0, 0]) > 0)
        if good.any():
            sol[good] = np.linalg.solve(AtA[good], Atb[good][..., None])[..., 0]
    bad = ~(good & np.all(np.isfinite(sol), axis=1))
    if bad.any():
        sol[bad] = np.einsum("gkn,gn->gk", np.linalg.pinv(A[bad]), b[bad])
    return sol


def _best_trials(coefs: Mapping[str, np.ndarray], sse: np.ndarray, extra: Mapping[str, Any]):
    """The grid's trials as (sse, {name: value}) pairs, best first, one at a time (callers
    take the first few of hundreds); ``extra`` adds the grid's own (nonlinear) parameters, each
    an array over the trials."""
    merged = {**coefs, **extra}
    for g in np.argsort(sse, kind="stable"):
        yield float(sse[g]), {k: float(v[g]) for k, v in merged.items()}


def _weighted_lstsq(columns: Mapping[str, np.ndarray], y: np.ndarray, weigh: _Weighting,
                    fixed: Mapping[str, float]) -> dict:
    """Weighted linear least squares y ~ Σ c_n col_n with some c_n fixed: the coefficients."""
    coefs, _ = _grid_lstsq(columns, y, weigh, fixed)
    return {k: float(v[0]) for k, v in coefs.items()}


#: steps of the start grids above a lower limit: 0.5 ... 1e4 K, 70 of them log-spaced
_GRID_STEPS_K = np.geomspace(0.5, 1e4, 70)


def _grid_above(lower: float, bounds: tuple[float, float]) -> np.ndarray:
    """Trial values lower + (0.5 ... 1e4) K, restricted to ``bounds``."""
    grid = lower + _GRID_STEPS_K
    lo, hi = bounds
    grid = grid[(grid > lo) & (grid < hi)]
    if grid.size == 0:
        lo2 = max(lo, lower)
        if np.isfinite(hi):
            grid = np.linspace(lo2, hi, 12)[1:-1] if hi > lo2 else np.array([])
        else:
            grid = lo2 + _GRID_STEPS_K
    return grid


def _linear_columns(cls: type, T, tr, order) -> dict:
    """The columns of a law that is linear in its constants (Arrhenius, polynomial)."""
    if cls is ArrheniusLaw:
        return {"activation_energy_kJ_per_mol": _ARRHENIUS_K_PER_KJ_MOL * (1 / T - 1 / tr)}
    return {_poly_name(k): (T - tr) ** k for k in range(1, order + 1)}


def _correlations(cov: np.ndarray, free) -> dict:
    """Correlation coefficient of each pair of free parameters, NaN where a variance is 0."""
    sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    corr = {}
    for i, a in enumerate(free):
        for j in range(i + 1, len(free)):
            denom = sd[i] * sd[j]
            corr[(a, free[j])] = float(cov[i, j] / denom) if denom > 0 else float("nan")
    return corr


def _linear_outcome(cls: type, T, y, weigh, tr, fixed, names, free, order) -> _Outcome:
    """Weighted linear least squares, solved directly, for a law linear in its constants.

    The covariance is the one lmfit reports for the same problem: (AᵀA)⁻¹ of the weighted
    design matrix A scaled by the reduced chi-square χ²/max(1, m − k), m weighted residuals.
    """
    cols = _linear_columns(cls, T, tr, order)
    coefs = _weighted_lstsq(cols, y, weigh, fixed)
    values = {n: float(coefs[n]) for n in names}
    with np.errstate(all="ignore"):
        r = weigh(cls._evaluate(values, T, tr) - y)
    chi2 = float(r @ r)
    A = weigh(np.column_stack([cols[n] for n in free]), axis=0)
    stderr = {n: 0.0 for n in names}
    corr: dict = {}
    notes = []
    try:
        cov = np.linalg.inv(A.T @ A) * (chi2 / max(1, weigh.size - len(free)))
    except np.linalg.LinAlgError:
        cov = None
        notes.append("parameter uncertainties could not be estimated (singular covariance)")
    if cov is not None:
        sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
        stderr.update({n: float(v) for n, v in zip(free, sd)})
        corr = _correlations(cov, free)
    return _Outcome(cls, values, stderr, corr, cov, free, chi2, True,
                    "linear least squares, solved directly", 0, tuple(notes), _DIRECT_METHOD)


#: laws linear in their constants: fitted by direct linear least squares when unbounded
_LINEAR_LAWS = (ArrheniusLaw, PolynomialLaw)


def _start_values(cls: type, T, y, weigh, tr, fixed, bounds, order) -> list[dict]:
    """Starting values, best first, from separable grids: every trial of the nonlinear
    parameter(s) on a grid, the linear ones solved for each trial (all trials in one batch)."""
    if cls in _LINEAR_LAWS:
        return [_weighted_lstsq(_linear_columns(cls, T, tr, order), y, weigh, fixed)]
    if cls in (WLFLaw, VFTLaw):
        x = T - tr
        tmin = float(T.min())
        if cls is WLFLaw:
            if "C2_K" in fixed:
                c2_grid = np.array([fixed["C2_K"]])
            else:
                c2_grid = _grid_above(max(0.0, tr - tmin), bounds["C2_K"])
                # the classical linearisation (T-Tr)/log aT = -C2/C1 - (T-Tr)/C1 as one more trial
                ok = (np.abs(y) > 1e-12) & (x != 0)
                if ok.sum() >= 2:
                    s, i = np.polyfit(x[ok], x[ok] / y[ok], 1)
                    if s != 0 and np.isfinite(i / s):
                        c2_lin = i / s
                        lo, hi = bounds["C2_K"]
                        if max(lo, tr - tmin) < c2_lin < hi:
                            c2_grid = np.append(c2_grid, c2_lin)
            with np.errstate(all="ignore"):
                col = -x / (c2_grid[:, None] + x)
            coefs, sse = _grid_lstsq({"C1": col}, y, weigh, fixed)
            trials = _best_trials(coefs, sse, {"C2_K": c2_grid})
        else:
            if "T_inf_K" in fixed:
                ti_grid = np.array([fixed["T_inf_K"]])
            else:
                top = min(tmin, tr)
                lo, hi = bounds["T_inf_K"]
                ti_grid = top - _grid_above(0.0, (top - hi, top - lo))
            with np.errstate(all="ignore"):
                col = 1 / (T - ti_grid[:, None]) - 1 / (tr - ti_grid[:, None])
            coefs, sse = _grid_lstsq({"B_K": col}, y, weigh, fixed)
            trials = _best_trials(coefs, sse, {"T_inf_K": ti_grid})
        best = next(trials, None)
        return [] if best is None else [best[1]]
    # the remaining law: WLF above Tg, Arrhenius below; every (Tg, C2) pair in one batch
    tg_parts, c2_parts = [], []
    for tg in _tg_candidates(T, fixed, bounds["glass_transition_K"]):
        if "C2_K" in fixed:
            c2_grid = np.array([fixed["C2_K"]])
        else:
            lo, hi = bounds["C2_K"]
            c2_grid = _grid_above(tr - tg, (max(lo, tr - tg), hi))
        c2_grid = c2_grid[c2_grid + tg - tr > 0]
        tg_parts.append(np.full(c2_grid.size, float(tg)))
        c2_parts.append(c2_grid)
    if not tg_parts or sum(p.size for p in tg_parts) == 0:
        return []
    tg, c2 = (np.concatenate(v)[:, None] for v in (tg_parts, c2_parts))
    t_hi = np.maximum(T, tg)                      # (G, n): the WLF branch above Tg
    t_r = np.maximum(tr, tg)
    cols = {"C1": -(t_hi - tr) / (c2 + t_hi - tr) + (t_r - tr) / (c2 + t_r - tr),
            "activation_energy_kJ_per_mol": _ARRHENIUS_K_PER_KJ_MOL * (
                np.where(T < tg, 1 / T - 1 / tg, 0.0) - np.where(tr < tg, 1 / tr - 1 / tg, 0.0))}
    coefs, sse = _grid_lstsq(cols, y, weigh, fixed)
    trials = _best_trials(coefs, sse, {"C2_K": c2[:, 0], "glass_transition_K": tg[:, 0]})
    # best start in each of the three best Tg intervals
    starts, seen = [], set()
    for _, coefs in trials:
        if coefs["glass_transition_K"] not in seen:
            seen.add(coefs["glass_transition_K"])
            starts.append(coefs)
        if len(starts) == 3:
            break
    return starts


#: trial break temperatures per interval between neighbouring data temperatures
_TG_TRIALS_PER_INTERVAL = 8
#: at most this many trial break temperatures in all: on a table of 500 isotherms, 8 per
#: interval made 4,000 trials, and with the C2 grid (trials x rows) arrays of 2 GB
_TG_TRIALS_TOTAL = 200


def _tg_candidates(T: np.ndarray, fixed: Mapping[str, float],
                   bounds: tuple[float, float]) -> np.ndarray:
    """Trial break temperatures leaving at least two points on each side: evenly spaced
    inside each interval between neighbouring data temperatures (ends excluded).

    Within an interval the fit is smooth in Tg, but its optimum need not be near the
    midpoint; from a midpoint start Levenberg-Marquardt can crawl along the valley of the
    (C2, Tg) trade-off for thousands of evaluations (binder shift tables: 20,000 without
    converging). A start on a fine grid begins next to the optimum. Past
    :data:`_TG_TRIALS_TOTAL` trials in all (over 25 intervals) each interval gets fewer, at
    least one: with many isotherms the intervals themselves are the fine grid."""
    if "glass_transition_K" in fixed:
        return np.array([fixed["glass_transition_K"]])
    ts = np.sort(T)
    counts_below = np.arange(1, ts.size)
    keep = (counts_below >= 2) & (ts.size - counts_below >= 2) & (ts[1:] > ts[:-1])
    per_interval = int(min(_TG_TRIALS_PER_INTERVAL,
                           max(1, _TG_TRIALS_TOTAL // max(int(keep.sum()), 1))))
    frac = (np.arange(per_interval) + 0.5) / per_interval
    mids = (ts[:-1][keep, None] + frac * (ts[1:] - ts[:-1])[keep, None]).ravel()
    lo, hi = bounds
    inside = mids[(mids > lo) & (mids < hi)]
    if inside.size == 0 and np.isfinite(lo) and np.isfinite(hi):
        inside = np.array([0.5 * (lo + hi)])
    return inside


def _default_bounds(cls: type, T: np.ndarray, tr: float, fixed: Mapping[str, float],
                    order: int) -> dict:
    """Bounds that keep every data temperature on the defined side of the law."""
    tmin, tmax = float(T.min()), float(T.max())
    margin = 1e-6 * max(tr, tmin)
    names = cls._expected_names({_poly_name(k): 0 for k in range(1, order + 1)})
    b = {n: (-np.inf, np.inf) for n in names}
    if cls is WLFLaw:
        b["C2_K"] = (max(0.0, tr - tmin) + margin, np.inf)
    elif cls is VFTLaw:
        b["T_inf_K"] = (-np.inf, min(tmin, tr) - margin)
    elif cls is WLFArrheniusLaw:
        if "C2_K" in fixed:   # keep the WLF branch finite above Tg: Tg > T_ref - C2
            b["glass_transition_K"] = (max(tmin, tr - fixed["C2_K"] + margin), tmax)
        else:
            b["glass_transition_K"] = (tmin, tmax)
        tg_low = fixed.get("glass_transition_K", tmin)
        b["C2_K"] = (tr - tg_low + margin, np.inf)
    return b


def _merge_bounds(name: str, default: tuple[float, float], user: tuple[float, float] | None):
    if user is None:
        return default
    if name == "glass_transition_K":          # a data-range default, not a validity limit
        return user
    lo, hi = max(default[0], user[0]), min(default[1], user[1])
    if not lo < hi:
        raise bad_value(f"bounds[{name!r}]",
                        f"overlapping the values the law allows ({default[0]:.6g} to "
                        f"{default[1]:.6g})", user)
    return (lo, hi)


def _into_bounds(value: float, lo: float, hi: float) -> float:
    """Move a starting value just inside its bounds (lmfit needs lo < start < hi)."""
    if lo < value < hi:
        return value
    if np.isfinite(lo) and np.isfinite(hi):
        if not np.isfinite(value):
            return 0.5 * (lo + hi)
        return lo + (hi - lo) * (1e-3 if value <= lo else 1 - 1e-3)
    if value <= lo:
        return lo + max(1e-3 * abs(lo), 1e-3)
    return hi - max(1e-3 * abs(hi), 1e-3)


#: solver evaluations per free parameter (+1): for each of several starts, and for the last one
_START_BUDGET, _FULL_BUDGET = 100, 4000
#: MINPACK lmdif's ``info`` 6, 7, 8: ftol, xtol or gtol "too small, no further reduction in
#: the sum of squares / improvement of the solution is possible" (Moré, Garbow & Hillstrom,
#: User Guide for MINPACK-1, ANL-80-74, 1980): the solver stands at a minimum to machine
#: precision, which the strict tolerances here (1e-12) ask for and lmfit does not count as
#: success
_AT_PRECISION_LIMIT = (6, 7, 8)


def _accept_at_precision_limit(res, residual, free) -> None:
    """Mark a fit that stopped at machine precision as converged, with the covariance lmfit
    leaves out in that case: (JᵀJ)⁻¹ scaled by the reduced chi-square, as lmfit's own
    (central differences in the parameters, relative step 1e-6)."""
    params = res.params
    x0 = np.array([params[n].value for n in free], dtype=float)
    r0 = np.asarray(residual(params), dtype=float)
    J = np.empty((r0.size, x0.size))
    for j, n in enumerate(free):
        h = 1e-6 * max(1.0, abs(x0[j]))
        cols = []
        for sign in (1.0, -1.0):
            trial = params.copy()
            trial[n].value = x0[j] + sign * h
            cols.append(np.asarray(residual(trial), dtype=float))
        J[:, j] = (cols[0] - cols[1]) / (2 * h)
    dof = max(r0.size - x0.size, 1)
    try:
        cov = np.linalg.inv(J.T @ J) * float(r0 @ r0) / dof
    except np.linalg.LinAlgError:
        cov = None
    if cov is not None and np.all(np.isfinite(cov)) and np.all(np.diag(cov) >= 0):
        res.covar = cov
        for j, n in enumerate(free):
            params[n].stderr = float(np.sqrt(cov[j, j]))
    else:
        res.covar = None
    res.success = True
    res.message = f"converged to machine precision ({res.message})"


def _fit_one(cls: type, T, y, weigh, tr, fixed, user_bounds, order,
             start: Mapping[str, float] | None = None) -> _Outcome:
    """Fit one law by Levenberg-Marquardt from the best separable-grid starts, or from
    ``start`` alone on the small budget (a refit of a table that changed little, such as the
    same table less one row)."""
    names = cls._expected_names({_poly_name(k): 0 for k in range(1, order + 1)})
    defaults = _default_bounds(cls, T, tr, fixed, order)
    bounds = {n: _merge_bounds(n, defaults[n], user_bounds.get(n)) for n in names}
    for n, v in fixed.items():
        lo, hi = bounds[n]
        if n in user_bounds and not lo <= v <= hi:
            raise bad_value(f"fixed[{n!r}]", f"within its bounds ({lo:.6g}, {hi:.6g})", v)
    if cls is WLFLaw and "C2_K" in fixed and tr - fixed["C2_K"] >= T.min():
        raise bad_value("fixed['C2_K']", f"greater than T_ref - (lowest temperature) = "
                                         f"{tr - T.min():.6g} K (else the WLF law diverges "
                                         "inside the data)", fixed["C2_K"])
    if cls is VFTLaw and "T_inf_K" in fixed and fixed["T_inf_K"] >= min(T.min(), tr):
        raise bad_value("fixed['T_inf_K']", f"below the lowest temperature and the reference "
                                            f"({min(T.min(), tr):.6g} K)", fixed["T_inf_K"])
    if cls is WLFArrheniusLaw and {"C2_K", "glass_transition_K"} <= set(fixed):
        tg = fixed["glass_transition_K"]
        if fixed["C2_K"] + tg - tr <= 0:
            raise bad_value("fixed['C2_K']", f"greater than T_ref - Tg = {tr - tg:.6g} K (else "
                                             "the WLF branch diverges above Tg)", fixed["C2_K"])

    free = tuple(n for n in names if n not in fixed)
    if (cls in _LINEAR_LAWS and free
            and all(not np.any(np.isfinite(bounds[n])) for n in free)):
        return _linear_outcome(cls, T, y, weigh, tr, fixed, names, free, order)
    starts = ([dict(start)] if start is not None
              else _start_values(cls, T, y, weigh, tr, fixed, bounds, order))
    if not starts:
        raise FitError(f"{cls.model}: no trial break temperature within the bounds of "
                       "glass_transition_K leaves two points on each side")

    def residual(p):
        values = p.valuesdict()
        with np.errstate(all="ignore"):
            r = weigh(cls._evaluate(values, T, tr) - y)
        return np.where(np.isfinite(r), r, 1e10)

    import lmfit  # lazily: lmfit loads matplotlib and pandas at import

    evaluations = [0]    # over every start and the continuation (reported as nfev)

    def solve(params, budget):
        try:
            res = lmfit.minimize(residual, params, method="leastsq", xtol=1e-12, ftol=1e-12,
                                 max_nfev=budget * (len(free) + 1))
        except Exception as exc:  # lmfit/MINPACK failures become FitError
            raise FitError(f"{cls.model}: the least-squares solver failed: {exc}") from exc
        evaluations[0] += int(res.nfev)
        chi2 = float(np.sum(np.asarray(res.residual) ** 2))
        values = [res.params[n].value for n in free]
        if not (np.isfinite(chi2) and np.all(np.isfinite(values))):
            return None
        if not res.success and getattr(res, "ier", None) in _AT_PRECISION_LIMIT:
            _accept_at_precision_limit(res, residual, free)
        return (chi2, res.params, res)

    best = None
    for start in starts:
        params = lmfit.Parameters()
        for n in names:
            lo, hi = bounds[n]
            if n in fixed:
                params.add(n, value=fixed[n], vary=False)
            else:
                params.add(n, value=_into_bounds(float(start[n]), lo, hi), min=lo, max=hi)
        if not free:
            r = residual(params)
            best = (float(r @ r), params, None)
            break
        # every start on a small budget (a start that wanders off towards a degenerate corner
        # would otherwise cost thousands of evaluations); the best one, if still unconverged,
        # continues with the full budget
        out = solve(params, _START_BUDGET if len(starts) > 1 or start is not None
                    else _FULL_BUDGET)
        if out is not None and (best is None or out[0] < best[0]):
            best = out
    if best is not None and best[2] is not None and not best[2].success \
            and len(starts) > 1:
        best = solve(best[1], _FULL_BUDGET) or best
    if best is None:
        raise FitError(f"{cls.model}: the fit produced no finite parameters")
    chi2, p, res = best
    values = {n: float(p[n].value) for n in names}
    notes = []
    stderr = {n: 0.0 for n in names}
    corr: dict = {}
    cov = None
    if res is not None:
        cov = None if res.covar is None else np.asarray(res.covar, dtype=float)
        for n in free:
            s = p[n].stderr
            stderr[n] = float("nan") if s is None else float(s)
        if cov is None:
            notes.append("parameter uncertainties could not be estimated (singular covariance)")
        else:
            corr = _correlations(cov, free)
        for n in free:
            lo, hi = bounds[n]
            for side, b in (("lower", lo), ("upper", hi)):
                if np.isfinite(b) and abs(values[n] - b) <= 1e-6 * max(1.0, abs(b)):
                    notes.append(f"{n} ended at its {side} bound {b:.6g}; the data do not "
                                 f"determine it within the bounds")
    return _Outcome(cls, values, stderr, corr, cov, free, chi2,
                    True if res is None else bool(res.success),
                    "all parameters fixed; nothing was fitted" if res is None else str(res.message),
                    evaluations[0], tuple(notes))


def _information(chi2: float, n: int, k: int, floor: float) -> tuple[float, float]:
    c = max(chi2, floor)
    neg2ll = n * math.log(c / n)
    return neg2ll + 2 * k, neg2ll + k * math.log(n)


def _derived(outcome: _Outcome, tr: float) -> tuple[dict, dict]:
    p = outcome.params
    free = list(outcome.free_names)
    cov = outcome.covariance

    def stderr_of(grad: Mapping[str, float]) -> float:
        if not any(n in free for n in grad):
            return 0.0
        if cov is None:
            return float("nan")
        g = np.array([grad.get(n, 0.0) for n in free])
        return float(np.sqrt(max(g @ cov @ g, 0.0)))

    if "C1" in p and "C2_K" in p:
        c1, c2 = p["C1"], p["C2_K"]
        d = {"T_inf_K": tr - c2, "C1_times_C2_K": c1 * c2, "C1_over_C2_per_K": c1 / c2}
        s = {"T_inf_K": stderr_of({"C2_K": -1.0}),
             "C1_times_C2_K": stderr_of({"C1": c2, "C2_K": c1}),
             "C1_over_C2_per_K": stderr_of({"C1": 1 / c2, "C2_K": -c1 / c2 ** 2})}
        return d, s
    if "B_K" in p:
        c2 = tr - p["T_inf_K"]
        d = {"C1": p["B_K"] / c2, "C2_K": c2}
        s = {"C1": stderr_of({"B_K": 1 / c2, "T_inf_K": p["B_K"] / c2 ** 2}),
             "C2_K": stderr_of({"T_inf_K": -1.0})}
        return d, s
    return {}, {}


def _check_fixed_and_bounds(fixed, bounds, allowed: Iterable[str], what: str):
    allowed = list(allowed)
    fixed_clean: dict = {}
    if fixed is not None:
        if not isinstance(fixed, Mapping):
            raise bad_value("fixed", "a mapping of parameter names to numbers", fixed)
        for name, value in fixed.items():
            if name not in allowed:
                raise bad_value("fixed", f"keyed by parameters of {what} ("
                                + ", ".join(allowed) + ")", name)
            fixed_clean[name] = check_finite(f"fixed[{name!r}]", value)
    bounds_clean: dict = {}
    if bounds is not None:
        if not isinstance(bounds, Mapping):
            raise bad_value("bounds", "a mapping of parameter names to (low, high) pairs", bounds)
        for name, pair in bounds.items():
            if name not in allowed:
                raise bad_value("bounds", f"keyed by parameters of {what} ("
                                + ", ".join(allowed) + ")", name)
            try:
                lo, hi = (float(v) for v in pair)
            except (TypeError, ValueError):
                raise bad_value(f"bounds[{name!r}]", "a pair (low, high) of numbers", pair) from None
            if np.isnan(lo) or np.isnan(hi) or not lo < hi:
                raise bad_value(f"bounds[{name!r}]", "a pair (low, high) with low < high", pair)
            bounds_clean[name] = (lo, hi)
    return fixed_clean, bounds_clean


#: a law with more free parameters replaces a simpler one only when its mean squared held-out
#: error (in units of the shifts' standard errors) is below this fraction of the simpler's ...
HELD_OUT_GAIN_RATIO = 0.75
#: ... and lower by more than this (one squared standard error per held-out shift: less is
#: within the noise of the shifts themselves); unweighted tables use the ratio alone
HELD_OUT_GAIN_MIN = 1.0
#: a polynomial, which has no physics to carry it between and beyond the shifts, must halve
#: the held-out error of the physical law it would replace (on real binders a quadratic that
#: won by a third on six shifts missed the seventh by 0.06 decade, twice what WLF missed)
HELD_OUT_GAIN_RATIO_POLYNOMIAL = 0.5


def _held_out_score(cls, T, y, scale, weighting_without, tr, fixed, bounds, order,
                    full: "_Outcome") -> float:
    """Mean squared leave-one-out error of a law over the interior rows of a shift table.

    Each row strictly inside the temperature range is left out in turn, the law refitted to
    the others (from the constants fitted to all rows, on the small solver budget) and the
    left-out log10 a_T predicted; the errors are divided by that row's standard error
    (``scale``). Rows at the ends are not left out: predicting them is extrapolation, which
    the law is not asked to do. Past :data:`MAX_HELD_OUT_ROWS` interior rows, that many are
    left out, evenly spread in temperature. Returns inf when a refit fails or no row is interior
    (leave-one-out cross-validation: Stone, J. R. Stat. Soc. B 36:111, 1974)."""
    order_T = np.argsort(T)
    interior = order_T[1:-1]
    interior = interior[evenly_spaced_indices(interior.size, MAX_HELD_OUT_ROWS)]
    k_free = len(full.free_names)
    if interior.size == 0 or T.size - 1 <= k_free:
        return math.inf
    errs = []
    for i in interior:
        keep = np.arange(T.size) != i
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                params = _refit_from(cls, T[keep], y[keep], weighting_without(keep), tr, fixed,
                                     bounds, order, full)
            with np.errstate(all="ignore"):
                pred = float(cls._evaluate(params, np.array([T[i]]), tr)[0])
        except (FitError, DataError):
            return math.inf
        if not math.isfinite(pred):
            return math.inf
        # errors below the fit's resolution floor are rounding: exact data then compare by
        # the number of constants alone
        e = pred - y[i]
        if abs(e) < _RESIDUAL_FLOOR_DECADES * max(1.0, float(np.abs(y).max())):
            e = 0.0
        errs.append(e / scale[i])
    return float(np.mean(np.square(errs)))


def _refit_from(cls, T, y, weigh, tr, fixed, bounds, order, full: "_Outcome") -> dict:
    """The law's constants refitted to a slightly changed table, from those of ``full``.

    Linear laws are solved directly. WLF takes a few Levenberg-Marquardt steps
    (:func:`_levenberg_marquardt`) from the full fit's constants: a table less one row moves
    them little. The others take trust-region steps (scipy's ``least_squares``, method "trf",
    which keeps the bounds without transforming them); in the flat C2-Tg valley of
    WLF-Arrhenius the refit's end point depends on the solver's path, and with it the held-out
    score (up to tens of percent on the law-choice benchmark), so it keeps its solver. Either
    costs a fraction of a millisecond where a fresh fit with its start grid costs several."""
    names = cls._expected_names({_poly_name(k): 0 for k in range(1, order + 1)})
    free = tuple(n for n in names if n not in fixed)
    defaults = _default_bounds(cls, T, tr, fixed, order)
    lims = {n: _merge_bounds(n, defaults[n], bounds.get(n)) for n in names}
    if cls in _LINEAR_LAWS and not any(np.any(np.isfinite(lims[n])) for n in free):
        # the constants alone: the same solve as _linear_outcome, without its covariance
        coefs = _weighted_lstsq(_linear_columns(cls, T, tr, order), y, weigh, fixed)
        return {n: float(coefs[n]) for n in names}
    lo = np.array([lims[n][0] for n in free])
    hi = np.array([lims[n][1] for n in free])
    x0 = np.array([_into_bounds(float(full.params[n]), lims[n][0], lims[n][1]) for n in free])

    def residual(x):
        p = dict(fixed)
        p.update(zip(free, x))
        with np.errstate(all="ignore"):
            r = weigh(cls._evaluate(p, T, tr) - y)
        return np.where(np.isfinite(r), r, 1e10)

    if cls is WLFLaw:
        x = _levenberg_marquardt(residual, x0, lo, hi, max_nfev=50 * (len(free) + 1))
    else:   # a flat valley (WLF-Arrhenius: C2 against Tg) where the path decides the refit
        from scipy.optimize import least_squares

        x = least_squares(residual, x0, bounds=(lo, hi), method="trf", x_scale="jac",
                          max_nfev=50 * (len(free) + 1)).x
    out = dict(fixed)
    out.update(zip(free, (float(v) for v in x)))
    return out


def _levenberg_marquardt(residual, x0: np.ndarray, lo: np.ndarray, hi: np.ndarray,
                         max_nfev: int) -> np.ndarray:
    """Minimise |residual(x)|² from ``x0`` within [lo, hi]: Levenberg-Marquardt steps
    (JᵀJ + λ diag JᵀJ) dx = -Jᵀr (Marquardt, J. SIAM 11:431, 1963), J by forward differences,
    each trial clipped into the bounds; stops when a step lowers the sum of squares by less
    than 1e-10 of itself or moves x by less than 1e-10 of its size (scipy's least_squares,
    which this replaces here, stops at 1e-8), or when ten larger dampings find no descent.

    For refits from a nearby optimum (a table less one row) it takes a few steps of a few
    evaluations each, without the set-up of a general bounded solver."""
    x = np.asarray(x0, dtype=float).copy()
    r = residual(x)
    f = float(r @ r)
    nfev, lam = 1, 1e-6       # from near the optimum: Gauss-Newton steps, barely damped
    eps = 1.4901161193847656e-08          # sqrt of the float64 machine epsilon
    while nfev + x.size < max_nfev:
        J = np.empty((r.size, x.size))
        for j in range(x.size):
            h = eps * max(1.0, abs(x[j]))
            if x[j] + h > hi[j]:
                h = -h
            xj = x.copy()
            xj[j] += h
            J[:, j] = (residual(xj) - r) / h
        nfev += x.size
        A, g = J.T @ J, J.T @ r
        d = np.diag(A).copy()
        d[d <= 0] = 1.0
        moved = False
        for _ in range(10):
            if nfev >= max_nfev:
                break
            try:
                dx = np.linalg.solve(A + lam * np.diag(d), -g)
            except np.linalg.LinAlgError:
                lam *= 10.0
                continue
            xn = np.clip(x + dx, lo, hi)
            rn = residual(xn)
            nfev += 1
            fn = float(rn @ rn)
            if np.isfinite(fn) and fn < f:
                small = (f - fn <= 1e-10 * f
                         or np.all(np.abs(xn - x) <= 1e-10 * np.maximum(np.abs(x), 1e-10)))
                x, r, f, moved = xn, rn, fn, True
                lam = max(lam / 10.0, 1e-12)
                break
            lam *= 10.0
        if not moved or small:
            break
    return x


def _choose_by_held_out(outcomes: Mapping, held_out: Mapping[str, float], models: tuple,
                        weighted: bool) -> tuple[str, str]:
    """The law that predicts left-out shift factors best, a more flexible one only when it
    does so beyond the noise (see HELD_OUT_GAIN_RATIO, HELD_OUT_GAIN_MIN), with the words."""
    def n_free(m):
        # a polynomial has no physics to carry it between the shifts: it counts as more
        # flexible than a physical law with as many constants, so it must win beyond the noise
        return len(outcomes[m][0].free_names) + (0.5 if m == "polynomial" else 0.0)

    order = sorted(outcomes, key=lambda m: (n_free(m), held_out[m], models.index(m)))
    chosen = order[0]
    for m in order[1:]:
        a, b = held_out[chosen], held_out[m]
        if not math.isfinite(b):
            continue
        if n_free(m) == n_free(chosen):
            better = b < a
        else:
            ratio = HELD_OUT_GAIN_RATIO_POLYNOMIAL if m == "polynomial" else HELD_OUT_GAIN_RATIO
            better = b < ratio * a and (not weighted or a - b > HELD_OUT_GAIN_MIN)
        if better or not math.isfinite(a):
            chosen = m
    others = sorted((m for m in outcomes if m != chosen), key=lambda m: held_out[m])
    unit = "squared standard errors" if weighted else "squared decades"
    a = held_out[chosen]
    if not others or not math.isfinite(a):
        return chosen, (f"the {chosen} law was the only one whose held-out predictions could "
                        "be computed")
    runner = others[0]
    b = held_out[runner]
    if not math.isfinite(b) or b > a:
        beyond = not weighted or (b - a) > HELD_OUT_GAIN_MIN
        strength = ("clearly" if math.isfinite(b) and b > 2 * a and beyond else "slightly")
        words = (f"it predicts left-out shift factors {strength} better than the runner-up "
                 f"{runner}")
    else:
        how = "as well" if b == a else f"a little better ({b:.3g}), within the noise,"
        words = f"the {runner} law predicts them {how} with more constants"
    return chosen, (f"the {chosen} law was chosen by leave-one-out prediction of the interior "
                    f"shift factors (mean squared error {a:.3g} {unit}): {words}")


def _evidence_word(delta: float) -> str:
    # Kass & Raftery (1995), Table on 2 ln(Bayes factor), read with Delta BIC in its place.
    if delta < 2:
        return "weak evidence"
    if delta < 6:
        return "positive evidence"
    if delta < 10:
        return "strong evidence"
    return "very strong evidence"


def law_prediction_stderr(law_fit: Any, temperature_K: Any) -> np.ndarray | None:
    """Standard error of a fitted law's log10 a_T at ``temperature_K``, or None.

    First-order propagation of the parameter covariance, var f = J C Jᵀ, with the Jacobian J
    by central differences (steps of 10⁻³ standard errors) and C rebuilt from the parameter
    standard errors and their correlation coefficients (JCGM 100:2008, GUM, eq. 13).
    ``law_fit`` is a :class:`ShiftLawFit` or anything with its ``law``, ``stderr``,
    ``correlation`` and ``fixed_parameters``. None when no free parameter has a finite
    positive stderr, or when a step leaves the law's domain.
    """
    law = law_fit.law
    stderr = dict(law_fit.stderr)
    fixed = set(getattr(law_fit, "fixed_parameters", ()) or ())
    free = [n for n in law.params if n not in fixed and stderr.get(n) is not None
            and np.isfinite(stderr[n]) and stderr[n] > 0]
    if not free:
        return None
    s = np.array([float(stderr[n]) for n in free])
    cov = np.diag(s ** 2)
    for (a, b), r in dict(getattr(law_fit, "correlation", {}) or {}).items():
        if a in free and b in free and r is not None and np.isfinite(r):
            i, j = free.index(a), free.index(b)
            cov[i, j] = cov[j, i] = float(r) * s[i] * s[j]
    t = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    jac = np.empty((t.size, len(free)))
    try:
        for k, name in enumerate(free):
            h = 1e-3 * s[k]
            vals = []
            for sign in (1.0, -1.0):
                p = dict(law.params)
                p[name] = p[name] + sign * h
                moved = type(law)(law.reference_temperature_K, p, None)
                vals.append(np.asarray(moved.log10_aT(t), dtype=float))
            jac[:, k] = (vals[0] - vals[1]) / (2.0 * h)
    except Exception:  # a step left the law's domain (e.g. C2 <= 0): no band rather than a wrong one
        return None
    var = np.einsum("ti,ij,tj->t", jac, cov, jac)
    return np.sqrt(np.clip(var, 0.0, None))


def _checked_covariance(covariance: Any, n: int) -> np.ndarray:
    """A shift covariance as a float (n, n) array: finite, symmetric, non-negative diagonal;
    rows of zero variance get the smallest positive variance (unknown, not exact)."""
    try:
        C = np.array(covariance, dtype=float)
    except (TypeError, ValueError):
        raise bad_value("covariance", "a square array of numbers", covariance) from None
    if C.shape != (n, n):
        raise bad_value("covariance", f"shape ({n}, {n}), one row per shift", f"shape {C.shape}")
    if not np.all(np.isfinite(C)):
        raise bad_value("covariance", "finite", float(C[~np.isfinite(C)][0]))
    d = np.diag(C).copy()
    scale = max(float(np.abs(C).max()), 1e-300)
    if np.any(d < 0):
        raise bad_value("covariance", "a non-negative diagonal (variances)", float(d[d < 0][0]))
    if np.max(np.abs(C - C.T)) > 1e-8 * scale:
        raise bad_value("covariance", "symmetric", "an asymmetric matrix")
    zero = d <= 0
    if zero.any():
        if zero.all():
            return np.eye(n)
        C[zero, zero] = d[~zero].min()
    return C


def fit_shift_law(temperature_K: Any, log10_aT: Any, *, reference_temperature_K: float,
                  model: str = "auto", stderr: Any = None, covariance: Any = None,
                  fixed: Mapping[str, float] | None = None,
                  bounds: Mapping[str, tuple[float, float]] | None = None,
                  polynomial_order: int = 2) -> ShiftLawFit:
    """Fit a shift law to a table of shift factors by weighted least squares.

    Minimises sum_i [(log10 a_T,i - law(T_i)) / s_i]^2 (or rᵀC⁻¹r with a ``covariance`` C of
    the shifts, generalised least squares) with lmfit's Levenberg-Marquardt (``leastsq``; the
    linear laws without bounds directly, see below), where s_i is the shift stderr (all 1 when
    none is given). Starting values
    come from the separable structure of each law: for each trial of its nonlinear constant
    (WLF: C2, including the classical linearisation (T - T_ref)/log10 a_T = -C2/C1 -
    (T - T_ref)/C1; VFT: T_inf; WLF-Arrhenius: C2 and the break Tg) the linear constants are
    solved exactly, and the best trial starts the nonlinear fit. Arrhenius and polynomial
    laws are linear in their constants: without bounds they are solved directly (the same
    answer and covariance as the iterative solver, without its cost).

    With ``model="auto"`` the laws of :data:`AUTO_MODELS` that have more points than free
    parameters are fitted and the one with the lowest BIC (Schwarz 1978) is returned; equal
    BIC goes to fewer parameters, then to the order of :data:`AUTO_MODELS`. VFT is not among them
    because it is WLF with other constants (use ``.law.to_vft()``). ``reason`` states the BIC
    margin and its strength on the scale of Kass & Raftery (1995).

    Parameters
    ----------
    temperature_K : array_like
        Absolute temperatures of the shift table, in K (1-D).
    log10_aT : array_like
        log10 a_T at those temperatures (decades), > 0 below the reference.
    reference_temperature_K : float
        Reference temperature in K, where the law is 0. It need not be a measured temperature.
    model : str
        ``"auto"`` or a name of :data:`SHIFT_LAWS`.
    stderr : array_like, optional
        Standard error of each log10 a_T (decades). Zero or missing (NaN/None) entries are
        unknown, not exact: they get the smallest positive stderr of the table. When no
        entry is positive the fit is unweighted.
    covariance : array_like, optional
        Covariance matrix of the log10 a_T (n × n, decades²), e.g.
        ``ShiftResult.log10_aT_covariance``. Shifts found jointly are correlated (an error in
        one overlap moves every shift beyond it); weighing residuals by the inverse covariance
        (Aitken 1935) lets the law average out that common drift instead of following it.
        Rows with zero variance get the smallest positive variance (unknown, as for
        ``stderr``); a direction of zero variance shared by several rows (a gauge condition)
        is left out. Takes precedence over ``stderr`` for the weights; ``stderr`` defaults to
        the square root of its diagonal.
    fixed : mapping, optional
        Parameters held at given values, e.g. ``{"C1": 17.44, "C2_K": 51.6}`` or
        ``{"glass_transition_K": 373.15}``.
    bounds : mapping, optional
        (low, high) for parameters, e.g. ``{"C2_K": (10, 300)}``. They are intersected with
        the limits that keep the law defined over the data (e.g. C2 > T_ref - min T for WLF).
    polynomial_order : int
        Order of the polynomial law (default 2), also used by ``"auto"``.

    Returns
    -------
    ShiftLawFit

    Raises
    ------
    DataError
        Invalid input: shapes, non-finite values, negative stderr, unknown model, or
        ``fixed``/``bounds`` naming a parameter the law does not have (the message lists the
        allowed names).
    FitError
        Too few points (a law needs more points than free parameters) or the solver failed.

    Warns
    -----
    FitQualityWarning
        A parameter ended at a bound or its uncertainty could not be estimated.
    """
    T = _as_temperature_array(temperature_K)
    if T.ndim != 1 or T.size == 0:
        raise bad_value("temperature_K", "a non-empty 1-D array", f"shape {T.shape}")
    try:
        y = np.asarray(log10_aT, dtype=float)
    except (TypeError, ValueError):
        raise bad_value("log10_aT", "an array of numbers", log10_aT) from None
    if y.shape != T.shape:
        raise bad_value("log10_aT", f"the same shape as temperature_K {T.shape}",
                        f"shape {y.shape}")
    if not np.all(np.isfinite(y)):
        raise bad_value("log10_aT", "finite", float(y[~np.isfinite(y)][0]))
    tr = check_positive("reference_temperature_K", reference_temperature_K)
    check_choice("model", model, ("auto",) + tuple(SHIFT_LAWS))
    if isinstance(polynomial_order, bool) or not isinstance(polynomial_order, (int, np.integer)) \
            or not 1 <= polynomial_order <= 6:
        raise bad_value("polynomial_order", "an integer from 1 to 6", polynomial_order)
    order = int(polynomial_order)

    if stderr is None:
        s = np.full(T.shape, np.nan)
        w = np.ones(T.shape)
    else:
        try:
            s = np.array([np.nan if v is None else v for v in np.ravel(stderr).tolist()],
                         dtype=float).reshape(np.shape(stderr))
        except (TypeError, ValueError):
            raise bad_value("stderr", "an array of numbers (or None entries)", stderr) from None
        if s.shape != T.shape:
            raise bad_value("stderr", f"the same shape as temperature_K {T.shape}",
                            f"shape {s.shape}")
        if np.any(s < 0) or np.any(np.isinf(s)):
            raise bad_value("stderr", "non-negative and finite (NaN/None for unknown)",
                            float(s[(s < 0) | np.isinf(s)][0]))
        positive = s[s > 0]
        if positive.size == 0:
            w = np.ones(T.shape)
        else:
            w = 1.0 / np.where(s > 0, s, positive.min())
    C = None if covariance is None else _checked_covariance(covariance, T.size)
    if C is not None and stderr is None:
        s = np.sqrt(np.clip(np.diag(np.asarray(covariance, dtype=float)), 0.0, None))

    informative = ~((np.abs(T - tr) <= _RANGE_TOLERANCE_K) & (y == 0))
    Tf, yf = T[informative], y[informative]
    n = int(Tf.size)
    if n == 0:
        raise FitError("the shift table has no point away from the reference temperature")
    if C is None:
        weigh, weighting = _Weighting(w[informative]), "none" if stderr is None else "stderr"
    else:
        weigh, weighting = _Weighting(covariance=C[np.ix_(informative, informative)]), "covariance"
    floor = weigh.total * (_RESIDUAL_FLOOR_DECADES * max(1.0, float(np.abs(yf).max()))) ** 2
    models = AUTO_MODELS if model == "auto" else (model,)

    def names_of(m: str) -> tuple:
        return SHIFT_LAWS[m]._expected_names({_poly_name(k): 0 for k in range(1, order + 1)})

    allowed = []
    for m in models:
        allowed += [nm for nm in names_of(m) if nm not in allowed]
    what = f"the {model!r} law" if model != "auto" else "the laws compared by 'auto'"
    fixed_all, bounds_all = _check_fixed_and_bounds(fixed, bounds, allowed, what)

    rows, outcomes = [], {}
    for m in models:
        cls = SHIFT_LAWS[m]
        nm = names_of(m)
        fx = {k: v for k, v in fixed_all.items() if k in nm}
        bd = {k: v for k, v in bounds_all.items() if k in nm}
        k_free = len(nm) - len(fx)
        row = {"model": m, "n_free": k_free, "status": "fitted", "detail": "",
               "chi_square": None, "aic": None, "bic": None, "delta_bic": None}
        need_sides = cls is WLFArrheniusLaw and "glass_transition_K" not in fx
        if weigh.size <= k_free or (need_sides and n < 4):
            msg = (f"the {m} law has {k_free} free parameters and needs more points than that"
                   + (" (and two on each side of Tg)" if need_sides else "")
                   + f"; the table has {n}"
                   + (f", of which {weigh.size} independent of the reference's gauge"
                      if weigh.size < n else "")
                   + (" besides the reference's own shift (0 by definition, it carries no "
                      "information)" if n < T.size else ""))
            if model != "auto":
                raise FitError(msg)
            row.update(status="skipped", detail=msg)
            rows.append(row)
            continue
        try:
            out = _fit_one(cls, Tf, yf, weigh, tr, fx, bd, order)
            if not out.success:
                raise FitError(f"{m}: the solver did not converge ({out.message})")
            try:
                cls(tr, out.params)
            except DataError as exc:
                raise FitError(f"{m}: the fitted constants do not define a valid law "
                               f"({exc})") from exc
        except FitError as exc:
            if model != "auto":
                raise
            row.update(status="failed", detail=str(exc))
            rows.append(row)
            continue
        aic, bic = _information(out.chi_square, weigh.size, k_free, floor)
        row.update(chi_square=out.chi_square, aic=aic, bic=bic)
        rows.append(row)
        outcomes[m] = (out, aic, bic)

    if not outcomes:
        raise FitError("no shift law could be fitted: "
                       + "; ".join(r["detail"] for r in rows))
    ranking = sorted(outcomes, key=lambda m: (outcomes[m][2], len(outcomes[m][0].free_names),
                                              models.index(m)))
    held_out = {}
    if model == "auto" and len(outcomes) > 1:
        w_inf = w[informative]
        C_inf = None if C is None else C[np.ix_(informative, informative)]

        without: dict = {}     # one weighting per left-out row, shared by every law

        def weighting_without(keep):
            key = keep.tobytes()
            if key not in without:
                without[key] = (_Weighting(covariance=C_inf[np.ix_(keep, keep)])
                                if C_inf is not None else _Weighting(w_inf[keep]))
            return without[key]

        scale = (np.sqrt(np.diag(C_inf)) if C_inf is not None
                 else (1.0 / w_inf if stderr is not None else np.ones(n)))
        for m in outcomes:
            nm = names_of(m)
            held_out[m] = _held_out_score(
                SHIFT_LAWS[m], Tf, yf, scale, weighting_without, tr,
                {k: v for k, v in fixed_all.items() if k in nm},
                {k: v for k, v in bounds_all.items() if k in nm}, order, outcomes[m][0])
        chosen, reason = _choose_by_held_out(outcomes, held_out, models, weighted=stderr is not None
                                             or C is not None)
    else:
        chosen = ranking[0]
    out, aic, bic = outcomes[chosen]
    for r in rows:
        if r["bic"] is not None:
            r["delta_bic"] = r["bic"] - bic
        if r["model"] in held_out:
            v = held_out[r["model"]]
            r["held_out_mean_square"] = v if math.isfinite(v) else None
    if model != "auto":
        reason = f"the {chosen} law was requested"
    elif len(ranking) == 1:
        reason = f"the {chosen} law was the only one that could be fitted to {n} points"

    law = out.cls(tr, out.params, (float(T.min()), float(T.max())))
    fitted = law._evaluate(law.params, T, tr)
    residuals = y - fitted
    derived, derived_stderr = _derived(out, tr)
    for note in out.notes:
        warnings.warn(f"{chosen} fit: {note}", FitQualityWarning, stacklevel=2)

    def frozen(a):
        a = np.array(a, dtype=float)
        a.setflags(write=False)
        return a

    return ShiftLawFit(
        law=law,
        params=dict(law.params),
        stderr=dict(out.stderr),
        correlation=dict(out.correlation),
        residuals=frozen(residuals),
        temperature_K=frozen(T),
        log10_aT_data=frozen(y),
        log10_aT_stderr=frozen(s),
        chi_square=float(out.chi_square),
        reduced_chi_square=float(out.chi_square / (weigh.size - len(out.free_names))),
        degrees_of_freedom=weigh.size - len(out.free_names),
        aic=float(aic),
        bic=float(bic),
        n_points=n,
        n_free=len(out.free_names),
        fixed_parameters=tuple(k for k in law.params if k not in out.free_names),
        derived=derived,
        derived_stderr=derived_stderr,
        candidates=tuple(rows),
        reason=reason,
        success=out.success,
        message=out.message,
        nfev=out.nfev,
        notes=tuple(out.notes),
        method=out.method,
        weighting=weighting,
    )
