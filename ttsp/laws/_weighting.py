"""How the residuals of a shift table are weighed: by each shift's standard error, or whitened
by the shifts' covariance (generalised least squares); and the check of a given covariance."""

from __future__ import annotations

from typing import Any

import numpy as np

from .._validation import bad_value

#: eigenvalues of a shift correlation matrix below this (times its size) count as zero
COVARIANCE_RANK_TOLERANCE = 1e-10


class Weighting:
    """How residuals r of the shift table are weighed: r_i/s_i, or whitened by a covariance.

    With a covariance C of the shifts (correlated, as shifts found along a chain of
    overlapping isotherms are) the fit minimises rᵀC⁻¹r, generalised least squares (Aitken,
    Proc. R. Soc. Edinburgh 55, 42, 1935): r ↦ W r with WᵀW = C⁺ from the eigen-decomposition
    of the correlation matrix D⁻¹CD⁻¹ (D the standard deviations, so that the cut does not
    depend on how precise each shift is). Directions of zero variance (a gauge condition such as
    log10 a_T = 0 interpolated at the reference) carry no information about the law and are
    dropped, so W has ``size`` ≤ n rows.
    """

    def __init__(self, w: np.ndarray | None = None, covariance: np.ndarray | None = None):
        self.w = w
        self.W: np.ndarray | None = None   # set from a covariance; else the weights w are used
        if covariance is not None:
            # on the correlation matrix, so that a very precise shift is not mistaken for a
            # direction of zero variance: C = D R D with D the standard deviations
            d = np.sqrt(np.diag(covariance))
            R = covariance / np.outer(d, d)
            vals, vecs = np.linalg.eigh(0.5 * (R + R.T))
            tol = COVARIANCE_RANK_TOLERANCE * R.shape[0]
            if vals.min() < -tol:
                raise bad_value("covariance", "positive semi-definite (a covariance matrix)",
                                f"an eigenvalue {vals.min():.3g} of its correlation matrix")
            keep = vals > tol
            self.W = (vecs[:, keep] / np.sqrt(vals[keep])).T / d

    @property
    def size(self) -> int:
        """Number of weighted residuals."""
        if self.W is not None:
            return self.W.shape[0]
        assert self.w is not None   # weights, or a covariance: one of the two is given
        return self.w.size

    @property
    def total(self) -> float:
        """Σ of squared weights (the trace of WᵀW)."""
        if self.W is not None:
            return float(np.sum(self.W ** 2))
        assert self.w is not None
        return float(np.sum(self.w ** 2))

    def __call__(self, a: np.ndarray, axis: int = -1) -> np.ndarray:
        """Weighted ``a`` along the table axis ``axis``."""
        if self.W is None:
            assert self.w is not None
            if np.ndim(a) == 1:     # one residual vector: the solver's inner loop
                return a * self.w
            shape = [1] * np.ndim(a)
            shape[axis] = -1
            return a * self.w.reshape(shape)
        if np.ndim(a) == 1:
            return self.W @ a
        return np.moveaxis(np.tensordot(self.W, np.moveaxis(a, axis, 0), axes=1), 0, axis)


def checked_covariance(covariance: Any, n: int) -> np.ndarray:
    """A shift covariance as a float (n, n) array: finite, symmetric, non-negative diagonal;
    rows of zero variance get the smallest positive variance (unknown, not exact)."""
    try:
        C = np.array(covariance, dtype=float)
    except (TypeError, ValueError):
        raise bad_value("covariance", "a square array of numbers", covariance) from None
    if C.shape != (n, n):
        raise bad_value("covariance", f"shape ({n}, {n}), one row per shift", f"shape {C.shape}")
    if not np.all(np.isfinite(C)):
        raise bad_value("covariance", "finite", float(C[~np.isfinite(C)][0]))
    d = np.diag(C).copy()
    scale = max(float(np.abs(C).max()), 1e-300)
    if np.any(d < 0):
        raise bad_value("covariance", "a non-negative diagonal (variances)", float(d[d < 0][0]))
    if np.max(np.abs(C - C.T)) > 1e-8 * scale:
        raise bad_value("covariance", "symmetric", "an asymmetric matrix")
    zero = d <= 0
    if zero.any():
        if zero.all():
            return np.eye(n)
        C[zero, zero] = d[~zero].min()
    return C
