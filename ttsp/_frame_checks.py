"""A tidy frame checked before its rows become isotherms (:meth:`ttsp.data.Campaign.from_frame`).

The checks, in the order they run: the frame has a temperature column, the domain's x column
and a measured material function of that domain, and at least one row; every temperature and x
is a finite positive number (temperatures at most :data:`~ttsp.quantities.MAX_TEMPERATURE_K`);
every measured value is finite, positive where it is taken in a logarithm and at most
:data:`~ttsp.quantities.MAX_MAGNITUDE`, and missing (NaN) only for a whole isotherm.

Every message names the file, the column as the user wrote it and the first bad row, and shows
the bad value in the unit it was read in (:class:`FrameRows`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ._validation import where
from .exceptions import DataError
from .quantities import MAX_MAGNITUDE, MAX_TEMPERATURE_K, QUANTITIES
from .units import parse_unit

__all__ = ["FrameRows", "measured_quantities", "checked_temperature_and_x",
           "checked_measured_values"]


@dataclass(frozen=True)
class FrameRows:
    """Where each row of a frame came from and how its values read to the user, for messages.

    ``rows`` holds the file line of each row (``source_row``, else the row's place counted
    from line 2, under a header line); ``files`` the file of each row (``source_file``) or None.
    ``labels`` maps an SI column to the header the user wrote; ``units_as_read`` that header
    to its unit.
    """

    source: str
    labels: Mapping[str, str]
    units_as_read: Mapping[str, str]
    rows: np.ndarray
    files: np.ndarray | None

    @classmethod
    def of(cls, frame, source: str, labels: Mapping[str, str],
           units_as_read: Mapping[str, str]) -> FrameRows:
        rows = (np.asarray(frame["source_row"], dtype=np.int64) if "source_row" in frame.columns
                else np.arange(len(frame), dtype=np.int64) + 2)
        files = (np.asarray(frame["source_file"], dtype=object)
                 if "source_file" in frame.columns else None)
        return cls(source, labels, units_as_read, rows, files)

    def label(self, col: str) -> str:
        """The header the user wrote for an SI column (the column's own name without one)."""
        return self.labels.get(col, col)

    def at(self, col: str, i: int) -> str:
        """The message prefix of row ``i`` in column ``col``: file, header, file line."""
        file = str(self.files[i]) if self.files is not None else self.source
        return where(file, self.label(col), int(self.rows[i]))

    def shown(self, col: str, v) -> str:
        """The value as the user wrote it: in the unit as read where that is known."""
        if not np.isfinite(v):
            return f"{float(v)}"
        unit = self.units_as_read.get(self.label(col))
        if unit is not None and unit.strip() not in ("", "-", "1"):
            try:
                return f"{float(parse_unit(unit).from_si(v)):.10g} {unit}".rstrip()
            except DataError:
                pass
        return f"{float(v):.10g}"

    def earlier_row(self, a: int, b: int) -> str:
        """Row ``a`` named for a message about row ``b``: with its file when that differs."""
        if self.files is not None and self.files[a] != self.files[b]:
            return f"row {int(self.rows[a])} of {self.files[a]}"
        return f"row {int(self.rows[a])}"

    def numbers(self, frame, col: str) -> np.ndarray:
        """A column as floats, or the first cell that is not a number, by row."""
        raw = frame[col]
        try:
            return np.asarray(raw, dtype=float)
        except (TypeError, ValueError):
            import pandas as pd

            num = pd.to_numeric(raw, errors="coerce")
            bad = int(np.flatnonzero(np.asarray(num.isna() & raw.notna()))[0])
            raise DataError(f"{self.at(col, bad)}value must be a number; "
                            f"got {raw.iloc[bad]!r}") from None


def _first(mask) -> int:
    return int(np.flatnonzero(mask)[0])


def columns_found(frame, labels: Mapping[str, str]) -> str:
    """The columns of a frame as the user named them, for messages."""
    return ", ".join(map(str, labels.values() or frame.columns))


def needed_quantities(domain: str) -> str:
    """The material functions of a domain, one of which a campaign must hold."""
    return ", ".join(q for q in QUANTITIES if QUANTITIES[q].domain == domain)


def measured_quantities(frame, domain: str, x_name: str, source: str,
                        labels: Mapping[str, str]) -> list:
    """The material functions among the frame's columns, in the order of :data:`QUANTITIES`,
    once the frame is known to hold a temperature, an x and at least one row.

    Raises
    ------
    DataError
        A missing temperature or x column, no material function or one of the other domain,
        no rows.
    """
    found = columns_found(frame, labels)
    for col in ("temperature_K", x_name):
        if col not in frame.columns:
            what = "a temperature column" if col == "temperature_K" else (
                "a frequency column" if domain == "frequency" else "a time column")
            raise DataError(f"{where(source)}missing {what} ({col}); columns found: {found}")
    quantities = [q for q in QUANTITIES if q in frame.columns]
    if not quantities:
        raise DataError(f"{where(source)}no measured material function found: need at least "
                        f"one of {needed_quantities(domain)}; columns found: {found}")
    wrong = [q for q in quantities if QUANTITIES[q].domain != domain]
    if wrong:
        raise DataError(f"{where(source, labels.get(wrong[0], wrong[0]))}"
                        f"{QUANTITIES[wrong[0]].label} does not belong to {domain}-domain data")
    if len(frame) == 0:
        raise DataError(f"{where(source)}no data rows")
    return quantities


def checked_temperature_and_x(frame, x_name: str, rows: FrameRows) -> tuple:
    """``(temperature_K, x)`` of every row: finite and positive, temperatures at most
    :data:`MAX_TEMPERATURE_K`; else the first bad row."""
    temps = rows.numbers(frame, "temperature_K")
    x_all = rows.numbers(frame, x_name)
    for col, vals, rule in (("temperature_K", temps, "above absolute zero"),
                            (x_name, x_all, "positive (it is taken in a logarithm)")):
        if not np.isfinite(vals).all():
            bad = _first(~np.isfinite(vals))
            raise DataError(f"{rows.at(col, bad)}value must be a finite number; "
                            f"got {rows.shown(col, vals[bad])}")
        if (vals <= 0).any():
            bad = _first(vals <= 0)
            raise DataError(f"{rows.at(col, bad)}value must be {rule}; "
                            f"got {rows.shown(col, vals[bad])}")
    if (temps > MAX_TEMPERATURE_K).any():
        bad = _first(temps > MAX_TEMPERATURE_K)
        raise DataError(f"{rows.at('temperature_K', bad)}value must be at most "
                        f"{MAX_TEMPERATURE_K:,.0f} K ({MAX_TEMPERATURE_K - 273.15:,.2f} °C), "
                        f"hotter than any viscoelastic test; got "
                        f"{rows.shown('temperature_K', temps[bad])}")
    return temps, x_all


def checked_measured_values(frame, quantities: list, groups: list, rows: FrameRows) -> dict:
    """The measured functions that have values: ``{quantity: (values, absent)}``, where
    ``absent[g]`` says the function is missing (all NaN) in group ``g`` of ``groups`` (index
    arrays of the frame's rows, one per isotherm). An empty dict when no function has a
    value.

    Raises
    ------
    DataError
        For the first infinite value, a NaN in an isotherm that has the function elsewhere, a
        value at or below zero where a logarithm is taken, a value beyond any real material.
    """
    group_of = np.empty(len(frame), dtype=np.int64)
    for g, members in enumerate(groups):
        group_of[members] = g
    values = {}
    for q in quantities:
        vals = rows.numbers(frame, q)
        nan = np.isnan(vals)
        all_nan_group = np.array([nan[m].all() for m in groups])
        partly = nan & ~all_nan_group[group_of] & ~_in_files_without(nan, rows)
        bad_mask = np.isinf(vals) | partly
        if bad_mask.any():
            bad = _first(bad_mask)
            missing = (" (a missing value where the rest of its isotherm has values)"
                       if partly[bad] else "")
            raise DataError(f"{rows.at(q, bad)}value must be a finite number; "
                            f"got {rows.shown(q, vals[bad])}{missing}")
        _refuse_out_of_range(q, vals, nan, rows)
        if not nan.all():
            values[q] = (vals, all_nan_group)
    return values


def _in_files_without(nan: np.ndarray, rows: FrameRows) -> np.ndarray:
    """Rows of files, read together, that have no value of a function in any row (relaxation
    and creep exported as two files): their missing values are the other test's points at
    their own times, not gaps."""
    if rows.files is None:
        return np.zeros(nan.size, dtype=bool)
    files = rows.files.astype(str)
    lacking = [f for f in np.unique(files) if nan[files == f].all()]
    return np.isin(files, lacking)


def _refuse_out_of_range(q: str, vals: np.ndarray, nan: np.ndarray, rows: FrameRows) -> None:
    """A measured value must be positive where it is taken in a logarithm, and at most
    :data:`MAX_MAGNITUDE` for its kind of unit."""
    if QUANTITIES[q].positive and (vals[~nan] <= 0).any():
        bad = _first(~nan & (vals <= 0))
        raise DataError(f"{rows.at(q, bad)}value must be positive (it is taken in a "
                        f"logarithm); got {rows.shown(q, vals[bad])}")
    limit = MAX_MAGNITUDE.get(QUANTITIES[q].unit_kind)
    if limit is not None and (vals[~nan] > limit).any():
        bad = _first(~nan & (vals > limit))
        unit = "Pa" if QUANTITIES[q].unit_kind == "modulus" else "1/Pa"
        raise DataError(f"{rows.at(q, bad)}value must be at most {limit:g} {unit}, beyond "
                        f"any real material; got {rows.shown(q, vals[bad])}")
