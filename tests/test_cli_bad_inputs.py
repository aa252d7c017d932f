"""Bad inputs of issue 17 (points 5, 6 and 10) through the command line: each gives exit 2 and
one line on stderr that names the user's file (or works, where the input is valid).

Campaigns are generated from a generalized Maxwell model with WLF shifts (Williams, Landel &
Ferry, J. Am. Chem. Soc. 77:3701, 1955; C1 = 9, C2 = 100 K at 20 °C; tests/_campaigns.py), so
good input builds.
"""

from __future__ import annotations

import errno
import sys
import tempfile
from pathlib import Path

import pytest
from _campaigns import campaign_rows, write_campaign
from _console import run_console


def run(args, capsys, monkeypatch):
    """The console entry point in this process, warnings silenced: (exit code, stdout, stderr)."""
    return run_console(args, capsys, monkeypatch, ignore_warnings=True)


def one_line_error(err: str) -> str:
    """The message of a one-line error, asserting it is one line without a traceback."""
    assert err.count("\n") == 1 and err.startswith("ttsp: error: "), err
    assert "Traceback" not in err and "internal error" not in err, err
    return err[len("ttsp: error: "):-1]


@pytest.fixture(scope="module")
def model(tmp_path_factory):
    """A finished WLF build of the good campaign (the MODEL of predict and history)."""
    from typer.testing import CliRunner

    from ttsp.cli import app

    d = tmp_path_factory.mktemp("model")
    good = write_campaign(d / "sweeps.csv")
    res = CliRunner().invoke(app, ["build", str(good), "--out", str(d / "model"), "--no-figures",
                                   "-q", "--law", "wlf", "--reference-temperature", "20"])
    assert res.exit_code == 0, res.output
    return d / "model"


# ---- point 5: crashes on ordinary input -----------------------------------------------------------
def test_relative_and_absolute_paths_together_just_work(tmp_path, capsys, monkeypatch):
    rows = campaign_rows()
    write_campaign(tmp_path / "cold.csv", rows[:40])
    write_campaign(tmp_path / "warm.csv", rows[40:])
    monkeypatch.chdir(tmp_path)
    code, out, err = run(["inspect", "cold.csv", tmp_path / "warm.csv"], capsys, monkeypatch)
    assert (code, err) == (0, ""), err
    assert "isotherms: 10   points: 80" in out
    # the same file twice, once relative and once absolute, is one file
    code, out, err = run(["inspect", "cold.csv", tmp_path / "cold.csv"], capsys, monkeypatch)
    assert (code, err) == (0, ""), err
    assert "source: cold.csv" in out and "points: 40" in out
    code, out, err = run(["build", "cold.csv", tmp_path / "warm.csv", "--no-figures", "-q",
                          "--out", "out"], capsys, monkeypatch)
    assert code == 0, err
    assert (tmp_path / "out" / "summary.json").is_file()


def test_a_campaign_of_tan_delta_only(tmp_path, capsys, monkeypatch):
    path = tmp_path / "tan.csv"
    path.write_text("Temperature (°C),Frequency (Hz),tan δ\n" + "".join(
        f"{t:g},{f:.6g},{epp / ep:.8g}\n" for t, f, ep, epp in campaign_rows()), encoding="utf-8")
    for command in ("build", "check"):
        args = [command, path] + (["--no-figures", "-q", "--out", tmp_path / "o"]
                                  if command == "build" else [])
        code, _, err = run(args, capsys, monkeypatch)
        assert code == 2
        assert one_line_error(err) == (
            f"{path}: a master curve needs a modulus or a compliance; the campaign has only "
            f"tan δ: no Prony series can be fitted to it (add E' and E'' columns)")
    assert not (tmp_path / "o").exists()


def test_moduli_near_1e300_pascal(tmp_path, capsys, monkeypatch):
    path = write_campaign(tmp_path / "huge.csv", scale=1e290)
    code, _, err = run(["build", path, "--no-figures", "-q", "--out", tmp_path / "o"], capsys,
                       monkeypatch)
    assert code == 2
    assert one_line_error(err).startswith(
        f"{path}, column \"E' (MPa)\", row 2: value must be at most 1e+15 Pa, beyond any real "
        f"material; got ")


def test_a_temperature_of_1e300_celsius(tmp_path, capsys, monkeypatch):
    path = write_campaign(tmp_path / "hot.csv", last_row_temperature="1e300")
    code, _, err = run(["build", path, "--no-figures", "-q", "--out", tmp_path / "o"], capsys,
                       monkeypatch)
    assert code == 2
    assert one_line_error(err) == (
        f"{path}, column 'Temperature (°C)', row 81: value must be at most 10,000 K (9,726.85 °C), "
        f"hotter than any viscoelastic test; got 1e+300 °C")


def test_a_deeply_nested_summary_for_predict(tmp_path, capsys, monkeypatch):
    path = tmp_path / "summary.json"
    path.write_text('{"schema_version": "1", "prony": ' + "[" * 100_000 + "]" * 100_000 + "}",
                    encoding="utf-8")
    code, _, err = run(["predict", path, "--quantity", "storage_modulus", "--temperature", "20",
                        "--frequency", "1:10:3"], capsys, monkeypatch)
    assert code == 2
    assert one_line_error(err) == (f"{path}: not a ttsp summary (JSON nested deeper than "
                                   f"Python's recursion limit of {sys.getrecursionlimit()})")


def test_a_full_disk_is_the_users_environment(tmp_path, capsys, monkeypatch):
    from ttsp.io import writers

    def full_disk(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")   # as file.write() raises it

    monkeypatch.setattr(writers, "write_build_numbers", full_disk)
    path = write_campaign(tmp_path / "sweeps.csv")
    out = tmp_path / "out"
    code, _, err = run(["build", path, "--no-figures", "-q", "--out", out], capsys, monkeypatch)
    assert code == 2
    assert one_line_error(err) == f"{out}: No space left on device"
    assert not out.exists() and not list(tmp_path.glob(".ttsp-tmp-*"))


# ---- point 6: wrong and quiet ------------------------------------------------------------------
def test_a_strain_of_1e300_is_refused_not_written_as_inf(model, tmp_path, capsys, monkeypatch):
    table = tmp_path / "history.csv"
    table.write_text("time (s),strain\n0,0\n1,1e300\n10,1e300\n", encoding="utf-8")
    code, out, err = run(["history", model, table], capsys, monkeypatch)
    assert code == 2 and out == ""
    assert one_line_error(err) == (
        f"{table}, column 'strain', row 3: the stress under this strain is beyond the largest "
        f"number ttsp holds (about 1.8e308); got strain 1e+300")


def test_a_history_with_a_footer_is_refused(model, tmp_path, capsys, monkeypatch):
    """A history is read whole: the campaign reader's skipping of a footer does not apply."""
    table = tmp_path / "history.csv"
    table.write_text("time (s),strain\n0,0\n1,0.01\nEnd of data\n", encoding="utf-8")
    code, _, err = run(["history", model, table], capsys, monkeypatch)
    assert code == 2
    assert one_line_error(err) == (f"{table}, row 4: a history table must hold only numbers "
                                   f"after its header; got 'End of data'")


# ---- point 10: messages ---------------------------------------------------------------------------
def test_a_newline_in_a_file_name_is_escaped_not_cut(tmp_path, capsys, monkeypatch):
    path = tmp_path / "bad\nname.csv"
    path.write_text("Freq (Hz),E' (MPa)\n0.5,100\n5,200\n", encoding="utf-8")
    code, _, err = run(["inspect", path], capsys, monkeypatch)
    assert code == 2
    message = one_line_error(err)
    assert message.startswith(f"{tmp_path}/bad\\nname.csv: missing a temperature")
    assert message.endswith("columns found: Freq (Hz), E' (MPa)")


def test_loss_modulus_a_fixed_multiple_of_storage(tmp_path, capsys, monkeypatch):
    """E'' = 150 E' at every point of the bundled demo campaign: the joint shift flags every
    point, and the message said 'omega_rad_s must be at least 2 points'."""
    from ttsp.cli import demo_input
    from ttsp.io.readers import read_table

    table = read_table(demo_input())
    j1, j2 = table.header.index("E' (MPa)"), table.header.index("E'' (MPa)")
    lines = [",".join(table.header[:4])]
    for r in table.rows:
        lines.append(",".join(r[:j2]) + f",{150 * float(r[j1])!r}")
    path = tmp_path / "ratio.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    code, _, err = run(["build", path, "--no-figures", "-q", "--out", tmp_path / "o"], capsys,
                       monkeypatch)
    assert code == 2
    message = one_line_error(err)
    assert "omega_rad_s" not in message
    assert message.startswith(f"{path}: ")
    assert message.endswith("E' and E'' cannot be shifted together; E'' is 150 times E' at "
                            "every point, as if one column were computed from the other: check "
                            "the E'' column")


def test_a_history_below_the_wlf_divergence(model, tmp_path, capsys, monkeypatch):
    import json

    law = json.loads((model / "summary.json").read_text(encoding="utf-8"))["shift_law"]
    divergence_C = law["reference_temperature_C"] - law["parameters"]["C2_K"]
    table = tmp_path / "cold.csv"
    table.write_text("time (s),T (°C),strain\n0,20,0\n1,20,0.01\n2,-150,0.01\n", encoding="utf-8")
    code, _, err = run(["history", model, table], capsys, monkeypatch)
    assert code == 2
    assert one_line_error(err) == (
        f"{table}, column 'T (°C)', row 4: temperature must be above the WLF divergence "
        f"T_ref − C2 of the model's shift law, {divergence_C:.2f} °C, where a_T has no value; "
        f"got -150 °C")


def test_a_read_only_parent_is_named_by_the_users_path(tmp_path, capsys, monkeypatch):
    """The temporary folder beside the output cannot be made: name the output, not it."""
    real = tempfile.mkdtemp

    def read_only(*args, prefix="", dir=None, **kwargs):
        if prefix.startswith(".ttsp-tmp-"):
            name = Path(dir) / f"{prefix}k3x9q2"
            raise PermissionError(errno.EACCES, "Permission denied", str(name))
        return real(*args, prefix=prefix, dir=dir, **kwargs)

    monkeypatch.setattr(tempfile, "mkdtemp", read_only)
    path = write_campaign(tmp_path / "sweeps.csv")
    parent = tmp_path / "locked"
    parent.mkdir()
    code, _, err = run(["build", path, "--no-figures", "-q", "--out", parent / "out.v2"], capsys,
                       monkeypatch)
    assert code == 2
    assert one_line_error(err) == (f"{parent / 'out.v2'}: Permission denied (while writing the "
                                   f"output folder in {parent})")


def test_flat_data_place_no_isotherm(tmp_path, capsys, monkeypatch):
    """E' and E'' constant at every frequency and temperature (1 % noise): no shift is
    determined. Before, the build reported shifts of several decades either way and
    'ttsp check --strict' passed; now it is one line and exit 2."""
    import numpy as np

    rng = np.random.default_rng(1)
    lines = ["Temperature (°C),Frequency (Hz),E' (MPa),E'' (MPa)"]
    for t in range(0, 100, 10):
        for f in np.geomspace(0.1, 100, 10):
            lines.append(f"{t},{f:.6g},{100 * np.exp(0.01 * rng.standard_normal()):.6g},"
                         f"{10 * np.exp(0.01 * rng.standard_normal()):.6g}")
    path = tmp_path / "flat.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    code, _, err = run(["check", path, "--strict"], capsys, monkeypatch)
    assert code == 2
    message = one_line_error(err)
    assert message.startswith(f"{path}: no isotherm can be placed on the master curve")
