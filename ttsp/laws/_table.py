"""The shift table as a fit sees it: temperatures and log10 a_T checked, the rows that carry
information about the law, and how their residuals are weighed."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .._validation import bad_value
from ..exceptions import FitError
from ._common import RANGE_TOLERANCE_K, RESIDUAL_FLOOR_DECADES, as_temperature_array
from ._weighting import Weighting, checked_covariance


@dataclass(frozen=True)
class ShiftTable:
    """A shift table ready to fit (internal).

    ``T``, ``y`` and ``stderr`` are every row as given (K, decades; stderr NaN where unknown).
    The fit uses the informative rows (``T_fit``, ``y_fit``, ``n`` of them): a row at the
    reference temperature with log10 a_T = 0 is satisfied by every law by construction.
    ``weights`` (1/stderr, ones when unweighted) and ``covariance`` (or None) are those of the
    informative rows, ``weigh`` weighs their residuals, ``weighting`` names how, ``weighted``
    says whether stderr or a covariance was given, and ``floor`` is the chi-square of the
    fit's resolution (a residual of 1e-9 decades per point).
    """

    T: np.ndarray
    y: np.ndarray
    stderr: np.ndarray
    tr: float
    T_fit: np.ndarray
    y_fit: np.ndarray
    n: int
    weights: np.ndarray
    covariance: np.ndarray | None
    weigh: Weighting
    weighting: str
    weighted: bool
    floor: float


def checked_shifts(temperature_K: Any, log10_aT: Any) -> tuple[np.ndarray, np.ndarray]:
    """The temperatures (K, positive, 1-D) and their log10 a_T (finite, same shape)."""
    T = as_temperature_array(temperature_K)
    if T.ndim != 1 or T.size == 0:
        raise bad_value("temperature_K", "a non-empty 1-D array", f"shape {T.shape}")
    try:
        y = np.asarray(log10_aT, dtype=float)
    except (TypeError, ValueError):
        raise bad_value("log10_aT", "an array of numbers", log10_aT) from None
    if y.shape != T.shape:
        raise bad_value("log10_aT", f"the same shape as temperature_K {T.shape}",
                        f"shape {y.shape}")
    if not np.all(np.isfinite(y)):
        raise bad_value("log10_aT", "finite", float(y[~np.isfinite(y)][0]))
    return T, y


def weighted_table(T: np.ndarray, y: np.ndarray, tr: float, stderr: Any,
                   covariance: Any) -> ShiftTable:
    """The table with its informative rows and their weighing (see :class:`ShiftTable`)."""
    s, w = _stderr_and_weights(T, stderr)
    C = None if covariance is None else checked_covariance(covariance, T.size)
    if C is not None and stderr is None:
        s = np.sqrt(np.clip(np.diag(np.asarray(covariance, dtype=float)), 0.0, None))
    informative = ~((np.abs(T - tr) <= RANGE_TOLERANCE_K) & (y == 0))
    Tf, yf = T[informative], y[informative]
    n = int(Tf.size)
    if n == 0:
        raise FitError("the shift table has no point away from the reference temperature")
    w_fit = w[informative]
    C_fit = None if C is None else C[np.ix_(informative, informative)]
    if C_fit is None:
        weigh, weighting = Weighting(w_fit), "none" if stderr is None else "stderr"
    else:
        weigh, weighting = Weighting(covariance=C_fit), "covariance"
    floor = weigh.total * (RESIDUAL_FLOOR_DECADES * max(1.0, float(np.abs(yf).max()))) ** 2
    return ShiftTable(T, y, s, tr, Tf, yf, n, w_fit, C_fit, weigh, weighting,
                      stderr is not None or C is not None, floor)


def _stderr_and_weights(T: np.ndarray, stderr: Any) -> tuple[np.ndarray, np.ndarray]:
    """The stderr as given (NaN where unknown) and the weight 1/stderr of every row; unknown
    or zero stderr get the smallest positive one, and no positive one means unweighted."""
    if stderr is None:
        return np.full(T.shape, np.nan), np.ones(T.shape)
    try:
        s = np.array([np.nan if v is None else v for v in np.ravel(stderr).tolist()],
                     dtype=float).reshape(np.shape(stderr))
    except (TypeError, ValueError):
        raise bad_value("stderr", "an array of numbers (or None entries)", stderr) from None
    if s.shape != T.shape:
        raise bad_value("stderr", f"the same shape as temperature_K {T.shape}",
                        f"shape {s.shape}")
    if np.any(s < 0) or np.any(np.isinf(s)):
        raise bad_value("stderr", "non-negative and finite (NaN/None for unknown)",
                        float(s[(s < 0) | np.isinf(s)][0]))
    positive = s[s > 0]
    if positive.size == 0:
        return s, np.ones(T.shape)
    return s, 1.0 / np.where(s > 0, s, positive.min())
