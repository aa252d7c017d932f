"""Which model of the master curve the shift factors are fitted with, chosen by the data (layer 3).

The joint shift fit (:mod:`ttsp.shifting`) lays all isotherms on one model curve. Two models:

``spectrum``
    one relaxation spectrum shared by every function, so E' and E'' stay Kramers–Kronig
    consistent. Where the data obey it, tying the functions together makes the shifts the
    most precise (on the synthetic benchmark, rms error 0.017 against 0.020 decade).
``splines``
    a smooth curve per function (penalised B-splines) sharing only the shifts: no physics, so
    it does not bend the shifts where the functions are not consistent with one spectrum
    (an E'' read by an instrument a few per cent off, a second process, a crossover of slopes).

``auto`` fits both and judges them by the data alone, with the measure a practitioner looks at
and that needs no model: how well neighbouring isotherms lie on each other after shifting
(the neighbour mismatch of :mod:`ttsp.pairwise`, every function with equal weight; each
isotherm is in effect predicted by its neighbours). The spectrum is kept unless the splines'
shifts collapse the data better by more than ``SPECTRUM_TOLERANCE`` (relative): on exact
synthetic campaigns with noise the two mismatches differ by a few per cent either way, so the
tolerance keeps the more precise model there; a spectrum that the data do not obey bends the
shifts and loses by far more (a 3 % low E'' costs it tens of per cent).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

from .data import Campaign
from .exceptions import DataError, FitError
from .pairwise import chained_pairwise_log10_aT, neighbour_mismatch

__all__ = ["MasterCurveChoice", "MASTER_CURVE_CHOICES", "SPECTRUM_TOLERANCE", "choose_master_curve"]

#: user-facing names of the master-curve models; "auto" chooses between the other two
MASTER_CURVE_CHOICES = ("auto", "spectrum", "splines")
#: name in ttsp.shifting.shift_isotherms(master_curve=...)
SHIFTING_NAME = {"spectrum": "spectrum", "splines": "spline"}
#: the splines must collapse the data better than the spectrum by more than this fraction
SPECTRUM_TOLERANCE = 0.05


@dataclass(frozen=True)
class MasterCurveChoice:
    """The master-curve model of a build and why.

    Attributes
    ----------
    chosen : str
        ``"spectrum"`` or ``"splines"``.
    requested : str
        What the user asked for (``"auto"`` or one of the models).
    neighbour_mismatch : dict
        Model name → neighbour mismatch of its shifts (decades); the ``"pairwise"`` entry is
        the chained pairwise shifts' (the plain route's) for scale. Only the models fitted.
    reason : str
        One sentence for the report.
    """

    chosen: str
    requested: str
    neighbour_mismatch: dict = field(default_factory=dict)
    reason: str = ""

    @property
    def collapse_ratio(self) -> float:
        """Mismatch of the chosen shifts over the plain chained-pairwise shifts' (≥ about 1)."""
        plain = self.neighbour_mismatch.get("pairwise", math.nan)
        mine = self.neighbour_mismatch.get(self.chosen, math.nan)
        return mine / plain if plain and plain > 0 else math.nan

    def to_dict(self) -> dict:
        return {"chosen": self.chosen, "requested": self.requested,
                "candidates": [{"model": k, "neighbour_mismatch_log10": _finite_or_none(v)}
                               for k, v in self.neighbour_mismatch.items()],
                "collapse_ratio": _finite_or_none(self.collapse_ratio),
                "reason": self.reason}


def _finite_or_none(v):
    return float(v) if v is not None and math.isfinite(v) else None


def choose_master_curve(campaign: Campaign, requested: str, fit_shifts,
                        reference_temperature_K: float, *, measure: bool = True):
    """Fit the shifts with the requested model, or with both and keep the better one.

    Parameters
    ----------
    campaign : Campaign
    requested : {"auto", "spectrum", "splines"}
    fit_shifts : callable
        ``fit_shifts(shifting_name) -> ShiftResult`` (the build's other options bound).
    reference_temperature_K : float
    measure : bool
        Measure the collapse of a requested model, and of chained pairwise shifts, for the
        record (the choice of ``"auto"`` measures its candidates in any case). Off where only
        the shifts are wanted (the folds of a cross-validation).

    Returns
    -------
    (ShiftResult, MasterCurveChoice)
    """
    names = ("spectrum", "splines") if requested == "auto" else (requested,)
    results, caught, failed = {}, {}, {}
    for n in names:
        with warnings.catch_warnings(record=True) as caught[n]:
            warnings.simplefilter("always")
            try:
                results[n] = fit_shifts(SHIFTING_NAME[n])
            except (DataError, FitError) as exc:
                if len(names) == 1:
                    raise
                failed[n] = exc
    if not results:   # both candidates failed: the spectrum's reason is the one to give
        raise failed["spectrum"]
    if failed:
        (n_ok,), (n_bad,) = results, failed
        for w in caught[n_ok]:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        return results[n_ok], MasterCurveChoice(
            n_ok, requested, {n_ok: neighbour_mismatch(campaign, results[n_ok].log10_aT)},
            f"the {n_bad} model could not be fitted ({failed[n_bad]}); the {n_ok} model was used")
    mismatch = {}
    if measure or requested == "auto":
        mismatch = {n: neighbour_mismatch(campaign, r.log10_aT) for n, r in results.items()}
    if measure:
        plain = chained_pairwise_log10_aT(campaign, reference_temperature_K)
        mismatch["pairwise"] = neighbour_mismatch(campaign, plain)
    if requested != "auto":
        chosen, reason = requested, f"the {requested} model was asked for"
    else:
        spec, spl = mismatch["spectrum"], mismatch["splines"]
        if math.isfinite(spec) and math.isfinite(spl) and spl < spec * (1 - SPECTRUM_TOLERANCE):
            chosen = "splines"
            reason = (f"neighbouring isotherms lie on each other better with per-function "
                      f"smooth curves than with one shared relaxation spectrum (mismatch "
                      f"{spl:.3g} against {spec:.3g} decade): the functions are not consistent "
                      f"with one spectrum, which would bend the shifts")
        else:
            chosen = "spectrum"
            reason = (f"the shared spectrum collapses the data as well as per-function smooth "
                      f"curves (mismatch {spec:.3g} against {spl:.3g} decade) and ties the "
                      f"functions together")
    for w in caught[chosen]:     # only the kept fit speaks
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return results[chosen], MasterCurveChoice(chosen, requested, mismatch, reason)
