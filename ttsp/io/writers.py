"""Write the numbers of a build: summary.json and the CSV tables of the output contract.

Text cells that a spreadsheet would execute as a formula are written with a leading ``'``
(:func:`neutralise_formula`).

Temperatures are written in °C (users' unit) beside kelvin where a table carries both; moduli in
Pa (or MPa with engineering units), times in s, frequencies in Hz in every file. Floats are written with 10
significant digits, so identical runs give identical bytes.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    pass

import json
from pathlib import Path

import numpy as np

from .._arrays import to_plain
from .atomic import write_text_atomic
from .output_units import in_output_units

__all__ = ["write_build_numbers", "frame_to_csv_text", "summary_to_json_text", "NUMBER_FILES",
           "neutralise_formula"]

NUMBER_FILES = ("summary.json", "shift_factors.csv", "master_curve.csv", "prony.csv",
                "prony_finite_element.csv", "material_functions.csv")


#: First characters that make a spreadsheet read a cell as a formula (or, tab and carriage
#: return, hide such a start); common practice of spreadsheet programs, from memory.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def neutralise_formula(text: str) -> str:
    """A text cell a spreadsheet will not execute: ``'`` before text that starts like a formula.

    ``=1+2.csv`` becomes ``'=1+2.csv``; numbers (``-1.5``, ``+3e-4``, ``-inf``) and every other
    text are returned as they are. Used for every CSV cell ttsp writes from text a user gave
    (file names, ids, messages quoting them).
    """
    if not text or not text.startswith(FORMULA_STARTS):
        return text
    if text == text.strip() and "_" not in text:
        try:
            float(text)
            return text
        except ValueError:
            pass
    return "'" + text


def summary_to_json_text(summary: dict) -> str:
    """JSON text of a summary: NaN and infinities become null (JSON has neither)."""
    return json.dumps(to_plain(summary, nonfinite_as_none=True), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def frame_to_csv_text(frame) -> str:
    """CSV text with a fixed float format (10 significant digits, NaN as an empty field),
    K columns joined by their °C twins.

    The bytes are those of ``DataFrame.to_csv(index=False, float_format="%.10g")`` (checked in
    the tests), written column by column instead of value by value."""
    frame = frame.copy()
    for col in [c for c in frame.columns if str(c).endswith("temperature_K")]:
        twin = col[:-1] + "C"
        if twin not in frame.columns:
            frame.insert(list(frame.columns).index(col), twin, frame[col] - 273.15)
    names = list(frame.columns)
    cells = None
    # plain numpy columns under distinct names, more than one: written here; anything else
    # (extension dtypes such as categoricals, repeated names, the single-column quoting of an
    # empty field) by pandas itself
    if len(names) > 1 and len(set(names)) == len(names) and all(
            isinstance(t, np.dtype) for t in frame.dtypes):
        cells = [_csv_cells(frame[name].to_numpy()) for name in names]
    if cells is None or any(c is None for c in cells):
        frame.columns = [neutralise_formula(n) if isinstance(n, str) else n for n in names]
        for i, dtype in enumerate(frame.dtypes):
            if getattr(dtype, "kind", "") in ("O", "U"):   # object, str and string dtypes
                frame.isetitem(i, frame.iloc[:, i].map(
                    lambda v: neutralise_formula(v) if isinstance(v, str) else v))
        return frame.to_csv(index=False, float_format="%.10g", lineterminator="\n")
    lines = [",".join(_csv_quote(neutralise_formula(str(n))) for n in names)]
    lines += map(",".join, zip(*cells, strict=True))
    return "\n".join(lines) + "\n"


def _csv_cells(values):
    """The CSV fields of one column, or None for a kind of column not handled here."""
    kind = values.dtype.kind
    if kind == "f":
        return ["" if v != v else f"{v:.10g}" for v in values.tolist()]
    if kind in "iub":
        return [str(v) for v in values.tolist()]
    if kind in "OU" and all(v is None or isinstance(v, str) for v in values.tolist()):
        return ["" if v is None else _csv_quote(neutralise_formula(v)) for v in values.tolist()]
    return None


def _csv_quote(text: str) -> str:
    """A field quoted as pandas' writer does (QUOTE_MINIMAL with the line terminator "\\n")."""
    if any(ch in text for ch in ',"\n'):
        return '"' + text.replace('"', '""') + '"'
    return text


def write_build_numbers(result, folder: str | Path, *, created_utc: str = "",
                        units: str = "SI") -> dict:
    """Write the number files of a :class:`~ttsp.workflow.BuildResult` into ``folder``.

    ``units`` is ``"SI"`` (Pa, 1/Pa) or ``"engineering"`` (MPa, 1/MPa) for the CSV tables;
    their frequencies are in Hz either way (:mod:`ttsp.io.output_units`), and summary.json stays
    SI (its key ``csv_units`` says which the tables use). Returns a dict file name -> path.
    """
    folder = Path(folder)
    out = {}

    def put(name, text):
        write_text_atomic(folder / name, text)
        out[name] = folder / name

    def table(name, frame):
        put(name, frame_to_csv_text(in_output_units(frame, units)))

    summary = result.summary(created_utc=created_utc)
    summary["csv_units"] = units
    put("summary.json", summary_to_json_text(summary))
    table("shift_factors.csv", result.shifts.to_frame())
    table("master_curve.csv", result.master_curve_frame())
    table("prony.csv", result.series.to_frame())
    table("prony_finite_element.csv", result.series.finite_element_table())
    table("material_functions.csv", result.material_functions_frame())
    spectrum = getattr(result, "relaxation_spectrum", None)
    if spectrum is not None:     # optional (BuildOptions.spectrum), so not in NUMBER_FILES
        table("relaxation_spectrum.csv", spectrum.to_frame())
    service = getattr(result.options, "service_temperature_C", None)
    if service is not None:      # optional too (BuildOptions.service_temperature_C)
        table("service_functions.csv", result.material_functions_frame(temperature_C=service))
    return out
