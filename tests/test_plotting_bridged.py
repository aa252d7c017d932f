"""The shift-factor figure of a build with bridged isotherms (issue 16, point 3): the law is
drawn over every isotherm it is used for (dashed beyond its fitted range), and the 'data − law'
panel shows each shift about the law at its own temperature, not at the clipped one.

The campaign is test_shifting's generated WLF one (C1 = 10, C2 = 80 K) with a gap of 55 K
between two cold isotherms and eight warm ones, so the two cold ones are bridged.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from _campaigns import shift_test_campaign as campaign

pytest.importorskip("matplotlib")


@pytest.fixture(scope="module")
def bridged_result():
    from ttsp.workflow import build

    camp, _ = campaign(temps=np.r_[300 + 5 * np.arange(2.0), 360 + 5 * np.arange(8.0)])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = build(camp, reference_temperature_C=380.0 - 273.15, law="wlf", gaps="bridge",
                       cross_validation=False)
    flags = result.shifts.flags
    assert sum("bridged" in f for f in flags) == 2   # the premise of the test
    return result


def _residual_points(residual_ax):
    """(x, y) of every marker drawn in the residual panel."""
    xs, ys = [], []
    for container in residual_ax.containers:   # one errorbar container per group of shifts
        data_line = container.lines[0]
        xs.append(np.asarray(data_line.get_xdata(), float))
        ys.append(np.asarray(data_line.get_ydata(), float))
    return np.concatenate(xs), np.concatenate(ys)


def test_bridged_residuals_are_about_the_law_used_and_in_range(bridged_result):
    from matplotlib.figure import Figure

    from ttsp.plotting import plot_shift_factors

    fig = Figure()
    ax, rax = fig.add_subplot(211), fig.add_subplot(212)
    plot_shift_factors(bridged_result, ax=ax, residual_ax=rax)
    law = bridged_result.law_fit.law
    shifts = bridged_result.shifts
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        expected = shifts.log10_aT - law.log10_aT(shifts.temperature_K)
    x, y = _residual_points(rax)
    order = np.argsort(x)
    np.testing.assert_allclose(np.sort(x), np.sort(shifts.temperature_K - 273.15))
    np.testing.assert_allclose(y[order], expected[np.argsort(shifts.temperature_K)], atol=1e-9)
    # every residual lies inside the panel, and the panel is scaled to them: a bridged shift
    # is placed by the law, so its residual is small (clipping the law drew it decades away)
    lo, hi = rax.get_ylim()
    assert np.all((y > lo) & (y < hi))
    assert hi < 1.0


def test_the_law_reaches_the_bridged_isotherms_dashed(bridged_result):
    from matplotlib.figure import Figure

    from ttsp.plotting import plot_shift_factors

    fig = Figure()
    ax, rax = fig.add_subplot(211), fig.add_subplot(212)
    plot_shift_factors(bridged_result, ax=ax, residual_ax=rax)
    coldest_C = float(bridged_result.shifts.temperature_K.min() - 273.15)
    law_lines = [ln for ln in ax.lines if ln.get_marker() in (None, "None", "", " ")
                 and "law" in str(ln.get_label())]
    dashed = [ln for ln in law_lines if "extrapolated" in str(ln.get_label())]
    assert len(dashed) == 1 and dashed[0].get_linestyle() != "-"
    x = np.asarray(dashed[0].get_xdata(), float)
    y = np.asarray(dashed[0].get_ydata(), float)
    assert np.nanmin(np.where(np.isfinite(y), x, np.nan)) == pytest.approx(coldest_C)
    solid = [ln for ln in law_lines if "fitted" in str(ln.get_label())]
    xs, ys = (np.asarray(solid[0].get_xdata(), float), np.asarray(solid[0].get_ydata(), float))
    rng = bridged_result.law_fit.law.valid_temperature_range_K
    assert np.nanmin(np.where(np.isfinite(ys), xs, np.nan)) == pytest.approx(rng[0] - 273.15)
