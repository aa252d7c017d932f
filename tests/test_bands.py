"""Tests of ttsp.bands: uncertainty bands on predictions from a bootstrap made at build time.

Ground truth: exact campaigns of a Gaussian Prony spectrum under WLF (the generator of
tests/test_shifting.py, Ferry 1980 ch. 3; Williams, Landel & Ferry 1955) with seeded 2 %
log-normal noise; the exact E(t), E', E'' follow from the same spectrum and the exact D(t) from
the exact interconversion of ttsp.interconvert (checked against E*·D* = 1 in
tests/test_interconvert.py). What a 95 % band should do (contain the truth at about its level,
grow where the data end, vanish with the noise) is common practice for bootstrap intervals
(Efron & Tibshirani, An Introduction to the Bootstrap, 1993).
"""

from __future__ import annotations

import json
import math
import warnings

import numpy as np
import pandas as pd
import pytest
from _campaigns import gaussian_spectrum as spectrum
from _campaigns import (  # the exact-campaign generator of the shift tests
    shift_test_campaign as campaign,
)
from _campaigns import wlf_320 as wlf
from typer.testing import CliRunner

import ttsp
from ttsp.bands import Banded, BandEnsemble, check_level
from ttsp.cli import app
from ttsp.exceptions import DataError
from ttsp.interconvert import relaxation_to_creep
from ttsp.model import ViscoelasticModel
from ttsp.prony import PronySeries
from ttsp.workflow import band_columns, predict

TREF_K = 320.0
TREF_C = TREF_K - 273.15
TEMPS = 300 + 5 * np.arange(9.0)
runner = CliRunner()


def quiet(fn, *a, **k):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*a, **k)


def exact_series():
    """The generating spectrum of test_shifting.campaign (frequency data, default window)."""
    laT = wlf(TEMPS)
    x = 2 * np.pi * np.geomspace(0.1, 100, 10)
    lo, hi = np.log10(x[0]) + laT.min(), np.log10(x[-1]) + laT.max()
    tau, Ei, Einf = spectrum(-(lo + hi) / 2, max((hi - lo) / 6, 1.0))
    return PronySeries(Einf, tau, Ei)


def build(noise, seed=1, **options):
    camp, _ = campaign(TEMPS, noise=noise, seed=seed)
    return quiet(ttsp.build, camp, reference_temperature_C=TREF_C, law="wlf",
                 cross_validation=False, **options)


@pytest.fixture(scope="module")
def noisy():
    return build(0.02)


def window_points(result, T, n=30):
    """Times inside the data window at temperature T (K), and the reduced times."""
    lo, hi = result.series.valid_reduced_time_range_s
    la = float(wlf(T))
    t = np.logspace(math.log10(lo) + la, math.log10(hi) + la, n + 2)[1:-1]
    return t, t / 10.0 ** la


def inside_and_ratio(result, T):
    """Per quantity: points whose exact value lies in the 95 % band, and half-width / rms error
    (log10)."""
    ex = exact_series()
    exd = relaxation_to_creep(ex)
    t, red = window_points(result, T)
    f = 1 / (2 * np.pi * t)
    cases = [("relaxation_modulus", {"time_s": t}, ex.relaxation_modulus(red)),
             ("creep_compliance", {"time_s": t}, exd.creep_compliance(red)),
             ("storage_modulus", {"frequency_Hz": f}, ex.storage_modulus(1 / red)),
             ("loss_modulus", {"frequency_Hz": f}, ex.loss_modulus(1 / red))]
    out = {}
    for q, x, exact in cases:
        b = quiet(result.model.evaluate, q, T, band=0.95, **x)
        err = np.log10(b.value / exact)
        half = 0.5 * np.log10(b.high / b.low)
        out[q] = ((exact >= b.low) & (exact <= b.high),
                  np.sqrt(np.mean(half ** 2)) / np.sqrt(np.mean(err ** 2)))
    return out


# ---- calibration --------------------------------------------------------------------------
def test_band_contains_the_exact_values_at_about_its_level():
    """Six seeded campaigns, four functions, at T_ref and at both end temperatures (where the
    law's a_T counts). Points along one curve share their errors, so the pooled rate over six
    campaigns scatters far more than a binomial count of points would: the benchmark
    (bench_interconvert.py, 20 campaigns) measures 94 %, and these six 95 %; at least 80 % is
    asked of the pool (the same bands a quarter as wide, level 0.376, hold 40 % of E(t): the
    test fails for a band too narrow to be a 95 % band), and the band must stay honest: its
    half-width at most 4 times the rms of the actual error (a normal band has 1.96; measured
    median 2.6), the issue's target, in the median over campaigns and functions."""
    hits, ratios = [], []
    for seed in range(1, 7):
        r = build(0.02, seed=seed)
        for T in (TREF_K, TEMPS.min(), TEMPS.max()):
            for ok, ratio in inside_and_ratio(r, T).values():
                hits.append(ok)
                ratios.append(ratio)
    rate = np.mean(np.concatenate(hits))
    assert rate >= 0.80, rate
    assert np.median(ratios) <= 4.0, np.median(ratios)


def test_noise_free_campaign_gives_a_band_shrinking_towards_zero(noisy):
    """Without noise the shifts are exact to the solver and the Prony residuals are the series'
    own representation error (about 0.05 %, tests/test_crossval.py): the band must shrink to a
    small fraction of the band at 2 % noise (measured 1.0e-4 against 6.4e-3 decade of full
    width, a sixtieth; asked: below a tenth, and below 0.001 decade, 0.23 %)."""
    exact = build(0.0)
    t, _ = window_points(exact, TREF_K)
    width = {}
    for name, r in (("exact", exact), ("noisy", noisy)):
        b = r.model.relaxation_modulus(t, TREF_K, band=0.95)
        width[name] = np.median(np.log10(b.high / b.low))
    assert width["exact"] < 0.1 * width["noisy"], width
    assert width["exact"] < 0.001, width


def test_band_widens_outside_the_window(noisy):
    """Beyond the data window the band must grow with the distance (module rule: at least the
    edge spread times 1 + decades beyond), on both sides, and never stay flat."""
    lo, hi = noisy.series.valid_reduced_time_range_s
    t_out_long = hi * np.array([1.0, 10.0, 100.0, 1000.0])
    t_out_short = lo / np.array([1.0, 10.0, 100.0, 1000.0])
    for q in ("relaxation_modulus", "creep_compliance"):
        for t in (t_out_long, t_out_short):
            b = quiet(noisy.model.evaluate, q, TREF_K, time_s=t, band=0.95)
            w = np.log10(b.high / b.low)
            assert np.all(np.diff(w) > 0), (q, w)
            assert w[-1] > 2.5 * w[0], (q, w)
    f = 1 / (2 * np.pi * t_out_long)
    b = quiet(noisy.model.storage_modulus, f, TREF_K, band=0.95)
    assert np.all(np.diff(np.log10(b.high / b.low)) > 0)


def test_band_widens_with_the_law_away_from_the_reference(noisy):
    """Far outside the law's temperature range the law's parameter draws spread a_T: the band
    at one fixed reduced time is wider at 60 K beyond the data than at T_ref."""
    ref = noisy.model.relaxation_modulus(1.0, TREF_K, band=0.95)
    T = TEMPS.max() + 60
    t = 10.0 ** float(noisy.model.log10_aT(T))
    far = quiet(noisy.model.relaxation_modulus, t, T, band=0.95)
    assert math.log10(far.high / far.low) > math.log10(ref.high / ref.low)


# ---- API and files ------------------------------------------------------------------------
def test_api_return_types(noisy):
    m = noisy.model
    plain = m.storage_modulus(np.array([0.1, 1.0]), 310.0)
    assert isinstance(plain, np.ndarray)
    b = m.storage_modulus(np.array([0.1, 1.0]), 310.0, band=0.9)
    assert isinstance(b, Banded) and b.level == 0.9
    assert np.allclose(b.value, plain)
    assert np.all(b.low < b.value) and np.all(b.value < b.high)
    s = m.creep_compliance(10.0, 320.0, band=0.95)
    assert isinstance(s.value, float) and isinstance(s.low, float)
    wide, narrow = (m.loss_modulus(1.0, 320.0, band=v) for v in (0.99, 0.5))
    assert wide.high > narrow.high > narrow.value > narrow.low > wide.low
    assert isinstance(m.tan_delta(1.0, 320.0, band=0.95), Banded)


@pytest.mark.parametrize("level", [0, 1, 95, -0.5, float("nan"), "high"])
def test_a_level_outside_0_1_is_refused(noisy, level):
    with pytest.raises(DataError, match="band must be a level between 0 and 1"):
        noisy.model.relaxation_modulus(1.0, 320.0, band=level)
    with pytest.raises(DataError, match="band must be a level between 0 and 1"):
        check_level(level)


def test_bands_off_gives_no_band_and_says_why():
    r = build(0.02, bands=False)
    assert r.summary()["bands"] is None
    with pytest.raises(DataError, match="no uncertainty band: it was built with"):
        r.model.relaxation_modulus(1.0, 320.0, band=0.95)


def test_predict_frame_columns_and_summary_round_trip(noisy):
    summary = json.loads(json.dumps(noisy.summary()))
    assert summary["bands"]["members"] == 64
    assert "bootstrap" in summary["bands"]["method"]
    frame = quiet(predict, summary, "relaxation_modulus", 30.0, time_s=np.logspace(-2, 2, 5),
                  band=0.95)
    assert list(frame.columns) == ["temperature_C", "time_s", "relaxation_modulus_Pa",
                                   "relaxation_modulus_low_Pa", "relaxation_modulus_high_Pa"]
    direct = quiet(noisy.model.relaxation_modulus, np.logspace(-2, 2, 5), 303.15, band=0.95)
    # the summary keeps seven significant digits of the members: the band moves by ~1e-7
    assert np.allclose(frame["relaxation_modulus_low_Pa"], direct.low, rtol=1e-5)
    assert band_columns("tan_delta") == ("tan_delta_low", "tan_delta_high")
    assert band_columns("creep_compliance") == ("creep_compliance_low_1_per_Pa",
                                                "creep_compliance_high_1_per_Pa")


def test_a_broken_bands_section_is_refused(noisy):
    summary = json.loads(json.dumps(noisy.summary()))
    summary["bands"]["series"] = summary["bands"]["series"][:2]
    with pytest.raises(DataError, match="bands section cannot be read"):
        ViscoelasticModel.from_summary(summary)
    summary["bands"] = {"method": "x"}
    with pytest.raises(DataError, match="bands section cannot be read"):
        BandEnsemble.from_dict(summary["bands"], noisy.model.law)


def test_cli_predict_band(noisy, tmp_path):
    folder = tmp_path / "build"
    folder.mkdir()
    (folder / "summary.json").write_text(json.dumps(noisy.summary()))
    out = tmp_path / "p.csv"
    res = runner.invoke(app, ["predict", str(folder), "--quantity", "storage_modulus",
                              "--temperature", "40", "--frequency", "0.01:100:1000",
                              "--band", "0.95", "--out", str(out)])
    assert res.exit_code == 0, res.output
    frame = pd.read_csv(out)
    assert list(frame.columns)[-2:] == ["storage_modulus_low_Pa", "storage_modulus_high_Pa"]
    assert len(frame) == 1000
    assert (frame["storage_modulus_low_Pa"] < frame["storage_modulus_Pa"]).all()
    assert (frame["storage_modulus_Pa"] < frame["storage_modulus_high_Pa"]).all()
    res = runner.invoke(app, ["predict", str(folder), "--quantity", "storage_modulus",
                              "--temperature", "40", "--frequency", "1:10:3", "--band", "95"])
    assert res.exit_code == 2
    assert "band must be a level between 0 and 1" in res.output
    assert "Traceback" not in res.output


def test_material_functions_frame_and_figures_carry_the_band(noisy):
    """The report's material-function figures shade the band (one filled area per function,
    none when the build made no bands)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.collections import PolyCollection

    from ttsp.model import QUANTITY_COLUMNS
    from ttsp.plotting import plot_frequency_functions, plot_time_functions

    frame = noisy.material_functions_frame(band=0.95)
    for q in ("relaxation_modulus", "creep_compliance", "storage_modulus", "loss_modulus"):
        low, high = band_columns(q)
        assert (frame[low] <= frame[QUANTITY_COLUMNS[q]]).all()
        assert (frame[high] >= frame[QUANTITY_COLUMNS[q]]).all()
    assert "relaxation_modulus_low_Pa" not in noisy.material_functions_frame()
    plain = build(0.02, bands=False)

    def fills(result, plot):
        ax = plot(result)
        n = sum(isinstance(c, PolyCollection) for a in ax.figure.axes for c in a.collections)
        plt.close(ax.figure)
        return n

    for plot in (plot_time_functions, plot_frequency_functions):
        assert fills(noisy, plot) == fills(plain, plot) + 2


def exact_time_series():
    """The generating spectrum of test_shifting.campaign(domain="time")."""
    laT = wlf(TEMPS)
    x = np.geomspace(1.0, 1000.0, 10)
    lo, hi = np.log10(x[0]) - laT.max(), np.log10(x[-1]) - laT.min()
    tau, Ei, Einf = spectrum((lo + hi) / 2, max((hi - lo) / 6, 1.0))
    return PronySeries(Einf, tau, Ei)


@pytest.mark.parametrize("measured", ["relaxation_modulus_Pa", "creep_compliance_1_per_Pa"])
def test_time_domain_campaigns_get_bands_that_hold_the_truth(measured):
    """Relaxation data, and creep data (the exact D(t) of the same spectrum, through the exact
    interconversion), with 2 % noise over three seeds: the 95 % band of the measured function
    at T_ref holds the exact one at at least 80 % of the window's points (the tolerance of the
    frequency test above, for the same reason; measured 93 % for E(t), 94 % for D(t)), and is
    narrower than 5 % (half-width; the noise is 2 % per point; measured 1.4-1.8 %)."""
    from ttsp.data import Campaign, Isotherm

    ex = exact_time_series()
    exd = relaxation_to_creep(ex)
    quantity = "relaxation_modulus" if measured.startswith("relax") else "creep_compliance"
    hits, halves = [], []
    for seed in (1, 2, 3):
        camp, laT = campaign(TEMPS, noise=0.02, seed=seed, domain="time")
        if quantity == "creep_compliance":
            rng = np.random.default_rng(seed)
            camp = Campaign(tuple(Isotherm(i.temperature_K, i.x, {measured: exd.creep_compliance(
                i.x / 10.0 ** a) * np.exp(0.02 * rng.standard_normal(i.x.size))}, i.source_rows)
                for i, a in zip(camp.isotherms, laT, strict=True)), "time")
        r = quiet(ttsp.build, camp, reference_temperature_C=TREF_C, law="wlf",
                  cross_validation=False)
        assert r.model.ensemble is not None and r.model.ensemble.n_members == 64
        t, red = window_points(r, TREF_K)
        b = quiet(r.model.evaluate, quantity, TREF_K, time_s=t, band=0.95)
        exact = (ex.relaxation_modulus(red) if quantity == "relaxation_modulus"
                 else exd.creep_compliance(red))
        hits.append((exact >= b.low) & (exact <= b.high))
        halves.append(np.median(np.log(b.high / b.value)))
    rate = np.mean(np.concatenate(hits))
    assert rate >= 0.80
    assert max(halves) < 0.05


def test_an_undetermined_shift_is_drawn_with_its_capped_stderr():
    """A shift the data cannot place reports a stderr of up to 100 decades
    (shifting.UNDETERMINED_STDERR); the bootstrap draws it with at most USED_STDERR_CAP, as the
    law counts it (common practice of this project: workflow._fit_law)."""
    from types import SimpleNamespace

    from ttsp.bands import _shift_draws
    from ttsp.shifting import USED_STDERR_CAP

    cov = np.diag([0.01 ** 2, 100.0 ** 2, 0.0])
    cov[0, 1] = cov[1, 0] = 0.5 * 0.01 * 100.0
    shifts = SimpleNamespace(temperature_K=np.array([300.0, 310.0, 320.0]),
                             log10_aT_covariance=cov, log10_aT_stderr=np.array([0.01, 100, 0]))
    d = _shift_draws(shifts, np.random.default_rng(0), 4000)
    sd = d.std(axis=0)
    assert sd[1] == pytest.approx(USED_STDERR_CAP, rel=0.05)   # 4000 draws: sd known to 1.1 %
    assert sd[0] == pytest.approx(0.01, rel=0.05)
    assert sd[2] == 0.0
    assert np.corrcoef(d[:, 0], d[:, 1])[0, 1] == pytest.approx(0.5, abs=0.05)
