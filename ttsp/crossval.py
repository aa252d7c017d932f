"""Cross-validation on held-out isotherms: the build's own accuracy on the user's data (layer 3).

For each interior isotherm k (every one but the coldest and the hottest, so that each is an
interpolation; at most ``MAX_HELD_OUT`` of them, evenly spread, in a large campaign), the build's fitting steps (:func:`ttsp.workflow.fit_steps`: shifts, shift law,
Prony series) run on the campaign without it, and the result predicts the left-out
measurements two ways:

* **at the law's a_T** — the full prediction a user gets from ``ttsp predict`` at that
  temperature: the Prony series at the reduced abscissa ω·a_T (or t/a_T) that the law gives,
  times b_T (divided, for a compliance);
* **at the best a_T** — the same series at the single shift that predicts the isotherm best
  (least squares of the relative errors over all its functions): what the master curve itself
  misses, whatever the law.

Both are reported as the rms relative error in per cent, per function and pooled over the
functions (root of the mean of their mean squares). Their ratio tells where a miss comes from:
near 1, the master curve's shape; well above 1, the shift law. This is leave-one-out
cross-validation in the sense of Stone (J. R. Stat. Soc. B 36:111, 1974) with the isotherm as
the unit left out, since points within an isotherm are not independent.

The master-curve model and the shift-law family chosen on all data (:mod:`ttsp.master_choice`,
``law="auto"``) are kept in every fold, their constants refitted: the folds measure how well
the chosen representation predicts, not how stable the choice is, and a choice made once
costs one fit instead of one per candidate and fold.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .build_options import BuildOptions

import math
import warnings
from dataclasses import dataclass, replace

import numpy as np
from scipy.optimize import minimize_scalar

from ._blas import one_blas_thread
from .data import Campaign
from .exceptions import DataError, FitError
from .result_contract import ResultContract, format_number, stderr_or_nan
from .shifting import default_reference_temperature_K
from .units import celsius_to_kelvin, kelvin_to_celsius

__all__ = ["HeldOutIsotherm", "CrossValidation", "cross_validate", "SCORED_FUNCTIONS"]

#: functions a held-out isotherm is scored on, in order of preference per domain
SCORED_FUNCTIONS = {
    "frequency": ("storage_modulus_Pa", "loss_modulus_Pa", "complex_modulus_Pa", "tan_delta"),
    "time": ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa"),
}
#: the best a_T is searched within this many decades of the law's a_T
_BEST_SHIFT_WINDOW = 3.0
_GRID_STEP = 0.05
#: shift-point pairs evaluated at once by the best-shift scan (times the Prony terms, floats)
_SCAN_VALUES = 20_000


@dataclass(frozen=True)
class HeldOutIsotherm:
    """Prediction of one left-out isotherm from a build without it.

    Attributes
    ----------
    temperature_K : float
    n_points : int
    law_log10_aT, best_log10_aT : float
        The shift the law of the fold gives, and the one that predicts the isotherm best.
    rms_percent_at_law_aT, rms_percent_at_best_aT : dict
        Function name → rms relative error (%), plus ``"all"``: pooled over the functions.
    error : str
        Why the fold could not be built (then the numbers are NaN); empty otherwise.
    """

    temperature_K: float
    n_points: int
    law_log10_aT: float
    best_log10_aT: float
    rms_percent_at_law_aT: dict
    rms_percent_at_best_aT: dict
    error: str = ""

    @property
    def temperature_C(self) -> float:
        return float(kelvin_to_celsius(self.temperature_K))

    def to_dict(self) -> dict:
        return {"temperature_C": self.temperature_C, "n_points": self.n_points,
                "law_log10_aT": _num(self.law_log10_aT), "best_log10_aT": _num(self.best_log10_aT),
                "rms_percent_at_law_aT": _num(self.rms_percent_at_law_aT.get("all", math.nan)),
                "rms_percent_at_best_aT": _num(self.rms_percent_at_best_aT.get("all", math.nan)),
                "per_function": [{"function": f,
                                  "rms_percent_at_law_aT": _num(self.rms_percent_at_law_aT[f]),
                                  "rms_percent_at_best_aT": _num(self.rms_percent_at_best_aT[f])}
                                 for f in self.rms_percent_at_law_aT if f != "all"],
                "error": self.error or None}

    @classmethod
    def from_dict(cls, data: dict) -> HeldOutIsotherm:
        """Rebuild a held-out isotherm from :meth:`to_dict` output (None read as NaN)."""
        at_law = {"all": stderr_or_nan(data.get("rms_percent_at_law_aT"))}
        at_best = {"all": stderr_or_nan(data.get("rms_percent_at_best_aT"))}
        for row in data.get("per_function") or ():
            at_law[row["function"]] = stderr_or_nan(row.get("rms_percent_at_law_aT"))
            at_best[row["function"]] = stderr_or_nan(row.get("rms_percent_at_best_aT"))
        return cls(temperature_K=float(celsius_to_kelvin(data["temperature_C"])),
                   n_points=int(data["n_points"]),
                   law_log10_aT=stderr_or_nan(data.get("law_log10_aT")),
                   best_log10_aT=stderr_or_nan(data.get("best_log10_aT")),
                   rms_percent_at_law_aT=at_law, rms_percent_at_best_aT=at_best,
                   error=data.get("error") or "")


def _num(v):
    return float(v) if v is not None and math.isfinite(v) else None


@dataclass(frozen=True)
class CrossValidation(ResultContract):
    """Held-out isotherm predictions of a build (see the module notes).

    Attributes
    ----------
    per_isotherm : tuple of HeldOutIsotherm
    functions : tuple of str
        The functions scored.
    method : str

    The result contract (:mod:`ttsp.result_contract`): ``params`` are the median and worst
    pooled errors, their ``stderr`` NaN; ``notes`` name the folds that could not be built;
    ``success`` is True when at least one was; ``to_frame`` has one row per held-out isotherm.
    """

    per_isotherm: tuple
    functions: tuple
    method: str = ("leave interior isotherms out one at a time (at most 8, evenly spread), "
                   "rebuild shifts, law and Prony series from "
                   "the others, predict it at the law's a_T and at its best a_T")

    def _pooled(self, key: str) -> np.ndarray:
        vals = np.asarray([getattr(h, key).get("all", math.nan) for h in self.per_isotherm],
                          dtype=float)
        return vals[np.isfinite(vals)]

    @property
    def params(self) -> dict:
        """Median and worst pooled rms error (%) over the held-out isotherms, at the law's a_T
        and at the best a_T; NaN when no fold could be built."""
        out = {}
        for label, key in (("at_law_aT", "rms_percent_at_law_aT"),
                           ("at_best_aT", "rms_percent_at_best_aT")):
            v = self._pooled(key)
            out[f"median_rms_percent_{label}"] = float(np.median(v)) if v.size else math.nan
            out[f"worst_rms_percent_{label}"] = float(np.max(v)) if v.size else math.nan
        return out

    @property
    def stderr(self) -> dict:
        """NaN for each of :attr:`params`: the spread of a handful of folds is not estimated."""
        return {k: math.nan for k in self.params}

    @property
    def notes(self) -> tuple:
        """One line for each fold that could not be built."""
        return tuple(f"held out {h.temperature_C:.4g} °C: {h.error}"
                     for h in self.per_isotherm if h.error)

    @property
    def success(self) -> bool:
        """Whether at least one held-out isotherm was predicted."""
        return self._pooled("rms_percent_at_law_aT").size > 0

    @property
    def message(self) -> str:
        """How many held-out isotherms were predicted."""
        return (f"{self._pooled('rms_percent_at_law_aT').size} of {len(self.per_isotherm)} "
                "held-out isotherms predicted")

    @property
    def law_to_best_ratio(self) -> float:
        """Worst ratio of the error at the law's a_T to that at the best a_T (1: the law costs
        nothing; 2: it doubles the master curve's own error somewhere)."""
        r = [h.rms_percent_at_law_aT["all"] / h.rms_percent_at_best_aT["all"]
             for h in self.per_isotherm
             if math.isfinite(h.rms_percent_at_law_aT.get("all", math.nan))
             and h.rms_percent_at_best_aT.get("all", 0) > 0]
        return float(max(r)) if r else math.nan

    def to_dict(self) -> dict:
        return {"method": self.method, "functions": list(self.functions),
                **{k: _num(v) for k, v in self.params.items()},
                "worst_law_to_best_ratio": _num(self.law_to_best_ratio),
                "per_isotherm": [h.to_dict() for h in self.per_isotherm]}

    @classmethod
    def from_dict(cls, data: dict) -> CrossValidation:
        """Rebuild the result from :meth:`to_dict` output (or a summary's ``cross_validation``)."""
        return cls(per_isotherm=tuple(HeldOutIsotherm.from_dict(h)
                                      for h in data.get("per_isotherm") or ()),
                   functions=tuple(data.get("functions") or ()), method=str(data["method"]))

    def to_frame(self):
        """One row per held-out isotherm: temperature, shifts, pooled and per-function errors."""
        import pandas as pd

        rows = []
        for h in self.per_isotherm:
            row = {"temperature_C": h.temperature_C, "law_log10_aT": h.law_log10_aT,
                   "best_log10_aT": h.best_log10_aT}
            for f in ("all",) + self.functions:
                row[f"rms_percent_at_law_aT_{f}"] = h.rms_percent_at_law_aT.get(f, math.nan)
                row[f"rms_percent_at_best_aT_{f}"] = h.rms_percent_at_best_aT.get(f, math.nan)
            row["error"] = h.error
            rows.append(row)
        return pd.DataFrame(rows)

    def _html_caption(self) -> str:
        return "Cross-validation (held-out isotherms)"

    def _html_rows(self) -> list[tuple[str, str]]:
        return [(f"{h.temperature_C:.4g} °C",
                 f"rms {format_number(h.rms_percent_at_law_aT.get('all'))} % at the law's a_T, "
                 f"{format_number(h.rms_percent_at_best_aT.get('all'))} % at the best a_T")
                for h in self.per_isotherm]


#: at most this many isotherms are held out (each costs a rebuild); beyond it, an evenly
#: spread subset of the interior ones
MAX_HELD_OUT = 8


def held_out_indices(n_isotherms: int, limit: int = MAX_HELD_OUT) -> np.ndarray:
    """Indices of the isotherms left out in turn: every interior one (not the coldest, not
    the hottest), or ``limit`` of them evenly spread in temperature order."""
    interior = np.arange(1, max(n_isotherms - 1, 1))
    if interior.size <= limit:
        return interior
    pick = np.unique(np.round(np.linspace(0, interior.size - 1, limit)).astype(int))
    return interior[pick]


def _without(campaign: Campaign, k: int) -> Campaign:
    isos = tuple(iso for j, iso in enumerate(campaign.isotherms) if j != k)
    return Campaign(isos, campaign.domain, campaign.modulus_kind, campaign.source,
                    campaign.units_as_read, campaign.metadata, campaign.dropped_rows)


def scored_functions(campaign: Campaign) -> tuple:
    """E' and E'' when both are measured (or |E*| and tan δ, or one of them); E(t), D(t)."""
    have = set(campaign.quantities)
    names = SCORED_FUNCTIONS[campaign.domain]
    if campaign.domain == "frequency" and {"storage_modulus_Pa", "loss_modulus_Pa"} <= have:
        return names[:2]
    return tuple(q for q in names if q in have)


class _Predictor:
    """Values of the scored functions of one isotherm from a model at any log10 a_T."""

    def __init__(self, model, iso, functions):
        self.model, self.iso, self.functions = model, iso, functions
        self.b = float(model.vertical_factor(iso.temperature_K))
        self.measured = {f: np.asarray(iso.values[f], dtype=float) for f in functions}

    def values(self, f: str, log10_aT) -> np.ndarray:
        """Function ``f`` at the isotherm's abscissae for one log10 a_T (shape (m,)) or an array
        of them (shape (g, m): one row per shift, one evaluation of the series)."""
        series, x = self.model.series, self.iso.x
        a = 10.0 ** np.asarray(log10_aT, dtype=float)[..., None]
        if f == "storage_modulus_Pa":
            return series.storage_modulus(x * a) * self.b
        if f == "loss_modulus_Pa":
            return series.loss_modulus(x * a) * self.b
        if f == "complex_modulus_Pa":
            return series.abs_complex_modulus(x * a) * self.b
        if f == "tan_delta":
            return series.tan_delta(x * a)
        if f == "relaxation_modulus_Pa":
            return series.relaxation_modulus(x / a) * self.b
        return self.model.creep_series.creep_compliance(x / a) / self.b

    def mean_squares(self, log10_aT) -> dict:
        """Per function, the mean squared relative error at ``log10_aT`` (a float, or an
        array for one value per shift); NaN for a function without points."""
        out = {}
        for f in self.functions:
            m = self.measured[f]
            ok = np.isfinite(m) & (m != 0)
            if not ok.any():
                out[f] = np.full(np.shape(log10_aT), math.nan) if np.ndim(log10_aT) else math.nan
                continue
            with np.errstate(all="ignore"):
                rel = self.values(f, log10_aT)[..., ok] / m[ok] - 1.0
            v = np.mean(rel * rel, axis=-1)
            out[f] = v if np.ndim(log10_aT) else float(v)
        return out

    def pooled(self, log10_aT) -> float:
        """Mean over the functions of their mean squares (inf when none is finite)."""
        return float(self.pooled_many(np.array([float(log10_aT)]))[0])

    def pooled_many(self, log10_aT: np.ndarray) -> np.ndarray:
        """:meth:`pooled` at each of an array of shifts, the series evaluated once per chunk of
        shifts (a chunk spans at most _SCAN_VALUES shift-point pairs: a dense isotherm's whole
        grid at once took 0.8 GB for 20,000 points)."""
        per_chunk = max(1, _SCAN_VALUES // max(self.iso.x.size, 1))
        if log10_aT.size > per_chunk:
            return np.concatenate([self.pooled_many(log10_aT[i:i + per_chunk])
                                   for i in range(0, log10_aT.size, per_chunk)])
        ms = np.array([np.broadcast_to(v, log10_aT.shape)
                       for v in self.mean_squares(log10_aT).values()])
        finite = np.isfinite(ms)
        count = finite.sum(axis=0)
        total = np.where(finite, ms, 0.0).sum(axis=0)
        with np.errstate(all="ignore"):
            return np.where(count > 0, total / np.maximum(count, 1), math.inf)

    def best_shift(self, around: float) -> float:
        grid = np.arange(around - _BEST_SHIFT_WINDOW, around + _BEST_SHIFT_WINDOW + 1e-9,
                         _GRID_STEP)
        costs = self.pooled_many(grid)
        g = int(np.argmin(costs))
        res = minimize_scalar(self.pooled, bounds=(grid[g] - _GRID_STEP, grid[g] + _GRID_STEP),
                              method="bounded", options={"xatol": 1e-4})
        return float(res.x) if res.fun <= costs[g] else float(grid[g])

    def rms_percent(self, log10_aT: float) -> dict:
        ms = self.mean_squares(log10_aT)
        out = {f: 100.0 * math.sqrt(v) if math.isfinite(v) else math.nan for f, v in ms.items()}
        finite = [v for v in ms.values() if math.isfinite(v)]
        out["all"] = 100.0 * math.sqrt(float(np.mean(finite))) if finite else math.nan
        return out


def _fold(train: Campaign, options, t_ref: float, start_from=None):
    """The build's fitting steps on one fold, its shift fit iterating from ``start_from``
    (the full build's shifts) when given; a law family that cannot be fitted to the
    fold's shifts (too few on one side of a break, a solver that stalls) falls back to the
    choice among all laws, as a build of those isotherms would make it."""
    from .workflow import fit_steps

    try:
        return fit_steps(train, options, t_ref, measure_collapse=False, start_from=start_from)
    except FitError:
        if options.law == "auto":
            raise
        return fit_steps(train, replace(options, law="auto"), t_ref, measure_collapse=False,
                         start_from=start_from)


def _held_out(campaign: Campaign, k: int, options, t_ref: float, functions, start_from):
    """Leave isotherm k out, build from the rest, predict it."""
    iso = campaign.isotherms[k]
    try:
        fold = _fold(_without(campaign, k), options, t_ref, start_from)
        law_s = float(fold.model.log10_aT(iso.temperature_K))
    except (DataError, FitError) as exc:
        return _failed(iso, functions, str(exc))
    predictor = _Predictor(fold.model, iso, functions)
    best_s = predictor.best_shift(law_s)
    return HeldOutIsotherm(float(iso.temperature_K), int(iso.n_points), law_s, best_s,
                           predictor.rms_percent(law_s), predictor.rms_percent(best_s))


def _failed(iso, functions, reason: str) -> HeldOutIsotherm:
    nan = {f: math.nan for f in ("all",) + functions}
    return HeldOutIsotherm(float(iso.temperature_K), int(iso.n_points), math.nan, math.nan,
                           dict(nan), dict(nan), reason)


def cross_validate(campaign: Campaign, options: BuildOptions | None = None,
                   reference_temperature_K: float | None = None, *, full=None) -> CrossValidation:
    """Predict each interior isotherm from a build without it (see the module notes).

    Parameters
    ----------
    campaign : Campaign
        With its derived functions (``campaign.with_derived()``), at least three isotherms
        for one fold.
    options : ttsp.workflow.BuildOptions, optional
        The build's options (default options when omitted).
    reference_temperature_K : float, optional
        Default: the build's default reference.
    full : ttsp.workflow.FittedSteps, optional
        The fit on all isotherms; its master-curve model is kept in every fold, and each
        fold's shift fit iterates from its shifts (the same optimum in fewer iterations).

    Returns
    -------
    CrossValidation
        Empty ``per_isotherm`` for fewer than three isotherms.
    """
    from .workflow import BuildOptions

    options = options or BuildOptions()
    campaign = campaign.with_derived()
    t_ref = (default_reference_temperature_K(campaign) if reference_temperature_K is None
             else float(reference_temperature_K))
    if full is not None:
        options = replace(options, law=full.law_fit.law.model)
        if full.master_curve is not None:
            options = replace(options, master_curve=full.master_curve.chosen)
    functions = scored_functions(campaign)
    start_from = None if full is None else full.shifts

    with warnings.catch_warnings(), one_blas_thread():
        warnings.simplefilter("ignore")
        held = [_held_out(campaign, int(k), options, t_ref, functions, start_from)
                for k in held_out_indices(len(campaign))]
    return CrossValidation(tuple(held), functions)
