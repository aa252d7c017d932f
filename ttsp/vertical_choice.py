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
``VERTICAL_GAIN`` (relative). Measured on exact synthetic campaigns with 2 % noise and nine
isotherms (tests/test_vertical_choice.py): without a vertical shift in the data, ``fit``
predicts 1–8 % worse than ``none``; with log10 b_T changing 0.002 per kelvin, 31–44 % better.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from .exceptions import DataError, FitError

__all__ = ["VerticalChoice", "VERTICAL_GAIN", "choose_vertical_shift"]

#: a vertical shift must lower the median held-out error by more than this fraction
VERTICAL_GAIN = 0.05


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
        Candidate → why it could not be built.
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

        rows = [{"vertical": k, "median_held_out_rms_percent": num(v), "error": ""}
                for k, v in self.held_out_rms_percent.items()]
        rows += [{"vertical": k, "median_held_out_rms_percent": None, "error": e}
                 for k, e in self.failed.items()]
        return {"requested": "auto", "chosen": self.chosen, "candidates": rows,
                "reason": self.reason}


def candidates(options) -> tuple:
    """``none`` and ``fit``, and ``density`` when the expansion coefficient is given."""
    return ("none", "fit") + (("density",) if options.expansion_coefficient_per_K is not None
                              else ())


def _median_error(cv) -> float:
    values = [h.rms_percent_at_law_aT["all"] for h in cv.per_isotherm]
    values = [v for v in values if math.isfinite(v)]
    return float(np.median(values)) if values else math.nan


def choose_vertical_shift(options, fit, validate):
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
    built, errors, failed = {}, {}, {}
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
        cv = validate(o, fitted)
        built[mode] = (o, fitted, cv)
        errors[mode] = _median_error(cv)
    base = errors["none"]
    better = {m: e for m, e in errors.items()
              if m != "none" and math.isfinite(e) and e < base * (1.0 - VERTICAL_GAIN)}
    if not math.isfinite(base):
        chosen = "none"
        reason = ("horizontal shifts only: there are too few isotherms to judge a vertical "
                  "shift by isotherms held out")
    elif better:
        chosen = min(better, key=better.get)
        reason = (f"a vertical shift ({chosen}) predicts held-out isotherms better: median "
                  f"error {errors[chosen]:.2f} % against {base:.2f} % with horizontal shifts "
                  f"only")
    else:
        chosen = "none"
        rest = ", ".join(f"{m} {e:.2f} %" for m, e in errors.items()
                         if m != "none" and math.isfinite(e))
        reason = (f"horizontal shifts only: a vertical shift does not predict held-out "
                  f"isotherms better by more than {100 * VERTICAL_GAIN:.0f} % (median error "
                  f"{base:.2f} %" + (f"; {rest}" if rest else "") + ")")
    o, fitted, cv = built[chosen]
    return o, fitted, cv, VerticalChoice(chosen, errors, failed, reason)
