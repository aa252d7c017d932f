"""Rows of a table that are clearly not data: which ones, and why they were left out.

Two kinds are skipped, never silently: each is kept as a :class:`SkippedRow` that ``ttsp
inspect``, the report and :attr:`ttsp.data.Campaign.metadata` list by row number and text.

* **Text after the data**: the lines after the last line of numbers that hold no number at
  all (``End of data``, ``Test finished``), as instruments write them as a footer.
* **Text in a number column**: a row whose cell in a column ttsp reads is a word with no digit
  (``overload``, ``n/a``, ``---``), as instruments write in place of a value they could not
  measure. A column in which half or more of the cells are such words is not a number column
  with a few flagged rows, and is refused; so is a table in which half or more of the rows
  would be skipped.

A cell with a digit that is not a number (``200 MPa``, ``1,234.5``, ``0x10``) is never skipped:
it may be a value written in a way ttsp does not guess at, and is refused with its row.
"""

from __future__ import annotations

from dataclasses import dataclass

from .._validation import where
from ..exceptions import DataError

__all__ = ["SkippedRow", "TEXT_AFTER_DATA", "TEXT_IN_NUMBER_COLUMN", "is_text_cell",
           "describe_skipped", "refuse_mostly_text"]

TEXT_AFTER_DATA = "text after the data"
TEXT_IN_NUMBER_COLUMN = "text in a number column"


@dataclass(frozen=True)
class SkippedRow:
    """One row left out of a table.

    Attributes
    ----------
    row : int
        The line of the file (1 = the first line, as a spreadsheet counts rows).
    text : str
        The cell (or, for text after the data, the whole line) as written.
    reason : str
        :data:`TEXT_AFTER_DATA` or :data:`TEXT_IN_NUMBER_COLUMN`.
    column : str or None
        The header of the column whose cell is text, when the reason is a cell.
    """

    row: int
    text: str
    reason: str
    column: str | None = None

    def describe(self) -> str:
        """One line such as ``row 3: 'overload' in column "E' (MPa)"``."""
        if self.column is not None:
            return f"row {self.row}: {self.text!r} in column {self.column!r}"
        return f"row {self.row}: {self.text!r} ({self.reason})"


def is_text_cell(cell: str) -> bool:
    """True for a non-empty cell without any digit (``overload``, ``n/a``, ``---``).

    The caller has already found that the cell is not a number (``nan`` and ``inf`` are).
    """
    c = cell.strip()
    return bool(c) and not any(ch.isdigit() for ch in c)


def describe_skipped(skipped, path: str | None = None) -> str:
    """All skipped rows as one line, each described, prefixed by the file name when given."""
    prefix = f"{path}, " if path else ""
    return "; ".join(prefix + s.describe() for s in skipped)


def refuse_mostly_text(path: str, header: str, text_rows: list, filled: int) -> None:
    """Refuse a column whose filled cells are text in half or more of its rows.

    Parameters
    ----------
    path, header : str
        The file and the column, for the message.
    text_rows : list of (int, str)
        The file line and the cell of each text cell in the column.
    filled : int
        The number of non-empty cells of the column.
    """
    if text_rows and 2 * len(text_rows) >= filled:
        line, cell = text_rows[0]
        raise DataError(f"{where(path, header, line)}value must be a number; got {cell!r}, and "
                        f"{len(text_rows)} of the column's {filled} cells are text without a "
                        f"number: is this a column of numbers?")
