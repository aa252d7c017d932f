"""Monotonic shifts: log10 a_T must fall as the temperature rises; rises are named and weighed
against the shifts' standard errors."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..shifting import ShiftResult

import math

import numpy as np

from .._validation import bad_value
from ._inputs import _array
from .result import CheckResult

__all__ = ["check_monotonic_shifts", "MONOTONIC_SIGMA"]


#: Monotonic shifts: a rise of log10 a_T with temperature larger than this many combined
#: standard errors is a violation beyond the uncertainty (fail); a smaller one is a warning,
#: unless either isotherm's shift is flagged low-information (the data do not fix it, e.g. on a
#: plateau): then the rise is listed in the details but not counted. benchmarks/bench_checks.py
#: (full run, 5 December 2026): all 6 simple campaigns (2.5 %) that warned here were time-domain
#: campaigns reaching a plateau, every rise between two low-information isotherms and within
#: 0.8 combined standard errors; not counting those leaves 0 % warns on simple campaigns, and
#: no complex campaign was flagged by this check before or after.
MONOTONIC_SIGMA = 2.0


def _low_information(shifts, n: int) -> np.ndarray:
    """Whether each isotherm's shift is flagged ``low-information`` (the data alone do not fix
    it; ttsp/shifting/_diagnostics.py); all False for a table without flags."""
    flags = getattr(shifts, "flags", None)
    if flags is None or len(flags) != n:
        return np.zeros(n, dtype=bool)
    return np.array([any(str(f).startswith("low-information") for f in row) for row in flags])


def check_monotonic_shifts(shifts: ShiftResult) -> CheckResult:
    """log10 a_T must fall as the temperature rises; violations named.

    Every relaxation time shortens on heating, so a_T decreases monotonically with temperature
    (Ferry 1980, ch. 11; the WLF and Arrhenius laws both do). A rise between neighbouring
    temperatures is compared with the combined standard error √(s_k² + s_{k+1}²): beyond
    :data:`MONOTONIC_SIGMA` of it, it fails; within it (or without standard errors, a rise of
    at most 0.01 decade) it warns, except between isotherms of which either has a shift the
    data do not determine (flag ``low-information``): such a rise is listed, not counted.

    Parameters
    ----------
    shifts : shift result
        ``temperature_K``, ``log10_aT``, optionally ``log10_aT_stderr``.

    Returns
    -------
    CheckResult
        Value: the number of neighbouring pairs where log10 a_T does not fall (rises within the
        uncertainty at undetermined shifts not counted).
    """
    try:
        t = np.asarray(shifts.temperature_K, dtype=float).ravel()
        a = np.asarray(shifts.log10_aT, dtype=float).ravel()
    except AttributeError:
        raise bad_value("shifts", "a shift result with temperature_K and log10_aT",
                        type(shifts).__name__) from None
    if t.size != a.size:
        raise bad_value("shifts.log10_aT", f"one value per temperature ({t.size})",
                        f"{a.size} values")
    s = _array(shifts, "log10_aT_stderr", t.size, np.nan)
    undetermined = _low_information(shifts, t.size)
    order = np.argsort(t, kind="stable")
    t, a, s, undetermined = t[order], a[order], s[order], undetermined[order]
    violations: list[dict] = []
    uncounted: list[dict] = []
    significant = 0
    for k in range(t.size - 1):
        rise = a[k + 1] - a[k]
        if rise >= 0:
            se = math.hypot(s[k], s[k + 1]) if np.isfinite(s[k]) and np.isfinite(s[k + 1]) \
                else math.nan
            beyond = rise > MONOTONIC_SIGMA * se if math.isfinite(se) else rise > 0.01
            significant += bool(beyond)
            row = {"temperature_low_C": t[k] - 273.15, "temperature_high_C": t[k + 1] - 273.15,
                   "rise_decades": float(rise), "combined_stderr_decades": se,
                   "beyond_uncertainty": bool(beyond),
                   "undetermined": bool(undetermined[k] or undetermined[k + 1])}
            (violations if beyond or not row["undetermined"] else uncounted).append(row)
    details = {"unit": "pairs", "violations": violations, "uncounted_rises": uncounted}
    named = "; ".join(f"{v['temperature_low_C']:.4g} °C → {v['temperature_high_C']:.4g} °C "
                      f"(+{v['rise_decades']:.2g} decade)" for v in violations)
    if not violations:
        note = (f" {len(uncounted)} rise(s) within the uncertainty between isotherms whose "
                "shift the data do not determine (low-information, e.g. on a plateau) are not "
                "counted." if uncounted else "")
        return CheckResult("monotonic_shifts", "pass", 0.0, 0.0,
                           "log10 a_T falls steadily as the temperature rises, as it must."
                           + note, details)
    if len(violations) == t.size - 1 and t.size > 2:
        hint = (" It rises everywhere: the sign convention looks reversed (log10 a_T must be "
                "> 0 below the reference temperature).")
    else:
        hint = (" Check those isotherms for a wrong temperature, a poorly determined shift or "
                "a transition in the material.")
    status = "fail" if significant else "warn"
    lead = ("log10 a_T rises with temperature" if significant else
            "log10 a_T does not fall (within its uncertainty)")
    return CheckResult("monotonic_shifts", status, float(len(violations)), 0.0,
                       f"{lead} between {named}.{hint}", details)
