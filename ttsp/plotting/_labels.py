"""Symbols and units of the figures' axes: E or G, primes, the display unit of a modulus or a
compliance, the frequency unit the campaign was read in, the reduced-axis labels.

Layer 4 (figures); no matplotlib here.
"""

from __future__ import annotations

import math

import numpy as np

from ..units import DISPLAY_MODULUS_UNITS, display_modulus_unit, parse_unit

_MODULUS_UNITS = DISPLAY_MODULUS_UNITS


def _pretty(symbol: str) -> str:
    """Typographic primes: E'' → E″, E' → E′."""
    return symbol.replace("''", "″").replace("'", "′")


def _letters(modulus_kind: str) -> tuple[str, str]:
    """(modulus letter, compliance letter): ('E', 'D') tensile, ('G', 'J') shear."""
    return ("G", "J") if modulus_kind == "shear" else ("E", "D")


_modulus_unit = display_modulus_unit


def _compliance_unit(values_1_per_Pa) -> tuple[str, float]:
    """Inverse of :func:`_modulus_unit`: (unit, factor) with value_in_unit = value_SI / factor."""
    v = np.asarray(values_1_per_Pa, dtype=float).ravel()
    v = v[np.isfinite(v) & (v > 0)]
    unit, factor = "GPa", 1e9
    if v.size:
        # the smallest modulus unit in whose inverse the typical compliance is at least 1
        mid = 10.0 ** float(-np.median(np.log10(v)))
        # the loop variables are the answer: the pair at the break (or the last one tried)
        for unit, factor in reversed(_MODULUS_UNITS):  # noqa: B007
            if factor >= mid * (1 - 1e-12):
                break
    return f"{unit}⁻¹", 1.0 / factor


def _frequency_unit(campaign) -> tuple[str, float]:
    """("Hz", 2π) or ("rad/s", 1): the unit the campaign's frequencies were read in (Hz if unknown).

    Returns (unit, factor) with value_in_unit = ω_rad_s / factor.
    """
    for text in dict(getattr(campaign, "units_as_read", {}) or {}).values():
        try:
            unit = parse_unit(text)
        except Exception:  # a unit spelled for another purpose: not ours to judge here
            continue
        if unit.kind == "frequency":
            return ("rad/s", 1.0) if unit.scale == 1.0 else ("Hz", 2.0 * math.pi)
    return "Hz", 2.0 * math.pi


_AT = r"$a_T$"
_TREF = r"$T_\mathrm{ref}$"


def _unit_kind(quantity: str) -> str:
    if quantity.endswith("_1_per_Pa"):
        return "compliance"
    if quantity.endswith("_Pa"):
        return "modulus"
    return quantity


def _value_axis(campaign, quantities, values):
    """(label, factor, log?) for the y axis of ``quantities`` given all plotted values (SI)."""
    symbols = ", ".join(_pretty(campaign.symbol(q)) for q in quantities)
    kind = _unit_kind(quantities[0])
    if kind == "modulus":
        unit, factor = _modulus_unit(values)
        return f"{symbols} ({unit})", factor, True
    if kind == "compliance":
        unit, factor = _compliance_unit(values)
        return f"{symbols} ({unit})", factor, True
    if kind == "phase_angle_rad":
        return f"{symbols} (°)", math.pi / 180.0, False
    return symbols, 1.0, True


def _reduced_x_label(campaign, xunit: str, domain: str | None = None) -> str:
    if (domain or campaign.domain) != "frequency":
        return f"Reduced time t/{_AT} (s)"
    if xunit == "Hz":
        return f"Reduced frequency f·{_AT} (Hz)"
    return f"Reduced angular frequency ω·{_AT} (rad/s)"
