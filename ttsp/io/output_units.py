"""The units of the CSV tables a build writes: one frequency convention (Hz) in every file, and
SI (Pa, 1/Pa) or engineering (MPa, 1/MPa) moduli and compliances.

Layer 4 (an edge). Inside, ttsp keeps SI and angular frequency; this module renames and scales
the columns of a finished table by their unit suffix, so every column name still carries its unit.
"""

from __future__ import annotations

import math

from .._validation import check_choice

__all__ = ["UNIT_SYSTEMS", "in_output_units"]

UNIT_SYSTEMS = ("SI", "engineering")

# (suffix, new suffix, factor) for engineering units; 1/Pa before Pa (it ends in _Pa too)
_ENGINEERING = (("_1_per_Pa", "_1_per_MPa", 1e6), ("_Pa", "_MPa", 1e-6))


def in_output_units(frame, units: str = "SI"):
    """A copy of ``frame`` with angular frequencies as Hz and, for ``"engineering"``, moduli in
    MPa and compliances in 1/MPa.

    Parameters
    ----------
    frame : pandas.DataFrame
        A table with unit-suffixed columns (``reduced_frequency_rad_s``, ``storage_modulus_Pa``,
        ``creep_compliance_1_per_Pa``, ...).
    units : {"SI", "engineering"}
        SI: Pa, 1/Pa, Hz, s. Engineering: MPa, 1/MPa, Hz, s.

    Returns
    -------
    pandas.DataFrame
        f = ω/(2π) for every ``*frequency*_rad_s`` column (renamed ``*_Hz``); other columns
        unchanged unless engineering units rename and scale them. ``frame.attrs`` are kept.
    """
    check_choice("units", units, UNIT_SYSTEMS)
    out = frame.copy()
    renames = {}
    for name in frame.columns:
        if not isinstance(name, str):
            continue
        if "frequency" in name and name.endswith("_rad_s"):
            out[name] = frame[name] / (2 * math.pi)
            renames[name] = name[: -len("_rad_s")] + "_Hz"
            continue
        if units == "engineering":
            for suffix, new, factor in _ENGINEERING:
                if name.endswith(suffix):
                    out[name] = frame[name] * factor
                    renames[name] = name[: -len(suffix)] + new
                    break
    return out.rename(columns=renames)
