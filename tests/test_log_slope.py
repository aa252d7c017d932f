"""Slopes of dense records are taken from a smoothed curve, not adjacent points (issue 23,
point 4). A power law's log–log slope is its exponent (common practice); the noisy record is
invented here (seeded)."""

import numpy as np
import pytest

from ttsp._log_slope import local_log_slope
from ttsp.plotting.checks_figures import _local_log_slope as figure_log_slope


def test_exact_power_law_gives_its_exponent_dense_and_sparse():
    for n in (12, 3000):
        t = np.geomspace(0.2, 3e4, n)
        assert local_log_slope(t, 5.0 * t ** -0.3) == pytest.approx(np.full(n, -0.3), abs=1e-9)


def test_dense_noisy_record_gives_physical_slopes():
    rng = np.random.default_rng(7)
    t = np.geomspace(0.2, 3e4, 2500)          # 480 points per decade
    g = 1e5 * t ** -0.3 * np.exp(rng.normal(0, 0.01, t.size))   # 1 % noise
    slope = -figure_log_slope(t, g)
    # the window of ±0.15 decade holds about 145 points spread over 0.3 decade: the slope's
    # noise is about 0.01/ln(10)/(0.3 * sqrt(145/12)) = 0.004 decades/decade; 0.1 is 25 of them.
    # Adjacent-point slopes here swing by several units.
    assert np.nanmax(np.abs(slope - 0.3)) < 0.1


def test_short_records_have_no_slope():
    assert np.isnan(local_log_slope([1.0, 2.0], [1.0, 2.0])).all()


def test_a_function_measured_at_its_own_times_gets_its_slope_from_its_own_points():
    """Relaxation and creep read from two files: G(t) is NaN at the creep test's rows. The
    slope of G follows G's own points (exact power law t^-0.3) and is NaN at the other rows."""
    t = np.geomspace(1.0, 1e4, 41)
    g = 5.0 * t ** -0.3
    g[1::2] = np.nan
    slope = local_log_slope(t, g)
    assert np.isnan(slope[1::2]).all()
    assert slope[::2] == pytest.approx(np.full(21, -0.3), abs=1e-9)
