"""``ttsp predict`` with one value and units (``--time 10y``, ``--frequency 1kHz``) and its
temperature messages in °C with the isotherm tolerance (issue 16, point 2).

The model is built from the generated WLF campaign of the command-line tests (fixture
``campaign_file``; (isotherms 0-45 °C exactly).
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from ttsp.axis_text import FREQUENCY_UNITS_HZ, TIME_UNITS_S, parse_axis
from ttsp.cli import app

runner = CliRunner()
YEAR_S = 365.25 * 86400.0   # the Julian year (common practice; 3.15576e7 s)


@pytest.fixture(scope="module")
def built(campaign_file, tmp_path_factory):
    d = tmp_path_factory.mktemp("predict")
    out = d / "build"
    res = runner.invoke(app, ["build", str(campaign_file), "-T", "20",
                              "--law", "wlf", "--out", str(out), "--no-figures",
                              "--no-cross-validation", "-q"])
    assert res.exit_code == 0, res.output
    return out


def table(res):
    return pd.read_csv(io.StringIO(res.stdout))


@pytest.mark.parametrize("text, seconds", [
    ("10y", 10 * YEAR_S), ("3.156e8", 3.156e8), ("2h", 7200.0), ("90 min", 5400.0),
    ("1.5d", 129600.0), ("7s", 7.0)])
def test_one_time_with_a_unit_is_one_row_in_seconds(built, text, seconds):
    res = runner.invoke(app, ["predict", str(built), "--quantity", "creep_compliance",
                              "--temperature", "20", "--time", text])
    assert res.exit_code == 0, res.output
    t = table(res)
    assert len(t) == 1 and t["time_s"].iloc[0] == pytest.approx(seconds, rel=1e-12)
    assert t["creep_compliance_1_per_Pa"].iloc[0] > 0


def test_one_frequency_in_kHz_equals_the_same_in_Hz(built):
    got = []
    for text in ("1kHz", "1000"):
        res = runner.invoke(app, ["predict", str(built), "--quantity", "storage_modulus",
                                  "--temperature", "30", "--frequency", text])
        assert res.exit_code == 0, res.output
        got.append(table(res))
    assert got[0]["frequency_Hz"].iloc[0] == 1000.0
    assert got[0]["storage_modulus_Pa"].iloc[0] == got[1]["storage_modulus_Pa"].iloc[0]


def test_a_range_with_units_still_works():
    np.testing.assert_allclose(parse_axis("1min:1h:3", TIME_UNITS_S), [60.0, 464.758, 3600.0],
                               rtol=1e-5)
    np.testing.assert_allclose(parse_axis("1:100:3", FREQUENCY_UNITS_HZ), [1.0, 10.0, 100.0])


@pytest.mark.parametrize("text, message", [
    ("10 years", "unknown unit 'years'"), ("10q", "unknown unit 'q'"), ("0", "positive"),
    ("1:2:x", "whole number"), ("1:2:3:4", "a:b:n"), ("abc", "not a number")])
def test_bad_times_are_usage_errors_naming_the_option(built, text, message):
    res = runner.invoke(app, ["predict", str(built), "--quantity", "creep_compliance",
                              "--temperature", "20", "--time", text])
    assert res.exit_code == 2
    assert message in res.output and "--time" in res.output


def test_no_range_warning_within_the_isotherm_tolerance(built):
    # 45.3 °C is within 0.5 K of the top isotherm (45 °C): it is that isotherm, not beyond it
    res = runner.invoke(app, ["predict", str(built), "--quantity", "relaxation_modulus",
                              "--temperature", "45.3", "--time", "1"])
    assert res.exit_code == 0, res.output
    assert "outside" not in (res.stderr or "")


def test_the_range_warning_is_in_celsius(built):
    res = runner.invoke(app, ["predict", str(built), "--quantity", "relaxation_modulus",
                              "--temperature", "60", "--time", "1"])
    assert res.exit_code == 0, res.output
    err = res.stderr
    assert "60 °C lies outside" in err and "0.00 to 45.00 °C" in err and "extrapolated" in err
    assert " K " not in err and " K)" not in err   # no kelvin left in the message


def test_a_temperature_below_the_wlf_divergence_is_refused_in_celsius(built):
    # WLF diverges at T_ref - C2 (about 20 - 100 = -80 °C here)
    res = runner.invoke(app, ["predict", str(built), "--quantity", "relaxation_modulus",
                              "--temperature", "-150", "--time", "1"])
    assert res.exit_code == 2
    assert "°C" in res.stderr and "got -150 °C" in res.stderr and "Traceback" not in res.output
