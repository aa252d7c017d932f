"""One wording for every parameter rule, so all messages read alike.

Template: ``<name> must be <rule>; got <value>``, prefixed with where the value came from
(file, column, row) when that is known.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import numpy as np

from .exceptions import DataError

__all__ = ["bad_value", "where", "printable", "check_positive", "check_finite", "check_choice", "check_range"]


def printable(text: str) -> str:
    """``text`` as it can stand in a one-line message: a newline, a tab or another control
    character in a file name is written as its escape (``\\n``), not acted on."""
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in text)


def where(file: str | None = None, column: str | None = None, row: int | None = None) -> str:
    """Return a location prefix such as ``"data.csv, column 'E' (MPa)', row 12: "``.

    Rows are counted as a user sees them in a spreadsheet: 1 is the first line of the file.
    """
    parts = []
    if file:
        parts.append(printable(str(file)))
    if column is not None:
        parts.append(f"column {column!r}")
    if row is not None:
        parts.append(f"row {row}")
    return (", ".join(parts) + ": ") if parts else ""


def bad_value(name: str, rule: str, value: Any, *, file: str | None = None,
              column: str | None = None, row: int | None = None) -> DataError:
    """Build (not raise) the one-template :class:`DataError`."""
    return DataError(f"{where(file, column, row)}{name} must be {rule}; got {value!r}")


def check_positive(name: str, value: float, *, allow_zero: bool = False) -> float:
    """Return ``value`` as float if it is finite and > 0 (or >= 0), else raise DataError."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise bad_value(name, "a number", value) from None
    if not np.isfinite(v) or v < 0 or (v == 0 and not allow_zero):
        raise bad_value(name, "non-negative and finite" if allow_zero else "positive and finite", value)
    return v


def check_finite(name: str, value: float) -> float:
    """Return ``value`` as float if it is finite, else raise DataError."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise bad_value(name, "a number", value) from None
    if not np.isfinite(v):
        raise bad_value(name, "finite", value)
    return v


def check_range(name: str, value: float, lo: float, hi: float) -> float:
    """Return ``value`` if ``lo <= value <= hi``, else raise DataError."""
    v = check_finite(name, value)
    if not lo <= v <= hi:
        raise bad_value(name, f"between {lo} and {hi}", value)
    return v


def check_choice(name: str, value: Any, choices: Iterable[Any]) -> Any:
    """Return ``value`` if it is one of ``choices``, else raise DataError listing them."""
    choices = list(choices)
    if value not in choices:
        raise bad_value(name, "one of " + ", ".join(repr(c) for c in choices), value)
    return value
