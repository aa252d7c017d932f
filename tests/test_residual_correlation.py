"""Shift stderr that stays honest when residuals are correlated along each isotherm (issue 23,
point 3). The AR(1) variance of a mean, (1 + ρ)/(1 − ρ), is textbook (Bartlett, J. R. Stat.
Soc. Suppl. 8, 27, 1946; from memory); the synthetic campaigns are invented here (seeded)."""

import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from ttsp._residual_correlation import lag_one_correlation, variance_inflation
from ttsp.shifting import shift_isotherms

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
import bench_time_domain as bench  # noqa: E402


def ar1(rng, n, phi):
    e = np.empty(n)
    e[0] = rng.normal()
    for i in range(1, n):
        e[i] = phi * e[i - 1] + np.sqrt(1 - phi ** 2) * rng.normal()
    return e


def test_lag_one_correlation_of_an_ar1_sequence():
    rng = np.random.default_rng(3)
    r = np.concatenate([ar1(rng, 2000, 0.7), ar1(rng, 2000, 0.7)])
    seq = np.repeat([0, 1], 2000)
    # 4000 points: the estimate's standard error is about sqrt((1 - 0.49)/4000) = 0.011
    assert lag_one_correlation(r, seq) == pytest.approx(0.7, abs=0.04)
    # neighbours across sequences are not counted: two constant blocks of opposite sign
    assert lag_one_correlation(np.r_[np.ones(5), -np.ones(5)], np.repeat([0, 1], 5)) == \
        pytest.approx(8 / 10)


def test_inflation_is_one_for_uncorrelated_residuals_and_bounded():
    assert variance_inflation(-0.2, 60) == 1.0
    assert variance_inflation(float("nan"), 60) == 1.0
    # 0.5 plus Kendall's small-sample bias (1 + 1.5)/1000: (1 + 0.5025)/(1 - 0.5025)
    assert variance_inflation(0.5, 1000) == pytest.approx(1.5025 / 0.4975)
    assert variance_inflation(0.99, 10) == 10.0      # never fewer than one effective point


def test_dense_correlated_campaign_stderr_covers_the_truth():
    """On the benchmark's dense relaxation campaigns (AR(1) noise along log time) the old
    stderr covered the true shift within 2 stderr for 44 % of isotherms; the corrected ones
    must cover most of them. 6 campaigns x 4 non-reference isotherms = 24 shifts: at a true
    rate of 90 %, 17 or more are inside with probability 0.99 (binomial)."""
    inside, inflations = [], []
    for seed in range(6):
        campaign, truth, _, _ = bench.make_case(2000 + seed, "relaxation")
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = shift_isotherms(campaign, bench.REF_C + 273.15)
        inflations.append(res.correlation_inflation)
        for tc, s, se in zip(np.round(res.temperature_C, 6), res.log10_aT,
                             res.log10_aT_stderr, strict=True):
            if tc != bench.REF_C:
                inside.append(abs(s - truth[tc]) <= 2 * se)
    assert min(inflations) > 2
    assert sum(inside) >= 17
    assert res.to_dict()["stderr_correlation_inflation"] == res.correlation_inflation
    assert "lag-one correlation" in res.to_dict()["stderr_method"]


def test_a_correlation_within_the_noise_of_its_estimate_is_not_used():
    # 200 neighbour pairs: the lag-one correlation of independent values scatters by 1/sqrt(200)
    # = 0.07 (Bartlett 1946, from memory); 0.12 is below twice that
    assert variance_inflation(0.12, 10, 200) == 1.0
    assert variance_inflation(0.5, 10, 200) > 3.0
