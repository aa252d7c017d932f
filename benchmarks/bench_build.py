"""Benchmark of the main job as a user runs it (issue: the main job end to end, targets).

Rows (wall time of whole commands, interpreter start-up included):
* ``python -c "import ttsp"``                               target < 0.5 s
* ``ttsp build`` on the demo campaign, numbers only          (pipelines)
* ``ttsp build`` on the demo campaign with figures + report  target < 5 s
* the relaxation (adhesive) demo, numbers only
* in-process, warm (after one build in the same process): ``ttsp.build`` of a synthetic
  campaign of 16 isotherms × 10 frequencies without and with cross-validation, and the
  cross-validation alone (wall and CPU time, median of the repeats); targets (issue 19): the
  build ≤ 50 ms, the cross-validation ≤ 0.5 s and ≤ 2× the build
* in-process build cost at 10, 50 and 200 isotherms × 10 frequencies (grows at most linearly)

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

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "ttsp" / "demo_data"


def wall(cmd) -> float:
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True, cwd=ROOT)
    dt = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(map(str, cmd))} failed:\n{proc.stderr}")
    return dt


def _timed(fn, repeat: int) -> tuple[float, float]:
    """Median wall and CPU seconds of ``fn()`` over ``repeat`` runs."""
    walls, cpus = [], []
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        fn()
        walls.append(time.perf_counter() - w0)
        cpus.append(time.process_time() - c0)
    return statistics.median(walls), statistics.median(cpus)


def in_process_rows(repeat: int) -> list:
    import warnings

    sys.path.insert(0, str(ROOT))
    sys.path.insert(0, str(ROOT / "benchmarks"))
    from bench_shifting import timing_campaign

    import ttsp
    from ttsp.crossval import cross_validate
    from ttsp.workflow import BuildOptions, fit_steps

    warnings.simplefilter("ignore")
    camp = timing_campaign(16, 10)
    ttsp.build(camp)                                   # warm: imports, caches
    options = BuildOptions(cross_validation=False)
    rows = [("16 x 10, numbers, no CV", *_timed(lambda: ttsp.build(camp, options), repeat),
             0.05)]
    rows.append(("16 x 10, numbers, with CV", *_timed(lambda: ttsp.build(camp), repeat), None))
    derived = camp.with_derived()
    t_ref = float(np.median(derived.temperatures_K))
    t_ref = float(derived.temperatures_K[np.argmin(np.abs(derived.temperatures_K - t_ref))])
    full = fit_steps(derived, BuildOptions(), t_ref)
    rows.append(("16 x 10, cross-validation alone",
                 *_timed(lambda: cross_validate(derived, BuildOptions(), t_ref, full=full),
                         repeat), 0.5))
    for n in (10, 50, 200):
        c = timing_campaign(n, 10)
        rows.append((f"{n} x 10, numbers, no CV",
                     *_timed(lambda c=c: ttsp.build(c, options), max(1, repeat // 2)), None))
    return rows


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
    print()
    print(f"{'in-process, warm':<38}{'wall s':>8}{'CPU s':>10}{'target s':>10}")
    for name, w, c, target in in_process_rows(max(args.repeat, 5)):
        print(f"{name:<38}{w:>8.3f}{c:>10.3f}{(f'<= {target:g}' if target else ''):>10}")


if __name__ == "__main__":
    main()
