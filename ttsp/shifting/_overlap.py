"""Overlap of neighbouring isotherms (private): pairwise shifts that seed the joint fit, and gaps.

Pairwise shift (overlap least squares with interpolation in log–log coordinates, a common
practice of manual and automatic shifting): isotherm b is translated by δ decades along log x
and compared with the piecewise-linear interpolant of isotherm a, and symmetrically a with b at
−δ; the mean squared ordinate difference over the points that fall inside the other isotherm's
range is minimised, first on a grid, then on a finer grid around the best point and through a
parabola's vertex. When vertical shifts are free, the best vertical offset is found in closed
form at every δ. These shifts only start the joint fit; they are not the answer.

Gap test: a continuous function takes on two x intervals that intersect the same values there,
so if the ordinate ranges of two isotherms are disjoint for one function, no horizontal shift
can make them overlap. The size of the gap is the distance between the ranges, in decades.
"""

from __future__ import annotations

import numpy as np

__all__ = ["pair_shift", "ordinate_gap"]


def _interp_cols(xq, xa, Ya):
    """Interpolate every column of Ya (m, Q) at xq (any shape) -> (Q, *xq.shape); NaN outside."""
    out = np.empty((Ya.shape[1],) + xq.shape)
    for q in range(Ya.shape[1]):
        ok = np.isfinite(Ya[:, q])
        if ok.sum() < 2:
            out[q] = np.nan
            continue
        xs, ys = xa[ok], Ya[ok, q]
        v = np.interp(xq, xs, ys)
        v[(xq < xs[0]) | (xq > xs[-1])] = np.nan
        out[q] = v
    return out


def _mismatch(delta, xa, Ya, xb, Yb, vsign, fit_vertical):
    """Sum of squares and count over both directions for an array of trial shifts."""
    delta = np.atleast_1d(delta)
    d_ba = _interp_cols(xb[None, :] + delta[:, None], xa, Ya)           # (Q, G, mb)
    diff_ba = Yb.T[:, None, :] - d_ba                                    # b minus a at b's points
    d_ab = _interp_cols(xa[None, :] - delta[:, None], xb, Yb)           # (Q, G, ma)
    diff_ab = d_ab - Ya.T[:, None, :]                                    # b minus a at a's points
    diff = np.concatenate([diff_ba, diff_ab], axis=2)                    # (Q, G, m)
    ok = np.isfinite(diff)
    if fit_vertical:
        v = np.asarray(vsign, float)[:, None, None]
        num = np.sum(np.where(ok, diff * v, 0.0), axis=(0, 2))
        den = np.sum(np.where(ok, v * v, 0.0), axis=(0, 2))
        off = np.where(den > 0, num / np.maximum(den, 1e-300), 0.0)
        diff = diff - v * off[None, :, None]
    else:
        off = np.zeros(delta.size)
    ss = np.sum(np.where(ok, diff * diff, 0.0), axis=(0, 2))
    # points (not residuals) that overlap: a point counts if any of its functions does
    n_pts = np.sum(np.any(ok, axis=0), axis=1)
    return ss, n_pts, np.sum(ok, axis=(0, 2)), off


def pair_shift(xa, Ya, xb, Yb, vsign, fit_vertical=False, *, step=0.05, min_points=3):
    """Shift δ (decades of x) that lays isotherm b onto isotherm a.

    Parameters
    ----------
    xa, xb : array
        log10 x of the two isotherms, ascending.
    Ya, Yb : array (m, Q)
        log10 of the Q functions (NaN where absent).
    vsign : array (Q,)
        +1, -1 or 0: how each function carries a vertical shift.
    fit_vertical : bool
        Find the vertical offset too (y_b ≈ y_a + v·offset).

    Returns
    -------
    dict with ``delta`` (b's points at x_b + δ meet a), ``offset`` (vertical, decades),
    ``points`` (overlapping points at δ), ``rms`` (decades) — or None when no trial δ gives
    ``min_points`` overlapping points.
    """
    lo = xa[0] - xb[-1]
    hi = xa[-1] - xb[0]
    grid = np.arange(lo, hi + step / 2, step)
    ss, n_pts, n_res, _ = _mismatch(grid, xa, Ya, xb, Yb, vsign, fit_vertical)
    need = min(min_points, len(xa), len(xb))
    valid = n_pts >= need
    if not valid.any():
        return None
    mse = np.where(valid, ss / np.maximum(n_res, 1), np.inf)
    g = int(np.argmin(mse))

    # refine on a fine grid across the best coarse cell and its neighbours (one vectorised
    # evaluation), then through the vertex of the parabola over the best fine point and its
    # two neighbours; a seed of the joint fit needs no more than that
    fine = np.linspace(grid[g] - step, grid[g] + step, 21)
    s2, npt, nr, _ = _mismatch(fine, xa, Ya, xb, Yb, vsign, fit_vertical)
    f_mse = np.where(npt >= need, s2 / np.maximum(nr, 1), np.inf)
    j = int(np.argmin(f_mse))
    delta, best = (float(fine[j]), f_mse[j]) if f_mse[j] <= mse[g] else (float(grid[g]), mse[g])
    if 0 < j < fine.size - 1 and np.all(np.isfinite(f_mse[j - 1:j + 2])):
        m0, m1, m2 = f_mse[j - 1:j + 2]
        curvature = m0 - 2.0 * m1 + m2
        if curvature > 0:
            vertex = fine[j] + 0.5 * (fine[1] - fine[0]) * (m0 - m2) / curvature
            s3, n3, r3, _ = _mismatch(np.array([vertex]), xa, Ya, xb, Yb, vsign, fit_vertical)
            if n3[0] >= need and s3[0] / max(r3[0], 1) <= best:
                delta = float(vertex)
    s2, npt, nr, off = _mismatch(np.array([delta]), xa, Ya, xb, Yb, vsign, fit_vertical)
    return {"delta": delta, "offset": float(off[0]), "points": int(npt[0]),
            "rms": float(np.sqrt(s2[0] / max(nr[0], 1)))}


def ordinate_gap(Ya, Yb):
    """Largest distance (decades) between the ordinate ranges of two isotherms over the columns.

    Returns ``(gap, column)``; ``gap <= 0`` means every column's ranges overlap (by ``-gap``).
    """
    best, col = -np.inf, -1
    for q in range(Ya.shape[1]):
        a = Ya[:, q][np.isfinite(Ya[:, q])]
        b = Yb[:, q][np.isfinite(Yb[:, q])]
        if a.size == 0 or b.size == 0:
            continue
        gap = max(b.min() - a.max(), a.min() - b.max())
        if gap > best:
            best, col = gap, q
    return float(best), col
