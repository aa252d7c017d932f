"""A file read into a table of text cells: the header row, the data rows and what came before.

This is the first half of reading a campaign (the second, :mod:`ttsp.io.campaign_files`, gives
the cells a meaning). What is understood:

* delimiters: comma, semicolon, tab or runs of white space, detected from the data lines;
* decimal commas (with a semicolon, tab or white-space delimiter) and quoted cells; the bytes
  are decoded by :mod:`ttsp.io.text_decoding`, the sheets of an .xlsx workbook read by
  :mod:`ttsp.io.workbook`;
* the header: the last line that is not data above the first line of numbers; a white-space
  header whose names contain spaces (``Temp (°C) Freq (Hz)``) is regrouped into as many names
  as the data has columns, and a line of units right under the names (``°C, Hz, MPa``) is
  joined to them (``Temp (°C)``);
* preamble lines before the header row, kept as metadata (``key: value``, ``key = value`` or
  ``key<delimiter>value``);
* blank and comment lines among the data, counted; text lines after the data (a footer such as
  ``End of data``), skipped and listed by row (:mod:`ttsp.io.skipped_rows`).

Nothing here reads a number as a quantity: the cells stay text until
:func:`ttsp.io.cell_numbers.column_floats` converts a column.
"""

from __future__ import annotations

import csv
import os
import re
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

from .._validation import printable, where
from ..exceptions import DataError
from ..units import parse_unit
from .cell_numbers import GROUPED_NUMBER, is_number
from .headers import interpret_header
from .size_limit import points_limit, refuse_oversized_file, too_large_error
from .skipped_rows import TEXT_AFTER_DATA, SkippedRow
from .text_decoding import decode_text
from .workbook import read_sheet_cells

__all__ = ["RawTable", "read_table", "TEXT_SUFFIXES", "TABLE_SUFFIXES"]

TEXT_SUFFIXES = (".csv", ".txt", ".tsv", ".dat", ".tab", ".asc")
TABLE_SUFFIXES = TEXT_SUFFIXES + (".xlsx",)
_KEY_VALUE = re.compile(r"^\s*#?\s*([^:=]{1,60}?)\s*[:=]\s*(.*?)\s*$")


@dataclass(frozen=True)
class RawTable:
    """One file's table as text cells, before any interpretation.

    ``rows`` hold the data cells; ``line_numbers`` the 1-based line of the file each came from.
    ``skipped`` lists the rows left out as clearly not data (:mod:`ttsp.io.skipped_rows`);
    ``uncomputed`` maps ``(line, column index)`` of a workbook's formula cells that store no
    value to the formula.
    """

    path: str
    header: tuple
    rows: tuple
    line_numbers: tuple
    preamble: Mapping[str, str]
    decimal_comma: bool
    dropped: Mapping[str, int] = field(default_factory=dict)
    skipped: tuple = ()
    uncomputed: Mapping[tuple, str] = field(default_factory=dict)


def _split(line: str, delimiter: str | None) -> list:
    """The stripped cells of one line (``None``: split at runs of white space)."""
    if delimiter is None:
        return line.split()
    if '"' in line:
        cells = next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))
        return [c.strip() for c in cells]
    return [c.strip() for c in line.split(delimiter)]


def _choose_delimiter(lines: Sequence[str]) -> tuple:
    """Pick the delimiter and the decimal mark that make the most lines split into the same
    number (>= 2) of numeric fields: ``(delimiter, decimal_comma, found)``, where ``found`` is
    False when no line reads as two or more numbers at all."""
    best: tuple[str | None, bool, int] = (None, False, -1)
    sample = [ln for ln in lines if ln.strip()][-200:]
    for delimiter, decimal_comma in (("\t", True), (";", True), (",", False), (None, True),
                                     ("\t", False), (";", False), (None, False)):
        counts: dict[int, int] = {}
        for ln in sample:
            cells = _split(ln, delimiter)
            if len(cells) >= 2 and all(is_number(c, decimal_comma) for c in cells if c):
                counts[len(cells)] = counts.get(len(cells), 0) + 1
        score = max(counts.values()) if counts else 0
        if score > best[2]:
            best = (delimiter, decimal_comma, score)
    if best[2] <= 0:
        return None, False, False
    # a decimal comma is only claimed when some cell actually uses one
    delimiter, decimal_comma, _ = best
    if decimal_comma and not any("," in c for ln in sample for c in _split(ln, delimiter)):
        decimal_comma = False
    return delimiter, decimal_comma, True


def read_table(path: str | os.PathLike, *, sheet: str | int | None = None,
               max_points: int | None = None) -> RawTable:
    """Read one file into a :class:`RawTable` (header row, data cells, preamble metadata).

    ``max_points`` (default: ``$TTSP_MAX_POINTS``, else
    :data:`ttsp.io.size_limit.DEFAULT_MAX_POINTS`) bounds the rows read, so that a file too
    large to hold is refused before memory runs out.

    Raises
    ------
    DataError
        For a missing file, a folder, an empty or binary file, an unreadable workbook or sheet,
        a file with no header row or no data rows, and a file over the size limit.
    """
    path = str(path)
    if not os.path.exists(path):
        raise DataError(f"{where(path)}no such file")
    if os.path.isdir(path):
        raise DataError(f"{where(path)}is a folder, not a file")
    limit = points_limit(max_points)
    if path.lower().endswith(".xlsx"):
        return _sheet_table(path, sheet, limit)
    refuse_oversized_file(path, limit)
    with open(path, "rb") as fh:
        data = fh.read()
    text = decode_text(data, path)
    del data
    lines = text.splitlines()
    del text
    delimiter, decimal_comma, found = _choose_delimiter(lines)
    if not found:
        _refuse_grouped_numbers(path, lines)
    if delimiter is None and not any(len(ln.split()) >= 2 for ln in lines if ln.strip()):
        raise DataError(f"{where(path)}no table found: no line has two or more columns")
    # rows as tuples of stripped cells (the RawTable keeps them as they are: no second copy)
    if delimiter is None:
        cells = [tuple(ln.split()) for ln in lines]
    else:
        strip = str.strip
        cells = [(tuple(_split(ln, delimiter)) if '"' in ln
                  else tuple(map(strip, ln.split(delimiter))))
                 if ln and not ln.isspace() else () for ln in lines]
    return _table_from_cells(path, cells, decimal_comma, raw_lines=lines,
                             whitespace=delimiter is None)


def _refuse_grouped_numbers(path: str, lines: Sequence[str]) -> None:
    """No line reads as numbers: say so if the numbers are written with thousands separators
    (``1,234.5`` or ``1.234,5``), which ttsp does not guess at."""
    for delimiter in ("\t", ";", ",", None):
        for i, ln in enumerate(lines):
            if not ln.strip():
                continue
            cells = [c for c in _split(ln, delimiter) if c]
            if len(cells) < 2:
                continue
            grouped = [c for c in cells if GROUPED_NUMBER.match(c) and not is_number(c, True)]
            if grouped and all(is_number(c, True) or GROUPED_NUMBER.match(c) for c in cells):
                raise DataError(f"{where(path, None, i + 1)}numbers must be written without "
                                f"thousands separators; got {grouped[0]!r}")


def _sheet_table(path: str, sheet, limit: int) -> RawTable:
    """The table of one sheet; a first sheet without data names the workbook's sheets."""
    read = read_sheet_cells(path, sheet, limit, too_large_error)
    try:
        table = _table_from_cells(path, read.lines, decimal_comma=False)
    except DataError as exc:
        if read.chosen or len(read.sheet_names) < 2 or "no data rows" not in str(exc) and \
                "no table found" not in str(exc):
            raise
        raise DataError(f"{where(path)}the first sheet ({read.sheet!r}) holds no data rows; the "
                        f"workbook's sheets are {', '.join(map(repr, read.sheet_names))}: choose "
                        f"one with --sheet (sheet= in Python)") from None
    return replace(table, uncomputed=read.uncomputed) if read.uncomputed else table


def _data_like(cells: list, decimal_comma: bool) -> bool:
    """A line that looks like data with a bad cell: two or more cells, at least half numeric."""
    filled = [c for c in cells if c]
    return len(filled) >= 2 and 2 * sum(is_number(c, decimal_comma) for c in filled) >= len(filled)


def _table_from_cells(path: str, cells: list, decimal_comma: bool, *, raw_lines=None,
                      whitespace: bool = False) -> RawTable:
    """Find the header: the last non-empty line that is not data, above the first run of
    numeric lines. Lines between it and the first all-numeric line (data with a bad cell) are
    data, so the error names them."""
    first_data = next((i for i, c in enumerate(cells) if len(c) >= 2 and any(c)
                       and all(is_number(x, decimal_comma) for x in c if x)), None)
    if first_data is None:
        raise DataError(f"{where(path)}no data rows: found no line with two or more numbers")
    header_idx = None
    for i in range(first_data - 1, -1, -1):
        if not cells[i]:
            continue
        if _data_like(cells[i], decimal_comma) and not (raw_lines and raw_lines[i].lstrip().startswith("#")):
            continue
        header_idx = i
        break
    if header_idx is None:
        raise DataError(f"{where(path)}no header row: the first line with numbers (line "
                        f"{first_data + 1}) has no line of column names above it")
    header = [printable(c.strip()) for c in cells[header_idx]]
    data_start = header_idx + 1
    names_idx = _names_above_units(cells, header_idx, whitespace)
    if names_idx is not None:  # a two-line header: names, then units
        units_row = header + [""] * (len(cells[names_idx]) - len(header))
        # strict=False: units beyond the last name (a longer units line) have no name to join
        header = [printable(f"{name.strip()} ({_bare_unit(u)})" if _bare_unit(u)
                            else name.strip())
                  for name, u in zip(cells[names_idx], units_row, strict=False)]
        header_idx = names_idx
        whitespace = False
    preamble = _preamble(cells[:header_idx], raw_lines)
    rows, numbers, dropped = _data_rows(cells, data_start)
    skipped = _split_footer(rows, numbers, decimal_comma, raw_lines)
    header = _fit_header(path, header, rows, numbers, header_idx + 1,
                         raw_lines[header_idx] if (whitespace and raw_lines) else None)
    return RawTable(path, tuple(header), tuple(rows), tuple(numbers), preamble, decimal_comma,
                    dropped, tuple(skipped))


def _preamble(cells: list, raw_lines) -> dict:
    """The lines above the header as ``{key: value}`` (a line without a key under
    ``"line <n>"``, as is a key seen before); blank lines are passed over."""
    preamble = {}
    for i in range(len(cells)):
        key_value = _preamble_entry(cells[i], raw_lines[i] if raw_lines else None)
        if key_value is not None:
            key, value = key_value
            preamble[key if key not in preamble and key else f"line {i + 1}"] = value
    return preamble


def _data_rows(cells: list, data_start: int) -> tuple:
    """The rows below the header that hold cells, their 1-based line numbers, and the count of
    the lines left out (``{"comment lines": n, "blank lines": m}``; blank lines at the very end
    count too)."""
    rows: list[tuple] = []
    numbers: list[int] = []
    dropped: dict[str, int] = {}
    trailing_blank = 0
    for i in range(data_start, len(cells)):
        c = cells[i]
        if not any(c):  # cells are stripped: a blank line or one of empty cells
            trailing_blank += 1
            continue
        if c[0][:1] == "#":
            dropped["comment lines"] = dropped.get("comment lines", 0) + 1
            continue
        if trailing_blank:
            dropped["blank lines"] = dropped.get("blank lines", 0) + trailing_blank
            trailing_blank = 0
        rows.append(c if type(c) is tuple else tuple(c))
        numbers.append(i + 1)
    if trailing_blank:
        dropped["blank lines"] = dropped.get("blank lines", 0) + trailing_blank
    return rows, numbers, dropped


def _split_footer(rows: list, numbers: list, decimal_comma: bool, raw_lines) -> list:
    """Remove the lines after the last line with a number that hold no number at all (a footer
    such as ``End of data``) from ``rows`` and ``numbers``; return them as skipped rows."""
    footer = []
    while rows and not any(is_number(c, decimal_comma) for c in rows[-1] if c):
        row, line = rows.pop(), numbers.pop()
        text = raw_lines[line - 1].strip() if raw_lines else " ".join(c for c in row if c)
        footer.append(SkippedRow(line, printable(text), TEXT_AFTER_DATA))
    return footer[::-1]


def _bare_unit(cell: str) -> str:
    """A cell of a units line without its brackets: ``(°C)`` and ``[°C]`` are ``°C``."""
    u = cell.strip()
    if len(u) >= 2 and u[0] in "([" and u[-1] in ")]":
        u = u[1:-1].strip()
    return u


def _names_above_units(cells: list, idx: int, whitespace: bool):
    """Index of the line of column names when line ``idx`` holds only units (``°C, Hz, MPa``)
    under it, else None."""
    units = [_bare_unit(c) for c in cells[idx]]
    filled = [u for u in units if u]
    if not filled or all(u in ("-", "1") for u in filled):
        return None
    for u in filled:
        try:
            parse_unit(u)
        except DataError:
            return None
    above = next((i for i in range(idx - 1, -1, -1) if cells[i]), None)
    if above is None:
        return None
    names = cells[above]
    if len([c for c in names if c.strip()]) < len(filled) or len(names) < len(units):
        return None
    if whitespace and len(names) != len(units):
        return None
    return above


def _preamble_entry(cells: list, raw: str | None):
    """``(key, value)`` of a preamble line, or None for a blank one."""
    if not cells or not any(c.strip() for c in cells):
        return None
    text = raw.strip() if raw is not None else " ".join(c for c in cells if c)
    m = _KEY_VALUE.match(text)
    if m and m.group(1).strip():
        return m.group(1).strip(), m.group(2).strip()
    filled = [c.strip() for c in cells if c.strip()]
    if len(filled) == 2:
        return filled[0].lstrip("#").strip().rstrip(":=").strip(), filled[1]
    for sep in (";", "\t"):
        parts = [p.strip() for p in text.split(sep) if p.strip()]
        if len(parts) == 2:
            return parts[0].lstrip("#").strip(), parts[1]
    return "", text


def _fit_header(path, header, rows, numbers, header_line, raw_header):
    """Check that the header names every column that holds data. With a white-space delimiter
    a header such as ``Temp (°C)  Freq (Hz)`` splits into more words than there are columns:
    regroup its words into as many names as there are columns."""
    if not rows:
        return header
    counts = Counter(map(len, rows))
    width = max(counts, key=lambda w: (counts[w], -w))  # the commonest; the narrower on a tie
    if raw_header is not None and len(header) != width:
        regrouped = _regroup_header(raw_header, width)
        if regrouped is None:
            raise DataError(f"{where(path, None, header_line)}the header has {len(header)} words "
                            f"({' | '.join(header)}) but the data rows have {width} columns; "
                            f"separate the column names with tabs or two spaces")
        header = [printable(h) for h in regrouped]
    named = len(header)
    for r, line in zip(rows, numbers, strict=True):
        if len(r) <= named:
            continue
        extra = [c for c in r[named:] if c.strip()]
        if extra:
            raise DataError(f"{where(path, None, line)}the row has {len(header) + len(extra)} "
                            f"values but the header names {len(header)} columns; got "
                            f"{extra[0]!r} beyond the last named column")
    return header


def _regroup_header(raw: str, width: int):
    parts = [p.strip() for p in re.split(r"\t| {2,}", raw.strip()) if p.strip()]
    if len(parts) == width:
        return parts
    words = raw.split()
    n = len(words)
    if n < width:
        return None
    # best partition of the words into `width` consecutive names: exactly recognised names
    # count 2, names guessed from a keyword 1, and a name may not start with a bracketed unit
    max_len = 6

    def score(i, j):
        if words[i][0] in "([/":
            return -3
        m = interpret_header(" ".join(words[i:j]))
        return 0 if m is None else (1 if m.fuzzy else 2)

    unreachable = float("-inf")
    best = [[unreachable] * (width + 1) for _ in range(n + 1)]
    back = [[0] * (width + 1) for _ in range(n + 1)]
    best[0][0] = 0
    for j in range(1, n + 1):
        for k in range(1, min(j, width) + 1):
            for i in range(max(0, j - max_len), j):
                if best[i][k - 1] == unreachable:
                    continue
                v = best[i][k - 1] + score(i, j)
                if v > best[j][k]:
                    best[j][k], back[j][k] = v, i
    if best[n][width] <= 0:
        return None
    names, j = [], n
    for k in range(width, 0, -1):
        i = back[j][k]
        names.append(" ".join(words[i:j]))
        j = i
    return names[::-1]
