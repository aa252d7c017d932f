"""``ttsp build`` on the terminal: the output path first (scripts read it), then the law with its
constants, the verdict of the checks and each warning on one line (issue 16, point 1).

The campaign is the generated WLF one of the command-line tests (fixture ``campaign_file``;
Williams, Landel & Ferry 1955 form, C1 = 9, C2 = 100 K at 20 °C).
"""

from __future__ import annotations

import json

from typer.testing import CliRunner

from ttsp.cli import app

runner = CliRunner()


def test_build_prints_the_path_then_law_verdict_and_warnings(campaign_file, tmp_path):
    src = campaign_file
    out = tmp_path / "out"
    res = runner.invoke(app, ["build", str(src), "-T", "20", "--law", "wlf", "--out", str(out),
                              "--no-figures", "--no-cross-validation", "--quiet"])
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert lines[0] == str(out / "summary.json")
    summary = json.loads((out / "summary.json").read_text("utf-8"))
    law = [ln for ln in lines if ln.startswith("law: ")]
    assert len(law) == 1 and "wlf" in law[0] and "C1 = " in law[0] and "C2 = " in law[0]
    # the printed constant is the one written (4 significant digits)
    assert f"C1 = {summary['shift_law']['parameters']['C1']:.4g}" in law[0]
    assert "T_ref = 20.0 °C" in law[0]
    verdict = [ln for ln in lines if ln.startswith("verdict: ")]
    assert len(verdict) == 1
    n = len(summary["checks"])
    assert f"of {n} passed" in verdict[0]
    warned = [ln for ln in lines if ln.startswith("warning: ")]
    assert len(warned) == len(summary["warnings"])
    # --quiet silences progress only: stderr carries no step names
    assert "ttsp: reading" not in (res.stderr or "")


def test_a_long_warning_is_one_terminal_line():
    from ttsp.terminal import MAX_WARNING_CHARS, _one_line

    text = "word " * 100 + "\nsecond line"
    line = _one_line(text)
    assert "\n" not in line and len(line) <= MAX_WARNING_CHARS + 2 and line.endswith("…")
