"""The non-negative least-squares core shared by the Prony fits and the relaxation spectrum.

With the relaxation times fixed on a grid, E', E'', E(t) and D(t) are linear in their
non-negative coefficients, y ≈ offset + A x with x ≥ 0, and weighted rows W turn the fit into
min ||W(A x + offset − y)||, x ≥ 0, solved by non-negative least squares (Lawson & Hanson,
*Solving Least Squares Problems*, Prentice-Hall 1974). This module holds what those fits
share: the log-spaced time grids, the checks of the data they take, the row weights, the
solver, and the weighted problem with its pruning and standard errors.

Imports numpy (scipy inside :func:`solve_nnls`, so that importing the package stays light).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from .._arrays import as_1d_finite
from .._validation import bad_value, check_positive
from ..exceptions import FitError

__all__ = ["log_spaced_relaxation_times", "log_grid", "relaxation_time_grid", "positive_abscissa",
           "measured_values", "relative_weights", "solve_nnls", "LinearProblem",
           "solve_with_pruning"]


# ----------------------------------------------------------------------------------------
# grids of relaxation times
# ----------------------------------------------------------------------------------------
def log_spaced_relaxation_times(lo_s: float, hi_s: float, *, terms_per_decade: float = 2.0,
                                margin_decades: float = 1.0) -> np.ndarray:
    """Relaxation times log-spaced over ``[lo_s, hi_s]`` widened by a margin at each end.

    The grid runs from ``lo_s / 10**margin_decades`` to ``hi_s * 10**margin_decades`` with a
    spacing of at most ``1/terms_per_decade`` decades (docs/methods.md §4.2; Park & Schapery,
    Int. J. Solids Struct. 36:1653, 1999, use the same construction).

    Parameters
    ----------
    lo_s, hi_s : float
        Shortest and longest reduced time covered by the data (s); ``0 < lo_s <= hi_s``.
    terms_per_decade : float
        Density of the grid (terms per decade of time), > 0.
    margin_decades : float
        Extension of the grid beyond the data at each end (decades), >= 0.

    Returns
    -------
    numpy.ndarray
        Increasing relaxation times (s), at least one.
    """
    lo = check_positive("lo_s", lo_s)
    hi = check_positive("hi_s", hi_s)
    if hi < lo:
        raise bad_value("hi_s", f"at least lo_s = {lo!r}", hi_s)
    density = check_positive("terms_per_decade", terms_per_decade)
    margin = check_positive("margin_decades", margin_decades, allow_zero=True)
    return log_grid(math.log10(lo) - margin, math.log10(hi) + margin, density)


def log_grid(a: float, b: float, density: float) -> np.ndarray:
    """10**x for x from a to b (b >= a) in equal steps of at most 1/density."""
    if b <= a:
        return np.array([10.0 ** a])
    n = max(1, int(math.ceil((b - a) * density - 1e-9))) + 1
    return np.logspace(a, b, n)


def relaxation_time_grid(tau_s: ArrayLike | None, lo: float, hi: float, terms_per_decade: float,
                         margin_decades: float) -> np.ndarray:
    """The user's relaxation times ``tau_s`` (s; sorted, duplicates dropped), or when None the
    log-spaced grid of :func:`log_spaced_relaxation_times` over ``[lo, hi]`` (s)."""
    if tau_s is None:
        return log_spaced_relaxation_times(lo, hi, terms_per_decade=terms_per_decade,
                                           margin_decades=margin_decades)
    tau = as_1d_finite("tau_s", tau_s)
    if tau.size == 0 or (tau <= 0).any():
        raise bad_value("tau_s", "a non-empty array of positive times", tau_s)
    return np.unique(tau)


# ----------------------------------------------------------------------------------------
# the data a fit takes
# ----------------------------------------------------------------------------------------
def positive_abscissa(name: str, values: Any) -> np.ndarray:
    """Reduced times (s) or frequencies (rad/s) of a fit: one-dimensional, finite, > 0, at
    least two."""
    a = as_1d_finite(name, values)
    if a.size < 2:
        raise bad_value(name, "at least 2 points", f"{a.size} point(s)")
    if (a <= 0).any():
        i = int(np.flatnonzero(a <= 0)[0])
        raise bad_value(f"{name}[{i}]", "positive", float(a[i]))
    return a


def measured_values(name: str, values: Any, n: int, relative: bool) -> np.ndarray:
    """Measured values at the ``n`` abscissae: > 0 for relative residuals, else >= 0."""
    a = as_1d_finite(name, values)
    if a.size != n:
        raise bad_value(name, f"as long as the abscissa ({n} values)", f"{a.size} values")
    bad = (a <= 0) if relative else (a < 0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        rule = "positive (relative residuals divide by it)" if relative else "non-negative"
        raise bad_value(f"{name}[{i}]", rule, float(a[i]))
    return a


def relative_weights(measured: np.ndarray, relative: bool) -> np.ndarray:
    """Row weights: 1/y (relative residuals), or else 1/max(y) on every row (1 if max(y) = 0)."""
    if relative:
        return 1.0 / measured
    return np.full(measured.size, 1.0 / measured.max() if measured.max() > 0 else 1.0)


# ----------------------------------------------------------------------------------------
# the solver and the weighted problem
# ----------------------------------------------------------------------------------------
def solve_nnls(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """min ||a x − b|| with x ≥ 0 (Lawson & Hanson 1974), columns scaled to unit norm."""
    from scipy.optimize import nnls

    norms = np.linalg.norm(a, axis=0)
    norms[norms == 0] = 1.0
    try:
        xs, _ = nnls(a / norms, b, maxiter=max(200, 50 * a.shape[1]))
    except RuntimeError as exc:  # iteration limit of the active-set method
        raise FitError(f"non-negative least squares did not converge: {exc}") from None
    return xs / norms


class LinearProblem:
    """A weighted NNLS problem min ||W(A x − y)|| with optional pruning of term columns.

    ``design`` is the unweighted model matrix (rows: stacked observations, columns: fixed
    columns first, then one column per candidate term); ``offset`` a fixed part of the model.
    """

    def __init__(self, design: np.ndarray, measured: np.ndarray, weights: np.ndarray,
                 offset: np.ndarray | float, n_fixed: int):
        self.design = design
        self.measured = measured
        self.weights = weights
        self.offset = offset
        self.n_fixed = n_fixed
        self.aw = design * weights[:, None]
        self.bw = (measured - offset) * weights

    def solve(self, cols: np.ndarray) -> np.ndarray:
        x = np.zeros(self.design.shape[1])
        x[cols] = solve_nnls(self.aw[:, cols], self.bw)
        return x

    def model(self, x: np.ndarray) -> np.ndarray:
        return self.offset + self.design @ x

    def rms_percent(self, x: np.ndarray) -> float:
        rel = self.model(x) / self.measured - 1.0
        return float(100.0 * np.sqrt(np.mean(rel * rel)))

    def prune(self, x: np.ndarray, tolerance_percent: float) -> tuple[np.ndarray, int]:
        """Backward elimination: drop the term whose removal (with a refit) costs least,
        while the relative rms stays within ``tolerance_percent`` of the full fit's."""
        limit = self.rms_percent(x) + tolerance_percent
        fixed = list(range(self.n_fixed))
        removed = 0
        while True:
            active = [j for j in range(self.n_fixed, x.size) if x[j] > 0]
            if not active:
                break
            best = None
            for j in active:
                cols = np.array(fixed + [k for k in active if k != j], dtype=int)
                if cols.size == 0:
                    continue
                trial = self.solve(cols)
                if not np.any(trial > 0) or (self.n_fixed == 0 and
                                             not np.any(trial[self.n_fixed:] > 0)):
                    continue
                r = self.rms_percent(trial)
                if best is None or r < best[0]:
                    best = (r, trial)
            if best is None or best[0] > limit:
                break
            removed += len(active) - int(np.sum(best[1][self.n_fixed:] > 0))
            x = best[1]
        return x, removed

    def stderr(self, x: np.ndarray) -> np.ndarray:
        """Linearised standard errors of the non-zero coefficients (NaN where x = 0)."""
        out = np.full(x.size, np.nan)
        act = np.flatnonzero(x > 0)
        m, k = self.aw.shape[0], act.size
        if k == 0 or m <= k:
            return out
        j = self.aw[:, act]
        norms = np.linalg.norm(j, axis=0)
        js = j / norms
        r = self.aw @ x - self.bw
        s2 = float(r @ r) / (m - k)
        cov = np.linalg.pinv(js.T @ js) * s2 / np.outer(norms, norms)
        out[act] = np.sqrt(np.clip(np.diag(cov), 0, None))
        return out

    def profile_interval(self, x: np.ndarray, column: int) -> tuple[float, float]:
        """The one-standard-error interval of coefficient ``column`` from its profile, with
        every other coefficient refitted non-negative at each trial value.

        The interval holds the values v ≥ 0 at which the least weighted residual sum of squares
        with x_column = v stays within s² of the fit's own, S(v) ≤ S(x) + s²,
        s² = S(x)/(m − k) (m rows, k non-zero coefficients): the likelihood-ratio interval of
        one parameter at Δχ² = 1 (Venzon & Moolgavkar, *Appl. Statist.* 37:87, 1988; Bates &
        Watts, *Nonlinear Regression Analysis*, 1988, §6.1). Unlike :meth:`stderr` it lets a
        term held at 0 by the constraint take over when the coefficient moves: the equilibrium
        modulus of data that stop short of the rubbery plateau trades against the slow terms
        beyond the data, which the linearisation on the non-zero terms does not see (docs/
        methods.md §4.2). The other coefficients may use every column, so after pruning the
        interval is, if anything, wider. (NaN, NaN) when the fit has no degree of freedom
        left or no finite value of the coefficient raises S that far.
        """
        m = self.aw.shape[0]
        k = int(np.count_nonzero(x))
        if m <= k:
            return math.nan, math.nan
        others = np.array([j for j in range(x.size) if j != column], dtype=int)
        a_col = self.aw[:, column]
        # the trial fits on the triangular factor: the R of [A b] = QR (A's columns scaled to
        # unit norm) holds A's factor R_A, c = Qᵀb and the part of b outside A's range, and
        # ||A x − b||² = ||R_A x − c||² + outside² for every x; each trial then costs an n × n
        # solve instead of an m × n one (m up to 40 000 rows in a build)
        n = x.size
        norms = np.linalg.norm(self.aw, axis=0)
        norms[norms == 0] = 1.0
        r_aug = np.asarray(np.linalg.qr(np.column_stack([self.aw / norms, self.bw]), mode="r"))
        top_rows = min(r_aug.shape[0], n)
        c = r_aug[:top_rows, n]
        outside = float(r_aug[n, n]) ** 2 if r_aug.shape[0] > n else 0.0
        r_col = r_aug[:top_rows, column] * norms[column]
        r_others = r_aug[:top_rows, others]

        def rss(value: float) -> float:
            rhs = c - r_col * value
            rest = solve_nnls(r_others, rhs) if others.size else np.zeros(0)
            r = r_others @ rest - rhs
            return float(r @ r) + outside

        r_best = float(np.sum((self.aw @ x - self.bw) ** 2))
        target = r_best + r_best / (m - k)
        excess = lambda value: rss(value) - target   # noqa: E731
        v0 = float(x[column])
        top = np.abs(a_col).max()
        if top == 0:
            return math.nan, math.nan
        if excess(v0) >= 0:   # no noise left to move it by (an exact fit, up to rounding)
            return v0, v0
        # first step: the linearised standard error when there is one, else 1 % of the value,
        # or (at 0) a change of 0.1 % of the best-determined row
        linear = float(self.stderr(x)[column]) if v0 > 0 else math.nan
        first = (linear if math.isfinite(linear) and linear > 0
                 else 1e-2 * v0 if v0 > 0 else 1e-3 / top)
        high = _edge(excess, v0, first, +1.0)
        low = _edge(excess, v0, first, -1.0) if v0 > 0 else 0.0
        return low, high


def _edge(excess, v0: float, first: float, direction: float) -> float:
    """Where ``excess`` (< 0 at ``v0``) first reaches 0 going from ``v0`` in ``direction``
    (+1 up, −1 down, not below 0): steps doubled from ``first`` until it is bracketed, then
    Brent's root finder to 0.01 % of the bracket (NaN if not bracketed going up)."""
    from scipy.optimize import brentq

    step, inner = first, v0
    for _ in range(62):
        outer = v0 + direction * step
        if outer <= 0.0:
            return 0.0 if excess(0.0) <= 0 else float(brentq(excess, 0.0, inner,
                                                            xtol=1e-4 * (inner or step)))
        if excess(outer) >= 0:
            a, b = sorted((inner, outer))
            return float(brentq(excess, a, b, xtol=1e-4 * step, rtol=1e-10))
        inner, step = outer, 2.0 * step
    return math.nan


def solve_with_pruning(problem: LinearProblem,
                       prune_tolerance_percent: float | None) -> tuple[np.ndarray, int]:
    """Solve on every column, then prune (:meth:`LinearProblem.prune`) when a tolerance (in
    percentage points of rms) is given; returns the coefficients and the terms removed."""
    x = problem.solve(np.arange(problem.design.shape[1]))
    removed = 0
    if prune_tolerance_percent is not None:
        x, removed = problem.prune(x, float(prune_tolerance_percent))
    return x, removed
