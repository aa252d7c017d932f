"""Read temperature campaigns from the files people have: delimited text and .xlsx.

What is understood:

* delimiters: comma, semicolon, tab or runs of white space, detected from the data lines;
* decimal commas (with a semicolon, tab or white-space delimiter), quoted cells, a UTF-8 BOM,
  UTF-16 with or without a BOM, and Windows-1252 / Latin-1 files;
* a white-space header whose names contain spaces (``Temp (°C) Freq (Hz)``) is regrouped into
  as many names as the data has columns;
* preamble lines before the header row are skipped and kept as metadata (``key: value``,
  ``key = value`` or ``key<delimiter>value``);
* units read from the headers (see :mod:`ttsp.io.headers`), from a line of units right under
  the names (``°C, Hz, MPa``), or given explicitly;
* long format (a temperature column) or one file per isotherm, with the temperature taken from
  a column, a preamble line such as ``Temperature: 35 °C``, or the file name (``sweep_35C.csv``);
* a folder, or several files, as one campaign;
* rows that are clearly not data, skipped and listed by row and text (never silently): text
  lines after the data, and a row with a word such as ``overload`` in a number column
  (:mod:`ttsp.io.skipped_rows`).

Everything is converted to SI and kelvin and validated by :meth:`ttsp.data.Campaign.from_frame`,
so every error names the file, the column and the first bad row.
"""

from __future__ import annotations

import codecs
import csv
import math
import os
import re
import warnings
from collections import Counter
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Mapping, Sequence

import numpy as np

from .._validation import check_positive, printable, where
from ..data import QUANTITIES, Campaign
from ..exceptions import DataError, DroppedRowsWarning
from ..units import parse_unit
from .headers import DEFAULT_UNIT, UNIT_KIND_OF_ROLE, HeaderMeaning, interpret_header
from .workbook import read_sheet_cells
from .skipped_rows import (TEXT_AFTER_DATA, TEXT_IN_NUMBER_COLUMN, SkippedRow, describe_skipped,
                           is_text_cell, refuse_mostly_text)

__all__ = ["read_campaign", "hash_inputs", "read_table", "RawTable", "TEXT_SUFFIXES",
           "TABLE_SUFFIXES",
           "DEFAULT_MAX_POINTS", "MAX_POINTS_ENV"]

TEXT_SUFFIXES = (".csv", ".txt", ".tsv", ".dat", ".tab", ".asc")
TABLE_SUFFIXES = TEXT_SUFFIXES + (".xlsx",)
_NUMBER = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$")
_SPECIAL_NUMBERS = ("nan", "inf", "-inf", "+inf", "infinity", "-infinity", "+infinity")
# Characters of a plain number with a decimal point. Over this alphabet Python's (and numpy's)
# float() accepts exactly the language of _NUMBER, so a column made only of them can be converted
# in one call; anything else takes the cell-by-cell path that names the first bad cell.
_NOT_PLAIN_NUMBER = re.compile(r"[^0-9.eE+\-\n]")
# a number grouped by thousands separators: 1,234.5  1.234,5  1 234,5  1'234.5  12,345,678
_GROUPED = re.compile(r"^[+-]?\d{1,3}(?P<sep>[,.' \u00a0\u202f])\d{3}(?:(?P=sep)\d{3})*"
                      r"(?:[.,]\d*)?(?:[eE][+-]?\d+)?$")
# one comma or one dot followed by exactly three digits: a decimal mark or a thousands separator
_COMMA_GROUP_CELLS = re.compile(r"(?m)^[+\-−]?[1-9]\d{0,2},\d{3}$")
_DOT_GROUP_CELLS = re.compile(r"(?m)^[+\-−]?[1-9]\d{0,2}\.\d{3}$")
_COMMA_DECIMAL_CELLS = re.compile(r"(?m)^[+\-−]?(?:\d+,\d*|,\d+)(?:[eE][+-]?\d+)?$")
_DOT_DECIMAL_CELLS = re.compile(r"(?m)^[+\-−]?(?:\d+\.\d*|\.\d+)(?:[eE][+-]?\d+)?$")
# a non-empty cell without a digit, searched in a column's cells joined by newlines
_CELL_WITHOUT_DIGIT = re.compile(r"(?m)^[^\d\n]+$")
# Size guard: a campaign with more points than this is refused before it fills the memory.
DEFAULT_MAX_POINTS = 2_000_000
MAX_POINTS_ENV = "TTSP_MAX_POINTS"
_BYTES_PER_POINT = 256      # a file larger than max_points * this is refused unread
_KEY_VALUE = re.compile(r"^\s*#?\s*([^:=]{1,60}?)\s*[:=]\s*(.*?)\s*$")
# a temperature in a file name: a number, then C/K/F (or °C, degC ...) not followed by a letter or
# digit; it must start the name or follow a separator ( _ = space . , ; ( [ ) or a T/temp prefix
_TEMPERATURE_IN_NAME = re.compile(
    r"(?P<prefix>(?:^|(?<=[^A-Za-z0-9.]))(?:t|temp|temperature)?[_=]?)"
    r"(?P<sign>[-+−]?)(?P<value>\d+(?:[.,p]\d+)?)\s*(?P<unit>°C|degC|C|K|°F|degF|F)"
    r"(?![A-Za-z0-9])", re.IGNORECASE)
_TEMPERATURE_KEY = re.compile(r"temp|^t$|^t\s*[\(\[]")
_PRIMARY_TEMPERATURE_KEYS = ("temperature", "temp", "t", "test temperature", "temperatur",
                             "sample temperature", "isotherm", "isothermal temperature")


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


# ---- bytes -> text ----------------------------------------------------------------------------
def _decode(data: bytes, path: str) -> str:
    """Decode a text file: UTF-8 (with or without BOM), UTF-16 (with a BOM, or recognised by its
    zero bytes), else Windows-1252 / Latin-1 (the single-byte encodings of older exports)."""
    if not data.strip():
        raise DataError(f"{where(path)}the file is empty")
    if data.startswith((codecs.BOM_UTF32_LE, codecs.BOM_UTF32_BE)):
        raise DataError(f"{where(path)}not a text table ttsp reads: the file is UTF-32 text; "
                        f"save it as UTF-8")
    if data.startswith(codecs.BOM_UTF8):
        try:
            text = data[len(codecs.BOM_UTF8):].decode("utf-8", errors="strict")
        except UnicodeDecodeError as exc:
            raise DataError(f"{where(path)}not a text table: the file starts with a UTF-8 mark "
                            f"but byte {exc.start + 3} is not UTF-8") from None
    elif data.startswith(codecs.BOM_UTF16_LE) or data.startswith(codecs.BOM_UTF16_BE):
        try:
            text = data.decode("utf-16")
        except UnicodeDecodeError:
            raise DataError(f"{where(path)}not a text table: the file starts with a UTF-16 mark "
                            f"but is not UTF-16 text") from None
    else:
        sample = data[:4096]
        zeros_odd, zeros_even = sample[1::2].count(0), sample[0::2].count(0)
        half = len(sample) // 2
        text = None
        if half >= 4 and zeros_odd > 0.4 * half and zeros_even == 0:
            text = _try_decode(data, "utf-16-le")
        elif half >= 4 and zeros_even > 0.4 * half and zeros_odd == 0:
            text = _try_decode(data, "utf-16-be")
        if text is None:
            text = (_try_decode(data, "utf-8") or _utf8_cut_short(data)
                    or _try_decode(data, "cp1252") or data.decode("latin-1"))
    if "\x00" in text:
        raise DataError(f"{where(path)}not a text table: the file contains binary (NUL) bytes")
    head = text[:4096]
    printable = sum(ch.isprintable() or ch in "\r\n\t" for ch in head)
    if printable < 0.95 * len(head):
        raise DataError(f"{where(path)}not a text table: most bytes are not printable text")
    return text


def _try_decode(data: bytes, encoding: str):
    try:
        return data.decode(encoding)
    except UnicodeDecodeError:
        return None


def _utf8_cut_short(data: bytes):
    """UTF-8 text whose last character was cut in half (a truncated file): the text before it.

    Without this, one broken character at the very end would send the whole file to the
    single-byte fallback and turn every ``°C`` of the header into ``Â°C``."""
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as exc:
        if exc.reason == "unexpected end of data" and exc.end == len(data) and exc.start > 0:
            return _try_decode(data[:exc.start], "utf-8")
    return None


def _split(line: str, delimiter: str | None) -> list:
    if delimiter is None:
        return line.split()
    if '"' in line:
        cells = next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))
        return [c.strip() for c in cells]
    return [c.strip() for c in line.split(delimiter)]


def _is_number(cell: str, decimal_comma: bool) -> bool:
    c = cell.strip().replace("−", "-")
    if not decimal_comma and "," in c:
        return False
    return bool(_NUMBER.match(c)) or c.lower() in _SPECIAL_NUMBERS


def _choose_delimiter(lines: Sequence[str]) -> tuple:
    """Pick the delimiter and the decimal mark that make the most lines split into the same
    number (>= 2) of numeric fields: ``(delimiter, decimal_comma, found)``, where ``found`` is
    False when no line reads as two or more numbers at all."""
    best = (None, False, -1)
    sample = [ln for ln in lines if ln.strip()][-200:]
    for delimiter, decimal_comma in (("\t", True), (";", True), (",", False), (None, True),
                                     ("\t", False), (";", False), (None, False)):
        counts = {}
        for ln in sample:
            cells = _split(ln, delimiter)
            if len(cells) >= 2 and all(_is_number(c, decimal_comma) for c in cells if c):
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


def _max_points(max_points=None) -> int:
    """The size limit: ``max_points`` if given, else $TTSP_MAX_POINTS, else the default."""
    source, value = "max_points", max_points
    if value is None:
        source, value = MAX_POINTS_ENV, os.environ.get(MAX_POINTS_ENV)
        if value is None or not str(value).strip():
            return DEFAULT_MAX_POINTS
    try:
        limit = int(str(value).strip().replace("_", ""))
    except ValueError:
        limit = 0
    if limit < 1 or isinstance(value, bool):
        raise DataError(f"{source} must be a whole number of points of 1 or more; got {value!r}")
    return limit


def _too_large(path: str, what: str, limit: int) -> DataError:
    return DataError(f"{where(path)}{what}; ttsp reads at most {limit:,} points at once, to stop "
                     f"before memory runs out: split the campaign, or raise the limit with the "
                     f"environment variable {MAX_POINTS_ENV} (max_points= in Python)")


def _check_size(path: str, limit: int) -> None:
    """Refuse a file too large to hold before reading it: by its size, then by its line count
    (counted in chunks, so a huge file is never held in memory whole)."""
    size = os.path.getsize(path)
    if size > limit * _BYTES_PER_POINT:
        raise _too_large(path, f"the file is {size / 1e9:.3g} GB, larger than "
                               f"{limit * _BYTES_PER_POINT / 1e9:.3g} GB", limit)
    if size < 4 * limit:  # too short to hold more lines than the limit
        return
    lines = 0
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 24), b""):
            lines += chunk.count(b"\n")
            if lines > limit + 1000:  # a preamble and a header are not points
                raise _too_large(path, f"the file has more than {limit + 1000:,} lines", limit)


def read_table(path: str | os.PathLike, *, sheet: str | int | None = None,
               max_points: int | None = None) -> RawTable:
    """Read one file into a :class:`RawTable` (header row, data cells, preamble metadata).

    ``max_points`` (default: ``$TTSP_MAX_POINTS``, else :data:`DEFAULT_MAX_POINTS`) bounds the
    rows read, so that a file too large to hold is refused before memory runs out.

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
    limit = _max_points(max_points)
    if path.lower().endswith(".xlsx"):
        return _sheet_table(path, sheet, limit)
    _check_size(path, limit)
    with open(path, "rb") as fh:
        data = fh.read()
    text = _decode(data, path)
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
            grouped = [c for c in cells if _GROUPED.match(c) and not _is_number(c, True)]
            if grouped and all(_is_number(c, True) or _GROUPED.match(c) for c in cells):
                raise DataError(f"{where(path, None, i + 1)}numbers must be written without "
                                f"thousands separators; got {grouped[0]!r}")


def _sheet_table(path: str, sheet, limit: int) -> RawTable:
    """The table of one sheet; a first sheet without data names the workbook's sheets."""
    read = read_sheet_cells(path, sheet, limit, _too_large)
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
    return len(filled) >= 2 and 2 * sum(_is_number(c, decimal_comma) for c in filled) >= len(filled)


def _table_from_cells(path: str, cells: list, decimal_comma: bool, *, raw_lines=None,
                      whitespace: bool = False) -> RawTable:
    """Find the header: the last non-empty line that is not data, above the first run of
    numeric lines. Lines between it and the first all-numeric line (data with a bad cell) are
    data, so the error names them."""
    n = len(cells)
    first_data = next((i for i, c in enumerate(cells) if len(c) >= 2 and any(c)
                       and all(_is_number(x, decimal_comma) for x in c if x)), None)
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
    header = [_printable(c.strip()) for c in cells[header_idx]]
    data_start = header_idx + 1
    names_idx = _names_above_units(cells, header_idx, whitespace)
    if names_idx is not None:  # a two-line header: names, then units
        units_row = header + [""] * (len(cells[names_idx]) - len(header))
        header = [_printable(f"{name.strip()} ({_bare_unit(u)})" if _bare_unit(u)
                             else name.strip()) for name, u in zip(cells[names_idx], units_row)]
        header_idx = names_idx
        whitespace = False
    preamble = {}
    for i in range(header_idx):
        key_value = _preamble_entry(cells[i], raw_lines[i] if raw_lines else None)
        if key_value is not None:
            key, value = key_value
            preamble[key if key not in preamble and key else f"line {i + 1}"] = value
    rows, numbers, dropped = [], [], {}
    trailing_blank = 0
    for i in range(data_start, n):
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
    skipped = _split_footer(rows, numbers, decimal_comma, raw_lines)
    header = _fit_header(path, header, rows, numbers, header_idx + 1,
                         raw_lines[header_idx] if (whitespace and raw_lines) else None)
    return RawTable(path, tuple(header), tuple(rows), tuple(numbers), preamble, decimal_comma,
                    dropped, tuple(skipped))


def _split_footer(rows: list, numbers: list, decimal_comma: bool, raw_lines) -> list:
    """Remove the lines after the last line with a number that hold no number at all (a footer
    such as ``End of data``) from ``rows`` and ``numbers``; return them as skipped rows."""
    footer = []
    while rows and not any(_is_number(c, decimal_comma) for c in rows[-1] if c):
        row, line = rows.pop(), numbers.pop()
        text = raw_lines[line - 1].strip() if raw_lines else " ".join(c for c in row if c)
        footer.append(SkippedRow(line, _printable(text), TEXT_AFTER_DATA))
    return footer[::-1]


def _printable(text: str) -> str:
    """A header as it can be shown in a one-line message: control characters escaped."""
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in text)


def _bare_unit(cell: str) -> str:
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
        header = [_printable(h) for h in regrouped]
    named = len(header)
    for r, line in zip(rows, numbers):
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


# ---- interpretation -------------------------------------------------------------------------
def _to_float(cell: str, decimal_comma: bool) -> float:
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
    if _GROUPED.match(cell.strip()):
        return f"value must be a number without thousands separators; got {cell!r}"
    for delimiter in (",", ";", "\t"):
        parts = cell.split(delimiter)
        # (two parts split at a comma may be one number with a decimal comma: no hint then)
        if (len(parts) >= (3 if delimiter == "," else 2)
                and all(_is_number(p, delimiter != ",") for p in parts if p.strip())):
            return (f"value must be a number; got {cell!r}, several values in one cell: is this "
                    f"row written with another delimiter than the rest of the file?")
    return f"value must be a number; got {cell!r}"


def _column_floats(table: RawTable, j: int, header: str, *, empty_allowed: bool,
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
                values[i] = _to_float(cell, table.decimal_comma)
            except ValueError:
                raise DataError(f"{where(table.path, header, table.line_numbers[i])}"
                                f"{_not_a_number(cell)}") from None
            if not empty_allowed and cell.strip() == "":
                raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be "
                                f"a number; got an empty cell")
    infinite = np.flatnonzero(np.isinf(values))
    for i in infinite:  # 1e400 becomes inf: say what was written, not "inf"
        cell = col[i]
        if "inf" not in cell.lower():
            raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be a "
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


def _temperature_from_name(path: str) -> tuple | None:
    """Temperature written in a file name: ``sweep_35C``, ``iso_-20C``, ``T_85.5C``, ``T85p5C``,
    ``run_300K``, ``x_100F``. A minus sign counts after ``_``, ``=``, a space or at the start
    (``iso_-20C``, ``-20C``) or as U+2212; a hyphen right after a letter or digit is a separator
    (``sample-25C`` is 25 °C). Two or more candidates in one name give None (ambiguous)."""
    stem = Path(path).stem
    matches = list(_TEMPERATURE_IN_NAME.finditer(stem))
    if len(matches) != 1:
        return None
    m = matches[0]
    sign = m.group("sign")
    if sign == "-" and not m.group("prefix"):
        before = stem[m.start() - 1] if m.start() > 0 else ""
        if before.isalnum():
            sign = ""
    value = float(m.group("value").replace(",", ".").replace("p", ".").replace("P", "."))
    if sign in ("-", "−"):
        value = -value
    unit = m.group("unit")
    unit = {"c": "°C", "degc": "°C", "°c": "°C", "k": "K", "f": "°F", "degf": "°F",
            "°f": "°F"}.get(unit.lower(), unit)
    return value, unit


# a number in a file name without a unit letter: sweep_130, iso_-20, T85.5, 85p5
_NUMBER_IN_NAME = re.compile(r"(?<![0-9.])(?P<sign>[-−]?)(?P<value>\d+(?:[.p]\d+)?)(?![0-9])")


def _numbers_in_name(path: str) -> list:
    """The numbers written in a file name's stem, as (text, value) pairs: a minus sign counts
    only at the start or after ``_``, ``=`` or a space (``sample-25`` is 25)."""
    stem = Path(path).stem
    out = []
    for m in _NUMBER_IN_NAME.finditer(stem):
        value = float(m.group("value").replace("p", "."))
        before = stem[m.start() - 1] if m.start() > 0 else ""
        if m.group("sign") and (m.group("sign") == "−" or not before.isalnum()):
            value = -value
        out.append((m.group(0), value))
    return out


def _bare_temperature_from_name(path: str) -> tuple:
    """The temperature in °C of a file name holding exactly one number without a unit letter
    (``sweep_130.csv``), read only when the user asks (``temperature_from_name=True``)."""
    numbers = _numbers_in_name(path)
    if len(numbers) != 1:
        found = ", ".join(t for t, _ in numbers) if numbers else "none"
        raise DataError(f"{where(path)}temperature_from_name needs exactly one number in the file "
                        f"name; got {len(numbers)} ({found}); give the temperature in the file "
                        f"instead, or name the file like sweep_130C.csv")
    return numbers[0][1], "°C"


def _bare_number_hint(path: str) -> str:
    """For the missing-temperature message: how to use a unitless number in the file name."""
    numbers = _numbers_in_name(path)
    if len(numbers) != 1:
        return ""
    return (f"; the file name holds the number {numbers[0][0]} without a unit: if it is the "
            f"temperature in °C, give --temperature-from-name (temperature_from_name=True in "
            f"Python)")


def _temperature_from_preamble(preamble: Mapping[str, str], path: str) -> tuple | None:
    """Temperature of a ``Temperature: 35 °C`` preamble line (also ``Temp (°C) = 35``,
    ``T: 308.15 K``, ``Temperature: 35 ± 0.1 °C``). Lines that do not read as one temperature
    (``Temperature rate: 2 K/min``) are passed over; two different temperatures are an error
    unless one of them is under a plain key such as ``Temperature``."""
    found, unreadable = [], []
    for key, text in preamble.items():
        k = key.lower().strip()
        if not _TEMPERATURE_KEY.search(k):
            continue
        name_unit = re.search(r"[\(\[]\s*([^\)\]]+?)\s*[\)\]]", key)
        plain = re.sub(r"\s*[\(\[].*$", "", k).strip()
        value_text = re.sub(r"\s*(±|\+/-|\+-)\s*[\d.,]+", "", text)
        m = re.match(r"^\s*([-+−]?\d+(?:[.,]\d+)?)\s*(.*?)\s*$", value_text)
        if not m:
            unreadable.append((key, text, plain))
            continue
        unit = m.group(2) or (name_unit.group(1) if name_unit else "°C")
        try:
            parse_unit(unit, kind="temperature")
        except DataError:
            unreadable.append((key, text, plain))
            continue
        value = float(m.group(1).replace("−", "-").replace(",", "."))
        found.append((value, unit, key, plain))
    if not found:
        for key, text, plain in unreadable:
            if plain in _PRIMARY_TEMPERATURE_KEYS:
                raise DataError(f"{where(path)}preamble line {key!r}: temperature must be a number "
                                f"with a unit such as °C or K; got {text!r}")
        return None
    distinct = {parse_unit(u).to_si(v).item() for v, u, _, _ in found}
    if len(distinct) == 1:
        return found[0][0], found[0][1]
    primary = [f for f in found if f[3] in _PRIMARY_TEMPERATURE_KEYS]
    if len(primary) == 1:
        return primary[0][0], primary[0][1]
    lines = "; ".join(f"{key}: {v:g} {u}" for v, u, key, _ in found)
    raise DataError(f"{where(path)}the preamble gives more than one temperature ({lines}); give "
                    f"the temperature explicitly")


def _meanings(table: RawTable, columns: Mapping[str, str] | None) -> dict:
    """Map each used column index to a HeaderMeaning, honouring an explicit column mapping.

    A column recognised exactly takes a role before one guessed from a keyword; a bare ``E``
    means the relaxation modulus when the file has a time column and no frequency column."""
    columns = dict(columns or {})
    valid_roles = set(QUANTITIES) | {"temperature_K", "frequency_rad_s", "time_s"}
    for header, role in columns.items():
        if role not in valid_roles:
            raise DataError(f"column mapping for {header!r} must name one of "
                            f"{', '.join(sorted(valid_roles))}; got {role!r}")
        if header not in table.header:
            raise DataError(f"{where(table.path)}mapped column {header!r} is not in the header; "
                            f"columns found: {', '.join(table.header)}")
    detected = {j: interpret_header(h) for j, h in enumerate(table.header) if h not in columns}
    roles = {m.role for m in detected.values() if m is not None} | set(columns.values())
    if "time_s" in roles and "frequency_rad_s" not in roles:
        detected = {j: interpret_header(table.header[j], domain="time") for j in detected}
    out = {}
    for j, h in enumerate(table.header):
        if h in columns:
            meaning = interpret_header(h)
            unit = meaning.unit if meaning else None
            kind = meaning.modulus_kind if meaning and meaning.role == columns[h] else None
            out[j] = HeaderMeaning(columns[h], unit, kind)
        elif detected.get(j) is not None:
            if detected[j].role in columns.values():
                continue  # an explicit mapping takes this role; the detected column gives way
            out[j] = detected[j]
    exact_roles = {m.role for m in out.values() if not m.fuzzy}
    out = {j: m for j, m in out.items() if not (m.fuzzy and m.role in exact_roles)}
    seen = {}
    for j, m in list(out.items()):
        if m.role in seen:
            first = table.header[seen[m.role]]
            if first == table.header[j]:  # a mapping by name cannot tell these apart
                raise DataError(f"{where(table.path, first)}the header names this column twice "
                                f"(columns {seen[m.role] + 1} and {j + 1}); rename or remove one")
            raise DataError(f"{where(table.path, table.header[j])}two columns mean "
                            f"{m.role}: {first!r} and {table.header[j]!r}; map one explicitly "
                            f"(columns=... or --column)")
        seen[m.role] = j
    return out


def _table_to_frame(table: RawTable, *, columns, units, temperature_C,
                    temperature_from_name=False):
    import pandas as pd

    meanings = _meanings(table, columns)
    _refuse_uncomputed_formulas(table, meanings)
    table = _skip_text_rows(table, meanings)
    units = dict(units or {})
    known = set(table.header) | set(QUANTITIES) | {"temperature_K", "frequency_rad_s", "time_s"}
    for key in units:
        if key not in known:
            raise DataError(f"{where(table.path)}unit override for {key!r} must name a column "
                            f"header or a role; columns found: {', '.join(table.header)}")
    frame, labels, units_read, kinds, assumed, marks = {}, {}, {}, set(), [], {}
    for j, m in meanings.items():
        header = table.header[j]
        unit_text = units.get(header, units.get(m.role, m.unit))
        if unit_text is None:
            unit_text = DEFAULT_UNIT[m.role]
            if UNIT_KIND_OF_ROLE[m.role] != "dimensionless":
                assumed.append(f"{header!r} in {unit_text}")
        try:
            unit = parse_unit(unit_text, kind=UNIT_KIND_OF_ROLE[m.role])
        except DataError as exc:
            raise DataError(f"{where(table.path, header)}{exc}") from None
        values = _column_floats(table, j, header, marks=marks, empty_allowed=m.role not in (
            "temperature_K", "frequency_rad_s", "time_s"))
        with np.errstate(over="ignore", invalid="ignore"):
            si = unit.to_si(values)
        overflow = np.flatnonzero(np.isinf(si) & np.isfinite(values))
        if overflow.size:
            i = int(overflow[0])
            cell = table.rows[i][j]
            raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be a "
                            f"finite number in SI units; got {cell!r} {unit_text}, beyond the "
                            f"largest number ttsp holds (about 1.8e308) once converted")
        frame[m.role] = si
        labels[m.role] = header
        units_read[header] = unit_text
        if m.modulus_kind:
            kinds.add(m.modulus_kind)
    if "temperature_K" not in frame:
        found, label = None, "temperature given"
        if isinstance(temperature_C, Mapping):
            given = temperature_C.get(table.path, temperature_C.get(Path(table.path).name))
            if given is not None:
                found = (_given_temperature(given, table.path), "°C")
        if found is None:
            found = _temperature_from_preamble(table.preamble, table.path)
            label = "temperature from the preamble"
        if found is None:
            found = _temperature_from_name(table.path)
            label = "temperature from the file name"
        if found is None and temperature_from_name:
            found = _bare_temperature_from_name(table.path)
        if found is None and temperature_C is not None and not isinstance(temperature_C, Mapping):
            found = (_given_temperature(temperature_C, table.path), "°C")
            label = "temperature given"
        if found is None:
            raise DataError(f"{where(table.path)}missing a temperature: no temperature column, no "
                            f"'Temperature: …' preamble line, and none in the file name "
                            f"(such as sweep_35C.csv){_bare_number_hint(table.path)}; columns "
                            f"found: {', '.join(table.header)}")
        value, unit_text = found
        unit_text = units.get("temperature_K", unit_text)
        try:
            unit = parse_unit(unit_text, kind="temperature")
        except DataError as exc:
            raise DataError(f"{where(table.path)}{label}: {exc}") from None
        frame["temperature_K"] = np.full(len(table.rows), float(unit.to_si(value)))
        labels["temperature_K"] = label
        units_read[label] = unit_text
    frame["source_row"] = np.asarray(table.line_numbers, dtype=np.int64)
    if len(kinds) > 1:
        raise DataError(f"{where(table.path)}the columns mix tensile (E, D) and shear (G, J) "
                        f"symbols; give the modulus kind explicitly")
    df = pd.DataFrame(frame)
    return df, labels, units_read, (kinds.pop() if kinds else None), assumed, table.skipped


def _refuse_uncomputed_formulas(table: RawTable, meanings: Mapping[int, HeaderMeaning]) -> None:
    """A formula whose value the workbook does not store reads as an empty cell: in a column
    ttsp reads, refuse it by name rather than read the column as missing."""
    used = [(line, j) for (line, j) in sorted(table.uncomputed) if j in meanings]
    if used:
        line, j = used[0]
        formula = table.uncomputed[(line, j)]
        raise DataError(f"{where(table.path, table.header[j], line)}the cell holds the formula "
                        f"{formula!r} but the workbook stores no value for it ({len(used)} such "
                        f"cells in the columns ttsp reads); open and save the workbook in a "
                        f"spreadsheet program so that its values are computed, or paste the "
                        f"values in place of the formulas")


def _skip_text_rows(table: RawTable, meanings: Mapping[int, HeaderMeaning]) -> RawTable:
    """The table without the rows whose cell in a column ttsp reads is a word with no digit
    (``overload``), each kept in ``table.skipped``; a column or a table that is mostly such text
    is refused (see :mod:`ttsp.io.skipped_rows`)."""
    text_cells = {}          # row index -> (column index, cell) of its first text cell
    for j in sorted(meanings):
        col = [row[j] if j < len(row) else "" for row in table.rows]
        if not _CELL_WITHOUT_DIGIT.search("\n".join(col)):
            continue             # every cell is empty or has a digit: no word here (fast path)
        text_rows, filled = [], 0
        for i, cell in enumerate(col):
            if not cell:
                continue
            filled += 1
            if is_text_cell(cell) and not _is_number(cell, table.decimal_comma):
                text_rows.append((table.line_numbers[i], cell))
                text_cells.setdefault(i, (j, cell))
        refuse_mostly_text(table.path, table.header[j], text_rows, filled)
    if not text_cells:
        return table
    if 2 * len(text_cells) >= len(table.rows):
        i = min(text_cells)
        j, cell = text_cells[i]
        raise DataError(f"{where(table.path, table.header[j], table.line_numbers[i])}value must "
                        f"be a number; got {cell!r}, and {len(text_cells)} of the "
                        f"{len(table.rows)} data rows hold text in a number column: is this a "
                        f"table of numbers?")
    keep = [i for i in range(len(table.rows)) if i not in text_cells]
    skipped = [SkippedRow(table.line_numbers[i], _printable(cell), TEXT_IN_NUMBER_COLUMN,
                          table.header[j]) for i, (j, cell) in sorted(text_cells.items())]
    return replace(table, rows=tuple(table.rows[i] for i in keep),
                   line_numbers=tuple(table.line_numbers[i] for i in keep),
                   skipped=tuple(sorted(table.skipped + tuple(skipped), key=lambda s: s.row)))


def _given_temperature(value, path) -> float:
    try:
        t = float(value)
    except (TypeError, ValueError):
        t = float("nan")
    if not math.isfinite(t):
        raise DataError(f"{where(path)}temperature_C must be a number in °C; got {value!r}")
    return t


def _expand(paths) -> list:
    if isinstance(paths, (str, os.PathLike)):
        paths = [paths]
    files = []
    for p in paths:
        p = str(p)
        if os.path.isdir(p):
            inside = sorted(str(q) for q in Path(p).iterdir()
                            if q.is_file() and q.suffix.lower() in TABLE_SUFFIXES
                            and not q.name.startswith(".") and not q.name.startswith("~$"))
            if not inside:
                raise DataError(f"{where(p)}the folder holds no data files "
                                f"({', '.join(TABLE_SUFFIXES)})")
            files.extend(inside)
        else:
            files.append(p)
    if not files:
        raise DataError("no input files given")
    # one file named twice (data/a.csv and /home/me/data/a.csv) is read once
    seen, unique = set(), []
    for f in files:
        key = os.path.realpath(f)
        if key not in seen:
            seen.add(key)
            unique.append(f)
    return unique


def _common_folder(files) -> str:
    """The folder that holds all files, relative if they are all named relatively."""
    try:
        return os.path.commonpath(files) or "."
    except ValueError:   # relative and absolute names together
        return os.path.commonpath([os.path.abspath(f) for f in files])


def hash_inputs(paths) -> str:
    """SHA-256 over the names and bytes of the input files (folders expanded as
    :func:`read_campaign` expands them), in file-name order, so the same inputs give the same
    hash wherever they lie."""
    import hashlib

    h = hashlib.sha256()
    for f in sorted((Path(q) for q in _expand(paths)), key=lambda q: q.name):
        h.update(f.name.encode("utf-8") + b"\0")
        h.update(f.read_bytes())
    return h.hexdigest()


def read_campaign(paths, *, columns: Mapping[str, str] | None = None,
                  units: Mapping[str, str] | None = None, sheet: str | int | None = None,
                  domain: str | None = None, modulus_kind: str | None = None,
                  temperature_tolerance_K: float = 0.5,
                  temperature_C: float | Mapping[str, float] | None = None,
                  max_points: int | None = None,
                  temperature_from_name: bool = False, repeats: str = "merge") -> Campaign:
    """Read one or more files (or a folder) into a validated :class:`~ttsp.data.Campaign`.

    Parameters
    ----------
    paths : path or sequence of paths
        Files (.csv, .txt, .tsv, .dat, .xlsx) or folders of them.
    columns : mapping, optional
        Explicit header -> role mapping for anything detection gets wrong, such as
        ``{"Mod1": "storage_modulus_Pa"}``. Roles are the SI column names of :mod:`ttsp.data`.
    units : mapping, optional
        Unit override by header or by role, such as ``{"Mod1": "MPa"}`` or
        ``{"temperature_K": "°F"}``.
    sheet : str or int, optional
        Sheet of an .xlsx workbook (default: the first).
    domain, modulus_kind : str, optional
        Override detection ("frequency"/"time", "tensile"/"shear").
    temperature_tolerance_K : float
        Points within this distance in temperature belong to one isotherm (default 0.5 K).
    temperature_C : float or mapping, optional
        Temperature in °C of one-isotherm files. A number is used for every file that states
        no temperature (no column, preamble line or temperature in the name); a mapping from
        path or file name to °C gives each file its own, before anything the file says.
    max_points : int, optional
        Refuse campaigns with more data rows than this, before they fill the memory (default:
        the environment variable ``TTSP_MAX_POINTS``, else :data:`DEFAULT_MAX_POINTS`).
    temperature_from_name : bool
        Read a file name holding one number without a unit letter (``sweep_130.csv``) as the
        temperature in °C, for files that state no temperature otherwise (default False: such a
        file is refused with a message that suggests this option).
    repeats : {"merge", "refuse"}
        Time-domain rows of one isotherm at the same printed time: merged into one point (mean
        in log, counted in ``dropped_rows``) unless they conflict, or all refused
        (:meth:`ttsp.data.Campaign.from_frame`).

    Returns
    -------
    Campaign
        Validated, SI and kelvin inside; ``units_as_read`` and ``metadata`` record what was read
        and ``dropped_rows`` counts rows left out for a stated reason. Rows that are clearly not
        data (text after the data, a word such as ``overload`` in a number column) are left
        out, each listed by row and text under ``metadata["skipped rows"]``.

    Raises
    ------
    DataError
        With the file, column and first bad row.
    """
    import pandas as pd

    temperature_tolerance_K = check_positive("temperature_tolerance_K", temperature_tolerance_K,
                                             allow_zero=True)
    if isinstance(temperature_C, Mapping):
        temperature_C = {str(k): v for k, v in temperature_C.items()}
    limit = _max_points(max_points)
    files = _expand(paths)
    if sheet is not None and not any(f.lower().endswith(".xlsx") for f in files):
        raise DataError(f"{where(files[0])}sheet (--sheet) applies to .xlsx workbooks only; got "
                        f"{sheet!r} for {'a text table' if len(files) == 1 else 'text tables'}")
    frames, labels, units_read, kinds, metadata, dropped, assumed = [], {}, {}, set(), {}, {}, []
    skipped_text, first_of = [], {}    # first_of: the first file of each kind and domain
    total = 0
    for path in files:
        table = read_table(path, sheet=sheet, max_points=limit)
        total += len(table.rows)
        if total > limit:
            what = (f"the file has {total:,} data rows" if len(files) == 1 else
                    f"the campaign has {total:,} data rows up to and including this file")
            raise _too_large(path, what, limit)
        df, lab, ur, kind, ass, skipped = _table_to_frame(
            table, columns=columns, units=units, temperature_C=temperature_C,
            temperature_from_name=temperature_from_name)
        if "frequency_rad_s" not in df.columns and "time_s" not in df.columns:
            raise DataError(f"{where(path)}missing a frequency or time column; columns found: "
                            f"{', '.join(table.header)}")
        file_domain = domain or ("frequency" if "frequency_rad_s" in df.columns else "time")
        if len(files) > 1:
            # validate each file on its own so messages name the file (one isotherm is fine
            # here); a single file is validated once, below, with the same messages
            Campaign.from_frame(df, domain=file_domain,
                                modulus_kind=modulus_kind or kind or "tensile",
                                source=path, temperature_tolerance_K=temperature_tolerance_K,
                                column_labels=lab, units_as_read=ur, min_isotherms=1,
                                repeats=repeats)
            df["source_file"] = path  # so a message about the merged campaign names the file
        frames.append(df)
        labels.update(lab)
        units_read.update(ur)
        if kind:
            kinds.add(kind)
            first_of.setdefault(kind, path)
        first_of.setdefault(file_domain, path)
        for k, v in table.preamble.items():
            metadata[k if len(files) == 1 else f"{Path(path).name}: {k}"] = v
        for k, v in table.dropped.items():
            dropped[k] = dropped.get(k, 0) + v
        for row in skipped:
            key = f"rows of {row.reason}"
            dropped[key] = dropped.get(key, 0) + 1
        if skipped:
            skipped_text.append(describe_skipped(skipped, path if len(files) > 1 else None))
        assumed.extend(ass)
    if len(kinds) > 1 and modulus_kind is None:
        raise DataError(f"{where(first_of['shear'])}shear (G, J) data, but "
                        f"{printable(first_of['tensile'])} holds tensile (E, D) data: the files "
                        f"mix the two; give the modulus kind (--modulus-kind)")
    domains = {("frequency" if "frequency_rad_s" in f.columns else "time") for f in frames}
    if domain is None and len(domains) > 1:
        raise DataError(f"{where(first_of['time'])}a time-domain test, but "
                        f"{printable(first_of['frequency'])} holds frequency sweeps: the files "
                        f"mix the two; read them separately")
    source = files[0] if len(files) == 1 else f"{len(files)} files in {_common_folder(files)}"
    if assumed:
        metadata["assumed units"] = "; ".join(dict.fromkeys(assumed))
    if skipped_text:
        metadata["skipped rows"] = "; ".join(skipped_text)
    combined = pd.concat(frames, ignore_index=True) if len(frames) > 1 else frames[0]
    campaign = Campaign.from_frame(combined, domain=domain or domains.pop(),
                                   modulus_kind=modulus_kind or (kinds.pop() if kinds else "tensile"),
                                   source=source, temperature_tolerance_K=temperature_tolerance_K,
                                   column_labels=labels, units_as_read=units_read,
                                   metadata=metadata, dropped_rows=dropped, repeats=repeats)
    if dropped:
        listed = f" ({metadata['skipped rows']})" if skipped_text else ""
        warnings.warn(f"{source}: left out " + ", ".join(f"{v} {k}" for k, v in dropped.items())
                      + listed, DroppedRowsWarning, stacklevel=2)
    return campaign
