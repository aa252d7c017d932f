"""Separable least squares over a grid of trials: the start values of the nonlinear laws.

A law such as WLF is linear in some constants (C1) once the others (C2) are held: each trial
of the nonlinear constants on a grid gets its linear ones by weighted linear least squares,
all trials in one batch, and the best trials start the nonlinear fit. The same solve, for one
trial, fits the laws that are linear in all their constants (Arrhenius, polynomial).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

import numpy as np

from ._weighting import Weighting

#: largest (trials x table rows) solved as one batch by :func:`grid_lstsq`
GRID_BATCH = 200_000
#: steps of the start grids above a lower limit: 0.5 ... 1e4 K, 70 of them log-spaced
GRID_STEPS_K = np.geomspace(0.5, 1e4, 70)


def grid_lstsq(columns: Mapping[str, np.ndarray], y: np.ndarray, weigh: Weighting,
               fixed: Mapping[str, float]) -> tuple[dict, np.ndarray]:
    """Weighted linear least squares y ~ Σ c_n col_n for a whole grid of trials at once.

    ``columns`` maps each coefficient name to its column: shape (G, n) for one column per trial
    (the trials differ in a nonlinear parameter held fixed on a grid), or (n,) for a column
    shared by all trials. Coefficients named in ``fixed`` are held. Returns the coefficients,
    name -> (G,) array, and the weighted sums of squares (G,), inf where a trial's columns are
    not finite.
    """
    G = max((np.shape(c)[0] for c in columns.values() if np.ndim(c) == 2), default=1)
    n = y.size
    if G > 1 and G * n > GRID_BATCH:   # many trials on a long table: in halves, bounded memory
        h = G // 2
        parts = [grid_lstsq({k: (c[sl] if np.ndim(c) == 2 else c) for k, c in columns.items()},
                            y, weigh, fixed) for sl in (slice(0, h), slice(h, G))]
        return ({k: np.concatenate([parts[0][0][k], parts[1][0][k]]) for k in parts[0][0]},
                np.concatenate([parts[0][1], parts[1][1]]))
    cols = {name: np.broadcast_to(np.asarray(c, dtype=float), (G, n)) for name, c in
            columns.items()}
    ok = np.all([np.all(np.isfinite(c), axis=1) for c in cols.values()], axis=0)
    r = np.broadcast_to(y, (G, n)).copy()
    coefs = {}
    for name, col in cols.items():
        if name in fixed:
            coefs[name] = np.full(G, float(fixed[name]))
            r -= fixed[name] * np.where(ok[:, None], col, 0.0)
    rw = weigh(r)
    free = [name for name in cols if name not in fixed]
    if free:
        A = np.stack([np.where(ok[:, None], cols[name], 0.0) for name in free], axis=-1)
        A = weigh(A, axis=1)                                        # (G, n, k)
        sol = batched_lstsq(A, rw)
        rw = rw - np.einsum("gnk,gk->gn", A, sol)
        coefs.update({name: sol[:, i] for i, name in enumerate(free)})
    sse = np.einsum("gn,gn->g", rw, rw)
    sse[~(ok & np.isfinite(sse))] = np.inf
    return coefs, sse


def batched_lstsq(A: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Least-squares solutions of A[g] x = b[g] for a stack of small problems (G, n, k).

    A single problem goes to LAPACK's lstsq (the direct solve of a linear law is a final
    answer). A grid of start values is solved through its k × k normal equations at once; the
    trials whose equations are singular or badly conditioned (condition above 1e10, so that
    squaring it loses the answer) fall back to the pseudo-inverse.
    """
    if A.shape[0] == 1:
        return np.linalg.lstsq(A[0], b[0], rcond=None)[0][None, :]
    AtA = np.einsum("gnk,gnl->gkl", A, A)
    Atb = np.einsum("gnk,gn->gk", A, b)
    sol = np.full(Atb.shape, np.nan)
    with np.errstate(all="ignore"):
        if AtA.shape[1] == 2:    # eigenvalues of a symmetric 2 x 2 matrix in closed form
            tr = AtA[:, 0, 0] + AtA[:, 1, 1]
            det = AtA[:, 0, 0] * AtA[:, 1, 1] - AtA[:, 0, 1] * AtA[:, 1, 0]
            root = np.sqrt(np.maximum(tr * tr - 4.0 * det, 0.0))
            cond = (tr + root) / (tr - root)
        else:
            cond = np.linalg.cond(AtA) if AtA.shape[1] > 1 else np.ones(AtA.shape[0])
        good = np.isfinite(cond) & (cond < 1e10) & (np.abs(AtA[:, 0, 0]) > 0)
        if good.any():
            sol[good] = np.linalg.solve(AtA[good], Atb[good][..., None])[..., 0]
    bad = ~(good & np.all(np.isfinite(sol), axis=1))
    if bad.any():
        sol[bad] = np.einsum("gkn,gn->gk", np.linalg.pinv(A[bad]), b[bad])
    return sol


def best_trials(coefs: Mapping[str, np.ndarray], sse: np.ndarray,
                extra: Mapping[str, Any]) -> Iterator[tuple[float, dict]]:
    """The grid's trials as (sse, {name: value}) pairs, best first, one at a time (callers
    take the first few of hundreds); ``extra`` adds the grid's own (nonlinear) parameters, each
    an array over the trials."""
    merged = {**coefs, **extra}
    for g in np.argsort(sse, kind="stable"):
        yield float(sse[g]), {k: float(v[g]) for k, v in merged.items()}


def best_trial(coefs: Mapping[str, np.ndarray], sse: np.ndarray,
               extra: Mapping[str, Any]) -> list[dict]:
    """The best trial of the grid as the one start value (none when the grid is empty)."""
    best = next(best_trials(coefs, sse, extra), None)
    return [] if best is None else [best[1]]


def weighted_lstsq(columns: Mapping[str, np.ndarray], y: np.ndarray, weigh: Weighting,
                   fixed: Mapping[str, float]) -> dict:
    """Weighted linear least squares y ~ Σ c_n col_n with some c_n fixed: the coefficients."""
    coefs, _ = grid_lstsq(columns, y, weigh, fixed)
    return {k: float(v[0]) for k, v in coefs.items()}


def grid_above(lower: float, bounds: tuple[float, float]) -> np.ndarray:
    """Trial values lower + (0.5 ... 1e4) K, restricted to ``bounds``."""
    grid = lower + GRID_STEPS_K
    lo, hi = bounds
    grid = grid[(grid > lo) & (grid < hi)]
    if grid.size == 0:
        lo2 = max(lo, lower)
        if np.isfinite(hi):
            grid = np.linspace(lo2, hi, 12)[1:-1] if hi > lo2 else np.array([])
        else:
            grid = lo2 + GRID_STEPS_K
    return grid
