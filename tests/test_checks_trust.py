"""Checks whose verdicts can be trusted (issue 21): expected verdicts on seeded simple and
complex campaigns, the agreement of shifts found on each function alone, the words of the
noise check, and ``ttsp check`` with the build options that change what is checked.

Ground truth: generalized-Maxwell moduli (Ferry, Viscoelastic Properties of Polymers, 3rd ed.,
1980, ch. 3) shifted by WLF (Williams, Landel & Ferry, JACS 77, 3701, 1955).
"""

from __future__ import annotations

import json
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from ttsp.checks import check_function_agreement, worst_status
from ttsp.cli import app
from ttsp.data import Campaign, Isotherm
from ttsp.workflow import build

TAU_S = 10.0 ** np.arange(-8.0, 4.01, 0.25)
E_I = 1e9 * np.exp(-0.5 * ((np.log10(TAU_S) + 2.0) / 1.8) ** 2)
E_I *= 1e9 / E_I.sum()
E_INF = 1e6
T_REF_K = 300.0


def wlf(T_K, C1=10.0, C2_K=100.0):
    return -C1 * (T_K - T_REF_K) / (C2_K + T_K - T_REF_K)


def moduli(omega):
    wt = np.outer(omega, TAU_S)
    return E_INF + (E_I * wt**2 / (1 + wt**2)).sum(1), (E_I * wt / (1 + wt**2)).sum(1)


def campaign(temps_K, law_storage, law_loss, *, noise=0.01, seed=0, kind="tensile"):
    """E' shifted by law_storage, E'' by law_loss (the same law: a simple material)."""
    rng = np.random.default_rng(seed)
    w = 2 * np.pi * np.geomspace(0.1, 100.0, 10)
    isos = []
    for k, t in enumerate(temps_K):
        e1, _ = moduli(w * 10 ** law_storage(t))
        _, e2 = moduli(w * 10 ** law_loss(t))
        isos.append(Isotherm(t, w, {
            "storage_modulus_Pa": e1 * np.exp(noise * rng.standard_normal(w.size)),
            "loss_modulus_Pa": e2 * np.exp(noise * rng.standard_normal(w.size))},
            np.arange(w.size) + 2 + k * w.size))
    return Campaign(tuple(isos), "frequency", kind, source="test")


TEMPS_K = T_REF_K + 5.0 * np.arange(-3, 9)


def checks_of(camp, **options):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return build(camp, cross_validation=False, **options).checks


def test_seeded_simple_campaign_passes_overall():
    """One WLF law for both functions, 2 % noise: nothing is wrong, the verdict is pass (the
    old code warned on the extrapolated rubbery end, which says nothing about superposition)."""
    result = checks_of(campaign(TEMPS_K, wlf, wlf, noise=0.02, seed=1))
    assert worst_status(result) == "pass", [(c.name, c.status, c.message) for c in result]


def test_seeded_complex_campaign_is_flagged_and_the_isotherms_named():
    """E'' on a law whose cold-end shift is 0.6 decade larger than E''s: the shifts of E' alone
    and E'' alone differ far beyond their errors (from the construction)."""
    steeper = lambda t: 1.25 * wlf(t)  # noqa: E731  (largest extra shift 0.25·2.5 ≈ 0.6 dec)
    camp = campaign(TEMPS_K, wlf, steeper, noise=0.01, seed=2)
    result = {c.name: c for c in checks_of(camp)}
    assert worst_status(result.values()) == "fail"
    agree = result["function_agreement"]
    assert agree.status == "fail"
    assert agree.value > 0.2
    # the coldest isotherm is named with its size in decades
    assert f"{TEMPS_K[0] - 273.15:.4g} °C" in agree.message and "decade" in agree.message
    # and the shift table flags them
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        shifts = build(camp, cross_validation=False).shifts
    flagged = [t - 273.15 for t, f in zip(shifts.temperature_K, shifts.flags, strict=True)
               if "functions-disagree" in f]
    assert flagged == pytest.approx(agree.details["disagreeing_temperatures_C"])
    assert "functions-disagree" in shifts.flags[0]


def test_agreement_check_passes_one_law_and_flags_two():
    """The check alone, on the build's shifts: one law → pass; E' and E'' on two laws → the
    disagreeing isotherms are those far from the reference, and the signed difference there has
    the sign of the construction (E'' shifted further: log a_T(E') − log a_T(E'') < 0 cold)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        same = campaign(TEMPS_K, wlf, wlf, noise=0.01, seed=3)
        res = check_function_agreement(same, build(same, cross_validation=False).shifts)
        assert res.status == "pass"
        two = campaign(TEMPS_K, wlf, lambda t: 1.25 * wlf(t), noise=0.01, seed=3)
        res = check_function_agreement(two, build(two, cross_validation=False).shifts)
    assert res.status in ("warn", "fail")
    cold = [r for r in res.details["per_isotherm"] if r["temperature_C"] < 20.0]
    assert all(r["difference_decades"] < 0 for r in cold if r["informative"])
    assert min(res.details["disagreeing_temperatures_C"]) == pytest.approx(TEMPS_K[0] - 273.15)


def test_noise_headline_is_the_measured_scatter():
    """0.1 % noise: the headline reports the measured scatter (well under the 0.46 % floor,
    which is stated as a floor), not the floor (issue 21)."""
    result = {c.name: c for c in checks_of(campaign(TEMPS_K, wlf, wlf, noise=0.001, seed=4))}
    noise = result["noise_level"]
    assert noise.value < 0.3
    assert f"{noise.value:.2g} %" in noise.message
    assert "at least 0.46 %" in noise.message


def _write(path: Path, temps_K, noise=0.01, seed=5):
    rng = np.random.default_rng(seed)
    f = np.geomspace(0.1, 100.0, 8)
    rows = ["Temperature (°C),Frequency (Hz),E' (MPa),E'' (MPa)"]
    for t in temps_K:
        e1, e2 = moduli(2 * np.pi * f * 10 ** wlf(t))
        e1 = e1 * np.exp(noise * rng.standard_normal(f.size))
        e2 = e2 * np.exp(noise * rng.standard_normal(f.size))
        rows += [f"{t - 273.15:g},{a:.6g},{b / 1e6:.8g},{c / 1e6:.8g}"
                 for a, b, c in zip(f, e1, e2, strict=True)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_cli_check_takes_gaps_bridge(tmp_path):
    """A campaign with a 65 K hole (E' ranges 0.7 decade apart across it): without --gaps the
    check stops with one line and exit 2; with --gaps bridge it runs and names the bridged
    shifts."""
    temps = np.concatenate([T_REF_K - 15.0 + 5.0 * np.arange(4),
                            T_REF_K + 80.0 + 5.0 * np.arange(4)])
    path = _write(tmp_path / "gap.csv", temps)
    runner = CliRunner()
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 2, res.output
    res = runner.invoke(app, ["check", str(path), "--gaps", "bridge", "--json"])
    assert res.exit_code in (0,), res.output
    checks = json.loads(res.stdout)["checks"]
    coverage = next(c for c in checks if c["name"] == "overlap_coverage")
    assert coverage["status"] in ("warn", "fail") and "bridged" in coverage["message"]


def test_cli_check_json_matches_summary_checks(tmp_path):
    """`ttsp check --json --law wlf` prints the checks exactly as `ttsp build --law wlf
    --no-cross-validation` writes them into summary.json (same options, same data)."""
    path = _write(tmp_path / "ok.csv", TEMPS_K[:8])
    runner = CliRunner()
    res = runner.invoke(app, ["check", str(path), "--json", "--law", "wlf"])
    assert res.exit_code == 0, res.output
    printed = json.loads(res.stdout)["checks"]
    out = tmp_path / "out"
    res = runner.invoke(app, ["build", str(path), "--law", "wlf", "--no-cross-validation",
                              "--no-figures", "-q", "--out", str(out)])
    assert res.exit_code == 0, res.output
    written = json.loads((out / "summary.json").read_text())["checks"]
    assert printed == written


def test_shear_data_are_named_with_shear_symbols():
    """G', G'', |G*| for shear data (the symbol follows the data: common practice), in every
    check message; no tensile symbol left."""
    result = checks_of(campaign(TEMPS_K, wlf, wlf, noise=0.01, seed=6, kind="shear"))
    text = " ".join(c.message for c in result)
    assert "G''" in text and "|G*|" in text
    assert "E'" not in text and "|E*|" not in text


def test_a_melt_ending_in_its_terminal_zone_is_not_short_of_a_rubbery_plateau(monkeypatch):
    """A liquid (no equilibrium modulus) whose data end with |d ln G'/d ln ω| ≈ 1.4, on the way
    to the slope 2 of flow (Ferry 1980, ch. 3): the range is described as the terminal zone,
    the expected end of a melt with an equilibrium modulus of zero by physics, not as a rubbery
    plateau not reached (the spectrum position was chosen here to give that slope)."""
    monkeypatch.setattr(sys.modules[__name__], "E_INF", 0.0)
    monkeypatch.setattr(sys.modules[__name__], "TAU_S", 10.0 ** (np.arange(-8.0, 4.01, 0.25) - 1.0))
    result = {c.name: c for c in checks_of(campaign(TEMPS_K, wlf, wlf, kind="shear"))}
    rng = result["master_curve_range"]
    assert rng.status == "pass"
    assert "terminal" in rng.message and "zero by physics" in rng.message
    assert "rubbery" not in rng.message


def test_kramers_kronig_names_the_worst_isotherms():
    """E'' of every isotherm scaled by 1.5 (inconsistent with E' by construction): the check
    flags it and names the isotherms behind its number."""
    camp = campaign(TEMPS_K, wlf, wlf, noise=0.005, seed=7)
    from dataclasses import replace

    camp = Campaign(tuple(replace(iso, values={**iso.values, "loss_modulus_Pa":
                                               1.5 * iso.values["loss_modulus_Pa"]})
                          for iso in camp.isotherms), "frequency", "tensile", source="test")
    kk = {c.name: c for c in checks_of(camp)}["kramers_kronig"]
    assert kk.status in ("warn", "fail")
    assert "largest at" in kk.message and "°C (" in kk.message
    assert len(kk.details["worst_isotherms"]) == 3


def _bench_two_process(strength, seed):
    """A two_process campaign of benchmarks/bench_checks.py (two spectra, each on its own WLF
    law; the laws differ by ``strength`` decades at the end of the range)."""
    root = str(Path(__file__).resolve().parents[1])
    if root not in sys.path:
        sys.path.insert(0, root)
    from benchmarks.bench_checks import complex_case

    return complex_case("two_process", strength, seed)


def test_two_processes_drifting_apart_are_flagged_by_the_trend():
    """Two processes whose laws differ by 0.3 decade (benchmark seed 115202): no isotherm's
    single-function shifts differ beyond their own errors, but their difference drifts steadily
    with log a_T (about 0.16 decade over the range, slope 3.4 standard errors): the pooled trend
    flags it, and the message says it is a drift, not one isotherm."""
    result = {c.name: c for c in checks_of(_bench_two_process(0.3, 115202))}
    agree = result["function_agreement"]
    assert agree.status == "warn"
    assert agree.details["trend"]["significant"]
    assert agree.details["disagreeing_temperatures_C"] == []
    assert agree.value == pytest.approx(agree.details["trend"]["drift_decades"])
    assert "drifts" in agree.message


def test_one_law_shows_no_significant_trend():
    """A simple campaign (one WLF law, 2 % noise): the trend of the single-function shift
    difference stays within its thresholds, so function_agreement passes."""
    result = {c.name: c for c in checks_of(campaign(TEMPS_K, wlf, wlf, noise=0.02, seed=1))}
    agree = result["function_agreement"]
    assert agree.status == "pass"
    assert not agree.details["trend"]["significant"]


def test_two_processes_at_the_former_miss_are_flagged():
    """Two processes 0.3 decade apart (benchmark seed 115208), missed by the trend at z 2 and
    0.08 decade: its single-function difference drifts by 0.078 decade over the informative
    isotherms with a slope of 1.7 standard errors, which the thresholds set on the benchmark
    (z 1.5, 0.055 decade) flag."""
    agree = {c.name: c for c in checks_of(_bench_two_process(0.3, 115208))}["function_agreement"]
    assert agree.status == "warn"
    assert agree.details["trend"]["significant"]


def test_a_reference_one_function_cannot_place_does_not_fail_simple_data():
    """A simple campaign of the benchmark's generator (bimodal spectrum, one WLF law, 30
    isotherms, 5 % noise; simple_case(80, 50080)): the E''-alone fit rejects 7 of the 10 points
    of the reference isotherm as outliers and places it 2.6 decades off, so every difference
    measured from it carried that offset and the check failed. That isotherm is not informative;
    the differences are anchored at the informative isotherm nearest to it, and the check no
    longer fails."""
    root = str(Path(__file__).resolve().parents[1])
    if root not in sys.path:
        sys.path.insert(0, root)
    from benchmarks.bench_checks import simple_case

    camp, _ = simple_case(80, 50080)
    agree = {c.name: c for c in checks_of(camp)}["function_agreement"]
    assert agree.status != "fail"
    rows = agree.details["per_isotherm"]
    anchored = [r for r in rows if r["informative"] and r["difference_decades"] == 0.0]
    assert len(anchored) == 1
    assert max(abs(r["difference_decades"]) for r in rows if r["informative"]) < 0.2
