"""Fault injection (issue 17): ``ttsp build`` and ``ttsp batch`` killed at seeded random instants
lose no user file, leave a complete output, and leave no process behind.

The default suite runs one trial of each command (about half a minute on 2 shared cores);
``TTSP_FAULT_TRIALS=N`` runs N of each, and ``benchmarks/bench_fault_injection.py`` runs 50 and
prints a table. The checks of one trial are listed in ``tests/fault_injection.py``.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from fault_injection import run_trial

TRIALS = int(os.environ.get("TTSP_FAULT_TRIALS", "1"))

pytestmark = [pytest.mark.slow, pytest.mark.skipif(not Path("/proc/self/environ").exists(),
                                reason="finds the processes of a run through /proc")]


@pytest.mark.parametrize("seed", range(TRIALS))
@pytest.mark.parametrize("command", ["build", "batch"])
def test_a_kill_at_a_random_instant_loses_nothing(command, seed, tmp_path):
    trial = run_trial(tmp_path / "work", command, seed=1000 + seed)
    assert trial.problems == [], trial
    assert trial.processes_left == 0 and trial.user_files_intact and trial.output_complete
    assert trial.rerun_ok
