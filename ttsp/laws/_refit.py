"""A law refitted to its shift table less one row, from the constants fitted to all rows: the
cheap refit behind the law choice by held-out prediction."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ._solver import Outcome, into_bounds
from ._start_grid import weighted_lstsq
from ._weighting import Weighting
from .base import Bounds, LinearShiftLaw, ShiftLaw


def refit_from(cls: type[ShiftLaw], T: np.ndarray, y: np.ndarray, weigh: Weighting, tr: float,
               fixed: Mapping[str, float], bounds: Mapping[str, Bounds], order: int,
               full: Outcome) -> dict:
    """The law's constants refitted to a slightly changed table, from those of ``full``.

    Linear laws are solved directly. WLF takes a few Levenberg-Marquardt steps
    (:func:`levenberg_marquardt`) from the full fit's constants: a table less one row moves
    them little. The others take trust-region steps (scipy's ``least_squares``, method "trf",
    which keeps the bounds without transforming them); in the flat C2-Tg valley of
    WLF-Arrhenius the refit's end point depends on the solver's path, and with it the held-out
    score (up to tens of percent on the law-choice benchmark), so it keeps its solver. Either
    costs a fraction of a millisecond where a fresh fit with its start grid costs several.
    Each law names its solver (``refit_solver``)."""
    names = cls.fit_parameter_names(order)
    free = tuple(n for n in names if n not in fixed)
    lims = cls.fit_bounds(T, tr, fixed, bounds, order)
    if issubclass(cls, LinearShiftLaw) and not any(   # linear_in_constants
            np.any(np.isfinite(lims[n])) for n in free):
        # the constants alone: the same solve as the direct fit, without its covariance
        coefs = weighted_lstsq(cls.linear_columns(T, tr, order), y, weigh, fixed)
        return {n: float(coefs[n]) for n in names}
    lo = np.array([lims[n][0] for n in free])
    hi = np.array([lims[n][1] for n in free])
    x0 = np.array([into_bounds(float(full.params[n]), lims[n][0], lims[n][1]) for n in free])

    def residual(x):
        p = dict(fixed)
        p.update(zip(free, x, strict=True))
        with np.errstate(all="ignore"):
            r = weigh(cls._evaluate(p, T, tr) - y)
        return np.where(np.isfinite(r), r, 1e10)

    max_nfev = 50 * (len(free) + 1)
    if cls.refit_solver == "levenberg-marquardt":
        x = levenberg_marquardt(residual, x0, lo, hi, max_nfev=max_nfev)
    else:   # a flat valley (WLF-Arrhenius: C2 against Tg) where the path decides the refit
        from scipy.optimize import least_squares

        x = least_squares(residual, x0, bounds=(lo, hi), method="trf", x_scale="jac",
                          max_nfev=max_nfev).x
    out = dict(fixed)
    out.update(zip(free, (float(v) for v in x), strict=True))
    return out


def levenberg_marquardt(residual, x0: np.ndarray, lo: np.ndarray, hi: np.ndarray,
                        max_nfev: int) -> np.ndarray:
    """Minimise |residual(x)|² from ``x0`` within [lo, hi]: Levenberg-Marquardt steps
    (JᵀJ + λ diag JᵀJ) dx = -Jᵀr (Marquardt, J. SIAM 11:431, 1963), J by forward differences,
    each trial clipped into the bounds; stops when a step lowers the sum of squares by less
    than 1e-10 of itself or moves x by less than 1e-10 of its size (scipy's least_squares,
    which this replaces here, stops at 1e-8), or when ten larger dampings find no descent.

    For refits from a nearby optimum (a table less one row) it takes a few steps of a few
    evaluations each, without the set-up of a general bounded solver."""
    x = np.asarray(x0, dtype=float).copy()
    r = residual(x)
    f = float(r @ r)
    nfev, lam = 1, 1e-6       # from near the optimum: Gauss-Newton steps, barely damped
    while nfev + x.size < max_nfev:
        J = _forward_jacobian(residual, x, r, hi)
        nfev += x.size
        A, g = J.T @ J, J.T @ r
        d = np.diag(A).copy()
        d[d <= 0] = 1.0
        moved = False
        for _ in range(10):
            if nfev >= max_nfev:
                break
            try:
                dx = np.linalg.solve(A + lam * np.diag(d), -g)
            except np.linalg.LinAlgError:
                lam *= 10.0
                continue
            xn = np.clip(x + dx, lo, hi)
            rn = residual(xn)
            nfev += 1
            fn = float(rn @ rn)
            if np.isfinite(fn) and fn < f:
                small = (f - fn <= 1e-10 * f
                         or np.all(np.abs(xn - x) <= 1e-10 * np.maximum(np.abs(x), 1e-10)))
                x, r, f, moved = xn, rn, fn, True
                lam = max(lam / 10.0, 1e-12)
                break
            lam *= 10.0
        if not moved or small:
            break
    return x


def _forward_jacobian(residual, x: np.ndarray, r: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """J by forward differences of relative step sqrt(machine epsilon), stepping backwards at
    an upper bound."""
    eps = 1.4901161193847656e-08          # sqrt of the float64 machine epsilon
    J = np.empty((r.size, x.size))
    for j in range(x.size):
        h = eps * max(1.0, abs(x[j]))
        if x[j] + h > hi[j]:
            h = -h
        xj = x.copy()
        xj[j] += h
        J[:, j] = (residual(xj) - r) / h
    return J
