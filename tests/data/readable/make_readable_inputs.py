"""Write the files that ttsp reads although they are not clean tables (issue 16).

Each file is a small invented campaign of two isotherms (20 and 40 °C, two frequencies) written
the way an instrument or a colleague might write it; ``catalogue.csv`` beside it gives, for
each, the options it is read with, what ttsp must read from it and the rows it must skip and
list. ``tests/test_readable_inputs.py`` checks every row. Rebuild with
``python tests/data/readable/make_readable_inputs.py`` (the workbooks need openpyxl).
"""

from __future__ import annotations

from pathlib import Path

HERE = Path(__file__).resolve().parent
H = "Temp (°C),Freq (Hz),E' (MPa)\n"
OK = "20,0.5,100\n20,5,200\n40,0.5,50\n40,5,100\n"
ROWS = [(20, 0.5, 100), (20, 5, 200), (40, 0.5, 50), (40, 5, 100)]

TEXT = {
    # names, then a line of units; decimal commas; a footer line after the data
    "units_row_and_footer.csv": ("Temperature;Frequency;E';E''\n°C;Hz;MPa;MPa\n20;0,5;100;10\n"
                                 "20;5;200;20\n40;0,5;50;5\n40;5;100;10\nEnd of data\n"),
    # an instrument's word in place of a value it could not measure
    "overload_in_a_cell.csv": H + "20,0.5,100\n20,5,overload\n20,50,300\n40,0.5,50\n40,5,100\n",
    # an angular frequency is in rad/s by definition, with or without a unit
    "angular_frequency_without_unit.csv": "Temp (°C),angular frequency,E' (MPa)\n" + OK,
    # one file per isotherm, the temperature in the name without a unit letter
    "numbers_in_names/sweep_20.csv": "Freq (Hz),E' (MPa)\n0.5,100\n5,200\n",
    "numbers_in_names/sweep_40.csv": "Freq (Hz),E' (MPa)\n0.5,50\n5,100\n",
}


def _workbooks() -> None:
    import openpyxl

    book = openpyxl.Workbook()
    book.active.title = "Notes"
    book.active["A1"] = "Campaign notes: the data are on the second sheet."
    data = book.create_sheet("Data")
    data.append(["Temp (°C)", "Freq (Hz)", "E' (MPa)"])
    for row in ROWS:
        data.append(list(row))
    book.save(HERE / "data_on_second_sheet.xlsx")

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["Temp (°C)", "Freq (Hz)", "E' (MPa)"])
    for row in ROWS:
        sheet.append(list(row))
    sheet["XFD1000000"] = "x"    # one stray cell: the used range becomes 1.6e10 cells
    book.save(HERE / "stray_cell_far_away.xlsx")


def main() -> None:
    for name, text in TEXT.items():
        (HERE / name).parent.mkdir(exist_ok=True)
        (HERE / name).write_bytes(text.encode("utf-8"))
    _workbooks()


if __name__ == "__main__":
    main()
