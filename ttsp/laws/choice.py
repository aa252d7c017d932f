"""The law choice of ``fit_shift_law(model="auto")``: by held-out prediction of the shifts.

Each law fitted to the table is refitted with each interior row left out in turn and asked to
predict it (leave-one-out cross-validation: Stone, J. R. Stat. Soc. B 36:111, 1974). The law
with the fewest constants wins unless a more flexible one predicts the left-out shifts better
beyond the noise of the shifts themselves.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING

import numpy as np

from .._arrays import evenly_spaced_indices
from ..exceptions import DataError, FitError
from ._common import RESIDUAL_FLOOR_DECADES
from ._refit import refit_from
from ._weighting import Weighting

if TYPE_CHECKING:
    from ._solver import Outcome
    from ._table import ShiftTable
    from .base import Bounds

__all__ = ["MAX_HELD_OUT_ROWS", "HELD_OUT_GAIN_RATIO", "HELD_OUT_GAIN_MIN",
           "HELD_OUT_GAIN_RATIO_POLYNOMIAL"]

#: At most this many interior rows are left out in turn when laws are compared by held-out
#: prediction (evenly spread in temperature): 40 errors estimate a mean square to about ±22 %,
#: and a campaign of 500 isotherms spent 70 s refitting each law 498 times.
MAX_HELD_OUT_ROWS = 40
#: a law with more free parameters replaces a simpler one only when its mean squared held-out
#: error (in units of the shifts' standard errors) is below this fraction of the simpler's ...
HELD_OUT_GAIN_RATIO = 0.75
#: ... and lower by more than this (one squared standard error per held-out shift: less is
#: within the noise of the shifts themselves); unweighted tables use the ratio alone
HELD_OUT_GAIN_MIN = 1.0
#: an empirical law (the polynomial), which has no physics to carry it between and beyond the
#: shifts, must halve the held-out error of the physical law it would replace (on real binders
#: a quadratic that won by a third on six shifts missed the seventh by 0.06 decade, twice what
#: WLF missed)
HELD_OUT_GAIN_RATIO_POLYNOMIAL = 0.5
#: ... and it counts as having this many more constants than it has, so that it must win
#: beyond the noise even against a physical law with as many
_EMPIRICAL_EXTRA_CONSTANTS = 0.5


def held_out_scores(candidates: Mapping, table: ShiftTable, order: int) -> dict[str, float]:
    """Mean squared held-out error of each fitted law (see :func:`held_out_score`); the
    ``candidates`` carry each law's outcome and its held parameters and bounds."""
    weighting_without = _WeightingsWithout(table)
    if table.covariance is not None:
        scale = np.sqrt(np.diag(table.covariance))
    else:
        scale = 1.0 / table.weights if table.weighted else np.ones(table.n)
    return {m: held_out_score(c.outcome.cls, table.T_fit, table.y_fit, scale, weighting_without,
                              table.tr, c.fixed, c.bounds, order, c.outcome)
            for m, c in candidates.items()}


class _WeightingsWithout:
    """The table's weighting less one row: one per left-out row, shared by every law."""

    def __init__(self, table: ShiftTable):
        self.weights, self.covariance = table.weights, table.covariance
        self.cache: dict = {}

    def __call__(self, keep: np.ndarray) -> Weighting:
        key = keep.tobytes()
        if key not in self.cache:
            C = self.covariance
            self.cache[key] = (Weighting(covariance=C[np.ix_(keep, keep)]) if C is not None
                               else Weighting(self.weights[keep]))
        return self.cache[key]


def held_out_score(cls, T: np.ndarray, y: np.ndarray, scale: np.ndarray,
                   weighting_without: Callable[[np.ndarray], Weighting], tr: float,
                   fixed: Mapping[str, float], bounds: Mapping[str, Bounds], order: int,
                   full: Outcome) -> float:
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
                params = refit_from(cls, T[keep], y[keep], weighting_without(keep), tr, fixed,
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
        if abs(e) < RESIDUAL_FLOOR_DECADES * max(1.0, float(np.abs(y).max())):
            e = 0.0
        errs.append(e / scale[i])
    return float(np.mean(np.square(errs)))


def choose_by_held_out(candidates: Mapping, held_out: Mapping[str, float], models: tuple,
                       weighted: bool) -> tuple[str, str]:
    """The law that predicts left-out shift factors best, a more flexible one only when it
    does so beyond the noise (see HELD_OUT_GAIN_RATIO, HELD_OUT_GAIN_MIN), with the words."""
    def n_free(m):
        outcome = candidates[m].outcome
        return len(outcome.free_names) + (_EMPIRICAL_EXTRA_CONSTANTS if outcome.cls.empirical
                                          else 0.0)

    order = sorted(candidates, key=lambda m: (n_free(m), held_out[m], models.index(m)))
    chosen = order[0]
    for m in order[1:]:
        a, b = held_out[chosen], held_out[m]
        if not math.isfinite(b):
            continue
        if n_free(m) == n_free(chosen):
            better = b < a
        else:
            ratio = (HELD_OUT_GAIN_RATIO_POLYNOMIAL if candidates[m].outcome.cls.empirical
                     else HELD_OUT_GAIN_RATIO)
            better = b < ratio * a and (not weighted or a - b > HELD_OUT_GAIN_MIN)
        if better or not math.isfinite(a):
            chosen = m
    return chosen, _reason(chosen, candidates, held_out, weighted)


def _reason(chosen: str, candidates: Mapping, held_out: Mapping[str, float],
            weighted: bool) -> str:
    """One sentence: the chosen law's held-out error and how the runner-up compares."""
    others = sorted((m for m in candidates if m != chosen), key=lambda m: held_out[m])
    unit = "squared standard errors" if weighted else "squared decades"
    a = held_out[chosen]
    if not others or not math.isfinite(a):
        return (f"the {chosen} law was the only one whose held-out predictions could "
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
    return (f"the {chosen} law was chosen by leave-one-out prediction of the interior "
            f"shift factors (mean squared error {a:.3g} {unit}): {words}")
