"""The isochronal figure and the Tg read by onset of E' (issue 16, point 7).

Ground truth for the onset: log10 E'(T) = 9 − 2/(1 + exp(−(T − 320)/5)) (a logistic step, K)
is flat at the cold end and steepest at 320 K with slope −2/(4·5) = −0.1 per K, where it is 8;
the tangent there meets the plateau 9 at 320 − 1/0.1 = 310 K (algebra, no source needed).
"""

from __future__ import annotations

import json
import warnings

import numpy as np
import pytest
from typer.testing import CliRunner

from ttsp.cli import app
from ttsp.transition import storage_onset

runner = CliRunner()


def logistic(T):
    return 10 ** (9 - 2 / (1 + np.exp(-(T - 320.0) / 5.0)))


def test_onset_by_tangents_on_a_known_step():
    T = np.linspace(250.0, 380.0, 1301)    # 0.1 K steps
    onset, why = storage_onset(T, logistic(T))
    # the cold-end slope is -2e-7 per K, not 0: it moves the meeting point by < 0.01 K
    assert why is None and onset == pytest.approx(310.0, abs=0.01)


def test_no_onset_when_the_range_starts_inside_the_drop():
    T = np.linspace(310.0, 380.0, 701)    # E' falls at 42 % of its steepest rate at 310 K
    onset, why = storage_onset(T, logistic(T))
    assert onset is None and "glassy plateau" in why


def test_build_writes_the_isochrone_at_the_chosen_frequency(campaign_file, tmp_path):
    out = tmp_path / "out"
    res = runner.invoke(app, ["build", str(campaign_file), "-T", "20",
                              "--law", "wlf", "--out", str(out), "--no-cross-validation", "-q",
                              "--isochrone-frequency", "10Hz"])
    assert res.exit_code == 0, res.output
    assert (out / "isochrone.svg").is_file() and (out / "isochrone.png").is_file()
    summary = json.loads((out / "summary.json").read_text("utf-8"))
    g = summary["glass_transition"]
    assert g["frequency_Hz"] == 10.0 and summary["options"]["isochrone_frequency_Hz"] == 10.0
    assert "storage_onset_from_model_C" in g
    html = (out / "report.html").read_text("utf-8")
    assert "Isochrone" in html and "Onset of the E′ drop" in html


def test_the_figure_marks_the_readings(campaign_file):
    import ttsp
    from ttsp.plotting import plot_isochrone

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = ttsp.build(ttsp.read_campaign(str(campaign_file)),
                            reference_temperature_C=20.0, law="wlf", cross_validation=False)
    ax = plot_isochrone(result)
    labels = [ln.get_label() for ln in ax.lines]
    g = result.glass_transition
    for value, word in ((g.loss_peak_from_model_K, "E″ peak"),
                        (g.tan_delta_peak_from_model_K, "tan δ peak"),
                        (g.storage_onset_from_model_K, "E′ onset")):
        if value is not None:
            assert any(word in lab and f"{value - 273.15:.1f} °C" in lab for lab in labels)
    assert ax.get_xlabel() == "Temperature T (°C)" and ax.get_yscale() == "log"


def test_a_bad_isochrone_frequency_is_a_usage_error(campaign_file, tmp_path):
    res = runner.invoke(app, ["build", str(campaign_file), "--out",
                              str(tmp_path / "o"), "-q", "--isochrone-frequency", "1:10:3"])
    assert res.exit_code == 2 and "one frequency" in res.output
