"""Small array and export helpers shared by the computation modules (layer 0).

One place for: read-only copies of arrays, validation of array arguments with the one message
template of :mod:`ttsp._validation`, scalar-in/scalar-out evaluation, and conversion of numpy
values to JSON-ready Python.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from ._validation import bad_value

__all__ = ["readonly", "as_1d_finite", "nonnegative_argument", "scalar_or_array", "to_plain",
           "fmt_html", "evenly_spaced_indices", "evenly_spaced_rows", "outside_log_range", "LOG_RANGE_RTOL"]

#: Relative tolerance for membership in a range of times or frequencies. Range ends such as
#: ``1 / omega_max`` and grid nodes such as ``10**k`` are computed by different roundings and
#: can differ by a few ulp (``1 / 1e-5 == 99999.99999999999``); a node one ulp past an end is
#: inside. 1e-9 is far below any measured resolution and far above rounding.
LOG_RANGE_RTOL = 1e-9


def readonly(a) -> np.ndarray:
    """A float copy of ``a`` that cannot be written to."""
    out = np.array(a, dtype=float, copy=True)
    out.setflags(write=False)
    return out


def as_1d_finite(name: str, values: Any, *, allow_empty: bool = True) -> np.ndarray:
    """``values`` as a one-dimensional float array of finite numbers, else DataError."""
    try:
        a = np.atleast_1d(np.asarray(values, dtype=float))
    except (TypeError, ValueError):
        raise bad_value(name, "an array of numbers", values) from None
    if a.ndim != 1 or (a.size == 0 and not allow_empty):
        rule = "one-dimensional" if allow_empty else "a non-empty one-dimensional array"
        raise bad_value(name, rule, f"an array of shape {a.shape}")
    bad = ~np.isfinite(a)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise bad_value(f"{name}[{i}]", "finite", float(a[i]))
    return a


def nonnegative_argument(name: str, values: Any, *, allow_zero: bool = True) -> np.ndarray:
    """An evaluation argument (times, frequencies) of any shape: finite and >= 0 (or > 0)."""
    try:
        a = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise bad_value(name, "an array of numbers", values) from None
    bad = ~np.isfinite(a) | (a < 0) | ((a == 0) & (not allow_zero))
    if bad.any():
        i = np.flatnonzero(bad.ravel())[0]
        rule = "non-negative and finite" if allow_zero else "positive and finite"
        raise bad_value(name, rule, float(a.ravel()[i]))
    return a


def scalar_or_array(out, like):
    """A plain Python number for a scalar argument ``like``, otherwise the array ``out``."""
    out = np.asarray(out)
    if np.ndim(like) == 0:
        return out.reshape(()).item()
    return out


def to_plain(value: Any, *, nonfinite_as_none: bool = False) -> Any:
    """A JSON-ready copy: numpy scalars to float/int/bool, arrays and tuples to lists.

    With ``nonfinite_as_none``, NaN and infinities become ``None`` (JSON has neither).
    """
    # the commonest cases first: a summary holds thousands of numbers
    if value is None or isinstance(value, str):
        return value
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        v = float(value)
        return None if nonfinite_as_none and not math.isfinite(v) else v
    if isinstance(value, np.ndarray) and value.dtype.kind in "biuf":
        plain = value.tolist()        # Python numbers, nested like the array
        if value.dtype.kind != "f" or not nonfinite_as_none or np.all(np.isfinite(value)):
            return plain
        return to_plain(plain, nonfinite_as_none=True)
    if isinstance(value, Mapping):
        return {str(k): to_plain(v, nonfinite_as_none=nonfinite_as_none) for k, v in value.items()}
    if isinstance(value, (list, tuple, np.ndarray)):
        return [to_plain(v, nonfinite_as_none=nonfinite_as_none) for v in value]
    return value


def fmt_html(x: float | None) -> str:
    """A number for an HTML table (an en dash for a missing one)."""
    return "&ndash;" if x is None else f"{x:.6g}"


def evenly_spaced_indices(n: int, limit: int) -> np.ndarray:
    """All indices ``0..n-1`` when ``n <= limit``, else ``limit`` of them spread evenly by rank
    (used to thin dense data for fits and checks without losing its range)."""
    if n <= limit:
        return np.arange(n)
    return np.unique(np.round(np.linspace(0, n - 1, limit)).astype(int))


def evenly_spaced_rows(columns: Any, n: int, limit: int) -> np.ndarray:
    """Rows of one isotherm of ``n`` rows kept when thinning it to ``limit`` points.

    ``columns`` are the functions' values at the rows (NaN where a function was not measured).
    When every function is present at all rows or at none, the rows are
    :func:`evenly_spaced_indices`; when functions were measured at different rows (relaxation
    and creep read from two files) each function keeps ``limit`` of its own rows, evenly by
    rank, and the union is returned: thinning the interleaved rows together would space each
    function's points unevenly.
    """
    present = [np.isfinite(np.asarray(c, dtype=float)) for c in columns]
    if all(m.all() or not m.any() for m in present):
        return evenly_spaced_indices(n, limit)
    picks = [np.flatnonzero(m) for m in present]
    return np.unique(np.concatenate([p[evenly_spaced_indices(p.size, limit)] for p in picks]))


def outside_log_range(values: Any, lo: float, hi: float, rtol: float = LOG_RANGE_RTOL) -> np.ndarray:
    """Boolean mask of ``values`` below ``lo`` or above ``hi`` beyond a relative ``rtol``.

    For positive quantities on a log scale (times, frequencies, relaxation times), where the
    ends of a range and the values tested against it come from different floating-point
    routes: equality up to rounding counts as inside.
    """
    v = np.asarray(values, dtype=float)
    return (v < lo * (1 - rtol)) | (v > hi * (1 + rtol))
