"""The build's vertical shift b_T carried into predictions at other temperatures.

A campaign measured with a vertical shift is superposed on the reduced modulus E/b_T; a
prediction at temperature T must multiply it back by b_T (and divide a compliance by it). The
density form b_T = T rho(T) / (T_ref rho_ref) is Ferry's (Viscoelastic Properties of Polymers,
3rd ed., 1980, ch. 11).
"""

from __future__ import annotations

import json
import math
import warnings

import numpy as np
import pytest

import ttsp
from ttsp._arrays import to_plain
from ttsp.data import Campaign, Isotherm
from ttsp.exceptions import DataError
from ttsp.model import VerticalShift, ViscoelasticModel

T_REF = 320.0
ALPHA = 6e-4          # volumetric expansion coefficient, 1/K (a typical polymer melt value)


def density_log10_bT(T, alpha=ALPHA, t_ref=T_REF):
    T = np.asarray(T, float)
    return np.log10(T * (1.0 - alpha * (T - t_ref)) / t_ref)


def exact_campaign(temps, log10_bT, noise=0.0, seed=0):
    """Gaussian Prony spectrum shifted by WLF (C1 10, C2 80 K about 320 K), moduli times b_T."""
    rng = np.random.default_rng(seed)
    tau = 10.0 ** np.arange(-12.0, 6.01, 0.25)
    g = np.exp(-0.5 * ((np.log10(tau) + 3.0) / 2.0) ** 2)
    g = g / g.sum() * 1e9
    omega = 2 * np.pi * np.geomspace(0.1, 100, 12)
    isos = []
    for k, (t, b) in enumerate(zip(temps, log10_bT)):
        a = 10.0 ** (-10.0 * (t - T_REF) / (80.0 + t - T_REF))
        wt = omega[:, None] * a * tau
        ep = (1e6 + np.sum(g * wt ** 2 / (1 + wt ** 2), axis=1)) * 10.0 ** b
        epp = np.sum(g * wt / (1 + wt ** 2), axis=1) * 10.0 ** b
        vals = {"storage_modulus_Pa": ep * np.exp(noise * rng.standard_normal(omega.size)),
                "loss_modulus_Pa": epp * np.exp(noise * rng.standard_normal(omega.size))}
        isos.append(Isotherm(t, omega, vals, np.arange(omega.size) + 2 + 12 * k))
    return Campaign(tuple(isos), "frequency")


def quiet_build(campaign, **options):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return ttsp.build(campaign, **options)


@pytest.fixture(scope="module")
def density_build():
    temps = T_REF + 5.0 * np.arange(-4, 9)          # 300 ... 360 K
    camp = exact_campaign(temps, density_log10_bT(temps))
    return camp, quiet_build(camp, reference_temperature_C=T_REF - 273.15, law="wlf",
                             vertical="density", expansion_coefficient_per_K=ALPHA)


def test_density_factor_is_T_rho_over_Tref_rhoref():
    v = VerticalShift("density", T_REF, ALPHA)
    # by hand: 350 K, 30 K above: (350/320) * (1 - 6e-4 * 30) = 1.09375 * 0.982 = 1.0740625
    assert v.factor(350.0) == pytest.approx(1.0740625, rel=1e-12)
    assert v.factor(T_REF) == pytest.approx(1.0, abs=1e-15)


def test_predictions_at_another_temperature_carry_b_T(density_build):
    camp, result = density_build
    iso = camp.isotherms[-1]                           # 360 K: b_T = 1.0975, far from 1
    f = iso.x / (2 * np.pi)
    b = 10.0 ** density_log10_bT(iso.temperature_K)
    assert b == pytest.approx(1.0975, abs=1e-3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ep = result.model.storage_modulus(f, iso.temperature_K)
        epp = result.model.loss_modulus(f, iso.temperature_K)
        bare = ViscoelasticModel(result.series, result.law_fit.law)
        ep_bare = bare.storage_modulus(f, iso.temperature_K)
    # noise-free data: the model meets the measured moduli to 0.03 % rms (measured);
    # without b_T it would be 9.75 % low everywhere
    assert np.sqrt(np.mean((ep / iso.values["storage_modulus_Pa"] - 1) ** 2)) < 0.005
    assert np.sqrt(np.mean((epp / iso.values["loss_modulus_Pa"] - 1) ** 2)) < 0.005
    np.testing.assert_allclose(ep / ep_bare, b, rtol=1e-12)


def test_compliance_is_divided_and_tan_delta_unchanged(density_build):
    _, result = density_build
    m = result.model
    T, t = 345.0, np.array([1e-3, 1.0, 1e3])
    b = float(m.vertical_factor(T))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        a = 10.0 ** m.log10_aT(T)
        np.testing.assert_allclose(m.creep_compliance(t, T) * b,
                                   m.creep_series.creep_compliance(t / a), rtol=1e-12)
        np.testing.assert_allclose(m.relaxation_modulus(t, T) / b,
                                   m.series.relaxation_modulus(t / a), rtol=1e-12)
        np.testing.assert_allclose(m.tan_delta([1.0, 10.0], T),
                                   m.series.tan_delta(2 * np.pi * np.array([1.0, 10.0]) * a),
                                   rtol=1e-12)
        assert isinstance(m.storage_modulus(1.0, T), float)


def test_summary_round_trip_keeps_the_vertical_shift(density_build):
    _, result = density_build
    summary = json.loads(json.dumps(to_plain(result.summary(), nonfinite_as_none=True)))
    again = ViscoelasticModel.from_summary(summary)
    assert again.vertical.mode == "density"
    assert again.vertical.expansion_coefficient_per_K == ALPHA
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        assert again.storage_modulus(3.0, 350.0) == pytest.approx(
            result.model.storage_modulus(3.0, 350.0), rel=1e-9)
    # a build without a vertical shift has none, and b_T = 1
    summary["shifting"]["vertical_mode"] = "none"
    assert ViscoelasticModel.from_summary(summary).vertical is None
    assert ViscoelasticModel.from_summary(summary).vertical_factor(350.0) == 1.0


def test_fitted_vertical_shifts_are_interpolated_in_temperature():
    v = VerticalShift("fit", 320.0, None, (300.0, 320.0, 340.0), (-0.02, 0.0, 0.03))
    np.testing.assert_allclose(np.log10(v.factor([300.0, 320.0, 340.0])), [-0.02, 0.0, 0.03],
                               atol=1e-15)
    assert math.log10(v.factor(330.0)) == pytest.approx(0.015, abs=1e-15)
    # held at the end values beyond the measured temperatures
    assert math.log10(v.factor(400.0)) == pytest.approx(0.03, abs=1e-15)
    assert math.log10(v.factor(250.0)) == pytest.approx(-0.02, abs=1e-15)


def test_a_fit_mode_build_applies_its_table():
    temps = T_REF + 5.0 * np.arange(-4, 9)
    camp = exact_campaign(temps, density_log10_bT(temps), noise=0.005, seed=3)
    result = quiet_build(camp, reference_temperature_C=T_REF - 273.15, law="wlf",
                         vertical="fit")
    v = result.model.vertical
    assert v.mode == "fit"
    np.testing.assert_allclose(np.log10(v.factor(result.shifts.temperature_K)),
                               result.shifts.log10_bT, atol=1e-12)


def test_bad_vertical_shift_definitions_are_rejected():
    with pytest.raises(DataError):
        VerticalShift("density", T_REF, None)
    with pytest.raises(DataError):
        VerticalShift("fit", T_REF, None, (300.0,), ())
    with pytest.raises(DataError):
        VerticalShift("sideways", T_REF, 1e-4)
