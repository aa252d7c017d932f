"""Relaxation against creep of one material (issue 23, point 5): ∫₀ᵗ E(t−u) D(u) du = t
(Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 3; Laplace form
sĒ(s)·sD̄(s) = 1). The exact pair comes from ttsp's exact interconversion, itself tested against
mpmath in test_interconvert.py; an independent check of the closed-form integral below uses
scipy.integrate.quad. Synthetic campaigns invented here (seeded)."""

import numpy as np
import pandas as pd
import pytest
from scipy.integrate import quad

from ttsp.checks import check_relaxation_creep, run_checks
from ttsp.data import Campaign
from ttsp.exceptions import DataError
from ttsp.interconvert import relaxation_to_creep
from ttsp.prony import PronySeries
from ttsp.relaxation_creep import compare_relaxation_creep, convolution_integral
from ttsp.shifting import shift_isotherms

TAU = 10.0 ** np.arange(-2.0, 6.01, 0.5)
G = 1e6 * (TAU / TAU[0]) ** (-0.4)


@pytest.mark.parametrize("e_inf", [G.sum() * 1e-3, 0.0])   # a solid and a liquid
def test_closed_form_integral_of_an_exact_pair_is_t(e_inf):
    series = PronySeries(e_inf, TAU, G)
    creep = relaxation_to_creep(series)
    t = np.geomspace(1e-3, 1e7, 25)
    # exact up to the round-off of ~1e3-fold cancelling terms
    assert convolution_integral(series, creep, t) == pytest.approx(t, rel=1e-7)


def test_closed_form_integral_matches_quadrature_for_any_pair():
    series = PronySeries(5.0, [0.3, 4.0], [10.0, 7.0])
    from ttsp.interconvert import CreepSeries

    creep = CreepSeries(0.02, [0.3, 2.0], [0.05, 0.1], fluidity_1_per_Pa_s=0.01)
    for t in (0.1, 1.0, 7.0):
        ref = quad(lambda u, t=t: series.relaxation_modulus(t - u) * creep.creep_compliance(u),
                   0, t,
                   epsabs=0, epsrel=1e-11)[0]
        assert convolution_integral(series, creep, [t])[0] == pytest.approx(ref, rel=1e-9)


def sampled(seed=0, noise=0.01, shift_creep=0.0):
    rng = np.random.default_rng(seed)
    series = PronySeries(G.sum() * 1e-3, TAU, G)
    creep = relaxation_to_creep(series)
    t = np.geomspace(0.02, 3e5, 400)
    e = series.relaxation_modulus(t) * np.exp(rng.normal(0, noise, t.size))
    d = creep.creep_compliance(t / 10 ** shift_creep) * np.exp(rng.normal(0, noise, t.size))
    return t, e, d


def test_comparison_passes_an_exact_pair_and_sees_a_shift():
    t, e, d = sampled()
    assert compare_relaxation_creep(t, e, t, d).max_departure_percent < 1.0
    t, e, d = sampled(shift_creep=0.2)
    assert compare_relaxation_creep(t, e, t, d).max_departure_percent > 10.0
    with pytest.raises(DataError, match=r"overlap from .* the convolution check needs 2.5 decades"):
        compare_relaxation_creep(t[:50], e[:50], t, d)


def campaign_of(shift_creep: float):
    """Five isotherms with both G(t) and J(t); J of every isotherm offset by shift_creep."""
    rng = np.random.default_rng(4)
    series = PronySeries(G.sum() * 1e-3, TAU, G, modulus_kind="shear")
    creep = relaxation_to_creep(series)
    t = np.geomspace(0.2, 3e4, 120)
    rows = []
    for temp, s in zip((130.0, 145.0, 160.0, 175.0, 190.0), (2.4, 1.1, 0.0, -0.9, -1.6),
                       strict=True):
        tr = t / 10 ** s
        rows.append(pd.DataFrame({
            "temperature_K": temp + 273.15, "time_s": t,
            "relaxation_modulus_Pa": series.relaxation_modulus(tr) * np.exp(
                rng.normal(0, 0.005, t.size)),
            "creep_compliance_1_per_Pa": creep.creep_compliance(tr / 10 ** shift_creep)
            * np.exp(rng.normal(0, 0.005, t.size))}))
    return Campaign.from_frame(pd.concat(rows, ignore_index=True), modulus_kind="shear")


@pytest.mark.parametrize("offset, status", [(0.0, "pass"), (0.2, "fail")])
def test_check_passes_a_consistent_pair_and_fails_an_offset_one(offset, status):
    campaign = campaign_of(offset)
    shifts = shift_isotherms(campaign, 160 + 273.15)
    result = check_relaxation_creep(campaign, shifts)
    assert result.status == status, result.message
    assert result.threshold == 10.0
    assert "relaxation_creep" in [r.name for r in run_checks(campaign, shifts=shifts)]
    if status == "pass":
        assert "G(t) and J(t)" in result.message


def test_build_draws_the_measured_creep_under_the_interconverted_curve():
    import warnings

    import matplotlib

    matplotlib.use("Agg")
    from ttsp import plotting
    from ttsp.workflow import build

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = build(campaign_of(0.0), reference_temperature_C=160.0, law="wlf",
                       cross_validation=False)
    assert [c.status for c in result.checks if c.name == "relaxation_creep"] == ["pass"]
    ax = plotting.plot_time_functions(result)
    twin = [a for a in ax.figure.axes if a is not ax][0]
    assert twin.get_ylabel() == "Creep compliance J(t) (MPa⁻¹)"
    points = [ln for ln in twin.get_lines() if ln.get_linestyle() == "None"]
    assert len(points) == 1
    # the measured J(t) points lie on the line interconverted from the G(t) series (1 %)
    t, j = points[0].get_xdata(), points[0].get_ydata() * 1e-6
    inside = (t > 1.0) & (t < 1e4)
    model = result.series.creep_compliance(t[inside])
    assert np.median(np.abs(j[inside] / model - 1)) < 0.01


def write_two_exports(folder, shift_creep: float):
    """G(t) and J(t) of one shear melt exported as two files, each test at its own times,
    printed to four significant digits as instruments print them (times repeat above 1000 s)."""
    rng = np.random.default_rng(7)
    series = PronySeries(G.sum() * 1e-3, TAU, G, modulus_kind="shear")
    creep = relaxation_to_creep(series)
    t_relax, t_creep = np.geomspace(0.2, 3e4, 300), np.geomspace(0.5, 2e4, 250)
    log_aT = {130: 2.4, 145: 1.1, 160: 0.0, 175: -0.9, 190: -1.6}
    relax = ["Temperature (°C),Time (s),G(t) (Pa)"]
    creep_rows = ["Temperature (°C),Time (s),J(t) (1/Pa)"]
    for temp, s in log_aT.items():
        g = series.relaxation_modulus(t_relax / 10 ** s) * np.exp(rng.normal(0, 0.005, 300))
        j = creep.creep_compliance(t_creep / 10 ** (s + shift_creep)) * np.exp(
            rng.normal(0, 0.005, 250))
        relax += [f"{temp},{t:.4g},{v:.4g}" for t, v in zip(t_relax, g, strict=True)]
        creep_rows += [f"{temp},{t:.4g},{v:.4g}" for t, v in zip(t_creep, j, strict=True)]
    (folder / "relax.csv").write_text("\n".join(relax) + "\n")
    (folder / "creep.csv").write_text("\n".join(creep_rows) + "\n")
    return log_aT


@pytest.mark.parametrize("offset, status", [(0.0, "pass"), (0.2, "fail")])
def test_relaxation_and_creep_exported_as_two_files_are_built_together(tmp_path, offset, status):
    """Issue 23: relaxation and creep of one material, exported as two files at their own
    times, are read together (each function at its own rows) and checked against each other
    through ∫₀ᵗ G(t−u) J(u) du = t (Ferry 1980, ch. 3): a consistent pair passes, J(t) offset
    by 0.2 decade fails. Before, the pair was refused (each file lacks the other's column)."""
    import json

    from typer.testing import CliRunner

    from ttsp.cli import app

    log_aT = write_two_exports(tmp_path, offset)
    files = [str(tmp_path / "relax.csv"), str(tmp_path / "creep.csv")]
    res = CliRunner().invoke(app, ["inspect", *files])
    assert res.exit_code == 0, res.output
    assert "measured at their own times (files read together): G(t) at 1500 points, " \
           "J(t) at 1250 points" in res.output
    res = CliRunner().invoke(app, ["build", *files, "--out", str(tmp_path / "out"),
                                   "--reference-temperature", "160", "--no-figures"])
    assert res.exit_code in (0, 3), res.output
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    check = [c for c in summary["checks"] if c["name"] == "relaxation_creep"]
    assert [c["status"] for c in check] == [status], check
    found = {round(r["temperature_C"]): r["log10_aT"] for r in summary["shift_factors"]}
    # the shifts of both functions together: within 0.02 decade of the true ones at 0.5 % noise
    assert max(abs(found[T] - v) for T, v in log_aT.items()) < 0.02
    # the noise seen along each function at its own times, not across interleaved rows
    noise = [c for c in summary["checks"] if c["name"] == "noise_level"][0]
    assert noise["value"] < 1.0


def test_a_missing_cell_in_a_file_that_has_the_function_is_still_refused(tmp_path):
    """Files read together: a file without a function's column at all is the other test's
    points; an empty cell in a file that has the column is a gap and stays refused (exit 2,
    the file, column and row named)."""
    from typer.testing import CliRunner

    from ttsp.cli import app

    write_two_exports(tmp_path, 0.0)
    lines = (tmp_path / "relax.csv").read_text().splitlines()
    lines[3] = lines[3].rsplit(",", 1)[0] + ","
    (tmp_path / "relax.csv").write_text("\n".join(lines) + "\n")
    res = CliRunner().invoke(app, ["inspect", str(tmp_path / "relax.csv"),
                                   str(tmp_path / "creep.csv")])
    assert res.exit_code == 2
    assert "relax.csv, column 'G(t) (Pa)', row 4" in res.output
    assert "a missing value where the rest of its isotherm has values" in res.output
