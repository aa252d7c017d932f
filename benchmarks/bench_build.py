"""Benchmark of the main job as a user runs it (issue: the main job end to end, targets).

Rows (wall time of whole commands, interpreter start-up included):
* ``python -c "import ttsp"``                               target < 0.5 s
* ``ttsp build`` on the demo campaign, numbers only          (pipelines)
* ``ttsp build`` on the demo campaign with figures + report  target < 5 s
* the relaxation (adhesive) demo, numbers only

Run: ``python benchmarks/bench_build.py [--repeat N]``. Prints a table; asserts nothing.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "ttsp" / "demo_data"


def wall(cmd) -> float:
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True, cwd=ROOT)
    dt = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(map(str, cmd))} failed:\n{proc.stderr}")
    return dt


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    py = sys.executable
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        def build(inp, extra, k):
            return [py, "-m", "ttsp", "build", str(inp), "--out", f"{tmp}/o{k}", "-q", "--force",
                    *extra]

        jobs = [("import ttsp", lambda k: [py, "-c", "import ttsp"], 0.5),
                ("build DMA demo --no-figures", lambda k: build(DEMO / "damping_elastomer_dma.csv",
                                                                ["--no-figures"], k), None),
                ("build DMA demo with report", lambda k: build(DEMO / "damping_elastomer_dma.csv",
                                                               [], k), 5.0),
                ("build relaxation demo --no-figures",
                 lambda k: build(DEMO / "adhesive_relaxation", ["--no-figures"], k), None)]
        for name, cmd, target in jobs:
            times = [wall(cmd(k)) for k in range(args.repeat)]
            rows.append((name, min(times), statistics.median(times), target))
    print(f"{'command':<38}{'best s':>8}{'median s':>10}{'target s':>10}")
    for name, best, med, target in rows:
        print(f"{name:<38}{best:>8.2f}{med:>10.2f}{(f'< {target:g}' if target else ''):>10}")


if __name__ == "__main__":
    main()
