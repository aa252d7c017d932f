"""``ttsp build --service-temperature T`` (issue 16, point 7): the material functions at a
temperature the user names, through the build's own model (a_T from its law, b_T from its
vertical shift), in service_functions.csv.

The campaign is the command-line tests' generated WLF one (fixture ``campaign_file``; C1 = 9,
C2 = 100 K at 20 °C; isotherms 0-45 °C).
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from _campaigns import SWEEPS
from typer.testing import CliRunner

from ttsp.cli import app, load_model

runner = CliRunner()


@pytest.fixture(scope="module")
def built(campaign_file, tmp_path_factory):
    d = tmp_path_factory.mktemp("service")
    out = d / "build"
    res = runner.invoke(app, ["build", str(campaign_file), "-T", "20",
                              "--law", "wlf", "--out", str(out), "--no-figures",
                              "--no-cross-validation", "-q", "--service-temperature", "35"])
    assert res.exit_code == 0, res.output
    return out


def test_service_functions_are_the_model_at_that_temperature(built):
    table = pd.read_csv(built / "service_functions.csv")
    assert set(table["temperature_C"]) == {35.0}
    model = load_model(built)
    T_K = 35.0 + 273.15
    np.testing.assert_allclose(table["relaxation_modulus_Pa"],
                               model.relaxation_modulus(table["time_s"].to_numpy(), T_K),
                               rtol=1e-8)
    np.testing.assert_allclose(table["storage_modulus_Pa"],
                               model.storage_modulus(table["frequency_Hz"].to_numpy(), T_K),
                               rtol=1e-8)
    # against the generating functions where the series is fitted (1 % noise: a few %)
    inside = ~table["extrapolated"]
    f = table.loc[inside, "frequency_Hz"].to_numpy()
    ep, _ = SWEEPS.moduli(2 * np.pi * f * 10 ** SWEEPS.log10_aT(35.0))
    mid = (f > 0.1) & (f < 100)    # the measured window at 35 °C
    np.testing.assert_allclose(table.loc[inside, "storage_modulus_Pa"].to_numpy()[mid], ep[mid],
                               rtol=0.05)
    summary = json.loads((built / "summary.json").read_text("utf-8"))
    assert summary["options"]["service_temperature_C"] == 35.0


def test_a_service_temperature_beyond_the_law_flags_every_row(campaign_file, tmp_path):
    out = tmp_path / "hot"
    res = runner.invoke(app, ["build", str(campaign_file), "-T", "20",
                              "--law", "wlf", "--out", str(out), "--no-figures",
                              "--no-cross-validation", "-q", "--service-temperature", "70"])
    assert res.exit_code == 0, res.output
    assert pd.read_csv(out / "service_functions.csv")["extrapolated"].all()


def test_no_service_file_unless_asked(campaign_file, tmp_path):
    out = tmp_path / "plain"
    res = runner.invoke(app, ["build", str(campaign_file), "-T", "20",
                              "--law", "wlf", "--out", str(out), "--no-figures",
                              "--no-cross-validation", "-q"])
    assert res.exit_code == 0
    assert not (out / "service_functions.csv").exists()
