"""Benchmark: Prony fitting (issue 5 target rows).

Rows:

1. speed: a 40-term non-negative fit to 2,000 frequencies (E' and E'' stacked: 4,000
   residuals; target < 0.2 s), and the same with 1,000 frequencies (2,000 residuals);
2. accuracy on the benchmark generator's exact campaigns (12 cases, symmetric / skewed /
   bimodal spectra, WLF shifts, 10 frequencies 0.1-100 Hz per isotherm, 2 % noise): the
   master curve is built with ttsp's shifting (``shift_isotherms``), a default Prony fit is
   made, and the fitted E', E'' and E(t) are compared with the exact functions of the
   generating spectrum over the data's reduced range (targets: E', E'' within 1.5 % rms and
   E(t) within 1 % rms). Beside it: the same fit on the master curve built with the exact
   shift factors (the limit set by the noise) and on one built by a plain chained pairwise
   shifting (each isotherm shifted onto its neighbour in turn; implemented here as the
   baseline);
3. the continuous spectrum and the closed forms on the same data, for scale.

Run: ``python benchmarks/bench_prony.py`` (prints a table; no assertions).
"""

from __future__ import annotations

import sys
import time
import warnings
from functools import partial
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from benchmarks.generator import benchmark_cases, case_campaign, wlf_log10_aT  # noqa: E402
from ttsp.closed_forms import fit_havriliak_negami  # noqa: E402
from ttsp.exceptions import FitQualityWarning  # noqa: E402
from ttsp.pairwise import chained_pairwise_log10_aT  # noqa: E402
from ttsp.prony import PronySeries, fit_prony_frequency  # noqa: E402
from ttsp.spectrum import fit_relaxation_spectrum  # noqa: E402


def best_of(fn, repeats: int):
    best, out = np.inf, None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def row(name: str, value: str, target: str, verdict: str = "") -> None:
    print(f"| {name:<62} | {value:>16} | {target:>10} | {verdict:<4} |")


def rms(a, b) -> float:
    return 100.0 * float(np.sqrt(np.mean((np.asarray(a) / np.asarray(b) - 1.0) ** 2)))


# --------------------------------------------------------------------------- speed
def speed_rows() -> None:
    ref = PronySeries(1e6, np.logspace(-6, 6, 49), np.full(49, 2e7))
    for n in (2000, 1000):
        w = np.logspace(-5, 5, n)
        rng = np.random.default_rng(1)
        e1 = ref.storage_modulus(w) * np.exp(0.02 * rng.standard_normal(n))
        e2 = ref.loss_modulus(w) * np.exp(0.02 * rng.standard_normal(n))
        tau = np.logspace(-6, 6, 40)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FitQualityWarning)
            fit_prony_frequency(w, e1, e2, tau_s=tau)  # warm-up (imports)
            t, fit = best_of(partial(fit_prony_frequency, w, e1, e2, tau_s=tau), 7)
        row(f"40-term fit, {n} frequencies ({2 * n} residuals)", f"{1e3 * t:.1f} ms",
            "< 200 ms" if n == 2000 else "", ("ok" if t < 0.2 else "MISS") if n == 2000 else "")
        if n == 2000:
            row("   its rms deviation from the data (2 % noise)", f"{fit.rms_percent:.2f} %", "", "")


# --------------------------------------------------------------------------- baseline shift
def master_curve(campaign, log10_aT):
    w, e1, e2 = [], [], []
    for iso, la in zip(campaign.isotherms, log10_aT, strict=True):
        w.append(iso.x * 10.0 ** la)
        e1.append(iso.values["storage_modulus_Pa"])
        e2.append(iso.values["loss_modulus_Pa"])
    w, e1, e2 = (np.concatenate(v) for v in (w, e1, e2))
    order = np.argsort(w)
    return w[order], e1[order], e2[order]


def accuracy(campaign, truth, case, log10_aT):
    w, e1, e2 = master_curve(campaign, log10_aT)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitQualityWarning)
        fit = fit_prony_frequency(w, e1, e2)
    # exact functions at the shift reference: τ_i(T_ref') = τ_i·a_T(T_ref')
    a_ref = 10.0 ** float(wlf_log10_aT(case["shift_reference_K"], case["C1"], case["C2_K"],
                                       case["wlf_reference_K"]))
    grid = np.logspace(np.log10(w.min()), np.log10(w.max()), 300)
    ex1, ex2 = truth.storage_loss(grid * a_ref)
    lo, hi = fit.series.valid_reduced_time_range_s
    t = np.logspace(np.log10(lo), np.log10(hi), 300)
    ext = truth.relaxation(t / a_ref)
    return (rms(fit.series.storage_modulus(grid), ex1), rms(fit.series.loss_modulus(grid), ex2),
            rms(fit.series.relaxation_modulus(t), ext), fit)


def accuracy_rows() -> None:
    from ttsp.shifting import shift_isotherms

    cases = benchmark_cases()
    results = {"ttsp shifting": [], "exact shifts (noise limit)": [],
               "chained pairwise shifting": []}
    print()
    print("| case          | shifts                       | E' rms % | E'' rms % | E(t) rms % |"
          " terms | fit rms % |")
    print("|---------------|------------------------------|---------:|----------:|-----------:|"
          "------:|----------:|")
    timings = []
    for case in cases:
        camp, truth, true = case_campaign(case)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            t0 = time.perf_counter()
            shifts = shift_isotherms(camp, case["shift_reference_K"]).log10_aT
            timings.append(time.perf_counter() - t0)
        base = chained_pairwise_log10_aT(camp, case["shift_reference_K"])
        for label, la in (("ttsp shifting", shifts), ("exact shifts (noise limit)", true),
                          ("chained pairwise shifting", base)):
            r1, r2, rt, fit = accuracy(camp, truth, case, la)
            results[label].append((r1, r2, rt))
            print(f"| {case['name']:<13} | {label:<28} | {r1:8.2f} | {r2:9.2f} | {rt:10.2f} |"
                  f" {fit.n_terms:5d} | {fit.rms_percent:9.2f} |")
    print()
    for label, vals in results.items():
        v = np.array(vals)
        # pooled rms over the cases (each case's rms squared, averaged)
        pooled = np.sqrt(np.mean(v ** 2, axis=0))
        ok = label != "ttsp shifting" or (pooled[0] <= 1.5 and pooled[1] <= 1.5
                                          and pooled[2] <= 1.0)
        row(f"{label}: E' / E'' / E(t) rms over 12 cases",
            f"{pooled[0]:.2f} / {pooled[1]:.2f} / {pooled[2]:.2f} %", "1.5/1.5/1 %",
            ("ok" if ok else "MISS") if label == "ttsp shifting" else "")
        row("   worst case E' / E'' / E(t)",
            f"{v[:, 0].max():.2f} / {v[:, 1].max():.2f} / {v[:, 2].max():.2f} %", "", "")
    row("   (time of shift_isotherms per case, median)", f"{1e3 * np.median(timings):.0f} ms",
        "", "")


def extra_rows() -> None:
    case = benchmark_cases()[0]
    camp, truth, true = case_campaign(case)
    w, e1, e2 = master_curve(camp, true)
    t, sp = best_of(lambda: fit_relaxation_spectrum(w, e1, e2), 1)
    row(f"relaxation spectrum (GCV), {w.size} points: fit rms", f"{sp.rms_percent:.2f} %", "",
        "")
    row("   time", f"{1e3 * t:.0f} ms", "", "")
    t, hn = best_of(lambda: fit_havriliak_negami(w, e1, e2), 1)
    row("Havriliak-Negami closed form on a Prony-spectrum curve: rms", f"{hn.rms_percent:.2f} %",
        "", "")
    row("   time", f"{1e3 * t:.0f} ms", "", "")


def main() -> None:
    print("| row                                                            |            value |"
          "     target | ok?  |")
    print("|----------------------------------------------------------------|-----------------:|"
          "-----------:|------|")
    speed_rows()
    extra_rows()
    accuracy_rows()


if __name__ == "__main__":
    main()
