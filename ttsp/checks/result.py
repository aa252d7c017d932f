"""The verdict of one check (:class:`CheckResult`), and the grading every check shares.

A check measures one thing and returns a frozen :class:`CheckResult`: a name, a status
(``"pass"``, ``"warn"`` or ``"fail"``), the measured value, the threshold it was judged against,
one or two plain sentences and JSON-ready supporting numbers. It keeps the result contract of
:mod:`ttsp.result_contract`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

from .._arrays import to_plain
from .._validation import check_choice
from ..result_contract import ResultContract, format_number

__all__ = ["STATUSES", "CheckResult", "worst_status"]

STATUSES = ("pass", "warn", "fail")


def _json_ready(value):
    """JSON-ready copy with NaN and infinities as None."""
    return to_plain(value, nonfinite_as_none=True)


@dataclass(frozen=True)
class CheckResult(ResultContract):
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

    The result contract (:mod:`ttsp.result_contract`): ``params`` holds the measured
    ``value`` (NaN when there is none; text as it is), its ``stderr`` is NaN; ``success`` is
    False for a ``"fail"``; ``notes`` holds the message unless the check passed.
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

    @property
    def params(self) -> dict:
        """``{"value": the measured value}``: a float (NaN when there is none) or text."""
        value = self.value
        return {"value": value if isinstance(value, str)
                else (math.nan if value is None else float(value))}

    @property
    def stderr(self) -> dict:
        """``{"value": NaN}``: a check does not estimate the uncertainty of its value."""
        return {"value": math.nan}

    @property
    def notes(self) -> tuple:
        """The message as the one doubt, unless the check passed."""
        return () if self.passed else (self.message,)

    @property
    def success(self) -> bool:
        """False when the check failed."""
        return self.status != "fail"

    def to_dict(self) -> dict:
        """JSON-ready: name, status, value, threshold, message, details."""
        return {"name": self.name, "status": self.status, "value": self.value,
                "threshold": self.threshold, "message": self.message,
                "details": _json_ready(dict(self.details))}

    @classmethod
    def from_dict(cls, data: Mapping) -> CheckResult:
        """Rebuild a check result from :meth:`to_dict` output (or an entry of a summary's
        ``checks``)."""
        return cls(name=str(data["name"]), status=str(data["status"]), value=data.get("value"),
                   threshold=data.get("threshold"), message=str(data.get("message", "")),
                   details=dict(data.get("details") or {}))

    def _html_caption(self) -> str:
        return f"check {self.name}: {self.status}"

    def _html_rows(self) -> list[tuple[str, str]]:
        return [("threshold", format_number(self.threshold))]


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
