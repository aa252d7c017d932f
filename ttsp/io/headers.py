"""Column headers as people write them: which material function, which unit.

``interpret_header("E'' [MPa]")`` -> ``HeaderMeaning("loss_modulus_Pa", "MPa", "tensile")``.
Spellings come from common instrument exports and lab spreadsheets; anything not recognised is
``None`` so the reader can ignore the column and say so.
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass

from ..exceptions import DataError
from ..units import parse_unit

__all__ = ["HeaderMeaning", "interpret_header", "split_unit", "ROLE_NAMES"]

# Roles besides the measured quantities of ttsp.data.QUANTITIES
ROLE_NAMES = ("temperature_K", "frequency_rad_s", "time_s")

DEFAULT_UNIT = {
    "temperature_K": "°C",
    "frequency_rad_s": "Hz",
    "time_s": "s",
    "storage_modulus_Pa": "Pa",
    "loss_modulus_Pa": "Pa",
    "complex_modulus_Pa": "Pa",
    "relaxation_modulus_Pa": "Pa",
    "creep_compliance_1_per_Pa": "1/Pa",
    "tan_delta": "-",
    "phase_angle_rad": "°",
}

UNIT_KIND_OF_ROLE = {
    "temperature_K": "temperature", "frequency_rad_s": "frequency", "time_s": "time",
    "storage_modulus_Pa": "modulus", "loss_modulus_Pa": "modulus", "complex_modulus_Pa": "modulus",
    "relaxation_modulus_Pa": "modulus", "creep_compliance_1_per_Pa": "compliance",
    "tan_delta": "dimensionless", "phase_angle_rad": "angle",
}

# (regex on the normalised name, role, modulus kind or None)
_NAME_PATTERNS = [
    (r"(temp|temperature|t|theta|θ|temperatur)", "temperature?", None),
    (r"(freq|frequency|f|ang(ular)? ?freq(uency)?|omega|ω|w|rate)", "frequency_rad_s", None),
    (r"(time|t|step time|relaxation time)", "time?", None),
    (r"(e|e1|ep|e_?prime|e'|e′|e storage|storage modulus|storage|e_storage|storage_modulus)",
     "storage_modulus_Pa", "tensile"),
    (r"(g|g1|gp|g_?prime|g'|g′|g storage|g_storage)", "storage_modulus_Pa", "shear"),
    (r"(e2|epp|e_?double_?prime|e''|e\"|e′′|e″|loss modulus|loss|e loss|e_loss|loss_modulus)",
     "loss_modulus_Pa", "tensile"),
    (r"(g2|gpp|g_?double_?prime|g''|g\"|g′′|g″|g loss|g_loss)", "loss_modulus_Pa", "shear"),
    (r"(tan ?δ|tan ?delta|tan_?delta|tand|tan d|loss factor|loss tangent|tan)", "tan_delta", None),
    (r"(\|e\*\||e\*|estar|e_?star|complex modulus|\|e\||abs ?e\*|e_complex|complex_modulus|"
     r"dynamic modulus)", "complex_modulus_Pa", "tensile"),
    (r"(\|g\*\||g\*|gstar|g_?star|\|g\||abs ?g\*|g_complex)", "complex_modulus_Pa", "shear"),
    (r"(δ|delta|phase|phase angle|phase_angle|phi|φ)", "phase_angle_rad", None),
    (r"(e\(t\)|et|e_?t|relaxation modulus|relaxation_modulus|e_relax|modulus)",
     "relaxation_modulus_Pa", "tensile"),
    (r"(g\(t\)|gt|g_t|g_relax|shear relaxation modulus)", "relaxation_modulus_Pa", "shear"),
    (r"(d\(t\)|dt|d_t|creep compliance|creep_compliance|compliance|d_creep|tensile compliance)",
     "creep_compliance_1_per_Pa", "tensile"),
    (r"(j\(t\)|jt|j_t|shear compliance|j_creep)", "creep_compliance_1_per_Pa", "shear"),
]
_COMPILED = [(re.compile(rf"^{p}$"), role, kind) for p, role, kind in _NAME_PATTERNS]

# unit written as a suffix after an underscore: Gp_Pa, omega_rad_s, T_C, time_min
_SUFFIX_UNITS = {
    "pa": "Pa", "kpa": "kPa", "mpa": "MPa", "gpa": "GPa", "psi": "psi", "ksi": "ksi",
    "rad_s": "rad/s", "hz": "Hz", "s": "s", "sec": "s", "min": "min", "h": "h", "hr": "h",
    "c": "°C", "degc": "°C", "k": "K", "f": "°F", "degf": "°F", "deg": "°", "rad": "rad",
    "1_per_pa": "1/Pa", "1_per_mpa": "1/MPa", "1_per_gpa": "1/GPa", "per_pa": "1/Pa",
    "per_mpa": "1/MPa", "per_gpa": "1/GPa",
}


@dataclass(frozen=True)
class HeaderMeaning:
    """What a header says: the role (SI column name), the unit as written, the modulus kind."""

    role: str
    unit: str | None
    modulus_kind: str | None


def _normalise(text: str) -> str:
    s = unicodedata.normalize("NFKC", text).strip().strip('"').strip()
    s = s.replace("’", "'").replace("‘", "'").replace("`", "'")
    s = re.sub(r"\s+", " ", s)
    return s


def split_unit(header: str) -> tuple:
    """Split ``"E' (MPa)"`` into ``("E'", "MPa")``; the unit is None when none is written.

    Accepts ``name (unit)``, ``name [unit]``, ``name / unit``, ``name in unit`` and ``name_unit``
    (a known unit after the last underscore, as in ``Gp_Pa`` or ``omega_rad_s``).
    """
    s = _normalise(header)
    m = re.match(r"^(.*?)\s*[\(\[]\s*([^\(\)\[\]]*?)\s*[\)\]]\s*$", s)
    if m and m.group(1) and not re.fullmatch(r"[A-Za-z]", m.group(2) or "x"):
        return m.group(1).strip(), m.group(2).strip()
    if m and m.group(1) and m.group(2) in ("C", "K", "F", "s", "h"):
        return m.group(1).strip(), m.group(2)
    m = re.match(r"^(.*?\S)\s+/\s*(\S.*)$", s) or re.match(r"^(.*?\S)\s+in\s+(\S+)$", s)
    if m:
        return m.group(1).strip(), m.group(2).strip()
    low = s.lower()
    for suffix in sorted(_SUFFIX_UNITS, key=len, reverse=True):
        if low.endswith("_" + suffix) and len(low) > len(suffix) + 1:
            return s[: -(len(suffix) + 1)], _SUFFIX_UNITS[suffix]
    return s, None


def interpret_header(header: str) -> HeaderMeaning | None:
    """Return what a column header means, or None when it is not a column ttsp uses.

    ``t`` and ``T`` are told apart by their unit: a temperature unit makes a temperature column,
    a time unit a time column; with no unit, upper-case ``T`` is temperature and lower-case ``t``
    is time.
    """
    name, unit = split_unit(header)
    key = name.lower().strip()
    key = re.sub(r"\s*[-_]\s*", lambda m: "_" if m.group(0).strip() == "_" else " ", key) \
        if key not in ("tan-delta",) else "tan delta"
    key = key.replace("tan-delta", "tan delta")
    unit_kind = None
    if unit is not None:
        try:
            unit_kind = parse_unit(unit).kind
        except DataError:
            unit_kind = None
    for pattern, role, kind in _COMPILED:
        if pattern.match(key):
            if role == "temperature?":
                if key in ("t",) and (unit_kind == "time" or (unit is None and name.strip() == "t")):
                    return HeaderMeaning("time_s", unit, None)
                return HeaderMeaning("temperature_K", unit, None)
            if role == "time?":
                if unit_kind == "temperature":
                    return HeaderMeaning("temperature_K", unit, None)
                return HeaderMeaning("time_s", unit, None)
            if role == "frequency_rad_s" and key in ("w", "rate") and unit_kind != "frequency":
                continue
            if role == "relaxation_modulus_Pa" and key == "modulus" and unit_kind != "modulus":
                continue
            return HeaderMeaning(role, unit, kind)
    return None
