"""Benchmark: exact interconversion and history responses (issue 6 target rows).

Rows:

1. exact conversion of a 101-term relaxation series spread over 20 decades (target < 50 ms),
   both directions, and E*·D* − 1 as a check that the timed answer is right;
2. a 1e6-step history with 20 terms (target < 2 s): strain control on an irregular grid, on a
   uniform grid, stress control, and strain control under a temperature history (WLF);
3. creep compliance predicted from the benchmark generator's frequency data (2 % noise):
   master curve built with the exact shift factors (so that only the Prony fit and the
   interconversion are measured), a non-negative Prony fit, the exact conversion, and D(t)
   compared with the exact D(t) of the generating spectrum over the fit's valid reduced-time
   range (target: within 0.5 %). The conversion itself is exact to rounding (row 1), so this
   row measures the Prony fit to noisy data. The same fits on noise-free data show what the
   method itself costs, and the equilibrium modulus is compared with the truth in units of
   its reported stderr; then the same cases with fresh noise: the spread of the error at the
   window's long-time end, and how often a whole draw of cases stays within 0.5 %;
4. uncertainty bands (issue 20): over seeded synthetic campaigns (2 % noise, the generator's
   cases) built by ``ttsp.build`` with free shifts and a fitted law, the share of points
   where the exact D(t), E(t), E', E'' lies inside the 95 % band (targets: >= 90 % of points
   within the window) at the reference temperature and at the coldest and warmest isotherm
   (there the law's a_T counts), and the band's half-width over the rms of the actual error,
   both in log10 (target <= 4: an honest band, not a wide one; a normal band has 1.96);
   on the same builds, the accuracy of D(t), E(t), E', E'' at T_ref over the window (targets
   of issue 20: D(t) worst <= 0.5 %, E(t) rms <= 1 %, E'/E'' rms <= 1.5 %, in every case) and
   E_inf against its stderr; then ``ttsp predict --band`` on 1000 points, in process
   (target < 1 s).

Run: ``python benchmarks/bench_interconvert.py`` (prints a table; no assertions);
``--quick`` runs 20 band campaigns and skips the 1e6-step histories.
"""

from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from benchmarks.generator import (  # noqa: E402
    benchmark_cases,
    case_campaign,
    points_at_true_shifts,
)
from ttsp.exceptions import FitQualityWarning  # noqa: E402
from ttsp.history import strain_under_stress, stress_under_strain  # noqa: E402
from ttsp.interconvert import creep_to_relaxation, relaxation_to_creep  # noqa: E402
from ttsp.prony import PronySeries, fit_prony_frequency  # noqa: E402


def best_of(fn, repeats: int) -> tuple[float, object]:
    """Shortest wall time of ``repeats`` runs (s), and the last result."""
    best, out = np.inf, None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def row(name: str, value: str, target: str, verdict: str) -> None:
    print(f"| {name:<58} | {value:>14} | {target:>10} | {verdict:<4} |")


def conversion_rows() -> None:
    rng = np.random.default_rng(3)
    p = PronySeries(1e3, np.logspace(-10, 10, 101), rng.uniform(0.05, 1.0, 101) * 1e6)
    t_fwd, c = best_of(lambda: relaxation_to_creep(p), 20)
    t_back, b = best_of(lambda: creep_to_relaxation(c), 20)
    w = np.logspace(-16, 14, 301)
    err = np.max(np.abs(p.complex_modulus(w) * c.complex_compliance(w) - 1))
    trip = np.max(np.abs(b.modulus_Pa / p.modulus_Pa - 1))
    row("relaxation -> creep, 101 terms over 20 decades", f"{t_fwd * 1e3:.2f} ms", "< 50 ms",
        "ok" if t_fwd < 0.05 else "SLOW")
    row("creep -> relaxation, 101 terms", f"{t_back * 1e3:.2f} ms", "< 50 ms",
        "ok" if t_back < 0.05 else "SLOW")
    row("  max |E*(w) D*(w) - 1|, 301 w over 30 decades", f"{err:.1e}", "", "")
    row("  round trip max |dE_i/E_i|", f"{trip:.1e}", "", "")


def history_rows() -> None:
    rng = np.random.default_rng(0)
    p = PronySeries(1e6, np.logspace(-6, 6, 20), rng.uniform(0.5, 1.5, 20) * 5e7)
    n = 1_000_000
    t_irr = np.cumsum(rng.uniform(0.5, 1.5, n)) * 1e-3
    t_uni = np.arange(n) * 1e-3
    strain = 1e-3 * np.sin(0.1 * t_irr)
    temps = 300.0 + 20.0 * np.sin(1e-3 * t_irr)

    def wlf(temperature_k):
        d = np.asarray(temperature_k) - 300.0
        return -17.44 * d / (51.6 + d)

    cases = [
        ("1e6 steps, 20 terms, strain control, irregular steps",
         lambda: stress_under_strain(p, t_irr, strain)),
        ("1e6 steps, 20 terms, strain control, uniform steps",
         lambda: stress_under_strain(p, t_uni, strain)),
        ("1e6 steps, 20 terms, stress control (creep series)",
         lambda: strain_under_stress(p, t_irr, 1e4 * np.abs(np.sin(0.1 * t_irr)))),
        ("1e6 steps, 20 terms, strain control + temperature history",
         lambda: stress_under_strain(p, t_irr, strain, temperature_K=temps, log10_aT=wlf)),
    ]
    for name, fn in cases:
        seconds, _ = best_of(fn, 3)
        row(name, f"{seconds:.2f} s", "< 2 s", "ok" if seconds < 2.0 else "SLOW")


def creep_accuracy_rows(n_cases: int = 12) -> None:
    worst, rms, e_worst, floor, z_inf = [], [], [], [], []
    for case in benchmark_cases(n_cases):
        worst_exact = _true_shift_fit_error(case, noise=0.0)[0]
        floor.append(worst_exact)
        camp, truth, true_log10_aT = case_campaign(case, noise=0.02)
        ref = case["shift_reference_K"]
        w, ep, epp = [], [], []
        for iso, la in zip(camp.isotherms, true_log10_aT, strict=True):
            w.append(iso.x * 10.0 ** la)
            ep.append(iso.values["storage_modulus_Pa"])
            epp.append(iso.values["loss_modulus_Pa"])
        w, ep, epp = (np.concatenate(v) for v in (w, ep, epp))
        order = np.argsort(w)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FitQualityWarning)   # plateau verdicts
            fit = fit_prony_frequency(w[order], ep[order], epp[order],
                                      reference_temperature_K=ref)
        fitted = relaxation_to_creep(fit.series)
        z_inf.append((fit.params["equilibrium_modulus_Pa"] - truth.E_inf)
                     / fit.stderr["equilibrium_modulus_Pa"])
        # exact creep of the generating spectrum moved to the shift reference temperature:
        # tau(T_s) = tau(T_wlf) a_T(T_s), with log10 a_T(T_s) relative to the generator's WLF
        # reference = truth.log10_aT - true_log10_aT (the same for every isotherm)
        shift = float(truth.log10_aT[0] - true_log10_aT[0])
        exact_e = PronySeries(truth.E_inf, truth.tau_i * 10.0 ** shift, truth.E_i)
        exact = relaxation_to_creep(exact_e)
        lo, hi = fit.series.valid_reduced_time_range_s
        t = np.logspace(np.log10(lo), np.log10(hi), 200)
        rel = fitted.creep_compliance(t) / exact.creep_compliance(t) - 1
        worst.append(100 * np.abs(rel).max())
        rms.append(100 * np.sqrt(np.mean(rel**2)))
        e_worst.append(100 * np.abs(fit.series.relaxation_modulus(t)
                                    / exact_e.relaxation_modulus(t) - 1).max())
    worst, rms = np.array(worst), np.array(rms)
    row(f"D(t) at T_ref, 2 % noisy E', E'' ({n_cases} cases): median max",
        f"{np.median(worst):.3f} %", "< 0.5 %", "ok" if np.median(worst) < 0.5 else "MISS")
    row("  worst case, max over the valid reduced range", f"{worst.max():.3f} %", "", "")
    row("  median rms over the valid reduced range", f"{np.median(rms):.3f} %", "", "")
    row("  (same fits) E(t): median of max, for comparison", f"{np.median(e_worst):.3f} %",
        "", "")
    # the noise-free fits measure the method (grid, margin, E_inf); the rest is the noise
    # (noise_floor_rows: its spread at the window's long-time end)
    row("  same fits, noise-free E', E'': worst (the method's own)",
        f"{max(floor):.3f} %", "", "")
    z_inf = np.abs(np.array(z_inf))
    row("  E_inf within 1 / 2 stderr of the truth (profile stderr)",
        f"{100 * np.mean(z_inf <= 1):.0f} / {100 * np.mean(z_inf <= 2):.0f} %", "~68 / 95",
        "ok" if np.mean(z_inf <= 2) >= 0.9 else "MISS")


def noise_floor_rows(n_cases: int = 12, n_draws: int = 20) -> None:
    """The same cases with fresh noise (``n_draws`` seeds each, true shifts, default fit): the
    standard deviation of the D(t) error at the window's long-time end, where one isotherm's
    lowest frequencies alone hold the curve, and how often all cases of one draw stay within
    0.5 % worst."""
    end_sd, worst = [], []
    for case in benchmark_cases(n_cases):
        draws = [_true_shift_fit_error(dict(case, seed=1000 + k), noise=0.02, end=True)
                 for k in range(n_draws)]
        end_sd.append(float(np.std([d[2] for d in draws])))
        worst.append([d[0] for d in draws])
    worst = np.array(worst)   # cases x draws
    row(f"  fresh noise ({n_draws} draws/case): sd of D err at the long end",
        f"{np.median(end_sd):.2f}-{max(end_sd):.2f} %", "", "")
    row("  draws whose worst case is <= 0.5 %; median worst case",
        f"{100 * np.mean(worst.max(axis=0) <= 0.5):.0f} %; {np.median(worst.max(axis=0)):.2f} %",
        "", "")


def _true_shift_fit_error(case, noise: float, end: bool = False) -> tuple:
    """Worst and rms relative error (%) of D(t) from the default fit on the case's points
    at the true shifts, over the valid reduced range (and with ``end`` the signed error at
    its long-time end)."""
    w, ep, epp, (e_inf, e_i, tau) = points_at_true_shifts(case, noise=noise)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitQualityWarning)
        fit = fit_prony_frequency(w, ep, epp)
    exact = relaxation_to_creep(PronySeries(e_inf, tau, e_i))
    lo, hi = fit.series.valid_reduced_time_range_s
    t = np.logspace(np.log10(lo), np.log10(hi), 200)
    rel = relaxation_to_creep(fit.series).creep_compliance(t) / exact.creep_compliance(t) - 1
    out = (100 * float(np.abs(rel).max()), 100 * float(np.sqrt(np.mean(rel ** 2))))
    return out + (100 * float(rel[-1]),) if end else out


def _band_points(case, camp, truth, true_log10_aT, result, n=40):
    """(quantity, temperature_K, x keyword, exact values) inside the data window."""
    from benchmarks.generator import wlf_log10_aT

    ref = result.reference_temperature_K
    shift = float(truth.log10_aT[0] - true_log10_aT[0])   # generator's reference -> ref
    exact_e = PronySeries(truth.E_inf, truth.tau_i * 10.0 ** shift, truth.E_i)
    exact_d = relaxation_to_creep(exact_e)
    lo, hi = result.series.valid_reduced_time_range_s
    out = []
    for T in (ref, float(np.min(truth.temperatures_K)), float(np.max(truth.temperatures_K))):
        la = float(wlf_log10_aT(T, case["C1"], case["C2_K"], case["wlf_reference_K"])
                   - wlf_log10_aT(ref, case["C1"], case["C2_K"], case["wlf_reference_K"]))
        # the window at T in its own time: reduced time t/a_T in [lo, hi]
        t = np.logspace(np.log10(lo) + la, np.log10(hi) + la, n + 2)[1:-1]
        f = 1.0 / (2 * np.pi * t)
        red = t / 10.0 ** la
        out += [("relaxation_modulus", T, {"time_s": t}, exact_e.relaxation_modulus(red)),
                ("creep_compliance", T, {"time_s": t}, exact_d.creep_compliance(red)),
                ("storage_modulus", T, {"frequency_Hz": f}, exact_e.storage_modulus(1.0 / red)),
                ("loss_modulus", T, {"frequency_Hz": f}, exact_e.loss_modulus(1.0 / red))]
    return out


def _build_accuracy(truth, true_log10_aT, result) -> tuple:
    """A build's D(t) worst, E(t), E', E'' rms relative errors (%) at T_ref over its valid
    reduced range against the generating spectrum, and its E_inf error in stderrs."""
    shift = float(truth.log10_aT[0] - true_log10_aT[0])
    exact_e = PronySeries(truth.E_inf, truth.tau_i * 10.0 ** shift, truth.E_i)
    series = result.series
    lo, hi = series.valid_reduced_time_range_s
    t = np.logspace(np.log10(lo), np.log10(hi), 200)
    d = (relaxation_to_creep(series).creep_compliance(t)
         / relaxation_to_creep(exact_e).creep_compliance(t) - 1)

    def rms(a):
        return 100 * float(np.sqrt(np.mean(a ** 2)))

    fit = result.prony_fit
    z = ((fit.params["equilibrium_modulus_Pa"] - truth.E_inf)
         / fit.stderr["equilibrium_modulus_Pa"])
    return (100 * float(np.abs(d).max()),
            rms(series.relaxation_modulus(t) / exact_e.relaxation_modulus(t) - 1),
            rms(series.storage_modulus(1 / t) / exact_e.storage_modulus(1 / t) - 1),
            rms(series.loss_modulus(1 / t) / exact_e.loss_modulus(1 / t) - 1), z)


def band_rows(n_cases: int) -> None:
    from ttsp.exceptions import TtspWarning
    from ttsp.workflow import build, predict

    names = ("creep_compliance", "relaxation_modulus", "storage_modulus", "loss_modulus")
    inside = {q: [] for q in names}
    ratio = {q: [] for q in names}
    at_ref = []
    t_band = []
    accuracy = []
    result = None
    for case in benchmark_cases(n_cases, seed=20261203):
        camp, truth, true_log10_aT = case_campaign(case, noise=0.02)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", TtspWarning)
            t0 = time.perf_counter()
            result = build(camp, reference_temperature_C=case["shift_reference_K"] - 273.15,
                           cross_validation=False)
            t1 = time.perf_counter()
            build(camp, reference_temperature_C=case["shift_reference_K"] - 273.15,
                  cross_validation=False, bands=False)
            t_band.append((t1 - t0) - (time.perf_counter() - t1))
            accuracy.append(_build_accuracy(truth, true_log10_aT, result))
            for q, T, x, exact in _band_points(case, camp, truth, true_log10_aT, result):
                b = result.model.evaluate(q, T, band=0.95, **x)
                ok = (exact >= b.low) & (exact <= b.high)
                inside[q].append(ok)
                if T == result.reference_temperature_K:
                    at_ref.append(ok)
                err = np.log10(b.value / exact)
                half = 0.5 * np.log10(b.high / b.low)
                ratio[q].append(np.sqrt(np.mean(half ** 2)) / np.sqrt(np.mean(err ** 2)))
    symbol = {"creep_compliance": "D(t)", "relaxation_modulus": "E(t)",
              "storage_modulus": "E'", "loss_modulus": "E''"}
    for q in names:
        cover = 100 * np.mean(np.concatenate(inside[q]))
        worst = 100 * min(np.mean(v) for v in inside[q][::3])   # per case, at T_ref
        r = np.median(ratio[q])
        row(f"95 % band, {symbol[q]}: points inside ({n_cases} campaigns x 3 T)",
            f"{cover:.1f} %", ">= 90 %", "ok" if cover >= 90 else "MISS")
        row("  worst campaign at T_ref; median half-width / rms error", f"{worst:.0f} %; {r:.2f}",
            "; <= 4", "ok" if r <= 4 else "WIDE")
    row("  all four at T_ref only: points inside", f"{100 * np.mean(np.concatenate(at_ref)):.1f} %",
        "", "")
    acc = np.array(accuracy)
    for k, (name, target) in enumerate([("D(t) max", 0.5), ("E(t) rms", 1.0),
                                        ("E' rms", 1.5), ("E'' rms", 1.5)]):
        row(f"builds above (free shifts), {name}: median, worst",
            f"{np.median(acc[:, k]):.2f}, {acc[:, k].max():.2f} %", f"<= {target} %",
            "ok" if acc[:, k].max() <= target else "MISS")
    z = np.abs(acc[:, 4])
    row("  E_inf within 1 / 2 stderr of the truth", f"{100 * np.mean(z <= 1):.0f} / "
        f"{100 * np.mean(z <= 2):.0f} %", "~68 / 95", "ok" if np.mean(z <= 2) >= 0.9 else "MISS")
    row("  build time added by the bands (median over campaigns)",
        f"{np.median(t_band):.2f} s", "", "")
    summary = result.summary()
    from ttsp.model import ViscoelasticModel

    t = np.logspace(-3, 6, 1000)

    def run():
        model = ViscoelasticModel.from_summary(summary)   # as 'ttsp predict' reads it
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return predict(model, "creep_compliance", result.reference_temperature_C - 10,
                           time_s=t, band=0.95)

    seconds, _ = best_of(run, 3)
    row("predict --band, D(t) on 1000 points (from summary, in process)", f"{seconds:.2f} s",
        "< 1 s", "ok" if seconds < 1 else "SLOW")


def main() -> None:
    quick = "--quick" in sys.argv[1:]
    print("| row" + " " * 56 + "| value          | target     | ok?  |")
    print("|" + "-" * 60 + "|" + "-" * 16 + "|" + "-" * 12 + "|" + "-" * 6 + "|")
    conversion_rows()
    if not quick:
        history_rows()
    creep_accuracy_rows(6 if quick else 12)
    if not quick:
        noise_floor_rows()
    band_rows(20 if quick else 40)


if __name__ == "__main__":
    main()
