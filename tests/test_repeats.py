"""Repeated time stamps of instrument exports (issue 23): merged, counted, or refused when they
conflict. Synthetic data invented here (seeded); the rounding to four significant digits is what
such instruments print [common practice, no source]."""

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from ttsp.cli import app
from ttsp.data import REPEATS_MERGED, Campaign
from ttsp.exceptions import DataError
from ttsp.io.readers import read_campaign


def rounded_relaxation_csv(path, noise=0.01, seed=0):
    """G(t) of one Maxwell-like decay at two temperatures, times printed with 4 digits."""
    rng = np.random.default_rng(seed)
    t = np.geomspace(0.2, 3e4, 20000)   # 0.06 % steps: repeats above ~1000 s
    t4 = np.array([float(f"{v:.4g}") for v in t])
    lines = ["Temperature (°C),Time (s),G(t) (Pa)"]
    for temp, shift in ((130, 0.0), (150, -1.0)):
        g = 1e5 * np.exp(-(t / 10 ** (2 + shift)) ** 0.4) + 1e2
        g *= np.exp(rng.normal(0, noise, t.size))
        lines += [f"{temp},{a},{b:.6g}" for a, b in zip(t4, g, strict=True)]
    path.write_text("\n".join(lines) + "\n")
    return t4


def test_rounded_time_stamps_are_merged_and_counted(tmp_path):
    t4 = rounded_relaxation_csv(tmp_path / "g.csv")
    repeats = t4.size - np.unique(t4).size
    assert repeats > 100          # the scenario really repeats times above 1000 s
    campaign = read_campaign(tmp_path / "g.csv")
    assert campaign.modulus_kind == "shear"
    assert [i.n_points for i in campaign.isotherms] == [np.unique(t4).size] * 2
    assert campaign.dropped_rows[REPEATS_MERGED] == 2 * repeats
    # strictly ascending times in every isotherm
    assert all(np.all(np.diff(i.x) > 0) for i in campaign.isotherms)


def test_merged_value_is_the_mean_in_log():
    df = pd.DataFrame({"temperature_K": [300.0] * 4 + [320.0] * 2,
                       "time_s": [1.0, 1001.0, 1001.0, 5.0, 1.0, 2.0],
                       "relaxation_modulus_Pa": [10.0, 100.0, 102.0, 50.0, 9.0, 8.0]})
    c = Campaign.from_frame(df)
    iso = c.isotherms[0]
    assert list(iso.x) == [1.0, 5.0, 1001.0]
    # geometric mean of 100 and 102 (mean of log10 values)
    assert iso.values["relaxation_modulus_Pa"][-1] == pytest.approx(np.sqrt(100 * 102), rel=1e-12)
    assert list(iso.source_rows) == [2, 5, 3]   # the merged point keeps its first row


def test_refuse_keeps_the_strict_behaviour():
    df = pd.DataFrame({"temperature_K": [300.0] * 3 + [320.0] * 2,
                       "time_s": [1.0, 1001.0, 1001.0, 1.0, 2.0],
                       "relaxation_modulus_Pa": [10.0, 100.0, 101.0, 9.0, 8.0]})
    with pytest.raises(DataError, match=r"row 4: duplicate point: the same time 1001 at the "
                                        r"same temperature as row 3"):
        Campaign.from_frame(df, repeats="refuse")
    with pytest.raises(DataError, match=r"repeats must be 'merge' or 'refuse'; got 'drop'"):
        Campaign.from_frame(df, repeats="drop")


def test_conflicting_repeats_are_refused_named():
    df = pd.DataFrame({"temperature_K": [300.0] * 3 + [320.0] * 2,
                       "time_s": [1.0, 1001.0, 1001.0, 1.0, 2.0],
                       "relaxation_modulus_Pa": [10.0, 100.0, 200.0, 9.0, 8.0]})
    with pytest.raises(DataError, match=r"^g\.csv, column 'relaxation_modulus_Pa', row 4: "
                                        r"repeated time 1001 at the same temperature as row 3, "
                                        r"with values 0\.301 decade apart, far beyond the noise"):
        Campaign.from_frame(df, source="g.csv")


def test_repeated_frequencies_are_still_refused():
    df = pd.DataFrame({"temperature_K": [300.0] * 3 + [320.0] * 2,
                       "frequency_rad_s": [1.0, 10.0, 10.0, 1.0, 2.0],
                       "storage_modulus_Pa": [10.0, 100.0, 100.0, 9.0, 8.0]})
    with pytest.raises(DataError, match=r"duplicate point: the same frequency 10"):
        Campaign.from_frame(df)


def test_cli_inspect_reports_the_merge_and_refuse_exits_2(tmp_path):
    t4 = rounded_relaxation_csv(tmp_path / "g.csv")
    runner = CliRunner()
    res = runner.invoke(app, ["inspect", str(tmp_path / "g.csv")])
    assert res.exit_code == 0, res.output
    n = 2 * (t4.size - np.unique(t4).size)
    assert f"{n} {REPEATS_MERGED}" in res.output
    res = runner.invoke(app, ["inspect", str(tmp_path / "g.csv"), "--repeats", "refuse"])
    assert res.exit_code == 2
    assert "duplicate point: the same time" in res.output
    assert "Traceback" not in res.output


def test_cli_build_of_a_shear_export_with_repeats_is_shear_throughout(tmp_path):
    """A G(t) export with four-digit time stamps builds as it is, labelled shear everywhere;
    --material liquid fixes the equilibrium modulus at 0."""
    import json

    rng = np.random.default_rng(5)
    t = np.geomspace(0.2, 3e4, 15000)   # 0.08 % steps: repeats above ~1300 s
    t4 = np.array([float(f"{v:.4g}") for v in t])
    tau = 10.0 ** np.arange(-1.0, 5.01, 0.5)
    gi = 1e5 * (tau / tau[0]) ** -0.4
    lines = ["Temperature (°C),Time (s),G(t) (Pa)"]
    for temp, s in ((130, 2.0), (145, 1.0), (160, 0.0), (175, -0.8), (190, -1.5)):
        g = (gi * np.exp(-(t / 10 ** s)[:, None] / tau)).sum(axis=1)
        g *= np.exp(rng.normal(0, 0.01, t.size))
        lines += [f"{temp},{a},{b:.6g}" for a, b in zip(t4, g, strict=True)]
    (tmp_path / "melt.csv").write_text("\n".join(lines) + "\n")
    res = CliRunner().invoke(app, ["build", str(tmp_path / "melt.csv"), "-T", "160", "--law",
                                   "wlf", "--no-figures", "--no-cross-validation", "--material",
                                   "liquid", "--quiet", "--out", str(tmp_path / "out")])
    assert res.exit_code == 0, res.output
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    assert summary["modulus_kind"] == summary["prony"]["modulus_kind"] == "shear"
    assert summary["prony"]["equilibrium_modulus_Pa"] == 0.0
    assert summary["rows_left_out"][REPEATS_MERGED] == 5 * (t4.size - np.unique(t4).size)
    assert summary["shifting"]["stderr_correlation_inflation"] >= 1.0
    bad = CliRunner().invoke(app, ["build", str(tmp_path / "melt.csv"), "--material", "gel",
                                   "--out", str(tmp_path / "o2")])
    assert bad.exit_code == 2


def test_a_relaxation_and_a_creep_point_at_one_time_are_one_row_not_a_repeat():
    """Relaxation and creep read from two files: a time both tests printed holds G from one
    file and J from the other. The row keeps both values and no repeat is counted; a true
    repeat of one function beside it is still merged (mean in log) and counted."""
    from ttsp._repeats import merge_repeats

    nan = np.nan
    x = np.array([1.0, 2.0, 2.0, 3.0, 3.0, 3.0])
    g = np.array([10.0, 8.0, nan, 6.0, 6.0 * 1.002, nan])
    j = np.array([nan, nan, 0.2, nan, nan, 0.3])
    out = merge_repeats(x, {"g": g, "j": j}, {"g": True, "j": True})
    assert out.merged == 1 and out.conflict is None
    assert out.values["g"] == pytest.approx([10.0, 8.0, 6.0 * 1.002 ** 0.5], rel=1e-12)
    np.testing.assert_allclose(out.values["j"], [nan, 0.2, 0.3], rtol=1e-12)
