"""Roots and residues of the secular equation behind the exact relaxation <-> creep conversion.

Both directions of the conversion (:mod:`ttsp.prony.exact_conversion`, where the equation is
derived) need every root on x > 0 of

.. math:: F(x) = c + b\\,x + \\sum_i w_i \\frac{n_i(x)}{p_i - x}, \\qquad n_i = p_i \\text{ or } x,

with poles p_i > 0, weights w_i > 0 and b ≥ 0, so that F increases strictly between poles and
there is one root in each interval (Golub, SIAM Review 15:318, 1973; Bunch, Nielsen & Sorensen,
Numer. Math. 31:31, 1978), and then the residues at those roots.

Numerics. Each root is bracketed between consecutive poles and written as an offset from the
pole it is nearer to, ``x = p_k (1 + r)`` or ``x = p_{k+1} (1 − r)`` with r ≤ 1/2, and found by
bisection in ``ln r``.
Every difference ``p_i − x`` is then formed from ``p_i − p_k`` (exact for neighbouring poles by
Sterbenz's lemma) and the offset, so roots that lie extremely close to a pole, as happens for a
weak term, keep full relative accuracy, and the residues do not suffer cancellation. Bisection
runs on all roots at once (vectorised), so a 100-term series spread over 20 decades converts
in a few milliseconds.

Imports numpy only.
"""

from __future__ import annotations

import math

import numpy as np

from ..exceptions import FitError

__all__ = ["merge_terms", "secular_roots", "residue_weights"]

_EPS = np.finfo(float).eps
# smallest relative offset of a root from its pole tried by the bisection (ln of it ~ -690)
_R_MIN = 1e-300


def merge_terms(times: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Drop zero-weight terms and merge equal times (sum of weights): same function."""
    keep = weights > 0
    times, weights = times[keep], weights[keep]
    order = np.argsort(times, kind="stable")
    times, weights = times[order], weights[order]
    if times.size > 1:
        uniq, start = np.unique(times, return_index=True)
        if uniq.size < times.size:
            weights = np.add.reduceat(weights, start)
            times = uniq
    return times, weights


class _SecularFunction:
    """F(x) = const + slope·x + Σ w_i n_i(x)/(p_i − x), with n_i = p_i or n_i = x."""

    def __init__(self, poles, weights, const, slope, numerator_is_pole):
        self.p = poles
        self.weights = weights
        self.const = const
        self.slope = slope
        self.numerator_is_pole = numerator_is_pole

    def direct(self, x: np.ndarray) -> np.ndarray:
        """F at the points x, from the plain differences p_i − x."""
        p = self.p
        d = p[None, :] - x[:, None]
        num = p[None, :] if self.numerator_is_pole else x[:, None]
        return self.const + self.slope * x + (self.weights * num / d).sum(axis=1)

    def from_anchors(self, pa: np.ndarray, anchor: np.ndarray,
                     offset: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """F at x = anchor + offset, with p_i − x = (p_i − anchor) − offset; also x and p − x."""
        x = anchor + offset
        d = pa - offset[:, None]
        num = self.p[None, :] if self.numerator_is_pole else x[:, None]
        return self.const + self.slope * x + (self.weights * num / d).sum(axis=1), x, d


def secular_roots(poles: np.ndarray, weights: np.ndarray, const: float, slope: float,
                  numerator_is_pole: bool, *, first_lower_x: float | None,
                  last_upper_x: float | None) -> tuple[np.ndarray, np.ndarray]:
    """All roots of F(x) = const + slope·x + Σ w_i n_i(x)/(p_i − x) on x > 0.

    ``n_i = p_i`` if ``numerator_is_pole`` else ``n_i = x``. F must increase strictly on every
    interval between poles (w_i > 0, slope ≥ 0). One root is sought in each interval
    (p_k, p_{k+1}); in (0, p_1) if ``first_lower_x`` is given (a point there with F < 0); in
    (p_N, ∞) if ``last_upper_x`` is given (a point there with F > 0).

    Returns
    -------
    x : ndarray
        The roots, increasing.
    diff : ndarray, shape (n_roots, n_poles)
        p_i − x_j, formed from pole differences and the root's offset from its anchor pole, so
        they keep full relative accuracy even when a root nearly coincides with a pole.
    """
    f = _SecularFunction(poles, weights, const, slope, numerator_is_pole)
    anchor, scale, orient, lo, hi = _brackets(f, first_lower_x, last_upper_x)
    if anchor.size == 0:
        return np.empty(0), np.empty((0, poles.size))
    return _bisect(f, anchor, scale, orient, lo, hi)


def _brackets(f: _SecularFunction, first_lower_x: float | None,
              last_upper_x: float | None) -> tuple[np.ndarray, ...]:
    """For each root: its anchor pole, the signed scale of its offset, the orientation of F
    along ln r, and the bracket [lo, hi] of y = ln r, where x = anchor + scale·e^y."""
    p = f.p
    n = p.size
    anchor, scale, ylo, yhi, orient = [], [], [], [], []
    if first_lower_x is not None:
        half = 0.5 * p[0]
        if f.direct(np.array([half]))[0] >= 0:   # root in (0, p_1/2]: x = p_1·e^y
            anchor.append(0.0)
            scale.append(p[0])
            orient.append(1.0)
            ylo.append(math.log(first_lower_x / p[0]))
            yhi.append(math.log(0.5))
        else:                                    # root in (p_1/2, p_1): x = p_1(1 − e^y)
            anchor.append(p[0])
            scale.append(-p[0])
            orient.append(-1.0)
            ylo.append(math.log(_R_MIN))
            yhi.append(math.log(0.5))
    if n > 1:
        lo_p, hi_p = p[:-1], p[1:]
        # split point: the geometric mean, but never below p_k+1/2, so that a root written
        # from the upper pole, x = p_k+1 (1 − r), has r ≤ 1/2 and keeps its relative accuracy
        mid = np.maximum(np.sqrt(lo_p * hi_p), 0.5 * hi_p)
        lower = f.direct(mid) >= 0
        for k in range(n - 1):
            if lower[k]:                         # root in (p_k, m_k]: x = p_k(1 + e^y)
                anchor.append(lo_p[k])
                scale.append(lo_p[k])
                orient.append(1.0)
                yhi.append(math.log((mid[k] - lo_p[k]) / lo_p[k]))
            else:                                # root in (m_k, p_k+1): x = p_k+1(1 − e^y)
                anchor.append(hi_p[k])
                scale.append(-hi_p[k])
                orient.append(-1.0)
                yhi.append(math.log((hi_p[k] - mid[k]) / hi_p[k]))
            ylo.append(math.log(_R_MIN))
    if last_upper_x is not None:                 # root in (p_N, ∞): x = p_N(1 + e^y)
        anchor.append(p[-1])
        scale.append(p[-1])
        orient.append(1.0)
        ylo.append(math.log(_R_MIN))
        yhi.append(math.log((last_upper_x - p[-1]) / p[-1]))
    return (np.array(anchor), np.array(scale), np.array(orient), np.array(ylo),
            np.array(yhi))


def _bisect(f: _SecularFunction, anchor: np.ndarray, scale: np.ndarray, orient: np.ndarray,
            lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Bisection in y = ln r on every bracket at once, to a few ulps; the roots and p − x."""
    pa = f.p[None, :] - anchor[:, None]   # exact zero in the anchor column
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        for _ in range(300):
            y = 0.5 * (lo + hi)
            value, _, _ = f.from_anchors(pa, anchor, scale * np.exp(y))
            up = orient * value > 0
            hi = np.where(up, y, hi)
            lo = np.where(up, lo, y)
            if np.all(hi - lo <= 4 * _EPS * np.maximum(1.0, np.maximum(np.abs(lo),
                                                                         np.abs(hi)))):
                break
        value, x, d = f.from_anchors(pa, anchor, scale * np.exp(0.5 * (lo + hi)))
    if not (np.all(np.isfinite(value)) and np.all(np.isfinite(x)) and np.all(x > 0)
            and np.all(np.diff(x) > 0)):
        raise FitError("exact interconversion failed: the roots of the Laplace-domain "
                       "function are not finite, positive and increasing; got "
                       f"{x.tolist()!r}")
    return x, d


def residue_weights(x: np.ndarray, d: np.ndarray, poles: np.ndarray, weights: np.ndarray,
                    extra: float) -> np.ndarray:
    """1 / (Σ_i w_i (p_i/d_ji)(x_j/d_ji) + extra·x_j) for each root x_j (overflow -> 0)."""
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        s = (weights * (poles[None, :] / d) * (x[:, None] / d)).sum(axis=1) + extra * x
        out = 1.0 / s
    out[~np.isfinite(out)] = 0.0
    return out
