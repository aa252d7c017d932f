"""Tests of ttsp.spectrum: the Tikhonov-regularised continuous relaxation spectrum.

Ground truth: spectra with known H(τ) whose E', E'' are known exactly (Cole-Cole closed form)
or computed independently by scipy.integrate.quad (log-normal spectrum).
"""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pytest
from scipy.integrate import quad

from ttsp.exceptions import DataError, FitError
from ttsp.spectrum import RelaxationSpectrum, fit_relaxation_spectrum

RELAXED, STRENGTH = 1e6, 1e9


def cole_cole_modulus(omega, alpha):
    """E* = E_r + ΔE (iωτ)^α/(1 + (iωτ)^α), τ = 1 s (closed forms, docs/methods.md §8)."""
    x = (1j * omega) ** alpha
    return RELAXED + STRENGTH * x / (1 + x)


def cole_cole_spectrum(tau, alpha):
    """H(τ) = (ΔE/2π) sin(απ)/(cosh(α ln τ) + cos(απ)): the Cole-Cole distribution of
    relaxation times (Cole & Cole, J. Chem. Phys. 9:341, 1941) - recalled from memory, and
    verified against the closed form by quadrature in test_cole_cole_spectrum_formula."""
    return STRENGTH / (2 * np.pi) * np.sin(alpha * np.pi) / (
        np.cosh(alpha * np.log(tau)) + np.cos(alpha * np.pi))


def lognormal_spectrum(tau):
    """A log-normal spectrum: peak 2e8 Pa at τ = 1e-1 s, standard deviation 1.2 decades."""
    return 2e8 * np.exp(-0.5 * ((np.log10(tau) + 1) / 1.2) ** 2)


def quad_moduli(spectrum, omega, equilibrium=0.0):
    """E'(ω), E''(ω) of a continuous spectrum by scipy.integrate.quad over s = ln τ."""
    e1, e2 = [], []
    for om in np.atleast_1d(omega):
        def kern(s, part, om=om):
            x = om * np.exp(s)
            return spectrum(np.exp(s)) * (x * x if part == 1 else x) / (1 + x * x)
        centre = -np.log(om)
        e1.append(equilibrium + quad(kern, -60, 60, args=(1,), points=[centre], limit=400)[0])
        e2.append(quad(kern, -60, 60, args=(2,), points=[centre], limit=400)[0])
    return np.array(e1), np.array(e2)


def noisy(values, rng, level=0.02):
    return values * (1.0 + level * rng.standard_normal(np.shape(values)))


@pytest.mark.parametrize("alpha", [0.5, 0.8])
def test_cole_cole_spectrum_formula(alpha):
    """The recalled Cole-Cole H(τ) reproduces the closed-form E*, integrated by quad."""
    omega = np.array([1e-2, 1.0, 30.0])
    e1, e2 = quad_moduli(lambda t: cole_cole_spectrum(t, alpha), omega, RELAXED)
    z = cole_cole_modulus(omega, alpha)
    np.testing.assert_allclose(e1, z.real, rtol=1e-8)
    np.testing.assert_allclose(e2, z.imag, rtol=1e-8)


@pytest.fixture(scope="module")
def cole_cole_data():
    rng = np.random.default_rng(101)
    w = np.logspace(-5, 5, 100)
    z = cole_cole_modulus(w, 0.5)
    return w, z, noisy(z.real, rng), noisy(z.imag, rng)


@pytest.mark.parametrize("method", ["gcv", "lcurve"])
def test_recovers_cole_cole_spectrum_from_noisy_data(cole_cole_data, method):
    """2 % noise on E', E''. Inside the data window shrunk by one decade at each end, H is
    recovered within 3 % of its peak (rms) and 8 % (max). In trials over 3 seeds: rms
    0.5-1.9 %, max 1.1-5.5 %. The fitted curves match the exact ones within 1.5 % rms."""
    w, z, e1, e2 = cole_cole_data
    sp = fit_relaxation_spectrum(w, e1, e2, method=method)
    assert isinstance(sp, RelaxationSpectrum) and sp.method == method
    inside = (sp.tau_s >= 1e-4) & (sp.tau_s <= 1e4)
    err = (sp.H_Pa - cole_cole_spectrum(sp.tau_s, 0.5))[inside] / cole_cole_spectrum(1.0, 0.5)
    assert np.sqrt(np.mean(err ** 2)) < 0.03
    assert np.abs(err).max() < 0.08
    assert 100 * np.sqrt(np.mean((sp.storage_modulus(w) / z.real - 1) ** 2)) < 1.5
    assert 100 * np.sqrt(np.mean((sp.loss_modulus(w) / z.imag - 1) ** 2)) < 1.5
    # the chosen λ lies inside the scanned range (a corner, not an end)
    k = int(np.flatnonzero(sp.lambda_grid == sp.regularisation)[0])
    assert 0 < k < sp.lambda_grid.size - 1
    assert 1.5 < sp.rms_percent < 2.5   # the noise level
    assert sp.valid_tau_range_s == pytest.approx((1e-5, 1e5), rel=1e-14)


def test_recovers_lognormal_spectrum_computed_by_quadrature():
    """Data from a log-normal H(τ) (E', E'' by scipy.integrate.quad), 2 % noise, with
    E_e = 1e6 Pa. The spectrum is recovered within 2.5 % of its peak (rms) inside the window
    shrunk by one decade (0.4-0.8 % in trials over 3 seeds and both λ rules) and E_e within
    20 % (it is the small residue of a 200x larger modulus at the lowest frequency; 0-16 %
    in trials)."""
    rng = np.random.default_rng(7)
    w = np.logspace(-4, 6, 60)
    e1, e2 = quad_moduli(lognormal_spectrum, w, 1e6)
    sp = fit_relaxation_spectrum(w, noisy(e1, rng), noisy(e2, rng))
    inside = (sp.tau_s >= 1e-5) & (sp.tau_s <= 1e3)
    err = (sp.H_Pa - lognormal_spectrum(sp.tau_s))[inside] / 2e8
    assert np.sqrt(np.mean(err ** 2)) < 0.025
    assert sp.equilibrium_modulus_Pa == pytest.approx(1e6, rel=0.2)
    # the peak is where it should be (grid of 8 points per decade: within 1/8 decade)
    assert abs(np.log10(sp.tau_s[np.argmax(sp.H_Pa)]) + 1) <= 0.13


def test_regularisation_controls_smoothness(cole_cole_data):
    """Stronger λ: fewer effective parameters and a smaller penalty, larger residual
    (the defining trade-off of Tikhonov regularisation)."""
    w, _, e1, e2 = cole_cole_data
    weak = fit_relaxation_spectrum(w, e1, e2, regularisation=1e-3)
    strong = fit_relaxation_spectrum(w, e1, e2, regularisation=1e2)
    assert weak.method == strong.method == "fixed"
    assert weak.effective_parameters > strong.effective_parameters
    assert weak.penalty_norm[0] > strong.penalty_norm[0]
    assert weak.residual_norm[0] < strong.residual_norm[0]


def test_evaluation_and_prony_form_agree(cole_cole_data):
    w, _, e1, e2 = cole_cole_data
    sp = fit_relaxation_spectrum(w, e1, e2, regularisation=10.0, reference_temperature_K=300.0)
    series = sp.to_prony_series()
    t = np.logspace(-4, 4, 9)
    np.testing.assert_allclose(series.relaxation_modulus(t), sp.relaxation_modulus(t), rtol=1e-12)
    np.testing.assert_allclose(series.storage_modulus(w), sp.storage_modulus(w), rtol=1e-12)
    np.testing.assert_allclose(series.loss_modulus(w), sp.loss_modulus(w), rtol=1e-12)
    np.testing.assert_allclose(sp.tan_delta(w), sp.loss_modulus(w) / sp.storage_modulus(w))
    assert series.reference_temperature_K == 300.0
    # interpolation of H: exact at nodes, 0 outside the grid
    assert sp.spectrum(sp.tau_s[5]) == sp.H_Pa[5]
    assert sp.spectrum([1e-30, 1e30]).tolist() == [0.0, 0.0]
    assert isinstance(sp.relaxation_modulus(1.0), float)


def test_exports(cole_cole_data):
    w, _, e1, e2 = cole_cole_data
    sp = fit_relaxation_spectrum(w, e1, e2, n_lambda=8, modulus_kind="shear")
    d = json.loads(json.dumps(sp.to_dict(), allow_nan=False))
    assert d["method"] == "gcv" and d["modulus_kind"] == "shear"
    assert len(d["tau_s"]) == len(d["H_Pa"]) == sp.tau_s.size
    assert len(d["selection"]["regularisation"]) == 8
    frame = sp.to_frame()
    assert list(frame.columns) == ["tau_s", "H_Pa", "in_valid_range"]
    # the window is 1/omega_max .. 1/omega_min = 1e-5 .. 1e5 s; the nodes at the ends count as
    # inside however the two ends were rounded (1 / 1e-5 == 99999.99999999999)
    in_window = np.abs(np.log10(sp.tau_s)) <= 5 + 1e-9
    assert frame["in_valid_range"].sum() == np.sum(in_window)
    sel = sp.selection_frame()
    assert sel["chosen"].sum() == 1
    assert sp.params["regularisation"] == sp.regularisation and np.isnan(sp.stderr["regularisation"])
    assert "Relaxation spectrum" in sp._repr_html_()
    with pytest.raises(ValueError, match="read-only"):
        sp.H_Pa[0] = 1.0


def test_fixed_equilibrium_modulus(cole_cole_data):
    w, _, e1, e2 = cole_cole_data
    sp = fit_relaxation_spectrum(w, e1, e2, equilibrium_modulus_Pa=RELAXED, regularisation=10.0)
    assert sp.equilibrium_modulus_Pa == RELAXED


@pytest.mark.parametrize("kwargs, match", [
    ({"method": "aic"}, "method must be one of 'gcv', 'lcurve'"),
    ({"n_lambda": 3}, "n_lambda must be an integer of at least 5"),
    ({"n_lambda": 5.5}, "n_lambda must be an integer of at least 5"),
    ({"regularisation": -1.0}, "regularisation must be positive"),
    ({"points_per_decade": 0.01}, "points_per_decade must be large enough for at least 3"),
    ({"points_per_decade": 0}, "points_per_decade must be positive"),
    ({"margin_decades": -1}, "margin_decades must be non-negative"),
    ({"equilibrium_modulus_Pa": -1}, "equilibrium_modulus_Pa must be non-negative"),
    ({"modulus_kind": "bulk"}, "modulus_kind must be one of"),
    ({"reference_temperature_K": 0}, "reference_temperature_K must be positive"),
])
def test_validation(kwargs, match):
    w = np.logspace(-1, 1, 5)
    with pytest.raises(DataError, match=match):
        fit_relaxation_spectrum(w, np.ones(5), np.ones(5), margin_decades=kwargs.pop(
            "margin_decades", 0), **kwargs)


def test_data_validation():
    w = np.logspace(-1, 1, 5)
    with pytest.raises(DataError, match=r"loss_modulus_Pa\[2\] must be positive"):
        fit_relaxation_spectrum(w, np.ones(5), [1, 1, 0, 1, 1])
    with pytest.raises(DataError, match="storage_modulus_Pa must be as long as the abscissa"):
        fit_relaxation_spectrum(w, np.ones(4), np.ones(5))
    with pytest.raises(DataError, match="tau_s must be positive and finite"):
        fit_relaxation_spectrum(w, np.ones(5), np.ones(5), regularisation=1.0).spectrum(0.0)


def test_zero_spectrum_is_a_fit_error(monkeypatch):
    import ttsp.spectrum as mod

    monkeypatch.setattr(mod, "_solve_nnls", lambda a, b: np.zeros(a.shape[1]))
    w = np.logspace(-1, 1, 5)
    with pytest.raises(FitError, match="spectrum is zero everywhere"):
        fit_relaxation_spectrum(w, np.ones(5), np.ones(5), regularisation=1.0)


def test_valid_range_ends_are_inside_up_to_rounding(cole_cole_data):
    """A grid node one ulp past an end of the valid window counts as inside: the ends are
    computed as 1/omega and the nodes as 10**x, and the two routes round differently
    (1 / 1e-5 == 99999.99999999999 while the node is 1e5; a fresh-machine failure once)."""
    w, _, e1, e2 = cole_cole_data
    sp = fit_relaxation_spectrum(w, e1, e2, n_lambda=5, regularisation=1.0)
    lo, hi = np.nextafter(sp.tau_s[2], np.inf), np.nextafter(sp.tau_s[-3], 0)
    frame = dataclasses.replace(sp, valid_tau_range_s=(lo, hi)).to_frame()
    assert frame["in_valid_range"].sum() == sp.tau_s.size - 4
