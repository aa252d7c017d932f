"""Benchmark of the shift laws on top of automatic shifting (issue: shift laws, targets).

Rows:
* WLF campaigns of the shifting benchmark (2 % noise): the law fitted to ttsp's own shift factors
  (with their covariance, as ``ttsp build`` does; the column "stderr only" weighs each shift by
  its stderr alone, for comparison) must reproduce the TRUE log10 a_T within 0.03 decades over
  the measured range (max over a dense temperature grid inside the range). "law 1σ" is the
  fitted law's own standard error where its error is largest: what the data let it know.
* Arrhenius campaigns (invented here: Ea 60–250 kJ/mol, 8 °C steps, same spectra and noise):
  Ea recovered within 2 %.

Run: ``python benchmarks/bench_laws.py [--quick]``. Prints a table; asserts nothing.
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
import generator as gen  # noqa: E402

from ttsp.data import Campaign, Isotherm  # noqa: E402
from ttsp.laws import fit_shift_law, law_prediction_stderr  # noqa: E402
from ttsp.shifting import shift_isotherms  # noqa: E402

LN10_R = math.log(10) * 8.314462618  # J/(mol K); R from CODATA 2018


def arrhenius_campaign(Ea_kJ, t_ref_K, temps_K, seed, noise=0.02, shape="symmetric"):
    rng = np.random.default_rng(seed)
    laT = Ea_kJ * 1e3 / LN10_R * (1 / temps_K - 1 / t_ref_K)
    x = 2 * np.pi * np.geomspace(0.1, 100, 10)
    lo, hi = np.log10(x.min()) + laT.min(), np.log10(x.max()) + laT.max()
    tau, Ei = gen.spectrum(shape, -(lo + hi) / 2, max((hi - lo) / 6, 1.0))
    isos = []
    for k, t in enumerate(temps_K):
        ep, epp = gen.prony_storage_loss(x * 10 ** laT[k], 1e6, Ei, tau)
        isos.append(Isotherm(t, x, {
            "storage_modulus_Pa": ep * np.exp(noise * rng.standard_normal(x.size)),
            "loss_modulus_Pa": epp * np.exp(noise * rng.standard_normal(x.size))}))
    return Campaign(tuple(isos), "frequency"), laT


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer cases")
    args = ap.parse_args(argv)
    warnings.simplefilter("ignore")
    cases = gen.benchmark_cases(4 if args.quick else 12)
    print("WLF campaigns: law fitted to ttsp shifts vs the true log10 aT (target max <= 0.03 decade)")
    print(f"{'case':<14}{'law':<15}{'max |dlog aT|':>14}{'law 1σ':>8}{'rms':>8}"
          f"{'stderr only':>12}{'time s':>8}")
    worst, worst_plain = [], []
    for case in cases:
        camp, truth, _ = gen.case_campaign(case)
        tr = case["shift_reference_K"]
        t0 = time.perf_counter()
        shifts = shift_isotherms(camp, tr)
        fit = fit_shift_law(shifts.temperature_K, shifts.log10_aT, reference_temperature_K=tr,
                            covariance=shifts.log10_aT_covariance, model="auto")
        dt = time.perf_counter() - t0
        plain = fit_shift_law(shifts.temperature_K, shifts.log10_aT, reference_temperature_K=tr,
                              stderr=shifts.log10_aT_stderr, model="auto")
        T = np.linspace(camp.temperatures_K.min(), camp.temperatures_K.max(), 200)
        true = gen.wlf_log10_aT(T, case["C1"], case["C2_K"], case["wlf_reference_K"]) - \
            gen.wlf_log10_aT(tr, case["C1"], case["C2_K"], case["wlf_reference_K"])
        err = np.abs(fit.law.log10_aT(T) - true)
        worst.append(err.max())
        worst_plain.append(np.abs(plain.law.log10_aT(T) - true).max())
        sigma = law_prediction_stderr(fit, T[[int(np.argmax(err))]])
        sigma = float("nan") if sigma is None else float(sigma[0])
        print(f"{case['name']:<14}{fit.law.model:<15}{err.max():>14.4f}{sigma:>8.4f}"
              f"{np.sqrt(np.mean(err**2)):>8.4f}{worst_plain[-1]:>12.4f}{dt:>8.2f}")
    print(f"{'overall max':<14}{'':<15}{max(worst):>14.4f}{'':>16}{max(worst_plain):>12.4f}"
          f"   target <= 0.03")
    print(f"{'median max':<14}{'':<15}{np.median(worst):>14.4f}{'':>16}"
          f"{np.median(worst_plain):>12.4f}")
    print()
    print("Arrhenius campaigns: Ea recovered (target within 2 %)")
    print(f"{'Ea true':>8}{'Ea fit':>9}{'stderr':>8}{'err %':>8}{'auto picks':>14}")
    rng = np.random.default_rng(7)
    errs = []
    for k, Ea in enumerate([60, 100, 150, 200, 250] if not args.quick else [100, 200]):
        tr = 330.0
        temps = tr + 8.0 * np.arange(-5, 6) * (150 / Ea) ** 0.5
        camp, _ = arrhenius_campaign(Ea, tr, temps, int(rng.integers(1 << 30)),
                                     shape=gen.SHAPES[k % 3])
        shifts = shift_isotherms(camp, tr)
        fit = fit_shift_law(shifts.temperature_K, shifts.log10_aT, reference_temperature_K=tr,
                            covariance=shifts.log10_aT_covariance, model="arrhenius")
        auto = fit_shift_law(shifts.temperature_K, shifts.log10_aT, reference_temperature_K=tr,
                             covariance=shifts.log10_aT_covariance, model="auto")
        ea = fit.params["activation_energy_kJ_per_mol"]
        e = 100 * (ea / Ea - 1)
        errs.append(abs(e))
        print(f"{Ea:>8.0f}{ea:>9.1f}{fit.stderr['activation_energy_kJ_per_mol']:>8.2f}{e:>8.2f}"
              f"{auto.law.model:>14}")
    print(f"max |error| {max(errs):.2f} %   target <= 2 %")


if __name__ == "__main__":
    main()
