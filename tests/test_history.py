"""Tests of ttsp.history: reduced time and Boltzmann superposition with the recursive update.

Ground truth: closed-form responses of the standard linear solid (step, ramp, ramp-and-hold),
the relaxation modulus and creep compliance themselves (step inputs), the steady-state
sinusoidal response E'(w), E''(w), time-shifted isothermal responses, and reduced time
integrated independently by scipy.integrate.quad.
"""

from __future__ import annotations

import json
import math
import warnings

import numpy as np
import pytest
from scipy import integrate

from ttsp.exceptions import DataError, ExtrapolationWarning
from ttsp.history import (
    HistoryResponse,
    _linear_recurrence,
    reduced_time,
    strain_under_stress,
    stress_under_strain,
)
from ttsp.interconvert import relaxation_to_creep
from ttsp.prony import PronySeries

TAU9 = np.array([1e-3, 1e-1, 1e1, 1e3, 1e5])
E9 = np.array([10.0, 30.0, 100.0, 300.0, 600.0])
T_REF = 300.0


def ref_series(e_inf: float = 1.0, **kw) -> PronySeries:
    """exact values computed independently spectrum (five terms over eight decades)."""
    return PronySeries(e_inf, TAU9, E9, reference_temperature_K=T_REF, **kw)


def wlf(temperature_K):
    """WLF law with the 'universal' constants C1 = 17.44, C2 = 51.6 K (Williams, Landel &
    Ferry, JACS 77:3701, 1955), referred to T_REF."""
    dt = np.asarray(temperature_K, dtype=float) - T_REF
    return -17.44 * dt / (51.6 + dt)


def log_times(lo: float, hi: float, n: int) -> np.ndarray:
    return np.concatenate([[0.0], np.logspace(math.log10(lo), math.log10(hi), n)])


# ----------------------------------------------------------------------------------------
# step inputs: the material functions themselves
# ----------------------------------------------------------------------------------------
def test_step_strain_gives_relaxation_modulus():
    # Boltzmann superposition of a step (Ferry 1980, ch. 1): sigma(t) = eps0 E(t). The
    # recursion is exact for a constant strain, so only rounding remains, on any time grid.
    p = ref_series()
    t = log_times(1e-6, 1e8, 300)
    r = stress_under_strain(p, t, np.full(t.size, 0.02))
    np.testing.assert_allclose(r.stress_Pa, 0.02 * p.relaxation_modulus(t), rtol=1e-13)
    np.testing.assert_array_equal(r.reduced_time_s, t)
    assert r.control == "strain" and r.modulus_kind == "tensile"
    assert np.all(r.temperature_K == T_REF)      # isothermal at the reference temperature


def test_step_stress_gives_creep_compliance():
    # eps(t) = sigma0 D(t), with D from the exact conversion (itself checked against mpmath in
    # test_interconvert). A relaxation series is accepted and converted.
    p = ref_series()
    t = log_times(1e-6, 1e9, 300)
    r = strain_under_stress(p, t, np.full(t.size, 3.0))
    np.testing.assert_allclose(r.strain, 3.0 * p.creep_compliance(t), rtol=1e-13)
    assert r.control == "stress"


def test_step_stress_on_a_liquid_includes_flow():
    # Maxwell liquid (fact of common practice): eps(t) = sigma0 (1/E + t/(E tau)).
    p = PronySeries(0.0, [2.0], [5.0])
    t = np.linspace(0.0, 50.0, 11)
    r = strain_under_stress(p, t, np.full(t.size, 10.0))
    np.testing.assert_allclose(r.strain, 10.0 * (1 / 5.0 + t / 10.0), rtol=1e-14)


def test_creep_and_recovery_superposes_two_steps():
    # Load sigma0 at t = 0, unload at t1 (a jump: two samples at t1). Boltzmann superposition:
    # eps(t) = sigma0 [D(t) - D(t - t1)] after unloading (Ferry 1980, ch. 1).
    p = ref_series()
    c = relaxation_to_creep(p)
    t1 = 50.0
    t_load = np.linspace(0.0, t1, 201)
    t_rec = t1 + np.concatenate([[0.0], np.logspace(-4, 6, 200)])
    t = np.concatenate([t_load, t_rec])
    sig = np.concatenate([np.full(t_load.size, 2.0), np.zeros(t_rec.size)])
    r = strain_under_stress(c, t, sig)
    expected = 2.0 * (c.creep_compliance(t[201:]) - c.creep_compliance(t[201:] - t1))
    np.testing.assert_allclose(r.strain[201:], expected, rtol=1e-10, atol=1e-15)
    np.testing.assert_allclose(r.strain[:201], 2.0 * c.creep_compliance(t_load), rtol=1e-13)


# ----------------------------------------------------------------------------------------
# ramps: standard linear solid in closed form
# ----------------------------------------------------------------------------------------
def test_ramp_strain_matches_standard_linear_solid():
    # SLS under eps = rate * t (closed form from the Boltzmann integral, Ferry 1980, ch. 3):
    # sigma(t) = rate [E_inf t + E1 tau (1 - e^{-t/tau})]. The update is exact for a linear
    # strain, so a coarse irregular grid must give it to rounding.
    e_inf, e1, tau, rate = 2.0, 8.0, 1.5, 1e-3
    rng = np.random.default_rng(42)
    t = np.concatenate([[0.0], np.cumsum(rng.uniform(0.05, 2.0, 40))])
    r = stress_under_strain(PronySeries(e_inf, [tau], [e1]), t, rate * t)
    exact = rate * (e_inf * t + e1 * tau * -np.expm1(-t / tau))
    np.testing.assert_allclose(r.stress_Pa, exact, rtol=1e-13, atol=1e-18)


def test_ramp_and_hold_matches_standard_linear_solid():
    # Ramp to t1, then hold (closed form): sigma = rate [E_inf t1 + E1 tau (1 - e^{-t1/tau})
    # e^{-(t - t1)/tau}] for t >= t1.
    e_inf, e1, tau, rate, t1 = 2.0, 8.0, 1.5, 1e-2, 4.0
    t = np.concatenate([np.linspace(0, t1, 5), t1 + np.logspace(-3, 2, 30)])
    strain = rate * np.minimum(t, t1)
    r = stress_under_strain(PronySeries(e_inf, [tau], [e1]), t, strain)
    th = t[5:]
    exact = rate * (e_inf * t1 + e1 * tau * -np.expm1(-t1 / tau) * np.exp(-(th - t1) / tau))
    np.testing.assert_allclose(r.stress_Pa[5:], exact, rtol=1e-13)


def test_viscous_part_after_a_step_strain():
    # Maxwell arm of the SLS after a step strain eps0: its dashpot strain is
    # eps0 (1 - e^{-t/tau}) (issue 6), i.e. the arm stress is E1 eps0 e^{-t/tau}; the spring
    # carries E_inf eps0. Checked through the total stress.
    e_inf, e1, tau, eps0 = 2.0, 8.0, 1.5, 0.01
    t = np.linspace(0.0, 10.0, 7)
    r = stress_under_strain(PronySeries(e_inf, [tau], [e1]), t, np.full(t.size, eps0))
    dashpot = eps0 * -np.expm1(-t / tau)
    np.testing.assert_allclose(r.stress_Pa, e_inf * eps0 + e1 * (eps0 - dashpot), rtol=1e-14)


def test_ramp_stress_on_a_liquid_flow_integral_exact():
    # Maxwell liquid under sigma = k t: eps = k t / E + k t^2 / (2 E tau) (closed form).
    e, tau, k = 5.0, 2.0, 3.0
    t = np.array([0.0, 0.3, 1.0, 4.0, 4.5, 20.0])
    r = strain_under_stress(PronySeries(0.0, [tau], [e]), t, k * t)
    np.testing.assert_allclose(r.strain, k * t / e + k * t**2 / (2 * e * tau), rtol=1e-14)


def test_sinusoid_reaches_steady_state_storage_and_loss():
    # Isothermal history vs the isothermal prediction: after the transients die out
    # (t >> tau_max = 1e1 here), eps0 sin(wt) gives eps0 [E' sin(wt) + E'' cos(wt)]
    # (Ferry 1980, ch. 1). Piecewise-linear sampling at 400 points per cycle has an error of
    # order (w dt)^2/12 ~ 2e-5 relative; the test allows 1e-4 of the stress amplitude.
    p = PronySeries(1.0, [1e-2, 1e-1, 1.0, 10.0], [10.0, 30.0, 100.0, 300.0])
    w = 2.0
    t = np.linspace(0.0, 400.0, 400 * int(400 * w / (2 * np.pi)))
    r = stress_under_strain(p, t, 1e-3 * np.sin(w * t))
    late = t > 300.0
    expected = 1e-3 * (p.storage_modulus(w) * np.sin(w * t[late])
                       + p.loss_modulus(w) * np.cos(w * t[late]))
    amplitude = 1e-3 * abs(p.complex_modulus(w))
    assert np.max(np.abs(r.stress_Pa[late] - expected)) < 1e-4 * amplitude


def test_strain_and_stress_control_are_inverse():
    # Feeding the computed strain back (strain control) must return the prescribed stress;
    # both paths are second-order accurate for smooth histories (here < 1e-6 relative with
    # 4000 samples on a smooth load).
    p = ref_series()
    t = np.linspace(0.0, 20.0, 4001)
    sig = 5.0 * (1 - np.cos(0.5 * t))
    eps = strain_under_stress(p, t, sig).strain
    back = stress_under_strain(p, t, eps).stress_Pa
    assert np.max(np.abs(back - sig)) < 1e-6 * np.max(sig)


def test_hundred_term_twenty_decade_series_through_the_history_engine():
    # 101 terms over 20 decades: the step responses equal E(t) and D(t) at times from 1e-11 s
    # to 1e14 s (D from the exact conversion with its 101 roots).
    rng = np.random.default_rng(3)
    p = PronySeries(1e3, np.logspace(-10, 10, 101), rng.uniform(0.05, 1.0, 101) * 1e6)
    t = log_times(1e-11, 1e14, 200)
    r = stress_under_strain(p, t, np.full(t.size, 1e-3))
    np.testing.assert_allclose(r.stress_Pa, 1e-3 * p.relaxation_modulus(t), rtol=1e-12)
    s = strain_under_stress(p, t, np.full(t.size, 1e4))
    np.testing.assert_allclose(s.strain, 1e4 * p.creep_compliance(t), rtol=1e-11)


# ----------------------------------------------------------------------------------------
# temperature and reduced time
# ----------------------------------------------------------------------------------------
def test_constant_temperature_equals_shifted_isothermal_response():
    # At a constant T the clock runs at 1/a_T: xi = t / a_T, so the step response is
    # eps0 E(t / a_T) (TTS definition, Ferry 1980 ch. 11).
    p = ref_series()
    T = 320.0
    a_t = 10.0 ** wlf(T)
    t = log_times(1e-8, 1e6, 200)
    r = stress_under_strain(p, t, np.full(t.size, 0.01), temperature_K=T, log10_aT=wlf)
    np.testing.assert_allclose(r.reduced_time_s, t / a_t, rtol=1e-14)
    np.testing.assert_allclose(r.stress_Pa, 0.01 * p.relaxation_modulus(t / a_t), rtol=1e-13)
    assert np.all(r.temperature_K == T)
    s = strain_under_stress(p, t, np.full(t.size, 1.0), temperature_K=np.full(t.size, T),
                            log10_aT=wlf)
    np.testing.assert_allclose(s.strain, p.creep_compliance(t / a_t), rtol=1e-12)


def test_temperature_jump_adds_reduced_time_piecewise():
    # T1 for t1 seconds, then a jump (two samples at t1) to T2: xi = t1/a1 + (t - t1)/a2,
    # and a step strain relaxes as eps0 E(xi) (Morland & Lee 1960).
    p = ref_series()
    t1 = 100.0
    t = np.array([0.0, 50.0, t1, t1, 150.0, 1e3, 1e5])
    temps = np.array([290.0, 290.0, 290.0, 330.0, 330.0, 330.0, 330.0])
    r = stress_under_strain(p, t, np.full(t.size, 0.01), temperature_K=temps, log10_aT=wlf)
    a1, a2 = 10.0 ** wlf(290.0), 10.0 ** wlf(330.0)
    xi = np.where(np.arange(t.size) < 3, t / a1, t1 / a1 + (t - t1) / a2)
    np.testing.assert_allclose(r.reduced_time_s, xi, rtol=1e-14)
    np.testing.assert_allclose(r.stress_Pa, 0.01 * p.relaxation_modulus(xi), rtol=1e-12)


def test_reduced_time_of_a_temperature_ramp_against_quad():
    # Linear ramp 290 K -> 320 K in 600 s with the WLF law, integrated independently by
    # scipy.integrate.quad. The trapezoid error on an exponential-like integrand is about
    # (k h)^2/12 with k = d ln(1/a_T)/dt <= 0.06 1/s here; 500 substeps per 60-s interval
    # (h = 0.12 s) give < 5e-6. Halving the substep must cut the error about fourfold.
    t = np.linspace(0.0, 600.0, 11)
    temps = 290.0 + 0.05 * t

    def rate(u):
        return 10.0 ** (-wlf(290.0 + 0.05 * u))

    exact = np.array([integrate.quad(rate, 0.0, ti, epsrel=1e-13, limit=200)[0] for ti in t])
    xi = reduced_time(t, temps, wlf, substeps=500)
    np.testing.assert_allclose(xi, exact, rtol=1e-5)
    r = stress_under_strain(ref_series(), t, np.full(t.size, 0.01), temperature_K=temps,
                            log10_aT=wlf, substeps=500)
    np.testing.assert_array_equal(r.reduced_time_s, xi)
    e1 = abs(reduced_time(t, temps, wlf, substeps=20)[-1] / exact[-1] - 1)
    e2 = abs(reduced_time(t, temps, wlf, substeps=40)[-1] / exact[-1] - 1)
    assert 3.5 < e1 / e2 < 4.5
    assert xi[0] == 0.0


def test_reduced_time_constant_temperature_and_single_sample():
    t = np.array([10.0, 12.0, 20.0])
    np.testing.assert_allclose(reduced_time(t, 320.0, wlf), (t - 10.0) / 10.0 ** wlf(320.0),
                               rtol=1e-14)
    assert reduced_time([5.0], 300.0, wlf).tolist() == [0.0]
    # a law written for scalars that returns a scalar for a constant is broadcast
    assert reduced_time(t, 300.0, lambda T: 0.0).tolist() == [0.0, 2.0, 10.0]


# ----------------------------------------------------------------------------------------
# the recursion itself
# ----------------------------------------------------------------------------------------
@pytest.mark.parametrize("n", [1, 2, 17, 1000, 1031])
def test_blocked_recurrence_equals_plain_loop(n):
    # Internal check: the blocked evaluation is the same recursion as a plain loop, including
    # a = 0 (memory wiped) and a = 1 (jumps), and lengths that are not a multiple of the block.
    rng = np.random.default_rng(n)
    a = rng.uniform(0.0, 1.0, n)
    a[rng.uniform(size=n) < 0.1] = 0.0
    a[rng.uniform(size=n) < 0.1] = 1.0
    b = rng.normal(size=n)
    h, ref = 0.7, []
    for ai, bi in zip(a, b, strict=True):
        h = ai * h + bi
        ref.append(h)
    np.testing.assert_allclose(_linear_recurrence(a, b, 0.7), ref, rtol=1e-12, atol=1e-12)
    # constant a goes through scipy.signal.lfilter: same recursion
    h, ref = -0.3, []
    for bi in b:
        h = 0.9 * h + bi
        ref.append(h)
    np.testing.assert_allclose(_linear_recurrence(np.full(n, 0.9), b, -0.3), ref,
                               rtol=1e-12, atol=1e-12)
    assert _linear_recurrence(np.empty(0), np.empty(0), 1.0).size == 0


def test_uniform_and_irregular_grids_agree_on_exact_inputs():
    # A ramp is exact on any grid: the uniform (lfilter) path and the blocked path must agree.
    p = ref_series()
    tu = np.arange(3001) * 0.01
    ti = np.sort(np.concatenate([tu, [0.005, 7.77, 12.345]]))
    ru = stress_under_strain(p, tu, 1e-3 * tu).stress_Pa
    ri = stress_under_strain(p, ti, 1e-3 * ti).stress_Pa
    np.testing.assert_allclose(np.interp(tu, ti, ri), ru, rtol=1e-12)


# ----------------------------------------------------------------------------------------
# result object, warnings, errors
# ----------------------------------------------------------------------------------------
def test_history_response_exports():
    p = ref_series()
    t = np.array([0.0, 1.0, 2.0])
    strain = np.array([0.0, 1e-3, 2e-3])
    r = stress_under_strain(p, t, strain)
    frame = r.to_frame()
    assert list(frame.columns) == ["time_s", "reduced_time_s", "temperature_K", "strain",
                                   "stress_Pa"]
    assert len(frame) == 3 and r.n_samples == 3
    json.dumps(r.to_dict(), allow_nan=False)
    assert "<table>" in r._repr_html_()
    long = stress_under_strain(p, np.arange(20.0), np.ones(20))
    assert "&hellip;" in long._repr_html_()
    with pytest.raises(ValueError, match="read-only"):
        r.stress_Pa[0] = 1.0
    # isothermal without a known reference temperature: NaN column, None in the dict
    q = stress_under_strain(PronySeries(1.0, [1.0], [1.0]), t, strain)
    assert np.all(np.isnan(q.temperature_K)) and q.to_dict()["temperature_K"] == [None] * 3


def test_inputs_are_not_mutated():
    t = np.array([0.0, 1.0, 2.0])
    strain = np.array([0.0, 1e-3, 2e-3])
    temps = np.array([300.0, 310.0, 320.0])
    stress_under_strain(ref_series(), t, strain, temperature_K=temps, log10_aT=wlf)
    assert t.tolist() == [0.0, 1.0, 2.0] and strain.tolist() == [0.0, 1e-3, 2e-3]
    assert temps.tolist() == [300.0, 310.0, 320.0]


def test_extrapolation_warning_when_history_outlasts_valid_range():
    p = ref_series(valid_reduced_time_range_s=(1e-3, 1e3))
    t = np.array([0.0, 10.0, 1e4])
    with pytest.warns(ExtrapolationWarning, match="beyond the valid reduced time range"):
        stress_under_strain(p, t, np.ones(3))
    with pytest.warns(ExtrapolationWarning, match="spans 1e\\+04 s of reduced time"):
        strain_under_stress(p, t, np.ones(3))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        stress_under_strain(p, t[:2], np.ones(2))


@pytest.mark.parametrize("kwargs, message", [
    (dict(time_s=[0.0, 2.0, 1.0]), r"time_s\[2\] must be at least time_s\[1\] = 2.0"),
    (dict(time_s=[0.0, np.nan, 1.0]), r"time_s\[1\] must be finite"),
    (dict(time_s=[]), "time_s must be a non-empty one-dimensional array"),
    (dict(time_s="abc"), "time_s must be an array of numbers"),
    (dict(strain=[0.0, 1.0]), r"strain must be as long as time_s \(3 values\); got '2 values'"),
    (dict(temperature_K=300.0), "log10_aT must be given when temperature_K is given"),
    (dict(log10_aT=wlf), "temperature_K must be given when log10_aT is given"),
    (dict(temperature_K=[300.0, -1.0, 300.0], log10_aT=wlf),
     r"temperature_K\[1\] must be positive \(kelvin\)"),
    (dict(temperature_K=[300.0, 300.0], log10_aT=wlf), "temperature_K must be as long as"),
    (dict(temperature_K=300.0, log10_aT=17.44), "log10_aT must be a callable"),
    (dict(temperature_K=300.0, log10_aT=lambda T: np.full(np.shape(T), np.nan)),
     "log10_aT at 300.0 K must be a finite number with a finite 1/a_T; got nan"),
    (dict(temperature_K=300.0, log10_aT=lambda T: np.zeros(5)),
     r"log10_aT\(temperature_K\) must be of the same shape"),
    (dict(temperature_K=300.0, log10_aT=lambda T: "fast"),
     r"log10_aT\(temperature_K\) must be an array of numbers"),
    (dict(series="steel"), "series must be a PronySeries or a CreepSeries; got 'str'"),
])
def test_stress_under_strain_errors(kwargs, message):
    args = dict(series=ref_series(), time_s=[0.0, 1.0, 2.0], strain=[0.0, 1e-3, 2e-3])
    args.update(kwargs)
    with pytest.raises(DataError, match=message):
        stress_under_strain(**args)


def test_strain_under_stress_errors():
    with pytest.raises(DataError, match=r"stress_Pa\[1\] must be finite"):
        strain_under_stress(ref_series(), [0.0, 1.0], [1.0, np.inf])
    with pytest.raises(DataError, match="series must be a CreepSeries or a PronySeries"):
        strain_under_stress(None, [0.0, 1.0], [1.0, 1.0])


@pytest.mark.parametrize("substeps", [0, 2.5, True])
def test_reduced_time_substeps_errors(substeps):
    with pytest.raises(DataError, match="substeps must be an integer >= 1"):
        reduced_time([0.0, 1.0], 300.0, wlf, substeps=substeps)
    with pytest.raises(DataError, match="substeps must be an integer >= 1"):
        strain_under_stress(ref_series(), [0.0, 1.0], [1.0, 1.0], substeps=substeps)


def test_reduced_time_overflowing_law():
    message = "log10_aT at 300.0 K must be a finite number with a finite 1/a_T; got -400.0"
    with pytest.raises(DataError, match=message):
        reduced_time([0.0, 1.0], 300.0, lambda T: np.full(np.shape(T), -400.0))


def test_history_response_validation():
    a = np.zeros(3)
    with pytest.raises(DataError, match="control must be one of 'strain', 'stress'"):
        HistoryResponse(a, a, a, a, a, "temperature")
    with pytest.raises(DataError, match="strain must be one-dimensional with 3 values"):
        HistoryResponse(a, a, a, np.zeros(2), a, "strain")
