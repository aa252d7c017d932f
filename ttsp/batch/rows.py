"""One row of a batch's results table: a finished build read from its ``summary.json``, or a
campaign that failed with its one-line error.

Layer 5 (a shell). The columns are listed in the package docstring (:mod:`ttsp.batch`).
"""

from __future__ import annotations

from ..exceptions import TtspError

__all__ = ["HEAD_COLUMNS", "TAIL_COLUMNS", "error_text", "failed_row", "row_from_summary"]

#: the first columns of every row, in this order (the law's parameters follow them)
HEAD_COLUMNS = ("id", "status", "error", "skipped", "path", "input_sha256", "domain",
                "modulus_kind", "isotherms", "reference_temperature_C", "law_model")
#: the last columns of every row, in this order
TAIL_COLUMNS = ("prony_terms", "prony_rms_percent", "master_curve", "collapse_ratio",
                "cv_median_rms_percent_at_law_aT", "cv_worst_rms_percent_at_law_aT",
                "cv_median_rms_percent_at_best_aT", "checks_worst", "checks_failed",
                "checks_warned", "warnings", "elapsed_s")
_CHECK_ORDER = {"pass": 0, "warn": 1, "fail": 2}

#: law parameters that are absolute temperatures in K (summary.json); °C in the results table
_ABSOLUTE_TEMPERATURE_PARAMETERS = ("glass_transition_K", "T_inf_K")


def error_text(exc: BaseException) -> str:
    """One line saying what went wrong, as the command line would say it."""
    if isinstance(exc, TtspError):
        text = str(exc)
    elif isinstance(exc, OSError) and getattr(exc, "filename", None):
        text = f"{exc.filename}: {exc.strerror or exc}"
    elif hasattr(exc, "format_message"):
        text = exc.format_message()  # a usage error of the command-line framework
    else:
        text = f"internal error ({type(exc).__name__}: {exc}); please report it"
    lines = [ln.strip() for ln in str(text).splitlines() if ln.strip()]
    return lines[0] if lines else type(exc).__name__


def failed_row(payload: dict, error: str, elapsed_s: float | None = None) -> dict:
    """The row of a campaign that could not be built: ``status`` failed, ``error`` the reason."""
    row = dict.fromkeys(HEAD_COLUMNS + TAIL_COLUMNS)
    row.update(id=payload["id"], status="failed", error=error, skipped=False,
               path=payload["path"], input_sha256=payload.get("input_sha256"),
               elapsed_s=elapsed_s)
    return row


def _law_columns(law: dict) -> dict:
    """``law_<parameter>`` and ``law_<parameter>_stderr`` for each parameter of the law."""
    columns = {}
    stderr = law.get("parameter_stderr") or {}
    for name, value in (law.get("parameters") or {}).items():
        se = stderr.get(name)
        if name in _ABSOLUTE_TEMPERATURE_PARAMETERS and isinstance(value, (int, float)):
            # one temperature unit in the table: absolute temperatures in °C (a stderr, a
            # difference, is the same in K and °C); C2_K and B_K are differences and stay K
            name, value = name[:-2] + "_C", value - 273.15
        columns[f"law_{name}"] = value
        columns[f"law_{name}_stderr"] = se
    return columns


def _tail_columns(summary: dict) -> dict:
    """The Prony series, master-curve model, cross-validation, checks and warnings columns."""
    prony = summary.get("prony") or {}
    checks = summary.get("checks") or []
    statuses = [c.get("status") for c in checks]
    master = summary.get("master_model") or {}
    cv = summary.get("cross_validation") or {}
    return dict(
        prony_terms=len(prony.get("terms") or []),
        prony_rms_percent=prony.get("fit_rms_percent"),
        master_curve=master.get("chosen"),
        collapse_ratio=master.get("collapse_ratio"),
        cv_median_rms_percent_at_law_aT=cv.get("median_rms_percent_at_law_aT"),
        cv_worst_rms_percent_at_law_aT=cv.get("worst_rms_percent_at_law_aT"),
        cv_median_rms_percent_at_best_aT=cv.get("median_rms_percent_at_best_aT"),
        checks_worst=max(statuses, key=lambda s: _CHECK_ORDER.get(s, -1)) if statuses else None,
        checks_failed=";".join(c["name"] for c in checks if c.get("status") == "fail"),
        checks_warned=";".join(c["name"] for c in checks if c.get("status") == "warn"),
        warnings=len(summary.get("warnings") or []))


def row_from_summary(payload: dict, summary: dict, *, skipped: bool, elapsed_s: float) -> dict:
    """The results-table row of a finished build, from its ``summary.json``."""
    row = dict.fromkeys(HEAD_COLUMNS)
    row.update(id=payload["id"], status="ok", error="", skipped=skipped, path=payload["path"],
               input_sha256=summary.get("input_sha256"), domain=summary.get("domain"),
               modulus_kind=summary.get("modulus_kind"),
               isotherms=len(summary.get("shift_factors") or []),
               reference_temperature_C=summary.get("reference_temperature_C"))
    law = summary.get("shift_law") or {}
    row["law_model"] = law.get("model")
    row.update(_law_columns(law))
    row.update(_tail_columns(summary), elapsed_s=elapsed_s)
    return row
