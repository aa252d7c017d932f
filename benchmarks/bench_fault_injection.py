"""Fault injection, 50 trials (issue 17): kill ``ttsp build`` and ``ttsp batch`` at seeded random
instants and count what was lost.

Run from the repository root (Linux: processes are found through ``/proc``)::

    python benchmarks/bench_fault_injection.py            # 25 builds + 25 batches
    python benchmarks/bench_fault_injection.py --trials 6

Each trial (``tests/fault_injection.py``) makes a previous complete output, starts the same
command with ``--force``, sends SIGKILL or SIGTERM to its main process after a delay drawn
uniformly from 0 to 1.1 times an undisturbed run's wall time (measured once per command and
figures setting), and then checks: no process of the run left after 10 s, every user file
unchanged, a complete output at ``--out``, at most one hidden temporary folder per build in
flight, and a clean rerun. Prints one line per trial and a summary table.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from fault_injection import run_trial  # noqa: E402


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--trials", type=int, default=50, help="total, half builds, half batches")
    args = parser.parse_args()
    durations = {}
    trials = []
    t0 = time.monotonic()
    with tempfile.TemporaryDirectory(prefix="ttsp-faults-") as tmp:
        for i in range(args.trials):
            command = "build" if i % 2 == 0 else "batch"

            def full_s(figures, command=command, i=i):
                return durations.get((command, figures))

            trial = run_trial(Path(tmp) / f"t{i}", command, seed=i, full_s=full_s)
            durations.setdefault((command, trial.figures), trial.full_s)
            trials.append(trial)
            print(f"{i:3d} {command:5s} figures={trial.figures!s:5s} {trial.signal_name:7s} "
                  f"after {trial.delay_s:5.2f} s of {trial.full_s:5.2f} s: "
                  f"exit {trial.exit_status:4d}, "
                  f"processes left {trial.processes_left}, hidden left {trial.hidden_left}, "
                  f"{'ok' if trial.ok else 'PROBLEMS: ' + '; '.join(trial.problems)}", flush=True)
    print()
    print("| command | trials | killed before the end | user files lost | incomplete outputs "
          "| processes left | reruns not clean |")
    print("|---|---|---|---|---|---|---|")
    for command in ("build", "batch"):
        rows = [t for t in trials if t.command == command]
        print(f"| {command} | {len(rows)} | {sum(t.exit_status != 0 for t in rows)} "
              f"| {sum(not t.user_files_intact for t in rows)} "
              f"| {sum(not t.output_complete for t in rows)} "
              f"| {sum(t.processes_left for t in rows)} | {sum(not t.rerun_ok for t in rows)} |")
    print(f"\n{len(trials)} trials in {time.monotonic() - t0:.0f} s; "
          f"{sum(not t.ok for t in trials)} with problems")
    return 0 if all(t.ok for t in trials) else 1


if __name__ == "__main__":
    sys.exit(main())
