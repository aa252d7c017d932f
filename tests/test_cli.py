"""The command line end to end: build, check, predict, history, demo; exit codes; the output
contract (summary.json against its JSON Schema); atomic, deterministic outputs.

The campaign (fixture ``campaign_file``, tests/conftest.py) is generated from a known
generalized Maxwell spectrum and WLF law (Williams, Landel & Ferry, J. Am. Chem. Soc. 77:3701,
1955; ``SWEEPS`` of tests/_campaigns.py), so the numbers the commands print can be checked against
the truth.
"""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from _campaigns import SWEEPS, write_noisy_campaign
from typer.testing import CliRunner

from ttsp.cli import app

runner = CliRunner()

@pytest.fixture(scope="module")
def built(campaign_file, tmp_path_factory):
    out = tmp_path_factory.mktemp("out") / "build"
    res = runner.invoke(app, ["build", str(campaign_file), "--reference-temperature", "20",
                              "--law", "wlf", "--out", str(out), "--no-figures", "--quiet"])
    assert res.exit_code == 0, res.output
    return out


def sha(path):
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


# ---- build: the output contract --------------------------------------------------------------
def test_build_writes_every_number_file_and_names_it(built):
    for name in ("summary.json", "shift_factors.csv", "master_curve.csv", "prony.csv",
                 "prony_finite_element.csv", "material_functions.csv"):
        assert (built / name).is_file(), name
    assert not list(built.glob("*.png")) and not (built / "report.html").exists()  # --no-figures


def test_summary_validates_against_the_shipped_schema(built):
    jsonschema = pytest.importorskip("jsonschema")
    from importlib.resources import files

    schema = json.loads(files("ttsp").joinpath("schema/summary.schema.json").read_text("utf-8"))
    summary = json.loads((built / "summary.json").read_text("utf-8"))
    jsonschema.validate(summary, schema)
    assert summary["schema_version"] == "1"
    assert summary["shift_law"]["model"] == "wlf"
    assert set(summary["shift_law"]["parameters"]) >= {"C1", "C2_K"}


def test_summary_gives_the_equilibrium_modulus_with_its_stderr(built):
    """The equilibrium modulus comes with the half-width of its profile interval (the Prony
    fit's stderr), which the report's Prony table shows as ± s."""
    summary = json.loads((built / "summary.json").read_text("utf-8"))
    s = summary["prony"]["equilibrium_modulus_stderr_Pa"]
    assert s is None or s > 0
    assert s is not None   # this campaign's E_inf is fitted, so its interval is known


def test_summary_fails_the_schema_when_a_key_is_missing(built):
    jsonschema = pytest.importorskip("jsonschema")
    from importlib.resources import files

    schema = json.loads(files("ttsp").joinpath("schema/summary.schema.json").read_text("utf-8"))
    summary = json.loads((built / "summary.json").read_text("utf-8"))
    del summary["prony"]["terms"]
    with pytest.raises(jsonschema.ValidationError, match="terms"):
        jsonschema.validate(summary, schema)


def test_build_recovers_the_generating_wlf_law(built):
    summary = json.loads((built / "summary.json").read_text("utf-8"))
    p = summary["shift_law"]["parameters"]
    # 1 % noise on 8 points per isotherm: shifts good to ~0.01 decade, so C1 within a few %
    # and C2 within ~5 K (their correlation leaves C2 looser than C1).
    assert p["C1"] == pytest.approx(SWEEPS.c1, rel=0.05)
    assert p["C2_K"] == pytest.approx(SWEEPS.c2_K, abs=6.0)
    for row in summary["shift_factors"]:
        assert row["log10_aT"] == pytest.approx(SWEEPS.log10_aT(row["temperature_C"]), abs=0.05)


def test_master_curve_keeps_every_input_point(built, campaign_file):
    n_input = len(pd.read_csv(campaign_file))
    master = pd.read_csv(built / "master_curve.csv")
    assert len(master) == n_input
    assert {"reduced_frequency_Hz", "storage_modulus_Pa", "temperature_C"} <= set(master.columns)


def test_material_functions_agree_with_the_exact_spectrum(built):
    mf = pd.read_csv(built / "material_functions.csv")
    inside = ~mf["extrapolated"].astype(bool)
    ep, epp = SWEEPS.moduli(1.0 / mf.loc[inside, "time_s"].to_numpy())
    # Prony fit of 1 %-noise data: E' within a few % of the exact generating function
    assert np.max(np.abs(mf.loc[inside, "storage_modulus_Pa"] / ep - 1)) < 0.05
    # E(t)·D(t) <= 1 for any linear viscoelastic solid (Tschoegl 1989, ch. 4; common practice)
    assert np.all(mf["relaxation_modulus_Pa"] * mf["creep_compliance_1_per_Pa"] <= 1 + 1e-9)


def test_existing_output_needs_force_and_force_replaces(built, campaign_file):
    before = sha(built / "summary.json")
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(built), "--no-figures", "-q"])
    assert res.exit_code == 2
    assert "--force" in res.output
    assert sha(built / "summary.json") == before
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(built), "--no-figures", "-q",
                              "--force", "--reference-temperature", "20", "--law", "wlf"])
    assert res.exit_code == 0, res.output
    assert not list(built.parent.glob(".ttsp-tmp-*"))


def test_build_is_deterministic_but_for_the_timestamp(campaign_file, tmp_path):
    outs = []
    for k in range(2):
        out = tmp_path / f"o{k}"
        res = runner.invoke(app, ["build", str(campaign_file), "--out", str(out), "--no-figures", "-q"])
        assert res.exit_code == 0, res.output
        outs.append(out)
    for f in outs[0].iterdir():
        if f.name == ".ttsp-output":  # the marker holds summary.json's hash (timestamp and all)
            continue
        a, b = f.read_text("utf-8"), (outs[1] / f.name).read_text("utf-8")
        if f.name == "summary.json":
            a, b = json.loads(a), json.loads(b)
            a.pop("created_utc"), b.pop("created_utc")
        assert a == b, f.name


def test_build_never_touches_its_input(campaign_file, tmp_path):
    before = sha(campaign_file)
    runner.invoke(app, ["build", str(campaign_file), "--out", str(tmp_path / "x"), "--no-figures", "-q"])
    assert sha(campaign_file) == before


def test_output_folder_inside_input_folder_is_refused(tmp_path):
    folder = tmp_path / "camp"
    folder.mkdir()
    f = write_noisy_campaign(folder / "a.csv")
    res = runner.invoke(app, ["build", str(folder), "--out", str(folder), "--no-figures", "-q",
                              "--force"])
    assert res.exit_code == 2
    assert f.is_file()


def test_build_with_figures_writes_png_svg_and_report(campaign_file, tmp_path):
    out = tmp_path / "fig"
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(out), "-q"])
    assert res.exit_code == 0, res.output
    assert res.stdout.splitlines()[0].endswith("report.html")  # the path stays the first line
    pngs, svgs = sorted(p.stem for p in out.glob("*.png")), sorted(p.stem for p in out.glob("*.svg"))
    assert pngs == svgs and len(pngs) >= 7
    html = (out / "report.html").read_text("utf-8")
    assert "<svg" in html and "extrapolation" in html.lower()
    # with figures, the cross-validation is done by a forked child while the build goes on and
    # the drawing is shared between children: the numbers are those of a build without them
    plain = tmp_path / "plain"
    assert runner.invoke(app, ["build", str(campaign_file), "--out", str(plain), "--no-figures",
                               "-q"]).exit_code == 0
    for name in ("shift_factors.csv", "prony.csv", "material_functions.csv"):
        assert sha(out / name) == sha(plain / name), name
    with_figures, without = (json.loads((o / "summary.json").read_text("utf-8"))
                             for o in (out, plain))
    assert with_figures["cross_validation"]["per_isotherm"]       # something to compare
    assert with_figures["cross_validation"] == without["cross_validation"]
    assert with_figures["shift_law"] == without["shift_law"]


# ---- --strict and checks ---------------------------------------------------------------------
def _failing_checks(monkeypatch):
    import ttsp.checks as checks

    real = checks.run_checks

    def with_a_failure(*a, **k):
        return tuple(real(*a, **k)) + (checks.CheckResult("planted", "fail", 1.0, 0.5,
                                                          "A planted failure."),)

    monkeypatch.setattr(checks, "run_checks", with_a_failure)


def test_strict_turns_a_failed_check_into_exit_3(campaign_file, tmp_path, monkeypatch):
    _failing_checks(monkeypatch)
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(tmp_path / "a"),
                              "--no-figures", "-q"])
    assert res.exit_code == 0  # without --strict a failed check is reported, not fatal
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(tmp_path / "b"),
                              "--no-figures", "-q", "--strict"])
    assert res.exit_code == 3
    assert "planted" in res.output
    assert (tmp_path / "b" / "summary.json").is_file()  # outputs are still written


def test_check_prints_verdicts_and_json(campaign_file, monkeypatch):
    res = runner.invoke(app, ["check", str(campaign_file)])
    assert res.exit_code == 0, res.output
    assert "PASS" in res.stdout
    res = runner.invoke(app, ["check", str(campaign_file), "--json"])
    checks = json.loads(res.stdout)["checks"]
    assert {c["status"] for c in checks} <= {"pass", "warn", "fail"}
    _failing_checks(monkeypatch)
    res = runner.invoke(app, ["check", str(campaign_file), "--strict"])
    assert res.exit_code == 3


# ---- predict and history -----------------------------------------------------------------------
def test_predict_relaxation_at_the_reference_matches_the_series(built):
    from ttsp.prony import PronySeries

    res = runner.invoke(app, ["predict", str(built), "--quantity", "relaxation_modulus",
                              "--temperature", "20", "--time", "1e-3:1e2:6"])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(__import__("io").StringIO(res.stdout))
    assert list(table.columns) == ["temperature_C", "time_s", "relaxation_modulus_Pa"]
    series = PronySeries.from_dict(json.loads((built / "summary.json").read_text())["prony"])
    np.testing.assert_allclose(table["relaxation_modulus_Pa"], series.relaxation_modulus(
        table["time_s"].to_numpy()), rtol=1e-8)


def test_predict_at_another_temperature_uses_the_shift(built, tmp_path):
    out = tmp_path / "p.csv"
    res = runner.invoke(app, ["predict", str(built / "summary.json"), "--quantity",
                              "storage_modulus", "--temperature", "35", "--frequency", "1:10:3",
                              "--out", str(out)])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(out)
    omega_rad_s = 2 * np.pi * table["frequency_Hz"].to_numpy() * 10 ** SWEEPS.log10_aT(35.0)
    ep_exact, _ = SWEEPS.moduli(omega_rad_s)
    # model (fitted law + Prony) against the generating functions: a few % at 1 % noise
    np.testing.assert_allclose(table["storage_modulus_Pa"], ep_exact, rtol=0.05)


@pytest.mark.parametrize("args, message", [
    (["--quantity", "tan_delta", "--temperature", "20", "--time", "1:2:3"], "function of frequency"),
    (["--quantity", "creep_compliance", "--temperature", "20", "--time", "1:2"], "a:b:n"),
    (["--quantity", "creep_compliance", "--temperature", "20", "--time", "-1:2:3"], "positive"),
    (["--quantity", "creep_compliance", "--temperature", "20"], "exactly one"),
])
def test_predict_usage_errors_exit_2(built, args, message):
    res = runner.invoke(app, ["predict", str(built)] + args)
    assert res.exit_code == 2
    assert message in res.output


def test_predict_without_a_build_exits_2(tmp_path):
    res = runner.invoke(app, ["predict", str(tmp_path), "--quantity", "tan_delta",
                              "--temperature", "20", "--frequency", "1:2:2"])
    assert res.exit_code == 2
    assert "summary.json" in res.output
    (tmp_path / "summary.json").write_text("{not json", encoding="utf-8")
    res = runner.invoke(app, ["predict", str(tmp_path), "--quantity", "tan_delta",
                              "--temperature", "20", "--frequency", "1:2:2"])
    assert res.exit_code == 2
    assert "invalid JSON" in res.output


def test_history_step_strain_gives_the_relaxation_modulus(built, tmp_path):
    from ttsp.prony import PronySeries

    t = np.array([0.0, 0.0, 1e-3, 1e-2, 0.1, 1.0, 10.0])
    h = tmp_path / "h.csv"
    h.write_text("time (s),strain (%)\n" + "\n".join(f"{a},{0.0 if i == 0 else 0.5}"
                                                     for i, a in enumerate(t)) + "\n")
    res = runner.invoke(app, ["history", str(built), str(h)])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(__import__("io").StringIO(res.stdout))
    series = PronySeries.from_dict(json.loads((built / "summary.json").read_text())["prony"])
    # Boltzmann superposition: a step strain ε0 gives σ = ε0·E(t) (Ferry 1980, ch. 1)
    np.testing.assert_allclose(table["stress_Pa"].to_numpy()[2:],
                               0.005 * series.relaxation_modulus(t[2:]), rtol=1e-9)


def test_history_with_a_hot_spell_relaxes_faster(built, tmp_path):
    t = np.linspace(0, 100, 201)
    rows = ["time (s),T (°C),strain"] + [f"{a},{20 if a < 10 else 40},{0.01}" for a in t]
    (tmp_path / "hot.csv").write_text("\n".join(rows) + "\n")
    rows = ["time (s),T (°C),strain"] + [f"{a},20,{0.01}" for a in t]
    (tmp_path / "cold.csv").write_text("\n".join(rows) + "\n")
    hot = runner.invoke(app, ["history", str(built), str(tmp_path / "hot.csv")])
    cold = runner.invoke(app, ["history", str(built), str(tmp_path / "cold.csv")])
    assert hot.exit_code == 0 and cold.exit_code == 0, hot.output + cold.output
    s_hot = pd.read_csv(__import__("io").StringIO(hot.stdout))["stress_Pa"].iloc[-1]
    s_cold = pd.read_csv(__import__("io").StringIO(cold.stdout))["stress_Pa"].iloc[-1]
    assert s_hot < 0.8 * s_cold  # 20 K hotter: a_T ≈ 10^-1.5, so much more relaxation


def test_history_table_errors_exit_2(built, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("time (s),strain,stress (MPa)\n0,0.01,1\n")
    res = runner.invoke(app, ["history", str(built), str(bad)])
    assert res.exit_code == 2
    assert "exactly one of a strain or a stress" in res.output
    bad.write_text("time (s),strain\n0,0.01\n2,x\n")
    res = runner.invoke(app, ["history", str(built), str(bad)])
    assert res.exit_code == 2
    assert "row 3" in res.output


# ---- bad input, internal errors, entry points -----------------------------------------------
def test_bad_input_is_one_line_exit_2_without_traceback(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("T (°C),f (Hz),E' (MPa),E'' (MPa)\n20,1,5,1\n20,2,nan,1\n30,1,4,1\n30,2,3,1\n")
    proc = subprocess.run([sys.executable, "-m", "ttsp", "build", str(bad), "--out",
                           str(tmp_path / "o")], capture_output=True, text=True)
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in proc.stderr
    assert "bad.csv" in lines[0] and "E' (MPa)" in lines[0] and "row 3" in lines[0]
    assert not (tmp_path / "o").exists()


def test_usage_error_from_the_console_entry_is_one_line(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "ttsp", "build", "x.csv", "--law", "nope"],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert len(proc.stderr.strip().splitlines()) == 1 and "--law" in proc.stderr


def test_internal_error_asks_for_a_report(campaign_file, tmp_path, monkeypatch):
    import ttsp.workflow as wf

    def broken(*a, **k):
        raise ZeroDivisionError("planted")

    monkeypatch.setattr(wf, "build", broken)
    res = runner.invoke(app, ["build", str(campaign_file), "--out", str(tmp_path / "o"), "-q"])
    assert res.exit_code == 1
    assert "please report" in res.output and "Traceback" not in res.output


def test_version_via_python_m():
    proc = subprocess.run([sys.executable, "-m", "ttsp", "--version"], capture_output=True, text=True)
    assert proc.returncode == 0 and proc.stdout.startswith("ttsp ")


@pytest.mark.slow  # end-to-end: a whole command or process
def test_demo_builds_the_bundled_campaign(tmp_path):
    res = runner.invoke(app, ["demo", "--out", str(tmp_path / "demo"), "-q"])
    assert res.exit_code == 0, res.output
    assert "report:" in res.stdout and (tmp_path / "demo" / "report.html").is_file()
    summary = json.loads((tmp_path / "demo" / "summary.json").read_text("utf-8"))
    # the demo's invented truth (datasets/make_demo_campaigns.py): WLF with C1 = 10, C2 = 110 K
    # at 10 °C; at the reference the build picks, the same law has C1' = C1·C2/(C2 + ΔT).
    tr = summary["reference_temperature_C"]
    assert summary["shift_law"]["model"] == "wlf"
    assert summary["shift_law"]["parameters"]["C1"] == pytest.approx(10 * 110 / (110 + tr - 10),
                                                                     rel=0.05)
    # a second run replaces its own earlier output
    assert runner.invoke(app, ["demo", "--out", str(tmp_path / "demo"), "-q"]).exit_code == 0
    other = tmp_path / "mine"
    other.mkdir()
    (other / "keep.txt").write_text("user data")
    res = runner.invoke(app, ["demo", "--out", str(other), "-q"])
    assert res.exit_code == 2 and (other / "keep.txt").read_text() == "user data"


def test_the_console_command_freezes_its_objects_at_exit_after_the_libraries_handlers():
    """The installed command's last garbage collections are skipped (gc.freeze at exit, after
    the handlers libraries register), once however often ``main`` runs in a process."""
    script = ("import atexit, gc, sys\n"
              "atexit.register(lambda: print('frozen', gc.get_freeze_count() > 0))\n"
              "from ttsp.cli import main\n"
              "sys.argv = ['ttsp', '--version']\n"
              "for _ in range(2):\n"
              "    try:\n"
              "        main()\n"
              "    except SystemExit:\n"
              "        pass\n"
              "atexit.register(lambda: print('not yet', gc.get_freeze_count()))\n")
    proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          timeout=60)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.splitlines()[-2:] == ["not yet 0", "frozen True"]
