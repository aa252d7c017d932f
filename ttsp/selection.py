"""The user's hand on the isotherms: leave some out of a build, hold some shifts at given values.

Layer 1 (on the campaign model; no fitting). Temperatures come in °C as users type them and are
matched to the measured isotherms within :data:`MATCH_K`.
"""

from __future__ import annotations

import numpy as np

from ._validation import bad_value
from .data import Campaign
from .exceptions import DataError

__all__ = ["MATCH_K", "without_isotherms", "fixed_shifts_K", "normalise_exclude", "normalise_fixed"]

#: a temperature the user names belongs to the isotherm within this many kelvin (the default
#: tolerance that groups points into isotherms; isotherm temperatures are means of their points)
MATCH_K = 0.5


def _nearest(campaign: Campaign, temperature_C: float, option: str) -> int:
    temps_C = campaign.temperatures_C
    k = int(np.argmin(np.abs(temps_C - temperature_C)))
    if abs(temps_C[k] - temperature_C) > MATCH_K:
        listed = ", ".join(f"{t:g}" for t in np.round(temps_C, 2))
        raise DataError(f"{option}: no isotherm at {temperature_C:g} °C (within {MATCH_K} K); "
                        f"the isotherms are at {listed} °C")
    return k


def without_isotherms(campaign: Campaign, exclude_C) -> Campaign:
    """The campaign without the isotherms at the temperatures ``exclude_C`` (°C).

    Raises
    ------
    DataError
        A temperature matches no isotherm, or fewer than two isotherms would be left.
    """
    if not exclude_C:
        return campaign
    drop = {_nearest(campaign, float(t), "exclude") for t in exclude_C}
    isos = tuple(iso for k, iso in enumerate(campaign.isotherms) if k not in drop)
    if len(isos) < 2:
        raise DataError(f"exclude: leaving out {len(drop)} of {len(campaign)} isotherms leaves "
                        f"fewer than two to superpose")
    return Campaign(isos, campaign.domain, campaign.modulus_kind, campaign.source,
                    campaign.units_as_read, campaign.metadata, campaign.dropped_rows)


def fixed_shifts_K(campaign: Campaign, fixed_C, *, strict: bool = True) -> dict:
    """``{temperature_C: log10 a_T}`` as ``{temperature_K of the matching isotherm: log10 a_T}``
    for :func:`ttsp.shifting.shift_isotherms`.

    With ``strict=False`` a temperature without an isotherm is passed over (a cross-validation
    fold that left that isotherm out); otherwise it is refused with a DataError.
    """
    out = {}
    for t, value in dict(fixed_C or {}).items():
        try:
            k = _nearest(campaign, float(t), "fix_shift")
        except DataError:
            if strict:
                raise
            continue
        out[float(campaign.temperatures_K[k])] = float(value)
    return out


def normalise_exclude(values) -> tuple:
    """``exclude_C`` as a sorted tuple of distinct finite floats (°C)."""
    if isinstance(values, (str, bytes)) or not hasattr(values, "__iter__"):
        raise bad_value("exclude_C", "a list of temperatures in °C", values)
    out = []
    for v in values:
        try:
            t = float(v)
        except (TypeError, ValueError):
            raise bad_value("exclude_C", "a list of temperatures in °C", values) from None
        if not np.isfinite(t):
            raise bad_value("exclude_C", "a list of finite temperatures in °C", values)
        out.append(t)
    return tuple(sorted(set(out)))


def normalise_fixed(values) -> tuple:
    """``fixed_log10_aT`` (a mapping or pairs; keys numbers or their text) as sorted
    ``((temperature_C, log10_aT), ...)``: hashable, like every field of a frozen options class."""
    from ._validation import bad_value

    rule = "a mapping of temperature in °C to a finite log10 a_T"
    items = values.items() if hasattr(values, "items") else values
    out = {}
    try:
        for t, v in items:
            t, v = float(t), float(v)
            if not (np.isfinite(t) and np.isfinite(v)):
                raise ValueError
            out[t] = v
    except (TypeError, ValueError):
        raise bad_value("fixed_log10_aT", rule, values) from None
    return tuple(sorted(out.items()))
