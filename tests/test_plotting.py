"""Tests of ttsp.plotting: the figures of a campaign and of a build.

The campaigns are generated here from a generalized Maxwell (Prony) spectrum,
E'(ω) = E_∞ + Σ E_i ω²τ_i²/(1+ω²τ_i²), E''(ω) = Σ E_i ωτ_i/(1+ω²τ_i²), E(t) = E_∞ + Σ E_i e^(−t/τ_i)
(Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 3-4), with the relaxation times
scaled by a WLF (Williams, Landel & Ferry, J. Am. Chem. Soc. 77, 3701, 1955) or Arrhenius
shift factor. What a figure must show (axes, units, scales, the plotted numbers) is therefore
known exactly. Figures are inspected through matplotlib's object model, not by pixels.
"""

from __future__ import annotations

import dataclasses
import math
import subprocess
import sys
import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from ttsp import plotting
from ttsp.data import Campaign
from ttsp.exceptions import DataError
from ttsp.plotting._labels import _MODULUS_UNITS, _compliance_unit, _modulus_unit
from ttsp.plotting._look import _BLUE, _plain_label, _power_label, _style, _tidy_log_axis
from ttsp.plotting.checks_figures import _local_log_slope
from ttsp.plotting.saving import _merge_minor_ticks
from ttsp.workflow import build

R_J_PER_MOL_K = 8.314462618  # CODATA 2018 molar gas constant
T_REF_C = 20.0


# ----------------------------------------------------------------------------------------------
# exact campaigns
# ----------------------------------------------------------------------------------------------
def spectrum(center=-2.0, width=2.0, span=6.0, total_Pa=1.5e9, n=17):
    """Prony terms whose strengths follow a Gaussian in log10 τ (a smooth spectrum)."""
    log_tau = np.linspace(center - span, center + span, n)
    w = np.exp(-0.5 * ((log_tau - center) / width) ** 2)
    return 10.0 ** log_tau, total_Pa * w / w.sum()


def wlf(T_K, Tr_K, C1=9.0, C2_K=100.0):
    return -C1 * (T_K - Tr_K) / (C2_K + T_K - Tr_K)


def frequency_campaign(*, kind="tensile", frequency_unit="Hz", loss=True, noise=0.005, seed=1,
                       source="synthetic.csv", metadata=None, n_frequencies=8):
    """8 isotherms −20…50 °C, 8 frequencies 0.1–100 Hz, WLF C1 = 9, C2 = 100 K at 20 °C."""
    rng = np.random.default_rng(seed)
    tau, e = spectrum()
    f = np.logspace(-1, 2, n_frequencies)
    parts = []
    for t_c in (-20, -10, 0, 10, 20, 30, 40, 50):
        t_k = t_c + 273.15
        wt = (2 * np.pi * f * 10 ** wlf(t_k, T_REF_C + 273.15))[:, None] * tau[None, :]
        cols = {"temperature_K": t_k, "frequency_rad_s": 2 * np.pi * f,
                "storage_modulus_Pa": (2e6 + (e * wt ** 2 / (1 + wt ** 2)).sum(1))
                * (1 + noise * rng.standard_normal(f.size))}
        if loss:
            cols["loss_modulus_Pa"] = ((e * wt / (1 + wt ** 2)).sum(1)
                                       * (1 + noise * rng.standard_normal(f.size)))
        parts.append(pd.DataFrame(cols))
    return Campaign.from_frame(pd.concat(parts, ignore_index=True), domain="frequency",
                               modulus_kind=kind, source=source,
                               units_as_read={"f": frequency_unit, "E'": "MPa"},
                               metadata=metadata or {})


def time_campaign(*, quantity="relaxation_modulus_Pa", noise=0.005, seed=2):
    """6 isotherms 20…70 °C, 12 times 1–10⁴ s, Arrhenius Ea = 200 kJ/mol at 40 °C."""
    rng = np.random.default_rng(seed)
    tau, e = spectrum(center=2.0, total_Pa=3e9)
    t = np.logspace(0, 4, 12)
    parts = []
    for t_c in (20, 30, 40, 50, 60, 70):
        t_k = t_c + 273.15
        a = 10 ** (200e3 / (math.log(10) * R_J_PER_MOL_K) * (1 / t_k - 1 / (40 + 273.15)))
        modulus = 3e7 + (e * np.exp(-(t / a)[:, None] / tau[None, :])).sum(1)
        value = modulus if quantity == "relaxation_modulus_Pa" else 1.0 / modulus
        parts.append(pd.DataFrame({"temperature_K": t_k, "time_s": t,
                                   quantity: value * (1 + noise * rng.standard_normal(t.size))}))
    return Campaign.from_frame(pd.concat(parts, ignore_index=True), domain="time",
                               source="relax")


@pytest.fixture(scope="module")
def freq_result():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return build(frequency_campaign(), law="wlf", reference_temperature_C=T_REF_C)


@pytest.fixture(scope="module")
def time_result():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return build(time_campaign(), law="arrhenius", reference_temperature_C=40.0)


def colour_bar_labels(ax):
    """Labels of the colour bars drawn beside ``ax`` (the other axes of its figure)."""
    return [a.get_ylabel() for a in ax.figure.axes if a is not ax and "°C" in a.get_ylabel()]


def plotted(ax):
    """All (x, y) of the lines with data points on ``ax``, concatenated."""
    xs, ys = [], []
    for line in ax.get_lines():
        x, y = np.asarray(line.get_xdata(), float), np.asarray(line.get_ydata(), float)
        if x.size:
            xs.append(x)
            ys.append(y)
    return np.concatenate(xs), np.concatenate(ys)


# ----------------------------------------------------------------------------------------------
# import cost and layering
# ----------------------------------------------------------------------------------------------
def test_import_loads_neither_matplotlib_nor_pyplot():
    code = ("import sys, ttsp.plotting, ttsp.report; "
            "print('matplotlib' in sys.modules, 'matplotlib.pyplot' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]


def test_drawing_never_loads_pyplot():
    """Figures are plain matplotlib Figures: no global pyplot state, nothing left open."""
    code = ("import sys, warnings; warnings.simplefilter('ignore'); import ttsp; "
            "from ttsp import plotting; "
            "c = ttsp.read_campaign('ttsp/demo_data/damping_elastomer_dma.csv'); "
            "plotting.plot_isotherms(c); plotting.plot_superposition_check(c); "
            "print('matplotlib.pyplot' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=str(__import__("pathlib").Path(__file__).parents[1]))
    assert out.stdout.strip() == "False"


def test_plotting_and_report_do_not_import_each_other():
    """Layer rule (DESIGN.md): modules of layer 4 never import each other sideways."""
    import ast
    import importlib
    import inspect
    import pkgutil

    from ttsp import report

    def imported(module):
        names = set()
        for node in ast.walk(ast.parse(inspect.getsource(module))):
            if isinstance(node, ast.ImportFrom):
                names.add((node.module or "").split(".")[-1])
                names.update(a.name for a in node.names)
            elif isinstance(node, ast.Import):
                names.update(a.name.split(".")[-1] for a in node.names)
        return names

    figure_modules = [plotting] + [importlib.import_module(f"ttsp.plotting.{m.name}")
                                   for m in pkgutil.iter_modules(plotting.__path__)]
    assert len(figure_modules) > 1
    for module in figure_modules:
        assert "report" not in imported(module), module.__name__
    assert "plotting" not in imported(report)
    assert "matplotlib" not in imported(report)


# ----------------------------------------------------------------------------------------------
# helpers with known answers
# ----------------------------------------------------------------------------------------------
@pytest.mark.parametrize("value, unit", [(3e9, "GPa"), (2e6, "MPa"), (999e3, "kPa"),
                                         (5e3, "kPa"), (50.0, "Pa"), (0.5, "Pa")])
def test_modulus_unit_follows_the_magnitude(value, unit):
    assert _modulus_unit([value / 3, value, value * 3])[0] == unit


@given(st.floats(min_value=0.0, max_value=12.0))
def test_shown_moduli_and_compliances_have_one_to_three_digits(log10_value):
    """The unit chosen puts the typical value in [1, 1000) (Pa ≥ 1 Pa; 1/GPa ≤ 1/Pa)."""
    value = 10.0 ** log10_value
    unit, factor = _modulus_unit([value])
    assert 1.0 <= value / factor < 1000.0 or (unit == "GPa" and value >= 1e9)
    unit, factor = _compliance_unit([1.0 / value])
    assert 1.0 - 1e-9 <= (1.0 / value) / factor < 1000.0 or (unit == "GPa⁻¹" and value > 1e9)


def test_compliance_unit_is_the_inverse_unit():
    unit, factor = _compliance_unit([1e-9, 2e-9])   # 1/Pa around 1/GPa·1
    assert unit == "GPa⁻¹" and factor == pytest.approx(1e-9)


def test_local_log_slope_of_a_power_law_is_its_exponent():
    # exact: d log10(t^-0.3)/d log10 t = -0.3 at every point, whatever the spacing
    t = np.sort(np.random.default_rng(0).uniform(0, 4, 15))
    t = 10.0 ** t
    slope = _local_log_slope(t, 7.0 * t ** -0.3)
    assert np.allclose(slope, -0.3, atol=1e-12)


def test_power_labels_are_plain_unicode():
    assert _power_label(1e-3) == "10⁻³"
    assert _power_label(1e12) == "10¹²"
    assert _power_label(2e5) == "2×10⁵"
    assert _plain_label(0.5) == "0.5" and _plain_label(2e-5) == "2×10⁻⁵"


# ----------------------------------------------------------------------------------------------
# campaign figures
# ----------------------------------------------------------------------------------------------
def test_dense_campaigns_are_drawn_thinned_with_their_range_kept():
    # a million-row campaign drew every point: a 742 MB report no browser could open (issue 17)
    campaign = frequency_campaign(n_frequencies=4000)      # 8 × 4000 points, E′ and E″
    budget = plotting.DRAWN_POINTS_PER_FIGURE
    for draw in (plotting.plot_isotherms, plotting.plot_superposition_check):
        ax = draw(campaign)
        x, _ = plotted(ax)
        n_drawn_per_function = 2 if draw is plotting.plot_isotherms else 1
        assert budget // 2 <= x.size <= budget * n_drawn_per_function
        for line in ax.get_lines():
            assert len(line.get_xdata()) <= budget
    x, _ = plotted(plotting.plot_isotherms(campaign))
    assert x.min() == pytest.approx(0.1) and x.max() == pytest.approx(100.0)  # both ends drawn


def test_drawn_indices_keep_small_curves_whole_and_thin_big_ones_evenly():
    assert np.array_equal(plotting.drawn_indices(50, 10), np.arange(50))
    idx = plotting.drawn_indices(100_000, 500)
    assert idx[0] == 0 and idx[-1] == 99_999
    assert idx.size == max(plotting.MIN_DRAWN_PER_CURVE, plotting.DRAWN_POINTS_PER_FIGURE // 500)
    assert np.ptp(np.diff(idx)) <= 1                       # evenly spaced by rank


def test_isotherms_frequency_axes_units_and_colour_bar():
    campaign = frequency_campaign()
    ax = plotting.plot_isotherms(campaign)
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert ax.get_xlabel() == "Frequency f (Hz)"
    assert ax.get_ylabel() == "E′, E″ (MPa)"          # moduli 2 MPa … 1.5 GPa: median in MPa
    assert colour_bar_labels(ax) == ["Temperature (°C)"]
    assert len(ax.get_lines()) == 2 * len(campaign)   # E′ and E″ of every isotherm
    x, y = plotted(ax)
    iso = campaign.isotherms[0]
    assert np.allclose(np.unique(x), iso.x / (2 * np.pi))  # rad/s shown as Hz, 0.1–100
    assert y.max() == pytest.approx(max(i.values["storage_modulus_Pa"].max()
                                        for i in campaign.isotherms) / 1e6)


def test_isotherms_follow_the_frequency_unit_read_and_the_modulus_kind():
    ax = plotting.plot_isotherms(frequency_campaign(kind="shear", frequency_unit="rad/s"))
    assert ax.get_xlabel() == "Angular frequency ω (rad/s)"
    assert ax.get_ylabel().startswith("G′, G″")


def test_isotherms_of_one_chosen_quantity():
    ax = plotting.plot_isotherms(frequency_campaign(), quantity="tan_delta")
    assert ax.get_ylabel() == "tan δ" and ax.get_yscale() == "log"
    assert len(ax.get_lines()) == 8


def test_isotherms_draw_on_the_axes_given():
    from matplotlib.figure import Figure

    ax = Figure().add_subplot()
    assert plotting.plot_isotherms(time_campaign(), ax=ax) is ax
    assert ax.get_xlabel() == "Time t (s)" and ax.get_ylabel() == "E(t) (GPa)"


def test_isotherms_of_creep_compliance_use_the_inverse_unit():
    ax = plotting.plot_isotherms(time_campaign(quantity="creep_compliance_1_per_Pa"))
    assert ax.get_ylabel() == "D(t) (GPa⁻¹)"


def test_isotherms_reject_an_unknown_quantity():
    with pytest.raises(DataError, match="quantity must be one of"):
        plotting.plot_isotherms(frequency_campaign(), quantity="relaxation_modulus")


def test_isotherms_reject_quantities_of_different_units():
    with pytest.raises(DataError, match="quantity must be functions that share one axis unit"):
        plotting.plot_isotherms(frequency_campaign(), quantity=("storage_modulus", "tan_delta"))


def test_van_gurp_palmen_plot_shows_the_phase_angle_in_degrees():
    campaign = frequency_campaign(noise=0.0)
    ax = plotting.plot_superposition_check(campaign)
    assert ax.get_xscale() == "log" and ax.get_yscale() == "linear"
    assert ax.get_xlabel() == "|E*| (MPa)" and ax.get_ylabel() == "Phase angle δ (°)"
    assert colour_bar_labels(ax) == ["Temperature (°C)"]
    x, y = plotted(ax)
    full = campaign.with_derived()
    delta = np.concatenate([np.degrees(np.arctan2(i.values["loss_modulus_Pa"],
                                                  i.values["storage_modulus_Pa"]))
                            for i in full.isotherms])
    assert np.allclose(np.sort(y), np.sort(delta))
    assert 0 < y.min() and y.max() < 90


def test_local_slope_plot_for_relaxation_data():
    ax = plotting.plot_superposition_check(time_campaign(noise=0.0))
    assert ax.get_ylabel() == "Local slope −d log E / d log t"
    assert ax.get_xlabel() == "E(t) (GPa)" and ax.get_xscale() == "log"
    _, slope = plotted(ax)
    # a relaxation modulus decreases: its local log-log slope lies between 0 and 1 (exact data)
    assert np.all(slope > -1e-9) and np.all(slope < 1.0)


def test_superposition_check_needs_both_moduli():
    with pytest.raises(DataError, match="van Gurp"):
        plotting.plot_superposition_check(frequency_campaign(loss=False))


# ----------------------------------------------------------------------------------------------
# build figures
# ----------------------------------------------------------------------------------------------
def test_master_curve_puts_every_point_at_its_reduced_frequency(freq_result):
    ax = plotting.plot_master_curve(freq_result)
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert ax.get_xlabel() == "Reduced frequency f·$a_T$ (Hz)"
    assert ax.get_ylabel() == "E′, E″ (MPa)"
    assert colour_bar_labels(ax) == ["Temperature (°C)"]
    assert "20 °C" in ax.get_title(loc="left")
    frame = freq_result.master_curve_frame()
    expected = np.sort(np.concatenate([frame["reduced_frequency_rad_s"]] * 2)) / (2 * np.pi)
    points = [ln for ln in ax.get_lines() if ln.get_linestyle() == "None"]
    x = np.sort(np.concatenate([ln.get_xdata() for ln in points]))
    assert np.allclose(x, expected)                   # none dropped, f·a_T in Hz
    # the shifts found are close to the WLF truth (0.5 % noise): the highest isotherm's
    # reduced frequencies are 10^(log aT) times its measured ones
    assert freq_result.shifts.log10_aT[-1] == pytest.approx(wlf(323.15, 293.15), abs=0.05)


def test_shift_factor_plot_has_law_band_and_residual_panel(freq_result):
    ax = plotting.plot_shift_factors(freq_result)
    assert ax.get_ylabel() == r"Shift factor $\log_{10} a_T$"
    assert ax.get_xscale() == "linear"
    fig_axes = ax.figure.axes
    assert len(fig_axes) == 2
    residual = fig_axes[1]
    assert residual.get_xlabel() == "Temperature T (°C)"
    assert "decades" in residual.get_ylabel()
    from matplotlib.collections import PolyCollection

    assert any(isinstance(c, PolyCollection) for c in ax.collections)       # the band
    bars = sum(len(c.get_segments()) for c in ax.collections if hasattr(c, "get_segments"))
    assert bars == len(freq_result.campaign)                                # error bars
    # the law drawn is the fitted law
    law_line = [ln for ln in ax.get_lines() if ln.get_label().startswith("WLF law")][0]
    t_c, y = law_line.get_xdata(), law_line.get_ydata()
    assert np.allclose(y, freq_result.law_fit.law.log10_aT(np.asarray(t_c) + 273.15))


def test_shift_factor_plot_on_a_given_axes_has_no_residual_panel(freq_result):
    from matplotlib.figure import Figure

    ax = Figure().add_subplot()
    assert plotting.plot_shift_factors(freq_result, ax=ax) is ax
    assert len(ax.figure.axes) == 1 and ax.get_xlabel() == "Temperature T (°C)"


def test_prony_fit_panels(freq_result):
    ax_fit, ax_res, ax_spec = plotting.plot_prony_fit(freq_result)
    assert ax_fit.get_xscale() == ax_fit.get_yscale() == "log"
    assert ax_res.get_ylabel() == "Residual (%)" and ax_res.get_yscale() == "linear"
    assert ax_spec.get_xscale() == ax_spec.get_yscale() == "log"
    assert ax_spec.get_xlabel() == r"Relaxation time $\tau_i$ (s)"
    stems = [c for c in ax_spec.collections if hasattr(c, "get_segments")]
    n_terms = int(np.count_nonzero(freq_result.series.modulus_Pa))
    assert len(stems[0].get_segments()) == n_terms
    # the stem tops are the coefficients, in the unit of the axis label
    unit = ax_spec.get_ylabel().split("(")[-1].rstrip(")")
    factor = dict(_MODULUS_UNITS)[unit]
    tops = np.sort([seg[1, 1] for seg in stems[0].get_segments()])
    assert np.allclose(tops, np.sort(freq_result.series.modulus_Pa[
        freq_result.series.modulus_Pa > 0]) / factor)


def test_time_functions_are_the_series_and_its_creep_compliance(time_result):
    ax = plotting.plot_time_functions(time_result)
    twin = [a for a in ax.figure.axes if a is not ax][0]
    assert ax.get_xscale() == ax.get_yscale() == twin.get_yscale() == "log"
    assert ax.get_xlabel() == "Reduced time t/$a_T$ (s)"
    assert ax.get_ylabel() == "Relaxation modulus E(t) (GPa)"
    assert twin.get_ylabel() == "Creep compliance D(t) (GPa⁻¹)"
    t, e = plotted(ax)
    assert np.allclose(e * 1e9, time_result.series.relaxation_modulus(t), rtol=1e-12)
    # D(t)·E(t) ≤ 1 for every t (Ferry 1980, ch. 3: a consequence of the convolution identity)
    td, d = plotted(twin)
    assert np.all(d * 1e-9 * time_result.series.relaxation_modulus(td) <= 1 + 1e-9)


def test_frequency_functions_have_tan_delta_on_a_linear_twin(freq_result):
    ax = plotting.plot_frequency_functions(freq_result)
    twin = [a for a in ax.figure.axes if a is not ax][0]
    assert ax.get_xscale() == ax.get_yscale() == "log" and twin.get_yscale() == "linear"
    assert twin.get_ylabel() == "Loss factor tan δ"
    assert ax.get_xlabel() == "Reduced frequency f·$a_T$ (Hz)"
    f, tan_d = plotted(twin)
    assert np.allclose(tan_d, freq_result.series.tan_delta(2 * np.pi * f), rtol=1e-12)
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert labels == ["E′ storage modulus", "E″ loss modulus", "tan δ", "extrapolated",
                      "95 % band"]


def test_time_domain_master_curve(time_result):
    ax = plotting.plot_master_curve(time_result)
    assert ax.get_xlabel() == "Reduced time t/$a_T$ (s)" and ax.get_yscale() == "log"


def test_frequency_functions_of_a_time_domain_build_are_over_frequency(time_result):
    ax = plotting.plot_frequency_functions(time_result)
    assert ax.get_xlabel() == "Reduced frequency f·$a_T$ (Hz)"


def test_shear_creep_build_uses_g_and_j():
    campaign = dataclasses.replace(time_campaign(quantity="creep_compliance_1_per_Pa"),
                                   modulus_kind="shear")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = build(campaign, law="arrhenius", reference_temperature_C=40.0)
    ax_fit, _, ax_spec = plotting.plot_prony_fit(result)
    assert ax_fit.get_ylabel() == "J(t) (GPa⁻¹)"
    assert ax_spec.get_ylabel().startswith("Prony coefficient $G_i$")
    # the fitted creep data are drawn in GPa⁻¹: 1e9 times their value in 1/Pa
    measured = [ln for ln in ax_fit.get_lines() if ln.get_linestyle() == "None"][0]
    assert np.allclose(measured.get_ydata(), result.prony_fit.measured["creep_compliance"] * 1e9)
    twin = [a for a in plotting.plot_time_functions(result).figure.axes][1]
    assert twin.get_ylabel() == "Creep compliance J(t) (GPa⁻¹)"


# ----------------------------------------------------------------------------------------------
# all figures, and saving them
# ----------------------------------------------------------------------------------------------
def test_render_figures_makes_every_named_figure(time_result):
    from matplotlib.figure import Figure

    figures = plotting.render_figures(time_result)
    assert tuple(figures) == plotting.figure_names(time_result)
    assert set(plotting.FIGURE_NAMES) <= set(figures)
    assert all(isinstance(f, Figure) for f in figures.values())


def _png_size(path):
    import struct

    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", data[16:24])


def test_save_figures_writes_png_and_svg(tmp_path, freq_result):
    figures = {"isotherms": plotting.plot_isotherms(freq_result.campaign).figure,
               "shift_factors": plotting.plot_shift_factors(freq_result).figure}
    written = plotting.save_figures(figures, tmp_path / "figs")
    assert set(written) == set(figures)
    for name, paths in written.items():
        assert paths["png"] == tmp_path / "figs" / f"{name}.png"
        svg = paths["svg"].read_text()
        assert svg.startswith("<?xml") and "<svg" in svg
        assert "<dc:date>" not in svg                 # no date written
    # 150 dpi: a 6.4 × 4.4 in figure is 960 × 660 pixels
    assert _png_size(written["isotherms"]["png"]) == (960, 660)
    assert b"Software" not in written["isotherms"]["png"].read_bytes()[:400]


def test_saved_figures_are_byte_identical_across_runs(tmp_path, freq_result):
    """Two independent renderings and savings of the same result give the same bytes."""
    def once(folder):
        figures = {"master_curve": plotting.plot_master_curve(freq_result).figure,
                   "superposition_check":
                       plotting.plot_superposition_check(freq_result.campaign).figure}
        return plotting.save_figures(figures, folder)

    a, b = once(tmp_path / "a"), once(tmp_path / "b")
    for name in a:
        for fmt in ("png", "svg"):
            assert a[name][fmt].read_bytes() == b[name][fmt].read_bytes(), (name, fmt)


def test_save_figures_keeps_the_layout_engine(tmp_path, freq_result):
    fig = plotting.plot_superposition_check(freq_result.campaign).figure
    engine = type(fig.get_layout_engine())
    plotting.save_figures({"check": fig}, tmp_path)
    assert type(fig.get_layout_engine()) is engine


def test_save_figures_draws_each_file_once(tmp_path, freq_result, monkeypatch):
    """A figure with any layout engine (a "none" placeholder included) is drawn twice by each
    savefig; laid out beforehand and saved without one, once per file (PNG, SVG), with the
    same bytes as before (the saved demo figures were compared byte for byte)."""
    from matplotlib.figure import Figure as MplFigure

    draws = []
    real_draw = MplFigure.draw
    monkeypatch.setattr(MplFigure, "draw", lambda fig, renderer: (draws.append(fig),
                                                                  real_draw(fig, renderer)))
    fig = plotting.plot_master_curve(freq_result).figure
    assert fig.get_layout_engine() is not None
    plotting.save_figures({"master_curve": fig}, tmp_path)
    assert len(draws) == 2


def test_save_figures_rejects_a_name_that_is_not_a_file_stem(tmp_path):
    from matplotlib.figure import Figure

    with pytest.raises(DataError, match="figure name must be letters, digits"):
        plotting.save_figures({"../escape": Figure()}, tmp_path)


def test_relaxation_spectrum_figure_shows_H_its_window_and_the_choice_of_lambda(freq_result):
    from ttsp.spectrum import fit_relaxation_spectrum

    frame = freq_result.shifts.shifted_frame(freq_result.campaign)
    spectrum = fit_relaxation_spectrum(frame["reduced_frequency_rad_s"],
                                       frame["storage_modulus_Pa"], frame["loss_modulus_Pa"],
                                       reference_temperature_K=freq_result.reference_temperature_K)
    ax, ax_sel = plotting.plot_relaxation_spectrum(spectrum, series=freq_result.series)
    assert ax.get_xscale() == ax.get_yscale() == "log"
    assert ax.get_ylabel().startswith("Spectrum H(τ) (")
    # the H(τ) line, in the display unit, reproduces the spectrum inside its window
    unit = ax.get_ylabel().split("(")[-1].rstrip(")")
    factor = dict(plotting.DISPLAY_MODULUS_UNITS)[unit]
    solid = [ln for ln in ax.get_lines() if ln.get_linestyle() == "-" and ln.get_color() ==
             _BLUE]
    x = np.concatenate([ln.get_xdata() for ln in solid])
    y = np.concatenate([ln.get_ydata() for ln in solid])
    lo, hi = spectrum.valid_tau_range_s
    inside = (x >= lo) & (x <= hi)
    np.testing.assert_allclose(y[inside] * factor, spectrum.spectrum(x[inside]), rtol=1e-9)
    # one Prony point per positive term
    points = [ln for ln in ax.get_lines() if ln.get_marker() == "o"]
    assert len(points) == 1
    assert len(points[0].get_xdata()) == int(np.sum(np.asarray(freq_result.series.modulus_Pa) > 0))
    # the chosen λ is marked on the criterion curve
    assert ax_sel.get_xscale() == "log"
    assert any(f"{spectrum.regularisation:.3g}" in t.get_text()
               for t in ax_sel.get_legend().get_texts())
    assert "GCV" in ax_sel.get_ylabel()


def test_minor_ticks_merged_for_saving_look_the_same():
    """Saving draws each axis' minor ticks as one line of markers: the same picture as
    matplotlib's own tick artists on a styled log-log axes, with the minor locator off after."""
    import io

    import matplotlib.image as mpimg
    from matplotlib.figure import Figure
    from matplotlib.ticker import NullLocator

    def figure():
        fig = Figure(figsize=(3.0, 2.5))
        ax = _style(fig.add_subplot(), logx=True, logy=True)
        ax.plot([1e-2, 1e3], [1e5, 1e9], color="k")
        ax.set_xlim(1e-2, 1e3)
        return fig

    def pixels(fig):
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=100)
        buf.seek(0)
        return mpimg.imread(buf)

    plain, merged = figure(), figure()
    lo, hi = sorted(merged.axes[0].yaxis.get_view_interval())
    expected = np.asarray(merged.axes[0].yaxis.get_minorticklocs())
    expected = np.sort(expected[(expected >= lo) & (expected <= hi)])
    assert expected.size > 20
    _merge_minor_ticks(merged)
    ax = merged.axes[0]
    assert isinstance(ax.xaxis.get_minor_locator(), NullLocator)
    assert isinstance(ax.yaxis.get_minor_locator(), NullLocator)
    marks = [a for a in ax.get_children() if getattr(a, "get_linestyle", None)
             and a.get_linestyle() == "None"]
    assert any(np.array_equal(np.sort(m.get_ydata()), expected) for m in marks)
    # the same pixels but for the antialiasing where the tick marks meet the frame (a column
    # of a few dozen pixels)
    differ = np.any(pixels(plain) != pixels(merged), axis=-1)
    assert differ.mean() < 0.002


def test_merged_minor_ticks_on_shared_hidden_and_labelled_axes():
    """Axes sharing an x axis share its locator: both panels keep their minor marks. A hidden
    axis gets none, and an axis whose minor ticks carry labels keeps its own ticks."""
    from matplotlib.figure import Figure
    from matplotlib.ticker import NullLocator

    def marks(ax):
        return [a for a in ax.get_children() if getattr(a, "get_linestyle", None)
                and a.get_linestyle() == "None" and a.get_label() == "_nolegend_"]

    fig = Figure(figsize=(3.0, 4.0))
    top = _style(fig.add_subplot(2, 1, 1), logx=True)
    bottom = _style(fig.add_subplot(2, 1, 2, sharex=top), logx=True)
    for ax in (top, bottom):
        ax.plot([1.0, 1e4], [0.0, 1.0])
    expected = np.asarray(bottom.xaxis.get_minorticklocs())
    lo, hi = sorted(bottom.xaxis.get_view_interval())
    expected = np.sort(expected[(expected >= lo) & (expected <= hi)])
    hidden = _style(fig.add_axes((0.8, 0.8, 0.1, 0.1)), logy=True)
    hidden.plot([0, 1], [1.0, 1e3])
    hidden.set_axis_off()
    _merge_minor_ticks(fig)
    for ax in (top, bottom):
        assert any(np.array_equal(np.sort(m.get_xdata()), expected) for m in marks(ax))
    assert isinstance(bottom.xaxis.get_minor_locator(), NullLocator)
    assert not marks(hidden)

    labelled = Figure(figsize=(3.0, 2.5))
    ax = _style(labelled.add_subplot(), logy=True)
    ax.plot([0, 1], [2.0, 6.0])
    _tidy_log_axis(ax.yaxis)                 # under a decade: plain labels
    from matplotlib.ticker import ScalarFormatter

    ax.yaxis.set_minor_formatter(ScalarFormatter())
    _merge_minor_ticks(labelled)
    assert not marks(ax) and not isinstance(ax.yaxis.get_minor_locator(), NullLocator)
