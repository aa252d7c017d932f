"""Readers for the files people have (ttsp.io.readers): delimiters, decimal marks, encodings,
.xlsx, preambles, long format and one file per isotherm, grouping, explicit mapping, and one
clear error (file, column, first bad row) for each bad input.

Every input is written by the test itself from a ground-truth table, so each test knows the SI
values to expect: T/K = t/°C + 273.15 (BIPM SI brochure), ω = 2π f (definition), 1 MPa = 1e6 Pa.
"""

import codecs
import math
import re
import warnings

import numpy as np
import pytest

from ttsp.exceptions import DataError, DroppedRowsWarning
from ttsp.io.readers import read_campaign, read_table

TWO_PI = 2.0 * math.pi
HEAD = ["Temp (°C)", "Freq (Hz)", "E' (MPa)", "E'' (MPa)"]
ROWS = [("20", "0.5", "100.5", "10.25"), ("20", "5", "200.5", "20.25"),
        ("40", "0.5", "50.5", "5.25"), ("40", "5", "100.5", "10.25")]


def render(delimiter=",", decimal_comma=False, head=HEAD, rows=ROWS, preamble=""):
    def cell(c):
        return c.replace(".", ",") if decimal_comma else c
    lines = [delimiter.join(head)] + [delimiter.join(cell(c) for c in r) for r in rows]
    return preamble + "\n".join(lines) + "\n"


def write(folder, name, text, encoding="utf-8"):
    path = folder / name
    path.write_bytes(text.encode(encoding))
    return path


def assert_ground_truth(c):
    """The campaign of ROWS: 20 and 40 °C, 0.5 and 5 Hz, E' and E'' in MPa."""
    assert c.domain == "frequency" and c.modulus_kind == "tensile" and len(c) == 2
    # exact: 20 + 273.15 is one addition, the same one the test does
    np.testing.assert_allclose(c.temperatures_K, [293.15, 313.15], rtol=0, atol=1e-12)
    lo, hi = c.isotherms
    for iso in (lo, hi):
        np.testing.assert_allclose(iso.x, TWO_PI * np.array([0.5, 5.0]), rtol=1e-15)
    np.testing.assert_allclose(lo.values["storage_modulus_Pa"], [100.5e6, 200.5e6], rtol=1e-15)
    np.testing.assert_allclose(lo.values["loss_modulus_Pa"], [10.25e6, 20.25e6], rtol=1e-15)
    np.testing.assert_allclose(hi.values["storage_modulus_Pa"], [50.5e6, 100.5e6], rtol=1e-15)
    np.testing.assert_allclose(hi.values["loss_modulus_Pa"], [5.25e6, 10.25e6], rtol=1e-15)


# ---- delimiters, decimal marks --------------------------------------------------------------
@pytest.mark.parametrize("delimiter, decimal_comma", [
    (",", False), (";", False), ("\t", False), ("  ", False), (" ", False),
    (";", True), ("\t", True), ("   ", True),
])
def test_delimiters_and_decimal_comma(tmp_path, delimiter, decimal_comma):
    c = read_campaign(write(tmp_path, "data.csv", render(delimiter, decimal_comma)))
    assert_ground_truth(c)


def test_decimal_comma_is_detected(tmp_path):
    table = read_table(write(tmp_path, "d.csv", render(";", decimal_comma=True)))
    assert table.decimal_comma
    table = read_table(write(tmp_path, "p.csv", render(";")))
    assert not table.decimal_comma


def test_whitespace_header_with_spaces_inside_names(tmp_path):
    # one space everywhere: "T (C) f (Hz) E' (MPa) tan δ" is 9 words for 4 columns
    text = render(" ", head=["T (C)", "f (Hz)", "E' (MPa)", "tan δ"],
                  rows=[("20", "0.5", "100.5", "0.1"), ("20", "5", "200.5", "0.1"),
                        ("40", "0.5", "50.5", "0.1"), ("40", "5", "100.5", "0.1")])
    c = read_campaign(write(tmp_path, "ws.txt", text))
    assert dict(c.units_as_read) == {"T (C)": "C", "f (Hz)": "Hz", "E' (MPa)": "MPa", "tan δ": "-"}
    np.testing.assert_allclose(c.isotherms[0].values["storage_modulus_Pa"], [100.5e6, 200.5e6])


def test_quoted_csv_cells(tmp_path):
    text = '"Temperature, °C","Frequency, Hz","E\' (MPa)","E\'\' (MPa)"\n' + "\n".join(
        ",".join(f'"{x}"' for x in r) for r in ROWS) + "\n"
    assert_ground_truth(read_campaign(write(tmp_path, "q.csv", text)))


@pytest.mark.parametrize("delimiter, units", [
    (",", ["°C", "Hz", "MPa", "MPa"]),
    ("\t", ["[°C]", "[Hz]", "[MPa]", "[MPa]"]),
    (";", ["(°C)", "(Hz)", "(MPa)", "(MPa)"]),
])
def test_units_on_a_line_of_their_own(tmp_path, delimiter, units):
    # a two-line header (names, then units) as some instruments export it
    head = ["Temperature", "Frequency", "Storage modulus", "Loss modulus"]
    text = render(delimiter, head=head).replace("\n", "\n" + delimiter.join(units) + "\n", 1)
    c = read_campaign(write(tmp_path, "two_line.csv", "Operator: x\n" + text))
    assert_ground_truth(c)
    assert c.units_as_read["Storage modulus (MPa)"] == "MPa"
    assert c.isotherms[0].source_rows.tolist() == [4, 5]
    assert dict(c.metadata) == {"Operator": "x"}


def test_windows_line_endings(tmp_path):
    path = tmp_path / "crlf.csv"
    path.write_bytes(render().replace("\n", "\r\n").encode())
    assert_ground_truth(read_campaign(path))


# ---- encodings ------------------------------------------------------------------------------
def test_utf8_bom(tmp_path):
    path = tmp_path / "bom.csv"
    path.write_bytes(codecs.BOM_UTF8 + render().encode("utf-8"))
    c = read_campaign(path)
    assert_ground_truth(c)
    assert "Temp (°C)" in c.units_as_read       # the BOM is not glued to the first name


def test_latin1_degree_sign(tmp_path):
    path = write(tmp_path, "latin1.csv", render(preamble="Operator: Müller\n"), encoding="latin-1")
    assert b"\xb0C" in path.read_bytes() and b"\xc2\xb0" not in path.read_bytes()
    c = read_campaign(path)
    assert_ground_truth(c)
    assert c.units_as_read["Temp (°C)"] == "°C"
    assert c.metadata["Operator"] == "Müller"


def test_windows_1252_punctuation(tmp_path):
    path = write(tmp_path, "cp.csv", render(preamble="Material: PU – batch 7\n"), encoding="cp1252")
    assert read_campaign(path).metadata["Material"] == "PU – batch 7"


@pytest.mark.parametrize("encoding", ["utf-16", "utf-16-le", "utf-16-be"])
def test_utf16(tmp_path, encoding):
    # "utf-16" writes a BOM; the -le/-be variants have none and are recognised by their zeros
    assert_ground_truth(read_campaign(write(tmp_path, "u16.csv", render("\t"), encoding)))


# ---- .xlsx ----------------------------------------------------------------------------------
def make_workbook(path):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    notes = book.active
    notes.title = "Notes"
    notes.append(["Operator", "A. N. Other"])
    data = book.create_sheet("Data")
    data.append(["Material: test compound"])
    data.append([])
    data.append(HEAD)
    for r in ROWS:
        data.append([float(x) for x in r])
    first = openpyxl.Workbook()
    sheet = first.active
    sheet.append(HEAD)
    for r in ROWS:
        sheet.append([float(x) for x in r])
    book.save(path / "two_sheets.xlsx")
    first.save(path / "one_sheet.xlsx")


def test_xlsx_first_and_named_sheet(tmp_path):
    make_workbook(tmp_path)
    assert_ground_truth(read_campaign(tmp_path / "one_sheet.xlsx"))
    c = read_campaign(tmp_path / "two_sheets.xlsx", sheet="Data")
    assert_ground_truth(c)
    assert c.metadata["Material"] == "test compound"
    assert_ground_truth(read_campaign(tmp_path / "two_sheets.xlsx", sheet=1))


def test_xlsx_first_sheet_is_the_default(tmp_path):
    make_workbook(tmp_path)
    # the first sheet holds notes only: the message names the sheets and the option (issue 16)
    with pytest.raises(DataError, match=r"two_sheets\.xlsx: the first sheet \('Notes'\) holds no "
                                        r"data rows; the workbook's sheets are 'Notes', 'Data': "
                                        r"choose one with --sheet \(sheet= in Python\)$"):
        read_campaign(tmp_path / "two_sheets.xlsx")


def test_xlsx_bad_sheet(tmp_path):
    make_workbook(tmp_path)
    with pytest.raises(DataError, match=r"two_sheets\.xlsx: sheet must be one of Notes, Data; got 'Nope'"):
        read_campaign(tmp_path / "two_sheets.xlsx", sheet="Nope")
    with pytest.raises(DataError, match=r"sheet must be a number from 0 to 1 or one of Notes, Data; got 5"):
        read_campaign(tmp_path / "two_sheets.xlsx", sheet=5)


def test_not_a_workbook(tmp_path):
    path = write(tmp_path, "fake.xlsx", render())
    with pytest.raises(DataError, match=r"fake\.xlsx: not a readable \.xlsx workbook"):
        read_campaign(path)


# ---- preamble, dropped rows -----------------------------------------------------------------
def test_preamble_is_kept_as_metadata(tmp_path):
    pre = ("# exported by a test\nMaterial: damping compound\nOperator = J. Doe\n"
           "Strain;0.05 %\nfree text line\n\n")
    c = read_campaign(write(tmp_path, "pre.csv", render(preamble=pre)))
    assert_ground_truth(c)
    md = dict(c.metadata)
    assert md["Material"] == "damping compound"
    assert md["Operator"] == "J. Doe"
    assert md["Strain"] == "0.05 %"
    assert md["line 1"] == "# exported by a test"
    assert md["line 5"] == "free text line"


def test_blank_trailing_rows_are_counted_and_warned(tmp_path):
    path = write(tmp_path, "trail.csv", render() + "\n\n,,,\n")
    with pytest.warns(DroppedRowsWarning, match=r"trail\.csv: left out 3 blank lines"):
        c = read_campaign(path)
    assert dict(c.dropped_rows) == {"blank lines": 3}
    assert_ground_truth(c)


def test_comment_rows_are_counted(tmp_path):
    text = render().replace("20,5,", "# skipped\n20,5,", 1)
    with pytest.warns(DroppedRowsWarning, match=r"left out 1 comment lines"):
        c = read_campaign(write(tmp_path, "comment.csv", text))
    assert dict(c.dropped_rows) == {"comment lines": 1}


def test_no_warning_when_nothing_is_dropped(tmp_path):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        c = read_campaign(write(tmp_path, "clean.csv", render()))
    assert dict(c.dropped_rows) == {}


# ---- source rows ----------------------------------------------------------------------------
def test_source_rows_are_file_lines(tmp_path):
    c = read_campaign(write(tmp_path, "rows.csv", render(preamble="Material: x\n\n")))
    # header on line 3, data on lines 4-7
    assert c.isotherms[0].source_rows.tolist() == [4, 5]
    assert c.isotherms[1].source_rows.tolist() == [6, 7]


# ---- one file per isotherm ------------------------------------------------------------------
SWEEP = "Freq (Hz),E' (MPa)\n0.5,100\n5,200\n"


def test_temperature_from_a_column_in_each_file(tmp_path):
    a = write(tmp_path, "a.csv", "T (K),Freq (Hz),E' (MPa)\n300,0.5,100\n300,5,200\n")
    b = write(tmp_path, "b.csv", "T (K),Freq (Hz),E' (MPa)\n320,0.5,50\n320,5,100\n")
    c = read_campaign([a, b])
    np.testing.assert_allclose(c.temperatures_K, [300.0, 320.0])
    assert c.isotherms[0].source_rows.tolist() == [2, 3]


@pytest.mark.parametrize("line, celsius", [
    ("Temperature: 35 °C", 35.0),
    ("Temperature: 35 ± 0.1 °C", 35.0),
    ("Temp = -12.5", -12.5),                     # no unit: °C
    ("Temperature (K): 308.15", 35.0),
    ("T: 95 °F", 35.0),                          # (95 + 459.67)·5/9 - 273.15 = 35
    ("Temperature;35", 35.0),
    ("# Test temperature: 35 C", 35.0),
])
def test_temperature_from_the_preamble(tmp_path, line, celsius):
    a = write(tmp_path, "first.csv", line + "\n" + SWEEP)
    b = write(tmp_path, "second.csv", "Temperature: 60 °C\n" + SWEEP)
    c = read_campaign([a, b])
    assert c.temperatures_C[0] == pytest.approx(celsius, abs=1e-9)
    assert c.temperatures_C[1] == pytest.approx(60.0, abs=1e-12)


def test_preamble_lines_that_are_not_a_temperature_are_passed_over(tmp_path):
    a = write(tmp_path, "a.csv", "Temperature rate: 2 K/min\nTemperature: 35 °C\n" + SWEEP)
    b = write(tmp_path, "b.csv", "Temperature: 60 °C\n" + SWEEP)
    np.testing.assert_allclose(read_campaign([a, b]).temperatures_C, [35.0, 60.0])


def test_a_plain_temperature_key_wins_over_others(tmp_path):
    a = write(tmp_path, "a.csv", "Oven temperature: 36 °C\nTemperature: 35 °C\n" + SWEEP)
    b = write(tmp_path, "b.csv", "Temperature: 60 °C\n" + SWEEP)
    np.testing.assert_allclose(read_campaign([a, b]).temperatures_C, [35.0, 60.0])


@pytest.mark.parametrize("name, celsius", [
    ("sweep_35C.csv", 35.0),
    ("iso_-20C.txt", -20.0),
    ("T_85.5C.csv", 85.5),
    ("T85p5C.csv", 85.5),
    ("run3_T45C_2024.csv", 45.0),
    ("sample-25C.csv", 25.0),        # a hyphen after a letter is a separator, not a minus
    ("-10C.csv", -10.0),
    ("relax_300K.csv", 300.0 - 273.15),
    ("x_95F.csv", 35.0),
    ("iso_40degC.csv", 40.0),
])
def test_temperature_from_the_file_name(tmp_path, name, celsius):
    a = write(tmp_path, name, SWEEP)
    b = write(tmp_path, "other_150C.csv", SWEEP)
    c = read_campaign([a, b])
    assert c.temperatures_C[0] == pytest.approx(celsius, abs=1e-9)


def test_temperature_given_explicitly(tmp_path):
    plain = write(tmp_path, "plain.csv", SWEEP)
    named = write(tmp_path, "sweep_80C.csv", SWEEP)
    # a number: for the files that state no temperature only
    np.testing.assert_allclose(read_campaign([plain, named], temperature_C=50.0).temperatures_C,
                               [50.0, 80.0])
    # a mapping by file name or path: before what the file says
    c = read_campaign([plain, named], temperature_C={"plain.csv": 10.0, named: 30.0})
    np.testing.assert_allclose(c.temperatures_C, [10.0, 30.0])
    with pytest.raises(DataError, match=r"plain\.csv: temperature_C must be a number in °C; "
                                        r"got 'warm'"):
        read_campaign([plain, named], temperature_C="warm")


def test_folder_as_input(tmp_path):
    folder = tmp_path / "sweeps"
    folder.mkdir()
    for t in (-20, 0, 20):
        write(folder, f"sweep_{t}C.csv", SWEEP)
    write(folder, "README.md", "not data")            # ignored: not a table suffix
    write(folder, ".hidden.csv", "junk")               # ignored: hidden
    c = read_campaign(folder)
    np.testing.assert_allclose(c.temperatures_C, [-20.0, 0.0, 20.0], atol=1e-12)
    assert c.source.startswith("3 files in")
    assert set(c.metadata) == set()


def test_several_files_and_a_folder_together(tmp_path):
    folder = tmp_path / "more"
    folder.mkdir()
    write(folder, "sweep_40C.csv", SWEEP)
    one = write(tmp_path, "sweep_20C.csv", SWEEP)
    c = read_campaign([one, folder])
    np.testing.assert_allclose(c.temperatures_C, [20.0, 40.0], atol=1e-12)


# ---- grouping -------------------------------------------------------------------------------
GROUPING = ("Temp (°C),Freq (Hz),E' (MPa)\n24.9,0.5,100\n25.1,5,200\n40,0.5,50\n40,5,100\n")


def test_grouping_within_the_default_tolerance(tmp_path):
    c = read_campaign(write(tmp_path, "g.csv", GROUPING))
    assert len(c) == 2
    assert c.temperatures_C[0] == pytest.approx(25.0, abs=1e-9)   # mean of 24.9 and 25.1
    assert c.isotherms[0].n_points == 2


def test_grouping_tolerance_is_configurable(tmp_path):
    c = read_campaign(write(tmp_path, "g.csv", GROUPING), temperature_tolerance_K=0.05)
    np.testing.assert_allclose(c.temperatures_C, [24.9, 25.1, 40.0], atol=1e-9)


# ---- explicit mapping and unit override -----------------------------------------------------
def test_explicit_column_mapping_and_units(tmp_path):
    text = "Tc,Rate,Mod1,Other\n20,0.5,100.5,1\n20,5,200.5,1\n40,0.5,50.5,1\n40,5,100.5,1\n"
    path = write(tmp_path, "odd.csv", text)
    c = read_campaign(path, columns={"Tc": "temperature_K", "Rate": "frequency_rad_s",
                                     "Mod1": "storage_modulus_Pa"},
                      units={"Tc": "°C", "Rate": "Hz", "Mod1": "MPa"})
    np.testing.assert_allclose(c.isotherms[0].values["storage_modulus_Pa"], [100.5e6, 200.5e6])
    np.testing.assert_allclose(c.isotherms[0].x, TWO_PI * np.array([0.5, 5.0]))
    assert c.quantities == ("storage_modulus_Pa",)


def test_unit_override_by_role_and_by_header(tmp_path):
    path = write(tmp_path, "f.csv", render())
    # by role: the temperature column is in °F after all (20 °F = -6.666... °C)
    c = read_campaign(path, units={"temperature_K": "°F"})
    np.testing.assert_allclose(c.temperatures_K, [(20 + 459.67) * 5 / 9, (40 + 459.67) * 5 / 9])
    # by header: E' was in GPa, not MPa
    c = read_campaign(path, units={"E' (MPa)": "GPa"})
    np.testing.assert_allclose(c.isotherms[0].values["storage_modulus_Pa"], [100.5e9, 200.5e9])
    assert c.units_as_read["E' (MPa)"] == "GPa"


def test_mapping_overrides_detection(tmp_path):
    # two temperature-like columns: map the one to use, the other gives way
    text = "Temp (°C),T set (°C),Freq (Hz),E' (MPa)\n20,21,0.5,1\n20,21,5,2\n40,41,0.5,1\n40,41,5,2\n"
    c = read_campaign(write(tmp_path, "two.csv", text), columns={"T set (°C)": "temperature_K"})
    np.testing.assert_allclose(c.temperatures_C, [21.0, 41.0], atol=1e-12)


def test_bare_e_in_a_relaxation_file(tmp_path):
    text = "Temp (°C),time (min),E (MPa)\n20,1,100\n20,10,90\n40,1,50\n40,10,40\n"
    c = read_campaign(write(tmp_path, "relax.csv", text))
    assert c.domain == "time" and c.quantities == ("relaxation_modulus_Pa",)
    np.testing.assert_allclose(c.isotherms[0].x, [60.0, 600.0])


def test_shear_creep_in_hours(tmp_path):
    text = "T [K],t (h),J(t) (1/GPa)\n300,1,2\n300,2,3\n320,1,4\n320,2,5\n"
    c = read_campaign(write(tmp_path, "creep.dat", text))
    assert (c.domain, c.modulus_kind) == ("time", "shear")
    np.testing.assert_allclose(c.isotherms[0].x, [3600.0, 7200.0])
    np.testing.assert_allclose(c.isotherms[0].values["creep_compliance_1_per_Pa"], [2e-9, 3e-9])


# ---- errors: file, column, first bad row -----------------------------------------------------
H = "Temp (°C),Freq (Hz),E' (MPa)\n"
OK = "20,0.5,100\n20,5,200\n40,0.5,50\n40,5,100\n"


@pytest.mark.parametrize("text, message", [
    # a missing required column
    ("Temp (°C),E' (MPa)\n20,1\n40,2\n",
     r"bad\.csv: missing a frequency or time column; columns found: Temp \(°C\), E' \(MPa\)"),
    ("Freq (Hz),E' (MPa)\n1,100\n10,200\n",
     r"bad\.csv: missing a temperature: no temperature column"),
    ("Temp (°C),Freq (Hz),Force (N)\n20,1,1\n20,10,2\n40,1,1\n40,10,2\n",
     r"bad\.csv: no measured material function found: need at least one of storage_modulus_Pa"),
    # a non-numeric cell
    # (a word without digits in one row is skipped and listed: test_text_rows_are_skipped...)
    (H + "20,0.5,100\n20,5,5x\n40,0.5,50\n40,5,100\n",
     r"bad\.csv, column \"E' \(MPa\)\", row 3: value must be a number; got '5x'"),
    (H + "20,0.5,5x\n20,5,100\n40,0.5,50\n40,5,100\n",        # even in the first data row
     r"bad\.csv, column \"E' \(MPa\)\", row 2: value must be a number; got '5x'"),
    # a column that is half or more text is not a number column with flagged rows
    (H + "20,0.5,abc\n20,5,abc\n40,0.5,50\n40,5,100\n",
     r"bad\.csv, column \"E' \(MPa\)\", row 2: value must be a number; got 'abc', and 2 of "
     r"the column's 4 cells are text without a number: is this a column of numbers\?"),
    # nor is a table where half the rows hold text somewhere
    (H + "20,0.5,high\n20,low,100\n40,0.5,50\n40,5,100\n",
     r"bad\.csv, column \"E' \(MPa\)\", row 2: value must be a number; got 'high', and 2 of the "
     r"4 data rows hold text in a number column: is this a table of numbers\?"),
    (H + "20,0.5,100\n20,,200\n40,0.5,50\n40,5,100\n",
     r"bad\.csv, column 'Freq \(Hz\)', row 3: value must be a number; got an empty cell"),
    # NaN
    (H + "20,0.5,100\n20,5,NaN\n40,0.5,50\n40,5,100\n",
     r"bad\.csv, column \"E' \(MPa\)\", row 3: value must be a finite number; got nan"),
    (H + "20,0.5,100\n20,5,\n40,0.5,50\n40,5,100\n",
     r"bad\.csv, column \"E' \(MPa\)\", row 3: value must be a finite number; got nan"),
    # a non-positive modulus (shown in the unit as read)
    (H + "20,0.5,100\n20,5,-3\n40,0.5,50\n40,5,100\n",
     r"bad\.csv, column \"E' \(MPa\)\", row 3: value must be positive \(it is taken in a "
     r"logarithm\); got -3 MPa"),
    (H + "20,0.5,100\n20,5,200\n40,0,50\n40,5,100\n",
     r"bad\.csv, column 'Freq \(Hz\)', row 4: value must be positive .*; got 0 Hz"),
    ("T (K),Freq (Hz),E' (MPa)\n300,0.5,1\n300,5,2\n0,0.5,1\n0,5,2\n",
     r"bad\.csv, column 'T \(K\)', row 4: value must be above absolute zero; got 0 K"),
    # an unknown unit
    ("Temp (°C),Freq (Hz),E' (bar)\n" + OK,
     r"bad\.csv, column \"E' \(bar\)\": unit must be one of .*; got 'bar'"),
    ("Temp (°C),Freq (Hz),E' (Hz)\n" + OK,
     r"bad\.csv, column \"E' \(Hz\)\": unit must be a modulus unit; got 'Hz'"),
    # duplicate points
    (H + "20,0.5,100\n20,5,200\n40,0.5,50\n40,0.5,100\n",
     r"bad\.csv, column 'Freq \(Hz\)', row 5: duplicate point: the same frequency 0.5 Hz at the "
     r"same temperature as row 4"),
    # only one isotherm
    (H + "20,0.5,100\n20,5,200\n",
     r"bad\.csv, column 'Temp \(°C\)': superposition needs at least 2 isotherms; found 1 "
     r"\(20 °C\)"),
    # header with no rows
    (H, r"bad\.csv: no data rows"),
    ("Material: x\n" + H + "\n\n", r"bad\.csv: no data rows"),
    # numbers with no header above them
    (OK, r"bad\.csv: no header row: the first line with numbers \(line 1\)"),
    # more values than names
    (H + "20,0.5,100,7\n20,5,200,7\n40,0.5,50,7\n40,5,100,7\n",
     r"bad\.csv, row 2: the row has 4 values but the header names 3 columns; got '7'"),
    # two columns for one role; tensile and shear mixed
    ("Temp (°C),T (K),Freq (Hz),E' (MPa)\n20,293,0.5,1\n20,293,5,2\n40,313,0.5,1\n40,313,5,2\n",
     r"bad\.csv, column 'T \(K\)': two columns mean temperature_K: 'Temp \(°C\)' and 'T \(K\)'"),
    ("Temp (°C),Freq (Hz),E' (MPa),G'' (MPa)\n20,1,1,1\n20,10,2,1\n40,1,1,1\n40,10,2,1\n",
     r"bad\.csv: the columns mix tensile \(E, D\) and shear \(G, J\) symbols"),
    # a function of the other domain
    ("Temp (°C),time (s),E' (MPa)\n" + OK,
     r"bad\.csv, column \"E' \(MPa\)\": storage modulus does not belong to time-domain data"),
    # preamble temperature that cannot be read / that contradicts itself
    ("Temperature: warm\nFreq (Hz),E' (MPa)\n1,1\n10,2\n",
     r"bad\.csv: preamble line 'Temperature': temperature must be a number with a unit"),
    ("Oven temp: 35 °C\nSample temp: 36 °C\nFreq (Hz),E' (MPa)\n1,1\n10,2\n",
     r"bad\.csv: the preamble gives more than one temperature"),
])
def test_bad_input_names_file_column_and_row(tmp_path, text, message):
    path = write(tmp_path, "bad.csv", text)
    with pytest.raises(DataError, match=message) as info:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DroppedRowsWarning)
            read_campaign(path)
    assert "\n" not in str(info.value)          # one line
    assert str(path) in str(info.value)         # the full path, not only the name


def test_empty_file(tmp_path):
    for name, data in (("empty.csv", b""), ("blank.csv", b"  \n\n\t\n")):
        path = tmp_path / name
        path.write_bytes(data)
        with pytest.raises(DataError, match=rf"{name}: the file is empty"):
            read_campaign(path)


def test_garbage_bytes(tmp_path):
    rng = np.random.default_rng(7)
    with_nul = tmp_path / "with_nul.csv"
    with_nul.write_bytes(bytes(range(256)) * 8)
    high = tmp_path / "high.csv"
    high.write_bytes(bytes(rng.integers(1, 32, 4000, dtype=np.uint8)))
    with pytest.raises(DataError, match=r"with_nul\.csv: not a text table"):
        read_campaign(with_nul)
    with pytest.raises(DataError, match=r"high\.csv: not a text table: most bytes are not printable"):
        read_campaign(high)


def test_whitespace_header_that_cannot_be_fitted(tmp_path):
    text = "Temp Freq\n20 0.5 100\n20 5 200\n40 0.5 50\n40 5 100\n"
    with pytest.raises(DataError, match=r"ws\.txt, row 1: the header has 2 words \(Temp \| Freq\) "
                                        r"but the data rows have 3 columns"):
        read_campaign(write(tmp_path, "ws.txt", text))


def test_duplicate_across_files_names_both_files(tmp_path):
    a = write(tmp_path, "sweep_35C.csv", SWEEP)
    b = write(tmp_path, "sweep_35.2C.csv", SWEEP)   # within 0.5 K: the same isotherm
    c_ = write(tmp_path, "sweep_60C.csv", SWEEP)
    # the later file's row is the duplicate; the earlier one is named as the first occurrence
    with pytest.raises(DataError, match=r"sweep_35\.2C\.csv, column 'Freq \(Hz\)', row 2: "
                                        r"duplicate point: the same frequency 0.5 Hz at the same "
                                        r"temperature as row 2 of .*sweep_35C\.csv$"):
        read_campaign([a, b, c_])


def test_one_file_per_isotherm_needs_a_temperature(tmp_path):
    a = write(tmp_path, "plain.csv", SWEEP)
    b = write(tmp_path, "a_20C_30C.csv", SWEEP)     # two candidates in a name: ambiguous
    for p in (a, b):
        with pytest.raises(DataError, match=rf"{p.name}: missing a temperature: .* columns found: "
                                            r"Freq \(Hz\), E' \(MPa\)"):
            read_campaign([p, write(tmp_path, "sweep_80C.csv", SWEEP)])


def test_mixed_domains_and_kinds_across_files(tmp_path):
    f = write(tmp_path, "f_20C.csv", SWEEP)
    t = write(tmp_path, "t_40C.csv", "time (s),E(t) (MPa)\n1,1\n10,2\n")
    g = write(tmp_path, "g_40C.csv", "Freq (Hz),G' (MPa)\n0.5,1\n5,2\n")
    # each message names the two files (issue 17, point 10: some messages named no file)
    with pytest.raises(DataError, match=rf"^{re.escape(str(t))}: a time-domain test, but "
                                        rf"{re.escape(str(f))} holds frequency sweeps: the files "
                                        r"mix the two; read them separately$"):
        read_campaign([f, t])
    with pytest.raises(DataError, match=rf"^{re.escape(str(g))}: shear \(G, J\) data, but "
                                        rf"{re.escape(str(f))} holds tensile \(E, D\) data: the "
                                        r"files mix the two; give the modulus kind"):
        read_campaign([f, g])


def test_option_errors(tmp_path):
    path = write(tmp_path, "ok.csv", render())
    with pytest.raises(DataError, match=r"column mapping for \"E' \(MPa\)\" must name one of .*; "
                                        r"got 'modulus'"):
        read_campaign(path, columns={"E' (MPa)": "modulus"})
    with pytest.raises(DataError, match=r"ok\.csv: mapped column 'Mod' is not in the header; "
                                        r"columns found: Temp"):
        read_campaign(path, columns={"Mod": "storage_modulus_Pa"})
    with pytest.raises(DataError, match=r"ok\.csv: unit override for 'E \(MPa\)' must name a "
                                        r"column header or a role"):
        read_campaign(path, units={"E (MPa)": "GPa"})
    with pytest.raises(DataError, match=r"ok\.csv, column \"E' \(MPa\)\": unit must be one of"):
        read_campaign(path, units={"E' (MPa)": "bar"})
    with pytest.raises(DataError, match=r"temperature_tolerance_K must be non-negative and finite; "
                                        r"got -1"):
        read_campaign(path, temperature_tolerance_K=-1)


def test_path_errors(tmp_path):
    empty = tmp_path / "empty_folder"
    empty.mkdir()
    with pytest.raises(DataError, match=r"nope\.csv: no such file"):
        read_campaign(tmp_path / "nope.csv")
    with pytest.raises(DataError, match=r"empty_folder: the folder holds no data files"):
        read_campaign(empty)
    with pytest.raises(DataError, match=r"empty_folder: is a folder, not a file"):
        read_table(empty)
    with pytest.raises(DataError, match=r"no input files given"):
        read_campaign([])


def test_input_file_is_not_modified(tmp_path):
    path = write(tmp_path, "keep.csv", render())
    before = path.read_bytes()
    read_campaign(path)
    assert path.read_bytes() == before


def test_messages_are_single_lines_without_numpy_reprs(tmp_path):
    path = write(tmp_path, "nan.csv", H + "20,0.5,100\n20,5,nan\n40,0.5,50\n40,5,100\n")
    with pytest.raises(DataError) as info:
        read_campaign(path)
    assert not re.search(r"np\.|float64", str(info.value))
