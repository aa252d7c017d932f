"""Read a loading history: a table of time, temperature, and strain or stress.

Columns are recognised by their headers with units, as for campaigns: ``time (h)``,
``T (°C)``, ``strain`` (or ``strain (%)``), ``stress (MPa)``. Exactly one of strain or stress is
given; the temperature column is optional (isothermal at the reference temperature without it).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .._validation import where
from ..exceptions import DataError
from ..units import parse_unit
from .cell_numbers import column_floats
from .headers import split_unit
from .tables import read_table

__all__ = ["LoadingHistory", "read_history_table", "check_temperatures_for_law",
           "refuse_overflow"]


@dataclass(frozen=True)
class LoadingHistory:
    """A history in SI: times (s), temperatures (K or None), and strain or stress (Pa).

    ``rows`` and ``headers`` say where each value came from, so that a message about one value
    names its file line and column.
    """

    source: str
    time_s: np.ndarray
    temperature_K: np.ndarray | None
    control: str  # "strain" or "stress"
    values: np.ndarray
    rows: tuple = ()          # the file line of each value (1 = the first line)
    headers: tuple = ()       # (role, header) of each column read, for messages


_ROLES = (
    ("time_s", re.compile(r"^(t|time|elapsed time|step time)$"), "time"),
    ("temperature_K", re.compile(r"^(t|temp|temperature)$"), "temperature"),
    ("strain", re.compile(r"^(strain|ε|eps|epsilon)$"), None),
    ("stress", re.compile(r"^(stress|σ|sigma)$"), "modulus"),
)


def _role(header: str):
    name, unit = split_unit(header)
    key = name.strip().lower()
    kind = None
    if unit is not None:
        try:
            kind = parse_unit(unit).kind
        except DataError:
            kind = None
    for role, pattern, unit_kind in _ROLES:
        if pattern.match(key):
            if key == "t" and unit is not None and kind != unit_kind:
                continue
            if key == "t" and unit is None:
                role = "temperature_K" if name.strip() == "T" else "time_s"
            return role, unit
    return None, None


def read_history_table(path: str | Path) -> LoadingHistory:
    """Read a history CSV (any delimiter the campaign reader accepts) into SI arrays.

    Strain is dimensionless unless the header says ``%``; stress in a modulus unit (Pa, MPa, …);
    time defaults to s and temperature to °C when the header has no unit.

    Raises
    ------
    DataError
        Naming file, column and row: no time column, neither or both of strain and stress,
        two columns of one kind, a non-numeric or non-finite cell, times that go backwards.
    """
    table = read_table(path)
    if table.skipped:   # a history is read whole: no row of it is left out
        first = table.skipped[0]
        raise DataError(f"{where(table.path, None, first.row)}a history table must hold only "
                        f"numbers after its header; got {first.text!r}")
    found: dict[str, tuple[int, str, str | None]] = {}   # role -> (column, header, unit)
    for j, header in enumerate(table.header):
        role, unit = _role(header)
        if role is not None and role in found:  # never pick one of two silently
            raise DataError(f"{where(table.path, header)}two columns mean {role}: "
                            f"{found[role][1]!r} and {header!r}; keep one")
        if role is not None:
            found[role] = (j, header, unit)
    if "time_s" not in found:
        raise DataError(f"{where(table.path)}missing a time column; columns found: "
                        f"{', '.join(table.header)}")
    controls = [r for r in ("strain", "stress") if r in found]
    if len(controls) != 1:
        raise DataError(f"{where(table.path)}the history needs exactly one of a strain or a stress "
                        f"column; found {len(controls)}")
    control = controls[0]

    def column(role):
        j, header, unit = found[role]
        # the campaign reader's rules: the same numbers are read (no 1_000, no thousands
        # separators taken for decimal marks), and the first bad row is named
        values = column_floats(table, j, header, empty_allowed=False)
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            i = int(bad[0])
            cell = table.rows[i][j].strip()
            raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be "
                            f"finite; got {cell!r}")
        if role == "strain":
            if unit in ("%", "pct", "percent"):
                return values / 100.0
            if unit not in (None, "", "-", "1", "m/m", "mm/mm"):
                raise DataError(f"{where(table.path, header)}unit must be none or % for strain; "
                                f"got {unit!r}")
            return values
        default = {"time_s": "s", "temperature_K": "°C", "stress": "Pa"}[role]
        kind = {"time_s": "time", "temperature_K": "temperature", "stress": "modulus"}[role]
        try:
            u = parse_unit(unit or default, kind=kind)
        except DataError as exc:
            raise DataError(f"{where(table.path, header)}{exc}") from None
        with np.errstate(over="ignore"):
            si = u.to_si(values)
        if not np.isfinite(si).all():
            i = int(np.flatnonzero(~np.isfinite(si))[0])
            raise DataError(f"{where(table.path, header, table.line_numbers[i])}value must be a "
                            f"finite number in SI units; got {table.rows[i][j]!r} "
                            f"{unit or default}, beyond the largest number ttsp holds (about "
                            f"1.8e308) once converted")
        return si

    t = column("time_s")
    if np.any(np.diff(t) < 0):
        i = int(np.flatnonzero(np.diff(t) < 0)[0]) + 1
        raise DataError(f"{where(table.path, found['time_s'][1], table.line_numbers[i])}times must "
                        f"not decrease; got {t[i]:g} s after {t[i - 1]:g} s")
    temp = column("temperature_K") if "temperature_K" in found else None
    if temp is not None and np.any(temp <= 0):
        i = int(np.flatnonzero(temp <= 0)[0])
        raise DataError(f"{where(table.path, found['temperature_K'][1], table.line_numbers[i])}"
                        f"temperature must be above absolute zero")
    return LoadingHistory(str(path), t, temp, control, column(control), tuple(table.line_numbers),
                          tuple((role, header) for role, (_, header, _) in found.items()))


def _header(history: LoadingHistory, role: str):
    return dict(history.headers).get(role)


def _row(history: LoadingHistory, i: int):
    return history.rows[i] if i < len(history.rows) else None


def check_temperatures_for_law(history: LoadingHistory, law) -> None:
    """Refuse a history temperature at or below the divergence of the model's shift law (WLF:
    T_ref − C2; VFT: T_inf), naming its row and the divergence in °C.

    Raises
    ------
    DataError
        ``<file>, column <T>, row <n>: temperature must be above ...`` for the first such row.
    """
    limit_of = getattr(law, "_lower_limit_K", None)
    if history.temperature_K is None or limit_of is None:
        return
    limit_K = limit_of(law.params, law.reference_temperature_K)
    if limit_K is None:
        return
    bad = np.flatnonzero(history.temperature_K <= limit_K)
    if bad.size:
        i = int(bad[0])
        name = getattr(law, "_limit_name", "the law's divergence").replace(" - ", " − ")
        raise DataError(f"{where(history.source, _header(history, 'temperature_K'), _row(history, i))}"
                        f"temperature must be above {name} of the model's shift law, "
                        f"{limit_K - 273.15:.2f} °C, where a_T has no value; got "
                        f"{history.temperature_K[i] - 273.15:.6g} °C")


def refuse_overflow(history: LoadingHistory, frame, column: str) -> None:
    """Refuse a response that overflowed (a strain of 1e300 gives an infinite stress) rather
    than write ``inf``: name the first input row whose response is not a finite number.

    Raises
    ------
    DataError
        ``<file>, column <strain>, row <n>: ...`` for the first such row.
    """
    values = np.asarray(frame[column], dtype=float)
    bad = np.flatnonzero(~np.isfinite(values))
    if not bad.size:
        return
    i = int(bad[0])
    given = history.values[i] if i < history.values.size else float("nan")
    unit = "" if history.control == "strain" else " Pa"
    raise DataError(f"{where(history.source, _header(history, history.control), _row(history, i))}"
                    f"the {column.split('_')[0]} under this {history.control} is beyond the "
                    f"largest number ttsp holds (about 1.8e308); got {history.control} "
                    f"{given:g}{unit}")
