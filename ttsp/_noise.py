"""Noise of a measured sequence from its successive differences (layer 0).

One estimator shared by the checks (how noisy are the data?) and the shift fit (how should the
functions be weighed against each other?).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["third_difference_sigmas", "NOISE_FLOOR_LOG10", "typical_log_noise"]

#: Smallest noise (decades of log10) assumed for a logarithmic quantity. Exact or smoothed data
#: would otherwise give a zero noise and turn interpolation error into "spread". 0.002 decade is
#: 0.46 %, below the 1-2 % repeatability usual for DMA moduli [common practice, no source].
NOISE_FLOOR_LOG10 = 0.002

#: Normal-consistency factor of the median absolute deviation: median |Z| = 0.6745 for Z ~ N(0,1).
_MAD_NORMAL = 0.6744897501960817
#: Var(Δ³ε) = 20 σ² for independent ε of variance σ² (binomial coefficients 1, −3, 3, −1).
_D3_VARIANCE_FACTOR = 20.0


def third_difference_sigmas(sequences) -> np.ndarray:
    """Noise standard deviation of each sequence from its third differences (NaN below 5
    finite values).

    For y = smooth + ε with independent ε of variance σ², Δ³y = Δ³smooth + Δ³ε and
    Var(Δ³ε) = 20σ². Δ³smooth varies slowly along a densely sampled curve, so the median
    absolute deviation of Δ³y about its median, divided by 0.6745·√20, estimates σ robustly
    (von Neumann et al., Ann. Math. Stat. 12, 153, 1941, introduced variance estimates from
    successive differences; the median absolute deviation is Hampel's, J. Am. Stat. Assoc. 69,
    383, 1974). Points are taken in order, as if equally spaced in log x; non-finite values are
    dropped. Sequences of one length are computed together as the rows of one array.
    """
    cleaned = [np.asarray(y, dtype=float) for y in sequences]
    cleaned = [y[np.isfinite(y)] for y in cleaned]
    out = np.full(len(cleaned), math.nan)
    lengths = np.array([y.size for y in cleaned])
    for size in np.unique(lengths[lengths >= 5]):
        rows = np.flatnonzero(lengths == size)
        d3 = np.diff(np.stack([cleaned[k] for k in rows]), 3, axis=1)
        mad = np.median(np.abs(d3 - np.median(d3, axis=1, keepdims=True)), axis=1)
        out[rows] = mad / (_MAD_NORMAL * math.sqrt(_D3_VARIANCE_FACTOR))
    return out


def typical_log_noise(x_per_isotherm, y_per_isotherm) -> float:
    """Median over isotherms of the third-difference noise of one function's log10 values
    (each isotherm in order of x), floored at :data:`NOISE_FLOOR_LOG10` (decades)."""
    seqs = [np.asarray(y, dtype=float)[np.argsort(x)] for x, y in zip(x_per_isotherm,
                                                                       y_per_isotherm, strict=True)]
    sig = third_difference_sigmas(seqs)
    sig = sig[np.isfinite(sig)]
    return max(float(np.median(sig)) if sig.size else NOISE_FLOOR_LOG10, NOISE_FLOOR_LOG10)
