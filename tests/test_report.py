"""Tests of ttsp.report: the self-contained HTML page of a build.

The builds come from campaigns generated here from a Prony spectrum and a WLF or Arrhenius
shift law (Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 3-4 and 11), so the
numbers the page must show are known. The page is checked as HTML text and, parsed with the
standard library's html.parser, as a tree of elements; tests/test_report_browser.py opens it
in a real browser.
"""

from __future__ import annotations

import dataclasses
import math
import re
import warnings
from html.parser import HTMLParser

import numpy as np
import pandas as pd
import pytest
from _campaigns import report_campaign

from ttsp import __version__, report
from ttsp.checks import CheckResult
from ttsp.data import Campaign
from ttsp.exceptions import DataError
from ttsp.workflow import build

R_J_PER_MOL_K = 8.314462618  # CODATA 2018 molar gas constant
NAMES = ("isotherms", "master_curve", "shift_factors", "prony_fit", "time_functions",
         "frequency_functions", "superposition_check")
TABLES = ("table-checks", "table-shift-factors", "table-law", "table-prony", "table-fe",
          "table-inputs", "table-options")
CREATED = "2026-01-02T03:04:05Z"


# ----------------------------------------------------------------------------------------------
# exact campaigns and their builds
# ----------------------------------------------------------------------------------------------
def spectrum(center, total_Pa, width=2.0, span=6.0, n=17):
    log_tau = np.linspace(center - span, center + span, n)
    w = np.exp(-0.5 * ((log_tau - center) / width) ** 2)
    return 10.0 ** log_tau, total_Pa * w / w.sum()


def frequency_campaign(source="synthetic.csv", metadata=None, seed=1):
    """WLF C1 = 9, C2 = 100 K at 20 °C (Williams, Landel & Ferry 1955); 8 × 8 points
    (``report_campaign`` of tests/_campaigns.py)."""
    return report_campaign(source=source, metadata=metadata or {"Material": "test compound"},
                           seed=seed, units_as_read={"f (Hz)": "Hz", "E' (MPa)": "MPa"})


def time_campaign():
    """Arrhenius Ea = 200 kJ/mol at 40 °C; 6 isotherms × 12 times."""
    tau, e = spectrum(2.0, 3e9)
    t = np.logspace(0, 4, 12)
    parts = []
    for t_c in (20, 30, 40, 50, 60, 70):
        t_k = t_c + 273.15
        a = 10 ** (200e3 / (math.log(10) * R_J_PER_MOL_K) * (1 / t_k - 1 / 313.15))
        parts.append(pd.DataFrame({"temperature_K": t_k, "time_s": t,
                                   "relaxation_modulus_Pa":
                                       3e7 + (e * np.exp(-(t / a)[:, None] / tau)).sum(1)}))
    return Campaign.from_frame(pd.concat(parts, ignore_index=True), domain="time",
                               source="relax_folder")


def quiet_build(campaign, **options):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return build(campaign, **options)


@pytest.fixture(scope="module")
def result():
    return quiet_build(frequency_campaign(), law="wlf", reference_temperature_C=20.0)


@pytest.fixture(scope="module")
def time_result():
    return quiet_build(time_campaign(), law="arrhenius", reference_temperature_C=40.0)


def tiny_svg(tag: str) -> str:
    """An SVG shaped like matplotlib's: prolog, doctype, metadata, a clip path referenced by id."""
    return ('<?xml version="1.0" encoding="utf-8" standalone="no"?>\n'
            '<!DOCTYPE svg PUBLIC "-//W3C//DTD SVG 1.1//EN"\n'
            '  "http://www.w3.org/Graphics/SVG/1.1/DTD/svg11.dtd">\n'
            '<svg xmlns:xlink="http://www.w3.org/1999/xlink" width="300pt" height="150pt" '
            'viewBox="0 0 300 150" xmlns="http://www.w3.org/2000/svg" version="1.1">\n'
            '<metadata><rdf:RDF><cc:Work><dc:type rdf:resource='
            '"http://purl.org/dc/dcmitype/StillImage"/></cc:Work></rdf:RDF></metadata>\n'
            '<!-- a comment -->\n'
            f'<defs><clipPath id="p1"><rect x="0" y="0" width="300" height="150"/></clipPath>'
            f'<path id="glyph" d="M 0 0 L 1 1"/></defs>'
            f'<g id="{tag}" clip-path="url(#p1)"><use xlink:href="#glyph"/>'
            f'<rect width="10" height="10" fill="#123456"/></g>\n</svg>\n')


@pytest.fixture(scope="module")
def figures():
    return {name: tiny_svg(f"marker-{name}") for name in NAMES}


@pytest.fixture(scope="module")
def page(result, figures):
    return report.render_report(result, figures, created_utc=CREATED)


class Tree(HTMLParser):
    """Element ids, tags and attributes of a page (standard-library parser)."""

    def __init__(self, text):
        super().__init__(convert_charrefs=True)
        self.ids, self.elements, self.text = [], [], []
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        self.elements.append((tag, attrs))
        if "id" in attrs:
            self.ids.append(attrs["id"])

    def handle_data(self, data):
        self.text.append(data)


# ----------------------------------------------------------------------------------------------
# content
# ----------------------------------------------------------------------------------------------
def test_page_has_every_table_and_every_figure(page):
    tree = Tree(page)
    for table in TABLES:
        assert table in tree.ids, table
    for name in NAMES:
        assert f"figure-{name}" in tree.ids
        assert f'id="{name}-marker-{name}"' in page          # the figure itself, inlined
    assert len(re.findall(r"<figcaption><b>Figure \d+\.</b>", page)) == len(NAMES)
    numbers = [int(n) for n in re.findall(r"<b>Figure (\d+)\.</b>", page)]
    assert numbers == list(range(1, len(NAMES) + 1))
    assert page.count("<svg") == len(NAMES)


def test_page_states_provenance_and_the_caution(page, result):
    assert f"ttsp {__version__}" in page
    assert result.input_sha256 in page and len(result.input_sha256) == 64
    assert CREATED in page
    assert report.CAUTION in page
    assert report.CAUTION.startswith("Predictions outside the measured range of temperatures "
                                     "and reduced times are extrapolations; physical aging is "
                                     "not modelled; structural use must follow applicable "
                                     "design codes and be reviewed by a qualified engineer.")


def test_shift_factor_table_lists_every_isotherm(page, result):
    body = page.split('id="table-shift-factors"')[1].split("</table>")[0]
    rows = re.findall(r"<tr><td class=\"num\">([^<]+)</td><td class=\"num\">([^<]+)</td>", body)
    assert len(rows) == len(result.campaign)
    temps = [float(t.replace("−", "-")) for t, _ in rows]
    assert temps == pytest.approx(list(result.campaign.temperatures_C), abs=0.005)
    # the page shows log10 aT to 3 decimals; the exact WLF value at 50 °C is -9·30/130
    last = float(rows[-1][1].replace("−", "-"))
    assert last == pytest.approx(float(result.shifts.log10_aT[-1]), abs=5e-4)
    assert last == pytest.approx(-9.0 * 30 / 130, abs=0.05)
    assert "log<sub>10</sub> b<sub>T</sub></th>" not in body      # no vertical shift asked


def test_law_table_has_parameters_with_standard_errors(page, result):
    body = page.split('id="table-law"')[1].split("</table>")[0]
    fit = result.law_fit
    assert "<td>C₁</td>" in body and "<td>C₂</td>" in body
    c1 = re.search(r"<td>C₁</td><td class=\"num\">([^<]+)</td><td class=\"num\">([^<]+)</td>",
                   body)
    assert float(c1.group(1)) == pytest.approx(fit.params["C1"], rel=1e-4)
    assert float(c1.group(2)) == pytest.approx(fit.stderr["C1"], rel=0.05)
    # the fitted WLF constants are near the truth C1 = 9, C2 = 100 K (0.5 % noise)
    assert fit.params["C1"] == pytest.approx(9.0, rel=0.05)
    assert "Apparent activation energy at the reference temperature" in body
    # WLF Ea(Tr) = ln10 R C1 C2 Tr² / C2² (Ferry 1980, ch. 11), in kJ/mol
    ea = (math.log(10) * R_J_PER_MOL_K * fit.params["C1"] * 293.15 ** 2
          / fit.params["C2_K"] / 1e3)
    shown = re.search(r"at the reference temperature</td><td class=\"num\">([^<]+)<",
                      body).group(1)
    assert float(shown) == pytest.approx(ea, rel=1e-3)
    # every shift of this campaign is well determined: the law saw their full covariance
    assert fit.weighting == "covariance"
    assert "generalised least squares with the full covariance" in page


def test_prony_tables_carry_every_term(page, result):
    series = result.series
    n = int(np.count_nonzero(series.modulus_Pa))
    prony = page.split('id="table-prony"')[1].split("</table>")[0]
    fe = page.split('id="table-fe"')[1].split("</table>")[0]
    assert prony.count("<tr>") == 1 + n + 1 + 1           # head, terms, E∞, E0
    assert fe.count("<tr>") == 1 + n + 1                  # head, terms, g∞
    g = [float(x) for x in re.findall(r'<tr><td class="num">\d+</td><td class="num">([^<]+)</td>',
                                      fe)]
    assert g == pytest.approx(list(series.modulus_Pa[series.modulus_Pa > 0]
                                   / series.instantaneous_modulus_Pa), rel=1e-5)


def test_each_check_has_its_verdict_in_words(result, figures):
    checks = (CheckResult("noise_level", "pass", 0.5, 5.0, "Fine."),
              CheckResult("kramers_kronig", "warn", 3.2, 3.0, "Slightly inconsistent."),
              CheckResult("monotonic_shifts", "fail", 1.0, 0.0, "log aT rises at 40 °C."))
    page = report.render_report(dataclasses.replace(result, checks=checks), figures,
                                created_utc=CREATED)
    body = page.split('id="table-checks"')[1].split("</table>")[0]
    for css, word in (("pass", "Pass"), ("warn", "Warning"), ("fail", "Fail")):
        assert f'<span class="badge {css}">' in body and f"{word}</span>" in body
    assert "Kramers–Kronig consistency of E′ and E″" in body
    assert "1 check(s) failed" in page


def test_page_without_checks_says_so(result, figures):
    page = report.render_report(dataclasses.replace(result, checks=()), figures,
                                created_utc=CREATED)
    assert "No checks were run" in page


def test_warnings_are_listed(result, figures):
    page = report.render_report(dataclasses.replace(result, notes=("E∞ is <extrapolated>",)),
                                figures, created_utc=CREATED)
    section = page.split('id="warnings"')[1].split("</section>")[0]
    assert "<li>E∞ is &lt;extrapolated&gt;</li>" in section


def test_time_domain_build_renders(time_result, figures):
    page = report.render_report(time_result, figures, created_utc=CREATED)
    assert "time-domain (transient)" in page and "Arrhenius" in page
    assert "Activation energy Eₐ" in page
    assert "Apparent activation energy" not in page       # the same number again for Arrhenius
    ea = float(re.search(r"<td>Activation energy Eₐ</td><td class=\"num\">([^<]+)<",
                         page).group(1))
    assert ea == pytest.approx(200.0, rel=0.02)      # the Ea the data were made with


# ----------------------------------------------------------------------------------------------
# self-contained and safe
# ----------------------------------------------------------------------------------------------
def test_page_loads_nothing_from_anywhere(page):
    assert "<script" not in page.lower() and "<link" not in page.lower()
    assert "@import" not in page and "@font-face" not in page
    for attr in re.findall(r'\b(?:src|href)\s*=\s*"([^"]*)"', page):
        assert attr.startswith(("#", "data:")), attr
    assert not re.search(r"url\(\s*['\"]?(?!#)", page)
    # 'http' survives only in XML namespace names, which are identifiers, not requests
    without_ns = re.sub(r'xmlns(:\w+)?="http://www\.w3\.org/[^"]*"', "", page)
    assert "http" not in without_ns


def test_figure_ids_are_unique_on_the_page(page):
    ids = Tree(page).ids
    assert len(ids) == len(set(ids))
    # every internal reference points at an element of the page
    refs = re.findall(r'href="#([^"]+)"', page) + re.findall(r"url\(#([^)]+)\)", page)
    assert refs and set(refs) <= set(ids)


def test_inline_svg_is_fluid_with_its_natural_width_as_limit(page):
    head = re.search(r"<svg[^>]*>", page.split('id="figure-isotherms"')[1]).group(0)
    assert 'width="100%"' in head and "max-width:400px" in head   # 300 pt = 400 px
    assert 'height="150pt"' not in head and 'viewBox="0 0 300 150"' in head


def test_user_text_is_escaped(figures):
    evil = '<script>alert("x")</script>'
    campaign = frequency_campaign(source=f"{evil}.csv",
                                  metadata={"Material": '<img src=x onerror=alert(1)>',
                                            "note & <b>": evil})
    result = quiet_build(campaign, law="wlf", reference_temperature_C=20.0)
    result = dataclasses.replace(result, input_files=(f"{evil}.csv",),
                                 notes=(f"bad {evil}",))
    page = report.render_report(result, figures, created_utc=evil)
    assert "<script" not in page and "<img src=x" not in page and "note & <b>" not in page
    assert "&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt;.csv" in page
    assert "&lt;img src=x onerror=alert(1)&gt;" in page        # the title, as text
    assert "note &amp; &lt;b&gt;" in page


def test_a_figure_with_a_script_is_refused(result):
    bad = tiny_svg("x").replace("</svg>", "<script>alert(1)</script></svg>")
    with pytest.raises(DataError, match="a figure must be a plain SVG image"):
        report.render_report(result, {"isotherms": bad}, created_utc=CREATED)


def test_a_figure_with_an_event_handler_is_refused(result):
    bad = tiny_svg("x").replace("<rect width", '<rect onload="alert(1)" width')
    with pytest.raises(DataError, match="a figure must be a plain SVG image"):
        report.render_report(result, {"isotherms": bad}, created_utc=CREATED)


def test_png_figures_are_embedded_in_base64(result):
    import base64
    import struct
    import zlib

    def chunk(kind, data):
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    png = (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", 1, 1, 8, 0, 0, 0, 0))
           + chunk(b"IDAT", zlib.compress(b"\x00\x00")) + chunk(b"IEND", b""))
    page = report.render_report(result, {"master_curve": png}, created_utc=CREATED)
    assert f'src="data:image/png;base64,{base64.b64encode(png).decode()}"' in page


@pytest.mark.parametrize("figure, message", [
    (b"GIF89a....", "figure must be SVG text or PNG bytes"),
    (42, "figure must be SVG text or PNG bytes"),
    ("<html>not a figure</html>", "figure must be an SVG document"),
])
def test_a_figure_that_is_not_svg_or_png_is_refused(result, figure, message):
    with pytest.raises(DataError, match=message):
        report.render_report(result, {"isotherms": figure}, created_utc=CREATED)


def test_figure_names_must_be_plain(result):
    with pytest.raises(DataError, match="figure name must be letters, digits"):
        report.render_report(result, {'x" onload="y': tiny_svg("a")}, created_utc=CREATED)


def test_figures_must_be_a_dict(result):
    with pytest.raises(DataError, match="figures_svg must be a dict"):
        report.render_report(result, [tiny_svg("a")], created_utc=CREATED)


def test_created_utc_must_be_text(result, figures):
    with pytest.raises(DataError, match="created_utc must be a string"):
        report.render_report(result, figures, created_utc=None)


def test_unknown_figures_go_to_their_own_section(result):
    page = report.render_report(result, {"my_extra_plot": tiny_svg("extra")},
                                created_utc=CREATED)
    section = page.split('id="other-figures"')[1].split("</section>")[0]
    assert 'id="figure-my_extra_plot"' in section and "My extra plot." in section


# ----------------------------------------------------------------------------------------------
# determinism, layout and print
# ----------------------------------------------------------------------------------------------
def test_same_build_same_page_except_the_time(result, figures, page):
    again = report.render_report(result, figures, created_utc=CREATED)
    assert again == page
    other = report.render_report(result, figures, created_utc="2030-12-31T23:59:59Z")
    assert other.replace("2030-12-31T23:59:59Z", CREATED) == page


def test_page_is_built_for_laptops_and_print(page):
    assert '<meta name="viewport" content="width=device-width, initial-scale=1">' in page
    assert "max-width: 62rem" in page and "overflow-x: auto" in page
    css_print = page.split("@media print")[1].split("</style>")[0]
    assert "page-break-inside: avoid" in css_print and "figure, table" in css_print
    assert page.count('<div class="table-wrap">') >= len(TABLES)
    assert "system-ui" in page        # the system font stack, no web font
