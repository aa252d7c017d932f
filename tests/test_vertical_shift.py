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
#: volumetric expansion coefficient, 1/K: a typical polymer melt value, recalled from memory
ALPHA = 6e-4


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
    for k, (t, b) in enumerate(zip(temps, log10_bT, strict=True)):
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
    with pytest.raises(DataError, match="expansion_coefficient_per_K must be a finite"):
        VerticalShift("density", T_REF, None)
    with pytest.raises(DataError, match="two tables of the same, non-zero length"):
        VerticalShift("fit", T_REF, None, (300.0,), ())
    with pytest.raises(DataError, match="temperatures strictly increasing"):
        VerticalShift("fit", T_REF, None, (310.0, 300.0), (0.0, 0.01))
    with pytest.raises(DataError, match="mode must be"):
        VerticalShift("sideways", T_REF, 1e-4)
    with pytest.raises(DataError, match="reference_temperature_K must be a positive"):
        VerticalShift("density", -5.0, 1e-4)
    # the density law has no positive density beyond T_ref + 1/alpha
    with pytest.raises(DataError, match="below T_ref"):
        VerticalShift("density", T_REF, 1e-2).factor(T_REF + 150.0)


def test_model_and_vertical_shift_must_share_the_reference(density_build):
    _, result = density_build
    with pytest.raises(DataError, match="vertical.reference_temperature_K must be equal"):
        ViscoelasticModel(result.series, result.law_fit.law, VerticalShift("density", 300.0, ALPHA))


def test_unreadable_vertical_shift_in_a_summary_is_a_data_error(density_build):
    _, result = density_build
    summary = json.loads(json.dumps(to_plain(result.summary(), nonfinite_as_none=True)))
    summary["shifting"]["vertical_mode"] = "fit"
    del summary["shift_factors"][0]["log10_bT"]
    with pytest.raises(DataError, match="vertical shift \\('fit'\\) cannot be read"):
        ViscoelasticModel.from_summary(summary)


def test_fit_mode_gives_b_T_1_at_an_unmeasured_reference_and_round_trips():
    """The shift gauge puts log10 b_T = 0 at the reference temperature even when it lies between
    or outside the isotherms; the model's table carries that node, so a prediction at T_ref is
    the reference series itself."""
    temps = T_REF + 5.0 * np.arange(-4, 9)                # 300 ... 360 K
    camp = exact_campaign(temps, density_log10_bT(temps), noise=0.005, seed=3)
    for t_ref_C in (T_REF + 2.5 - 273.15, 290.0 - 273.15):   # between isotherms; below them
        result = quiet_build(camp, reference_temperature_C=t_ref_C, law="wlf", vertical="fit")
        m = result.model
        assert m.vertical_factor(result.reference_temperature_K) == pytest.approx(1.0, abs=1e-12)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            assert m.storage_modulus(1.0, result.reference_temperature_K) == pytest.approx(
                m.series.storage_modulus(2 * np.pi), rel=1e-12)
        summary = json.loads(json.dumps(to_plain(result.summary(), nonfinite_as_none=True)))
        again = ViscoelasticModel.from_summary(summary)
        T = np.linspace(280.0, 370.0, 19)
        np.testing.assert_allclose(again.vertical_factor(T), m.vertical_factor(T), rtol=1e-12)


def test_histories_apply_b_T_like_the_model(density_build):
    """A step strain held at 355 K: the stress is b_T times the reduced stress, as the model's
    E(t, T); a step stress: the strain is D(t, T) = D_ref/b_T times the stress."""
    from ttsp.history import strain_under_stress, stress_under_strain

    _, result = density_build
    m = result.model
    t = np.array([0.0, 1e-3, 1.0, 100.0])
    T = 355.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        h = stress_under_strain(m.series, t, np.full(t.size, 0.01), T, m.log10_aT,
                                vertical_factor=m.vertical_factor)
        np.testing.assert_allclose(h.stress_Pa, 0.01 * m.relaxation_modulus(t, T), rtol=1e-10)
        c = strain_under_stress(m.series, t, np.full(t.size, 1e5), T, m.log10_aT,
                                vertical_factor=m.vertical_factor)
        np.testing.assert_allclose(c.strain, 1e5 * m.creep_compliance(t, T), rtol=1e-9)
        assert h.provenance["vertical_shift"] is True
        with pytest.raises(DataError, match="temperature_K must be given when vertical_factor"):
            stress_under_strain(m.series, t, np.full(t.size, 0.01),
                                vertical_factor=m.vertical_factor)
        with pytest.raises(DataError, match="vertical_factor at 355.0 K must be positive"):
            stress_under_strain(m.series, t, np.full(t.size, 0.01), T, m.log10_aT,
                                vertical_factor=lambda T: -1.0)


def test_cli_history_and_predict_apply_b_T(density_build, tmp_path):
    """'ttsp history' and 'ttsp predict' on a density build agree with the model's E(t, T)."""
    import io

    import pandas as pd
    from typer.testing import CliRunner

    from ttsp.cli import app
    from ttsp.io.writers import write_build_numbers

    _, result = density_build
    folder = tmp_path / "built"
    folder.mkdir()
    write_build_numbers(result, folder)
    t = np.array([0.0, 1e-3, 0.1, 10.0])
    table = tmp_path / "h.csv"
    table.write_text("time (s),T (°C),strain\n"
                     + "".join(f"{a},{355.0 - 273.15},0.01\n" for a in t))
    runner = CliRunner()
    res = runner.invoke(app, ["history", str(folder), str(table)])
    assert res.exit_code == 0, res.output
    stress = pd.read_csv(io.StringIO(res.stdout))["stress_Pa"].to_numpy()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        expected = 0.01 * result.model.relaxation_modulus(t, 355.0)
    np.testing.assert_allclose(stress, expected, rtol=1e-9)
    res = runner.invoke(app, ["predict", str(folder), "--quantity", "relaxation_modulus",
                              "--temperature", f"{355.0 - 273.15}", "--time", "0.1:10:3"])
    assert res.exit_code == 0, res.output
    predicted = pd.read_csv(io.StringIO(res.stdout))["relaxation_modulus_Pa"].to_numpy()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        np.testing.assert_allclose(predicted, result.model.relaxation_modulus(
            np.geomspace(0.1, 10, 3), 355.0), rtol=1e-6)


def test_cli_names_file_and_row_of_a_broken_vertical_shift(density_build, tmp_path):
    from typer.testing import CliRunner

    from ttsp.cli import app
    from ttsp.io.writers import write_build_numbers

    _, result = density_build
    write_build_numbers(result, tmp_path)
    path = tmp_path / "summary.json"
    summary = json.loads(path.read_text(encoding="utf-8"))
    summary["shifting"]["vertical_mode"] = "fit"
    del summary["shift_factors"][2]["log10_bT"]
    path.write_text(json.dumps(summary), encoding="utf-8")
    res = CliRunner().invoke(app, ["predict", str(tmp_path), "--quantity", "storage_modulus",
                                   "--temperature", "40", "--frequency", "1:10:2"])
    assert res.exit_code == 2
    assert res.stderr.strip().splitlines() == [
        f"ttsp: error: {path}: summary's vertical shift ('fit') cannot be read: shift_factors "
        "row 2 has no usable temperature_C / log10_bT"]
    assert "Traceback" not in res.output
