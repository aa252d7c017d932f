"""Batch runs (ttsp.batch): manifests, parallel builds, fault isolation, resuming, Dask.

Campaigns are generated from a known generalized Maxwell spectrum shifted by the WLF law
(Williams, Landel & Ferry, J. Am. Chem. Soc. 77:3701, 1955; storage and loss moduli of a Prony
series as in Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 3; ``BATCH`` of
tests/_campaigns.py), so the numbers in the results table can be checked against the truth. They
are tiny (5 isotherms x 6 frequencies) to keep this file quick on a shared machine; the bundled
demo campaign is built once, for its documented generating law.
"""

from __future__ import annotations

import dataclasses
import json
import os
import shutil
import sys
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from _campaigns import BATCH, write_batch_campaign, write_manifest
from hypothesis import given, settings
from hypothesis import strategies as st

import ttsp
from ttsp import batch
from ttsp.batch import (
    MANIFEST_COLUMNS,
    OPTION_COLUMNS,
    BatchItem,
    batch_exit_code,
    read_manifest,
    run_batch,
)
from ttsp.exceptions import DataError
from ttsp.io.writers import NUMBER_FILES
from ttsp.runner import run_build
from ttsp.workflow import BuildOptions

T_REF_C = BATCH.reference_C  # °C, the WLF reference of the generated batch campaigns
DEMO = Path(ttsp.__file__).resolve().parent / "demo_data" / "damping_elastomer_dma.csv"


def _crash_task(payload):
    """Stands in for the build in a worker: the campaign 'boom' kills its worker process."""
    if payload["id"] == "boom":
        os._exit(13)
    return batch._build_one(payload)


def _raising_task(payload):
    raise RuntimeError("injected failure outside the build")


@pytest.fixture(scope="module")
def data(tmp_path_factory):
    d = tmp_path_factory.mktemp("campaigns")
    for i in range(3):
        write_batch_campaign(d / f"c{i}.csv", seed=i)
    (d / "bad.csv").write_text("a,b\n1,2\n3,4\n", encoding="utf-8")
    return d


@pytest.fixture(scope="module")
def first_batch(data, tmp_path_factory):
    """The demo, two generated campaigns, one unreadable and one missing file; 2 workers."""
    out = tmp_path_factory.mktemp("batch") / "out"
    manifest = write_manifest(data / "manifest.csv", [
        ("demo", DEMO, "wlf", 10), ("c0", "c0.csv", "wlf", T_REF_C),
        ("c1", "c1.csv", "wlf", T_REF_C), ("bad", "bad.csv", "", ""),
        ("missing", "nowhere/none.csv", "", "")])
    table = run_batch(manifest, out, workers=2, quiet=True)
    return manifest, out, table


# ---- a batch, its folders and its table -------------------------------------------------------
def test_every_campaign_gets_a_build_folder_and_a_row(first_batch):
    _, out, table = first_batch
    assert list(table["id"]) == ["demo", "c0", "c1", "bad", "missing"]  # manifest order
    assert list(table["status"]) == ["ok", "ok", "ok", "failed", "failed"]
    ok = table[table["status"] == "ok"]
    assert (ok["error"] == "").all() and not ok["skipped"].any()
    for ident in ok["id"]:
        for name in NUMBER_FILES:
            assert (out / ident / name).is_file(), (ident, name)
        assert not (out / ident / "report.html").exists()  # figures are off by default
        summary = json.loads((out / ident / "summary.json").read_text(encoding="utf-8"))
        row = table.set_index("id").loc[ident]
        assert row["input_sha256"] == summary["input_sha256"]
        assert row["master_curve"] == summary["master_model"]["chosen"]
        assert row["cv_median_rms_percent_at_law_aT"] == pytest.approx(
            summary["cross_validation"]["median_rms_percent_at_law_aT"])
        assert row["law_C1"] == summary["shift_law"]["parameters"]["C1"]
        assert row["law_C2_K_stderr"] == summary["shift_law"]["parameter_stderr"]["C2_K"]
        assert row["prony_terms"] == len(summary["prony"]["terms"])
        assert row["prony_rms_percent"] == summary["prony"]["fit_rms_percent"]
        assert row["isotherms"] == len(summary["shift_factors"])
        statuses = {c["status"] for c in summary["checks"]}
        worst = "fail" if "fail" in statuses else "warn" if "warn" in statuses else "pass"
        assert row["checks_worst"] == worst
        assert row["checks_failed"] == ";".join(c["name"] for c in summary["checks"]
                                                if c["status"] == "fail")
        assert row["elapsed_s"] > 0
    # nothing half-written: no temporary folders or files are left beside the outputs
    assert [p.name for p in out.iterdir() if p.name.startswith(".")] == [".ttsp-output"]


def test_generated_campaigns_recover_their_wlf_law(first_batch):
    table = first_batch[2].set_index("id")
    t = T_REF_C + 6.0 * np.arange(-2, 3)
    for ident in ("c0", "c1"):
        row = table.loc[ident]
        assert row["law_model"] == "wlf"
        assert row["reference_temperature_C"] == pytest.approx(T_REF_C)
        fitted = BATCH.log10_aT(t, row["law_C1"], row["law_C2_K"])
        # 1 % noise on 6 points per isotherm: shift errors of ~0.01 decade (the shifting
        # benchmark reaches rms 0.018 at 2 % noise); 0.03 decade leaves room for the law fit
        np.testing.assert_allclose(fitted, BATCH.log10_aT(t), atol=0.03)


def test_demo_campaign_recovers_its_generating_law(first_batch):
    row = first_batch[2].set_index("id").loc["demo"]
    # generating law from ttsp/demo_data/TRUTH.txt: WLF C1 = 10.0, C2 = 110.0 K at 10.0 °C
    # (an invented campaign with noise; a direct build gives 10.007 and 109.92 K)
    assert row["law_C1"] == pytest.approx(10.0, rel=0.02)
    assert row["law_C2_K"] == pytest.approx(110.0, rel=0.02)
    # isotherms counted from the file's lines independently of the reader
    lines = DEMO.read_text(encoding="utf-8").splitlines()
    temps = {ln.split(",")[0] for ln in lines if ln[:1].isdigit() or ln[:1] == "-"}
    assert row["isotherms"] == len(temps) == 25 and row["domain"] == "frequency"


def test_a_batch_folder_has_the_same_contract_as_a_build(first_batch, data, tmp_path):
    out = first_batch[1]
    options = BuildOptions(law="wlf", reference_temperature_C=T_REF_C)
    _, direct = run_build([data / "c0.csv"], options, tmp_path / "direct", figures=False,
                          force=False, quiet=True)
    a = json.loads((out / "c0" / "summary.json").read_text(encoding="utf-8"))
    b = json.loads((direct / "summary.json").read_text(encoding="utf-8"))
    a.pop("created_utc"), b.pop("created_utc")
    assert a == b
    for name in NUMBER_FILES[1:]:
        assert (out / "c0" / name).read_bytes() == (direct / name).read_bytes(), name


def test_bad_campaigns_are_rows_with_one_line_errors(first_batch, data):
    table = first_batch[2].set_index("id")
    bad, missing = table.loc["bad"], table.loc["missing"]
    assert bad["status"] == "failed" and "bad.csv" in bad["error"] and "temperature" in bad["error"]
    assert missing["status"] == "failed" and "none.csv" in missing["error"]
    for row in (bad, missing):
        assert "\n" not in row["error"] and pd.isna(row["law_C1"]) and pd.isna(row["isotherms"])
    assert bad["input_sha256"]  # the file exists, so it is hashed; the missing one cannot be
    assert pd.isna(missing["input_sha256"])
    assert batch_exit_code(first_batch[2]) == 2
    assert batch_exit_code(first_batch[2][first_batch[2]["status"] == "ok"]) == 0
    assert batch_exit_code(first_batch[2].iloc[:0]) == 0


def test_results_files_hold_the_table(first_batch):
    _, out, table = first_batch
    lines = (out / "results.jsonl").read_text(encoding="utf-8").splitlines()
    rows = [json.loads(ln) for ln in lines]
    assert [r["id"] for r in rows] == list(table["id"])
    assert rows[3]["law_C1"] is None and rows[3]["error"] == table["error"][3]
    assert rows[1]["law_C1"] == table["law_C1"][1] and rows[1]["skipped"] is False
    csv = pd.read_csv(out / "results.csv", keep_default_na=False, na_values=[""])
    assert list(csv.columns) == list(table.columns)
    assert list(csv["status"]) == list(table["status"])
    # CSV numbers carry 10 significant digits (the writers' format)
    np.testing.assert_allclose(csv["law_C1"][:3], table["law_C1"][:3], rtol=1e-9)


# ---- resuming ---------------------------------------------------------------------------------
def test_rerun_skips_finished_campaigns_and_retries_failed(first_batch, tmp_path):
    manifest, out, first = first_batch
    copy = tmp_path / "out"
    shutil.copytree(out, copy)
    stamps = {i: (copy / i / "summary.json").stat().st_mtime_ns for i in ("demo", "c0", "c1")}
    table = run_batch(manifest, copy, workers=1, quiet=True)
    assert list(table["skipped"]) == [True, True, True, False, False]
    assert list(table["status"]) == list(first["status"])
    for i, stamp in stamps.items():
        assert (copy / i / "summary.json").stat().st_mtime_ns == stamp  # not rewritten
    pd.testing.assert_series_equal(table["law_C2_K"], first["law_C2_K"])
    assert table["error"][3] == first["error"][3]


def test_changed_input_or_options_are_rebuilt_force_rebuilds_all(data, tmp_path):
    src = tmp_path / "in"
    write_batch_campaign(src / "a.csv", seed=4)
    write_batch_campaign(src / "b.csv", seed=5)
    rows = [("a", "a.csv", "wlf", T_REF_C), ("b", "b.csv", "wlf", T_REF_C)]
    manifest = write_manifest(src / "m.csv", rows)
    out = tmp_path / "out"
    first = run_batch(manifest, out, workers=2, quiet=True)
    assert list(first["status"]) == ["ok", "ok"]

    write_batch_campaign(src / "a.csv", seed=6)  # new measurements of campaign a
    second = run_batch(manifest, out, workers=2, quiet=True)
    assert list(second["skipped"]) == [False, True]
    assert second["input_sha256"][0] != first["input_sha256"][0]
    assert second["law_C1"][0] != first["law_C1"][0]
    assert second["input_sha256"][1] == first["input_sha256"][1]

    write_manifest(manifest, [rows[0], ("b", "b.csv", "wlf", 50.85)])  # b's options change
    third = run_batch(manifest, out, workers=2, quiet=True)
    assert list(third["skipped"]) == [True, False]
    assert third["reference_temperature_C"][1] == pytest.approx(50.85)

    forced = run_batch(manifest, out, workers=2, force=True, quiet=True)
    assert not forced["skipped"].any() and (forced["status"] == "ok").all()
    # an earlier numbers-only build is not reused when figures are asked for
    assert json.loads((out / "a" / "summary.json").read_text())["options"]["law"] == "wlf"


def test_a_numbers_only_build_is_not_reused_when_figures_are_asked_for(first_batch, tmp_path):
    # (rendering figures is slow; the figures themselves are tested with ttsp build)
    manifest, out, _ = first_batch
    copy = tmp_path / "out"
    shutil.copytree(out, copy)
    item = read_manifest(manifest)[1]
    sha = json.loads((copy / "c0" / "summary.json").read_text())["input_sha256"]
    assert batch._reusable(item, copy / "c0", sha, figures=False) is not None
    assert batch._reusable(item, copy / "c0", sha, figures=True) is None
    assert batch._reusable(item, copy / "c0", "0" * 64, figures=False) is None
    (copy / "c0" / "prony.csv").unlink()  # an incomplete folder is never reused
    assert batch._reusable(item, copy / "c0", sha, figures=False) is None
    (copy / "c1" / "report.html").write_text("<html></html>", encoding="utf-8")
    item1 = read_manifest(manifest)[2]
    sha1 = json.loads((copy / "c1" / "summary.json").read_text())["input_sha256"]
    assert batch._reusable(item1, copy / "c1", sha1, figures=True) is not None
    assert batch._reusable(item1.__class__(item1.id, item1.paths, item1.options, "shear"),
                           copy / "c1", sha1, figures=False) is None  # another modulus kind


def test_interrupted_batch_continues_where_it_stopped(data, tmp_path, monkeypatch):
    rows = [(f"r{i}", data / f"c{i % 3}.csv", "wlf", T_REF_C) for i in range(4)]
    manifest = write_manifest(tmp_path / "m.csv", rows)
    out = tmp_path / "out"
    add = batch._Table.add

    def interrupted(self, row):  # Ctrl-C arrives in the parent after the first campaign
        add(self, row)
        if len(self.rows) == 1:
            raise KeyboardInterrupt

    monkeypatch.setattr(batch._Table, "add", interrupted)
    with pytest.raises(KeyboardInterrupt):
        run_batch(manifest, out, workers=1, quiet=True)
    monkeypatch.undo()
    written = pd.read_json(out / "results.jsonl", lines=True)
    done = set(written["id"])
    assert 1 <= len(done) < 4 and (written["status"] == "ok").all()
    assert [p.name for p in out.iterdir() if p.name.startswith(".")] == [".ttsp-output"]
    table = run_batch(manifest, out, workers=1, quiet=True)
    assert (table["status"] == "ok").all()
    assert set(table.loc[table["skipped"], "id"]) == done


# ---- fault isolation --------------------------------------------------------------------------
def test_worker_crash_is_recorded_and_the_rest_go_on(data, tmp_path):
    rows = [("a", data / "c0.csv", "wlf", T_REF_C), ("boom", data / "c1.csv", "wlf", T_REF_C),
            ("b", data / "c1.csv", "wlf", T_REF_C), ("c", data / "c2.csv", "wlf", T_REF_C),
            ("d", data / "c0.csv", "wlf", T_REF_C)]
    manifest = write_manifest(tmp_path / "m.csv", rows)
    table = run_batch(manifest, tmp_path / "out", workers=1, quiet=True,
                      _task=_crash_task).set_index("id")
    assert table.loc["boom", "status"] == "failed"
    assert "worker process died" in table.loc["boom", "error"]
    assert (table.drop(index="boom")["status"] == "ok").all()
    assert not (tmp_path / "out" / "boom").exists()


def test_progress_lines_on_stderr_and_quiet(data, tmp_path, capfd):
    manifest = write_manifest(tmp_path / "m.csv", [("c0", data / "c0.csv", "wlf", T_REF_C),
                                                   ("bad", data / "bad.csv", "", "")])
    run_batch(manifest, tmp_path / "o1", workers=1)
    err = capfd.readouterr().err
    assert "[1/2]" in err and "[2/2]" in err and "bad failed: " in err
    run_batch(manifest, tmp_path / "o1", workers=1, progress=False)
    err = capfd.readouterr().err
    assert "bad failed" in err and "c0" not in err  # failures are said even without progress
    run_batch(manifest, tmp_path / "o1", workers=1, quiet=True)
    captured = capfd.readouterr()
    assert captured.err == "" and captured.out == ""


# ---- manifests --------------------------------------------------------------------------------
def test_json_lines_manifest_with_options_and_file_lists(data, tmp_path):
    lines = [{"id": "shear", "path": str(data / "c0.csv"), "law": "wlf",
              "reference_temperature_C": T_REF_C, "modulus_kind": "shear", "bands": False},
             {"id": 7, "path": [str(data / "c1.csv")], "law": None,
              "prony_terms_per_decade": "1.5"},
             {"id": "rel", "path": "c2.csv"}]
    m = tmp_path / "batch.jsonl"
    (tmp_path / "c2.csv").write_bytes((data / "c2.csv").read_bytes())
    m.write_text("# campaigns\n\n" + "\n".join(json.dumps(x) for x in lines) + "\n",
                 encoding="utf-8")
    items = read_manifest(m)
    assert [i.id for i in items] == ["shear", "7", "rel"]
    assert items[0].modulus_kind == "shear" and items[0].options.law == "wlf"
    assert items[1].options.law == "auto" and items[1].options.prony_terms_per_decade == 1.5
    assert items[2].paths == (tmp_path / "c2.csv",)  # relative to the manifest's folder
    table = run_batch(items[:1], tmp_path / "out", workers=1, quiet=True)
    assert table["modulus_kind"][0] == "shear" and table["status"][0] == "ok"
    summary = json.loads((tmp_path / "out" / "shear" / "summary.json").read_text())
    assert summary["modulus_kind"] == "shear"
    assert summary["options"]["bands"] is False   # any build option reaches the build


def test_every_build_option_is_a_manifest_column():
    # read from the dataclass, so that a new build option needs no second edit in the batch
    assert list(OPTION_COLUMNS) == [f.name for f in dataclasses.fields(BuildOptions)]
    assert MANIFEST_COLUMNS == ("id", "path", *OPTION_COLUMNS, "modulus_kind")
    kinds = {name: OPTION_COLUMNS[name] for name in
             ("reference_temperature_C", "law", "spectrum", "material", "exclude_C")}
    assert kinds == {"reference_temperature_C": float, "law": str, "spectrum": bool,
                     "material": str, "exclude_C": "structured"}


@dataclasses.dataclass(frozen=True)
class _WiderOptions(BuildOptions):
    smoothing_decades: float | None = None
    window: int = 3
    note: str = ""
    weights: dict | None = None


@dataclasses.dataclass(frozen=True)
class _WiderOptionsUnresolvable(_WiderOptions):
    model: NotImportedHere | None = None   # noqa: F821 -- a hint only a type checker resolves


@pytest.mark.parametrize("options_class", [_WiderOptions, _WiderOptionsUnresolvable])
def test_a_new_build_option_becomes_a_manifest_column(options_class):
    columns = batch.manifest.option_columns(options_class)
    assert list(columns)[:len(OPTION_COLUMNS)] == list(OPTION_COLUMNS)
    assert {k: columns[k] for k in ("smoothing_decades", "window", "note", "weights")} == \
        {"smoothing_decades": float, "window": float, "note": str, "weights": "structured"}
    assert {k: columns[k] for k in OPTION_COLUMNS} == OPTION_COLUMNS


def test_manifest_columns_of_the_other_build_options(tmp_path):
    m = tmp_path / "m.csv"
    m.write_text("id,path,material,bands,isochrone_frequency_Hz,service_temperature_C\n"
                 "a,x.csv,liquid,no,10,25\n", encoding="utf-8")
    (item,) = read_manifest(m)
    assert (item.options.material, item.options.bands, item.options.isochrone_frequency_Hz,
            item.options.service_temperature_C) == ("liquid", False, 10.0, 25.0)
    m = tmp_path / "m.jsonl"
    m.write_text(json.dumps({"id": "a", "path": "x.csv", "exclude_C": [40, 30],
                             "fixed_log10_aT": {"35": 1.25}}) + "\n", encoding="utf-8")
    (item,) = read_manifest(m)
    assert item.options.exclude_C == (30.0, 40.0)
    assert item.options.fixed_log10_aT == ((35.0, 1.25),)


def test_csv_manifest_forms(tmp_path):
    m = tmp_path / "m.csv"
    m.write_text("\ufeff# a comment\nid;path;gaps;glass_transition_C\n a ; x.csv ;bridge;-20\n"
                 "b;sub/y.csv;;\n", encoding="utf-8")
    a, b = read_manifest(m)
    assert (a.id, a.paths, a.options.gaps, a.options.glass_transition_C) == \
        ("a", (tmp_path / "x.csv",), "bridge", -20.0)
    assert b.options == BuildOptions() and b.modulus_kind is None
    assert b.paths == (tmp_path / "sub" / "y.csv",)


def test_folder_of_campaigns_as_manifest(data, tmp_path):
    folder = tmp_path / "campaigns"
    folder.mkdir()
    for name in ("c0", "c1"):
        shutil.copy(data / f"{name}.csv", folder / f"{name}.csv")
    write_batch_campaign(folder / "sub" / "all.csv", seed=9)  # a sub-folder is one campaign
    (folder / "README.md").write_text("notes", encoding="utf-8")
    (folder / ".hidden.csv").write_text("x", encoding="utf-8")
    items = read_manifest(folder)
    assert [i.id for i in items] == ["c0", "c1", "sub"]
    assert items[2].paths == (folder / "sub",)
    out = folder / "out"  # inside the folder: never taken for a campaign
    out.mkdir()
    table = run_batch(folder, out, workers=2, quiet=True)
    assert list(table["id"]) == ["c0", "c1", "sub"] and (table["status"] == "ok").all()
    assert [i.id for i in read_manifest(folder)] == ["c0", "c1", "sub"]  # out/ is left out
    again = run_batch(folder, out, workers=2, quiet=True)
    assert again["skipped"].all()


@pytest.mark.parametrize("text, match", [
    ("path\nx.csv\n", "needs the column.*id"),
    ("id,path,colour\na,x.csv,red\n", "unknown manifest column.*'colour'"),
    ("id,path\na,x.csv\na,y.csv\n", r"m.csv, row 3: id 'a' repeats the id of m.csv, row 2"),
    ("id,path\nRun,x.csv\nrun,y.csv\n", "differs only in letter case"),
    ("id,path\n../up,x.csv\n", r"m.csv, column 'id', row 2: id must be a folder name"),
    ("id,path\na/b,x.csv\n", "id must be a folder name"),
    ("id,path\n.hidden,x.csv\n", "id must be a folder name"),
    ("id,path\nCON,x.csv\n", "id must be a folder name"),
    ("id,path\nresults.csv,x.csv\n", "id must be a folder name"),
    ("id,path\n,x.csv\n", "id must be a non-empty name"),
    ("id,path\na,\n", r"column 'path', row 2: path must be a file or folder"),
    ("id,path,law\na,x.csv,wlff\n", r"m.csv, row 2 \(id 'a'\): law must be one of"),
    ("id,path,reference_temperature_C\na,x.csv,warm\n",
     r"column 'reference_temperature_C', row 2: reference_temperature_C must be a number"),
    ("id,path,glass_transition_C\na,x.csv,nan\n", "must be a finite number"),
    ("id,path,modulus_kind\na,x.csv,bulk\n", "modulus_kind must be tensile, shear or empty"),
    ("id,path,spectrum\na,x.csv,maybe\n", r"column 'spectrum', row 2: spectrum must be true or false"),
    ("id,path,exclude_C\na,x.csv,35\n",
     r"column 'exclude_C', row 2: exclude_C must be a JSON list or object \(in a JSON Lines"),
    ("id,path\na,x.csv,extra\n", r"row 2: 3 cells where the header has 2"),
    ("id,path,id\na,x.csv,b\n", "a manifest column appears twice"),
    ("id,path\n", "lists no campaigns"),
    ("# only a comment\n", "the manifest is empty"),
])
def test_manifest_errors_name_file_column_and_row(tmp_path, text, match):
    m = tmp_path / "m.csv"
    m.write_text(text, encoding="utf-8")
    with pytest.raises(DataError, match=match):
        read_manifest(m)


@pytest.mark.parametrize("line, match", [
    ('{"id": "a", "path": "x.csv"', r"m.jsonl, row 1: not a JSON object"),
    ('["a", "x.csv"]', "not a JSON object; got list"),
    ('{"id": "a"}', "needs the column.*path"),
    ('{"id": "a", "path": []}', "path must be a file or folder"),
    ('{"id": "a", "path": "x.csv", "law": 3}', "law must be a text value"),
    ('{"id": "a", "path": "x.csv", "reference_temperature_C": true}', "must be a number"),
    ('{"id": null, "path": "x.csv"}', "id must be a non-empty name"),
    ('{"id": "a", "path": "x.csv", "exclude_C": ["warm"]}',
     r"m.jsonl, row 1 \(id 'a'\): exclude_C must be a list of temperatures"),
    ('{"id": "a", "path": "x.csv", "fixed_log10_aT": {"35": "steep"}}',
     "fixed_log10_aT must be a mapping of temperature"),
    ('{"id": "a", "path": "x.csv", "exclude_C": 35}',
     r"column 'exclude_C', row 1: exclude_C must be a JSON list or object"),
])
def test_json_lines_manifest_errors(tmp_path, line, match):
    m = tmp_path / "m.jsonl"
    m.write_text(line + "\n", encoding="utf-8")
    with pytest.raises(DataError, match=match):
        read_manifest(m)


def test_manifest_file_and_folder_errors(tmp_path):
    with pytest.raises(DataError, match="no such manifest file or folder"):
        read_manifest(tmp_path / "absent.csv")
    latin = tmp_path / "latin.csv"
    latin.write_bytes("id,path\ncaf\xe9,x.csv\n".encode("latin-1"))
    with pytest.raises(DataError, match="latin.csv: a manifest must be UTF-8 text"):
        read_manifest(latin)
    empty = tmp_path / "empty"
    empty.mkdir()
    (empty / "notes.md").write_text("x", encoding="utf-8")
    with pytest.raises(DataError, match="holds no campaigns"):
        read_manifest(empty)
    twins = tmp_path / "twins"
    twins.mkdir()
    (twins / "a.csv").write_text("x", encoding="utf-8")
    (twins / "a.txt").write_text("x", encoding="utf-8")
    with pytest.raises(DataError, match=r"entry 'a.txt'.*id 'a' repeats"):
        read_manifest(twins)
    bad_name = tmp_path / "badname"
    bad_name.mkdir()
    (bad_name / "a b?.csv").write_text("x", encoding="utf-8")
    with pytest.raises(DataError, match=r"entry 'a b\?.csv': id must be a folder name"):
        read_manifest(bad_name)


def test_batch_item_rules():
    with pytest.raises(DataError, match="path must name at least one file"):
        BatchItem("a", ())
    with pytest.raises(DataError, match="options must be a ttsp BuildOptions; got 'dict'"):
        BatchItem("a", ("x.csv",), {"law": "wlf"})
    with pytest.raises(DataError, match="modulus_kind must be one of"):
        BatchItem("a", ("x.csv",), modulus_kind="bulk")
    item = BatchItem("a", "x.csv")
    assert item.paths == (Path("x.csv"),)
    assert item.to_dict() == {"id": "a", "paths": ["x.csv"], "options": BuildOptions().to_dict(),
                              "modulus_kind": None}


@settings(max_examples=150, deadline=None)
@given(st.text(alphabet="aZ09_.- /\\:*?\"<>|é\t()+=,@", max_size=12))
def test_accepted_ids_are_single_plain_folder_names(ident):
    try:
        BatchItem(ident, ("x.csv",))
    except DataError:
        return
    # an accepted id is one path component, never '.', '..' or hidden, with no character that
    # any common file system refuses (fact of common practice: / \ : * ? " < > | are refused on
    # Windows), and the folder can be made
    assert Path(ident).name == ident and not ident.startswith(".")
    assert not set(ident) & set('/\\:*?"<>|\t') and ident == ident.strip()
    with tempfile.TemporaryDirectory() as tmp:
        (Path(tmp) / ident).mkdir()


def test_run_batch_argument_errors(data, tmp_path, monkeypatch):
    manifest = write_manifest(tmp_path / "m.csv", [("c0", data / "c0.csv", "wlf", T_REF_C)])
    with pytest.raises(DataError, match="workers must be a whole number >= 1; got 0"):
        run_batch(manifest, tmp_path / "o", workers=0)
    with pytest.raises(DataError, match="either scheduler .* or client"):
        run_batch(manifest, tmp_path / "o", scheduler="tcp://x:1", client=object())
    (tmp_path / "file").write_text("x", encoding="utf-8")
    with pytest.raises(DataError, match="exists and is not a folder"):
        run_batch(manifest, tmp_path / "file")
    with pytest.raises(DataError, match="must not be the folder of campaigns itself"):
        run_batch(data, data)
    with pytest.raises(DataError, match="manifest must be a manifest path.*got 'list'"):
        run_batch([], tmp_path / "o")
    items = read_manifest(manifest)
    with pytest.raises(DataError, match="repeats"):
        run_batch(items + items, tmp_path / "o")
    monkeypatch.setitem(sys.modules, "distributed", None)  # as if Dask were not installed
    with pytest.raises(DataError, match=r"pip install 'ttsp\[dask\]'"):
        run_batch(manifest, tmp_path / "o", scheduler="tcp://127.0.0.1:1", quiet=True)


def test_unreachable_scheduler_is_a_data_error(data, tmp_path, monkeypatch):
    distributed = pytest.importorskip("distributed")

    def refuse(address, timeout=None):
        raise OSError(f"Timed out trying to connect to {address}")

    monkeypatch.setattr(distributed, "Client", refuse)
    manifest = write_manifest(tmp_path / "m.csv", [("c0", data / "c0.csv", "wlf", T_REF_C)])
    with pytest.raises(DataError, match="cannot reach the Dask scheduler at 'tcp://10.0.0.1:9'"):
        run_batch(manifest, tmp_path / "o", scheduler="tcp://10.0.0.1:9", quiet=True)


# ---- Dask -------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def cluster():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=":0") as local:
        yield local


@pytest.mark.slow  # end-to-end: a whole command or process
def test_dask_cluster_gives_the_same_table(cluster, first_batch, tmp_path):
    from distributed import Client

    manifest, _, local = first_batch
    # by address, as 'ttsp batch --scheduler' does
    table = run_batch(manifest, tmp_path / "out", scheduler=cluster.scheduler_address, quiet=True)
    assert list(table["status"]) == list(local["status"])
    assert list(table["error"]) == list(local["error"])
    # the same input, options and code give the same numbers on any worker
    def plain(column):
        return [None if pd.isna(v) else v for v in column]

    for col in ("input_sha256", "law_model", "prony_terms", "checks_worst"):
        assert plain(table[col]) == plain(local[col]), col
    np.testing.assert_allclose(table["law_C1"][:3], local["law_C1"][:3], rtol=1e-9)
    # with a client; finished campaigns are reused from the folders the cluster wrote
    with Client(cluster) as client:
        again = run_batch(manifest, tmp_path / "out", client=client, quiet=True)
        assert list(again["skipped"]) == [True, True, True, False, False]
        failing = run_batch([BatchItem("x", (manifest.parent / "c0.csv",))], tmp_path / "o2",
                            client=client, quiet=True, _task=_raising_task)
        assert client.status == "running"  # a given client is left open
    assert failing["status"][0] == "failed"
    assert failing["error"][0].startswith("the Dask worker failed: RuntimeError")


def test_spectrum_column_and_resume_of_builds_that_did_not_record_it(data, tmp_path):
    """A manifest can ask for the continuous spectrum per campaign; a finished build whose
    summary predates an option (no 'spectrum' key) is reused when the option has its default."""
    src = tmp_path / "in"
    write_batch_campaign(src / "a.csv", seed=4)
    write_batch_campaign(src / "b.csv", seed=5)
    manifest = write_manifest(src / "m.csv", [("a", "a.csv", "true"), ("b", "b.csv", "")],
                              header="id,path,spectrum")
    items = read_manifest(manifest)
    assert [i.options.spectrum for i in items] == [True, False]
    out = tmp_path / "out"
    first = run_batch(manifest, out, workers=1, figures=False, quiet=True)
    assert list(first["status"]) == ["ok", "ok"]
    assert (out / "a" / "relaxation_spectrum.csv").is_file()
    assert not (out / "b" / "relaxation_spectrum.csv").exists()
    # b's summary as an earlier version wrote it: without the new option
    path = out / "b" / "summary.json"
    summary = json.loads(path.read_text(encoding="utf-8"))
    del summary["options"]["spectrum"]
    path.write_text(json.dumps(summary), encoding="utf-8")
    again = run_batch(manifest, out, workers=1, figures=False, quiet=True)
    assert list(again["skipped"]) == [True, True]

