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
    (r"(tan ?δ|tan ?delta|tan_?delta|tand|tan d|loss factor|loss tangent|tan|e''/e'|g''/g'|"
     r"e\"/e'|g\"/g')", "tan_delta", None),
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
    (r"d", "creep_compliance_1_per_Pa?", "tensile"),   # bare D or J: only with a compliance unit
    (r"j", "creep_compliance_1_per_Pa?", "shear"),
]

# Keywords looked for inside longer names when no exact pattern matches ("fuzzy" meanings):
# (regex searched in the normalised name, role)
_KEYWORDS = [
    (r"storage", "storage_modulus_Pa"),
    (r"loss (modulus|mod\b)", "loss_modulus_Pa"),
    (r"loss factor|loss tangent|\btan ?(δ|delta)\b", "tan_delta"),
    (r"complex (modulus|mod\b)|dynamic modulus", "complex_modulus_Pa"),
    (r"phase angle|phase shift", "phase_angle_rad"),
    (r"relaxation (modulus|mod\b)", "relaxation_modulus_Pa"),
    (r"creep compliance|creep", "creep_compliance_1_per_Pa"),
    (r"\bfrequency\b|\bfreq\b", "frequency_rad_s"),
    (r"\btemperature\b|\btemp\b", "temperature_K"),
]
_KEYWORDS_COMPILED = [(re.compile(p), role) for p, role in _KEYWORDS]
# names that mean a modulus without saying which one: storage in a frequency sweep, the
# relaxation modulus in a time-domain test
_BARE_MODULUS = ("e", "g", "modulus")
_ANGULAR_NAMES = ("omega", "ω", "w", "angular frequency", "ang frequency", "angular freq",
                  "ang freq", "angfreq")
_PER_SECOND = ("1/s", "s^-1", "s-1", "s⁻¹", "1/sec")
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
    """What a header says: the role (SI column name), the unit as written, the modulus kind.

    ``fuzzy`` is True when the role was guessed from a keyword inside a longer name (such as
    ``"Storage modulus E' (MPa)"``); a column recognised exactly takes precedence over it.
    """

    role: str
    unit: str | None
    modulus_kind: str | None
    fuzzy: bool = False


def _normalise(text: str) -> str:
    s = unicodedata.normalize("NFKC", text).strip().strip('"').strip()
    s = s.replace("’", "'").replace("‘", "'").replace("`", "'")
    s = re.sub(r"\s+", " ", s)
    # tan(δ), tan (delta): the parentheses belong to the name, not to a unit
    s = re.sub(r"(?i)^tan\s*\(\s*(δ|delta|d)\s*\)", lambda m: f"tan {m.group(1)}", s)
    return s


def _is_unit(text: str) -> bool:
    try:
        parse_unit(text)
    except DataError:
        return False
    return True


def split_unit(header: str) -> tuple:
    """Split ``"E' (MPa)"`` into ``("E'", "MPa")``; the unit is None when none is written.

    Accepts ``name (unit)``, ``name [unit]``, ``name / unit``, ``name in unit`` and ``name_unit``
    (a known unit after the last underscore, as in ``Gp_Pa`` or ``omega_rad_s``).
    """
    s = _normalise(header)
    m = re.match(r"^(.*?)\s*[\(\[]\s*([^\(\)\[\]]*?)\s*[\)\]]\s*$", s)
    if m and m.group(1) and not re.fullmatch(r"[A-Za-z]", m.group(2) or "x"):
        return m.group(1).strip().rstrip("/").strip(), m.group(2).strip()
    if m and m.group(1) and m.group(2) in ("C", "K", "F", "s", "h"):
        return m.group(1).strip().rstrip("/").strip(), m.group(2)
    m = re.match(r"^(.*?\S)\s+/\s*(\S.*)$", s) or re.match(r"^(.*?\S)\s+in\s+(\S+)$", s)
    if m:
        return m.group(1).strip(), m.group(2).strip()
    # "Temperature, °C" or "Frequency, Hz": a known unit after the last comma
    m = re.match(r"^(.*\S)\s*,\s*(\S[^,]*)$", s)
    if m and _is_unit(m.group(2)):
        return m.group(1).strip(), m.group(2).strip()
    # quantity calculus without spaces: "T/K", "E'/MPa", "omega/rad/s", "D/(1/GPa)" - split at the
    # first slash whose right-hand side is a known unit
    for k, ch in enumerate(s):
        if ch == "/" and 0 < k < len(s) - 1:
            right = s[k + 1:].strip()
            if right.startswith("(") and right.endswith(")"):
                right = right[1:-1].strip()
            if _is_unit(right):
                return s[:k].strip(), right
    low = s.lower()
    for suffix in sorted(_SUFFIX_UNITS, key=len, reverse=True):
        if low.endswith("_" + suffix) and len(low) > len(suffix) + 1:
            return s[: -(len(suffix) + 1)], _SUFFIX_UNITS[suffix]
    return s, None


def interpret_header(header: str, *, domain: str | None = None) -> HeaderMeaning | None:
    """Return what a column header means, or None when it is not a column ttsp uses.

    ``t`` and ``T`` are told apart by their unit: a temperature unit makes a temperature column,
    a time unit a time column; with no unit, upper-case ``T`` is temperature and lower-case ``t``
    is time. A bare ``E``/``G``/``modulus`` is the storage modulus, or the relaxation modulus when
    ``domain="time"``; a bare ``D``/``J`` is a creep compliance only with a compliance unit.
    ``1/s`` after an angular-frequency name (``omega``, ``ω``, ``angular frequency``) is read as
    rad/s, after any other frequency name as Hz; such a name without a unit is rad/s as well. When no exact name matches, a keyword inside a
    longer name (``"Storage modulus E' (MPa)"``) gives a ``fuzzy`` meaning, accepted only when
    its unit (if any) is of the right kind.
    """
    name, unit = split_unit(header)
    key = name.lower().strip()
    key = re.sub(r"\s*[-_]\s*", lambda m: "_" if m.group(0).strip() == "_" else " ", key) \
        if key not in ("tan-delta",) else "tan delta"
    key = key.replace("tan-delta", "tan delta").rstrip(".").strip()
    unit_kind = None
    if unit is not None:
        try:
            unit_kind = parse_unit(unit).kind
        except DataError:
            unit_kind = None
    meaning = _exact_meaning(key, name, unit, unit_kind, domain)
    if meaning is None:
        meaning = _fuzzy_meaning(key, unit, unit_kind)
    if (meaning is not None and meaning.role == "frequency_rad_s" and key in _ANGULAR_NAMES
            and (unit is None or unit.strip() in _PER_SECOND)):
        # an angular frequency is in rad/s by definition: no unit is not Hz here
        meaning = HeaderMeaning(meaning.role, "rad/s", None, meaning.fuzzy)
    return meaning


def _exact_meaning(key, name, unit, unit_kind, domain):
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
            if role == "creep_compliance_1_per_Pa?":
                if unit_kind != "compliance":
                    continue
                role = "creep_compliance_1_per_Pa"
            if domain == "time" and role == "storage_modulus_Pa" and key in _BARE_MODULUS:
                role = "relaxation_modulus_Pa"
            if domain == "time" and key == "modulus" and unit_kind == "modulus":
                role = "relaxation_modulus_Pa"
            return HeaderMeaning(role, unit, kind)
    return None


def _fuzzy_meaning(key, unit, unit_kind):
    for pattern, role in _KEYWORDS_COMPILED:
        if pattern.search(key):
            if unit is not None and unit_kind != UNIT_KIND_OF_ROLE[role]:
                return None
            kind = None
            if UNIT_KIND_OF_ROLE[role] in ("modulus", "compliance"):
                if re.search(r"\bshear\b|(^|\s)[gj](\s|'|\(|$)|(^|\s)[gj]′", key):
                    kind = "shear"
                elif re.search(r"\btensile\b|\byoung|(^|\s)[ed](\s|'|\(|$)|(^|\s)[ed]′", key):
                    kind = "tensile"
            return HeaderMeaning(role, unit, kind, True)
    return None
