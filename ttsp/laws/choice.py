"""The law choice of ``fit_shift_law(model="auto")``: by held-out prediction of the shifts.

Each law fitted to the table is refitted with each interior row left out in turn and asked to
predict it (leave-one-out cross-validation: Stone, J. R. Stat. Soc. B 36:111, 1974). The law
with the fewest constants wins unless a more flexible one predicts the left-out shifts better
beyond the noise of the shifts themselves.

A table can be too short to leave a row out of a flexible law (WLF-Arrhenius has four
constants; six isotherms give five shifts besides the reference's). Such a law is judged by
its information criterion instead, and replaces the held-out choice only when the shifts
reject that choice (its chi-square beyond their noise, p below :data:`LACK_OF_FIT_P`) and the
evidence for the flexible law is very strong (BIC lower by :data:`BIC_VERY_STRONG`). On the real binders of the benchmark, whose
shifts bend near 40 °C, six-isotherm builds otherwise fell back to WLF and missed a left-out
34 °C isotherm by up to 14 % (rms of G′ and G″) where WLF-Arrhenius missed it by 9 %.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING

import numpy as np
from scipy.special import chdtrc

from .._arrays import evenly_spaced_indices
from ..exceptions import DataError, FitError
from ._common import RESIDUAL_FLOOR_DECADES
from ._refit import refit_from
from ._weighting import Weighting

if TYPE_CHECKING:
    from ._solver import Outcome
    from ._table import ShiftTable
    from .base import Bounds

__all__ = ["MAX_HELD_OUT_ROWS", "HELD_OUT_GAIN_RATIO", "HELD_OUT_GAIN_MIN", "BIC_VERY_STRONG",
           "LACK_OF_FIT_P"]

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
#: a law too flexible for the table to leave a row out replaces the held-out choice only when
#: its BIC is lower by at least this: "very strong" evidence, 2 ln(Bayes factor) > 10 (Kass &
#: Raftery, J. Am. Stat. Assoc. 90:773, 1995); BIC on five or six shifts is a rough guide,
#: so only very strong evidence counts ...
BIC_VERY_STRONG = 10.0
#: ... and only when the held-out choice misses the shifts beyond their noise: its weighted
#: chi-square exceeds the upper 5 % point of the chi-square distribution of its degrees of
#: freedom (the usual lack-of-fit test, common practice). On 200 seeded six-row tables of an
#: exact WLF law with 0.02-decade noise, BIC alone put WLF-Arrhenius in place of WLF 28 times
#: (deviating up to 0.15 decade from the true law); with this test as well, twice.
LACK_OF_FIT_P = 0.05


def held_out_scores(candidates: Mapping, table: ShiftTable, order: int,
                    weighting_without: WeightingsWithout | None = None) -> dict[str, float]:
    """Mean squared held-out error of each fitted law (see :func:`held_out_score`); the
    ``candidates`` carry each law's outcome and its held parameters and bounds. Laws scored
    one call at a time share the table's weightings less one row by passing the same
    ``weighting_without``."""
    weighting_without = weighting_without or WeightingsWithout(table)
    if table.covariance is not None:
        scale = np.sqrt(np.diag(table.covariance))
    else:
        scale = 1.0 / table.weights if table.weighted else np.ones(table.n)
    return {m: held_out_score(c.outcome.cls, table.T_fit, table.y_fit, scale, weighting_without,
                              table.tr, c.fixed, c.bounds, order, c.outcome)
            for m, c in candidates.items()}


class WeightingsWithout:
    """The table's weighting less one row: one per left-out row, shared by every law (with a
    covariance each is an eigen-decomposition, n³ work: 0.25 s on 200 rows when every law
    made its own)."""

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
    left out, evenly spread in temperature. Returns inf when a refit fails, NaN when the table
    is too short to measure it (no interior row, or no more rows than constants once one is
    left out) (leave-one-out cross-validation: Stone, J. R. Stat. Soc. B 36:111, 1974)."""
    order_T = np.argsort(T)
    interior = order_T[1:-1]
    interior = interior[evenly_spaced_indices(interior.size, MAX_HELD_OUT_ROWS)]
    k_free = len(full.free_names)
    if interior.size == 0 or T.size - 1 <= k_free:
        return math.nan
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
                       weighted: bool, n_rows: int) -> tuple[str, str]:
    """The law that predicts left-out shift factors best, a more flexible one only when it
    does so beyond the noise (see HELD_OUT_GAIN_RATIO, HELD_OUT_GAIN_MIN), with the words; a
    more flexible law the table (``n_rows`` independent weighted rows) is too short to hold
    out (NaN score) by its BIC instead (see BIC_VERY_STRONG, LACK_OF_FIT_P)."""
    def n_free(m):
        return len(candidates[m].outcome.free_names)

    order = sorted(candidates, key=lambda m: (n_free(m), held_out[m], models.index(m)))
    chosen = order[0]
    for m in order[1:]:
        a, b = held_out[chosen], held_out[m]
        if not math.isfinite(b):
            continue
        if n_free(m) == n_free(chosen):
            better = b < a
        else:
            better = b < HELD_OUT_GAIN_RATIO * a and (not weighted or a - b > HELD_OUT_GAIN_MIN)
        if better or not math.isfinite(a):
            chosen = m
    flexible = _flexible_by_information(chosen, candidates, held_out, weighted, n_rows)
    if flexible:
        return flexible
    return chosen, _reason(chosen, candidates, held_out, weighted)


def _flexible_by_information(chosen: str, candidates: Mapping, held_out: Mapping[str, float],
                             weighted: bool, n_rows: int) -> tuple[str, str] | None:
    """A law with more constants than ``chosen`` that the table is too short to hold out, with
    the words, when the shifts reject ``chosen`` and its BIC is very strongly lower; else None."""
    k = len(candidates[chosen].outcome.free_names)
    unscored = sorted((m for m in candidates if math.isnan(held_out[m])
                       and len(candidates[m].outcome.free_names) > k),
                      key=lambda m: candidates[m].bic)
    dof = n_rows - k
    if not (unscored and weighted and dof > 0 and math.isfinite(held_out[chosen])):
        return None
    chi_square = float(candidates[chosen].outcome.chi_square)
    p = float(chdtrc(dof, chi_square))   # the upper tail of chi-square with dof
    m = unscored[0]
    gain = candidates[chosen].bic - candidates[m].bic
    if p >= LACK_OF_FIT_P or gain < BIC_VERY_STRONG:
        return None
    return m, (f"the {m} law was chosen by its information criterion: the table is too short "
               f"to leave a shift factor out of its {len(candidates[m].outcome.free_names)} "
               f"constants; the {chosen} law, the best by leave-one-out prediction, misses the "
               f"shift factors beyond their noise (chi-square {chi_square:.3g} on {dof} degrees "
               f"of freedom, p = {p:.2g}) and the {m} law's BIC is {gain:.3g} lower (very "
               f"strong evidence: {BIC_VERY_STRONG:g} or more)")


def _reason(chosen: str, candidates: Mapping, held_out: Mapping[str, float],
            weighted: bool) -> str:
    """One sentence: the chosen law's held-out error and how the runner-up compares."""
    others = sorted((m for m in candidates if m != chosen), key=lambda m: held_out[m])
    unit = "squared standard errors" if weighted else "squared decades"
    a = held_out[chosen]
    if not others and math.isfinite(a):   # the others failed, or were not needed
        return (f"the {chosen} law was chosen by leave-one-out prediction of the interior "
                f"shift factors (mean squared error {a:.3g} {unit}); no other law was fitted "
                "to compare with (see each candidate's status)")
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
