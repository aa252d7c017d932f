"""Benchmark of batch runs (issue 9): campaigns per second per core, speed-up, memory per worker.

Run from the repository root::

    python benchmarks/bench_batch.py            # 200 campaigns, 1 and 2 workers
    python benchmarks/bench_batch.py --quick    # 30 campaigns

Campaigns come from ``benchmarks/generator.py`` (exact Prony spectra shifted by WLF, 2 %
log-normal noise): 15 isotherms x 10 frequencies (0.1-100 Hz), spectrum shapes and WLF
constants varying from campaign to campaign, each written to its own CSV file; one CSV manifest
lists them. Every run builds them all with :func:`ttsp.batch.run_batch` without figures into a
fresh output folder (nothing is reused).

Rows:

* ``1 worker`` / ``2 workers``: wall time of the whole batch (worker start included; the fork
  server is warmed up before by a small batch), campaigns per second, campaigns per second per
  core (per worker), and the peak resident memory of each worker process (its own
  ``getrusage`` maximum, reported back with each result);
* ``CPU share``: CPU time of the builds over the workers' wall time (1 when every worker has a
  core to itself; less when other programs share the machine), and the parent's CPU time per
  campaign (the batch's own overhead: planning, results table, progress);
* ``speed-up``: time with 1 worker over time with 2, beside the speed-up a pure-Python loop gets
  from 2 processes on the machine at that moment (its ceiling when the cores are shared);
* a per-step profile of one build in this process (reading, shift factors, shift law, Prony
  series, checks, writing), averaged over a few campaigns, to show where the time goes.

Targets (issue 9): >= 10 campaigns/s per core, >= 1.7x with 2 workers, < 500 MB per worker.
"""

from __future__ import annotations

import os

# As in the workers (ttsp.batch sets this for them): single-threaded BLAS for the in-process
# profile, so that it measures the same work.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import resource  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from generator import SHAPES, campaign_temperatures, make_campaign  # noqa: E402

from ttsp import batch  # noqa: E402

TARGET_RATE, TARGET_SPEEDUP, TARGET_MB = 10.0, 1.7, 500.0


def _measured_build(payload):
    """The batch's own build of one campaign, plus this worker's pid, the CPU time of the
    build and the worker's peak memory."""
    before = resource.getrusage(resource.RUSAGE_SELF)
    row = batch._build_one(payload)
    after = resource.getrusage(resource.RUSAGE_SELF)
    peak = after.ru_maxrss
    row["cpu_s"] = (after.ru_utime + after.ru_stime) - (before.ru_utime + before.ru_stime)
    row["worker_pid"] = os.getpid()
    row["worker_peak_MB"] = peak / (1024.0 * 1024.0 if sys.platform == "darwin" else 1024.0)
    return row


def _spin(n: int) -> int:
    total = 0
    for i in range(n):
        total += i * i
    return total


def machine_speedup(n: int = 3_000_000) -> float:
    """Speed-up of a pure-Python loop with 2 processes over 1: what the machine can give now
    (below 2 when others share the cores); the batch's speed-up is to be read against it."""
    import concurrent.futures as cf

    times = []
    for workers in (1, 2):
        with cf.ProcessPoolExecutor(workers) as pool:
            list(pool.map(_spin, [1000] * workers))  # start the workers first
            t0 = time.perf_counter()
            list(pool.map(_spin, [n] * 4))
            times.append(time.perf_counter() - t0)
    return times[0] / times[1]


def write_campaigns(folder: Path, n: int, seed: int = 20240901) -> Path:
    """n campaigns of 15 isotherms x 10 points as CSV files, and their manifest."""
    rng = np.random.default_rng(seed)
    lines = ["id,path"]
    for i in range(n):
        c1, c2 = float(rng.uniform(9, 19)), float(rng.uniform(45, 130))
        tr = float(np.round(rng.uniform(280, 400) / 5) * 5)
        temps = campaign_temperatures(c1, c2, tr, 15)
        camp, _ = make_campaign(SHAPES[i % 3], c1, c2, tr, temps,
                                seed=int(rng.integers(0, 2**31)))
        frame = camp.to_frame()
        rows = ["temperature_C,frequency_Hz,storage_modulus_Pa,loss_modulus_Pa"]
        rows += [f"{t - 273.15:.2f},{w / (2 * np.pi):.8g},{e1:.8g},{e2:.8g}" for t, w, e1, e2 in
                 zip(frame["temperature_K"], frame["frequency_rad_s"],
                     frame["storage_modulus_Pa"], frame["loss_modulus_Pa"], strict=True)]
        name = f"campaign_{i:04d}"
        (folder / f"{name}.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
        lines.append(f"{name},{name}.csv")
    manifest = folder / "manifest.csv"
    manifest.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return manifest


def run(manifest: Path, out: Path, workers: int) -> dict:
    t0, c0 = time.perf_counter(), time.process_time()
    table = batch.run_batch(manifest, out, workers=workers, figures=False, quiet=True,
                            _task=_measured_build)
    wall, parent_cpu = time.perf_counter() - t0, time.process_time() - c0
    n = len(table)
    peaks = table.groupby("worker_pid")["worker_peak_MB"].max()
    return {"workers": workers, "n": n, "failed": int((table["status"] != "ok").sum()),
            "wall_s": wall, "rate": n / wall, "rate_per_core": n / wall / workers,
            "peak_MB": float(peaks.max()), "worker_processes": len(peaks),
            "build_s_median": float(table["elapsed_s"].median()),
            "cpu_s_mean": float(table["cpu_s"].mean()),
            # share of the workers' wall time spent on a CPU: below 1 when others share the cores
            "cpu_share": float(table["cpu_s"].sum()) / (wall * workers),
            "parent_ms": 1000.0 * parent_cpu / n}


def profile_steps(folder: Path, n: int = 5) -> dict:
    """Seconds per step of one build, in this process (warmed up by one build), averaged over n
    campaigns."""
    from ttsp.io.readers import read_campaign
    from ttsp.io.writers import write_build_numbers
    from ttsp.workflow import BuildOptions, build

    totals: dict = {}
    every = sorted(folder.glob("campaign_*.csv"))
    files = every[:n]
    if not files:
        return {}

    def add(step, seconds):
        totals[step] = totals.get(step, 0.0) + seconds / len(files)

    marks, t = [], []

    def mark(name):
        marks.append(name)
        t.append(time.perf_counter())

    with warnings.catch_warnings():   # one untimed build first: lazy imports are not a step
        warnings.simplefilter("ignore")
        build(read_campaign([every[min(n, len(every) - 1)]]), BuildOptions())
    for f in files:
        marks.clear()
        t.clear()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            t0 = time.perf_counter()
            campaign = read_campaign([f])
            add("reading", time.perf_counter() - t0)
            result = build(campaign, BuildOptions(), progress=mark)
            t.append(time.perf_counter())
            for k, name in enumerate(marks):
                add(name, t[k + 1] - t[k])
            with tempfile.TemporaryDirectory() as tmp:
                t0 = time.perf_counter()
                write_build_numbers(result, Path(tmp))
                add("writing", time.perf_counter() - t0)
    return totals


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="30 campaigns instead of 200")
    parser.add_argument("--campaigns", type=int, default=None, help="number of campaigns")
    args = parser.parse_args(argv)
    n = args.campaigns or (30 if args.quick else 200)

    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        data = tmp / "campaigns"
        data.mkdir()
        t0 = time.perf_counter()
        manifest = write_campaigns(data, n)
        print(f"generated {n} campaigns (15 isotherms x 10 points) in "
              f"{time.perf_counter() - t0:.1f} s", flush=True)
        warm = tmp / "warm.csv"
        warm.write_text("id,path\n" + "".join(f"w{i},{data / f'campaign_{i:04d}.csv'}\n"
                                              for i in range(2)), encoding="utf-8")
        batch.run_batch(warm, tmp / "warm-out", workers=2, quiet=True)  # start the fork server

        load = os.getloadavg() if hasattr(os, "getloadavg") else (float("nan"),) * 3
        ceiling_before = machine_speedup()
        rows = [run(manifest, tmp / f"out-{w}", w) for w in (1, 2)]
        ceiling = (ceiling_before + machine_speedup()) / 2
        steps = profile_steps(data)

    one, two = rows
    speedup = one["wall_s"] / two["wall_s"]
    ok = {True: "yes", False: "NO"}
    print()
    print(f"machine: {os.cpu_count()} cores, load average before the runs "
          f"{' '.join(f'{x:.2f}' for x in load)} (a shared machine slows the wall times)")
    print(f"{'run':<10} {'campaigns':>9} {'failed':>6} {'wall s':>8} {'camp/s':>7} "
          f"{'camp/s/core':>11} {'median build s':>14} {'CPU s/camp':>10} "
          f"{'CPU share':>9} {'parent ms/camp':>14} {'peak MB/worker':>14}")
    for r in rows:
        print(f"{str(r['workers']) + ' worker' + ('s' if r['workers'] > 1 else ''):<10} "
              f"{r['n']:>9} {r['failed']:>6} {r['wall_s']:>8.1f} {r['rate']:>7.2f} "
              f"{r['rate_per_core']:>11.2f} {r['build_s_median']:>14.3f} "
              f"{r['cpu_s_mean']:>10.3f} {r['cpu_share']:>9.2f} {r['parent_ms']:>14.1f} "
              f"{r['peak_MB']:>14.0f}")
    print(f"{'speed-up':<10} {speedup:>9.2f}x with 2 workers (a pure-Python loop gets "
          f"{ceiling:.2f}x on this machine now, mean of before and after)")
    print()
    print(f"{'target':<40} {'measured':>10} {'met':>5}")
    best = max(r["rate_per_core"] for r in rows)
    print(f"{'>= 10 campaigns/s per core':<40} {best:>10.2f} {ok[best >= TARGET_RATE]:>5}")
    cpu_rate = 1.0 / min(r["cpu_s_mean"] for r in rows)
    print(f"{'  (from CPU time per build, load-free)':<40} {cpu_rate:>10.2f} "
          f"{ok[cpu_rate >= TARGET_RATE]:>5}")
    print(f"{'>= 1.7x faster with 2 workers':<40} {speedup:>10.2f} "
          f"{ok[speedup >= TARGET_SPEEDUP]:>5}")
    peak = max(r["peak_MB"] for r in rows)
    print(f"{'< 500 MB per worker':<40} {peak:>10.0f} {ok[peak < TARGET_MB]:>5}")
    print()
    total = sum(steps.values())
    print(f"one build in this process, mean of 5 campaigns: {total:.3f} s")
    for name, seconds in sorted(steps.items(), key=lambda kv: -kv[1]):
        print(f"  {name:<15} {seconds:>7.3f} s  {100 * seconds / total:>5.1f} %")


if __name__ == "__main__":
    main()
