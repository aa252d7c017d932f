"""The temperature of a file that holds one isotherm and no temperature column.

In order, the first that answers: a temperature given for this very file (``temperature_C=``
mapping by path or file name), a preamble line (``Temperature: 35 °C``, ``T (°C) = 35``), a
temperature in the file name (``sweep_35C.csv``, ``iso_-20C``, ``run_300K``), a file name with
one bare number when the user asks for it (``sweep_130.csv`` with ``temperature_from_name``),
and a single temperature given for every file. None of them: the file is refused with its
columns, and with a hint when its name holds one bare number.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from .._validation import where
from ..exceptions import DataError
from ..units import parse_unit
from .tables import RawTable

__all__ = ["FileTemperature", "file_temperature"]

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
class FileTemperature:
    """The temperature of a one-isotherm file, in K, with where it came from.

    ``label`` (``"temperature from the preamble"``, ``"temperature from the file name"`` or
    ``"temperature given"``) stands in for a column header in the campaign's column labels;
    ``unit_text`` is the unit it was stated in.
    """

    temperature_K: float
    label: str
    unit_text: str


def file_temperature(table: RawTable, units: Mapping[str, str],
                     temperature_C: float | Mapping[str, float] | None,
                     temperature_from_name: bool) -> FileTemperature:
    """The temperature of a file without a temperature column (see the module's order).

    ``units`` may override the unit stated (``{"temperature_K": "°F"}``).

    Raises
    ------
    DataError
        When nothing states the temperature, when a given one is not a number, when the
        preamble's temperature is unreadable or not unique, or when its unit is not one of
        temperature.
    """
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
    return FileTemperature(float(unit.to_si(value)), label, unit_text)


def _given_temperature(value, path) -> float:
    """A temperature given in °C (``temperature_C=``), refused unless a finite number."""
    try:
        t = float(value)
    except (TypeError, ValueError):
        t = float("nan")
    if not math.isfinite(t):
        raise DataError(f"{where(path)}temperature_C must be a number in °C; got {value!r}")
    return t


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
