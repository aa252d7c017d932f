"""Files that are not clean tables but say unambiguously what they hold (issue 16).

Each case is a file in ``tests/data/readable/`` (written by ``make_readable_inputs.py``) with
its expected result in ``catalogue.csv``: the isotherms, the points, the lowest frequency and
the rows that must be skipped and listed. The values are invented; the expected SI values follow
from definitions: ω = 2π f, so an angular frequency of 0.5 rad/s is 0.5/(2π) Hz.
"""

from __future__ import annotations

import csv
import math
import time
import warnings
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from ttsp.cli import app
from ttsp.exceptions import DataError, DroppedRowsWarning
from ttsp.io.readers import read_campaign

HERE = Path(__file__).resolve().parent / "data" / "readable"
with open(HERE / "catalogue.csv", encoding="utf-8", newline="") as _fh:
    CASES = list(csv.DictReader(_fh))
runner = CliRunner()


def _options(row) -> dict:
    opts = row["options"].split()
    out = {}
    if "--temperature-from-name" in opts:
        out["temperature_from_name"] = True
    if "--sheet" in opts:
        out["sheet"] = opts[opts.index("--sheet") + 1]
    return out


@pytest.mark.parametrize("row", CASES, ids=lambda r: r["file"])
def test_readable_case_reads_as_catalogued(row):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        c = read_campaign(HERE / row["file"], **_options(row))
    expected_T = [float(t) for t in row["temperatures_C"].split(";")]
    np.testing.assert_allclose(c.temperatures_K - 273.15, expected_T, atol=1e-9)
    assert c.n_points == int(row["points"])
    lowest_Hz = min(float(iso.x.min()) for iso in c.isotherms) / (2 * math.pi)
    assert lowest_Hz == pytest.approx(float(row["lowest_frequency_Hz"]), rel=1e-12)
    assert c.metadata.get("skipped rows", "") == row["skipped_rows"]
    if row["skipped_rows"]:    # never silently: a warning and a count as well
        assert any(issubclass(w.category, DroppedRowsWarning)
                   and row["skipped_rows"] in str(w.message) for w in caught)
        assert sum(v for k, v in c.dropped_rows.items() if k.startswith("rows of text")) == 1


@pytest.mark.parametrize("row", CASES, ids=lambda r: r["file"])
def test_inspect_lists_the_skipped_rows(row):
    t0 = time.perf_counter()
    res = runner.invoke(app, ["inspect", str(HERE / row["file"])] + row["options"].split())
    assert res.exit_code == 0, res.output
    # the stray cell at XFD1000000 once took minutes (issue 17, point 4); seconds now
    assert time.perf_counter() - t0 < 30
    lines = [ln for ln in res.stdout.splitlines() if ln.startswith("skipped rows: ")]
    assert lines == ([f"skipped rows: {row['skipped_rows']}"] if row["skipped_rows"] else [])
    assert f"points: {row['points']}" in res.stdout


def test_the_same_files_are_refused_without_their_option():
    res = runner.invoke(app, ["inspect", str(HERE / "data_on_second_sheet.xlsx")])
    assert res.exit_code == 2
    assert res.stderr.strip().endswith(
        "data_on_second_sheet.xlsx: the first sheet ('Notes') holds no data rows; the "
        "workbook's sheets are 'Notes', 'Data': choose one with --sheet (sheet= in Python)")
    res = runner.invoke(app, ["inspect", str(HERE / "numbers_in_names")])
    assert res.exit_code == 2
    assert "the file name holds the number 20 without a unit: if it is the temperature in °C, " \
           "give --temperature-from-name" in res.stderr


def test_temperature_from_name_needs_exactly_one_number(tmp_path):
    for name in ("run2_130.csv", "run.csv"):
        (tmp_path / name).write_text("Freq (Hz),E' (MPa)\n0.5,100\n5,200\n", encoding="utf-8")
    with pytest.raises(DataError, match=r"run2_130\.csv: temperature_from_name needs exactly one "
                                        r"number in the file name; got 2 \(2, 130\)"):
        read_campaign(tmp_path / "run2_130.csv", temperature_from_name=True)
    with pytest.raises(DataError, match=r"run\.csv: temperature_from_name needs exactly one "
                                        r"number in the file name; got 0 \(none\)"):
        read_campaign(tmp_path / "run.csv", temperature_from_name=True)


def test_a_name_with_a_unit_letter_is_read_as_before(tmp_path):
    """The option reads unitless numbers only: sweep_300K stays 300 K, and iso_-20 is -20 °C."""
    for name in ("sweep_300K.csv", "iso_-20.csv"):
        (tmp_path / name).write_text("Freq (Hz),E' (MPa)\n0.5,100\n5,200\n", encoding="utf-8")
    c = read_campaign(tmp_path, temperature_from_name=True)
    np.testing.assert_allclose(c.temperatures_K, [253.15, 300.0])


def test_sheet_on_a_text_table_is_refused(tmp_path):
    path = tmp_path / "data.csv"
    path.write_text("Temp (°C),Freq (Hz),E' (MPa)\n20,0.5,100\n20,5,200\n40,0.5,50\n40,5,100\n",
                    encoding="utf-8")
    res = runner.invoke(app, ["inspect", str(path), "--sheet", "Data"])
    assert res.exit_code == 2
    assert res.stderr == (f"ttsp: error: {path}: sheet (--sheet) applies to .xlsx workbooks only; "
                          f"got 'Data' for a text table\n")


def _formula_workbook(path, formula_column="E'' (MPa)"):
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["Temp (°C)", "Freq (Hz)", "E' (MPa)", formula_column])
    for i, row in enumerate([(20, 0.5, 100), (20, 5, 200), (40, 0.5, 50), (40, 5, 100)], 2):
        sheet.append(list(row) + [f"=C{i}/10"])     # openpyxl stores no computed value
    book.save(path)
    return path


def test_formulas_without_stored_values_are_named(tmp_path):
    """A column of formulas that no program computed read as empty and vanished (issue 17,
    point 6): now the first such cell is named."""
    path = _formula_workbook(tmp_path / "formulas.xlsx")
    res = runner.invoke(app, ["inspect", str(path)])
    assert res.exit_code == 2
    assert res.stderr == (
        f"ttsp: error: {path}, column \"E'' (MPa)\", row 2: the cell holds the formula '=C2/10' "
        f"but the workbook stores no value for it (4 such cells in the columns ttsp reads); open "
        f"and save the workbook in a spreadsheet program so that its values are computed, or "
        f"paste the values in place of the formulas\n")


def test_formulas_in_a_column_ttsp_does_not_read_are_no_obstacle(tmp_path):
    path = _formula_workbook(tmp_path / "notes.xlsx", formula_column="Remark")
    assert read_campaign(path).n_points == 4


def test_a_sheet_too_wide_is_refused_in_seconds(tmp_path):
    """Cells far to the right on many rows: the cells read are counted, not the rows."""
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["Temp (°C)", "Freq (Hz)", "E' (MPa)"])
    for r in range(2, 2001):
        sheet.cell(row=r, column=16384, value=1)
    path = tmp_path / "wide.xlsx"
    book.save(path)
    t0 = time.perf_counter()
    with pytest.raises(DataError, match=r"wide\.xlsx: the sheet 'Sheet' holds more than 16,000 "
                                        r"cells \(its used range is A1:XFD2000; a stray cell"):
        read_campaign(path, max_points=1000)
    assert time.perf_counter() - t0 < 20
