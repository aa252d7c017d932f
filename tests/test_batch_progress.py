"""Batch progress on stderr and the results table's temperature unit (issue 16, point 8):
a start line (campaigns found, workers), a count with the time left, and °C for every absolute
temperature of the table."""

from __future__ import annotations

import pytest
from _campaigns import BATCH, write_batch_campaign, write_manifest

from ttsp import batch
from ttsp.batch import run_batch


def test_start_line_count_and_time_left(tmp_path, capfd):
    data = tmp_path / "data"
    data.mkdir()
    rows = [(f"c{k}", write_batch_campaign(data / f"c{k}.csv", seed=k), "wlf", BATCH.reference_C)
            for k in range(3)]
    manifest = write_manifest(tmp_path / "m.csv", rows)
    run_batch(manifest, tmp_path / "out", workers=1)
    err = capfd.readouterr().err.splitlines()
    assert err[0] == ("ttsp batch: 3 campaigns found: 0 reused from an earlier run, 3 to build "
                      "on 1 worker")
    counted = [ln for ln in err if ln.startswith("ttsp batch: [")]
    assert len(counted) == 3
    assert "left" in counted[0] and "left" in counted[1] and "left" not in counted[2]
    run_batch(manifest, tmp_path / "out", workers=1)   # everything reused
    err = capfd.readouterr().err.splitlines()
    assert err[0].endswith("3 reused from an earlier run, 0 to build on 1 worker")


def test_absolute_law_temperatures_are_celsius_in_the_results_table():
    summary = {"shift_law": {"model": "wlf-arrhenius",
                             "parameters": {"C1": 9.0, "C2_K": 100.0,
                                            "glass_transition_K": 323.15,
                                            "activation_energy_kJ_per_mol": 200.0},
                             "parameter_stderr": {"glass_transition_K": 0.5}}}
    payload = {"id": "a", "path": "a.csv"}
    row = batch._row_from_summary(payload, summary, skipped=False, elapsed_s=0.0)
    assert row["law_glass_transition_C"] == pytest.approx(50.0)
    assert row["law_glass_transition_C_stderr"] == 0.5
    assert "law_glass_transition_K" not in row
    assert row["law_C2_K"] == 100.0      # a difference: K


def _fast_or_slow_task(payload):
    """Stands in for the build in a worker: 'slow' takes 3 s, the others return at once."""
    import time

    if payload["id"] == "slow":
        time.sleep(3.0)
    return batch._failed_row(payload, "not built (test)")


@pytest.mark.slow  # end-to-end: a whole command or process
def test_ctrl_c_says_at_once_what_it_waits_for(tmp_path, capfd, monkeypatch):
    data = tmp_path / "data"
    data.mkdir()
    rows = [(name, write_batch_campaign(data / f"{name}.csv", seed=k), "wlf", BATCH.reference_C)
            for k, name in enumerate(("slow", "fast"))]
    manifest = write_manifest(tmp_path / "m.csv", rows)
    original = batch._Reporter.advance

    def interrupted(self, row):   # Ctrl-C arrives while 'slow' is still running
        original(self, row)
        raise KeyboardInterrupt

    monkeypatch.setattr(batch._Reporter, "advance", interrupted)
    with pytest.raises(KeyboardInterrupt):
        run_batch(manifest, tmp_path / "out", workers=2, _task=_fast_or_slow_task)
    err = capfd.readouterr().err
    assert "ttsp batch: interrupted: finishing 1 running, then stopping" in err
