"""Write the catalogue of bad inputs (one small file per case) into this folder.

The files are committed; this script documents how the binary ones were made and rebuilds them
all (``python tests/data/bad/make_bad_inputs.py``). Every case, its problem and the exact message
ttsp gives are listed in ``catalogue.csv`` beside it and in ``docs/bad_inputs.md``.
"""

from __future__ import annotations

import codecs
import io
import zipfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
H = "Temp (°C),Freq (Hz),E' (MPa)\n"
OK = "20,0.5,100\n20,5,200\n40,0.5,50\n40,5,100\n"

TEXT = {
    # ---- the file as a whole
    "blank_lines_only.csv": "  \n\n\t\n",
    "numbers_without_header.csv": OK,
    "header_only.csv": H,
    "one_column.csv": "Temperature\n20\n40\n",
    "whitespace_header_mismatch.txt": "Temp Freq\n20 0.5 100\n20 5 200\n40 0.5 50\n40 5 100\n",
    # ---- columns
    "no_frequency_or_time.csv": "Temp (°C),E' (MPa)\n20,100\n40,50\n",
    "no_temperature.csv": "Freq (Hz),E' (MPa)\n0.5,100\n5,200\n",
    "sweep_130.csv": "Freq (Hz),E' (MPa)\n0.5,100\n5,200\n",
    "no_material_function.csv": "Temp (°C),Freq (Hz),Force (N)\n20,0.5,1\n20,5,2\n40,0.5,1\n40,5,2\n",
    "duplicated_header.csv": ("Temp (°C),Freq (Hz),E' (MPa),E' (MPa)\n"
                              "20,0.5,100,101\n20,5,200,201\n40,0.5,50,51\n40,5,100,101\n"),
    "two_temperature_columns.csv": ("Temp (°C),T (K),Freq (Hz),E' (MPa)\n20,293.15,0.5,100\n"
                                    "20,293.15,5,200\n40,313.15,0.5,50\n40,313.15,5,100\n"),
    "tensile_and_shear.csv": ("Temp (°C),Freq (Hz),E' (MPa),G'' (MPa)\n20,0.5,100,10\n"
                              "20,5,200,20\n40,0.5,50,5\n40,5,100,10\n"),
    "modulus_in_time_domain.csv": "Temp (°C),time (s),E' (MPa)\n" + OK,
    "unknown_unit.csv": "Temp (°C),Freq (Hz),E' (bar)\n" + OK,
    "wrong_unit_kind.csv": "Temp (°C),Freq (Hz),E' (Hz)\n" + OK,
    "more_values_than_names.csv": H + "20,0.5,100,7\n20,5,200,7\n40,0.5,50,7\n40,5,100,7\n",
    "mixed_delimiters.csv": "Temp (°C);Freq (Hz);E' (MPa)\n20;0.5;100\n20;5;200\n40,0.5,50\n40;5;100\n",
    # ---- cells
    # (one word in a number column, as "overload", is skipped and listed: tests/data/readable)
    "mostly_text_column.csv": H + "20,0.5,100\n20,5,abc\n40,0.5,high\n40,5,100\n",
    "empty_frequency_cell.csv": H + "20,0.5,100\n20,,200\n40,0.5,50\n40,5,100\n",
    "nan_modulus.csv": H + "20,0.5,100\n20,5,NaN\n40,0.5,50\n40,5,100\n",
    "infinite_modulus.csv": H + "20,0.5,100\n20,5,inf\n40,0.5,50\n40,5,100\n",
    "number_too_large.csv": H + "20,0.5,100\n20,5,1e400\n40,0.5,50\n40,5,100\n",
    "too_large_after_unit.csv": H + "20,0.5,100\n20,5,1e308\n40,0.5,50\n40,5,100\n",
    "negative_modulus.csv": H + "20,0.5,100\n20,5,-3\n40,0.5,50\n40,5,100\n",
    "negative_zero_modulus.csv": H + "20,0.5,100\n20,5,-0\n40,0.5,50\n40,5,100\n",
    "zero_frequency.csv": H + "20,0.5,100\n20,5,200\n40,0,50\n40,5,100\n",
    "below_absolute_zero.csv": H + "20,0.5,100\n20,5,200\n-300,0.5,50\n-300,5,100\n",
    "hexadecimal.csv": H + "20,0.5,100\n20,5,0x10\n40,0.5,50\n40,5,100\n",
    "unit_in_a_cell.csv": H + "20,0.5,100\n20,5,200 MPa\n40,0.5,50\n40,5,100\n",
    "thousands_separator_some_rows.csv": ('"Temp (°C)","Freq (Hz)","E\' (MPa)"\n"20","0.5","950.5"\n'
                                          '"20","5","1,234.5"\n"40","0.5","480.2"\n'
                                          '"40","5","990.0"\n'),
    "thousands_separator_every_row.csv": ("Temp (°C);Freq (Hz);E' (MPa)\n20;0,5;1.234,5\n"
                                          "20;5;2.000,1\n40;0,5;1.100,0\n40;5;1.500,0\n"),
    "thousands_or_decimal_comma.tsv": ("Temp (°C)\tFreq (Hz)\tE' (MPa)\n20\t1\t1,234\n"
                                       "20\t10\t2,000\n40\t1\t1,100\n40\t10\t1,500\n"),
    "thousands_dot_with_decimal_comma.csv": ("Temp (°C);Freq (Hz);E' (MPa)\n20;0,5;950\n"
                                             "20;5;1.234\n40;0,5;480\n40;5;990\n"),
    "truncated_row.csv": H + "20,0.5,100\n20,5,200\n40,0.5,50\n40,",
    # ---- rows and isotherms
    "duplicate_point.csv": H + "20,0.5,100\n20,5,200\n40,0.5,50\n40,0.5,100\n",
    "one_isotherm.csv": H + "20,0.5,100\n20,5,200\n",
    "partly_missing_function.csv": ("Temp (°C),Freq (Hz),E' (MPa),E'' (MPa)\n20,0.5,100,10\n"
                                    "20,5,200,\n40,0.5,50,5\n40,5,100,10\n"),
    # ---- preamble
    "unreadable_preamble_temperature.csv": "Temperature: warm\nFreq (Hz),E' (MPa)\n0.5,100\n5,200\n",
    "two_preamble_temperatures.csv": ("Oven temp: 35 °C\nSample temp: 36 °C\nFreq (Hz),E' (MPa)\n"
                                      "0.5,100\n5,200\n"),
    # ---- values beyond any material or test (1e300 crashed the fits)
    "modulus_beyond_any_material.csv": H + "20,0.5,100\n20,5,1e300\n40,0.5,50\n40,5,100\n",
    "temperature_beyond_any_test.csv": H + "20,0.5,100\n20,5,200\n1e300,0.5,50\n1e300,5,100\n",
    "tan_delta_only.csv": "Temp (°C),Freq (Hz),tan δ\n20,0.5,0.1\n20,5,0.2\n40,0.5,0.3\n40,5,0.4\n",
    # ---- size guard (read with TTSP_MAX_POINTS=10)
    "more_points_than_the_limit.csv": H + "".join(f"{t},{f},{100 + f}\n" for t in (20, 40)
                                                  for f in range(1, 7)),
}

BINARY = {
    "empty.csv": b"",
    "binary_with_nul_bytes.csv": bytes(range(256)) * 4,
    "control_characters.csv": bytes([1, 2, 3, 4, 5, 6, 7, 8, 14, 15, 16, 17, 18, 19]) * 64,
    "utf32_text.csv": codecs.BOM_UTF32_LE + (H + OK).encode("utf-32-le"),
    "bad_bytes_after_utf8_mark.csv": codecs.BOM_UTF8 + H.encode("utf-8") + b"20,0.5,\xff\xfe\n",
}


def _not_a_workbook() -> bytes:
    """A zip file with none of a workbook's parts: opens as a zip, fails as .xlsx."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        info = zipfile.ZipInfo("readme.txt", date_time=(2024, 1, 1, 0, 0, 0))
        z.writestr(info, "not a workbook")
    return buf.getvalue()


def _cell(ref: str, value) -> str:
    if isinstance(value, str) and value.startswith("="):   # a formula with no stored value
        return f'<c r="{ref}"><f>{value[1:]}</f></c>'
    if isinstance(value, str):
        return f'<c r="{ref}" t="inlineStr"><is><t>{value}</t></is></c>'
    return f'<c r="{ref}"><v>{value!r}</v></c>'


def _workbook(sheets: dict) -> bytes:
    """A minimal .xlsx written part by part (so its bytes are the same on every run): one
    worksheet per ``{title: rows}``, rows of numbers, strings and ``=formulas``."""
    ns = 'xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"'
    rel = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
    parts = {
        "[Content_Types].xml": (
            '<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats.'
            'org/package/2006/content-types"><Default Extension="rels" ContentType="application/'
            'vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType='
            '"application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/'
            'vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
            + "".join(f'<Override PartName="/xl/worksheets/sheet{k}.xml" ContentType="application/'
                      f'vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
                      for k in range(1, len(sheets) + 1)) + "</Types>"),
        "_rels/.rels": (
            '<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.'
            'openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="'
            f'{rel}/officeDocument" Target="xl/workbook.xml"/></Relationships>'),
        "xl/workbook.xml": (
            f'<?xml version="1.0" encoding="UTF-8"?><workbook {ns} xmlns:r="{rel}"><sheets>'
            + "".join(f'<sheet name="{title}" sheetId="{k}" r:id="rId{k}"/>'
                      for k, title in enumerate(sheets, 1)) + "</sheets></workbook>"),
        "xl/_rels/workbook.xml.rels": (
            '<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.'
            'openxmlformats.org/package/2006/relationships">'
            + "".join(f'<Relationship Id="rId{k}" Type="{rel}/worksheet" '
                      f'Target="worksheets/sheet{k}.xml"/>' for k in range(1, len(sheets) + 1))
            + "</Relationships>"),
    }
    for k, rows in enumerate(sheets.values(), 1):
        body = "".join(f'<row r="{i}">' + "".join(_cell(f"{'ABCDEFGH'[j]}{i}", v)
                                                  for j, v in enumerate(row)) + "</row>"
                       for i, row in enumerate(rows, 1))
        parts[f"xl/worksheets/sheet{k}.xml"] = (f'<?xml version="1.0" encoding="UTF-8"?>'
                                                f"<worksheet {ns}><sheetData>{body}</sheetData>"
                                                f"</worksheet>")
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        for name, text in parts.items():
            z.writestr(zipfile.ZipInfo(name, date_time=(2024, 1, 1, 0, 0, 0)), text)
    return buf.getvalue()


_TABLE = [["Temp (°C)", "Freq (Hz)", "E' (MPa)"], [20, 0.5, 100], [20, 5, 200], [40, 0.5, 50],
          [40, 5, 100]]
WORKBOOKS = {
    # the data are on the second sheet, and no --sheet was given
    "first_sheet_without_data.xlsx": {"Notes": [["data on the next sheet"]], "Data": _TABLE},
    # a column of formulas that no program computed: the workbook stores no value for them
    "formula_without_value.xlsx": {"Sheet1": [_TABLE[0] + ["E'' (MPa)"]] + [
        row + [f"=C{i}/10"] for i, row in enumerate(_TABLE[1:], 2)]},
}


def main() -> None:
    for name, text in TEXT.items():
        (HERE / name).write_bytes(text.encode("utf-8"))
    for name, data in BINARY.items():
        (HERE / name).write_bytes(data)
    (HERE / "not_a_workbook.xlsx").write_bytes(_not_a_workbook())
    for name, sheets in WORKBOOKS.items():
        (HERE / name).write_bytes(_workbook(sheets))
    folder = HERE / "folder_without_data_files"
    folder.mkdir(exist_ok=True)
    (folder / "notes.md").write_text("This folder holds no .csv, .txt, .xlsx ... file.\n",
                                     encoding="utf-8")


if __name__ == "__main__":
    main()
