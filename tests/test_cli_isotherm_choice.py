"""``ttsp build --exclude T`` and ``--fix-shift T=LOG10_AT`` (issue 16, point 4): the isotherm
left out is gone from every output, the fixed shift is held, and both are recorded in
summary.json and the report.

The campaign is the command-line tests' generated WLF one (fixture ``campaign_file``; C1 = 9,
C2 = 100 K at 20 °C; isotherms 0-45 °C).
"""

from __future__ import annotations

import json

import pandas as pd
import pytest
from typer.testing import CliRunner

from ttsp.cli import app
from ttsp.workflow import BuildOptions

runner = CliRunner()
FAST = ["-T", "20", "--law", "wlf", "--no-cross-validation", "-q"]


def test_exclude_and_fix_shift_are_applied_and_recorded(campaign_file, tmp_path):
    out = tmp_path / "out"
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(out), "--exclude", "40",
                              "--exclude", "45", "--fix-shift", "35=-1.25"] + FAST)
    assert res.exit_code == 0, res.output
    summary = json.loads((out / "summary.json").read_text("utf-8"))
    assert summary["options"]["exclude_C"] == [40.0, 45.0]
    assert summary["options"]["fixed_log10_aT"] == {"35": -1.25}
    temps = [r["temperature_C"] for r in summary["shift_factors"]]
    assert 40.0 not in temps and 45.0 not in temps and len(temps) == 8
    row = next(r for r in summary["shift_factors"] if r["temperature_C"] == 35.0)
    assert row["log10_aT"] == -1.25
    master = pd.read_csv(out / "master_curve.csv")
    assert not master["temperature_C"].isin([40.0, 45.0]).any()
    # the recorded options rebuild the same settings (a batch re-reads them)
    again = BuildOptions(**summary["options"])
    assert again.exclude_C == (40.0, 45.0) and dict(again.fixed_log10_aT) == {35.0: -1.25}
    html_out = tmp_path / "html"
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(html_out),
                              "--exclude", "40", "--fix-shift", "35=-1.25"] + FAST)
    assert res.exit_code == 0, res.output
    html = (html_out / "report.html").read_text("utf-8")
    assert "Isotherms left out (°C)" in html and "40 °C" in html
    assert "Shifts fixed by hand" in html and "35 °C: -1.25" in html


@pytest.mark.parametrize("args, message", [
    (["--exclude", "41.7"], "exclude: no isotherm at 41.7 °C"),
    (["--fix-shift", "12=0.5"], "fix_shift: no isotherm at 12 °C"),
    (["--fix-shift", "35=abc"], "T=LOG10_AT"),
    (["--fix-shift", "35"], "NAME=VALUE"),
])
def test_a_bad_choice_is_one_line_and_exit_2(campaign_file, tmp_path, args, message):
    out = tmp_path / "bad"
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(out), "--no-figures"]
                        + FAST + args)
    assert res.exit_code == 2, res.output
    assert message in res.output and "Traceback" not in res.output
    assert not out.exists()


def test_options_refuse_bad_values():
    from ttsp.exceptions import DataError

    with pytest.raises(DataError, match="fixed_log10_aT must be a mapping"):
        BuildOptions(fixed_log10_aT={35: "x"})
    with pytest.raises(DataError, match="exclude_C must be a list"):
        BuildOptions(exclude_C="80")
