"""Tests of ttsp.transition: Tg as the E'' peak and the tan δ peak of an isochrone.

Ground truth: a frequency campaign generated here from a known Prony spectrum and a WLF law,
with the material functions written out in this file (not taken from ttsp). The true peak
temperature of each isochrone is found independently with scipy.optimize.minimize_scalar
(bounded Brent search) on those exact functions.
"""

from __future__ import annotations

import functools
import json
import math
import subprocess
import sys
import warnings
from dataclasses import FrozenInstanceError

import numpy as np
import pytest
import scipy.constants
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

from ttsp.data import Campaign, Isotherm
from ttsp.exceptions import DataError, ExtrapolationWarning
from ttsp.laws import make_shift_law
from ttsp.model import ViscoelasticModel
from ttsp.prony import PronySeries
from ttsp.transition import GlassTransitionEstimate, _parabola_vertex, estimate_glass_transition

# ---- the known material ------------------------------------------------------------------
# WLF with the universal constants (Williams, Landel & Ferry, J. Am. Chem. Soc. 77:3701, 1955),
# referred to 100 °C; a Gaussian spectrum in log10 tau (4 terms per decade, so E'' is smooth).
T_REF_K = 373.15
C1, C2_K = 17.44, 51.6
TAU_S = np.logspace(-9.0, 5.0, 57)
E_I_PA = 2.0e8 * np.exp(-0.5 * ((np.log10(TAU_S) + 2.0) / 1.5) ** 2)
E_INF_PA = 5.0e6
FREQ_HZ_GRID = np.logspace(-1.0, math.log10(50.0), 25)  # 1 Hz falls between two points
SEARCH_K = (330.0, 440.0)


def exact_log10_aT(T_K):
    d = np.asarray(T_K, dtype=float) - T_REF_K
    return -C1 * d / (C2_K + d)


def exact_storage(omega):
    wt = np.multiply.outer(np.asarray(omega, dtype=float), TAU_S)
    return E_INF_PA + (wt ** 2 / (1.0 + wt ** 2)) @ E_I_PA


def exact_loss(omega):
    wt = np.multiply.outer(np.asarray(omega, dtype=float), TAU_S)
    return (wt / (1.0 + wt ** 2)) @ E_I_PA


def exact_log_isochrone(quantity, T_K, frequency_Hz=1.0):
    w = 2.0 * math.pi * frequency_Hz * 10.0 ** exact_log10_aT(T_K)
    if quantity == "loss":
        return float(np.log10(exact_loss(w)))
    return float(np.log10(exact_loss(w) / exact_storage(w)))


@functools.cache
def true_peak_K(quantity, frequency_Hz=1.0):
    """Independent reference: scipy.optimize.minimize_scalar (bounded) on the exact functions."""
    res = minimize_scalar(lambda T: -exact_log_isochrone(quantity, T, frequency_Hz),
                          bounds=SEARCH_K, method="bounded", options={"xatol": 1e-7})
    assert res.success
    return float(res.x)


@functools.cache
def parabola_bound_K(quantity, spacing_K):
    """Leading error of a three-point parabola vertex: |y'''| h^2 / (6 |y''|).

    Expanding y = log10 value about its maximum T_p as y''(T-T_p)^2/2 + y'''(T-T_p)^3/6, the
    vertex of the parabola through samples at T0-h, T0, T0+h (|T0-T_p| <= h/2) lies
    y''' (3 (T0-T_p)^2 - h^2) / (6 y'') from T_p, at most |y'''| h^2 / (6 |y''|) away.
    Derivatives by central differences of the exact function (error O(1e-3) relative).
    """
    tp = true_peak_K(quantity)
    y = functools.partial(exact_log_isochrone, quantity)
    d = 0.05
    d2 = (y(tp + d) - 2 * y(tp) + y(tp - d)) / d ** 2
    d3 = (y(tp + 2 * d) - 2 * y(tp + d) + 2 * y(tp - d) - y(tp - 2 * d)) / (2 * d ** 3)
    return abs(d3) * spacing_K ** 2 / (6.0 * abs(d2))


def make_series(valid_reduced_time_range_s=None):
    return PronySeries(E_INF_PA, TAU_S, E_I_PA, reference_temperature_K=T_REF_K,
                       valid_reduced_time_range_s=valid_reduced_time_range_s)


def make_model(valid_range_K=SEARCH_K, series=None):
    law = make_shift_law("wlf", T_REF_K, C1=C1, C2_K=C2_K, valid_temperature_range_K=valid_range_K)
    return ViscoelasticModel(make_series() if series is None else series, law)


def make_campaign(temperatures_K, freq_Hz=FREQ_HZ_GRID, columns=("storage", "loss")):
    """Isotherms of the exact functions at the given temperatures (the generator)."""
    isotherms = []
    omega = 2.0 * math.pi * np.asarray(freq_Hz, dtype=float)
    for T in temperatures_K:
        w = omega * 10.0 ** exact_log10_aT(T)
        every = {"storage": ("storage_modulus_Pa", exact_storage(w)),
                 "loss": ("loss_modulus_Pa", exact_loss(w)),
                 "tan": ("tan_delta", exact_loss(w) / exact_storage(w))}
        isotherms.append(Isotherm(float(T), omega, dict(every[c] for c in columns)))
    return Campaign(tuple(isotherms), "frequency")


def five_kelvin_campaign(offset_K=2.0, spacing_K=5.0, lo=335.0, hi=435.0):
    return make_campaign(np.arange(lo + offset_K, hi, spacing_K))


# ---- ground truth ------------------------------------------------------------------------
def test_reference_peaks_are_inside_the_campaign_and_ordered():
    # Sanity of the fixture, and a fact of common practice ("E' onset < E'' peak
    # < tan δ peak"): at the same frequency the tan δ peak lies above the E'' peak.
    t_loss, t_tan = true_peak_K("loss"), true_peak_K("tan")
    assert SEARCH_K[0] + 20 < t_loss < t_tan < SEARCH_K[1] - 20
    assert t_tan - t_loss > 5.0


def test_model_peaks_match_scipy_reference():
    est = estimate_glass_transition(make_model(), frequency_Hz=1.0)
    # Grid step h <= 0.1 K: the parabola bound |y'''| h^2/(6|y''|) is 2e-4 K (E'') and 4e-4 K
    # (tan δ) for this material; the scipy search is run to 1e-7 K. 0.01 K leaves a 25x margin
    # and is still far below anything of practical weight.
    assert est.loss_peak_from_model_K == pytest.approx(true_peak_K("loss"), abs=0.01)
    assert est.tan_delta_peak_from_model_K == pytest.approx(true_peak_K("tan"), abs=0.01)
    # fact of common practice (ASTM E1640 and D4065, from memory): tan δ peak above the E'' peak
    assert est.tan_delta_peak_from_model_K > est.loss_peak_from_model_K
    assert est.loss_peak_from_isotherms_K is None and est.tan_delta_peak_from_isotherms_K is None
    assert any("no campaign" in n for n in est.notes)
    assert est.temperature_range_K == SEARCH_K


def test_isotherm_peaks_match_scipy_reference_at_5_K_spacing():
    est = estimate_glass_transition(make_model(), five_kelvin_campaign())
    # Tolerance: the cubic-term bound |y'''| h^2 / (6 |y''|) at h = 5 K, computed from the exact
    # functions (0.52 K for E'', 1.05 K for tan δ with this spectrum), plus 0.1 K for the
    # quartic terms and the log-log interpolation between frequencies 0.11 decade apart.
    for quantity, value in (("loss", est.loss_peak_from_isotherms_K),
                            ("tan", est.tan_delta_peak_from_isotherms_K)):
        tol = parabola_bound_K(quantity, 5.0) + 0.1
        assert tol < 1.2
        assert value == pytest.approx(true_peak_K(quantity), abs=tol)
    # fact of common practice (ASTM E1640 and D4065, from memory): tan δ peak above the E'' peak
    assert est.tan_delta_peak_from_isotherms_K > est.loss_peak_from_isotherms_K
    assert est.notes == ()


@settings(max_examples=25, deadline=None)
@given(offset=st.floats(0.0, 1.0), spacing=st.sampled_from([2.5, 4.0, 5.0, 6.0]))
def test_isotherm_error_within_parabola_bound_for_any_grid(offset, spacing):
    # Wherever the isotherm grid falls relative to the peak, the error stays within the cubic
    # bound for its spacing (+0.1 K as above); the bound falls as h^2, so finer grids must do
    # better, and a wrong refinement (no refinement: error up to h/2) would fail.
    camp = five_kelvin_campaign(offset_K=offset * spacing, spacing_K=spacing)
    est = estimate_glass_transition(make_model(), camp)
    for quantity, value in (("loss", est.loss_peak_from_isotherms_K),
                            ("tan", est.tan_delta_peak_from_isotherms_K)):
        assert abs(value - true_peak_K(quantity)) <= parabola_bound_K(quantity, spacing) + 0.1


def test_uneven_isotherm_temperatures():
    # Isotherms as set on a real oven: nominal 5 K steps, each off by up to 1 K (seeded).
    rng = np.random.default_rng(20240607)
    temps = np.arange(337.0, 435.0, 5.0) + rng.uniform(-1.0, 1.0, 20)
    est = estimate_glass_transition(make_model(), make_campaign(temps))
    # largest local spacing is below 7 K; bound at 7 K plus 0.1 K as above
    assert np.diff(temps).max() < 7.0
    for quantity, value in (("loss", est.loss_peak_from_isotherms_K),
                            ("tan", est.tan_delta_peak_from_isotherms_K)):
        assert abs(value - true_peak_K(quantity)) <= parabola_bound_K(quantity, 7.0) + 0.1


def test_peak_moves_with_frequency_as_the_wlf_law_says():
    # The isochrone depends on T only through f*a_T, so at 10 Hz the peak sits where
    # log10 a_T is one decade lower than at the 1 Hz peak. Inverting WLF
    # (Williams, Landel & Ferry 1955): T - T_ref = -C2 L / (C1 + L) for log10 a_T = L.
    model = make_model()
    one = estimate_glass_transition(model, frequency_Hz=1.0)
    ten = estimate_glass_transition(model, frequency_Hz=10.0)
    for name in ("loss_peak_from_model_K", "tan_delta_peak_from_model_K"):
        L = exact_log10_aT(getattr(one, name)) - 1.0
        expected = T_REF_K - C2_K * L / (C1 + L)
        assert getattr(ten, name) == pytest.approx(expected, abs=0.01)
    # The E'' peak sits 3.3 K below T_ref, where WLF with the universal constants moves it by
    # about C2/C1 = 3 K per decade (Williams, Landel & Ferry, JACS 77:3701, 1955, computed there).
    assert 2.0 < ten.loss_peak_from_model_K - one.loss_peak_from_model_K < 3.5
    # scipy reference at 10 Hz as well
    assert ten.loss_peak_from_model_K == pytest.approx(true_peak_K("loss", 10.0), abs=0.01)


def test_isotherms_giving_storage_and_tan_delta_only():
    # E'' is derived as E' tan δ by Campaign.with_derived; the estimates are unchanged.
    temps = np.arange(337.0, 435.0, 5.0)
    full = estimate_glass_transition(make_model(), make_campaign(temps))
    derived = estimate_glass_transition(make_model(),
                                        make_campaign(temps, columns=("storage", "tan")))
    assert derived.loss_peak_from_isotherms_K == pytest.approx(full.loss_peak_from_isotherms_K,
                                                               abs=1e-9)
    assert derived.tan_delta_peak_from_isotherms_K == pytest.approx(
        full.tan_delta_peak_from_isotherms_K, abs=1e-9)


def test_isotherms_that_do_not_cover_the_frequency_are_left_out():
    temps = np.arange(337.0, 435.0, 5.0)
    covering = make_campaign(temps)
    # two isotherms far from the peak measured only above 2 Hz: they must not be used
    narrow = list(covering.isotherms)
    for k in (0, len(narrow) - 1):
        narrow[k] = make_campaign([temps[k]], freq_Hz=np.logspace(0.3, 1.5, 9)).isotherms[0]
    est = estimate_glass_transition(make_model(), Campaign(tuple(narrow), "frequency"))
    ref = estimate_glass_transition(make_model(), covering)
    assert est.loss_peak_from_isotherms_K == pytest.approx(ref.loss_peak_from_isotherms_K)
    assert any("18 of 20 isotherms used" in n and "do not cover 1 Hz" in n for n in est.notes)


def test_frequency_outside_every_isotherm_gives_none_with_note():
    est = estimate_glass_transition(make_model(), five_kelvin_campaign(), frequency_Hz=200.0)
    assert est.loss_peak_from_isotherms_K is None
    assert est.tan_delta_peak_from_isotherms_K is None
    assert any("0 available" in n for n in est.notes)
    # the model still has the peak, higher by about 2.3 decades * 2.6 K
    assert est.loss_peak_from_model_K == pytest.approx(true_peak_K("loss", 200.0), abs=0.01)


def test_peak_outside_the_measured_range_is_none_with_note():
    # Isotherms from 100 °C up: above the 1 Hz E'' peak (96.7 °C) but around the tan δ peak.
    temps = np.arange(373.15, 415.0, 5.0)
    model = make_model(valid_range_K=(float(temps[0]), float(temps[-1])))
    est = estimate_glass_transition(model, make_campaign(temps))
    assert est.loss_peak_from_model_K is None
    assert est.loss_peak_from_isotherms_K is None
    assert any("no peak inside the valid range of the shift law" in n and "lower end" in n
               for n in est.notes)
    assert any("do not bracket" in n and "lowest" in n for n in est.notes)
    assert est.tan_delta_peak_from_model_K == pytest.approx(true_peak_K("tan"), abs=0.01)
    assert est.tan_delta_peak_from_isotherms_K == pytest.approx(true_peak_K("tan"), abs=1.2)


def test_range_defaults_to_campaign_then_to_argument():
    law = make_shift_law("wlf", T_REF_K, C1=C1, C2_K=C2_K)  # no valid range
    model = ViscoelasticModel(make_series(), law)
    camp = five_kelvin_campaign()
    est = estimate_glass_transition(model, camp)
    assert est.temperature_range_K == (float(camp.temperatures_K[0]),
                                       float(camp.temperatures_K[-1]))
    est2 = estimate_glass_transition(model, temperature_range_K=(360.0, 380.0))
    assert est2.temperature_range_K == (360.0, 380.0)
    assert est2.loss_peak_from_model_K == pytest.approx(true_peak_K("loss"), abs=0.01)
    assert est2.tan_delta_peak_from_model_K is None  # 109.6 °C lies above 380 K
    assert any("no peak inside the requested range" in n and "upper end" in n
               for n in est2.notes)


def test_no_warning_in_the_normal_case_and_filters_untouched():
    before = list(warnings.filters)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        estimate_glass_transition(make_model(), five_kelvin_campaign())
    assert warnings.filters == before


def test_peak_where_the_series_extrapolates_warns_once():
    # The E'' peak sits at reduced frequencies of order 1e2 rad/s (tau about 1e-2 s); a series
    # said to be valid only for reduced times 1e3-1e5 s extrapolates there.
    series = make_series(valid_reduced_time_range_s=(1e3, 1e5))
    with pytest.warns(ExtrapolationWarning, match="lies where the model extrapolates") as rec:
        est = estimate_glass_transition(make_model(series=series))
    assert len([w for w in rec if issubclass(w.category, ExtrapolationWarning)]) == 2
    assert est.loss_peak_from_model_K == pytest.approx(true_peak_K("loss"), abs=0.01)
    assert sum("extrapolates" in n for n in est.notes) == 2


def test_peak_outside_the_law_range_of_a_requested_range_warns():
    model = make_model(valid_range_K=(380.0, 440.0))
    with pytest.warns(ExtrapolationWarning, match="outside the valid range"):
        est = estimate_glass_transition(model, temperature_range_K=SEARCH_K)
    assert est.loss_peak_from_model_K == pytest.approx(true_peak_K("loss"), abs=0.01)


# ---- isotherm edge cases on hand-made data -----------------------------------------------
def simple_campaign(loss_at_1Hz, temps=None, columns=("loss_modulus_Pa", "storage_modulus_Pa")):
    """Isotherms with a flat spectrum: E'' is the same at every frequency."""
    temps = np.arange(len(loss_at_1Hz)) * 10.0 + 300.0 if temps is None else temps
    omega = np.array([1.0, 10.0, 100.0])
    isos = []
    for T, v in zip(temps, loss_at_1Hz, strict=True):
        vals = {"loss_modulus_Pa": np.full(3, v), "storage_modulus_Pa": np.full(3, 1e9)}
        isos.append(Isotherm(T, omega, {k: vals[k] for k in columns}))
    return Campaign(tuple(isos), "frequency")


def test_bracketed_parabola_vertex_on_hand_data():
    # log10 E'' = 6, 7, 6.5 at 300, 310, 320 K: the vertex of the parabola through them lies at
    # 310 + 10 (6 - 6.5) / (2 (6 - 14 + 6.5)) = 310 + 5/3 K (three-point formula, worked by hand).
    est = estimate_glass_transition(make_model(), simple_campaign([1e6, 1e7, 10 ** 6.5]))
    assert est.loss_peak_from_isotherms_K == pytest.approx(310.0 + 5.0 / 3.0, abs=1e-9)


def test_flat_top_is_not_a_bracketed_peak():
    est = estimate_glass_transition(make_model(), simple_campaign([1e6, 2e6, 2e6, 1e6]))
    assert est.loss_peak_from_isotherms_K is None
    assert any("flat top" in n for n in est.notes)


def test_fewer_than_three_isotherms():
    est = estimate_glass_transition(make_model(), simple_campaign([1e6, 2e6]))
    assert est.loss_peak_from_isotherms_K is None
    assert any("needs at least 3 isotherms" in n for n in est.notes)


def test_campaign_without_loss_information():
    camp = simple_campaign([1e6, 2e6, 1e6], columns=("storage_modulus_Pa",))
    est = estimate_glass_transition(make_model(), camp)
    assert est.loss_peak_from_isotherms_K is None and est.tan_delta_peak_from_isotherms_K is None
    assert any("has no loss modulus" in n for n in est.notes)
    assert any("has no tan δ" in n for n in est.notes)


def test_inputs_are_not_modified():
    camp = five_kelvin_campaign()
    copy = Campaign(camp.isotherms, camp.domain)
    estimate_glass_transition(make_model(), camp)
    assert camp == copy
    assert "tan_delta" not in camp.isotherms[0].values


@settings(max_examples=50, deadline=None)
@given(a=st.floats(-5.0, -0.01), vertex=st.floats(-50.0, 50.0), c=st.floats(-3.0, 3.0),
       x0=st.floats(-100.0, 100.0), d1=st.floats(0.5, 20.0), d2=st.floats(0.5, 20.0))
def test_parabola_vertex_recovers_any_parabola(a, vertex, c, x0, d1, d2):
    # Exact for a parabola, with uneven spacing; checked against numpy.polyfit (independent).
    x = np.array([x0, x0 + d1, x0 + d1 + d2])
    y = a * (x - vertex) ** 2 + c
    got = _parabola_vertex(x, y)
    coef = np.polyfit(x, y, 2)
    assert got == pytest.approx(-coef[1] / (2 * coef[0]), abs=1e-6 * (1 + abs(vertex)))
    assert got == pytest.approx(vertex, abs=1e-6 * (1 + abs(vertex)))


def test_parabola_vertex_refuses_upward_or_repeated_points():
    assert _parabola_vertex(np.array([0.0, 1.0, 2.0]), np.array([1.0, 0.0, 1.0])) is None
    assert _parabola_vertex(np.array([0.0, 0.0, 2.0]), np.array([0.0, 1.0, 0.0])) is None


# ---- the result object ---------------------------------------------------------------------
def test_result_exports():
    est = estimate_glass_transition(make_model(), five_kelvin_campaign())
    d = json.loads(json.dumps(est.to_dict()))
    # °C = K - 273.15 (scipy.constants.zero_Celsius, CODATA)
    assert d["loss_peak_from_model_C"] == pytest.approx(
        d["loss_peak_from_model_K"] - scipy.constants.zero_Celsius, abs=1e-12)
    assert d["frequency_Hz"] == 1.0
    assert d["temperature_range_K"] == list(SEARCH_K)
    assert d["notes"] == []
    frame = est.to_frame()
    assert list(frame["source"]) == ["model", "model", "isotherms", "isotherms"]
    assert frame["temperature_K"].iloc[2] == est.loss_peak_from_isotherms_K
    page = est._repr_html_()
    assert "<table>" in page and f"{est.tan_delta_peak_from_model_K:.2f} K" in page
    with pytest.raises(FrozenInstanceError):
        est.frequency_Hz = 2.0


def test_result_exports_with_missing_values():
    est = GlassTransitionEstimate(1.0, None, 380.0, None, None, ("why",), None)
    d = json.loads(json.dumps(est.to_dict()))
    assert d["loss_peak_from_model_K"] is None and d["loss_peak_from_model_C"] is None
    assert d["tan_delta_peak_from_model_C"] == pytest.approx(380.0 - 273.15)
    assert d["temperature_range_C"] is None
    assert "&ndash;" in est._repr_html_() and "why" in est._repr_html_()
    assert est.to_frame()["temperature_K"].isna().sum() == 3


# ---- errors --------------------------------------------------------------------------------
@pytest.mark.parametrize("f", [0.0, -1.0, float("nan"), float("inf"), "fast"])
def test_bad_frequency(f):
    with pytest.raises(DataError, match="frequency_Hz must be"):
        estimate_glass_transition(make_model(), frequency_Hz=f)


def test_time_domain_campaign_is_refused():
    iso = Isotherm(350.0, np.array([1.0, 10.0]), {"relaxation_modulus_Pa": np.array([2e9, 1e9])})
    with pytest.raises(DataError, match="campaign must be frequency-domain data"):
        estimate_glass_transition(make_model(), Campaign((iso,), "time"))


def test_not_a_campaign_is_refused():
    with pytest.raises(DataError, match="campaign must be None or a ttsp.data.Campaign"):
        estimate_glass_transition(make_model(), campaign=[1, 2, 3])


def test_not_a_model_is_refused():
    with pytest.raises(DataError, match="model must be a ViscoelasticModel"):
        estimate_glass_transition(make_series())


@pytest.mark.parametrize("rng", [(400.0, 350.0), (0.0, 10.0), (350.0, float("nan")), "hot", 5])
def test_bad_temperature_range(rng):
    with pytest.raises(DataError, match="temperature_range_K must be"):
        estimate_glass_transition(make_model(), temperature_range_K=rng)


def test_range_needed_when_nothing_gives_one():
    law = make_shift_law("wlf", T_REF_K, C1=C1, C2_K=C2_K)
    with pytest.raises(DataError, match="temperature_range_K must be given"):
        estimate_glass_transition(ViscoelasticModel(make_series(), law))


def test_module_does_not_load_plotting_or_pandas():
    code = ("import sys, ttsp.transition; "
            "print(any(m in sys.modules for m in ('matplotlib', 'pandas', 'typer')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
