"""Constants and small helpers shared by the laws and their fit: the gas constant, the
Arrhenius factor, temperature checks in kelvin and the HTML table of a law."""

from __future__ import annotations

import html
import math
from collections.abc import Iterable
from typing import Any

import numpy as np
import scipy.constants

from .._validation import bad_value

#: Molar gas constant R in J/(mol K), CODATA value as shipped by scipy.constants.
GAS_CONSTANT_J_PER_MOL_K: float = scipy.constants.R

ZERO_CELSIUS_K: float = scipy.constants.zero_Celsius
LN10: float = math.log(10.0)
#: log10 a_T per (1/K) for an activation energy of 1 kJ/mol: 1000 / (ln 10 * R).
ARRHENIUS_K_PER_KJ_MOL: float = 1000.0 / (LN10 * GAS_CONSTANT_J_PER_MOL_K)
#: Temperatures closer than this to an end of the valid range count as inside it.
RANGE_TOLERANCE_K = 1e-9
#: Resolution floor of the fit (decades), so exact data compare by parameter count, not rounding.
RESIDUAL_FLOOR_DECADES = 1e-9


def as_temperature_array(value: Any, name: str = "temperature_K") -> np.ndarray:
    """Return ``value`` as a float array of positive, finite absolute temperatures."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise bad_value(name, "an array of numbers in kelvin", value) from None
    bad = ~np.isfinite(arr) | (arr <= 0)
    if np.any(bad):
        raise bad_value(name, "positive and finite (an absolute temperature in kelvin)",
                        float(arr[bad][0]))
    return arr


def to_celsius(value_K: float) -> float:
    """A temperature in kelvin as degrees Celsius."""
    return float(value_K) - ZERO_CELSIUS_K


def check_range_K(name: str, value: Any) -> tuple[float, float] | None:
    """Validate a (low, high) temperature range in kelvin, or None."""
    if value is None:
        return None
    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError):
        raise bad_value(name, "None or a pair (low, high) of temperatures in kelvin", value) from None
    if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo <= hi):
        raise bad_value(name, "a pair (low, high) with 0 < low <= high, in kelvin", value)
    return (lo, hi)


def html_table(caption: str, rows: Iterable[tuple[str, str]]) -> str:
    """A two-column HTML table (name, value) for a notebook."""
    body = "".join(
        f"<tr><th style='text-align:left'>{html.escape(k)}</th>"
        f"<td style='text-align:left'>{html.escape(v)}</td></tr>"
        for k, v in rows
    )
    return f"<table><caption>{html.escape(caption)}</caption>{body}</table>"
