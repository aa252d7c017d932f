"""`ttsp inspect` through typer's CliRunner: exit 0 and the isotherm table for good input;
exit 2 and exactly one line on stderr, naming the file, for each bad input; never a traceback."""

import pytest
from typer.testing import CliRunner

from ttsp.cli import app

runner = CliRunner()
HEAD = "Temp (°C),Freq (Hz),E' (MPa),E'' (MPa)\n"
GOOD = HEAD + "20,0.5,100,10\n20,5,200,20\n40,0.5,50,5\n40,5,100,10\n"


def write(folder, name, text):
    path = folder / name
    path.write_bytes(text.encode("utf-8"))
    return path


def test_inspect_shows_the_isotherm_table(tmp_path):
    path = write(tmp_path, "good.csv", GOOD + "\n\n")
    result = runner.invoke(app, ["inspect", str(path)])
    assert result.exit_code == 0, result.output
    out = result.stdout
    assert "isotherms: 2   points: 4" in out
    assert "E' (storage_modulus_Pa), E'' (loss_modulus_Pa)" in out
    assert "rows left out: 2 blank lines" in out
    # the table: T in °C, points, frequency range in Hz (converted back from rad/s)
    lines = [ln.split() for ln in out.splitlines()]
    assert ["20.00", "2", "0.5", "5"] in lines
    assert ["40.00", "2", "0.5", "5"] in lines
    assert result.stderr == ""


def test_inspect_folder_and_options(tmp_path):
    folder = tmp_path / "sweeps"
    folder.mkdir()
    for t in (20, 40, 60):
        write(folder, f"sweep_{t}C.csv", "Freq,Mod1\n0.5,100\n5,200\n")
    result = runner.invoke(app, ["inspect", str(folder), "--column", "Mod1=storage_modulus_Pa",
                                 "--unit", "Mod1=MPa", "--unit", "Freq=rad/s"])
    assert result.exit_code == 0, result.output
    assert "isotherms: 3" in result.stdout
    assert "Mod1 -> MPa" in result.stdout
    # 0.5 rad/s shown in Hz: 0.5 / 2π = 0.07958
    assert "0.07958" in result.stdout


def test_inspect_tolerance_option(tmp_path):
    path = write(tmp_path, "g.csv", "Temp (°C),Freq (Hz),E' (MPa)\n24.9,0.5,1\n25.1,5,2\n"
                                    "40,0.5,1\n40,5,2\n")
    assert "isotherms: 2" in runner.invoke(app, ["inspect", str(path)]).stdout
    result = runner.invoke(app, ["inspect", str(path), "--temperature-tolerance", "0.05"])
    assert "isotherms: 3" in result.stdout


BAD = {
    "missing.csv": ("Freq (Hz),E' (MPa)\n1,100\n10,200\n", "missing a temperature"),
    "nonnumeric.csv": (HEAD + "20,0.5,100,10\n20,5,5x,20\n40,0.5,50,5\n40,5,100,10\n",
                       "column \"E' (MPa)\", row 3: value must be a number; got '5x'"),
    "nan.csv": (HEAD + "20,0.5,100,10\n20,5,NaN,20\n40,0.5,50,5\n40,5,100,10\n",
                "row 3: value must be a finite number; got nan"),
    "negative.csv": (HEAD + "20,0.5,100,10\n20,5,-1,20\n40,0.5,50,5\n40,5,100,10\n",
                     "row 3: value must be positive (it is taken in a logarithm); got -1 MPa"),
    "unit.csv": ("Temp (°C),Freq (Hz),E' (bar)\n20,1,1\n20,10,2\n40,1,1\n40,10,2\n",
                 "column \"E' (bar)\": unit must be one of"),
    "duplicate.csv": (HEAD + "20,0.5,100,10\n20,0.5,200,20\n40,0.5,50,5\n40,5,100,10\n",
                      "row 3: duplicate point"),
    "one.csv": (HEAD + "20,0.5,100,10\n20,5,200,20\n",
                "superposition needs at least 2 isotherms; found 1"),
    "empty.csv": ("", "the file is empty"),
    "header_only.csv": (HEAD, "no data rows"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_inspect_bad_input_is_one_line_and_exit_2(tmp_path, name):
    text, expected = BAD[name]
    path = write(tmp_path, name, text)
    result = runner.invoke(app, ["inspect", str(path)])
    assert result.exit_code == 2
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith(f"ttsp: error: {path}")
    assert expected in lines[0]
    assert "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)


def test_inspect_garbage_and_missing_file(tmp_path):
    garbage = tmp_path / "garbage.csv"
    garbage.write_bytes(bytes(range(256)) * 4)
    for path, expected in ((garbage, "not a text table"), (tmp_path / "nope.csv", "no such file")):
        result = runner.invoke(app, ["inspect", str(path)])
        assert result.exit_code == 2
        assert result.stderr.count("\n") == 1 and expected in result.stderr
        assert "Traceback" not in result.output


def test_inspect_bad_mapping_option(tmp_path):
    path = write(tmp_path, "good.csv", GOOD)
    result = runner.invoke(app, ["inspect", str(path), "--column", "E' (MPa)=modulus"])
    assert result.exit_code == 2
    assert result.stderr.count("\n") == 1 and "must name one of" in result.stderr
