"""The units of the CSV tables (issue 16, point 6): Hz in every file (master_curve.csv was in
rad/s beside material_functions.csv in Hz), and ``--units engineering`` for MPa and 1/MPa, with
every column name carrying its unit.

The campaign is the command-line tests' generated WLF one (fixture ``campaign_file``).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from ttsp.cli import app

runner = CliRunner()
TABLES = ("master_curve.csv", "material_functions.csv", "prony.csv", "prony_finite_element.csv",
          "shift_factors.csv")


@pytest.fixture(scope="module")
def builds(campaign_file, tmp_path_factory):
    d = tmp_path_factory.mktemp("units")
    out = {}
    for units in ("SI", "engineering"):
        out[units] = d / units
        res = runner.invoke(app, ["build", str(campaign_file), "-T", "20", "--law", "wlf", "--out",
                                  str(out[units]), "--no-figures", "--no-cross-validation",
                                  "-q", "--units", units])
        assert res.exit_code == 0, res.output
    return out


def test_every_table_gives_frequencies_in_hertz(builds):
    for name in TABLES:
        columns = pd.read_csv(builds["SI"] / name).columns
        assert not [c for c in columns if c.endswith("_rad_s")], name
    master = pd.read_csv(builds["SI"] / "master_curve.csv")
    # the measured frequencies were written 0.1-100 Hz by write_noisy_campaign (tests/_campaigns.py)
    assert master["frequency_Hz"].min() == pytest.approx(0.1)
    assert master["frequency_Hz"].max() == pytest.approx(100.0)
    # reduced frequency f·a_T, with log10 a_T from the same row
    np.testing.assert_allclose(master["reduced_frequency_Hz"],
                               master["frequency_Hz"] * 10 ** master["log10_aT"], rtol=1e-8)


def test_engineering_units_are_MPa_and_1_per_MPa(builds):
    for name, pairs in {
        "master_curve.csv": [("storage_modulus_Pa", "storage_modulus_MPa", 1e-6)],
        "material_functions.csv": [("relaxation_modulus_Pa", "relaxation_modulus_MPa", 1e-6),
                                   ("creep_compliance_1_per_Pa", "creep_compliance_1_per_MPa",
                                    1e6)],
        "prony.csv": [("modulus_Pa", "modulus_MPa", 1e-6)],
    }.items():
        si, eng = pd.read_csv(builds["SI"] / name), pd.read_csv(builds["engineering"] / name)
        assert not [c for c in eng.columns if c.endswith("_Pa")], name
        for a, b, factor in pairs:
            np.testing.assert_allclose(eng[b], si[a] * factor, rtol=1e-9)
    si = json.loads((builds["SI"] / "summary.json").read_text("utf-8"))
    eng = json.loads((builds["engineering"] / "summary.json").read_text("utf-8"))
    assert (si["csv_units"], eng["csv_units"]) == ("SI", "engineering")
    # summary.json stays SI either way (its schema names Pa)
    assert eng["prony"]["equilibrium_modulus_Pa"] == si["prony"]["equilibrium_modulus_Pa"]


def test_an_unknown_unit_system_is_a_usage_error(campaign_file, tmp_path):
    res = runner.invoke(app, ["build", str(campaign_file), "--out",
                              str(tmp_path / "o"), "--units", "imperial", "-q"])
    assert res.exit_code == 2 and "imperial" in res.output


def test_in_output_units_converts_by_suffix():
    from ttsp.io.output_units import in_output_units

    frame = pd.DataFrame({"frequency_rad_s": [2 * math.pi], "loss_modulus_Pa": [3e6],
                          "phase_angle_rad": [0.1]})
    out = in_output_units(frame, "engineering")
    assert list(out.columns) == ["frequency_Hz", "loss_modulus_MPa", "phase_angle_rad"]
    assert out.iloc[0].tolist() == pytest.approx([1.0, 3.0, 0.1])
