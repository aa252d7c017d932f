"""Local log–log slope of a measured curve, smoothed over a fixed width in log x.

A derivative taken between adjacent points of a dense record is the difference of two noisy
values over a tiny step: with 500 points per decade and 1 % noise it swings by about ±10 where
the physical slope of a modulus lies between 0 and 1. The slope here is the least-squares line
through every point within ±``half_width_decades`` of each point (and at least ±``min_points``
neighbours, so sparse sweeps keep the old five-point window): the first-order moving
regression of Savitzky & Golay (Anal. Chem. 36, 1627, 1964), written for uneven spacing, over
a window fixed in decades rather than in points.
"""

from __future__ import annotations

import numpy as np

__all__ = ["local_log_slope", "SLOPE_HALF_WIDTH_DECADES"]

#: half-width of the regression window (decades of x). A relaxation spectrum's features span
#: about a decade or more, so ±0.15 decade follows them while averaging the noise of dense
#: records [common practice, no source].
SLOPE_HALF_WIDTH_DECADES = 0.15


def local_log_slope(x, y, *, half_width_decades: float = SLOPE_HALF_WIDTH_DECADES,
                    min_points: int = 2) -> np.ndarray:
    """d log10 y / d log10 x at each point from a moving least-squares line.

    Parameters
    ----------
    x, y : array
        Positive abscissa (ascending) and values (any positive unit; NaN where the function
        was not measured, which takes no part and gets a NaN slope).
    half_width_decades : float
        Points within this distance in log10 x of a point form its window.
    min_points : int
        At least this many neighbours on each side (where they exist).

    Returns
    -------
    array
        Slope b of log10 y = a + b log10 x fitted over each window,
        b = Σ(ξ − ξ̄)(η − η̄)/Σ(ξ − ξ̄)²; NaN where a window has fewer than 3 points.
    """
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    seen = np.isfinite(y)
    if not seen.all():
        # a function measured at its own times (relaxation and creep read from two files):
        # the slope along its own points, NaN at the other rows
        out = np.full(y.size, np.nan)
        out[seen] = local_log_slope(x[seen], y[seen], half_width_decades=half_width_decades,
                                    min_points=min_points)
        return out
    lx, ly = np.log10(x), np.log10(y)
    n = lx.size
    out = np.full(n, np.nan)
    if n < 3:
        return out
    lx0, ly0 = lx - lx.mean(), ly - ly.mean()   # centred: the running sums keep their digits
    idx = np.arange(n)
    lo = np.minimum(np.searchsorted(lx, lx - half_width_decades, side="left"), idx - min_points)
    hi = np.maximum(np.searchsorted(lx, lx + half_width_decades, side="right"),
                    idx + min_points + 1)
    lo, hi = np.clip(lo, 0, n), np.clip(hi, 0, n)

    def window_sum(v):
        c = np.concatenate([[0.0], np.cumsum(v)])
        return c[hi] - c[lo]

    m = (hi - lo).astype(float)
    sx, sy = window_sum(lx0), window_sum(ly0)
    sxx, sxy = window_sum(lx0 * lx0), window_sum(lx0 * ly0)
    den = sxx - sx * sx / np.maximum(m, 1)
    ok = (m >= 3) & (den > 1e-14 * np.maximum(sxx, 1e-300))
    out[ok] = (sxy[ok] - sx[ok] * sy[ok] / m[ok]) / den[ok]
    return out
