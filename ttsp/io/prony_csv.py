"""A Prony series as a CSV file, exact on re-reading.

Layout: a first line ``# ttsp Prony series``, comment lines ``# key: value`` carrying the
metadata (JSON values: ``modulus_kind``, ``reference_temperature_K``,
``valid_reduced_time_range_s``, ``fit_rms_percent``, ``fit_max_percent``, ``provenance``), then
the table of :meth:`ttsp.prony.PronySeries.to_frame` (``tau_s,modulus_Pa,normalised_modulus``;
the equilibrium modulus is the row with ``tau_s = inf``). Numbers are written as the shortest
text that reads back to the same float, so a round trip is exact. Readers that skip ``#``
lines see a plain table.
"""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path
from typing import Any

import numpy as np

from .._validation import where
from ..exceptions import DataError
from ..prony import PronySeries

__all__ = ["write_prony_csv", "read_prony_csv"]

_CSV_MAGIC = "# ttsp Prony series"
_METADATA_KEYS = ("modulus_kind", "reference_temperature_K", "valid_reduced_time_range_s",
                  "fit_rms_percent", "fit_max_percent", "provenance")


def write_prony_csv(series: PronySeries, path: str | Path) -> None:
    """Write ``series`` to ``path`` in the layout of the module docstring.

    Parameters
    ----------
    series : PronySeries
        The series (moduli in Pa, times in s).
    path : str or path-like
        File to write (replaced if it exists).
    """
    meta = series.to_dict()
    lines = [_CSV_MAGIC]
    for key in _METADATA_KEYS:
        lines.append(f"# {key}: {json.dumps(meta[key], allow_nan=False)}")
    e0 = series.instantaneous_modulus_Pa
    with open(path, "w", newline="", encoding="utf-8") as fh:
        fh.write("\n".join(lines) + "\n")
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["tau_s", "modulus_Pa", "normalised_modulus"])
        w.writerow(["inf", repr(float(series.equilibrium_modulus_Pa)),
                    repr(float(series.equilibrium_modulus_Pa / e0))])
        for t, m in zip(series.tau_s, series.modulus_Pa, strict=True):
            w.writerow([repr(float(t)), repr(float(m)), repr(float(m / e0))])


def read_prony_csv(path: str | Path) -> PronySeries:
    """Read a series written by :func:`write_prony_csv`.

    Parameters
    ----------
    path : str or path-like
        The file.

    Returns
    -------
    PronySeries

    Raises
    ------
    DataError
        If the file is not in that layout (the message names file and row).
    """
    with open(path, newline="", encoding="utf-8") as fh:
        lines = fh.read().splitlines()
    meta, rows = _metadata_and_rows(str(path), lines)
    e_inf, tau, mod = _terms(str(path), rows)
    rng = meta.get("valid_reduced_time_range_s")
    return PronySeries(e_inf, np.array(tau), np.array(mod),
                       modulus_kind=meta.get("modulus_kind", "tensile"),
                       reference_temperature_K=meta.get("reference_temperature_K"),
                       valid_reduced_time_range_s=None if rng is None else tuple(rng),
                       fit_rms_percent=meta.get("fit_rms_percent"),
                       fit_max_percent=meta.get("fit_max_percent"),
                       provenance=meta.get("provenance"))


def _metadata_and_rows(name: str, lines: list[str]) -> tuple[dict[str, Any], list[list]]:
    """The ``# key: value`` metadata, and the table's rows as [row number, cells...]."""
    meta: dict[str, Any] = {}
    rows: list[list] = []
    header_row = None
    for k, line in enumerate(lines, start=1):
        if line.startswith("#"):
            body = line[1:].strip()
            if ":" in body:
                key, _, value = body.partition(":")
                try:
                    meta[key.strip()] = json.loads(value)
                except json.JSONDecodeError:
                    raise DataError(f"{where(name, row=k)}metadata line must hold a "
                                    f"JSON value; got {value.strip()!r}") from None
            continue
        if not line.strip():
            continue
        if header_row is None:
            header_row = k
            cols = next(csv.reader([line]))
            if cols[:2] != ["tau_s", "modulus_Pa"]:
                raise DataError(f"{where(name, row=k)}header must start with "
                                f"'tau_s,modulus_Pa'; got {line!r}")
            continue
        rows.append([k] + next(csv.reader([line])))
    return meta, rows


def _terms(name: str, rows: list[list]) -> tuple[float, list[float], list[float]]:
    """E_∞ (the one row with tau_s = inf) and the terms (τ_i, E_i) of the table's rows."""
    e_inf = None
    tau, mod = [], []
    for row in rows:
        k, cells = row[0], row[1:]
        try:
            t, m = float(cells[0]), float(cells[1])
        except (ValueError, IndexError):
            raise DataError(f"{where(name, row=k)}tau_s and modulus_Pa must be numbers;"
                            f" got {','.join(cells)!r}") from None
        if math.isinf(t):
            if e_inf is not None:
                raise DataError(f"{where(name, row=k)}the equilibrium row (tau_s = inf)"
                                " must appear once; got a second one")
            e_inf = m
        else:
            tau.append(t)
            mod.append(m)
    if e_inf is None:
        raise DataError(f"{where(name)}the table must contain the equilibrium row "
                        "(tau_s = inf); got none")
    return e_inf, tau, mod
