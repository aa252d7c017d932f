"""Units as people write them in column headers, and their conversion to SI and kelvin.

Every quantity inside ttsp is SI (Pa, 1/Pa, s, rad/s) and temperatures are kelvin. This module is
the only place that knows spellings such as ``MPa``, ``dyn/cm²``, ``1/GPa``, ``°C`` or ``rad/s``.
Conversion factors are exact definitions (psi from the international pound and inch, NIST SP 811).
"""

from __future__ import annotations

import math
import re
import unicodedata
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from .exceptions import DataError

__all__ = ["Unit", "parse_unit", "to_si", "from_si", "celsius_to_kelvin", "kelvin_to_celsius",
           "display_modulus_unit", "DISPLAY_MODULUS_UNITS",
           "UNIT_KINDS"]

ZERO_CELSIUS_K = 273.15
# 1 lbf/in² = 4.4482216152605 N / (0.0254 m)² (NIST SP 811, exact by definition)
PSI_PA = 4.4482216152605 / 0.0254**2


@dataclass(frozen=True)
class Unit:
    """A unit of a column: its kind and the affine map ``si = value * scale + offset``."""

    symbol: str
    kind: str  # "modulus", "compliance", "frequency", "time", "temperature", "dimensionless", "angle"
    scale: float
    offset: float = 0.0

    def to_si(self, values: ArrayLike):
        """Convert values in this unit to SI (kelvin for temperatures, rad/s for frequency)."""
        return np.asarray(values, dtype=float) * self.scale + self.offset

    def from_si(self, values: ArrayLike):
        """Convert SI values back to this unit."""
        return (np.asarray(values, dtype=float) - self.offset) / self.scale


def _table() -> dict[str, Unit]:
    units = {}

    def add(kind, scale, offset, *spellings):
        for s in spellings:
            units[s] = Unit(spellings[0], kind, scale, offset)

    add("modulus", 1.0, 0.0, "Pa", "pa", "N/m2", "N/m^2", "N/m²")
    # millipascal, spelled exactly; the case-insensitive fallback below never reaches it, so
    # "MPA" or "Mpa" still mean megapascal while "mPa" is not silently read as MPa (1e9 apart)
    add("modulus", 1e-3, 0.0, "mPa")
    add("modulus", 1e3, 0.0, "kPa", "kpa")
    add("modulus", 1e6, 0.0, "MPa", "mpa", "N/mm2", "N/mm^2", "N/mm²")
    add("modulus", 1e9, 0.0, "GPa", "gpa")
    add("modulus", PSI_PA, 0.0, "psi", "lbf/in2", "lbf/in^2", "lbf/in²", "lb/in2", "lb/in^2", "lb/in²")
    add("modulus", PSI_PA * 1e3, 0.0, "ksi")
    add("modulus", 0.1, 0.0, "dyn/cm²", "dyn/cm2", "dyn/cm^2", "dyne/cm2", "dyne/cm²", "dyne/cm^2")
    for sym, sc in (("Pa", 1.0), ("kPa", 1e3), ("MPa", 1e6), ("GPa", 1e9)):
        add("compliance", 1.0 / sc, 0.0, f"1/{sym}", f"{sym}^-1", f"{sym}-1", f"{sym}⁻¹",
            f"1/{sym.lower()}")
    add("compliance", 1.0 / PSI_PA, 0.0, "1/psi", "psi^-1", "psi-1")
    # cycles per second; "1/s" is read as Hz unless the header names an angular frequency
    # (ttsp.io.headers turns "omega (1/s)" into rad/s)
    add("frequency", 2.0 * math.pi, 0.0, "Hz", "hz", "1/s", "s^-1", "s-1", "s⁻¹", "cps")
    add("frequency", 2.0 * math.pi * 1e-3, 0.0, "mHz")
    add("frequency", 2.0 * math.pi * 1e3, 0.0, "kHz", "khz")
    add("frequency", 1.0, 0.0, "rad/s", "rad s-1", "rad·s⁻¹", "rad s^-1", "rad/sec")
    add("time", 1e-3, 0.0, "ms", "msec")
    add("time", 1.0, 0.0, "s", "sec", "secs", "second", "seconds")
    add("time", 60.0, 0.0, "min", "mins", "minute", "minutes")
    add("time", 3600.0, 0.0, "h", "hr", "hrs", "hour", "hours")
    add("time", 86400.0, 0.0, "d", "day", "days")
    add("temperature", 1.0, ZERO_CELSIUS_K, "°C", "ºC", "degC", "deg C", "C", "celsius", "oC", "℃")
    add("temperature", 1.0, 0.0, "K", "kelvin", "°K")
    add("temperature", 5.0 / 9.0, ZERO_CELSIUS_K - 32.0 * 5.0 / 9.0, "°F", "ºF", "degF", "deg F",
        "F", "fahrenheit", "oF", "℉")
    add("dimensionless", 1.0, 0.0, "-", "", "1")
    add("angle", math.pi / 180.0, 0.0, "°", "deg", "degree", "degrees", "º")
    add("angle", 1.0, 0.0, "rad", "radian", "radians")
    return units


_UNITS = _table()
UNIT_KINDS = sorted({u.kind for u in _UNITS.values()})


def parse_unit(text: str, *, kind: str | None = None) -> Unit:
    """Return the :class:`Unit` for a spelling such as ``"MPa"``, ``"1/GPa"`` or ``"°C"``.

    Parameters
    ----------
    text : str
        The unit as written (surrounding whitespace ignored).
    kind : str, optional
        If given, the unit must be of this kind (``"modulus"``, ``"temperature"``, ...).

    Raises
    ------
    DataError
        If the spelling is unknown or of another kind.
    """
    raw = re.sub(r"\s+", " ", str(text).strip())
    key = unicodedata.normalize("NFKC", raw).replace("·", " ").replace("⋅", " ")
    unit = (_UNITS.get(raw) or _UNITS.get(key) or _UNITS.get(key.replace(" ", ""))
            or _UNITS.get(raw.replace(" ", "")))
    if unit is None:
        unit = _UNITS.get(key.lower()) if key.lower() not in ("c", "f", "k") else None
    if unit is None:
        known = sorted({u.symbol for u in _UNITS.values() if kind is None or u.kind == kind})
        raise DataError(f"unit must be one of {', '.join(known)}; got {text!r}")
    if kind is not None and unit.kind != kind:
        raise DataError(f"unit must be a {kind} unit; got {text!r} (a {unit.kind} unit)")
    return unit


def to_si(values: ArrayLike, unit: str):
    """Convert ``values`` given in ``unit`` to SI (temperatures to kelvin)."""
    return parse_unit(unit).to_si(values)


def from_si(values: ArrayLike, unit: str):
    """Convert SI ``values`` to ``unit``."""
    return parse_unit(unit).from_si(values)


# Display units for moduli, largest first: (symbol, Pa per unit)
DISPLAY_MODULUS_UNITS = (("GPa", 1e9), ("MPa", 1e6), ("kPa", 1e3), ("Pa", 1.0))


def display_modulus_unit(values_Pa: ArrayLike) -> tuple:
    """Pa, kPa, MPa or GPa for showing moduli around the geometric median of ``values_Pa``.

    Returns ``(unit, factor)`` with value_in_unit = value_Pa / factor; ``None`` entries, zeros
    and non-finite values are ignored.
    """
    v = np.asarray([x for x in np.ravel(np.asarray(values_Pa, dtype=object)) if x is not None],
                   dtype=float)
    v = v[np.isfinite(v) & (v > 0)]
    if v.size == 0:
        return "Pa", 1.0
    mid = 10.0 ** float(np.median(np.log10(v)))
    for unit, factor in DISPLAY_MODULUS_UNITS:
        if mid >= factor:
            return unit, factor
    return "Pa", 1.0


def celsius_to_kelvin(t_C: ArrayLike):
    """T/K = T/°C + 273.15 (definition of the Celsius scale)."""
    return np.asarray(t_C, dtype=float) + ZERO_CELSIUS_K


def kelvin_to_celsius(t_K: ArrayLike):
    """T/°C = T/K − 273.15 (definition of the Celsius scale)."""
    return np.asarray(t_K, dtype=float) - ZERO_CELSIUS_K
