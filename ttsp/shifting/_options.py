"""The options of a shift fit, checked and resolved once (private).

:func:`resolve_options` validates every argument of :func:`ttsp.shifting.shift_isotherms` in
the order it always has (so the first bad argument is the one named), chooses the functions to
shift on and the master-curve model, matches the fixed shifts to isotherms, and computes the
known vertical shifts of the ``"density"`` mode: b_T = T ρ(T)/(T_ref ρ_ref) with
ρ(T) = ρ_ref [1 − α_v (T − T_ref)] (Ferry, Viscoelastic Properties of Polymers, 3rd ed.,
1980, ch. 11). Every later step reads the frozen :class:`ShiftOptions`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from .._validation import bad_value, check_choice, check_finite, check_positive
from ..data import QUANTITIES, REFERENCE_SNAP_K, Campaign
from ..exceptions import DataError
from ..units import kelvin_to_celsius
from ._curve_models import MASTER_MODELS
from .result import ShiftResult

__all__ = ["ShiftOptions", "resolve_options", "default_reference_temperature_K",
           "VERTICAL_MODES", "GAP_MODES", "VERTICAL_SIGN"]

VERTICAL_MODES = ("none", "density", "fit")
GAP_MODES = ("stop", "bridge")

#: how a function carries the vertical shift: log y = F + v·log10 b_T
VERTICAL_SIGN = {"storage_modulus_Pa": 1, "loss_modulus_Pa": 1, "complex_modulus_Pa": 1,
                 "relaxation_modulus_Pa": 1, "creep_compliance_1_per_Pa": -1,
                 "tan_delta": 0, "phase_angle_rad": 0}

_FIXED_MATCH_K = 0.5       # a fixed shift's temperature must be this close to an isotherm's


def default_reference_temperature_K(campaign: Campaign) -> float:
    """The measured temperature nearest the median of the campaign's temperatures, in K.

    With an even number of isotherms the median falls midway between two of them; the lower
    one is returned (a documented, deterministic choice).
    """
    if not isinstance(campaign, Campaign) or len(campaign) == 0:
        raise bad_value("campaign", "a Campaign with at least one isotherm", campaign)
    t = campaign.temperatures_K
    med = float(np.median(t))
    return float(t[int(np.argmin(np.abs(t - med) + 1e-12 * (t > med)))])


@dataclass(frozen=True)
class ShiftOptions:
    """The checked options of one shift fit and what follows from them alone.

    ``temps`` (K, ascending) and ``t_ref`` (K); ``chosen`` the functions shifted on, read from
    ``derived`` (the campaign with derivable functions added), ``vsign`` how each carries the
    vertical shift; ``model`` the master-curve model ("spectrum" or "spline"); ``fixed`` the
    isotherm index -> log10 a_T held (with 0 at a measured reference when any is given),
    ``user_fixed`` the indices the user fixed; ``ref_idx`` the isotherm nearest the reference
    and ``ref_measured`` whether it is the reference; ``direction`` +1 (frequency) or −1
    (time); ``c_known`` the known log10 b_T per isotherm (zeros unless ``"density"``).
    """

    temps: np.ndarray
    t_ref: float
    vertical: str
    gaps: str
    robust: bool
    outlier_threshold: float
    low_information_stderr: float
    smoothing: float | None
    model: str
    start_from: ShiftResult | None
    alpha: float | None
    chosen: tuple
    derived: Campaign
    vsign: np.ndarray
    fit_vertical: bool
    fixed: dict
    user_fixed: set
    ref_idx: int
    ref_measured: bool
    direction: float
    c_known: np.ndarray

    @property
    def n(self) -> int:
        """The number of isotherms."""
        return len(self.temps)


def resolve_options(campaign, reference_temperature_K, quantities, vertical,
                    expansion_coefficient_per_K, fixed_log10_aT, gaps, robust,
                    outlier_threshold, low_information_stderr, master_curve, smoothing,
                    start_from) -> ShiftOptions:
    """Check the arguments of :func:`~ttsp.shifting.shift_isotherms` and resolve them.

    Raises
    ------
    DataError
        The first bad argument, with the rule it breaks (see ``shift_isotherms``).
    """
    _check_campaign(campaign)
    temps = campaign.temperatures_K
    if reference_temperature_K is None:
        t_ref = default_reference_temperature_K(campaign)
    else:
        t_ref = check_positive("reference_temperature_K", reference_temperature_K)
    outlier_threshold, low_information_stderr, smoothing = _check_settings(
        vertical, gaps, robust, outlier_threshold, low_information_stderr, smoothing,
        master_curve, start_from)
    alpha = _expansion_coefficient(vertical, expansion_coefficient_per_K)
    chosen, derived = _resolve_quantities(campaign, quantities)
    vsign = np.array([VERTICAL_SIGN[q] for q in chosen])
    model = _master_model(master_curve, chosen)
    fit_vertical = vertical == "fit"
    _check_vertical_fit(fit_vertical, chosen, vsign)
    fixed = _match_fixed(fixed_log10_aT, temps)
    user_fixed = set(fixed)
    ref_idx = int(np.argmin(np.abs(temps - t_ref)))
    ref_measured = abs(temps[ref_idx] - t_ref) <= REFERENCE_SNAP_K
    _hold_measured_reference(fixed, temps, ref_idx, ref_measured)
    direction = 1.0 if campaign.domain == "frequency" else -1.0
    c_known = _known_vertical_shifts(vertical, alpha, temps, t_ref, expansion_coefficient_per_K)
    return ShiftOptions(
        temps=temps, t_ref=t_ref, vertical=vertical, gaps=gaps, robust=robust,
        outlier_threshold=outlier_threshold, low_information_stderr=low_information_stderr,
        smoothing=smoothing, model=model, start_from=start_from, alpha=alpha, chosen=chosen,
        derived=derived, vsign=vsign, fit_vertical=fit_vertical, fixed=fixed,
        user_fixed=user_fixed, ref_idx=ref_idx, ref_measured=ref_measured,
        direction=direction, c_known=c_known)


def _check_campaign(campaign) -> None:
    if not isinstance(campaign, Campaign):
        raise bad_value("campaign", "a Campaign", type(campaign).__name__)
    if len(campaign) < 2:
        raise bad_value("campaign", "a Campaign with at least 2 isotherms",
                        f"{len(campaign)} isotherm(s)")


def _check_settings(vertical, gaps, robust, outlier_threshold, low_information_stderr,
                    smoothing, master_curve, start_from):
    """The choices and numbers of the options; returns the checked outlier threshold,
    low-information stderr and smoothing."""
    check_choice("vertical", vertical, VERTICAL_MODES)
    check_choice("gaps", gaps, GAP_MODES)
    if not isinstance(robust, (bool, np.bool_)):
        raise bad_value("robust", "True or False", robust)
    outlier_threshold = check_positive("outlier_threshold", outlier_threshold)
    low_information_stderr = check_positive("low_information_stderr", low_information_stderr)
    if smoothing is not None:
        smoothing = check_positive("smoothing", smoothing)
    check_choice("master_curve", master_curve, ("auto",) + MASTER_MODELS)
    if start_from is not None and not isinstance(start_from, ShiftResult):
        raise bad_value("start_from", "a ShiftResult or None", type(start_from).__name__)
    return outlier_threshold, low_information_stderr, smoothing


def _expansion_coefficient(vertical, expansion_coefficient_per_K):
    """α_v (1/K) for the ``"density"`` mode, which needs it; None otherwise, which needs none."""
    if vertical == "density":
        if expansion_coefficient_per_K is None:
            raise bad_value("expansion_coefficient_per_K",
                            "given (volumetric expansion coefficient in 1/K) with "
                            "vertical='density'", None)
        return check_positive("expansion_coefficient_per_K", expansion_coefficient_per_K,
                              allow_zero=True)
    if expansion_coefficient_per_K is not None:
        raise bad_value("expansion_coefficient_per_K", "None unless vertical='density'",
                        expansion_coefficient_per_K)
    return None


def _resolve_quantities(campaign: Campaign, quantities) -> tuple:
    derived = campaign.with_derived()
    available = derived.quantities
    if isinstance(quantities, str) and quantities == "auto":
        if campaign.domain == "frequency":
            for pair in (("storage_modulus_Pa", "loss_modulus_Pa"),
                         ("complex_modulus_Pa", "phase_angle_rad")):
                if set(pair) <= set(available):
                    return pair, derived
            chosen = tuple(q for q in available if QUANTITIES[q].domain == "frequency")[:1]
        else:
            chosen = tuple(q for q in ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
                           if q in available)
        if not chosen:
            raise DataError("no material function is measured in every isotherm; found "
                            f"{', '.join(campaign.quantities) or 'none'}")
        return chosen, derived
    if isinstance(quantities, str):
        quantities = (quantities,)
    try:
        chosen = tuple(quantities)
    except TypeError:
        raise bad_value("quantities", "'auto', 'tan_delta' or a sequence of function names",
                        quantities) from None
    if not chosen or len(set(chosen)) != len(chosen):
        raise bad_value("quantities", "a non-empty sequence of distinct function names", quantities)
    for q in chosen:
        if q not in QUANTITIES or QUANTITIES[q].domain != campaign.domain:
            names = [n for n in QUANTITIES if QUANTITIES[n].domain == campaign.domain]
            raise bad_value("quantities", f"'auto' or names among {', '.join(names)}", q)
        if q not in available:
            raise DataError(f"quantities: {q} is not measured (nor derivable) in every isotherm; "
                            f"available: {', '.join(available) or 'none'}")
    return chosen, derived


def _master_model(master_curve: str, chosen: tuple) -> str:
    """``"auto"``: the spectrum, unless both E(t) and D(t) are shifted together (splines)."""
    if master_curve != "auto":
        return master_curve
    return ("spline" if {"relaxation_modulus_Pa", "creep_compliance_1_per_Pa"} <= set(chosen)
            else "spectrum")


def _check_vertical_fit(fit_vertical: bool, chosen: tuple, vsign) -> None:
    if fit_vertical and (len(chosen) < 2 or not np.any(vsign != 0)):
        raise DataError("vertical='fit' needs at least two functions, one of them a modulus or "
                        f"compliance, to separate vertical from horizontal shifts; shifting on "
                        f"{', '.join(chosen)} alone cannot (use vertical='none' or 'density')")


def _match_fixed(fixed, temps_K) -> dict:
    if fixed is None:
        return {}
    if not isinstance(fixed, Mapping):
        raise bad_value("fixed_log10_aT", "a mapping of temperature_K to log10 a_T", fixed)
    out = {}
    for t, v in fixed.items():
        t = check_positive("fixed_log10_aT temperature_K", t)
        v = check_finite(f"fixed_log10_aT[{t:g}]", v)
        k = int(np.argmin(np.abs(temps_K - t)))
        if abs(temps_K[k] - t) > _FIXED_MATCH_K:
            raise bad_value("fixed_log10_aT temperature_K",
                            f"within {_FIXED_MATCH_K} K of a measured isotherm "
                            f"({', '.join(f'{x:.2f}' for x in temps_K)} K)", t)
        out[k] = v
    return out


def _hold_measured_reference(fixed: dict, temps, ref_idx: int, ref_measured: bool) -> None:
    """With fixed shifts, a measured reference isotherm is held at 0 too (in place); a fixed
    shift there other than 0 is refused."""
    if fixed and ref_measured:
        if ref_idx in fixed and abs(fixed[ref_idx]) > 0:
            raise bad_value(f"fixed_log10_aT at the reference temperature "
                            f"{kelvin_to_celsius(temps[ref_idx]):g} °C", "0",
                            fixed[ref_idx])
        fixed[ref_idx] = 0.0


def _known_vertical_shifts(vertical, alpha, temps, t_ref, expansion_coefficient_per_K):
    """log10 b_T = log10[T ρ(T)/(T_ref ρ_ref)] per isotherm in the ``"density"`` mode
    (ρ/ρ_ref = 1 − α_v (T − T_ref), which must stay positive), zeros otherwise."""
    if vertical == "density":
        rho = 1.0 - alpha * (temps - t_ref)
        if np.any(rho <= 0):
            raise bad_value("expansion_coefficient_per_K",
                            "small enough that the density stays positive over the campaign",
                            expansion_coefficient_per_K)
        return np.log10(temps * rho / t_ref)
    return np.zeros(len(temps))
