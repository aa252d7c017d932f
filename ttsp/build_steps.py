"""The fitting steps of a build: shift factors (with the master-curve model chosen), shift
law, Prony series, and the extras made from them (bands, spectrum) (layer 3).

A build and every fold of its cross-validation run :func:`fit_steps`; the rest are its parts.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from ._arrays import evenly_spaced_indices
from ._fit_points_diagnosis import explain_no_fit_points
from .bands import fit_band_ensemble
from .build_options import BuildOptions
from .data import REFERENCE_SNAP_K, Campaign
from .exceptions import DataError, FitError, FitQualityWarning, TtspWarning
from .laws import fit_shift_law
from .master_choice import choose_master_curve
from .model import VerticalShift, ViscoelasticModel
from .prony import fit_prony_frequency, fit_prony_time
from .selection import fixed_shifts_K
from .shifting import USED_STDERR_CAP, shift_isotherms
from .spectrum import fit_relaxation_spectrum
from .units import celsius_to_kelvin

#: The Prony fit uses at most this many master-curve points (evenly by rank of reduced x): a
#: 40-term non-negative fit is fully determined by far fewer, and its cost grows with the points.
MAX_PRONY_POINTS = 20_000
#: The checks compare isotherms point by point; beyond this many points per isotherm they look
#: at an even subset (their verdicts are about curves, not single points).
MAX_CHECK_POINTS_PER_ISOTHERM = 60


def _fit_points(frame, x_name: str, columns, limit: int):
    """The master-curve points a curve fit uses: every function in ``columns`` present, not
    flagged as an outlier, in order of the reduced abscissa, at most ``limit`` of them (evenly
    by rank)."""
    ok = frame[columns].notna().all(axis=1).to_numpy().copy()
    if "outlier" in frame:
        ok &= ~frame["outlier"].to_numpy(dtype=bool)
    rows = np.flatnonzero(ok)
    # the order pandas' sort_values gives (the same quicksort on the same values), without
    # copying every row of a dense campaign twice before keeping ``limit`` of them
    rows = rows[np.argsort(frame[x_name].to_numpy()[rows], kind="quicksort")]
    return frame.iloc[rows[evenly_spaced_indices(rows.size, limit)]]


def _prony_points(campaign: Campaign, shifts):
    """The master-curve points the Prony fit uses, their abscissa name, columns and the time
    quantity (None for frequency data)."""
    x_name = "reduced_frequency_rad_s" if campaign.domain == "frequency" else "reduced_time_s"
    if campaign.domain == "frequency":
        columns = ["storage_modulus_Pa", "loss_modulus_Pa"]
        quantity = None
    else:
        quantity = ("relaxation_modulus" if "relaxation_modulus_Pa" in campaign.quantities
                    else "creep_compliance")
        columns = ["relaxation_modulus_Pa" if quantity == "relaxation_modulus"
                   else "creep_compliance_1_per_Pa"]
    # only the fitted functions: a dense campaign's full frame, made in every fold of the
    # cross-validation, two at a time, cost hundreds of MB
    frame = shifts.shifted_frame(campaign, functions=columns)
    return _fit_points(frame, x_name, columns, MAX_PRONY_POINTS), frame, x_name, columns, quantity


def _fit_prony(campaign: Campaign, shifts, options: BuildOptions):
    used, frame, x_name, columns, quantity = _prony_points(campaign, shifts)
    if len(used) < 2:   # say what is wrong with the data, not that the solver got no abscissa
        raise DataError(explain_no_fit_points(frame, columns, {q: campaign.symbol(q) for q in
                                                               columns}, campaign.source))
    liquid = options.material == "liquid"
    # the campaign's modulus kind labels the series (G for shear data), and a liquid's
    # equilibrium modulus is 0 by physics (its creep compliance grows as t/η₀)
    common: dict[str, Any] = dict(terms_per_decade=options.prony_terms_per_decade,
                                  modulus_kind=campaign.modulus_kind)
    if campaign.domain == "frequency":
        return fit_prony_frequency(used[x_name].to_numpy(), used[columns[0]].to_numpy(),
                                   used[columns[1]].to_numpy(),
                                   equilibrium_modulus_Pa=0.0 if liquid else None, **common)
    if quantity == "creep_compliance":
        return fit_prony_time(used[x_name].to_numpy(), used[columns[0]].to_numpy(),
                              quantity=quantity, fluid=liquid, **common)
    return fit_prony_time(used[x_name].to_numpy(), used[columns[0]].to_numpy(), quantity=quantity,
                          equilibrium_modulus_Pa=0.0 if liquid else None, **common)


@dataclass(frozen=True)
class FittedSteps:
    """The fitted parts of a build that predictions need (no checks, no extras)."""

    shifts: object
    master_curve: object
    law_fit: object
    prony_fit: object
    model: object


def fit_steps(campaign: Campaign, options: BuildOptions, t_ref_K: float, step=None, *,
              measure_collapse: bool = True, start_from=None) -> FittedSteps:
    """Shift factors (with the master-curve model chosen), shift law, Prony series and the
    model they make, for a campaign already checked and with its derived functions.

    The build and each fold of the cross-validation run exactly these steps; a fold does not
    measure the collapse of its shifts against chained pairwise shifts
    (``measure_collapse=False``), which only the build reports, and starts its shift fit's
    iterations from the full build's shifts (``start_from``: same optimum, fewer iterations).
    """
    step = step or (lambda name: None)
    step("shift factors")
    # a fold of the cross-validation may have left a fixed isotherm out
    fixed_shifts = fixed_shifts_K(campaign, dict(options.fixed_log10_aT), strict=False) or None

    def fit_shifts(model_name):
        return shift_isotherms(
            campaign, t_ref_K,
            quantities="tan_delta" if options.shift_on == "tan_delta" else "auto",
            vertical=options.vertical,
            expansion_coefficient_per_K=options.expansion_coefficient_per_K,
            gaps=options.gaps, master_curve=model_name, fixed_log10_aT=fixed_shifts,
            start_from=start_from)

    requested = options.master_curve
    if requested == "auto" and options.shift_on != "tan_delta" and {
            "relaxation_modulus_Pa", "creep_compliance_1_per_Pa"} <= set(campaign.quantities):
        requested = "splines"   # no one spectrum model carries E(t) and D(t) together here
    shifts, choice = choose_master_curve(campaign, requested, fit_shifts, t_ref_K,
                                         measure=measure_collapse)
    _refuse_if_nothing_placed(campaign, shifts)
    if choice.requested != options.master_curve:
        choice = replace(choice, requested=options.master_curve,
                         reason=choice.reason.replace(
                             "was asked for", "is the one that carries E(t) and D(t) together"))
    fixed = ({"glass_transition_K": float(celsius_to_kelvin(options.glass_transition_C))}
             if options.glass_transition_C is not None and options.law == "wlf-arrhenius"
             else None)
    step("shift law")
    law_fit = _fit_law(shifts, t_ref_K, options.law, fixed)
    step("Prony series")
    prony_fit = _fit_prony(campaign, shifts, options)
    if prony_fit.series.reference_temperature_K is None:
        prony_fit = _with_series(prony_fit,
                                 prony_fit.series.replace(reference_temperature_K=t_ref_K))
    model = ViscoelasticModel(prony_fit.series, law_fit.law, VerticalShift.from_shifts(shifts))
    return FittedSteps(shifts, choice, law_fit, prony_fit, model)


#: Master-curve points the band's bootstrap refits each member to (evenly by rank): each of
#: its members is one NNLS fit, and the band's spread does not need every point of a dense
#: campaign.
MAX_BAND_POINTS = 2_000


def _fit_bands(campaign, shifts, law_fit, prony_fit, options):
    """The bootstrap ensemble of :mod:`ttsp.bands` on the Prony fit's own points (None with a
    warning when it cannot be made: a build is not sunk by an extra)."""
    used, _, x_name, columns, quantity = _prony_points(campaign, shifts)
    used = used.iloc[evenly_spaced_indices(len(used), MAX_BAND_POINTS)]
    try:
        return fit_band_ensemble(used[x_name].to_numpy(),
                                 {c: used[c].to_numpy() for c in columns},
                                 used["isotherm"].to_numpy(), domain=campaign.domain,
                                 series=prony_fit.series, shifts=shifts, law_fit=law_fit,
                                 terms_per_decade=options.prony_terms_per_decade,
                                 quantity=quantity, seed=0)
    except (DataError, FitError) as exc:
        warnings.warn(f"the uncertainty bands could not be made: {exc}", TtspWarning,
                      stacklevel=3)
        return None


#: The continuous spectrum is fitted to at most this many master-curve points (evenly by rank
#: of reduced frequency): its regularisation scan solves one problem per trial strength.
MAX_SPECTRUM_POINTS = 400


def _fit_spectrum(campaign, shifts, reference_temperature_K):
    """H(τ) of the master curve (frequency data with E' and E''), or None with a warning."""
    if campaign.domain != "frequency" or not {"storage_modulus_Pa", "loss_modulus_Pa"} <= set(
            campaign.quantities):
        warnings.warn("the continuous relaxation spectrum needs frequency data with E' and E''; "
                      "it was not fitted", TtspWarning, stacklevel=3)
        return None
    used = _fit_points(shifts.shifted_frame(campaign), "reduced_frequency_rad_s",
                       ["storage_modulus_Pa", "loss_modulus_Pa"], MAX_SPECTRUM_POINTS)
    try:
        return fit_relaxation_spectrum(used["reduced_frequency_rad_s"].to_numpy(),
                                       used["storage_modulus_Pa"].to_numpy(),
                                       used["loss_modulus_Pa"].to_numpy(),
                                       modulus_kind=campaign.modulus_kind,
                                       reference_temperature_K=reference_temperature_K)
    except (DataError, FitError) as exc:   # an extra output must not sink a good build
        warnings.warn(f"the continuous relaxation spectrum could not be fitted: {exc}",
                      TtspWarning, stacklevel=3)
        return None


_NOT_FOR_THE_LAW = ("low-information", "bridged")

#: a law whose reduced chi-square with the shift covariance exceeds this misses the shifts by
#: far more than their noise (on average by more than about three standard errors)
LACK_OF_FIT_REDUCED_CHI_SQUARE = 10.0


def _refuse_if_nothing_placed(campaign: Campaign, shifts) -> None:
    """A DataError when the data place no isotherm: every shift but the reference's is
    poorly determined (flat curves, or overlaps too thin), so the shift factors, the law and
    everything after them would be numbers without information (flat E' and E'' got shifts
    of +12 to -12 decades before this)."""
    flags = [set(f) for f in shifts.flags]
    free = [f for f in flags if not {"reference", "fixed"} & f]
    if len(free) < 2 or not all("low-information" in f for f in free):
        return
    names = " and ".join(campaign.symbol(q) for q in shifts.quantities_used)
    where = f"{campaign.source}: " if campaign.source else ""
    raise DataError(f"{where}no isotherm can be placed on the master curve: {names} barely "
                    f"change with {campaign.x_name.split('_')[0]} in any isotherm (or neighbours "
                    f"overlap too little), so no horizontal shift is determined; superposition "
                    f"needs curves that change across each isotherm")


def _fit_law(shifts, t_ref_K: float, model: str, fixed):
    """The build's shift law: generalised least squares with the shifts' covariance, else
    each shift weighed by its stderr.

    The covariance describes the noise of the shifts, correlated along the chain of overlaps;
    fitting with it lets the law average out a common drift (on the benchmark campaigns the
    worst law error fell from 0.12 to 0.08 decade). It is used where it describes the misfit:
    all shifts used are well determined and the law fits them about as well as their noise
    allows. The estimate does not change when the covariance is scaled, and its scale is known
    only roughly (the stderr err by tens of percent), so a reduced chi-square of 2 or 3 is no
    reason to drop it; above LACK_OF_FIT_REDUCED_CHI_SQUARE (real binders gave 87-4000 before the
    shifts' noise scale was pooled over the functions, 0.5-3.5 since, 5 December 2026) the
    misfit is the material's, not the chain's noise, and the law is fitted to each shift weighed by its
    stderr instead, which stays closer to the shifts themselves; a note and a
    FitQualityWarning say so. Not when the reference lies outside the measured range:
    its gauge is extrapolated, which moves every shift by the same unknown amount; that inflates
    the chi-square, and only the covariance fit (which leaves the gauge direction out) is immune
    to it. A shift the data do not determine reports a stderr up to 100 decades; when such rows
    must join the law (fewer than three others), it counts with its stderr capped at
    USED_STDERR_CAP.
    """
    use, determined = _law_rows(shifts)
    args = (shifts.temperature_K[use], shifts.log10_aT[use])
    kwargs = {"reference_temperature_K": t_ref_K, "model": model, "fixed": fixed,
              "stderr": np.minimum(shifts.log10_aT_stderr[use], USED_STDERR_CAP)}
    cov = shifts.log10_aT_covariance
    if not determined or cov is None:
        return fit_shift_law(*args, **kwargs)
    temps = shifts.temperature_K
    extrapolated = not temps.min() - REFERENCE_SNAP_K <= t_ref_K <= temps.max() + REFERENCE_SNAP_K
    try:
        fit = fit_shift_law(*args, covariance=cov[np.ix_(use, use)], **kwargs)
    except FitError as exc:
        note = (f"the shift law could not be fitted with the covariance of the shift factors "
                f"({exc}); it was fitted with each shift weighted by its stderr")
    else:
        if fit.reduced_chi_square <= LACK_OF_FIT_REDUCED_CHI_SQUARE or extrapolated:
            return fit
        note = (f"with the covariance of the shift factors the best law ({fit.law.model}) "
                f"missed them by far more than their noise (reduced chi-square "
                f"{fit.reduced_chi_square:.3g}, above {LACK_OF_FIT_REDUCED_CHI_SQUARE:g}); the "
                f"law was fitted with each shift weighted by its stderr instead")
    warnings.warn(note, FitQualityWarning, stacklevel=3)
    fit = fit_shift_law(*args, **kwargs)
    return replace(fit, notes=fit.notes + (note,))


def _law_rows(shifts) -> tuple[np.ndarray, bool]:
    """Which shift factors the law is fitted to, and whether all of them are well determined.

    All but the poorly determined ones (flagged low-information on a plateau, or bridged
    across a gap by a law already), unless that would leave fewer than three. Those left out
    are named in a warning; the law's valid range then covers only the temperatures it was
    fitted to (common practice, no source)."""
    flagged = np.array([any(f.startswith(_NOT_FOR_THE_LAW) for f in flags) for flags in shifts.flags])
    if flagged.any() and (~flagged).sum() >= 3:
        names = ", ".join(f"{t - 273.15:g} °C" for t in shifts.temperature_K[flagged])
        warnings.warn(f"the shift law was fitted without the poorly determined shift factors at "
                      f"{names} (low-information or bridged)", TtspWarning, stacklevel=3)
        return ~flagged, True
    return np.ones(len(shifts.temperature_K), dtype=bool), not flagged.any()


def _with_series(prony_fit, series):
    return replace(prony_fit, series=series)
