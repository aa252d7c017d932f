"""Text cells read as numbers: what a number may look like, and a table's column as floats.

A number is a plain decimal (``12``, ``-0.5``, ``.5``, ``1e-3``), with a decimal comma in a file
read with one, or one of the words ``nan`` and ``inf``; the minus sign U+2212 counts as ``-``. A
cell that is not a number is refused with its file, column and row, and the message names the
likely cause: thousands separators (``1,234.5``), several values in one cell (a row written with
another delimiter), a number beyond the range of a double (``1e400``). In a file with decimal
commas, ``1,234`` and ``1.234`` are read only when another number in the file shows how the mark
is used; otherwise they are refused rather than read a factor of 1000 wrong.

Both the campaign readers (:mod:`ttsp.io.table_columns`) and the loading-history reader
(:mod:`ttsp.io.history_table`) read their columns through :func:`column_floats`.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING

import numpy as np

from .._validation import where
from ..exceptions import DataError

if TYPE_CHECKING:
    from .tables import RawTable

__all__ = ["is_number", "to_float", "column_floats", "GROUPED_NUMBER"]

_NUMBER = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$")
_SPECIAL_NUMBERS = ("nan", "inf", "-inf", "+inf", "infinity", "-infinity", "+infinity")
# Characters of a plain number with a decimal point. Over this alphabet Python's (and numpy's)
# float() accepts exactly the language of _NUMBER, so a column made only of them can be converted
# in one call; anything else takes the cell-by-cell path that names the first bad cell.
_NOT_PLAIN_NUMBER = re.compile(r"[^0-9.eE+\-\n]")
# a number grouped by thousands separators: 1,234.5  1.234,5  1 234,5  1'234.5  12,345,678
GROUPED_NUMBER = re.compile(r"^[+-]?\d{1,3}(?P<sep>[,.' \u00a0\u202f])\d{3}(?:(?P=sep)\d{3})*"
                            r"(?:[.,]\d*)?(?:[eE][+-]?\d+)?$")
# one comma or one dot followed by exactly three digits: a decimal mark or a thousands separator
_COMMA_GROUP_CELLS = re.compile(r"(?m)^[+\-−]?[1-9]\d{0,2},\d{3}$")
_DOT_GROUP_CELLS = re.compile(r"(?m)^[+\-−]?[1-9]\d{0,2}\.\d{3}$")
_COMMA_DECIMAL_CELLS = re.compile(r"(?m)^[+\-−]?(?:\d+,\d*|,\d+)(?:[eE][+-]?\d+)?$")
_DOT_DECIMAL_CELLS = re.compile(r"(?m)^[+\-−]?(?:\d+\.\d*|\.\d+)(?:[eE][+-]?\d+)?$")


def is_number(cell: str, decimal_comma: bool) -> bool:
    """Whether a cell reads as one number (a comma only as the decimal mark of a file with
    decimal commas)."""
    c = cell.strip().replace("−", "-")
    if not decimal_comma and "," in c:
        return False
    return bool(_NUMBER.match(c)) or c.lower() in _SPECIAL_NUMBERS


def to_float(cell: str, decimal_comma: bool) -> float:
    """One cell as a float: an empty cell is NaN; a cell that is not a number raises
    ValueError."""
    c = cell.strip().replace("−", "-")
    if c == "":
        return float("nan")
    if decimal_comma:
        c = c.replace(",", ".")
    if not (_NUMBER.match(c) or c.lower() in _SPECIAL_NUMBERS):
        raise ValueError(cell)
    return float(c)


def _not_a_number(cell: str) -> str:
    """The rule a cell that is not a number broke, for the message."""
    if GROUPED_NUMBER.match(cell.strip()):
        return f"value must be a number without thousands separators; got {cell!r}"
    for delimiter in (",", ";", "\t"):
        parts = cell.split(delimiter)
        # (two parts split at a comma may be one number with a decimal comma: no hint then)
        if (len(parts) >= (3 if delimiter == "," else 2)
                and all(is_number(p, delimiter != ",") for p in parts if p.strip())):
            return (f"value must be a number; got {cell!r}, several values in one cell: is this "
                    f"row written with another delimiter than the rest of the file?")
    return f"value must be a number; got {cell!r}"


def column_floats(table: RawTable, j: int, header: str, *, empty_allowed: bool,
                  marks: dict | None = None) -> np.ndarray:
    """The cells of column ``j`` as floats (an empty cell is NaN), or a DataError naming the
    first bad row. A column of plain numbers is converted in one call; anything else (signs
    such as U+2212, nan/inf words, empty cells, bad cells) cell by cell. ``marks`` caches, for
    the columns of one table, whether the file uses each decimal mark unambiguously."""
    col = [row[j] if j < len(row) else "" for row in table.rows]
    text = "\n".join(col)
    if table.decimal_comma:
        text = text.replace(",", ".")
    values = None
    if not _NOT_PLAIN_NUMBER.search(text):
        try:
            values = np.array(text.split("\n"), dtype=float) if col else np.empty(0)
        except ValueError:
            values = None
    if values is None:
        values = np.empty(len(col))
        for i, cell in enumerate(col):
            try:
                values[i] = to_float(cell, table.decimal_comma)
            except ValueError:
                raise DataError(f"{where(table.path, header, table.line_numbers[i])}"
                                f"{_not_a_number(cell)}") from None
            if not empty_allowed and cell.strip() == "":
                raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be "
                                f"a number; got an empty cell")
    infinite = np.flatnonzero(np.isinf(values))
    for k in infinite:  # 1e400 becomes inf: say what was written, not "inf"
        cell = col[k]
        if "inf" not in cell.lower():
            raise DataError(f"{where(table.path, header, table.line_numbers[k])}value must be a "
                            f"finite number; got {cell!r}, beyond the largest number ttsp holds "
                            f"(about 1.8e308)")
        break
    if table.decimal_comma:
        _refuse_ambiguous_marks(table, j, header, "\n".join(col),
                                {} if marks is None else marks)
    return values


def _refuse_ambiguous_marks(table: RawTable, j: int, header: str, text: str,
                            marks: dict) -> None:
    """In a file read with decimal commas, ``1,234`` may be 1.234 or 1234, and ``1.234`` may be
    1.234 or a thousands-grouped 1234. Read them only when another number in the file shows how
    that mark is used (``0,5`` or ``12,25`` for the comma; ``0.5`` for the dot); otherwise refuse,
    rather than be a factor of 1000 wrong."""
    for grouped, decimal, mark in ((_COMMA_GROUP_CELLS, _COMMA_DECIMAL_CELLS, "comma"),
                                   (_DOT_GROUP_CELLS, _DOT_DECIMAL_CELLS, "dot")):
        m = grouped.search(text)
        if m is None:
            continue
        if mark not in marks:  # does any number in the file use this mark as a decimal mark?
            every_cell = "\n".join(c for row in table.rows for c in row)
            marks[mark] = any(not grouped.fullmatch(d.group(0))
                              for d in decimal.finditer(every_cell))
        if marks[mark]:
            continue  # the file uses this mark as a decimal mark elsewhere: no ambiguity
        cell = m.group(0)
        i = text.count("\n", 0, m.start())
        plain = cell.replace("−", "-")
        as_decimal, as_grouped = float(plain.replace(",", ".")), float(re.sub("[.,]", "", plain))
        what = "a decimal comma" if mark == "comma" else "a decimal point"
        raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be "
                        f"unambiguous; got {cell!r}, which is {as_decimal:g} with {what} or "
                        f"{as_grouped:g} with a thousands separator, and no other number in the "
                        f"file tells which (write numbers without thousands separators)")
