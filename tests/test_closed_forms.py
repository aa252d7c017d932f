"""Tests of ttsp.closed_forms: sigmoid and Havriliak-Negami-family master-curve models.

Check values from the closed forms named beside each test;
recovery tests generate data from known parameters with seeded 2 % noise.
"""

from __future__ import annotations

import json
import math
import warnings

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from ttsp.closed_forms import (
    MODELS,
    ClosedFormFit,
    FitComparison,
    compare_models,
    fit_closed_form,
    fit_havriliak_negami,
    fit_sigmoid,
    havriliak_negami_modulus,
    hn_loss_peak_omega_tau,
    sigmoid_log10_modulus,
)
from ttsp.exceptions import DataError, FitError
from ttsp.prony import PronySeries, fit_prony_frequency

W = np.logspace(-5, 5, 100)


def noisy(values, rng, level=0.02):
    return values * (1.0 + level * rng.standard_normal(np.shape(values)))


def loss_peak(alpha, beta):
    """ω_max (τ = 1) located numerically on the closed form."""
    res = minimize_scalar(
        lambda lw: -havriliak_negami_modulus(10.0 ** lw, 0.0, 1.0, 1.0, alpha, beta).imag,
        bounds=(-3, 3), method="bounded", options={"xatol": 1e-10})
    return 10.0 ** res.x


# --------------------------------------------------------------------------- closed forms
@pytest.mark.parametrize("alpha, beta, omega_max", [(0.6, 0.5, 2.9201), (0.8, 0.4, 2.7176),
                                                    (0.5, 1.0, 1.0)])
def test_hn_loss_peak_positions(alpha, beta, omega_max):
    # Díaz-Calleja 2000, from memory (verified numerically there); the check values carry 5 digits
    assert loss_peak(alpha, beta) == pytest.approx(omega_max, rel=5e-5)
    # Díaz-Calleja's closed form for the peak (2000, from memory) agrees with the numerics
    assert hn_loss_peak_omega_tau(alpha, beta) == pytest.approx(loss_peak(alpha, beta), rel=1e-7)


def test_hn_with_alpha_beta_one_is_the_standard_linear_solid():
    # Díaz-Calleja 2000, from memory: HN(α = β = 1) equals Zener to 1e-15
    zener = PronySeries(2.0, [1.0], [8.0])
    hn = havriliak_negami_modulus(W, 2.0, 8.0, 1.0, 1.0, 1.0)
    np.testing.assert_allclose(hn, zener.complex_modulus(W), rtol=1e-14)


@pytest.mark.parametrize("alpha, height", [(0.5, 0.207107), (0.8, 0.363271)])
def test_cole_cole_loss_at_omega_tau_one(alpha, height):
    # Cole & Cole 1941 closed form: E''(ωτ = 1) = (ΔE/2) tan(απ/4)
    z = havriliak_negami_modulus(1.0, 0.0, 1.0, 1.0, alpha, 1.0)
    assert z.imag == pytest.approx(height, rel=2e-6)
    assert z.imag == pytest.approx(0.5 * math.tan(alpha * math.pi / 4), rel=1e-13)


def test_hn_power_law_limits():
    # closed forms, docs/methods.md §8: E'' ∝ ω^α at low ω and ∝ ω^(−αβ) at high ω
    a, b = 0.6, 0.5
    lo = havriliak_negami_modulus(np.array([1e-8, 1e-7]), 0.0, 1.0, 1.0, a, b).imag
    hi = havriliak_negami_modulus(np.array([1e7, 1e8]), 0.0, 1.0, 1.0, a, b).imag
    assert math.log10(lo[1] / lo[0]) == pytest.approx(a, rel=1e-3)
    assert math.log10(hi[1] / hi[0]) == pytest.approx(-a * b, rel=1e-3)


def test_sigmoid_inflection_and_limits():
    # Pellinen & Witczak 2002: inflection at log f_r = −β/γ with value δ + α/2;
    # limits δ and δ + α
    d, a, b, g = 6.0, 3.0, -1.5, -0.8
    f_infl = 10.0 ** (-b / g)
    assert sigmoid_log10_modulus(2 * math.pi * f_infl, d, a, b, g) == pytest.approx(d + a / 2)
    assert sigmoid_log10_modulus(2 * math.pi * 1e-30, d, a, b, g) == pytest.approx(d, abs=1e-9)
    assert sigmoid_log10_modulus(2 * math.pi * 1e30, d, a, b, g) == pytest.approx(d + a)


def test_registry_lists_each_model_with_source_and_units():
    for m in MODELS.values():
        assert len(m.parameters) == len(m.units) and m.reference and m.equation
    assert set(MODELS) == {"sigmoid", "havriliak_negami", "cole_cole", "cole_davidson"}


# --------------------------------------------------------------------------- fits
@pytest.mark.parametrize("alpha, beta", [(0.6, 0.5), (0.8, 0.4)])
def test_hn_fit_recovers_parameters_from_noisy_data(alpha, beta):
    """2 % noise on 100 E' and E'' points: the parameters come back within 4 stderr (the
    stderr themselves are ~0.1 % for α, β), and the fit's rms is the noise level."""
    rng = np.random.default_rng(42)
    z = havriliak_negami_modulus(W, 1e6, 1e9, 0.1, alpha, beta)
    fit = fit_havriliak_negami(W, noisy(z.real, rng), noisy(z.imag, rng))
    truth = {"relaxed_modulus_Pa": 1e6, "relaxation_strength_Pa": 1e9, "tau_s": 0.1,
             "alpha": alpha, "beta": beta}
    for k, v in truth.items():
        assert abs(fit.params[k] - v) < 4 * fit.stderr[k], k
    assert fit.params["alpha"] == pytest.approx(alpha, rel=0.01)
    assert fit.params["beta"] == pytest.approx(beta, rel=0.02)
    assert 1.6 < fit.rms_percent < 2.4
    assert fit.success and fit.n_parameters == 5
    assert fit.reference.startswith("Havriliak & Negami")
    # evaluation reproduces the exact curves within the noise-averaged error
    assert 100 * np.sqrt(np.mean((fit.storage_modulus(W) / z.real - 1) ** 2)) < 0.5
    assert 100 * np.sqrt(np.mean((fit.loss_modulus(W) / z.imag - 1) ** 2)) < 0.5


def test_cole_cole_and_cole_davidson_special_cases():
    rng = np.random.default_rng(3)
    z = havriliak_negami_modulus(W, 1e6, 1e9, 1.0, 0.5, 1.0)
    cc = fit_havriliak_negami(W, noisy(z.real, rng), noisy(z.imag, rng), model="cole_cole")
    assert set(cc.params) == {"relaxed_modulus_Pa", "relaxation_strength_Pa", "tau_s", "alpha"}
    assert cc.params["alpha"] == pytest.approx(0.5, rel=0.01)
    assert cc.params["tau_s"] == pytest.approx(1.0, rel=0.05)
    z = havriliak_negami_modulus(W, 1e6, 1e9, 1.0, 1.0, 0.4)
    cd = fit_closed_form("cole_davidson", W, storage_modulus_Pa=noisy(z.real, rng),
                         loss_modulus_Pa=noisy(z.imag, rng))
    assert "alpha" not in cd.params and cd.params["beta"] == pytest.approx(0.4, rel=0.02)
    assert cd.tan_delta(1.0) == pytest.approx(cd.loss_modulus(1.0) / cd.storage_modulus(1.0))
    assert isinstance(cd.complex_modulus(1.0), complex)


def test_sigmoid_fit_recovers_exact_parameters():
    # noise-free sigmoid data: least squares must return the generating parameters
    truth = {"delta": 6.2, "alpha": 3.1, "beta": -1.2, "gamma": -0.65}
    absm = 10.0 ** sigmoid_log10_modulus(W, **truth)
    fit = fit_sigmoid(W, absm)
    for k, v in truth.items():
        assert fit.params[k] == pytest.approx(v, rel=1e-6, abs=1e-8)
    assert fit.rms_percent < 1e-6
    np.testing.assert_allclose(fit.abs_complex_modulus(W), absm, rtol=1e-8)
    assert isinstance(fit.abs_complex_modulus(1.0), float)


def test_sigmoid_fit_with_noise_and_through_fit_closed_form():
    rng = np.random.default_rng(9)
    truth = {"delta": 6.2, "alpha": 3.1, "beta": -1.2, "gamma": -0.65}
    absm = 10.0 ** sigmoid_log10_modulus(W, **truth)
    z = absm * np.exp(0.3j)  # any phase: the sigmoid sees |E*| only
    fit = fit_closed_form("sigmoid", W, storage_modulus_Pa=noisy(z.real, rng),
                          loss_modulus_Pa=noisy(z.imag, rng))
    # 2 % noise on each component, 100 points, 4 parameters
    assert fit.params["alpha"] == pytest.approx(3.1, rel=0.01)
    assert -fit.params["beta"] / fit.params["gamma"] == pytest.approx(-1.2 / 0.65, rel=0.01)
    with pytest.raises(DataError, match="quantity must be .E\\*. for the sigmoid model"):
        fit.storage_modulus(1.0)


def test_comparison_with_prony_fit_on_hn_data():
    """On HN data both the HN closed form and the Prony series fit to the noise level; the
    closed form wins on AIC (5 parameters against ~20), the sigmoid loses (it is symmetric
    and cannot follow an asymmetric HN curve)."""
    rng = np.random.default_rng(5)
    z = havriliak_negami_modulus(W, 1e6, 1e9, 0.1, 0.6, 0.5)
    e1, e2 = noisy(z.real, rng), noisy(z.imag, rng)
    hn = fit_havriliak_negami(W, e1, e2)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        prony = fit_prony_frequency(W, e1, e2)
    sig = fit_sigmoid(W, np.hypot(e1, e2))
    table = hn.compare_with(prony, sig)
    assert isinstance(table, FitComparison)
    rows = {r["model"]: r for r in table.rows}
    assert set(rows) == {"havriliak_negami (closed form)", f"Prony ({prony.n_terms} terms)",
                         "sigmoid (closed form)"}
    # the sigmoid shares only |E*|, so the ranking is on |E*| = sqrt(E'^2 + E''^2)
    assert table.quantities == ("abs_complex_modulus",)
    assert table.best == "havriliak_negami (closed form)"
    assert rows["sigmoid (closed form)"]["rms_percent"] > 2 * rows[
        "havriliak_negami (closed form)"]["rms_percent"]
    # per-quantity rms of the closed form equals its own fit statistics on the same data
    assert rows["havriliak_negami (closed form)"]["rms_percent_loss_modulus"] == pytest.approx(
        100 * np.sqrt(np.mean((hn.loss_modulus(W) / e2 - 1) ** 2)))
    # without the sigmoid the ranking uses E' and E'' themselves
    table2 = compare_models(W, {"hn": hn, "prony": prony}, storage_modulus_Pa=e1,
                            loss_modulus_Pa=e2)
    assert table2.quantities == ("storage_modulus", "loss_modulus")
    r2 = {r["model"]: r for r in table2.rows}
    assert r2["prony"]["n_parameters"] == prony.n_terms + 1
    assert r2["hn"]["aic"] < r2["prony"]["aic"]
    assert r2["prony"]["rms_percent"] == pytest.approx(prony.rms_percent, rel=1e-12)
    frame = table2.to_frame()
    assert list(frame["model"]) == ["hn", "prony"]
    d = json.loads(json.dumps(table2.to_dict(), allow_nan=False))
    assert d["best_by_aic"] == "hn"
    assert "Model comparison" in table2._repr_html_()


def test_fit_exports():
    rng = np.random.default_rng(1)
    z = havriliak_negami_modulus(W, 1e6, 1e9, 0.1, 0.6, 0.5)
    fit = fit_havriliak_negami(W, noisy(z.real, rng), noisy(z.imag, rng))
    assert isinstance(fit, ClosedFormFit)
    d = json.loads(json.dumps(fit.to_dict(), allow_nan=False))
    assert d["model"] == "havriliak_negami" and d["units"]["tau_s"] == "s"
    assert set(d["params"]) == set(d["stderr"])
    frame = fit.to_frame()
    assert list(frame.columns) == ["omega_rad_s", "quantity", "measured", "fitted",
                                   "residual_percent"]
    assert len(frame) == 200
    assert "<table>" in fit._repr_html_()
    with pytest.raises(TypeError):
        fit.params["alpha"] = 1.0


# --------------------------------------------------------------------------- errors
class _NoCount:
    """Evaluates E' but does not say how many parameters it has."""

    def storage_modulus(self, w):
        return np.ones_like(w)


@pytest.mark.parametrize("call, match", [
    (lambda: fit_closed_form("kww", W, storage_modulus_Pa=W, loss_modulus_Pa=W),
     "model must be one of"),
    (lambda: fit_closed_form("sigmoid", W, storage_modulus_Pa=W),
     "abs_complex_modulus_Pa must be given .or both"),
    (lambda: fit_closed_form("cole_cole", W, abs_complex_modulus_Pa=W),
     "storage_modulus_Pa and loss_modulus_Pa must be given for the cole_cole model"),
    (lambda: fit_havriliak_negami(W, W, W, model="sigmoid"), "model must be one of"),
    (lambda: fit_havriliak_negami([1.0, 2.0], [1, 2], [1, 1]), "omega_rad_s must be at least 3"),
    (lambda: fit_havriliak_negami(W, -W, W), r"storage_modulus_Pa\[0\] must be positive"),
    (lambda: fit_sigmoid(W[:4], W[:4]), "omega_rad_s must be at least 5 points"),
    (lambda: fit_sigmoid(W, W[:-1]), "abs_complex_modulus_Pa must be as long"),
    (lambda: compare_models(W, {"a": PronySeries(1.0, [1.0], [1.0])}),
     "must be given .at least one."),
    (lambda: compare_models(W, {}, storage_modulus_Pa=W), "models must be a non-empty mapping"),
    (lambda: compare_models(W, {"x": _NoCount()}, storage_modulus_Pa=W),
     "model must be a PronyFit, PronySeries, ClosedFormFit"),
])
def test_validation(call, match):
    with pytest.raises(DataError, match=match):
        call()


def test_models_without_common_quantity():
    class OnlyLoss:
        n_parameters = 1

        def loss_modulus(self, w):
            return np.ones_like(w)

    with pytest.raises(DataError, match="models must be able to evaluate a common quantity"):
        compare_models(W, {"a": OnlyLoss()}, storage_modulus_Pa=W)


def test_fit_error_when_every_start_fails(monkeypatch):
    import lmfit

    def boom(*a, **k):
        raise ValueError("nan")

    monkeypatch.setattr(lmfit, "minimize", boom)
    with pytest.raises(FitError, match="failed from every starting point"):
        fit_sigmoid(W, W + 1.0)


def test_computation_modules_do_not_import_matplotlib_or_lmfit_at_import():
    # layer rule (DESIGN.md): computation modules never load matplotlib; lmfit is loaded
    # only when a closed-form fit runs
    import subprocess
    import sys

    code = ("import sys, ttsp.closed_forms, ttsp.spectrum; "
            "print('matplotlib' in sys.modules, 'lmfit' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]
