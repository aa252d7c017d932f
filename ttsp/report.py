"""The report of a build: one self-contained HTML page.

Everything is on the page: inputs and options, the shift-factor table, the shift law with its
uncertainties and derived figures, the Prony series and its normalised (finite-element) form,
the figures, every check with its verdict in words, the warnings, the caution on extrapolation
and design use, the tool version, the input hash and the time of creation. The page loads
nothing: figures are inline SVG (or base64 PNG), styles are inline, fonts are the system's.
It reads well at laptop width and prints on A4 or Letter.

This module does not draw figures; the caller passes them in (see :mod:`ttsp.plotting`), so
the report and the plotting stay independent of each other.
"""

from __future__ import annotations

import base64
import math
import re
from importlib import resources

import numpy as np
from markupsafe import Markup

from . import __version__
from ._validation import bad_value
from .exceptions import DataError
from .laws.names import LAW_TITLES as _LAW_NAMES
from .units import display_modulus_unit, kelvin_to_celsius

__all__ = ["render_report", "FIGURE_CAPTIONS", "CAUTION"]

#: The caution printed on every report.
CAUTION = ("Predictions outside the measured range of temperatures and reduced times are "
           "extrapolations; physical aging is not modelled; structural use must follow "
           "applicable design codes and be reviewed by a qualified engineer.")

_SECTION_OF_FIGURE = {
    "isotherms": "data",
    "superposition_check": "data",
    "shift_factors": "shifts",
    "master_curve": "master",
    "prony_fit": "prony",
    "relaxation_spectrum": "prony",
    "time_functions": "functions",
    "frequency_functions": "functions",
    "isochrone": "functions",
    "cross_validation": "cross_validation",
}

#: Captions by figure name (HTML); ``{E}``, ``{D}``, ``{law}``, ``{tref}``, ... are filled in,
#: escaped, for each build.
FIGURE_CAPTIONS = {
    "isotherms": "The measured isotherms as read, coloured by temperature.",
    "superposition_check": (
        "Shift-free check of thermorheological simplicity. {check_text} Both coordinates are "
        "unchanged by a horizontal shift, so the isotherms of a thermorheologically simple "
        "material fall on one curve; a fan of separate curves means superposition is doubtful."),
    "shift_factors": (
        "Shift factors log<sub>10</sub> a<sub>T</sub> with ±1 standard error, and the fitted "
        "{law} law with its "
        "±1 standard-error band (propagated from the covariance of its parameters). Lower panel: "
        "the residuals of the shift factors about the law. Poorly determined shifts (grey "
        "diamonds) carry their bar only when it is under one decade; in the tables a standard "
        "error of 100 decades means the data do not determine that shift."),
    "master_curve": (
        "Master curve at T<sub>ref</sub> = {tref}: the measured points at their reduced {reduced}, "
        "coloured by their temperature; line: the fitted Prony series, dashed where it is "
        "extrapolated. Figures draw at most a few thousand points (an even subset of each dense "
        "isotherm); every point is in master_curve.csv."),
    "prony_fit": (
        "Prony series fitted to the master curve (left, with the residuals in per cent below) "
        "and its discrete relaxation spectrum: the coefficients {E}<sub>i</sub> at the relaxation "
        "times τ<sub>i</sub> and the long-term modulus {E}<sub>∞</sub> (right)."),
    "relaxation_spectrum": (
        "Continuous relaxation spectrum H(τ) of the master curve by Tikhonov regularisation "
        "(left; dashed and shaded outside the relaxation times the data determine, circles: the "
        "Prony coefficients spread over their share of ln τ; the horizontal line is the "
        "equilibrium modulus of this fit, which differs from the Prony series' where the data "
        "do not reach the rubbery plateau), and the choice of the regularisation strength λ "
        "(right)."),
    "time_functions": (
        "Relaxation modulus {E}(t) and creep compliance {D}(t) at T<sub>ref</sub> = {tref} over "
        "reduced "
        "time, computed from the Prony series (exact interconversion); shaded and dashed where "
        "extrapolated beyond the data. The coloured bands are 95 % intervals from a bootstrap "
        "of the shifts and the Prony fit (summary.json, bands); they widen where extrapolated "
        "and do not cover errors of the model itself (aging, a material that is not "
        "thermorheologically simple)."),
    "frequency_functions": (
        "Storage modulus {E}′, loss modulus {E}″ and tan δ at T<sub>ref</sub> = {tref} over reduced "
        "frequency, computed from the Prony series; shaded and dashed where extrapolated beyond "
        "the data; coloured bands: 95 % intervals of {E}′ and {E}″ from the build's bootstrap."),
    "isochrone": (
        "Isochrone: {E}′, {E}″ and tan δ against temperature at one frequency, from the Prony "
        "series and the shift law over the temperatures the law was fitted to, with the glass "
        "transition read three ways: onset of the {E}′ drop (tangents at the cold end and at the "
        "steepest descent), peak of {E}″ and peak of tan δ."),
    "cross_validation": (
        "Interior isotherms, each predicted by a build without it: rms relative error of the "
        "predicted moduli at the shift factor the law gives (filled circles) and at the best "
        "shift factor (open squares). The gap between the two is what the shift law costs at "
        "that temperature; dashed lines mark isotherms whose build without them failed."),
}

_CHECK_TITLES = {
    "noise_level": "Noise of the data",
    "simplicity_van_gurp_palmen": "Simplicity: δ against |{E}*| (van Gurp–Palmen)",
    "simplicity_loss_vs_storage": "Simplicity: {E}″ against {E}′",
    "function_agreement": "Shifts of {E}′ alone and {E}″ alone agree",
    "overlap_coverage": "Overlap of neighbouring isotherms",
    "shifted_superposition": "Superposition after shifting",
    "outliers": "Outliers",
    "monotonic_shifts": "Shift factors fall with temperature",
    "law_residuals": "Pattern in the shift-law residuals",
    "kramers_kronig": "Kramers–Kronig consistency of {E}′ and {E}″",
    "prony_fit_quality": "Prony fit quality",
    "master_curve_range": "Range of the master curve",
    "relaxation_creep": "Relaxation against creep (convolution identity)",
}

_STATUS_WORDS = {"pass": ("pass", "✓", "Pass"), "warn": ("warn", "!", "Warning"),
                 "fail": ("fail", "✗", "Fail")}

_PARAMETERS = {  # name → (label, unit, shown in °C?)
    "C1": ("C₁", "", False),
    "C2_K": ("C₂", "K", False),
    "activation_energy_kJ_per_mol": ("Activation energy Eₐ", "kJ/mol", False),
    "glass_transition_K": ("Glass transition Tg", "°C", True),
    "B_K": ("B (log₁₀ form)", "K", False),
    "T_inf_K": ("Vogel temperature T∞", "°C", True),
    "C1_times_C2_K": ("C₁·C₂", "K", False),
    "C1_over_C2_per_K": ("C₁/C₂", "1/K", False),
}

_OPTIONS = {
    "reference_temperature_C": "Reference temperature (°C)",
    "law": "Shift law",
    "vertical": "Vertical shift",
    "expansion_coefficient_per_K": "Volumetric expansion coefficient (1/K)",
    "shift_on": "Functions shifted on",
    "gaps": "Isotherms that do not overlap",
    "prony_terms_per_decade": "Prony terms per decade",
    "glass_transition_C": "Glass transition given (°C)",
    "exclude_C": "Isotherms left out (°C)",
    "fixed_log10_aT": "Shifts fixed by hand (log10 a_T at °C)",
}



# ------------------------------------------------------------------------------------------
# formatting
# ------------------------------------------------------------------------------------------
def _num(value, digits: int = 4) -> str:
    """A number with ``digits`` significant digits; an en dash for missing values."""
    if value is None:
        return "–"
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return "–"
    text = f"{v:.{digits}g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        text = f"{mantissa}×10{_superscript(int(exponent))}"
    return text.replace("-", "−")


def _fixed(value, decimals: int) -> str:
    if value is None:
        return "–"
    v = float(value)
    return "–" if not math.isfinite(v) else f"{v:.{decimals}f}".replace("-", "−")


def _sentence(text: str) -> str:
    """Capitalised and ending with a full stop (messages from the fits are phrases)."""
    text = text.strip()
    if not text:
        return text
    text = text[0].upper() + text[1:]
    return text if text[-1] in ".!?" else text + "."


def _superscript(n: int) -> str:
    return str(n).translate(str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹"))


_modulus_unit = display_modulus_unit


def _letters(modulus_kind: str) -> tuple[str, str]:
    return ("G", "J") if modulus_kind == "shear" else ("E", "D")


# ------------------------------------------------------------------------------------------
# figures: inline SVG with private ids, or base64 PNG
# ------------------------------------------------------------------------------------------
_FORBIDDEN_SVG = re.compile(r"<\s*(script|foreignObject|iframe|object|embed)\b|javascript:|"
                            r"\son[a-z]+\s*=|<\s*image\b[^>]*href\s*=\s*\"(?!data:)",
                            re.IGNORECASE)


def _inline_svg(svg: str, prefix: str) -> str:
    """Prepare an SVG document for inlining in HTML.

    Drops the XML prolog, doctype, comments and metadata; prefixes every id (and every
    reference to one) with ``prefix`` so that several figures on one page cannot clash;
    replaces the fixed width/height by a fluid width with the natural width as a maximum.
    """
    if _FORBIDDEN_SVG.search(svg):
        raise DataError("a figure must be a plain SVG image: scripts, event handlers, embedded "
                        "documents and external images are not allowed in the report")
    start = svg.find("<svg")
    if start < 0:
        raise bad_value("figure", "an SVG document (text starting with <svg or an XML prolog)",
                        svg[:40] + "…")
    svg = svg[start:]
    svg = re.sub(r"<!--.*?-->", "", svg, flags=re.DOTALL)
    svg = re.sub(r"<metadata\b.*?</metadata>", "", svg, flags=re.DOTALL)
    svg = re.sub(r'\bid="([^"]+)"', rf'id="{prefix}\1"', svg)
    svg = re.sub(r'(href\s*=\s*")#([^"]+)"', rf'\1#{prefix}\2"', svg)
    svg = re.sub(r"url\(#([^)]+)\)", rf"url(#{prefix}\1)", svg)
    head_end = svg.find(">")
    head = svg[:head_end]
    width = re.search(r'\swidth="([\d.]+)(pt|px)?"', head)
    max_width = ""
    if width:
        value = float(width.group(1)) * (4.0 / 3.0 if width.group(2) == "pt" else 1.0)
        max_width = f' style="max-width:{value:.0f}px"'
    head = re.sub(r'\s(width|height)="[^"]*"', "", head)
    head += f' width="100%" role="img" preserveAspectRatio="xMidYMid meet"{max_width}'
    return head + svg[head_end:].strip()


def _figure_html(value, prefix: str) -> str:
    if isinstance(value, (bytes, bytearray)):
        if not bytes(value[:8]) == b"\x89PNG\r\n\x1a\n":
            raise bad_value("figure", "SVG text or PNG bytes", bytes(value[:8]))
        data = base64.b64encode(bytes(value)).decode("ascii")
        return f'<img src="data:image/png;base64,{data}" alt="">'
    if not isinstance(value, str):
        raise bad_value("figure", "SVG text or PNG bytes", type(value).__name__)
    return _inline_svg(value, prefix)


# ------------------------------------------------------------------------------------------
# the content of the page
# ------------------------------------------------------------------------------------------
def _get(obj, name, default=None):
    if isinstance(obj, dict):
        return obj.get(name, default)
    return getattr(obj, name, default)


def _inputs(result) -> dict:
    campaign = result.campaign
    temps = campaign.temperatures_C
    freq = campaign.domain == "frequency"
    xs = np.concatenate([i.x for i in campaign.isotherms])
    if freq:
        x_range = (f"{_num(xs.min() / (2 * math.pi), 3)} – {_num(xs.max() / (2 * math.pi), 3)} Hz "
                   f"({_num(xs.min(), 3)} – {_num(xs.max(), 3)} rad/s)")
    else:
        x_range = f"{_num(xs.min(), 3)} – {_num(xs.max(), 3)} s"
    letter, cletter = _letters(campaign.modulus_kind)
    symbols = {"storage_modulus_Pa": f"{letter}′", "loss_modulus_Pa": f"{letter}″",
               "tan_delta": "tan δ", "complex_modulus_Pa": f"|{letter}*|",
               "phase_angle_rad": "δ", "relaxation_modulus_Pa": f"{letter}(t)",
               "creep_compliance_1_per_Pa": f"{cletter}(t)"}
    rows = [
        ("Source", campaign.source or "–"),
        ("Input files", ", ".join(result.input_files) if result.input_files else "–"),
        ("Kind of test", "frequency sweeps (dynamic)" if freq else "time-domain (transient)"),
        ("Modulus", "tensile (E, D)" if campaign.modulus_kind == "tensile" else "shear (G, J)"),
        ("Measured functions", ", ".join(symbols.get(q, q) for q in campaign.quantities)),
        ("Isotherms", f"{len(campaign)} from {_fixed(temps.min(), 1)} to "
                      f"{_fixed(temps.max(), 1)} °C"),
        ("Points", str(campaign.n_points)),
        ("Frequency range" if freq else "Time range", x_range),
    ]
    for header, unit in dict(campaign.units_as_read).items():
        rows.append((f"Column “{header}”", f"read in {unit}" if unit else "dimensionless"))
    for name, count in dict(campaign.dropped_rows).items():
        rows.append((f"Rows dropped: {name}", str(count)))
    metadata = [(str(k), str(v)) for k, v in dict(campaign.metadata).items()]
    return {"rows": rows, "metadata": metadata}


def _options(result) -> list:
    rows = []
    for key, value in result.options.to_dict().items():
        label = _OPTIONS.get(key, key)
        if key == "exclude_C":
            text = ", ".join(f"{t:g} °C" for t in value) or "none"
        elif key == "fixed_log10_aT":
            text = ", ".join(f"{t} °C: {v:.4g}" for t, v in value.items()) or "none"
        elif value is None:
            text = ("default: the measured temperature nearest the median"
                    if key == "reference_temperature_C" else "not given")
        else:
            text = _num(value, 6) if isinstance(value, float) else str(value)
        rows.append((label, text))
    rows.append(("Reference temperature used", f"{_fixed(result.reference_temperature_C, 2)} °C"))
    return rows


def _shift_rows(result) -> dict:
    shifts = result.shifts
    data = shifts.to_dict() if hasattr(shifts, "to_dict") else {}
    rows = data.get("shift_factors", data) if isinstance(data, dict) else data
    if not isinstance(rows, list) or not rows:
        t = np.asarray(shifts.temperature_K, dtype=float)
        rows = [{"temperature_C": float(kelvin_to_celsius(tk)), "log10_aT": float(a),
                 "log10_aT_stderr": float(e), "log10_bT": 0.0}
                for tk, a, e in zip(t, shifts.log10_aT, shifts.log10_aT_stderr, strict=True)]
    vertical = any(abs(float(r.get("log10_bT") or 0.0)) > 0 for r in rows)
    out = []
    for r in rows:
        flags = r.get("flags") or []
        out.append({
            "temperature": _fixed(r.get("temperature_C"), 2),
            "log10_aT": _fixed(r.get("log10_aT"), 3),
            "stderr": _fixed(r.get("log10_aT_stderr"), 3),
            "log10_bT": _fixed(r.get("log10_bT"), 3),
            "overlap": _fixed(r.get("overlap_quality"), 3),
            "flags": ", ".join(str(f) for f in flags) if flags else "",
        })
    return {"rows": out, "vertical": vertical,
            "has_overlap": any("overlap_quality" in r for r in rows),
            "method": data.get("method", "") if isinstance(data, dict) else "",
            "rms_residual": (_num(data.get("rms_residual"), 3)
                             if isinstance(data, dict) and data.get("rms_residual") is not None
                             else "")}


_MASTER_CURVE_NAMES = {"spectrum": "one relaxation spectrum shared by all functions",
                       "splines": "a smooth curve per function (penalised splines)"}


def _master_curve(result) -> dict | None:
    choice = getattr(result, "master_curve", None)
    if choice is None:
        return None
    ratio = choice.collapse_ratio
    return {"name": _MASTER_CURVE_NAMES.get(choice.chosen, choice.chosen),
            "reason": _sentence(choice.reason),
            "mismatch": _num(choice.neighbour_mismatch.get(choice.chosen), 3),
            "collapse": _fixed(ratio, 2) if ratio == ratio else ""}


_VERTICAL_NAMES = {"none": "none (horizontal shifts only)",
                   "fit": "a fitted log10 b_T per isotherm",
                   "density": "b_T = Tρ/(T_ref ρ_ref) from the expansion coefficient"}


def _vertical_choice(result) -> dict | None:
    choice = getattr(result, "vertical_choice", None)
    if choice is None:
        return None
    return {"name": _VERTICAL_NAMES[choice.chosen], "reason": _sentence(choice.reason)}


def _cross_validation(result) -> dict | None:
    cv = getattr(result, "cross_validation", None)
    if cv is None or not cv.per_isotherm:
        return None
    p = cv.params
    letter, _ = _letters(result.campaign.modulus_kind)
    names = {"storage_modulus_Pa": f"{letter}′", "loss_modulus_Pa": f"{letter}″",
             "complex_modulus_Pa": f"|{letter}*|", "tan_delta": "tan δ",
             "relaxation_modulus_Pa": f"{letter}(t)", "creep_compliance_1_per_Pa":
             ("J(t)" if letter == "G" else "D(t)")}
    rows = [{"temperature": _fixed(h.temperature_C, 2), "law_shift": _fixed(h.law_log10_aT, 3),
             "best_shift": _fixed(h.best_log10_aT, 3),
             "at_law": _fixed(h.rms_percent_at_law_aT.get("all"), 2),
             "at_best": _fixed(h.rms_percent_at_best_aT.get("all"), 2),
             "note": _sentence(h.error) if h.error else ""} for h in cv.per_isotherm]
    return {"rows": rows, "functions": " and ".join(names.get(f, f) for f in cv.functions),
            "median_law": _fixed(p["median_rms_percent_at_law_aT"], 2),
            "worst_law": _fixed(p["worst_rms_percent_at_law_aT"], 2),
            "median_best": _fixed(p["median_rms_percent_at_best_aT"], 2),
            "worst_best": _fixed(p["worst_rms_percent_at_best_aT"], 2)}


def _param_row(name, value, stderr, fixed=False):
    label, unit, celsius = _PARAMETERS.get(name, (name, "", False))
    if name.startswith("a") and "_per_K" in name:
        k = name[1:].split("_", 1)[0]
        label, unit = f"a{k}", ("1/K" if k == "1" else f"1/K{_superscript(int(k))}")
    shown = float(kelvin_to_celsius(value)) if celsius and value is not None else value
    return {"name": label, "key": name, "value": _num(shown, 5), "unit": unit,
            "stderr": "fixed" if fixed else _num(stderr, 2)}


def _law(result) -> dict:
    fit = result.law_fit
    law = fit.law
    fixed = set(getattr(fit, "fixed_parameters", ()) or ())
    params = [_param_row(n, v, fit.stderr.get(n), n in fixed) for n, v in law.params.items()]
    derived = [_param_row(n, v, (getattr(fit, "derived_stderr", {}) or {}).get(n))
               for n, v in (getattr(fit, "derived", {}) or {}).items()]
    rng = law.valid_temperature_range_K
    extra = []
    tr = float(law.reference_temperature_K)
    inside = rng is None or (rng[0] - 1e-9 <= tr <= rng[1] + 1e-9)
    if inside and law.model != "arrhenius":  # for Arrhenius it is the parameter itself
        try:
            ea = float(np.asarray(law.activation_energy_kJ_per_mol(tr)))
            extra.append({"name": "Apparent activation energy at the reference temperature",
                          "key": "Ea_ref",
                          "value": _num(ea, 4), "unit": "kJ/mol", "stderr": ""})
        except Exception:  # a law without a derivative: nothing to show
            pass
    tg = None
    if "glass_transition_K" in law.params:
        tg = float(law.params["glass_transition_K"])
    elif result.options.glass_transition_C is not None:
        tg = float(result.options.glass_transition_C) + 273.15
    if tg is not None and (rng is None or rng[0] <= tg <= rng[1]):
        try:
            extra.append({"name": "Fragility index m at Tg", "key": "fragility",
                          "value": _num(law.fragility(tg), 3), "unit": "", "stderr": ""})
        except Exception:  # fragility needs a law defined at Tg
            pass
        if law.model in ("wlf", "vft"):
            try:
                at_tg = law.at_reference(tg)
                if law.model == "vft":
                    at_tg = at_tg.to_wlf()
                extra.append({"name": "C₁ referred to Tg", "key": "C1g",
                              "value": _num(at_tg.params["C1"], 4), "unit": "", "stderr": ""})
                extra.append({"name": "C₂ referred to Tg", "key": "C2g",
                              "value": _num(at_tg.params["C2_K"], 4), "unit": "K", "stderr": ""})
            except Exception:  # no finite WLF form at Tg
                pass
    stats = fit.to_dict().get("statistics", {}) if hasattr(fit, "to_dict") else {}
    candidates = []
    for c in getattr(fit, "candidates", ()) or ():
        candidates.append({"model": _LAW_NAMES.get(str(c.get("model")), str(c.get("model"))),
                           "status": str(c.get("status", "")),
                           "n_free": str(c.get("n_free", "")),
                           "bic": _num(c.get("bic"), 4), "delta_bic": _num(c.get("delta_bic"), 3)})
    return {
        "name": _LAW_NAMES.get(law.model, law.model),
        "model": law.model,
        "reference": f"{_fixed(law.reference_temperature_C, 2)} °C",
        "range": ("–" if rng is None else
                  f"{_fixed(kelvin_to_celsius(rng[0]), 1)} to {_fixed(kelvin_to_celsius(rng[1]), 1)} °C"),
        "params": params,
        "derived": derived + extra,
        "n_points": str(stats.get("n_points", getattr(fit, "n_points", ""))),
        "n_free": str(stats.get("n_free", getattr(fit, "n_free", ""))),
        "rms": _num(stats.get("rms_residual_log10_aT"), 3),
        "reduced_chi_square": _num(getattr(fit, "reduced_chi_square", None), 3),
        "reason": _sentence(str(getattr(fit, "reason", "") or "")),
        "weighting": _LAW_WEIGHTING.get(str(getattr(fit, "weighting", "")), ""),
        "notes": [str(n) for n in getattr(fit, "notes", ()) or ()],
        "candidates": candidates if len(candidates) > 1 else [],
    }


#: how the law weighed the shift table, in words for the report
_LAW_WEIGHTING = {
    "covariance": "The law was fitted by generalised least squares with the full covariance of "
                  "the shift factors, which are correlated along the chain of overlaps.",
    "stderr": "The law was fitted with each shift factor weighted by its standard error.",
    "none": "The law was fitted without weights.",
}


def _prony(result) -> dict:
    series = result.series
    fit = result.prony_fit
    letter, _ = _letters(result.campaign.modulus_kind)
    tau = np.asarray(series.tau_s, dtype=float)
    e_i = np.asarray(series.modulus_Pa, dtype=float)
    einf = float(series.equilibrium_modulus_Pa)
    s_inf = float(dict(getattr(fit, "stderr", {}) or {}).get("equilibrium_modulus_Pa", np.nan))
    unit, factor = _modulus_unit(list(e_i) + [einf, series.instantaneous_modulus_Pa])
    terms = [{"i": str(k + 1), "tau": _num(t, 6), "modulus": _num(m / factor, 6)}
             for k, (t, m) in enumerate(zip(tau, e_i, strict=True)) if m > 0]
    norm = series.normalised()
    fe = [{"i": str(k + 1), "g": _num(g, 6), "tau": _num(t, 6)}
          for k, (g, t) in enumerate((g, t) for g, t in zip(norm.g, norm.tau_s, strict=True)
                                     if g > 0)]
    rng = series.valid_reduced_time_range_s
    by_quantity = dict(getattr(fit, "rms_percent_by_quantity", {}) or {})
    symbols = {"storage_modulus": f"{letter}′", "loss_modulus": f"{letter}″",
               "relaxation_modulus": f"{letter}(t)", "creep_compliance": "D(t)" if letter == "E"
               else "J(t)"}
    return {
        "letter": letter,
        "unit": unit,
        "terms": terms,
        "einf": _num(einf / factor, 6),
        # "± s" from the fit's profile interval (ttsp.prony.nnls), "" where it is not known
        "einf_stderr": f"± {_num(s_inf / factor, 2)}" if np.isfinite(s_inf) and s_inf > 0 else "",
        "e0": _num(series.instantaneous_modulus_Pa / factor, 6),
        "g_infinity": _num(norm.g_infinity, 6),
        "e0_Pa": _num(norm.instantaneous_modulus_Pa, 6),
        "fe": fe,
        "n_terms": str(series.n_terms),
        "range": "–" if rng is None else f"{_num(rng[0], 3)} to {_num(rng[1], 3)} s",
        "rms": _num(getattr(fit, "rms_percent", None), 3),
        "max": _num(getattr(fit, "max_percent", None), 3),
        "by_quantity": [(symbols.get(q, q), _num(v, 3)) for q, v in by_quantity.items()],
        "glassy": getattr(fit, "reaches_glassy_plateau", None),
        "rubbery": getattr(fit, "reaches_rubbery_plateau", None),
        "terminal": getattr(fit, "reaches_terminal_zone", None),
        "sum_g": _num(float(np.sum(norm.g)), 6),
    }


def _checks(result) -> dict:
    letter, _ = _letters(result.campaign.modulus_kind)
    rows = []
    counts = {"pass": 0, "warn": 0, "fail": 0}
    for c in result.checks:
        d = c.to_dict() if hasattr(c, "to_dict") else dict(c)
        if "details" not in d:
            d["details"] = dict(getattr(c, "details", {}) or {})
        status = str(d.get("status", "")).lower()
        css, icon, word = _STATUS_WORDS.get(status, ("unknown", "?", status or "unknown"))
        if status in counts:
            counts[status] += 1
        value, threshold = d.get("value"), d.get("threshold")
        name = str(d.get("name", ""))
        unit = str((d.get("details") or {}).get("unit", "") or "")
        rows.append({
            "name": (_CHECK_TITLES[name].format(E=letter) if name in _CHECK_TITLES
                     else name.replace("_", " ").capitalize()),
            "unit": unit,
            "status": css, "icon": icon, "word": word,
            "value": _num(value, 4) if isinstance(value, (int, float)) else (
                "–" if value is None else str(value)),
            "threshold": _num(threshold, 4) if isinstance(threshold, (int, float)) else (
                "–" if threshold is None else str(threshold)),
            "threshold_is_number": isinstance(threshold, (int, float)) or threshold is None,
            "message": str(d.get("message", "")),
        })
    if counts["fail"]:
        verdict = ("fail", "✗", f"{counts['fail']} check(s) failed: read them before using the "
                                "results.")
    elif counts["warn"]:
        verdict = ("warn", "!", f"No check failed; {counts['warn']} gave a warning.")
    elif rows:
        verdict = ("pass", "✓", "Every check passed.")
    else:
        verdict = ("unknown", "?", "No checks were run.")
    return {"rows": rows, "counts": counts, "verdict": verdict}


def _glass_transition(result) -> dict | None:
    est = getattr(result, "glass_transition", None)
    if est is None:
        return None
    d = est.to_dict() if hasattr(est, "to_dict") else dict(est)
    letter, _ = _letters(result.campaign.modulus_kind)

    def cell(key):
        value = d.get(key)
        return "–" if value is None else f"{_fixed(value, 1)} °C"

    return {
        "frequency": _num(d.get("frequency_Hz"), 3),
        "rows": [(f"Onset of the {letter}′ drop", cell("storage_onset_from_model_C"), "–"),
                 (f"Peak of {letter}″", cell("loss_peak_from_model_C"),
                  cell("loss_peak_from_isotherms_C")),
                 ("Peak of tan δ", cell("tan_delta_peak_from_model_C"),
                  cell("tan_delta_peak_from_isotherms_C"))],
        "notes": [_sentence(str(n)) for n in d.get("notes", []) or []],
    }


#: metadata keys (lower case, as read from the lines above the header) that name the sample,
#: in order of preference; "specimen" alone often holds its dimensions, so it is not one
TITLE_KEYS = ("title", "sample name", "sample", "sample id", "specimen name", "specimen id",
              "material", "name")


def _title(result, title=None) -> str:
    """The page's title: ``title`` when given, else the sample's name from the input's
    metadata, else the input's file or folder name."""
    if title is not None and str(title).strip():
        return " ".join(str(title).split())
    meta = {" ".join(str(k).lower().split()): str(v).strip()
            for k, v in dict(result.campaign.metadata).items()}
    for key in TITLE_KEYS:
        if meta.get(key):
            return meta[key]
    source = result.campaign.source or "campaign"
    return source.replace("\\", "/").rstrip("/").split("/")[-1] or source


def _figures(result, figures_svg) -> dict:
    campaign = result.campaign
    letter, cletter = _letters(campaign.modulus_kind)
    freq = campaign.domain == "frequency"
    fields = {
        "E": letter, "D": cletter, "law": _LAW_NAMES.get(result.law_fit.law.model,
                                                          result.law_fit.law.model),
        "tref": f"{_fixed(result.reference_temperature_C, 2)} °C",
        "reduced": Markup("frequency f·a<sub>T</sub>" if freq else "time t/a<sub>T</sub>"),
        "check_text": (f"Van Gurp–Palmen plot: phase angle δ against |{letter}*|." if freq else
                       f"Local log–log slope of {letter}(t) against {letter}(t)."),
    }
    if not isinstance(figures_svg, dict):
        raise bad_value("figures_svg", "a dict of figure name to SVG text (or PNG bytes)",
                        type(figures_svg).__name__)
    sections: dict[str, list[dict]] = {}
    number = 0
    order = list(_SECTION_OF_FIGURE)
    names = sorted(figures_svg, key=lambda n: (order.index(n) if n in order else len(order), n))
    by_section_order = ["data", "shifts", "master", "prony", "functions", "cross_validation",
                        "other"]
    ordered = sorted(names, key=lambda n: by_section_order.index(_SECTION_OF_FIGURE.get(n, "other")))
    for name in ordered:
        if not isinstance(name, str) or not re.fullmatch(r"[A-Za-z0-9_\-]+", name):
            raise bad_value("figure name", "letters, digits, '_' or '-'", name)
        number += 1
        caption = Markup(FIGURE_CAPTIONS[name]) if name in FIGURE_CAPTIONS else (
            name.replace("_", " ").capitalize() + ".")
        sections.setdefault(_SECTION_OF_FIGURE.get(name, "other"), []).append({
            "name": name, "number": number,
            "caption": caption.format(**fields) if isinstance(caption, Markup) else caption,
            "html": _figure_html(figures_svg[name], f"{name}-"),
        })
    return sections


def _load_template():
    import jinja2

    text = resources.files("ttsp").joinpath("templates").joinpath("report.html.j2").read_text("utf-8")
    env = jinja2.Environment(autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    return env.from_string(text)


def render_report(result, figures_svg: dict, *, created_utc: str, title: str | None = None) -> str:
    """The report of a build as one self-contained HTML page (a string).

    Parameters
    ----------
    result : ttsp.workflow.BuildResult
        What :func:`ttsp.workflow.build` returned.
    figures_svg : dict of str to str (or bytes)
        Figures by name (see :data:`ttsp.plotting.FIGURE_NAMES`): SVG text, inlined with its
        ids made private to the figure; or PNG bytes, embedded in base64. Known names get a
        caption and a place in the matching section; others go to a last section.
    created_utc : str
        Time of creation as the caller wants it shown (ISO 8601, e.g. ``2024-05-01T12:00:00Z``).
        It is the only part of the page that changes between two runs on the same input.
    title : str, optional
        The page's title; default: the sample's name from the input's metadata (keys
        :data:`TITLE_KEYS`), else the input's file or folder name.

    Returns
    -------
    str
        The HTML page. All text from the input (file names, metadata, column headers) is
        escaped; the page loads no script, style sheet, font or image from anywhere.

    Raises
    ------
    DataError
        If a figure is neither SVG text nor PNG bytes, or its SVG carries scripts, event
        handlers, embedded documents or external images.
    """
    if not isinstance(created_utc, str):
        raise bad_value("created_utc", "a string (ISO 8601 time)", created_utc)
    figures = _figures(result, figures_svg)
    context = {
        "title": _title(result, title),
        "tool_version": __version__,
        "input_sha256": result.input_sha256,
        "created_utc": created_utc,
        "reference_temperature": f"{_fixed(result.reference_temperature_C, 2)} °C",
        "domain": result.campaign.domain,
        "inputs": _inputs(result),
        "options": _options(result),
        "shifts": _shift_rows(result),
        "law": _law(result),
        "glass_transition": _glass_transition(result),
        "prony": _prony(result),
        "checks": _checks(result),
        "master_curve": _master_curve(result),
        "vertical_choice": _vertical_choice(result),
        "cross_validation": _cross_validation(result),
        "warnings": [str(w) for w in result.warnings],
        "caution": CAUTION,
        "figures": figures,
        "isotherm_count": len(result.campaign),
    }
    return _load_template().render(**context)
