"""Whether the isotherms need a vertical shift, judged by held-out isotherms (layer 3).

A vertical shift b_T (log10 b_T added to every modulus of an isotherm, subtracted from every
compliance) corrects for the change of density and of the strength of the relaxation with
temperature (Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 11). Three ways:

``none``
    b_T = 1: horizontal shifts only.
``density``
    b_T = T ρ(T)/(T_ref ρ_ref) from the volumetric expansion coefficient (only when the user
    gives it).
``fit``
    a free log10 b_T per isotherm, fitted jointly with the shifts.

A free b_T always lays the isotherms on each other at least as well: with one more parameter
per isotherm the in-sample misfit can only fall, so it cannot judge whether the vertical
shift is real. The isotherms the build has not seen can: ``auto`` builds each candidate,
predicts every held-out isotherm from the others (:mod:`ttsp.crossval`; b_T at the held-out
temperature is interpolated from its neighbours, :class:`ttsp.model.VerticalShift`), and keeps
horizontal shifts only unless a vertical shift lowers the median held-out error by more than
``VERTICAL_GAIN`` (relative), over the same held-out isotherms. A candidate that cannot predict
an isotherm that horizontal shifts predict is not chosen, nor a fitted b_T beyond
``MAX_PLAUSIBLE_LOG10_BT``: on curves that are nearly straight in log–log (the real binders
of tests/data) a free b_T trades against a_T, reaching a factor of ten, and predicts the
interior isotherms well with shift factors that mean nothing. Measured on exact synthetic campaigns with 2 % noise and nine
isotherms (tests/test_vertical_choice.py): without a vertical shift in the data, ``fit``
predicts 1–8 % worse than ``none``; with log10 b_T changing 0.002 per kelvin, 31–44 % better.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .build_options import BuildOptions

import math
from dataclasses import dataclass, field, replace

import numpy as np

from .exceptions import DataError, FitError

__all__ = ["VerticalChoice", "VERTICAL_GAIN", "choose_vertical_shift"]

#: a vertical shift must lower the median held-out error by more than this fraction
VERTICAL_GAIN = 0.05
#: a fitted vertical shift beyond this (decades, a factor of two) anywhere in the campaign is
#: not taken as one: the density-and-temperature factor T ρ/(T_ref ρ_ref) changes by about 0.1
#: decade over 100 K (Ferry 1980, ch. 11; from memory), so values this large mean that the
#: horizontal and vertical shifts trade against each other along curves that are nearly
#: straight in log–log (measured on the real binders of tests/data: log10 b_T down to −1.0)
MAX_PLAUSIBLE_LOG10_BT = 0.3


@dataclass(frozen=True)
class VerticalChoice:
    """The vertical shift of a build asked to choose it, and why.

    Attributes
    ----------
    chosen : str
        ``"none"``, ``"density"`` or ``"fit"``.
    held_out_rms_percent : dict
        Candidate → median over the held-out isotherms of the pooled rms error at the law's
        a_T (%); NaN when the candidate has no held-out isotherm to judge by.
    failed : dict
        Candidate → why it could not be built or chosen (it failed a fold that horizontal
        shifts alone passed, or its fitted b_T is implausibly large).
    reason : str
        One sentence for the report.
    """

    chosen: str
    held_out_rms_percent: dict = field(default_factory=dict)
    failed: dict = field(default_factory=dict)
    reason: str = ""

    def to_dict(self) -> dict:
        def num(v):
            return float(v) if math.isfinite(v) else None

        names = list(self.held_out_rms_percent) + [k for k in self.failed
                                                   if k not in self.held_out_rms_percent]
        rows = [{"vertical": k,
                 "median_held_out_rms_percent": num(self.held_out_rms_percent.get(k, math.nan)),
                 "error": self.failed.get(k, "")} for k in names]
        return {"requested": "auto", "chosen": self.chosen, "candidates": rows,
                "reason": self.reason}


def candidates(options: BuildOptions) -> tuple:
    """``none`` and ``fit``, and ``density`` when the expansion coefficient is given."""
    return ("none", "fit") + (("density",) if options.expansion_coefficient_per_K is not None
                              else ())


def _errors_by_temperature(cv) -> dict:
    return {round(h.temperature_K, 6): h.rms_percent_at_law_aT["all"] for h in cv.per_isotherm}


def _not_eligible(mode, fitted, errors, base) -> str:
    """Why a vertical-shift candidate cannot be chosen ('' when it can): it must predict every
    held-out isotherm that horizontal shifts alone predict, and its b_T must be plausible."""
    missed = [t for t, e in base.items()
              if math.isfinite(e) and not math.isfinite(errors.get(t, math.nan))]
    if missed:
        listed = ", ".join(f"{t - 273.15:g} °C" for t in sorted(missed))
        return f"it could not be built without the isotherm(s) at {listed}"
    if mode == "fit":
        worst = float(np.max(np.abs(fitted.shifts.log10_bT)))
        if worst > MAX_PLAUSIBLE_LOG10_BT:
            return (f"its fitted log10 b_T reaches {worst:.2f} decade, beyond any density and "
                    f"temperature factor ({MAX_PLAUSIBLE_LOG10_BT:g}): horizontal and vertical "
                    f"shifts are trading against each other, not a real vertical shift")
    return ""


def _median(errors: dict, keys) -> float:
    values = [errors[t] for t in keys if math.isfinite(errors.get(t, math.nan))]
    return float(np.median(values)) if values else math.nan


def choose_vertical_shift(options: BuildOptions, fit, validate):
    """Build every candidate vertical shift and keep the one the held-out isotherms favour.

    Parameters
    ----------
    options : ttsp.workflow.BuildOptions
        With ``vertical="auto"``.
    fit : callable
        ``fit(options) -> FittedSteps`` (the build's fitting steps).
    validate : callable
        ``validate(options, fitted) -> CrossValidation``.

    Returns
    -------
    (options, FittedSteps, CrossValidation, VerticalChoice)
        The options with the chosen vertical mode, and that candidate's fit and held-out
        predictions.
    """
    built, by_t, failed = {}, {}, {}
    for mode in candidates(options):
        alpha = options.expansion_coefficient_per_K if mode == "density" else None
        o = replace(options, vertical=mode, expansion_coefficient_per_K=alpha)
        try:
            fitted = fit(o)
        except (DataError, FitError) as exc:
            if mode == "none":
                raise
            failed[mode] = str(exc)
            continue
        built[mode] = (o, fitted, validate(o, fitted))
        by_t[mode] = _errors_by_temperature(built[mode][2])
    base = by_t["none"]
    judged = [t for t, e in base.items() if math.isfinite(e)]
    errors = {m: _median(e, judged) for m, e in by_t.items()}
    for mode in list(built):
        why = "" if mode == "none" else _not_eligible(mode, built[mode][1], by_t[mode], base)
        if why:
            failed[mode] = why
    better = {m: errors[m] for m in built if m != "none" and m not in failed
              and errors[m] < errors["none"] * (1.0 - VERTICAL_GAIN)}
    chosen = min(better, key=better.__getitem__) if better else "none"
    o, fitted, cv = built[chosen]
    return o, fitted, cv, VerticalChoice(chosen, errors, failed,
                                         _reason(chosen, errors, failed, judged))


def _reason(chosen, errors, failed, judged) -> str:
    base = errors["none"]
    if not judged:
        return ("horizontal shifts only: there are too few isotherms to judge a vertical shift "
                "by isotherms held out")
    if chosen != "none":
        return (f"a vertical shift ({chosen}) predicts held-out isotherms better: median error "
                f"{errors[chosen]:.2f} % against {base:.2f} % with horizontal shifts only")
    rest = "; ".join([f"{m} {e:.2f} %" for m, e in errors.items()
                      if m != "none" and m not in failed and math.isfinite(e)]
                     + [f"{m} not used: {why}" for m, why in failed.items()])
    return (f"horizontal shifts only: no vertical shift predicts held-out isotherms better by "
            f"more than {100 * VERTICAL_GAIN:.0f} % (median error {base:.2f} %"
            + (f"; {rest}" if rest else "") + ")")
