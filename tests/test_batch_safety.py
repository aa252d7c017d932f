"""A batch never overwrites the user's files, stops its workers, and writes no live formulas
(issue 17, points 1, 7 and 8).

* ``OUT/results.csv`` (and ``results.jsonl``) are rewritten only when ttsp batch wrote them and
  nobody changed them since (the batch folder's ``.ttsp-output`` marker holds their hashes);
  one batch at a time writes a folder.
* SIGTERM (what schedulers send) stops the workers at once, records what finished, and exits
  143 with one line; ``kill -9`` of the batch process takes its workers with it.
* A text cell that a spreadsheet would run as a formula (``=1+2.csv``, ``@SUM(1+1)*cmd.csv``) is
  written with a leading ``'``, in every CSV ttsp writes from user text.
"""

from __future__ import annotations

import csv
import os
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pandas as pd
import pytest
from _campaigns import write_batch_campaign, write_manifest
from _processes import dead_pid
from fault_injection import tagged_processes, wait_gone
from typer.testing import CliRunner

from ttsp import batch
from ttsp.batch import run_batch
from ttsp.cli import app
from ttsp.exceptions import DataError
from ttsp.io.marker import read_marker
from ttsp.io.writers import frame_to_csv_text, neutralise_formula

pytestmark = pytest.mark.slow  # end-to-end: whole commands and processes

ROOT = Path(__file__).resolve().parents[1]
runner = CliRunner()


@pytest.fixture(scope="module")
def campaigns(tmp_path_factory):
    d = tmp_path_factory.mktemp("campaigns")
    for i in range(6):
        write_batch_campaign(d / f"c{i}.csv", seed=i)
    return d


def manifest_of(campaigns: Path, n: int, path: Path) -> Path:
    return write_manifest(path, [(f"c{i}", campaigns / f"c{i}.csv", "wlf", "")
                                 for i in range(n)])


# ---- point 1: results.csv is the user's unless ttsp wrote it -------------------------------------
def test_a_results_table_ttsp_did_not_write_is_never_overwritten(campaigns, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "results.csv").write_text("my,own,table\n", encoding="utf-8")
    manifest = manifest_of(campaigns, 1, tmp_path / "m.csv")
    res = runner.invoke(app, ["batch", str(manifest), "--out", str(out), "-q"])
    assert res.exit_code == 2
    assert res.output == (f"ttsp: error: {out / 'results.csv'}: exists and is not a results table "
                          f"that ttsp batch wrote (or it was changed since); ttsp will not "
                          f"overwrite it: move it or choose another --out\n")
    assert (out / "results.csv").read_text() == "my,own,table\n"
    assert sorted(p.name for p in out.iterdir()) == ["results.csv"]   # nothing built


def test_own_results_are_rewritten_edited_ones_are_not(campaigns, tmp_path):
    out = tmp_path / "out"
    manifest = manifest_of(campaigns, 1, tmp_path / "m.csv")
    assert (run_batch(manifest, out, workers=1, quiet=True)["status"] == "ok").all()
    assert read_marker(out)["kind"] == "batch"
    again = run_batch(manifest, out, workers=1, quiet=True)       # resuming: its own table
    assert again["skipped"].all()
    with open(out / "results.csv", "a", encoding="utf-8") as fh:   # the user edits it
        fh.write("my,note\n")
    with pytest.raises(DataError, match=r"results\.csv: exists and is not a results table"):
        run_batch(manifest, out, workers=1, quiet=True)
    assert (out / "results.csv").read_text().endswith("my,note\n")


def test_a_batch_into_the_current_folder_writes_nothing_above_it(campaigns, tmp_path,
                                                                 monkeypatch):
    """``--out .`` (a home folder, say) needs no write access to the folder above it: the
    batch's lock file is inside the batch folder."""
    from ttsp.io import renames

    here = tmp_path / "home"
    here.mkdir()
    manifest = manifest_of(campaigns, 1, tmp_path / "m.csv")
    monkeypatch.chdir(here)
    locks = []
    real_open = os.open

    def recording_open(path, flags, *args):
        locks.append(Path(path).resolve())
        return real_open(path, flags, *args)

    monkeypatch.setattr(renames.os, "open", recording_open)
    assert (run_batch(manifest, ".", workers=1, quiet=True)["status"] == "ok").all()
    assert locks and all(here.resolve() in p.parents for p in locks)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["home", "m.csv"]


def test_a_build_output_is_not_a_batch_folder(campaigns, tmp_path):
    out = tmp_path / "out"
    res = runner.invoke(app, ["build", str(campaigns / "c0.csv"), "--out", str(out), "-q",
                              "--no-figures"])
    assert res.exit_code == 0, res.output
    with pytest.raises(DataError, match="is the output folder of a ttsp build, not of a batch"):
        run_batch(manifest_of(campaigns, 1, tmp_path / "m.csv"), out, workers=1, quiet=True)


def test_a_user_folder_with_a_campaign_id_is_a_failed_row_not_a_loss(campaigns, tmp_path):
    out = tmp_path / "out"
    (out / "c0").mkdir(parents=True)
    (out / "c0" / "thesis.tex").write_text("months of work", encoding="utf-8")
    table = run_batch(manifest_of(campaigns, 1, tmp_path / "m.csv"), out, workers=1, quiet=True,
                      force=True)
    assert table.loc[0, "status"] == "failed" and "not a ttsp output" in table.loc[0, "error"]
    assert (out / "c0" / "thesis.tex").read_text() == "months of work"


def test_one_batch_at_a_time_per_folder(campaigns, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    with batch._batch_lock(out):      # as a running batch holds it
        with pytest.raises(DataError, match=r"another ttsp run \(process \d+\) is writing"):
            run_batch(manifest_of(campaigns, 1, tmp_path / "m.csv"), out, workers=1, quiet=True)


# ---- point 7: no worker outlives the batch ---------------------------------------------------


def start_batch(campaigns: Path, tmp_path: Path, n: int = 6):
    """A batch of ``n`` campaigns with figures on 2 workers, started as its own process; returns
    (process, out, tag) once a worker is building."""
    tag = uuid.uuid4().hex
    out = tmp_path / "out"
    manifest = manifest_of(campaigns, n, tmp_path / "m.csv")
    env = {**os.environ, "PYTHONPATH": str(ROOT), "TTSP_TEST_TAG": tag}
    proc = subprocess.Popen([sys.executable, "-m", "ttsp", "batch", str(manifest), "--out",
                             str(out), "--workers", "2", "-q"], env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and proc.poll() is None:
        if out.is_dir() and list(out.glob(".ttsp-tmp-*")):
            break
        time.sleep(0.02)
    assert proc.poll() is None, "the batch ended before a build started"
    return proc, out, tag


def kill_all(pids) -> None:
    for pid in pids:
        try:
            os.kill(pid, signal.SIGKILL)
        except ProcessLookupError:
            pass


@pytest.mark.skipif(not Path("/proc/self/environ").exists(), reason="needs /proc")
def test_sigterm_stops_every_worker_and_says_how_to_resume(campaigns, tmp_path):
    proc, out, tag = start_batch(campaigns, tmp_path)
    try:
        assert len(tagged_processes(tag)) >= 3       # the batch, the fork server, workers
        t0 = time.monotonic()
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
        stopped_s = time.monotonic() - t0
        left = wait_gone(tag, 5)
    finally:
        kill_all(tagged_processes(tag))
    assert proc.returncode == 143
    assert err == (f"ttsp: error: terminated (SIGTERM); the campaigns finished so far are in "
                   f"{out / 'results.csv'}: run the same command again to resume\n")
    assert stopped_s < 10        # the running builds are not waited for (each takes seconds)
    assert left == []
    # the next run resumes, tidies the killed builds' temporary folders, and finishes
    table = run_batch(tmp_path / "m.csv", out, workers=2, quiet=True, figures=True)
    assert (table["status"] == "ok").all()
    assert not [p.name for p in out.iterdir() if p.name.startswith(".ttsp-")
                and p.name != ".ttsp-output"]


@pytest.mark.skipif(not Path("/proc/self/environ").exists(), reason="needs /proc")
def test_kill_9_of_the_batch_takes_its_workers_with_it(campaigns, tmp_path):
    proc, out, tag = start_batch(campaigns, tmp_path)
    try:
        proc.kill()
        proc.wait(timeout=60)
        left = wait_gone(tag, 10)
    finally:
        kill_all(tagged_processes(tag))
    assert left == []


# ---- point 8: no live formulas in the CSV files ------------------------------------------------
@pytest.mark.parametrize("text, written", [
    ("=1+2.csv", "'=1+2.csv"), ("@SUM(1+1)*cmd.csv", "'@SUM(1+1)*cmd.csv"),
    ("+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"), ("-2+3", "'-2+3"), ("\t=1", "'\t=1"),
    ("\r=1", "'\r=1"), ("-", "'-"), (" -1", " -1"),
    ("-1.5", "-1.5"), ("+3e-4", "+3e-4"), ("-inf", "-inf"), ("plain.csv", "plain.csv"),
    ("a=1", "a=1"), ("", ""),
])
def test_neutralise_formula(text, written):
    assert neutralise_formula(text) == written


def test_batch_results_table_has_no_live_formula(tmp_path, monkeypatch):
    """The manifest named relatively (``ttsp batch m.jsonl``): the path cells are the text the
    user wrote."""
    monkeypatch.chdir(tmp_path)
    paths = ["=1+2.csv", "@SUM(1+1)*cmd.csv", "+1.csv", "-x.csv"]
    manifest = Path("m.jsonl")
    manifest.write_text("".join(f'{{"id": "c{i}", "path": "{p}"}}\n' for i, p in enumerate(paths)),
                        encoding="utf-8")
    out = tmp_path / "out"
    run_batch(manifest, out, workers=1, quiet=True)
    with open(out / "results.csv", encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["path"] for r in rows] == ["'" + p for p in paths]
    for row in rows:
        assert all(not cell.startswith(("=", "+", "-", "@", "\t", "\r")) for cell in row.values())
    # the JSON Lines twin keeps the text as given (no spreadsheet reads it)
    assert list(pd.read_json(out / "results.jsonl", lines=True)["path"]) == paths


def test_frame_writer_neutralises_text_cells_but_not_numbers():
    frame = pd.DataFrame({"source": ["=HYPERLINK(\"x\")", "ok.csv"], "value": [-1.5, 2.0]})
    text = frame_to_csv_text(frame)
    assert text == "source,value\n\"'=HYPERLINK(\"\"x\"\")\",-1.5\nok.csv,2\n"
    single = frame_to_csv_text(pd.DataFrame({"source": ["@x", "y"]}))   # pandas' own path
    assert single == "source\n'@x\ny\n"


def test_a_batch_tidies_what_killed_runs_left_in_its_folder(campaigns, tmp_path):
    """Leftovers of builds killed in an earlier run (temporary folders of ended processes, lock
    files, a half-written copy of the results table) go; a moved-aside previous output of a
    campaign whose folder is missing comes back."""

    out = tmp_path / "out"
    manifest = manifest_of(campaigns, 2, tmp_path / "m.csv")
    run_batch(manifest, out, workers=1, quiet=True)
    dead = dead_pid()
    (out / f".ttsp-tmp-c0.{dead}.abcd").mkdir()
    (out / ".ttsp-lock-c0").write_text(str(dead))
    (out / ".results.csv.x1y2").write_text("half")
    (out / "..ttsp-output.x1y2").write_text("half")
    (out / "c1").rename(out / f".ttsp-old-c1.{dead}.ef01")    # killed between two renames
    table = run_batch(manifest, out, workers=1, quiet=True)
    assert table["skipped"].all()                             # c1 came back whole: reused
    assert [p.name for p in out.iterdir() if p.name.startswith(".")] == [".ttsp-output"]
