"""The fit of one law to a weighted shift table: bounds and held parameters checked, the law's
start values, Levenberg-Marquardt from each (lmfit's ``leastsq``), the best kept; or, for a law
linear in its constants and unbounded, the direct weighted linear least-squares solve."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from .._validation import bad_value
from ..exceptions import FitError
from ._start_grid import weighted_lstsq
from ._weighting import Weighting
from .base import Bounds, LinearShiftLaw, ShiftLaw
from .results import DIRECT_METHOD, LMFIT_METHOD

#: solver evaluations per free parameter (+1): for each of several starts, and for the last one
START_BUDGET, FULL_BUDGET = 100, 4000
#: MINPACK lmdif's ``info`` 6, 7, 8: ftol, xtol or gtol "too small, no further reduction in
#: the sum of squares / improvement of the solution is possible" (Moré, Garbow & Hillstrom,
#: User Guide for MINPACK-1, ANL-80-74, 1980): the solver stands at a minimum to machine
#: precision, which the strict tolerances here (1e-12) ask for and lmfit does not count as
#: success
AT_PRECISION_LIMIT = (6, 7, 8)
#: a continuation on the full budget that lowers χ² by less than this fraction of itself has
#: stalled in a flat valley: more evaluations would not change the law's predictions
STALL_RELATIVE = 1e-4

_SINGULAR_NOTE = "parameter uncertainties could not be estimated (singular covariance)"


@dataclass(frozen=True)
class Outcome:
    """One law fitted to the table (internal)."""

    cls: type[ShiftLaw]
    params: dict
    stderr: dict
    correlation: dict
    covariance: np.ndarray | None
    free_names: tuple
    chi_square: float
    success: bool
    message: str
    nfev: int
    notes: tuple
    method: str = LMFIT_METHOD


def fit_one(cls: type[ShiftLaw], T: np.ndarray, y: np.ndarray, weigh: Weighting, tr: float,
            fixed: Mapping[str, float], user_bounds: Mapping[str, Bounds],
            order: int) -> Outcome:
    """Fit one law: directly when it is linear in its constants and unbounded, else by
    Levenberg-Marquardt from the law's best separable-grid starts."""
    names = cls.fit_parameter_names(order)
    bounds = _checked_bounds(cls, T, tr, fixed, user_bounds, order)
    free = tuple(n for n in names if n not in fixed)
    if (issubclass(cls, LinearShiftLaw) and free   # linear_in_constants
            and all(not np.any(np.isfinite(bounds[n])) for n in free)):
        return linear_outcome(cls, T, y, weigh, tr, fixed, names, free, order)
    starts = cls.start_values(T, y, weigh, tr, fixed, bounds, order)
    if not starts:
        raise FitError(f"{cls.model}: no trial break temperature within the bounds of "
                       "glass_transition_K leaves two points on each side")
    solver = _LawSolver(cls, T, y, weigh, tr, free)
    best = solver.best_from(starts, names, fixed, bounds)
    return _outcome(cls, best, names, free, bounds, solver.evaluations)


def _checked_bounds(cls, T, tr, fixed, user_bounds, order) -> dict[str, Bounds]:
    """The fit's bounds; held parameters within the bounds the user gave and within the
    law's own rules."""
    bounds = cls.fit_bounds(T, tr, fixed, user_bounds, order)
    for n, v in fixed.items():
        lo, hi = bounds[n]
        if n in user_bounds and not lo <= v <= hi:
            raise bad_value(f"fixed[{n!r}]", f"within its bounds ({lo:.6g}, {hi:.6g})", v)
    cls.check_fixed(fixed, T, tr)
    return bounds


def correlations(cov: np.ndarray, free) -> dict:
    """Correlation coefficient of each pair of free parameters, NaN where a variance is 0."""
    sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    corr = {}
    for i, a in enumerate(free):
        for j in range(i + 1, len(free)):
            denom = sd[i] * sd[j]
            corr[(a, free[j])] = float(cov[i, j] / denom) if denom > 0 else float("nan")
    return corr


def linear_outcome(cls: type[LinearShiftLaw], T, y, weigh, tr, fixed, names, free, order) -> Outcome:
    """Weighted linear least squares, solved directly, for a law linear in its constants.

    The covariance is the one lmfit reports for the same problem: (AᵀA)⁻¹ of the weighted
    design matrix A scaled by the reduced chi-square χ²/max(1, m − k), m weighted residuals.
    """
    cols = cls.linear_columns(T, tr, order)
    coefs = weighted_lstsq(cols, y, weigh, fixed)
    values = {n: float(coefs[n]) for n in names}
    with np.errstate(all="ignore"):
        r = weigh(cls._evaluate(values, T, tr) - y)
    chi2 = float(r @ r)
    A = weigh(np.column_stack([cols[n] for n in free]), axis=0)
    stderr = {n: 0.0 for n in names}
    corr: dict = {}
    notes = []
    try:
        cov = np.linalg.inv(A.T @ A) * (chi2 / max(1, weigh.size - len(free)))
    except np.linalg.LinAlgError:
        cov = None
        notes.append(_SINGULAR_NOTE)
    if cov is not None:
        sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
        stderr.update({n: float(v) for n, v in zip(free, sd, strict=True)})
        corr = correlations(cov, free)
    return Outcome(cls, values, stderr, corr, cov, free, chi2, True,
                   "linear least squares, solved directly", 0, tuple(notes), DIRECT_METHOD)


class _LawSolver:
    """lmfit's Levenberg-Marquardt (``leastsq``) on one law's weighted residuals, counting the
    evaluations over every start and the continuation (reported as nfev)."""

    def __init__(self, cls, T, y, weigh, tr, free):
        import lmfit  # lazily: lmfit loads matplotlib and pandas at import

        self.lmfit = lmfit
        self.cls, self.T, self.y, self.weigh, self.tr, self.free = cls, T, y, weigh, tr, free
        self.evaluations = 0

    def residual(self, p):
        values = p.valuesdict()
        with np.errstate(all="ignore"):
            r = self.weigh(self.cls._evaluate(values, self.T, self.tr) - self.y)
        return np.where(np.isfinite(r), r, 1e10)

    def parameters(self, start, names, fixed, bounds):
        """lmfit parameters from a start, moved just inside its bounds; held ones fixed."""
        params = self.lmfit.Parameters()
        for n in names:
            lo, hi = bounds[n]
            if n in fixed:
                params.add(n, value=fixed[n], vary=False)
            else:
                params.add(n, value=into_bounds(float(start[n]), lo, hi), min=lo, max=hi)
        return params

    def solve(self, params, budget):
        """(chi², parameters, lmfit result) from ``params``, or None when not finite."""
        free = self.free
        try:
            res = self.lmfit.minimize(self.residual, params, method="leastsq", xtol=1e-12,
                                      ftol=1e-12, max_nfev=budget * (len(free) + 1))
        except Exception as exc:  # lmfit/MINPACK failures become FitError
            raise FitError(f"{self.cls.model}: the least-squares solver failed: {exc}") from exc
        self.evaluations += int(res.nfev)
        chi2 = float(np.sum(np.asarray(res.residual) ** 2))
        values = [res.params[n].value for n in free]
        if not (np.isfinite(chi2) and np.all(np.isfinite(values))):
            return None
        if not res.success and getattr(res, "ier", None) in AT_PRECISION_LIMIT:
            accept_at_precision_limit(res, self.residual, free)
        return (chi2, res.params, res)

    def best_from(self, starts, names, fixed, bounds):
        """The best solve over the starts: every start on the small budget (a start that
        wanders off towards a degenerate corner would otherwise cost thousands of
        evaluations); the best one, if still unconverged, continues with the full budget —
        also when it is the only start (it once did not: a single start that ran out of its
        small budget was reported as not converged, lmfit's "Tolerance seems to be too small"
        for an aborted run). A continuation that used its whole budget (lmfit: aborted) while
        χ² fell by less than ``STALL_RELATIVE`` of itself stands in a flat valley of χ² (WLF constants
        running off together towards the Arrhenius limit, a break temperature anywhere between
        two isotherms): its constants are taken, with a message that says so. With nothing
        free, the starting constants themselves."""
        best = None
        for start in starts:
            params = self.parameters(start, names, fixed, bounds)
            if not self.free:
                r = self.residual(params)
                best = (float(r @ r), params, None)
                break
            out = self.solve(params, START_BUDGET)
            if out is not None and (best is None or out[0] < best[0]):
                best = out
        if best is not None and best[2] is not None and not best[2].success:
            more = self.solve(best[1], FULL_BUDGET)
            if more is not None and not more[2].success and getattr(more[2], "aborted", False) \
                    and best[0] - more[0] <= STALL_RELATIVE * best[0]:
                accept_stalled(more[2], self.residual, self.free)
            best = more or best
        if best is None:
            raise FitError(f"{self.cls.model}: the fit produced no finite parameters")
        return best


def _outcome(cls, best, names, free, bounds, evaluations) -> Outcome:
    """The law's constants, standard errors, correlations and doubts from the best solve."""
    chi2, p, res = best
    values = {n: float(p[n].value) for n in names}
    notes = []
    stderr = {n: 0.0 for n in names}
    corr: dict = {}
    cov = None
    if res is not None:
        cov = None if res.covar is None else np.asarray(res.covar, dtype=float)
        for n in free:
            s = p[n].stderr
            stderr[n] = float("nan") if s is None else float(s)
        if cov is None:
            notes.append(_SINGULAR_NOTE)
        else:
            corr = correlations(cov, free)
        notes += _notes_at_bounds(values, free, bounds)
    return Outcome(cls, values, stderr, corr, cov, free, chi2,
                   True if res is None else bool(res.success),
                   "all parameters fixed; nothing was fitted" if res is None else str(res.message),
                   evaluations, tuple(notes))


def _notes_at_bounds(values, free, bounds) -> list[str]:
    notes = []
    for n in free:
        lo, hi = bounds[n]
        for side, b in (("lower", lo), ("upper", hi)):
            if np.isfinite(b) and abs(values[n] - b) <= 1e-6 * max(1.0, abs(b)):
                notes.append(f"{n} ended at its {side} bound {b:.6g}; the data do not "
                             f"determine it within the bounds")
    return notes


def into_bounds(value: float, lo: float, hi: float) -> float:
    """Move a starting value just inside its bounds (lmfit needs lo < start < hi)."""
    if lo < value < hi:
        return value
    if np.isfinite(lo) and np.isfinite(hi):
        if not np.isfinite(value):
            return 0.5 * (lo + hi)
        return lo + (hi - lo) * (1e-3 if value <= lo else 1 - 1e-3)
    if value <= lo:
        return lo + max(1e-3 * abs(lo), 1e-3)
    return hi - max(1e-3 * abs(hi), 1e-3)


def accept_stalled(res, residual, free) -> None:
    """Take a run that crept along a flat valley of χ² until its budget ran out: the
    covariance as at the precision limit (large where the valley is flat), and a message."""
    accept_at_precision_limit(res, residual, free)
    res.message = (f"χ² stopped falling (by less than {STALL_RELATIVE:g} of itself over "
                   f"{int(res.nfev)} evaluations) along a flat valley: some constants are "
                   f"poorly determined, the fitted curve is not")


def accept_at_precision_limit(res, residual, free) -> None:
    """Mark a fit that stopped at machine precision as converged, with the covariance lmfit
    leaves out in that case: (JᵀJ)⁻¹ scaled by the reduced chi-square, as lmfit's own
    (central differences in the parameters, relative step 1e-6)."""
    params = res.params
    x0 = np.array([params[n].value for n in free], dtype=float)
    r0 = np.asarray(residual(params), dtype=float)
    J = np.empty((r0.size, x0.size))
    for j, n in enumerate(free):
        h = 1e-6 * max(1.0, abs(x0[j]))
        cols = []
        for sign in (1.0, -1.0):
            trial = params.copy()
            trial[n].value = x0[j] + sign * h
            cols.append(np.asarray(residual(trial), dtype=float))
        J[:, j] = (cols[0] - cols[1]) / (2 * h)
    dof = max(r0.size - x0.size, 1)
    try:
        cov = np.linalg.inv(J.T @ J) * float(r0 @ r0) / dof
    except np.linalg.LinAlgError:
        cov = None
    if cov is not None and np.all(np.isfinite(cov)) and np.all(np.diag(cov) >= 0):
        res.covar = cov
        for j, n in enumerate(free):
            params[n].stderr = float(np.sqrt(cov[j, j]))
    else:
        res.covar = None
    res.success = True
    res.message = f"converged to machine precision ({res.message})"
