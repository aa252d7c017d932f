"""Tests of ttsp.vertical_choice: ``vertical="auto"`` judged by held-out isotherms.

Ground truth: exact campaigns of a Gaussian Prony spectrum under WLF (the generator of
tests/test_shifting.py), with and without a known vertical shift log10 b_T = k (T − T_ref).
Vertical shifts of that size (0.04 decade over 20 K) are common in polymer data (Ferry,
Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 11: T ρ / T_ref ρ_ref alone gives
about 0.0015 per kelvin near room temperature; from memory).
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import jsonschema
import numpy as np
import pytest
from _campaigns import (
    shift_test_campaign as campaign,  # the exact-campaign generator of the shift tests
)
from typer.testing import CliRunner

import ttsp
from ttsp.cli import app
from ttsp.data import Campaign
from ttsp.vertical_choice import VERTICAL_GAIN

SCHEMA = Path(ttsp.__file__).parent / "schema" / "summary.schema.json"
TREF_K = 320.0
TREF_C = TREF_K - 273.15
TEMPS = 300 + 5 * np.arange(9.0)


def quiet(fn, *a, **k):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*a, **k)


def auto_build(slope, seed, **options):
    camp, _ = campaign(TEMPS, noise=0.02, seed=seed, log10_bT=slope * (TEMPS - TREF_K))
    return quiet(ttsp.build, camp, reference_temperature_C=TREF_C, vertical="auto", **options)


@pytest.mark.parametrize("seed", [1, 2])
def test_a_real_vertical_shift_is_chosen_and_recovered(seed):
    """log10 b_T changing 0.002 per kelvin: the fitted vertical shift predicts held-out
    isotherms far better (measured 31-44 % lower median error), and b_T comes back within
    three stderr of the truth."""
    r = auto_build(0.002, seed)
    choice = r.vertical_choice
    assert choice.chosen == "fit" and r.options.vertical == "fit"
    errors = choice.held_out_rms_percent
    assert errors["fit"] < 0.8 * errors["none"]
    truth = 0.002 * (r.shifts.temperature_K - TREF_K)
    se = np.maximum(r.shifts.log10_bT_stderr, 1e-3)
    assert np.all(np.abs(r.shifts.log10_bT - truth) < 3 * se + 0.005)
    assert "predicts held-out isotherms better" in choice.reason
    # the build's cross-validation is that of the chosen candidate, not rebuilt
    assert r.cross_validation.params["median_rms_percent_at_law_aT"] == pytest.approx(
        errors["fit"])


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_no_vertical_shift_in_the_data_keeps_horizontal_shifts_only(seed):
    """Without a vertical shift the free b_T only fits noise: held-out isotherms are
    predicted no better (measured 1-8 % worse), so ``none`` is kept."""
    r = auto_build(0.0, seed)
    choice = r.vertical_choice
    assert choice.chosen == "none" and r.options.vertical == "none"
    assert choice.held_out_rms_percent["fit"] > choice.held_out_rms_percent["none"] * (
        1 - VERTICAL_GAIN)
    assert "horizontal shifts only" in choice.reason


def test_density_is_a_candidate_only_with_an_expansion_coefficient():
    r = auto_build(0.0, 1, expansion_coefficient_per_K=6e-4)
    assert set(r.vertical_choice.held_out_rms_percent) == {"none", "fit", "density"}
    assert "density" not in auto_build(0.0, 1).vertical_choice.held_out_rms_percent


def test_a_candidate_that_cannot_be_built_is_named_not_fatal():
    """E(t) alone carries no information for a free b_T (a vertical fit needs a second
    function): ``fit`` fails with its reason and ``none`` is used."""
    camp, _ = campaign(TEMPS, noise=0.02, seed=1, domain="time")
    r = quiet(ttsp.build, camp, reference_temperature_C=TREF_C, vertical="auto")
    assert r.vertical_choice.chosen == "none"
    assert "fit" in r.vertical_choice.failed and r.vertical_choice.failed["fit"]


def test_summary_and_report_carry_the_choice():
    r = auto_build(0.002, 1)
    summary = json.loads(json.dumps(r.summary(), allow_nan=False))
    jsonschema.validate(summary, json.loads(SCHEMA.read_text()))
    section = summary["vertical_choice"]
    assert section["requested"] == "auto" and section["chosen"] == "fit"
    assert {c["vertical"] for c in section["candidates"]} == {"none", "fit"}
    assert summary["options"]["vertical"] == "fit"
    from ttsp.report import render_report

    html = render_report(r, {}, created_utc="2026-12-04T00:00:00Z")
    assert "Vertical shift: <strong>a fitted log10 b_T per isotherm</strong>" in html
    plain = quiet(ttsp.build, Campaign(r.campaign.isotherms, "frequency"),
                  reference_temperature_C=TREF_C, cross_validation=False)
    assert plain.vertical_choice is None and plain.summary()["vertical_choice"] is None


def test_cli_vertical_auto(tmp_path):
    camp, _ = campaign(TEMPS, noise=0.02, seed=2, log10_bT=0.002 * (TEMPS - TREF_K))
    rows = ["Temperature (°C),Frequency (Hz),E' (Pa),E'' (Pa)"]
    for iso in camp.isotherms:
        e1, e2 = iso.values["storage_modulus_Pa"], iso.values["loss_modulus_Pa"]
        rows += [f"{iso.temperature_K - 273.15:.2f},{w / (2 * np.pi):.8g},{a:.8g},{b:.8g}"
                 for w, a, b in zip(iso.x, e1, e2, strict=True)]
    src = tmp_path / "sweeps.csv"
    src.write_text("\n".join(rows) + "\n", encoding="utf-8")
    out = tmp_path / "out"
    res = CliRunner().invoke(app, ["build", str(src), "-T", f"{TREF_C:g}", "--vertical", "auto",
                                   "--no-figures", "--out", str(out)])
    assert res.exit_code == 0, res.output
    summary = json.loads((out / "summary.json").read_text())
    assert summary["vertical_choice"]["chosen"] == "fit"
    assert "auto" in CliRunner().invoke(app, ["build", "--help"]).output


def test_a_free_vertical_shift_that_trades_against_the_horizontal_one_is_refused():
    """Real binder (tests/data, lane 1, MIT licence): G' and G'' are nearly straight in
    log-log, so a free b_T trades against a_T (measured log10 b_T down to -1.0 on lanes 2-10)
    and some folds cannot even be built; ``auto`` keeps horizontal shifts and says why."""
    import pandas as pd

    data = Path(__file__).parent / "data" / "asphalt_binder_ptf_lanes1-5.csv"
    rows = pd.read_csv(data)
    rows = rows[(rows["rep"] == 1) & (rows["lane"] == 2)]
    frame = pd.DataFrame({"temperature_K": rows["T_C"] + 273.15,
                          "frequency_rad_s": rows["omega_rad_s"],
                          "storage_modulus_Pa": rows["Gp_Pa"], "loss_modulus_Pa": rows["Gpp_Pa"]})
    camp = Campaign.from_frame(frame, modulus_kind="shear", source="binder lane 2")
    r = quiet(ttsp.build, camp, reference_temperature_C=58.0, vertical="auto")
    choice = r.vertical_choice
    assert choice.chosen == "none"
    assert "fit" in choice.failed
    assert "could not be built" in choice.failed["fit"] or "trading" in choice.failed["fit"]
    rows_out = choice.to_dict()["candidates"]
    assert [c["vertical"] for c in rows_out] == ["none", "fit"]   # one row per candidate
    assert rows_out[1]["error"]
