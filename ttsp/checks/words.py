"""Words that fit the data: the symbols of shear data in the checks' messages.

The checks are written once, in the symbols of tensile data (E', E'', |E*|, E(t), D(t));
shear data are named G', G'', |G*|, G(t) and J(t) (the symbols of the IUPAC/Society of
Rheology nomenclature: Dealy, J. Rheol. 39, 253, 1995 [from memory]). This module rewrites a
check result's message and unit into the symbols of the campaign's modulus kind.
"""

from __future__ import annotations

import re
from dataclasses import replace

__all__ = ["in_the_symbols_of", "shear_words"]

# E followed by a prime, a star, (t), (ω) or a subscript; D(t) and D'. The look-behind keeps
# words (there are none ending in E' in the messages, but "E" inside a word never matches).
_TENSILE = re.compile(r"(?<![A-Za-z_])E(?=(''|'|\*|\(|_eq|_∞|∞))|(?<![A-Za-z_])D(?=(\(t\)|'))")


def shear_words(text: str) -> str:
    """The text with tensile symbols (E', E'', |E*|, E(t), E_eq, D(t)) in shear ones (G, J)."""
    return _TENSILE.sub(lambda m: "G" if m.group(0) == "E" else "J", text)


def in_the_symbols_of(result, modulus_kind: str):
    """The check result with its message (and unit) in the symbols of ``modulus_kind``."""
    if modulus_kind != "shear":
        return result
    details = result.details
    unit = details.get("unit") if hasattr(details, "get") else None
    if isinstance(unit, str) and shear_words(unit) != unit:
        details = {**details, "unit": shear_words(unit)}
    return replace(result, message=shear_words(result.message), details=details)
