"""The base of every shift law: validation of its constants, evaluation with its valid range,
change of reference temperature, export; and the hooks through which the fit treats each law
alike (start values, bounds, rules for held parameters, derived figures).

A *shift law* gives the horizontal shift factor log10 a_T as a function of the absolute
temperature T about a reference temperature T_ref, where log10 a_T(T_ref) = 0. The sign
follows the convention of the package: log10 a_T > 0 below the reference temperature, the
reduced frequency is omega * a_T and the reduced time t / a_T.
"""

from __future__ import annotations

import abc
import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar, TypeVar

import numpy as np

from .._validation import bad_value, check_choice, check_finite, check_positive
from ..exceptions import ExtrapolationWarning
from ._common import (
    GAS_CONSTANT_J_PER_MOL_K,
    LN10,
    RANGE_TOLERANCE_K,
    ZERO_CELSIUS_K,
    as_temperature_array,
    check_range_K,
    html_table,
    to_celsius,
)
from ._start_grid import weighted_lstsq
from .names import LAW_MODELS

if TYPE_CHECKING:
    from ._weighting import Weighting

__all__ = ["ShiftLaw", "LinearShiftLaw"]

#: bounds of a parameter: (low, high), either end may be infinite
Bounds = tuple[float, float]

_LawT = TypeVar("_LawT", bound="ShiftLaw")


@dataclass(frozen=True)
class ShiftLaw(abc.ABC):
    """A shift law log10 a_T(T) about a reference temperature (base class of the registry).

    Build one with :func:`~ttsp.laws.make_shift_law`, with a registry class directly
    (``WLFLaw(373.15, {"C1": 17.44, "C2_K": 51.6})``) or by fitting with
    :func:`~ttsp.laws.fit_shift_law`.

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
            check_range_K("valid_temperature_range_K", self.valid_temperature_range_K),
        )

    def __hash__(self) -> int:
        return hash((self.model, self.reference_temperature_K,
                     tuple(self.params.items()), self.valid_temperature_range_K))

    # ---- hooks each law implements -------------------------------------------------
    @classmethod
    def _expected_names(cls, params: Mapping[str, Any] | None = None) -> tuple[str, ...]:
        return tuple(cls._units)

    @classmethod  # noqa: B027 -- an optional hook: by default every set of constants is usable
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
        return to_celsius(self.reference_temperature_K)

    def _prepare(self, temperature_K: Any, stacklevel: int) -> np.ndarray:
        T = as_temperature_array(temperature_K)
        limit = self._lower_limit_K(self.params, self.reference_temperature_K)
        if limit is not None and np.any(T <= limit):
            raise bad_value("temperature_K", f"above {self._limit_name} = {limit:.6g} K",
                            float(T[T <= limit][0]))
        rng = self.valid_temperature_range_K
        if rng is not None and T.size:
            outside = (T < rng[0] - RANGE_TOLERANCE_K) | (T > rng[1] + RANGE_TOLERANCE_K)
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
        out = -LN10 * GAS_CONSTANT_J_PER_MOL_K * T ** 2 * slope / 1000.0
        return float(out) if np.ndim(out) == 0 else out

    def activation_energy_kJ_per_mol(self, temperature_K: Any) -> Any:
        """Apparent (flow) activation energy of the law at absolute temperature(s).

        E_a(T) = -ln(10) * R * T^2 * d log10 a_T / dT, equivalently R * d ln a_T / d(1/T)
        (Ferry 1980, ch. 11), with R = :data:`~ttsp.laws.GAS_CONSTANT_J_PER_MOL_K`. For WLF
        this is E_a = ln(10) R C1 C2 T^2 / (C2 + T - T_ref)^2; for Arrhenius it is the constant
        E_a.

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

    def at_reference(self: _LawT, reference_temperature_K: float) -> _LawT:
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
            "valid_temperature_range_C": None if rng is None else [to_celsius(rng[0]),
                                                                    to_celsius(rng[1])],
        }

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> ShiftLaw:
        """Rebuild a law from :meth:`to_dict` output (or the ``shift_law`` of a summary).

        Kelvin keys are used when present; otherwise the degC keys are converted.
        """
        from .registry import SHIFT_LAWS  # the registry imports every law, each imports this

        if not isinstance(data, Mapping):
            raise bad_value("shift law description", "a mapping (as written by to_dict)", data)
        model = check_choice("model", data.get("model"), LAW_MODELS)
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
                + ZERO_CELSIUS_K
        else:
            raise bad_value("shift law description",
                            "a mapping with reference_temperature_K or reference_temperature_C",
                            sorted(data))
        rng = data.get("valid_temperature_range_K")
        if rng is None and data.get("valid_temperature_range_C") is not None:
            rc = data["valid_temperature_range_C"]
            try:
                rng = tuple(float(v) + ZERO_CELSIUS_K for v in rc)
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
        return html_table(f"{self.model} shift law", rows)

    def _unit_of(self, name: str) -> str:
        return self._units.get(name, "")

    # ---- how the law is fitted: hooks of ttsp.laws.fit ---------------------------------
    # T and y below are the shift table (K, decades), tr the reference temperature (K),
    # ``fixed`` the parameters held at given values, ``order`` the polynomial order.

    #: linear in all its constants: fitted by direct weighted linear least squares when no
    #: bound is given (see :class:`LinearShiftLaw`)
    linear_in_constants: ClassVar[bool] = False
    #: solver of the refits on the table less one row (law choice): "trust-region" (scipy's
    #: least_squares, method "trf") or "levenberg-marquardt" (a few undamped steps)
    refit_solver: ClassVar[str] = "trust-region"
    #: parameters whose default bounds are the data's range, not a limit of the law's validity:
    #: bounds given by the user replace them instead of being intersected with them
    data_range_parameters: ClassVar[frozenset] = frozenset()

    @classmethod
    def fit_parameter_names(cls, order: int) -> tuple[str, ...]:
        """Names of the constants a fit of this law determines (``order``: polynomial only)."""
        return cls._expected_names()

    @classmethod
    def default_bounds(cls, T: np.ndarray, tr: float, fixed: Mapping[str, float],
                       order: int) -> dict[str, Bounds]:
        """Bounds that keep every data temperature on the defined side of the law."""
        return {n: (-np.inf, np.inf) for n in cls.fit_parameter_names(order)}

    @classmethod
    def fit_bounds(cls, T: np.ndarray, tr: float, fixed: Mapping[str, float],
                   user_bounds: Mapping[str, Bounds], order: int) -> dict[str, Bounds]:
        """The bounds of a fit: the law's own (:meth:`default_bounds`) intersected with the
        user's, or replaced by them for :attr:`data_range_parameters`."""
        defaults = cls.default_bounds(T, tr, fixed, order)
        return {n: _merged_bounds(n, defaults[n], user_bounds.get(n),
                                  n in cls.data_range_parameters)
                for n in cls.fit_parameter_names(order)}

    @classmethod  # noqa: B027 -- an optional hook: by default any held parameters are usable
    def check_fixed(cls, fixed: Mapping[str, float], T: np.ndarray, tr: float) -> None:
        """Raise DataError when held parameters make the law undefined inside the data."""

    @classmethod
    def minimum_points(cls, fixed: Mapping[str, float]) -> tuple[int, str]:
        """Fewest points the fit needs besides one more than its free parameters, and the
        words that say why (appended to the message of a table too short)."""
        return 0, ""

    @classmethod
    @abc.abstractmethod
    def start_values(cls, T: np.ndarray, y: np.ndarray, weigh: Weighting, tr: float,
                     fixed: Mapping[str, float], bounds: Mapping[str, Bounds],
                     order: int) -> list[dict]:
        """Starting constants of the nonlinear fit, best first (empty when none is found)."""

    @classmethod
    def derived_figures(cls, p: Mapping[str, float], tr: float,
                        stderr_of: Callable[[Mapping[str, float]], float]) -> tuple[dict, dict]:
        """Figures derived from the fitted constants ``p`` and their standard errors;
        ``stderr_of`` propagates a gradient {parameter: d figure / d parameter} through the
        fit's covariance."""
        return {}, {}


class LinearShiftLaw(ShiftLaw):
    """A law linear in its constants, y = Σ c_n col_n(T): without bounds it is fitted by direct
    weighted linear least squares (the same answer and covariance as the iterative solver,
    without its cost), and that solve is also its start value when bounded."""

    linear_in_constants: ClassVar[bool] = True

    @classmethod
    @abc.abstractmethod
    def linear_columns(cls, T: np.ndarray, tr: float, order: int) -> dict[str, np.ndarray]:
        """The column of each constant: log10 a_T = Σ constant × column."""

    @classmethod
    def start_values(cls, T: np.ndarray, y: np.ndarray, weigh: Weighting, tr: float,
                     fixed: Mapping[str, float], bounds: Mapping[str, Bounds], order: int):
        return [weighted_lstsq(cls.linear_columns(T, tr, order), y, weigh, fixed)]


def bound_margin_K(T: np.ndarray, tr: float) -> float:
    """How far (K) a default bound keeps the data from a law's divergence."""
    return 1e-6 * max(tr, float(T.min()))


def _merged_bounds(name: str, default: Bounds, user: Bounds | None,
                   user_replaces: bool) -> Bounds:
    if user is None:
        return default
    if user_replaces:          # a data-range default, not a validity limit
        return user
    lo, hi = max(default[0], user[0]), min(default[1], user[1])
    if not lo < hi:
        raise bad_value(f"bounds[{name!r}]",
                        f"overlapping the values the law allows ({default[0]:.6g} to "
                        f"{default[1]:.6g})", user)
    return (lo, hi)
