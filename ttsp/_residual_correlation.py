"""Correlation of residuals along a curve, and how much it inflates a least-squares variance.

Residuals about a smooth master curve are often correlated along each isotherm (drift, settling,
a slowly varying calibration error). A least-squares covariance treats every point as an
independent piece of information; with correlated residuals there are fewer independent pieces
than points. For residuals that follow a first-order autoregression with lag-one correlation ρ,
the variance of a sum of n of them with slowly varying weights is that of independent ones times

    f = (1 + ρ) / (1 − ρ),   equivalently   n_eff = n (1 − ρ) / (1 + ρ)

(the variance of the mean of an AR(1) sequence; Bartlett, J. R. Stat. Soc. Suppl. 8, 27, 1946;
the same effective number of points as in Bayley & Hammersley, J. R. Stat. Soc. Suppl. 8, 184,
1946). ρ ≤ 0, as for independent residuals about a fitted curve, gives f = 1, so the correction
leaves uncorrelated data alone; f never exceeds the number of points per sequence (n_eff ≥ 1).
"""

from __future__ import annotations

import numpy as np

__all__ = ["lag_one_correlation", "variance_inflation"]


def lag_one_correlation(residual, sequence) -> float:
    """Pooled lag-one autocorrelation of residuals within sequences.

    Parameters
    ----------
    residual : array
        Residuals, each sequence's entries contiguous and in order along the curve.
    sequence : array of int
        Sequence label of each entry (one isotherm of one function).

    Returns
    -------
    float
        ρ = Σ r_k r_{k+1} / Σ r_k² over neighbours of the same sequence (residuals about a
        fitted curve have mean ≈ 0, so they are not centred); NaN with no neighbours.
    """
    r = np.asarray(residual, dtype=float)
    seq = np.asarray(sequence)
    same = seq[1:] == seq[:-1]
    den = float(np.sum(r * r))
    if not same.any() or den <= 0:
        return float("nan")
    return float(np.sum(r[1:][same] * r[:-1][same]) / den)


def variance_inflation(rho: float, points_per_sequence: float,
                       neighbour_pairs: float | None = None) -> float:
    """f = (1 + ρ)/(1 − ρ), at least 1 and at most ``points_per_sequence`` (module notes).

    The lag-one correlation estimated from n points about their own fitted level is biased
    low by about (1 + 3ρ)/n (Kendall, Biometrika 41, 403, 1954; Marriott & Pope, Biometrika
    41, 390, 1954); that bias is added back before f is formed, n being the points per
    sequence. With ``neighbour_pairs`` N given, a measured ρ below 2/√N, twice the standard
    error of the lag-one correlation of independent values (Bartlett 1946), is not told apart
    from 0 and gives f = 1: uncorrelated residuals keep their stderr.
    """
    if not np.isfinite(rho):
        return 1.0
    if neighbour_pairs is not None and rho < 2.0 / np.sqrt(max(neighbour_pairs, 1.0)):
        return 1.0
    n = max(float(points_per_sequence), 1.0)
    rho = rho + (1 + 3 * rho) / n if n > 1 else rho
    if rho <= 0:
        return 1.0
    rho = min(rho, 0.999)
    return float(min((1 + rho) / (1 - rho), n))
