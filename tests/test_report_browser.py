"""The report opened in a real browser: headless Chromium renders report.html offline and the
test reads the rendered DOM, a screenshot and a printed PDF.

What is asserted: every figure and table is present and laid out with a visible size; the page
does not scroll sideways at laptop or phone width (wide tables scroll inside their own box);
the screenshot is not blank; printing gives a multi-page PDF. A copy of the page with a small
measuring script appended is used for the layout numbers; the report itself has no script.

Needs the Debian package ``chromium``; skipped, with the reason printed, where it is missing.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import warnings
from pathlib import Path

import numpy as np
import pytest
from _campaigns import report_campaign

from ttsp import plotting, report
from ttsp.workflow import build


def find_chromium():
    for candidate in (shutil.which("chromium"), shutil.which("chromium-browser"),
                      "/usr/bin/chromium"):
        if candidate and os.path.exists(candidate):
            return candidate
    return None


CHROMIUM = find_chromium()
pytestmark = [pytest.mark.slow, pytest.mark.skipif(
    CHROMIUM is None,
    reason="headless Chromium not found (install the Debian package 'chromium'); "
           "the browser test of report.html cannot run here")]

TABLES = ("table-checks", "table-shift-factors", "table-law", "table-prony", "table-fe",
          "table-inputs", "table-options")

MEASURE = """
<script>
(function () {
  const out = {items: {}, scrollWidth: document.documentElement.scrollWidth,
               clientWidth: document.documentElement.clientWidth};
  for (const el of document.querySelectorAll("figure[id], table[id]")) {
    const r = el.getBoundingClientRect(), s = getComputedStyle(el);
    const g = el.querySelector("svg, img");
    const gr = g ? g.getBoundingClientRect() : null;
    out.items[el.id] = {tag: el.tagName.toLowerCase(), width: r.width, height: r.height,
                        display: s.display, visibility: s.visibility,
                        graphic: gr ? [gr.width, gr.height] : null};
  }
  document.body.setAttribute("data-layout", JSON.stringify(out));
})();
</script>
"""


def frequency_campaign():
    """Prony spectrum shifted by WLF C1 = 9, C2 = 100 K at 20 °C (Williams, Landel & Ferry 1955;
    ``report_campaign`` of tests/_campaigns.py)."""
    return report_campaign(source="browser-test.csv", seed=3, units_as_read={"f (Hz)": "Hz"},
                           metadata={"Material": "browser test compound"})


@pytest.fixture(scope="module")
def report_file(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = build(frequency_campaign(), law="wlf", reference_temperature_C=20.0,
                       spectrum=True)
    assert plotting.figure_names(result) == plotting.FIGURE_NAMES + plotting.OPTIONAL_FIGURES
    written = plotting.save_figures(plotting.render_figures(result), folder / "figures")
    svgs = {name: paths["svg"].read_text(encoding="utf-8") for name, paths in written.items()}
    page = report.render_report(result, svgs, created_utc="2026-01-02T03:04:05Z")
    path = folder / "report.html"
    path.write_text(page, encoding="utf-8")
    return path


def chromium(profile_root: Path, *args: str, url: str) -> subprocess.CompletedProcess:
    """Run headless Chromium with a fresh profile and no network services."""
    profile = profile_root / f"profile-{len(list(profile_root.glob('profile-*')))}"
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           "--no-first-run", "--disable-extensions", "--hide-scrollbars", "--mute-audio",
           f"--user-data-dir={profile}", *args, url]
    return subprocess.run(cmd, capture_output=True, text=False, timeout=180)


def layout(report_file: Path, tmp_path: Path, width: int) -> dict:
    probe = tmp_path / f"probe-{width}.html"
    probe.write_text(report_file.read_text(encoding="utf-8").replace("</body>", MEASURE + "</body>"),
                     encoding="utf-8")
    done = chromium(tmp_path, f"--window-size={width},900", "--dump-dom", url=probe.as_uri())
    dom = done.stdout.decode("utf-8", "replace")
    found = re.search(r'data-layout="([^"]*)"', dom)
    assert found, f"Chromium gave no DOM (exit {done.returncode}): {done.stderr[-500:]!r}"
    import html

    return json.loads(html.unescape(found.group(1)))


def test_every_figure_and_table_is_rendered_and_visible(report_file, tmp_path):
    measured = layout(report_file, tmp_path, 1366)
    items = measured["items"]
    for name in plotting.FIGURE_NAMES + plotting.OPTIONAL_FIGURES:
        item = items.get(f"figure-{name}")
        assert item is not None, name
        assert item["display"] != "none" and item["visibility"] == "visible"
        width, height = item["graphic"]
        # each figure is drawn at a readable size (matplotlib figures are 430-960 px wide)
        assert width > 300 and height > 150, (name, width, height)
    for table in TABLES:
        item = items.get(table)
        assert item is not None and item["tag"] == "table", table
        assert item["width"] > 100 and item["height"] > 20, (table, item)
    # laptop width: nothing sticks out sideways
    assert measured["scrollWidth"] <= measured["clientWidth"]


def test_page_does_not_scroll_sideways_on_a_phone(report_file, tmp_path):
    measured = layout(report_file, tmp_path, 390)
    # headless Chromium keeps a minimum window width (500 px here); still far below a laptop
    assert measured["clientWidth"] < 700
    assert measured["scrollWidth"] <= measured["clientWidth"]
    widths = [v["graphic"][0] for k, v in measured["items"].items() if k.startswith("figure-")]
    assert widths and max(widths) < measured["clientWidth"]   # figures shrink with the page


def test_screenshot_is_not_blank(report_file, tmp_path):
    from PIL import Image

    shot = tmp_path / "shot.png"
    done = chromium(tmp_path, "--window-size=1366,2600", f"--screenshot={shot}",
                    url=report_file.as_uri())
    assert shot.exists(), f"no screenshot (exit {done.returncode}): {done.stderr[-500:]!r}"
    image = np.asarray(Image.open(shot).convert("RGB"), dtype=np.int16)
    assert image.shape[:2] == (2600, 1366)
    ink = np.any(image < 235, axis=2)                     # anything not (near) white
    assert 0.02 < ink.mean() < 0.6, ink.mean()
    colours = np.unique(image.reshape(-1, 3)[::7], axis=0)
    assert len(colours) > 200                              # figures, badges, text: not a blank page
    # the caution box (amber background #fff1cc) is on the first screen
    amber = np.all(np.abs(image - np.array([255, 241, 204])) <= 2, axis=2)
    assert amber.sum() > 5000


def test_page_prints_to_a_multi_page_pdf(report_file, tmp_path):
    pdf = tmp_path / "report.pdf"
    done = chromium(tmp_path, f"--print-to-pdf={pdf}", "--no-pdf-header-footer",
                    url=report_file.as_uri())
    assert pdf.exists(), f"no PDF (exit {done.returncode}): {done.stderr[-500:]!r}"
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF")
    pages = len(re.findall(rb"/Type\s*/Page(?!s)", data))
    assert 3 <= pages <= 40, pages
