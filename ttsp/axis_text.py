"""Times and frequencies as people type them on the command line: ``10y``, ``3.156e8``, ``2 h``,
``1s:10y:50``, ``1kHz``.

Layer 0 (text to SI numbers, no physics): the command line turns a ``ValueError`` from here into
a usage error naming its option.
"""

from __future__ import annotations

import math
import re

import numpy as np

__all__ = ["TIME_UNITS_S", "FREQUENCY_UNITS_HZ", "parse_axis"]

#: seconds per unit; a year is the Julian year of 365.25 days (the astronomers' year, 3.15576e7 s)
TIME_UNITS_S = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0, "y": 365.25 * 86400.0}
#: hertz per unit
FREQUENCY_UNITS_HZ = {"mHz": 1e-3, "Hz": 1.0, "kHz": 1e3}

_VALUE = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z]*)\s*$")
MAX_POINTS = 1_000_000


def _one(text: str, units: dict) -> float:
    m = _VALUE.match(text)
    if m is None:
        raise ValueError(f"{text.strip()!r} is not a number with an optional unit")
    value, unit = float(m.group(1)), m.group(2)
    if unit and unit not in units:
        raise ValueError(f"unknown unit {unit!r} in {text.strip()!r} (units: "
                         f"{', '.join(units)})")
    value *= units[unit] if unit else 1.0
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{text.strip()!r} must be a positive, finite value")
    return value


def parse_axis(text: str, units: dict) -> np.ndarray:
    """One value (``10y``) or ``a:b:n`` (n log-spaced values from a to b, a and b with optional
    units) in the base unit of ``units`` (s or Hz); a bare number is in the base unit.

    Parameters
    ----------
    text : str
        As typed.
    units : dict
        Unit name -> base units per unit (:data:`TIME_UNITS_S` or :data:`FREQUENCY_UNITS_HZ`).

    Returns
    -------
    numpy.ndarray
        The values, ascending when a < b, in seconds or hertz.

    Raises
    ------
    ValueError
        With the text and what is wrong with it.
    """
    parts = str(text).split(":")
    if len(parts) == 1:
        return np.array([_one(parts[0], units)])
    if len(parts) != 3:
        raise ValueError(f"must be one value (for example 10{list(units)[-1]}) or a:b:n; "
                         f"got {text!r}")
    a, b = _one(parts[0], units), _one(parts[1], units)
    try:
        n = int(parts[2])
    except ValueError:
        raise ValueError(f"n in a:b:n must be a whole number; got {parts[2]!r}") from None
    if not 1 <= n <= MAX_POINTS:
        raise ValueError(f"n in a:b:n must be between 1 and {MAX_POINTS}; got {n}")
    return np.logspace(math.log10(a), math.log10(b), n) if n > 1 else np.array([a])
