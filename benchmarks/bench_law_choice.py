"""Benchmark of the automatic shift-law choice on campaigns whose law is known.

Seeded synthetic campaigns (the spectra and noise of ``generator.py``, 2 % on E' and E''):
pure WLF ones (the shifting benchmark's cases, several noise draws each) and pure Arrhenius
ones (Ea 60–250 kJ/mol). Each is shifted as ``ttsp build`` does and the law fitted with
``law="auto"`` the way the build fits it (:func:`ttsp.workflow._fit_law`). Counted:

* **right**: the true family was chosen, or a law whose largest deviation from the true log10
  a_T over the measured range is within the shifts' noise (at most twice the rms error of the
  shifts themselves, and at least 0.01 decade);
* **over-claim**: the reason says "strong" while the chosen law is not the true family and
  is not within that noise.

Target (issue 16): right in ≥ 95 % of ≥ 100 campaigns; no over-claim.

Run: ``python benchmarks/bench_law_choice.py [--quick]``. Prints a table; asserts nothing.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import generator as gen  # noqa: E402
from bench_laws import LN10_R, arrhenius_campaign  # noqa: E402

from ttsp.shifting import shift_isotherms  # noqa: E402
from ttsp.workflow import _fit_law  # noqa: E402


def wlf_cases(n_cases: int, draws: int):
    for case in gen.benchmark_cases(n_cases):
        for d in range(draws):
            camp, _, true = gen.case_campaign(dict(case, seed=case["seed"] + d))
            tr = case["shift_reference_K"]

            def truth(T, case=case, tr=tr):
                return (gen.wlf_log10_aT(T, case["C1"], case["C2_K"], case["wlf_reference_K"])
                        - gen.wlf_log10_aT(tr, case["C1"], case["C2_K"], case["wlf_reference_K"]))
            yield "wlf", camp, tr, truth, true


def arrhenius_cases(n: int, seed: int = 11):
    rng = np.random.default_rng(seed)
    for k in range(n):
        Ea = float(rng.uniform(60, 250))
        tr = 330.0
        step = float(rng.uniform(5.0, 10.0)) * (150 / Ea) ** 0.5
        n_iso = int(rng.integers(7, 14))
        temps = tr + step * (np.arange(n_iso) - n_iso // 2)
        camp, true = arrhenius_campaign(Ea, tr, temps, int(rng.integers(1 << 30)),
                                        shape=gen.SHAPES[k % len(gen.SHAPES)])

        def truth(T, Ea=Ea, tr=tr):
            return Ea * 1e3 / LN10_R * (1 / np.asarray(T) - 1 / tr)
        yield "arrhenius", camp, tr, truth, true


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="about 30 campaigns instead of 120")
    args = ap.parse_args(argv)
    warnings.simplefilter("ignore")
    n_wlf, draws, n_arr = (8, 2, 14) if args.quick else (24, 3, 48)
    rows = {"wlf": [], "arrhenius": []}
    t0 = time.perf_counter()
    for family, camp, tr, truth, true in (*wlf_cases(n_wlf, draws), *arrhenius_cases(n_arr)):
        shifts = shift_isotherms(camp, tr)
        fit = _fit_law(shifts, tr, "auto", None)
        T = np.linspace(camp.temperatures_K.min(), camp.temperatures_K.max(), 200)
        dev = float(np.max(np.abs(fit.law.log10_aT(T) - truth(T))))
        noise = max(0.01, 2 * float(np.sqrt(np.mean((shifts.log10_aT - true) ** 2))))
        right = fit.law.model == family or dev <= noise
        strong = "strong" in fit.reason
        rows[family].append((fit.law.model, right, strong and not right, dev, noise))
    elapsed = time.perf_counter() - t0
    print(f"{'true law':<11}{'campaigns':>10}{'right':>8}{'over-claim':>12}  chosen")
    total = right_all = over_all = 0
    for family, r in rows.items():
        picks = {}
        for m, *_ in r:
            picks[m] = picks.get(m, 0) + 1
        n, right, over = len(r), sum(x[1] for x in r), sum(x[2] for x in r)
        total, right_all, over_all = total + n, right_all + right, over_all + over
        print(f"{family:<11}{n:>10}{100 * right / n:>7.1f}%{over:>12}  "
              + ", ".join(f"{k} {v}" for k, v in sorted(picks.items())))
    print(f"{'all':<11}{total:>10}{100 * right_all / total:>7.1f}%{over_all:>12}  "
          f"({elapsed:.1f} s)")
    print("target: right >= 95 %, no over-claim")
    wrong = [(f, x) for f, r in rows.items() for x in r if not x[1]]
    for f, (m, _, _, dev, noise) in wrong[:10]:
        print(f"  wrong: true {f}, chose {m}, max deviation {dev:.3f} decade (noise {noise:.3f})")
    return math.nan


if __name__ == "__main__":
    main()
