"""The few lines ``ttsp build`` prints after the output path: the law with its constants, the
verdict of the checks, and each warning on one line.

Layer 5 (an edge for people at a terminal): it reads a :class:`ttsp.workflow.BuildResult` and
returns text; it computes nothing.
"""

from __future__ import annotations

import math

__all__ = ["build_summary_lines"]

# parameter name -> (shown name, unit, shown in °C?)
_PARAMETERS = {
    "C1": ("C1", "", False),
    "C2_K": ("C2", "K", False),
    "activation_energy_kJ_per_mol": ("Ea", "kJ/mol", False),
    "glass_transition_K": ("Tg", "°C", True),
    "B_K": ("B", "K", False),
    "T_inf_K": ("T_inf", "°C", True),
}

#: a warning longer than this is cut at a word boundary with an ellipsis (the whole text is in
#: summary.json and the report)
MAX_WARNING_CHARS = 160


def _number(value) -> str:
    return "–" if value is None or not math.isfinite(value) else f"{value:.4g}"


def _constant(name: str, value: float, stderr, fixed: bool) -> str:
    shown, unit, celsius = _PARAMETERS.get(name, (name, "", False))
    if celsius:
        value = value - 273.15
    text = f"{shown} = {_number(value)}"
    if fixed:
        text += " (fixed)"
    elif stderr is not None and math.isfinite(stderr):
        text += f" ± {stderr:.2g}"
    return f"{text} {unit}".rstrip()


def _one_line(text: str) -> str:
    text = " ".join(str(text).split())
    if len(text) <= MAX_WARNING_CHARS:
        return text
    cut = text[:MAX_WARNING_CHARS - 1].rsplit(" ", 1)[0]
    return cut + " …"


def build_summary_lines(result) -> list[str]:
    """The build's summary for the terminal, one idea per line.

    Parameters
    ----------
    result : ttsp.workflow.BuildResult

    Returns
    -------
    list of str
        ``law: ...`` (model, constants ± one standard error, reference and valid range in °C),
        ``verdict: ...`` (the checks' counts and the failed or warned ones by name),
        ``warning: ...`` once per warning of the build, each on one line.
    """
    fit = result.law_fit
    law = fit.law
    fixed = set(getattr(fit, "fixed_parameters", ()) or ())
    constants = ", ".join(_constant(k, float(v), fit.stderr.get(k), k in fixed)
                          for k, v in law.params.items())
    rng = law.valid_temperature_range_K
    valid = ("" if rng is None
             else f"; valid {rng[0] - 273.15:.1f} to {rng[1] - 273.15:.1f} °C")
    lines = [f"law: {law.model} ({constants}) at T_ref = {result.reference_temperature_C:.1f} °C"
             f"{valid}"]
    counts = {s: [c.name for c in result.checks if c.status == s] for s in ("pass", "warn", "fail")}
    if counts["fail"]:
        word = f"{len(counts['fail'])} check(s) failed ({', '.join(counts['fail'])})"
        if counts["warn"]:
            word += f", {len(counts['warn'])} warned ({', '.join(counts['warn'])})"
        word += ": read them before using the results"
    elif counts["warn"]:
        word = (f"no check failed; {len(counts['warn'])} warned "
                f"({', '.join(counts['warn'])})")
    elif result.checks:
        word = "every check passed"
    else:
        word = "no checks were run"
    n = len(result.checks)
    lines.append(f"verdict: {word} [{len(counts['pass'])} of {n} passed]")
    lines += [f"warning: {_one_line(w)}" for w in result.warnings]
    return lines
