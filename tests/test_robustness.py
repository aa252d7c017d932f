"""Robustness of the command line (issue 11).

* The catalogue of bad inputs in ``tests/data/bad/``: every file gives exactly the one line of
  ``catalogue.csv`` on stderr and exit 2, through the real console entry (``ttsp.cli.main``),
  and ``docs/bad_inputs.md`` lists the same table.
* Exit codes of every command as DESIGN.md states them (0 done, 2 bad input or usage, 3 a check
  failed under ``--strict``, 1 an internal error), table-driven.
* An internal error prints one line asking for a report; the traceback only with ``--debug``.
* Atomic outputs: a build killed with SIGKILL while writing leaves the previous complete output
  folder, or none, never a half-written one, and its input untouched.
* The size guard: a campaign larger than the limit is refused with a message giving the limit
  and how to raise it, before anything large is held in memory.
* The reader fixes of this sweep (decoding, one-line messages, history tables, temporary folders
  of concurrent builds).

Campaigns are generated from a generalized Maxwell model with WLF shifts (Williams, Landel &
Ferry, J. Am. Chem. Soc. 77:3701, 1955; tests/_campaigns.py), so good input builds.
"""

from __future__ import annotations

import codecs
import csv
import hashlib
import os
import re
import runpy
import signal
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest
from _campaigns import write_campaign
from _console import run_console as run
from _processes import kill_while_writing, tree_hash

from ttsp.exceptions import DataError, DroppedRowsWarning
from ttsp.io.readers import DEFAULT_MAX_POINTS, read_campaign

ROOT = Path(__file__).resolve().parents[1]
BAD = Path(__file__).resolve().parent / "data" / "bad"
with open(BAD / "catalogue.csv", encoding="utf-8", newline="") as _fh:
    CATALOGUE = list(csv.DictReader(_fh))


def sha(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


# ---- the catalogue -------------------------------------------------------------------------------
def _case_id(row):
    return f"{row['command']}-{row['file']}"


@pytest.mark.parametrize("row", CATALOGUE, ids=_case_id)
def test_catalogue_message_is_exact(row, capsys, monkeypatch, tmp_path):
    monkeypatch.chdir(BAD)
    env = dict([row["environment"].split("=", 1)]) if row["environment"] else {}
    args = [row["command"], row["file"]]
    if row["command"] == "build":
        args += ["--no-figures", "-q", "--out", tmp_path / "out"]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        code, out, err = run(args, capsys, monkeypatch, env)
    assert code == int(row["exit_code"]) == 2
    assert err == f"ttsp: error: {row['message']}\n"
    assert out == ""
    if row["command"] == "build":
        assert not (tmp_path / "out").exists()          # bad input writes nothing
        assert not list(tmp_path.glob(".ttsp-tmp-*"))


def test_catalogue_files_are_all_listed_and_rebuildable():
    """Every file in tests/data/bad is a case, and make_bad_inputs.py writes exactly them."""
    listed = {row["file"] for row in CATALOGUE} - {"missing.csv"}
    on_disk = {p.name for p in BAD.iterdir()} - {"catalogue.csv", "make_bad_inputs.py",
                                                 "__pycache__"}
    assert listed == on_disk
    assert not (BAD / "missing.csv").exists()  # the case of a file that does not exist
    made = runpy.run_path(str(BAD / "make_bad_inputs.py"))  # its definitions; main() not run
    assert set(made["TEXT"]) | set(made["BINARY"]) | set(made["WORKBOOKS"]) | {
        "not_a_workbook.xlsx", "folder_without_data_files"} == on_disk
    for name, text in made["TEXT"].items():
        assert (BAD / name).read_bytes() == text.encode("utf-8"), name
    for name, data in made["BINARY"].items():
        assert (BAD / name).read_bytes() == data, name
    for name, sheets in made["WORKBOOKS"].items():
        assert (BAD / name).read_bytes() == made["_workbook"](sheets), name


def test_catalogue_messages_are_single_lines_that_name_the_file():
    for row in CATALOGUE:
        message = row["message"]
        assert "\n" not in message and "Traceback" not in message
        assert message.startswith(row["file"]), row["file"]
        assert not re.search(r"np\.|float64|array\(", message)


def test_docs_table_matches_the_catalogue():
    """docs/bad_inputs.md holds the same rows as catalogue.csv (file, problem, message, code)."""
    text = (ROOT / "docs" / "bad_inputs.md").read_text(encoding="utf-8")
    rows = [line for line in text.splitlines() if line.startswith("| `")]
    assert len(rows) == len(CATALOGUE)
    for line, row in zip(rows, CATALOGUE, strict=True):
        cells = [c.strip() for c in re.split(r"(?<!\\)\|", line)[1:-1]]
        command = (f"{row['environment']} " if row["environment"] else "") + f"ttsp {row['command']}"
        assert cells[0] == f"`{row['file']}`"
        assert cells[1] == f"`{command}`"
        assert cells[2] == row["problem"].replace("|", "\\|")
        assert cells[3] == "`" + row["message"].replace("|", "\\|") + "`"
        assert cells[4] == row["exit_code"]


@pytest.mark.parametrize("name", ["mostly_text_column.csv", "utf32_text.csv",
                                  "thousands_or_decimal_comma.tsv"])
def test_catalogue_through_python_m_is_identical(name, tmp_path):
    """The real process (python -m ttsp) prints the same line and exits 2."""
    row = next(r for r in CATALOGUE if r["file"] == name and r["command"] == "inspect")
    proc = subprocess.run([sys.executable, "-m", "ttsp", "inspect", name], cwd=BAD,
                          capture_output=True, text=True, timeout=120, check=False,
                          env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert proc.returncode == 2
    assert proc.stderr == f"ttsp: error: {row['message']}\n"


# ---- exit codes of every command -----------------------------------------------------------------
@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    """A good campaign, a bad one, a finished build (the model), a history table, manifests."""
    from typer.testing import CliRunner

    from ttsp.cli import app

    d = tmp_path_factory.mktemp("inputs")
    good = write_campaign(d / "sweeps.csv")
    bad = d / "bad.csv"
    bad.write_text("Temp (°C),Freq (Hz),E' (MPa)\n20,1,5x\n20,10,2\n40,1,1\n40,10,2\n",
                   encoding="utf-8")
    model = d / "model"
    res = CliRunner().invoke(app, ["build", str(good), "--out", str(model), "--no-figures", "-q",
                                   "--reference-temperature", "20"])
    assert res.exit_code == 0, res.output
    history = d / "history.csv"
    history.write_text("time (s),strain\n0,0\n0,0.01\n1,0.01\n10,0.01\n", encoding="utf-8")
    bad_history = d / "bad_history.csv"
    bad_history.write_text("time (s),strain\n0,0\n1,x\n", encoding="utf-8")
    manifest = d / "manifest.csv"
    manifest.write_text(f"id,path\nok,{good.name}\nbroken,{bad.name}\n", encoding="utf-8")
    return {"good": good, "bad": bad, "model": model, "history": history,
            "bad_history": bad_history, "manifest": manifest, "dir": d}


def _raise(*args, **kwargs):
    raise ZeroDivisionError("planted internal error")


def _fail_a_check(monkeypatch):
    from ttsp import checks

    real = checks.run_checks

    def with_a_failure(*a, **k):
        return tuple(real(*a, **k)) + (checks.CheckResult("planted", "fail", 1.0, 0.5,
                                                          "A planted failure."),)

    monkeypatch.setattr(checks, "run_checks", with_a_failure)


def _demo_without_figures(monkeypatch):
    """The demo builds the real bundled campaign; figures off to keep the test short."""
    from ttsp import cli

    real = cli.run_build
    monkeypatch.setattr(cli, "run_build", lambda *a, **k: real(*a, **{**k, "figures": False}))


def _patch(target):
    def apply(monkeypatch):
        module, attr = target.rsplit(".", 1)
        import importlib

        mod = importlib.import_module(module)
        if "." in attr:  # Class.method
            cls_name, meth = attr.split(".")
            monkeypatch.setattr(getattr(mod, cls_name), meth, _raise)
        else:
            monkeypatch.setattr(mod, attr, _raise)
    return apply


def _patch_method(module, cls, method):
    def apply(monkeypatch):
        import importlib

        monkeypatch.setattr(getattr(importlib.import_module(module), cls), method, _raise)
    return apply


OUT = "{out}"
PREDICT = ["--quantity", "relaxation_modulus", "--temperature", "20", "--time", "0.01:10:3"]
# (id, arguments, setup, exit code, a piece of the stderr line or None for an empty stderr)
EXIT_CASES = [
    ("version", ["--version"], None, 0, None),
    ("no command", [], None, 2, None),
    ("unknown command", ["nope"], None, 2, "No such command"),
    ("inspect ok", ["inspect", "{good}"], None, 0, None),
    ("inspect bad input", ["inspect", "{bad}"], None, 2, "row 2"),
    ("inspect missing argument", ["inspect"], None, 2, "Missing argument"),
    ("inspect bad option", ["inspect", "{good}", "--column", "x"], None, 2, "NAME=VALUE"),
    ("inspect internal", ["inspect", "{good}"], _patch("ttsp.io.readers.read_campaign"), 1,
     "please report"),
    ("build ok", ["build", "{good}", "--out", OUT, "--no-figures", "-q"], None, 0, None),
    ("build bad input", ["build", "{bad}", "--out", OUT, "--no-figures", "-q"], None, 2, "row 2"),
    ("build bad law", ["build", "{good}", "--law", "nope"], None, 2, "--law"),
    ("build output exists", ["build", "{good}", "--out", "{model}", "--no-figures", "-q"], None,
     2, "--force"),
    ("build strict, check failed", ["build", "{good}", "--out", OUT, "--no-figures", "-q",
                                    "--strict"], _fail_a_check, 3, "planted"),
    ("build internal", ["build", "{good}", "--out", OUT, "-q"], _patch("ttsp.workflow.build"), 1,
     "please report"),
    ("check ok", ["check", "{good}"], None, 0, None),
    ("check bad input", ["check", "{bad}"], None, 2, "row 2"),
    ("check strict, check failed", ["check", "{good}", "--strict"], _fail_a_check, 3, None),
    ("check internal", ["check", "{good}"], _patch("ttsp.workflow.build"), 1, "please report"),
    ("predict ok", ["predict", "{model}"] + PREDICT, None, 0, None),
    ("predict no model", ["predict", "{dir}"] + PREDICT, None, 2, "summary.json"),
    ("predict bad grid", ["predict", "{model}", "--quantity", "relaxation_modulus",
                          "--temperature", "30", "--time", "1:100"], None, 2, "a:b:n"),
    ("predict internal", ["predict", "{model}"] + PREDICT,
     _patch_method("ttsp.model", "ViscoelasticModel", "evaluate"), 1, "please report"),
    ("history ok", ["history", "{model}", "{history}"], None, 0, None),
    ("history bad table", ["history", "{model}", "{bad_history}"], None, 2, "row 3"),
    ("history internal", ["history", "{model}", "{history}"],
     _patch("ttsp.history.stress_under_strain"), 1, "please report"),
    ("demo ok", ["demo", "--out", OUT, "-q"], _demo_without_figures, 0, None),
    ("demo folder of someone else", ["demo", "--out", "{dir}", "-q"], None, 2, "--out"),
    ("demo internal", ["demo", "--out", OUT, "-q"], _patch("ttsp.cli.run_build"), 1,
     "please report"),
    ("batch with a failed campaign", ["batch", "{manifest}", "--out", OUT, "--workers", "1",
                                      "--no-figures", "-q"], None, 2, None),
    ("batch no manifest", ["batch", "{dir}/nope.csv", "--out", OUT], None, 2, "nope.csv"),
    ("batch internal", ["batch", "{manifest}", "--out", OUT], _patch("ttsp.batch.run_batch"), 1,
     "please report"),
]


@pytest.mark.parametrize("name, args, setup, code, stderr", EXIT_CASES,
                         ids=[c[0] for c in EXIT_CASES])
def test_exit_codes_of_every_command(name, args, setup, code, stderr, inputs, tmp_path, capsys,
                                     monkeypatch):
    places = {k: str(v) for k, v in inputs.items()} | {"out": str(tmp_path / "out")}
    argv = [a.format(**places) for a in args]
    if setup is not None:
        setup(monkeypatch)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        got, out, err = run(argv, capsys, monkeypatch)
    assert got == code, err
    assert "Traceback" not in err
    if code in (1, 2) and name != "no command" and "batch with" not in name:
        assert len(err.splitlines()) == 1 and err.startswith("ttsp: error: "), err
    if stderr is None and code in (0,):
        assert err == "", err
    elif stderr is not None:
        assert stderr in err, err
    if name == "no command":
        assert "Usage" in out  # the help, on stdout
    if name == "batch with a failed campaign":  # one row per id: the bad one failed, and says why
        import pandas as pd

        table = pd.read_csv(tmp_path / "out" / "results.csv", keep_default_na=False)
        assert (dict(zip(table["id"], table["status"], strict=True))
                == {"ok": "ok", "broken": "failed"})
        assert "row 2" in table.set_index("id").loc["broken", "error"]


def test_internal_error_traceback_only_with_debug(inputs, tmp_path, capsys, monkeypatch):
    _patch("ttsp.workflow.build")(monkeypatch)
    args = ["build", inputs["good"], "--out", tmp_path / "o", "--no-figures", "-q"]
    code, _, err = run(args, capsys, monkeypatch)
    assert code == 1
    assert err == ("ttsp: error: internal error (ZeroDivisionError: planted internal error); "
                   "please report it with the command you ran (rerun with --debug for the "
                   "traceback)\n")
    code, _, err = run(["--debug"] + args, capsys, monkeypatch)
    assert code == 1
    assert err.startswith("Traceback (most recent call last):")
    assert "ZeroDivisionError: planted internal error" in err
    assert err.splitlines()[-1].startswith("ttsp: error: internal error (ZeroDivisionError")
    assert not (tmp_path / "o").exists()


@pytest.mark.slow  # end-to-end: a whole command or process
@pytest.mark.parametrize("debug", [False, True])
def test_internal_error_in_a_real_process(inputs, tmp_path, debug):
    """End to end through python -m ttsp: a sitecustomize plants the fault in the workflow."""
    site = tmp_path / "site"
    site.mkdir()
    (site / "sitecustomize.py").write_text(
        "import ttsp.workflow\n"
        "def _broken(*a, **k):\n"
        "    raise KeyError('planted')\n"
        "ttsp.workflow.build = _broken\n", encoding="utf-8")
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(site), str(ROOT)])}
    proc = subprocess.run([sys.executable, "-m", "ttsp"] + (["--debug"] if debug else []) +
                          ["build", str(inputs["good"]), "--out", str(tmp_path / "o"), "-q"],
                          capture_output=True, text=True, timeout=120, env=env, check=False)
    assert proc.returncode == 1
    last = proc.stderr.splitlines()[-1]
    assert last.startswith("ttsp: error: internal error (KeyError: 'planted'); please report")
    if debug:
        assert proc.stderr.startswith("Traceback") and "_broken" in proc.stderr
    else:
        assert len(proc.stderr.splitlines()) == 1 and "Traceback" not in proc.stderr
    assert not (tmp_path / "o").exists()


def test_bad_input_found_while_building_is_one_line_and_writes_nothing(tmp_path, capsys,
                                                                        monkeypatch):
    """Bad input that only the build finds (here two isotherms whose ranges do not meet) is
    exit 2 with one line, and no output folder, like bad input found by the reader."""
    f = tmp_path / "gap.csv"
    f.write_text("Temp (°C),Freq (Hz),E' (MPa)\n20,0.1,1000\n20,1,900\n60,0.1,1\n60,1,0.9\n"
                 "100,0.1,0.01\n100,1,0.009\n", encoding="utf-8")
    code, _, err = run(["build", f, "--out", tmp_path / "o", "--no-figures", "-q"], capsys,
                       monkeypatch)
    assert code == 2, err
    assert len(err.splitlines()) == 1 and err.startswith("ttsp: error: ")
    assert not (tmp_path / "o").exists() and not list(tmp_path.glob(".ttsp-tmp-*"))


def test_absurd_frequency_span_is_bad_input_not_an_internal_error(tmp_path, capsys, monkeypatch):
    f = tmp_path / "span.csv"
    f.write_text("Temp (°C),Freq (Hz),E' (MPa)\n20,1e-100,100\n20,1,150\n20,1e100,200\n"
                 "40,1e-100,50\n40,1,70\n40,1e100,100\n", encoding="utf-8")
    code, _, err = run(["build", f, "--out", tmp_path / "o", "--no-figures", "-q"], capsys,
                       monkeypatch)
    assert code == 2, err
    assert len(err.splitlines()) == 1 and "spans 200 decades of frequency" in err


# ---- atomic outputs under SIGKILL -------------------------------------------------------------------
@pytest.mark.slow  # end-to-end: a whole command or process
@pytest.mark.parametrize("previous", [False, True], ids=["no previous output",
                                                         "a previous output"])
def test_sigkill_during_a_build_leaves_the_previous_output_or_none(previous, tmp_path, capsys,
                                                                   monkeypatch):
    campaign = write_campaign(tmp_path / "campaign.csv")
    before_input = sha(campaign)
    out = tmp_path / "result"
    if previous:
        code, _, err = run(["build", campaign, "--out", out, "--no-figures", "-q"], capsys,
                           monkeypatch)
        assert code == 0, err
        before = tree_hash(out)
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    # with figures the writing takes seconds: the kill lands while the folder is half written
    status = kill_while_writing(["build", str(campaign), "--out", str(out), "--force", "-q"],
                                 out, env)
    assert status == -signal.SIGKILL
    if previous:
        assert tree_hash(out) == before          # the previous complete output, untouched
    else:
        assert not out.exists()                  # no output at all, never half of one
    assert sha(campaign) == before_input         # the input is never modified
    assert list(tmp_path.glob(".ttsp-tmp-result.*"))  # the half-written folder stays hidden
    # the next run removes the stale temporary folder and writes a complete output
    code, _, err = run(["build", campaign, "--out", out, "--no-figures", "-q", "--force"], capsys,
                       monkeypatch)
    assert code == 0, err
    assert not list(tmp_path.glob(".ttsp-tmp-*"))
    assert (out / "summary.json").is_file() and (out / "master_curve.csv").is_file()


def test_failure_between_the_two_renames_leaves_the_old_output(tmp_path, monkeypatch):
    """Where the system cannot swap two folders in one step, a replace renames the old folder
    away, then the new one in. A failure between the two puts the old folder back, never a mix
    of old and new files, never nothing (issue 17)."""
    from ttsp.io import atomic
    from ttsp.io.marker import write_marker

    out = tmp_path / "out"
    out.mkdir()
    (out / "old.txt").write_text("old")
    write_marker(out, "build")
    real = atomic.rename_noreplace
    monkeypatch.setattr(atomic, "exchange", lambda a, b: False)

    def rename_noreplace(src, dst):
        if Path(src).name.startswith(".ttsp-tmp-"):
            raise OSError("planted crash between the renames")
        return real(src, dst)

    monkeypatch.setattr(atomic, "rename_noreplace", rename_noreplace)
    with pytest.raises(OSError, match="planted"), atomic.atomic_output_dir(out, force=True) as tmp:
        (tmp / "new.txt").write_text("new")
    assert sorted(p.name for p in out.iterdir()) == [".ttsp-output", "old.txt"]
    assert not list(tmp_path.glob(".ttsp-*"))


def test_stale_folders_of_other_builds_are_left_alone(tmp_path):
    """A build into out1 removes its own leftovers from a dead process, but never the temporary
    folder of a live build into out10 (a batch), nor a live one into out1 itself."""
    from ttsp.io.atomic import atomic_output_dir

    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    dead_pid = int(dead.stdout)
    live_pid = os.getpid()
    stale = tmp_path / f".ttsp-tmp-out1.{dead_pid}.abc"
    other = tmp_path / f".ttsp-tmp-out10.{live_pid}.xyz"
    other_dead = tmp_path / f".ttsp-tmp-out10.{dead_pid}.xyz"
    same_live = tmp_path / f".ttsp-tmp-out1.{live_pid}.def"
    for p in (stale, other, other_dead, same_live):
        p.mkdir()
        (p / "summary.json").write_text("{}")
    with atomic_output_dir(tmp_path / "out1") as tmp:
        (tmp / "summary.json").write_text("{}")
    assert not stale.exists()
    assert other.exists() and other_dead.exists() and same_live.exists()
    assert (tmp_path / "out1" / "summary.json").is_file()


# ---- the size guard -----------------------------------------------------------------------------------
H = "Temp (°C),Freq (Hz),E' (MPa)\n"


def _rows(n_per_isotherm, temps=(20, 40)):
    return "".join(f"{t},{f},{100 + f}\n" for t in temps for f in range(1, n_per_isotherm + 1))


def test_size_guard_by_argument_and_environment(tmp_path, monkeypatch):
    f = tmp_path / "c.csv"
    f.write_text(H + _rows(6), encoding="utf-8")
    assert read_campaign(f, max_points=12).n_points == 12
    with pytest.raises(DataError, match=r"c\.csv: the file has 12 data rows; ttsp reads at most "
                                        r"11 points at once, to stop before memory runs out: "
                                        r"split the campaign, or raise the limit with the "
                                        r"environment variable TTSP_MAX_POINTS"):
        read_campaign(f, max_points=11)
    monkeypatch.setenv("TTSP_MAX_POINTS", "11")
    with pytest.raises(DataError, match="at most 11 points"):
        read_campaign(f)
    monkeypatch.setenv("TTSP_MAX_POINTS", "1_000")  # underscores as Python writes numbers
    assert read_campaign(f).n_points == 12
    for bad in ("lots", "0", "-5", "1.5"):
        monkeypatch.setenv("TTSP_MAX_POINTS", bad)
        with pytest.raises(DataError, match=rf"TTSP_MAX_POINTS must be a whole number of points "
                                            rf"of 1 or more; got '{re.escape(bad)}'"):
            read_campaign(f)
    monkeypatch.delenv("TTSP_MAX_POINTS")
    with pytest.raises(DataError, match=r"max_points must be a whole number"):
        read_campaign(f, max_points=0)


def test_size_guard_counts_across_files(tmp_path):
    a = tmp_path / "a_20C.csv"
    b = tmp_path / "b_40C.csv"
    for p in (a, b):
        p.write_text("Freq (Hz),E' (MPa)\n" + "".join(f"{f},{f}\n" for f in range(1, 7)),
                     encoding="utf-8")
    assert read_campaign([a, b], max_points=12).n_points == 12
    with pytest.raises(DataError, match=r"b_40C\.csv: the campaign has 12 data rows up to and "
                                        r"including this file; ttsp reads at most 10 points"):
        read_campaign([a, b], max_points=10)


def test_size_guard_refuses_a_huge_file_unread(tmp_path):
    """A sparse file larger than the byte bound (256 bytes a point) is refused by its size: no
    disk space is used and nothing is read."""
    f = tmp_path / "huge.csv"
    with open(f, "wb") as fh:
        fh.write(H.encode())
        fh.truncate(DEFAULT_MAX_POINTS * 256 + 1)
    with pytest.raises(DataError, match=r"huge\.csv: the file is 0\.512 GB, larger than 0\.512 GB;"
                                        r" ttsp reads at most 2,000,000 points"):
        read_campaign(f)


def test_size_guard_counts_lines_before_reading(tmp_path):
    f = tmp_path / "many.csv"
    f.write_bytes((H + "20,1,1\n" * 1200).encode())
    with pytest.raises(DataError, match=r"many\.csv: the file has more than 1,100 lines; ttsp "
                                        r"reads at most 100 points"):
        read_campaign(f, max_points=100)


def test_size_guard_on_an_xlsx_sheet(tmp_path):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Temp (°C)", "Freq (Hz)", "E' (MPa)"])
    for k in range(1100):
        ws.append([20 + 20 * (k % 2), 1 + k // 2, 100.0])
    book.save(tmp_path / "big.xlsx")
    with pytest.raises(DataError, match=r"big\.xlsx: the sheet has 1,101 rows; ttsp reads at most "
                                        r"50 points"):
        read_campaign(tmp_path / "big.xlsx", max_points=50)


# ---- reader fixes of this sweep -------------------------------------------------------------------------
def test_truncated_utf8_is_read_as_utf8(tmp_path):
    """A file cut inside its last multi-byte character: the header's °C stays °C."""
    text = H + "20,0.5,100\n20,5,200\n40,0.5,50\n40,5,100\n# fin – à\n"
    data = text.encode("utf-8")[:-2]   # cut inside 'à' (2 bytes)
    f = tmp_path / "cut.csv"
    f.write_bytes(data)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DroppedRowsWarning)
        c = read_campaign(f)
    assert c.units_as_read["Temp (°C)"] == "°C"
    np.testing.assert_allclose(c.temperatures_C, [20.0, 40.0])


def test_utf32_is_named(tmp_path):
    for bom, enc in ((codecs.BOM_UTF32_LE, "utf-32-le"), (codecs.BOM_UTF32_BE, "utf-32-be")):
        f = tmp_path / "u32.csv"
        f.write_bytes(bom + (H + "20,1,1\n").encode(enc))
        with pytest.raises(DataError, match=r"u32\.csv: not a text table ttsp reads: the file is "
                                            r"UTF-32 text; save it as UTF-8"):
            read_campaign(f)


def test_xlsx_header_wrapped_over_lines_stays_one_line(tmp_path):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Temp\n(°C)", "Freq\n(Hz)", "Force\n(N)"])
    for row in ([20, 1, 1], [20, 10, 2], [40, 1, 1], [40, 10, 2]):
        ws.append(row)
    book.save(tmp_path / "wrapped.xlsx")
    with pytest.raises(DataError) as info:
        read_campaign(tmp_path / "wrapped.xlsx")
    assert "\n" not in str(info.value)
    assert str(info.value).endswith("columns found: Temp (°C), Freq (Hz)")


def test_control_characters_in_a_header_are_escaped(tmp_path):
    f = tmp_path / "ctl.csv"
    f.write_text("Temp (°C),Note\x1b[2J,E' (MPa)\n20,1,1\n20,10,2\n40,1,1\n40,10,2\n",
                 encoding="utf-8")
    with pytest.raises(DataError) as info:
        read_campaign(f)
    assert "\x1b" not in str(info.value)
    assert str(info.value).endswith(r"columns found: Temp (°C), Note\x1b[2J, E' (MPa)")


def test_history_table_reads_numbers_as_campaigns_do(tmp_path):
    from ttsp.io.history_table import read_history_table

    def history(text):
        f = tmp_path / "h.csv"
        f.write_text(text, encoding="utf-8")
        return f

    ok = read_history_table(history("time (min);strain (%)\n0;0\n0,5;1,5\n2;1,5\n"))
    np.testing.assert_allclose(ok.time_s, [0, 30, 120])
    np.testing.assert_allclose(ok.values, [0, 0.015, 0.015])
    with pytest.raises(DataError, match=r"h\.csv, column 'strain', row 3: value must be a number; "
                                        r"got '1_000'"):
        read_history_table(history("time (s),strain\n0,0\n1,1_000\n"))
    with pytest.raises(DataError, match=r"h\.csv, column 'strain \(%\)': two columns mean strain: "
                                        r"'strain' and 'strain \(%\)'; keep one"):
        read_history_table(history("time (s),strain,strain (%)\n0,0,0\n1,1,100\n"))
    with pytest.raises(DataError, match=r"h\.csv, column 'stress \(GPa\)', row 3: value must be a "
                                        r"finite number in SI units; got '1e300' GPa"):
        read_history_table(history("time (s),stress (GPa)\n0,0\n1,1e300\n"))
    with pytest.raises(DataError, match=r"h\.csv, column 'strain', row 3: value must be "
                                        r"unambiguous; got '1,500'"):
        read_history_table(history("time (s)\tstrain\n0\t0\n1\t1,500\n"))
