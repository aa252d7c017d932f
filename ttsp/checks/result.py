"""The verdict of one check (:class:`CheckResult`), and the grading every check shares.

A check measures one thing and returns a frozen :class:`CheckResult`: a name, a status
(``"pass"``, ``"warn"`` or ``"fail"``), the measured value, the threshold it was judged against,
one or two plain sentences and JSON-ready supporting numbers.
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

from .._arrays import to_plain
from .._validation import check_choice

__all__ = ["STATUSES", "CheckResult", "worst_status"]

STATUSES = ("pass", "warn", "fail")


def _json_ready(value):
    """JSON-ready copy with NaN and infinities as None."""
    return to_plain(value, nonfinite_as_none=True)


@dataclass(frozen=True)
class CheckResult:
    """The verdict of one check.

    Parameters
    ----------
    name : str
        Stable identifier of the check (``"kramers_kronig"``, ...).
    status : {"pass", "warn", "fail"}
        The verdict.
    value : float, str or None
        The measured value (units in ``details["unit"]`` and in the message).
    threshold : float, str or None
        What the value was judged against.
    message : str
        One or two plain sentences: what the result means and what to do.
    details : dict
        JSON-ready supporting numbers (per isotherm or per pair, named gaps, ...).

    Raises
    ------
    DataError
        If ``status`` is not one of :data:`STATUSES`.
    """

    name: str
    status: str
    value: float | str | None
    threshold: float | str | None
    message: str
    details: Mapping = field(default_factory=dict)

    def __post_init__(self):
        check_choice("status", self.status, STATUSES)
        for attr in ("value", "threshold"):
            v = getattr(self, attr)
            if v is not None and not isinstance(v, str):
                object.__setattr__(self, attr, _json_ready(float(v)))
        object.__setattr__(self, "details", MappingProxyType(_json_ready(dict(self.details))))

    @property
    def passed(self) -> bool:
        return self.status == "pass"

    def to_dict(self) -> dict:
        """JSON-ready: name, status, value, threshold, message, details."""
        return {"name": self.name, "status": self.status, "value": self.value,
                "threshold": self.threshold, "message": self.message,
                "details": _json_ready(dict(self.details))}

    def _repr_html_(self) -> str:
        colour = {"pass": "#1a7f37", "warn": "#9a6700", "fail": "#cf222e"}[self.status]
        return (f"<table><tr><td><b style='color:{colour}'>{self.status}</b></td>"
                f"<td>{html.escape(self.name)}</td><td>value {html.escape(_short(self.value))}</td>"
                f"<td>threshold {html.escape(_short(self.threshold))}</td></tr>"
                f"<tr><td colspan='4'>{html.escape(self.message)}</td></tr></table>")


def _short(value) -> str:
    """A value as a person reads it: four significant digits for numbers."""
    return f"{value:.4g}" if isinstance(value, float) else str(value)


def worst_status(results) -> str:
    """The worst status among check results (``"pass"`` for none)."""
    rank = {s: i for i, s in enumerate(STATUSES)}
    return max((r.status for r in results), key=rank.__getitem__, default="pass")


def _grade(value: float, warn: float, fail: float) -> str:
    """"pass" up to ``warn``, "warn" up to ``fail``, "fail" above (NaN: warn)."""
    if not math.isfinite(value):
        return "warn"
    return "pass" if value <= warn else ("warn" if value <= fail else "fail")


def _fmt_C(temperature_K: float) -> str:
    return f"{temperature_K - 273.15:.4g} °C"
