"""Run every benchmark and print their tables one after another.

``python benchmarks/run_all.py [--quick]``: --quick passes --quick to the benchmarks that have it.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
BENCHES = ["bench_shifting.py", "bench_laws.py", "bench_prony.py", "bench_interconvert.py",
           "bench_binders.py", "bench_build.py", "bench_batch.py", "bench_large.py"]
QUICK = {"bench_shifting.py", "bench_laws.py", "bench_batch.py", "bench_large.py", "bench_prony.py"}


def main():
    quick = "--quick" in sys.argv[1:]
    for name in BENCHES:
        if not (HERE / name).is_file():
            continue
        print(f"\n===== {name} =====", flush=True)
        args = [sys.executable, str(HERE / name)] + (["--quick"] if quick and name in QUICK else [])
        subprocess.run(args, check=False)


if __name__ == "__main__":
    main()
