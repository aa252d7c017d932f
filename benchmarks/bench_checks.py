"""Calibration of the superposition checks: false alarms on simple campaigns, detection on complex.

Run from the repository root::

    python benchmarks/bench_checks.py            # 240 simple + 120 complex campaigns
    python benchmarks/bench_checks.py --quick    # 60 simple + 40 complex
    python benchmarks/bench_checks.py --oracle   # the separating limit for two processes

A check's verdict is only worth its error rates (threshold from the null distribution:
common practice in test design, no source). Every campaign is built exactly as ``ttsp check``
builds it (:func:`ttsp.workflow.build` with ``cross_validation=False``) and the verdict of every
check is counted.

Simple campaigns (thermorheologically simple by construction): a generalized-Maxwell spectrum
(symmetric, skewed or bimodal in log τ; benchmarks/generator.py) with one WLF law, 0.5–5 %
log-normal noise, 5–30 isotherms 5 K apart, 10 frequencies 0.1–100 Hz (or 10 times 1–1000 s),
tensile or shear, with the spectrum centred on the window or moved by up to 2.5 decades so one
plateau is reached (or, for an equilibrium modulus of zero, a terminal zone).

Complex campaigns, graded by strength (decades):

* ``two_process``: two spectra, each with its own WLF law (the slow one's log a_T scaled by
  1 + r); the strength is the largest difference of the two laws' log10 a_T over the campaign
  (Ngai & Plazek, ch. 26 in Mark (ed.), Physical Properties of Polymers Handbook, 2007: segmental
  and terminal modes with different temperature dependences).
* ``loss_law``: E'' shifted with a different law from E' (as if the two came from different
  mechanisms); the strength is the largest difference of the two laws' log10 a_T.
* ``vertical``: a vertical shift log10 b_T linear in T, ignored by the build; strength is the
  largest |log10 b_T|.

Printed: per check and for the overall verdict (the worst check), the share of simple
campaigns that fail and that warn (any warn or fail); per complex family and strength, the share
flagged (overall warn or fail) and the share failed; and the time the checks add on a
25-isotherm campaign.

``--oracle`` measures how far any statistic of the two single-function shift tables can go at
separating two processes from one (see :func:`oracle`), and how far a likelihood-ratio test
that knows the two-process model can go (see :func:`likelihood_ratio_limit`).

Targets (issue 21): overall 'fail' on ≤ 1 % of simple campaigns, any 'warn' on ≤ 10 %; complex
campaigns whose shifts differ by ≥ 0.3 decade: ≥ 95 % flagged; ≥ 0.1 decade: ≥ 70 %; checks on
25 isotherms add < 0.5 s.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from collections import defaultdict  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from benchmarks.generator import SHAPES, make_campaign, prony_storage_loss, spectrum, wlf_log10_aT  # noqa: E402
from ttsp.data import Campaign, Isotherm  # noqa: E402
from ttsp.exceptions import DataError, FitError  # noqa: E402

STRENGTHS = {"two_process": (0.05, 0.1, 0.3, 1.0), "loss_law": (0.05, 0.1, 0.3, 1.0),
             "vertical": (0.02, 0.05, 0.1, 0.2)}


def _temperatures(C1, C2, tr, n, rng):
    """n temperatures 5 K apart around tr, trimmed so the coldest neighbour step is ≤ 1.5 dec."""
    below = int(rng.integers(0, n // 2 + 1))
    T = tr + 5.0 * np.arange(-below, n - below)
    # keep WLF defined and neighbours within 1.5 decades of shift (the 3-decade window overlaps)
    while True:
        la = wlf_log10_aT(T, C1, C2, tr)
        if np.all(C2 + T - tr > 10) and np.all(np.abs(np.diff(la)) <= 1.5):
            return T
        T = T + 5.0


def simple_case(i, seed):
    """One simple campaign: (campaign, description)."""
    rng = np.random.default_rng(seed)
    shape = SHAPES[i % 3]
    domain = "time" if i % 5 == 4 else "frequency"
    kind = "shear" if i % 2 else "tensile"
    n = int(rng.integers(5, 31))
    noise = float(rng.uniform(0.005, 0.05))
    C1, C2 = float(rng.uniform(8, 18)), float(rng.uniform(50, 130))
    tr = 300.0
    T = _temperatures(C1, C2, tr, n, rng)
    plateau = i % 4 in (1, 2)
    liquid = i % 8 == 2
    e_inf = 0.0 if liquid else 1e6
    camp0, truth = make_campaign(shape, C1, C2, tr, T, noise=0.0, seed=0, domain=domain,
                                 modulus_kind=kind, E_inf=max(e_inf, 1.0))
    center = None
    if plateau:
        mid = float(np.log10(truth.tau_i[np.argmax(truth.E_i)]))
        center = mid + float(rng.choice([-1, 1]) * rng.uniform(1.0, 2.5))
    camp, _ = make_campaign(shape, C1, C2, tr, T, noise=noise, seed=int(rng.integers(2 ** 31)),
                            domain=domain, modulus_kind=kind, E_inf=e_inf,
                            spectrum_center_log10_tau=center)
    desc = f"{shape}/{domain}/{kind}/n={n}/noise={noise:.3f}/{'plateau' if plateau else 'window'}"
    return camp, desc


def _two_spectra_campaign(T, la1, la2, noise, rng, kind, ratio=0.3, loss_law=False):
    """Frequency campaign of E = E1 (law 1) + E2 (law 2), or E' by law 1 and E'' by law 2."""
    f = np.geomspace(0.1, 100.0, 10)
    w = 2 * np.pi * f
    lo, hi = np.log10(w.min()) + min(la1.min(), la2.min()), np.log10(w.max()) + max(la1.max(),
                                                                                      la2.max())
    centre = -(lo + hi) / 2
    width = max((hi - lo) / 6.0, 1.0)
    isos = []
    if loss_law:
        tau, Ei = spectrum("symmetric", centre, width)
        for k, t in enumerate(T):
            e1, _ = prony_storage_loss(w * 10 ** la1[k], 1e6, Ei, tau)
            _, e2 = prony_storage_loss(w * 10 ** la2[k], 1e6, Ei, tau)
            isos.append(_iso(t, w, e1, e2, noise, rng, k))
    else:
        tau1, E1 = spectrum("symmetric", centre - 0.6 * width, 0.6 * width, E_glassy=1e9)
        tau2, E2 = spectrum("symmetric", centre + 1.2 * width, 0.6 * width,
                            E_glassy=ratio * 1e9 + 1e6)
        for k, t in enumerate(T):
            a1, b1 = prony_storage_loss(w * 10 ** la1[k], 1e6, E1, tau1)
            a2, b2 = prony_storage_loss(w * 10 ** la2[k], 0.0, E2, tau2)
            isos.append(_iso(t, w, a1 + a2, b1 + b2, noise, rng, k))
    return Campaign(tuple(isos), "frequency", kind, source="synthetic complex")


def _iso(t, w, e1, e2, noise, rng, k):
    e1 = e1 * np.exp(noise * rng.standard_normal(w.size))
    e2 = e2 * np.exp(noise * rng.standard_normal(w.size))
    return Isotherm(t, w, {"storage_modulus_Pa": e1, "loss_modulus_Pa": e2},
                    np.arange(w.size) + 2 + k * w.size)


def complex_noise(seed):
    """The log-normal noise (relative) that :func:`complex_case` draws for ``seed``."""
    rng = np.random.default_rng(seed)
    rng.integers(8, 21)
    return float(rng.uniform(0.005, 0.03))


def complex_case(family, strength, seed, noise_free=False):
    """One complex campaign of a family at a strength (decades); ``noise_free`` builds the same
    campaign without its noise (the two spectral families only)."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(8, 21))
    noise = float(rng.uniform(0.005, 0.03)) * (0.0 if noise_free else 1.0)
    C1, C2 = float(rng.uniform(8, 18)), float(rng.uniform(50, 130))
    tr = 300.0
    T = _temperatures(C1, C2, tr, n, rng)
    la1 = wlf_log10_aT(T, C1, C2, tr)
    kind = "shear" if seed % 2 else "tensile"
    if family == "vertical":
        span = T - tr
        lbT = strength * span / np.max(np.abs(span))
        camp, _ = make_campaign(SHAPES[seed % 3], C1, C2, tr, T, noise=noise,
                                seed=int(rng.integers(2 ** 31)), log10_bT=lbT,
                                modulus_kind=kind)
        return camp
    r = strength / np.max(np.abs(la1))
    la2 = la1 * (1 + r)
    return _two_spectra_campaign(T, la1, la2, noise, rng, kind, loss_law=family == "loss_law")


def verdicts(campaign):
    """{check name: status} and the overall status of a ttsp check build; None if refused."""
    from ttsp.checks import worst_status
    from ttsp.workflow import build

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            res = build(campaign, cross_validation=False)
        except (DataError, FitError) as exc:
            return None, str(exc)
    out = {c.name: c.status for c in res.checks}
    out["OVERALL"] = worst_status(res.checks)
    return out, res


def _collapse_ratio(result):
    """Largest ratio over isotherms of the build's rms misfit against the master curve
    (overlap quality, decades) to the isotherm's noise (checks/noise.py: the larger of E' and
    E'', stabilised by the typical noise): how far the joint shift fails to collapse the data."""
    from ttsp.checks.noise import estimate_noise

    noise = estimate_noise(result.campaign)
    typical = max(noise["typical"].get(q, 0.0) for q in ("storage_modulus_Pa", "loss_modulus_Pa"))
    own = np.array([np.nanmax([row.get("storage_modulus_Pa", np.nan),
                               row.get("loss_modulus_Pa", np.nan)])
                    for row in noise["per_isotherm"]])
    sigma = np.sqrt(0.5 * (np.where(np.isfinite(own), own, typical) ** 2 + typical ** 2))
    ratio = np.asarray(result.shifts.overlap_quality, float) / sigma
    return float(np.nanmax(ratio))


def _separating_statistics(result):
    """Candidate statistics of a build: from its function_agreement table the largest
    per-isotherm |z|, the weighted trend's |z| and drift (decades), the largest pairwise |z| of
    two informative isotherms, the ordinary-least-squares trend's |t| (residual scatter as its
    noise) and drift; and the collapse ratio (:func:`_collapse_ratio`). None when the check did
    not run or fewer than 3 isotherms are informative."""
    from ttsp.checks.function_agreement import AGREEMENT_TOLERANCE_DECADES, _build_shifts_at

    agree = [c for c in result.checks if c.name == "function_agreement"]
    if not agree:
        return None
    rows = agree[0].details["per_isotherm"]
    keep = np.array([r["informative"] for r in rows])
    if keep.sum() < 3:
        return None
    d = np.array([r["difference_decades"] for r in rows])[keep]
    z = np.array([r["z"] for r in rows])[keep]
    se = np.where(z != 0, d / np.where(z != 0, z, 1.0), AGREEMENT_TOLERANCE_DECADES)
    temps = np.array([r["temperature_C"] + 273.15 for r in rows])[keep]
    log_aT = _build_shifts_at(result.shifts, temps)
    trend = agree[0].details["trend"]
    i, j = np.triu_indices(d.size, 1)
    slope, icpt = np.polyfit(log_aT, d, 1)
    resid = d - (icpt + slope * log_aT)
    ols_se = np.sqrt(resid @ resid / max(d.size - 2, 1) / np.sum((log_aT - log_aT.mean()) ** 2))
    return {"max |z|": float(np.max(np.abs(z))), "trend |z|": abs(trend["z"]),
            "trend drift": trend["drift_decades"],
            "pair |z|": float(np.max(np.abs(d[i] - d[j]) / np.sqrt(se[i] ** 2 + se[j] ** 2))),
            "OLS |t|": abs(float(slope / ols_se)),
            "OLS drift": abs(float(slope)) * float(np.ptp(log_aT)),
            "collapse ratio": _collapse_ratio(result)}


def oracle(n_simple, n_per_strength, false_warn=0.10):
    """The best separation of two processes from one on the benchmark's own seeds.

    Every statistic of :func:`_separating_statistics` is thresholded at the (1 − false_warn)
    quantile of the simple frequency campaigns, so it warns on ``false_warn`` of them by
    construction, and its detection of ``two_process`` campaigns is counted per strength; the
    pairs (trend |z|, trend drift) and (OLS |t|, OLS drift) are searched on a grid for the
    largest detection at 0.1 decade within the same false-warn budget. Thresholds chosen after
    seeing the data are optimistic: this is an upper estimate of what tests of these tables
    reach, not a bound on every test.
    """
    simple = []
    for i in range(n_simple):
        camp, _ = simple_case(i, 1000 + i)
        v, res = verdicts(camp) if camp.domain == "frequency" else (None, None)
        stats = _separating_statistics(res) if v is not None else None
        if stats is not None:
            simple.append(stats)
    levels = STRENGTHS["two_process"]
    complex_stats = {s: [] for s in levels}
    for j, s in enumerate(levels):
        for r in range(n_per_strength):
            v, res = verdicts(complex_case("two_process", s, 5000 + 100 * j + r + 110000))
            stats = _separating_statistics(res) if v is not None else None
            complex_stats[s].append(stats)
    print(f"\nOracle: two_process detected at <= {100 * false_warn:.0f} % false warns on "
          f"{len(simple)} simple frequency campaigns (threshold from their quantile)")
    print(f"{'statistic':22s} {'threshold':>9s} " + " ".join(f"{s:>6.2f}" for s in levels))
    for name in simple[0]:
        cut = float(np.quantile([st[name] for st in simple], 1 - false_warn))
        rates = [np.mean([st is not None and st[name] > cut for st in complex_stats[s]])
                 for s in levels]
        print(f"{name:22s} {cut:9.3f} " + " ".join(f"{100 * r:6.0f}" for r in rates))
    for zkey, dkey in (("trend |z|", "trend drift"), ("OLS |t|", "OLS drift")):
        best = None
        for zc in np.quantile([st[zkey] for st in simple], np.linspace(0.5, 0.99, 50)):
            for dc in np.quantile([st[dkey] for st in simple], np.linspace(0.5, 0.99, 50)):
                fa = np.mean([st[zkey] > zc and st[dkey] > dc for st in simple])
                if fa > false_warn:
                    continue
                rates = [np.mean([st is not None and st[zkey] > zc and st[dkey] > dc
                                  for st in complex_stats[s]]) for s in levels]
                if best is None or rates[1] > best[0][1]:
                    best = (rates, zc, dc, fa)
        if best is not None:
            rates, zc, dc, fa = best
            label = f"{zkey}>{zc:.2g}&drift>{dc:.2g}"
            print(f"{label:32s} " + " ".join(f"{100 * r:6.0f}" for r in rates)
                  + f"  (false {100 * fa:.0f} %)")


def likelihood_ratio_limit(n_per_strength, false_alarm=0.08):
    """Detection of two processes by a likelihood-ratio test that knows the two-process model.

    The noise-free campaign of each two_process seed is shifted as one material (free shift per
    isotherm, spline master curves of E' and E'', every point kept: no outlier rejection); its
    sum of squared misfits over the noise variance is the noncentrality λ that the test of
    "one material" against "the two-process model with the ratio of its two laws free" would
    have (Wilks, Ann. Math. Stat. 9, 60, 1938; noncentral χ² under the alternative: Wald,
    Trans. Am. Math. Soc. 54, 426, 1943). Its power at a false-alarm rate ``false_alarm`` is
    P(χ²₁(λ) > χ²₁,1−α), averaged over seeds: what any test of these campaigns can reach when it
    knows the model, an upper estimate for tests that do not.
    """
    from scipy.stats import chi2, ncx2

    from ttsp.shifting import shift_isotherms

    cut = float(chi2.ppf(1.0 - false_alarm, 1))
    print(f"\nLikelihood-ratio limit: two_process detected at {100 * false_alarm:.0f} % false "
          "alarms by a test that knows the model (mean power over seeds)")
    for j, s in enumerate(STRENGTHS["two_process"]):
        powers = []
        for r in range(n_per_strength):
            seed = 5000 + 100 * j + r + 110000
            camp = complex_case("two_process", s, seed, noise_free=True)
            t_mid = sorted(iso.temperature_K for iso in camp.isotherms)[len(camp) // 2]
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                fit = shift_isotherms(camp, t_mid, robust=False, outlier_threshold=1e9,
                                      master_curve="spline")
            n_points = 2 * sum(iso.n_points for iso in camp.isotherms)
            sigma_log10 = complex_noise(seed) / np.log(10.0)
            lam = n_points * float(fit.rms_residual) ** 2 / sigma_log10 ** 2
            powers.append(1.0 - float(ncx2.cdf(cut, 1, lam)))
        print(f"  {s:5.2f} decade: {100 * np.mean(powers):4.0f} %")


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true")
    p.add_argument("--verbose", action="store_true", help="name every simple campaign flagged")
    p.add_argument("--oracle", action="store_true",
                   help="only the separating limit for two processes (see oracle())")
    args = p.parse_args(argv)
    n_simple, n_per_strength = (60, 3) if args.quick else (240, 10)
    if args.oracle:
        oracle(n_simple, 2 * n_per_strength)   # twice the seeds: the rates at 0.1 decade
        likelihood_ratio_limit(5 * n_per_strength)
        return
    t0 = time.perf_counter()

    counts = defaultdict(lambda: {"pass": 0, "warn": 0, "fail": 0})
    refused = []
    for i in range(n_simple):
        camp, desc = simple_case(i, 1000 + i)
        v, res = verdicts(camp)
        if v is None:
            refused.append((desc, res))
            continue
        for name, status in v.items():
            counts[name][status] += 1
        if args.verbose and v["OVERALL"] != "pass":
            bad = [f"{c.name}={c.status}({c.value if c.value is None else round(c.value, 3)})"
                   for c in res.checks if c.status != "pass"]
            print(f"  simple {i:3d} {desc}: {', '.join(bad)}")
    print(f"\nSimple campaigns: {n_simple} ({len(refused)} refused by the build)")
    print(f"{'check':32s} {'n':>4s} {'fail %':>7s} {'warn+ %':>8s}")
    for name in sorted(counts, key=lambda s: (s == "OVERALL", s)):
        c = counts[name]
        n = sum(c.values())
        print(f"{name:32s} {n:4d} {100 * c['fail'] / n:7.1f} {100 * (c['fail'] + c['warn']) / n:8.1f}")
    for desc, why in refused[:5]:
        print(f"  refused: {desc}: {why[:120]}")

    print("\nComplex campaigns: share flagged (warn or fail) / failed, by strength")
    print(f"{'family':12s} {'strength':>8s} {'n':>3s} {'flag %':>7s} {'fail %':>7s}  flagged by")
    n_complex = 0
    for family, levels in STRENGTHS.items():
        for j, s in enumerate(levels):
            flagged = failed = n = 0
            by = defaultdict(int)
            for r in range(n_per_strength):
                camp = complex_case(family, s, 5000 + 100 * j + r + 10000 * len(family))
                v, res = verdicts(camp)
                n_complex += 1
                if v is None:
                    flagged += 1      # refused with a message counts as flagged
                    failed += 1
                    by["refused"] += 1
                    n += 1
                    continue
                n += 1
                flagged += v["OVERALL"] != "pass"
                failed += v["OVERALL"] == "fail"
                for name, st in v.items():
                    if name != "OVERALL" and st != "pass":
                        by[name] += 1
            top = ", ".join(f"{k} {m}" for k, m in sorted(by.items(), key=lambda kv: -kv[1])[:3])
            print(f"{family:12s} {s:8.2f} {n:3d} {100 * flagged / n:7.0f} {100 * failed / n:7.0f}"
                  f"  {top}")
    print(f"({n_complex} complex campaigns)")

    # timing: the checks alone on a 25-isotherm campaign
    from ttsp.checks import run_checks
    from ttsp.workflow import build

    T = 300.0 + 5.0 * np.arange(-5, 20)
    camp, _ = make_campaign("symmetric", 10.0, 100.0, 300.0, T, noise=0.02, seed=3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = build(camp, cross_validation=False)
        best = np.inf
        for _ in range(3):
            t1 = time.perf_counter()
            run_checks(res.campaign, shifts=res.shifts, law_fit=res.law_fit,
                       prony_fit=res.prony_fit)
            best = min(best, time.perf_counter() - t1)
    print(f"\nchecks on 25 isotherms x 10 frequencies: {best:.3f} s (best of 3)")
    print(f"total {time.perf_counter() - t0:.0f} s")


if __name__ == "__main__":
    main()
