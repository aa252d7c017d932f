"""One table's columns given a meaning: which header is which quantity, in which unit, in SI.

The second step of reading a campaign, after :mod:`ttsp.io.tables` has cut the file into text
cells: each header is recognised (:mod:`ttsp.io.headers`) or mapped explicitly (``columns=``),
its unit read from the header, a line of units, an override (``units=``) or assumed and said so;
its cells are read as numbers (:mod:`ttsp.io.cell_numbers`) and converted to SI and kelvin. A
file without a temperature column takes the temperature its preamble or name states
(:mod:`ttsp.io.file_temperature`). Rows with a word such as ``overload`` in a column read here
are left out and listed (:mod:`ttsp.io.skipped_rows`); formulas a workbook stores no value for
are refused by cell.

The result is a :class:`FileFrame`: a tidy frame of one file, with the columns of
:mod:`ttsp.data` plus ``source_row``, and what was read to make it.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from .._validation import printable, where
from ..data import QUANTITIES
from ..exceptions import DataError
from ..units import parse_unit
from .cell_numbers import column_floats, is_number
from .file_temperature import file_temperature
from .headers import DEFAULT_UNIT, UNIT_KIND_OF_ROLE, HeaderMeaning, interpret_header
from .skipped_rows import TEXT_IN_NUMBER_COLUMN, SkippedRow, is_text_cell, refuse_mostly_text
from .tables import RawTable

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["FileFrame", "table_to_frame", "column_meanings"]

# a non-empty cell without a digit, searched in a column's cells joined by newlines
_CELL_WITHOUT_DIGIT = re.compile(r"(?m)^[^\d\n]+$")
_COLUMN_ROLES = ("temperature_K", "frequency_rad_s", "time_s")


@dataclass(frozen=True)
class FileFrame:
    """One file read: its tidy SI frame and what was read to make it.

    ``frame`` has a column per role read (SI names of :mod:`ttsp.data`), ``temperature_K``
    and ``source_row`` (the file line of each row). ``column_labels`` maps each role to its
    header (or to where the temperature came from); ``units_as_read`` each header to its unit;
    ``modulus_kind`` is ``"tensile"``, ``"shear"`` or None when no header says. ``preamble``
    and ``lines_dropped`` come from the table as read; ``skipped`` lists every row left out as
    clearly not data; ``assumed_units`` says which headers had no unit and got the default.
    """

    path: str
    frame: pd.DataFrame
    column_labels: Mapping[str, str]
    units_as_read: Mapping[str, str]
    modulus_kind: str | None
    preamble: Mapping[str, str] = field(default_factory=dict)
    lines_dropped: Mapping[str, int] = field(default_factory=dict)
    skipped: tuple = ()
    assumed_units: tuple = ()


def table_to_frame(table: RawTable, *, columns: Mapping[str, str] | None,
                   units: Mapping[str, str] | None,
                   temperature_C: float | Mapping[str, float] | None,
                   temperature_from_name: bool = False) -> FileFrame:
    """Read the columns of one table into a tidy SI frame (see the module).

    Raises
    ------
    DataError
        Naming the file, the column and the first bad row: a mapping or unit override that
        names nothing in the file, two columns of one meaning, an unknown unit, a cell that is
        not a number, a value that overflows in SI, no temperature, tensile and shear columns
        together.
    """
    import pandas as pd

    meanings = column_meanings(table, columns)
    _refuse_uncomputed_formulas(table, meanings)
    table = _skip_text_rows(table, meanings)
    units = dict(units or {})
    _refuse_unknown_unit_overrides(table, units)
    frame, labels, units_read, kinds, assumed = {}, {}, {}, set(), []
    marks: dict[str, bool] = {}
    for j, m in meanings.items():
        header = table.header[j]
        unit, unit_text, assumed_unit = _column_unit(table.path, header, m, units)
        if assumed_unit:
            assumed.append(f"{header!r} in {unit_text}")
        frame[m.role] = _si_column(table, j, header, unit, unit_text, marks=marks,
                                   empty_allowed=m.role not in _COLUMN_ROLES)
        labels[m.role] = header
        units_read[header] = unit_text
        if m.modulus_kind:
            kinds.add(m.modulus_kind)
    if "temperature_K" not in frame:
        stated = file_temperature(table, units, temperature_C, temperature_from_name)
        frame["temperature_K"] = np.full(len(table.rows), stated.temperature_K)
        labels["temperature_K"] = stated.label
        units_read[stated.label] = stated.unit_text
    frame["source_row"] = np.asarray(table.line_numbers, dtype=np.int64)
    if len(kinds) > 1:
        raise DataError(f"{where(table.path)}the columns mix tensile (E, D) and shear (G, J) "
                        f"symbols; give the modulus kind explicitly")
    return FileFrame(table.path, pd.DataFrame(frame), labels, units_read,
                     kinds.pop() if kinds else None, table.preamble, table.dropped,
                     table.skipped, tuple(assumed))


def _refuse_unknown_unit_overrides(table: RawTable, units: Mapping[str, str]) -> None:
    """A unit override must name a header of the file or a role."""
    known = set(table.header) | set(QUANTITIES) | set(_COLUMN_ROLES)
    for key in units:
        if key not in known:
            raise DataError(f"{where(table.path)}unit override for {key!r} must name a column "
                            f"header or a role; columns found: {', '.join(table.header)}")


def _column_unit(path: str, header: str, meaning: HeaderMeaning,
                 units: Mapping[str, str]) -> tuple:
    """``(unit, unit_text, assumed)`` of a column: an override by header, then by role, then
    the header's own unit, else the role's default (``assumed`` True when that default has a
    dimension, so the user is told)."""
    unit_text = units.get(header, units.get(meaning.role, meaning.unit))
    assumed = False
    if unit_text is None:
        unit_text = DEFAULT_UNIT[meaning.role]
        assumed = UNIT_KIND_OF_ROLE[meaning.role] != "dimensionless"
    try:
        unit = parse_unit(unit_text, kind=UNIT_KIND_OF_ROLE[meaning.role])
    except DataError as exc:
        raise DataError(f"{where(path, header)}{exc}") from None
    return unit, unit_text, assumed


def _si_column(table: RawTable, j: int, header: str, unit, unit_text: str, *, marks: dict,
               empty_allowed: bool) -> np.ndarray:
    """Column ``j`` as numbers in SI; a value finite as written but beyond a double once
    converted is refused with its row."""
    values = column_floats(table, j, header, marks=marks, empty_allowed=empty_allowed)
    with np.errstate(over="ignore", invalid="ignore"):
        si = unit.to_si(values)
    overflow = np.flatnonzero(np.isinf(si) & np.isfinite(values))
    if overflow.size:
        i = int(overflow[0])
        cell = table.rows[i][j]
        raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be a "
                        f"finite number in SI units; got {cell!r} {unit_text}, beyond the "
                        f"largest number ttsp holds (about 1.8e308) once converted")
    return si


def column_meanings(table: RawTable, columns: Mapping[str, str] | None) -> dict:
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
        elif (found := detected.get(j)) is not None:
            if found.role in columns.values():
                continue  # an explicit mapping takes this role; the detected column gives way
            out[j] = found
    exact_roles = {m.role for m in out.values() if not m.fuzzy}
    out = {j: m for j, m in out.items() if not (m.fuzzy and m.role in exact_roles)}
    seen: dict[str, int] = {}
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
    text_cells: dict[int, tuple[int, str]] = {}   # row index -> (column index, cell) of its first text cell
    for j in sorted(meanings):
        col = [row[j] if j < len(row) else "" for row in table.rows]
        if not _CELL_WITHOUT_DIGIT.search("\n".join(col)):
            continue             # every cell is empty or has a digit: no word here (fast path)
        text_rows, filled = [], 0
        for i, cell in enumerate(col):
            if not cell:
                continue
            filled += 1
            if is_text_cell(cell) and not is_number(cell, table.decimal_comma):
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
    skipped = [SkippedRow(table.line_numbers[i], printable(cell), TEXT_IN_NUMBER_COLUMN,
                          table.header[j]) for i, (j, cell) in sorted(text_cells.items())]
    return replace(table, rows=tuple(table.rows[i] for i in keep),
                   line_numbers=tuple(table.line_numbers[i] for i in keep),
                   skipped=tuple(sorted(table.skipped + tuple(skipped), key=lambda s: s.row)))
