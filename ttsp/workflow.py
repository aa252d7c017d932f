"""The main job in one call: campaign → shift factors → shift law → Prony series → material
functions → checks, returned as one frozen :class:`BuildResult`. No file I/O happens here.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from . import checks as check_suite  # run_checks looked up at each build: a test may replace it
from ._arrays import evenly_spaced_rows
from ._blas import one_blas_thread
from ._fit_points_diagnosis import fixed_loss_ratio
from ._validation import bad_value
from .bands import band_columns
from .build_options import (
    GAP_CHOICES,
    LAW_CHOICES,
    MATERIAL_CHOICES,
    SCHEMA_VERSION,
    SHIFT_ON_CHOICES,
    VERTICAL_CHOICES,
    BuildOptions,
)
from .build_result import BuildResult, _campaign_hash
from .build_steps import (
    LACK_OF_FIT_REDUCED_CHI_SQUARE,
    MAX_BAND_POINTS,
    MAX_CHECK_POINTS_PER_ISOTHERM,
    MAX_PRONY_POINTS,
    MAX_SPECTRUM_POINTS,
    FittedSteps,
    _fit_bands,
    _fit_law,
    _fit_spectrum,
    _law_rows,
    fit_steps,
)
from .checks import disagreeing_temperatures_K
from .crossval import cross_validate
from .data import Campaign, Isotherm
from .exceptions import DataError, TtspWarning
from .model import QUANTITY_COLUMNS, ViscoelasticModel
from .selection import fixed_shifts_K, without_isotherms
from .shifting import default_reference_temperature_K
from .transition import estimate_glass_transition
from .units import celsius_to_kelvin
from .vertical_choice import choose_vertical_shift

__all__ = ["BuildOptions", "BuildResult", "build", "check", "predict", "fit_steps", "FittedSteps",
           "band_columns", "LAW_CHOICES", "VERTICAL_CHOICES", "SHIFT_ON_CHOICES", "GAP_CHOICES",
           "MATERIAL_CHOICES", "SCHEMA_VERSION", "MAX_PRONY_POINTS", "MAX_CHECK_POINTS_PER_ISOTHERM",
           "MAX_BAND_POINTS", "MAX_SPECTRUM_POINTS", "LACK_OF_FIT_REDUCED_CHI_SQUARE",
           # private steps that the tests and the law benchmark call
           "_fit_law", "_law_rows"]


def _thin_for_checks(campaign: Campaign, shifts):
    """The campaign and shift result restricted to an even subset of each dense isotherm."""
    picks = [evenly_spaced_rows(iso.values.values(), iso.n_points, MAX_CHECK_POINTS_PER_ISOTHERM)
             for iso in campaign.isotherms]
    if all(p.size == iso.n_points for p, iso in zip(picks, campaign.isotherms, strict=True)):
        return campaign, shifts
    isos = tuple(Isotherm(iso.temperature_K, iso.x[p], {k: v[p] for k, v in iso.values.items()},
                          iso.source_rows[p])
                 for iso, p in zip(campaign.isotherms, picks, strict=True))
    thin = Campaign(isos, campaign.domain, campaign.modulus_kind, campaign.source,
                    campaign.units_as_read, campaign.metadata, campaign.dropped_rows)
    mask = tuple(np.asarray(m)[p] for m, p in zip(shifts.outlier_mask, picks, strict=True))
    return thin, replace(shifts, outlier_mask=mask)


def build(campaign: Campaign, options: BuildOptions | None = None, *, input_sha256: str | None = None,
          input_files: Sequence[str | Path] = (), progress: Callable[[str], object] | None = None,
          aside: Callable[[Callable[[], Any]], Callable[[], Any]] | None = None,
          **option_values: Any) -> BuildResult:
    """Run the whole job on a campaign and return a :class:`BuildResult`.

    Parameters
    ----------
    campaign : Campaign
        From :func:`ttsp.read_campaign` or :meth:`Campaign.from_frame`.
    options : BuildOptions, optional
        Settings; alternatively give them as keywords (``reference_temperature_C=25``, ``law="wlf"``).
    input_sha256 : str, optional
        Hash of the input files (the CLI passes :func:`ttsp.io.readers.hash_inputs`);
        default: a hash of the campaign's numbers.
    progress : callable, optional
        Called with the name of each step as it starts (the CLI prints them).
    aside : callable, optional
        ``aside(compute)`` returns a function that gives ``compute()``'s value: the
        cross-validation is handed to it once the shifts, law and series are fitted, and its
        value asked for after the checks. The command line passes a
        :class:`ttsp._forked.AsideWork`, which computes it in a forked child meanwhile; by
        default it is computed when asked for.

    Warnings raised by the steps are collected into ``result.warnings`` (and re-emitted).
    """
    options = _checked_options(options, option_values)
    campaign = _prepared_campaign(campaign, options)
    t_ref_K = _reference_temperature_K(campaign, options)
    step = progress or (lambda name: None)
    # The linear algebra here is many small problems: one BLAS thread is faster than several,
    # and much faster on a loaded machine or beside other worker processes.
    with one_blas_thread(), warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", TtspWarning)
        parts = _computed_parts(campaign, options, t_ref_K, step, aside or _when_asked)
    messages = _collected_messages(caught, (parts["shifts"], parts["prony_fit"]))
    return BuildResult(campaign, parts["options"], parts["shifts"], parts["law_fit"],
                       parts["prony_fit"], parts["model"], parts["checks"], messages,
                       input_sha256 or _campaign_hash(campaign), tuple(str(f) for f in input_files),
                       parts["glass"], parts["spectrum"], parts["fitted"].master_curve,
                       parts["held_out"], parts["vertical_choice"])


def _checked_options(options, option_values) -> BuildOptions:
    """Options given as a BuildOptions or as keywords, not both."""
    if options is None:
        return BuildOptions(**option_values)
    if option_values:
        raise DataError("give either options=BuildOptions(...) or keyword options, not both")
    return options


def _prepared_campaign(campaign, options: BuildOptions) -> Campaign:
    """The campaign without the excluded isotherms, with its derived functions; refused with
    the reason when no master curve can be built from it."""
    if not isinstance(campaign, Campaign):
        raise bad_value("campaign", "a ttsp Campaign (see ttsp.read_campaign)", type(campaign).__name__)
    campaign = without_isotherms(campaign, options.exclude_C).with_derived()
    fixed_shifts_K(campaign, dict(options.fixed_log10_aT))   # each names an isotherm
    if not set(campaign.quantities) - {"tan_delta", "phase_angle_rad"}:
        have, (e1, e2) = " and ".join(map(campaign.symbol, campaign.quantities)), map(
            campaign.symbol, ("storage_modulus_Pa", "loss_modulus_Pa"))
        raise DataError(f"{campaign.source}: a master curve needs a modulus or a compliance; the "
                        f"campaign has only {have}: no Prony series can be fitted to it (add "
                        f"{e1} and {e2} columns)")
    if options.shift_on == "tan_delta" and campaign.domain != "frequency":
        raise DataError("shift_on='tan_delta' needs frequency-domain data; this campaign is "
                        "time-domain")
    ratio = fixed_loss_ratio(campaign)
    if ratio is not None:
        e1, e2 = campaign.symbol("storage_modulus_Pa"), campaign.symbol("loss_modulus_Pa")
        where = f"{campaign.source}: " if campaign.source else ""
        raise DataError(f"{where}{e1} and {e2} cannot be shifted together; {e2} is "
                        f"{ratio:.4g} times {e1} at every point, as if one column were computed "
                        f"from the other: check the {e2} column")
    return campaign


def _reference_temperature_K(campaign: Campaign, options: BuildOptions) -> float:
    return (celsius_to_kelvin(options.reference_temperature_C).item()
            if options.reference_temperature_C is not None
            else default_reference_temperature_K(campaign))


def _when_asked(compute: Callable[[], Any]) -> Callable[[], Any]:
    """The default ``aside`` of :func:`build`: the value is computed when it is asked for."""
    return compute


def _computed_parts(campaign: Campaign, options: BuildOptions, t_ref_K: float, step,
                    aside) -> dict:
    """Every computed part of a build: the fitting steps (with the vertical shift chosen when
    asked), the spectrum, the checks, Tg, the bands and the held-out isotherms (handed to
    ``aside`` as soon as the fit is done; see :func:`build`)."""
    held_out = vertical_choice = None
    if options.vertical == "auto":
        options, fitted, held_out, vertical_choice = _choose_vertical(campaign, options,
                                                                      t_ref_K, step)
    else:
        fitted = fit_steps(campaign, options, t_ref_K, step)
    held_out_value = None
    if options.cross_validation and held_out is None:
        held_out_value = aside(lambda: cross_validate(campaign, options, t_ref_K, full=fitted))
    shifts, law_fit, prony_fit, model = (fitted.shifts, fitted.law_fit, fitted.prony_fit,
                                         fitted.model)
    spectrum = None
    if options.spectrum:
        step("relaxation spectrum")
        spectrum = _fit_spectrum(campaign, shifts, t_ref_K)
    step("checks")
    check_campaign, check_shifts = _thin_for_checks(campaign, shifts)
    checks = tuple(check_suite.run_checks(check_campaign, shifts=check_shifts,
                                          law_fit=law_fit, prony_fit=prony_fit))
    shifts = _flag_disagreements(shifts, checks)
    glass = None
    if campaign.domain == "frequency":
        glass = estimate_glass_transition(model, campaign,
                                          frequency_Hz=options.isochrone_frequency_Hz)
    if options.bands:
        step("uncertainty bands")
        model = replace(model, ensemble=_fit_bands(campaign, shifts, law_fit, prony_fit,
                                                   options))
    if not options.cross_validation:
        held_out = None
    elif held_out_value is not None:
        step("cross-validation")
        held_out = held_out_value()
    return dict(options=options, fitted=fitted, shifts=shifts, law_fit=law_fit,
                prony_fit=prony_fit, model=model, spectrum=spectrum, checks=checks, glass=glass,
                held_out=held_out, vertical_choice=vertical_choice)


def _collected_messages(caught, sources) -> tuple:
    """The warnings of the steps, each once (and re-emitted), then the results' own notes."""
    messages = []
    for w in caught:
        text = str(w.message)
        if text not in messages:
            messages.append(text)
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    for source in sources:
        for text in getattr(source, "warnings", ()) or ():
            if text not in messages:
                messages.append(text)
    return tuple(messages)


def _choose_vertical(campaign, options, t_ref_K, step):
    """``vertical="auto"``: every candidate built and cross-validated
    (:func:`ttsp.vertical_choice.choose_vertical_shift`), the progress named once."""
    from .crossval import cross_validate

    step("shift factors (vertical shift chosen by held-out isotherms)")
    return choose_vertical_shift(
        options, lambda o: fit_steps(campaign, o, t_ref_K),
        lambda o, fitted: cross_validate(campaign, o, t_ref_K, full=fitted))


def _flag_disagreements(shifts, checks):
    """The shifts with ``"functions-disagree"`` in the flags of the isotherms that the
    function_agreement check names (shifts of E' alone and E'' alone differ there)."""
    agreement = next((c for c in checks if c.name == "function_agreement"), None)
    named = disagreeing_temperatures_K(agreement)
    if not named:
        return shifts
    temps = np.asarray(shifts.temperature_K, dtype=float)
    flags = [tuple(f) for f in shifts.flags]
    for t in named:
        k = int(np.argmin(np.abs(temps - t)))
        if abs(temps[k] - t) < 1e-6 * max(1.0, t) and "functions-disagree" not in flags[k]:
            flags[k] = flags[k] + ("functions-disagree",)
    return replace(shifts, flags=tuple(flags))


def check(campaign: Campaign, **option_values: Any) -> tuple:
    """Run a build and return only its checks (each with status, value, threshold, message)."""
    return build(campaign, **option_values).checks


def predict(model, quantity: str, temperature_C: ArrayLike, *, time_s: ArrayLike | None = None,
            frequency_Hz: ArrayLike | None = None, band: float | None = None):
    """Evaluate a material function at a temperature (°C) from a build result or a model.

    ``model`` is a :class:`BuildResult`, a :class:`~ttsp.model.ViscoelasticModel`, or the dict
    read from a ``summary.json``. Returns a tidy DataFrame with unit-suffixed columns; with
    ``band=LEVEL`` (e.g. 0.95) also the interval columns of :func:`band_columns`
    (:mod:`ttsp.bands`), and the level in ``frame.attrs["band_level"]``.
    """
    import pandas as pd

    if isinstance(model, BuildResult):
        model = model.model
    elif isinstance(model, dict):
        model = ViscoelasticModel.from_summary(model)
    values = model.evaluate(quantity, celsius_to_kelvin(temperature_C), time_s=time_s,
                            frequency_Hz=frequency_Hz, band=band)
    banded = None
    if band is not None:
        banded, values = values, values.value
    x_name, x = ("time_s", time_s) if time_s is not None else ("frequency_Hz", frequency_Hz)
    t = np.broadcast_to(np.asarray(temperature_C, dtype=float), np.shape(values))
    frame = pd.DataFrame({"temperature_C": t.ravel(),
                          x_name: np.broadcast_to(np.asarray(x, dtype=float),
                                                  np.shape(values)).ravel(),
                          QUANTITY_COLUMNS[quantity]: np.ravel(values)})
    if banded is not None:
        low, high = band_columns(quantity)
        frame[low] = np.ravel(np.broadcast_to(banded.low, np.shape(values)))
        frame[high] = np.ravel(np.broadcast_to(banded.high, np.shape(values)))
        frame.attrs["band_level"] = banded.level
    return frame
