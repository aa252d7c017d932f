"""Cells of one sheet of an .xlsx workbook, read as text lines for :mod:`ttsp.io.tables`.

The sheet is streamed (openpyxl's read-only mode) without trusting its declared dimension: a
single stray cell at ``XFD1000000`` declares a used range of 1.6e10 cells, and padding every row
to that width never ends. Each row is read as wide as its own last cell, and the cells actually
read are counted against a budget, so that a sheet too large to hold is refused in seconds.

A formula whose value the file does not store (a workbook written by a program that does not
compute formulas) reads as an empty cell; such cells are found by a second read of the formulas,
done only when the first read shows empty cells inside the table, and reported by position.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .._validation import where
from ..exceptions import DataError

__all__ = ["SheetCells", "read_sheet_cells", "CELLS_PER_POINT"]

#: The cell budget of a sheet is this many cells per point of the size limit (a table of 16
#: columns at the limit fits): past it the sheet is refused before its cells fill the memory.
CELLS_PER_POINT = 16


@dataclass(frozen=True)
class SheetCells:
    """The text cells of one sheet and where they came from.

    Attributes
    ----------
    lines : list of list of str
        One list of cells per sheet row (row 1 first), trailing empty cells removed.
    sheet : str
        The title of the sheet read.
    sheet_names : tuple of str
        Every sheet of the workbook, in order.
    chosen : bool
        True when the caller named the sheet, False when the first sheet was taken.
    uncomputed : dict
        ``{(row, column): formula}`` (1-based row, 0-based column) of the cells that hold a
        formula without a stored value.
    """

    lines: list
    sheet: str
    sheet_names: tuple
    chosen: bool
    uncomputed: dict = field(default_factory=dict)


def _text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    # a cell wrapped over several lines (Alt+Enter) is one line here, so messages that quote it
    # stay one line
    return " ".join(str(value).split())


def _open(path: str, data_only: bool):
    import openpyxl

    try:
        return openpyxl.load_workbook(path, read_only=True, data_only=data_only)
    except Exception as exc:  # openpyxl raises many types for a broken file
        raise DataError(f"{where(path)}not a readable .xlsx workbook "
                        f"({type(exc).__name__})") from None


def _pick(book, path: str, sheet):
    names = book.sheetnames
    if sheet is None:
        return book.worksheets[0]
    if isinstance(sheet, int) and not isinstance(sheet, bool):
        if not 0 <= sheet < len(names):
            raise DataError(f"{where(path)}sheet must be a number from 0 to {len(names) - 1} "
                            f"or one of {', '.join(names)}; got {sheet!r}")
        return book.worksheets[sheet]
    if sheet not in names:
        raise DataError(f"{where(path)}sheet must be one of {', '.join(names)}; got {sheet!r}")
    return book[sheet]


def _rows(ws, path: str, max_rows: int, max_cells: int, too_large, declared: str):
    """Yield each row's values, as wide as its own last cell; refuse past the budgets."""
    ws.reset_dimensions()   # do not pad rows to the declared used range
    cells = 0
    for n, row in enumerate(ws.iter_rows(values_only=True), start=1):
        cells += len(row)
        if cells > max_cells:
            raise too_large(path, f"the sheet {ws.title!r} holds more than {max_cells:,} cells "
                                  f"(its used range is {declared}; a stray cell far below or to "
                                  f"the right of the table widens it: delete it)", max_cells
                            // CELLS_PER_POINT)
        if n > max_rows:
            raise too_large(path, f"the sheet {ws.title!r} has more than {max_rows:,} rows",
                            max_cells // CELLS_PER_POINT)
        yield row


def _has_gaps(lines: list) -> bool:
    """Empty cells inside the table: a row shorter than the widest, or a blank cell before a
    filled one (where a formula without a stored value reads as empty)."""
    width = max((len(c) for c in lines), default=0)
    return any(c and (len(c) < width or "" in c) for c in lines)


def read_sheet_cells(path: str, sheet, limit: int, too_large) -> SheetCells:
    """Read one sheet's cells as text.

    Parameters
    ----------
    path : str
        The workbook.
    sheet : str, int or None
        Sheet name or 0-based number; None for the first sheet.
    limit : int
        The size limit in points: at most ``limit + 1000`` rows and ``limit *``
        :data:`CELLS_PER_POINT` cells are read.
    too_large : callable
        ``too_large(path, what, limit)`` builds the size-limit error of the reader.

    Raises
    ------
    DataError
        An unreadable workbook, an unknown sheet, or a sheet over the size limit.
    """
    book = _open(path, data_only=True)
    try:
        ws = _pick(book, path, sheet)
        title, names = ws.title, tuple(book.sheetnames)
        try:
            declared = ws.calculate_dimension()
        except (ValueError, AttributeError):   # a sheet that declares no dimension
            declared = "not declared"
        rows = getattr(ws, "max_row", None)
        if isinstance(rows, int) and rows > limit + 1000:
            raise too_large(path, f"the sheet has {rows:,} rows", limit)
        lines = []
        for row in _rows(ws, path, limit + 1000, limit * CELLS_PER_POINT, too_large, declared):
            cells = [_text(v) for v in row]
            while cells and cells[-1] == "":
                cells.pop()
            lines.append(cells)
    finally:
        book.close()
    uncomputed = _uncomputed_formulas(path, title, lines, limit, too_large, declared) \
        if _has_gaps(lines) else {}
    return SheetCells(lines, title, names, sheet is not None, uncomputed)


def _uncomputed_formulas(path, title, lines, limit, too_large, declared) -> dict:
    """``{(row, column): formula}`` of the formula cells that read as empty."""
    book = _open(path, data_only=False)
    found = {}
    try:
        ws = book[title]
        for r, row in enumerate(_rows(ws, path, limit + 1000, limit * CELLS_PER_POINT,
                                      too_large, declared), start=1):
            read = lines[r - 1] if r <= len(lines) else []
            for j, v in enumerate(row):
                if isinstance(v, str) and v.startswith("=") and (j >= len(read) or not read[j]):
                    found[(r, j)] = v
    finally:
        book.close()
    return found
