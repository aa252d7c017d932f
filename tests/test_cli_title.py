"""The report's title (issue 16, point 5): the sample's name from the input's metadata, or
``--title``; text from the input or the command line is escaped.

The campaign is the command-line tests' generated WLF one (tests/_campaigns.py) with a preamble
line naming the sample.
"""

from __future__ import annotations

import re
import warnings

from _campaigns import write_noisy_campaign
from typer.testing import CliRunner

from ttsp.cli import app

runner = CliRunner()


def with_preamble(path, line):
    body = path.read_text("utf-8")
    path.write_text(f"{line}\nOperator: A. N. Other\n\n{body}", encoding="utf-8")
    return path


def page_title(html):
    return re.search(r"<title>(.*?)</title>", html, re.S).group(1)


def test_the_sample_name_in_the_metadata_is_the_report_title(tmp_path):
    from ttsp.io.readers import read_campaign
    from ttsp.report import render_report
    from ttsp.workflow import build

    src = with_preamble(write_noisy_campaign(tmp_path / "sweeps.csv"),
                        "Sample name: Bracket PA66-GF30")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = build(read_campaign(str(src)), reference_temperature_C=20.0, law="wlf",
                       cross_validation=False)
    html = render_report(result, {}, created_utc="")
    assert page_title(html) == "TTS report: Bracket PA66-GF30"
    assert "<h1>Time–temperature superposition: Bracket PA66-GF30</h1>" in html


def test_title_option_names_the_report_and_is_escaped(tmp_path):
    src = with_preamble(write_noisy_campaign(tmp_path / "sweeps.csv"),
                        "Sample name: Bracket PA66-GF30")
    out = tmp_path / "out"
    res = runner.invoke(app, ["build", str(src), "-T", "20", "--law", "wlf", "--out", str(out),
                              "--no-cross-validation", "-q", "--title", "Lot 7 <heat aged>"])
    assert res.exit_code == 0, res.output
    html = (out / "report.html").read_text("utf-8")
    assert page_title(html) == "TTS report: Lot 7 &lt;heat aged&gt;"
    assert "<heat aged>" not in html
