"""The one contract every fit and result of ttsp keeps, and the one HTML table they render with.

Every result type (:class:`~ttsp.shifting.ShiftResult`, :class:`~ttsp.laws.ShiftLawFit`,
:class:`~ttsp.prony.PronyFit`, :class:`~ttsp.checks.CheckResult`,
:class:`~ttsp.spectrum.RelaxationSpectrum`, :class:`~ttsp.closed_forms.ClosedFormFit`,
:class:`~ttsp.crossval.CrossValidation`, :class:`~ttsp.build_result.BuildResult`) offers:

``params``
    name -> value of what was determined;
``stderr``
    the same keys -> standard error as a float, NaN where it is not known (never None);
``notes``
    tuple of str: the doubts about the result (empty when there are none);
``success``, ``message``
    whether the computation did what it was asked (bool) and one line saying how it went;
``to_dict()`` / ``from_dict()``
    a JSON-ready dict (NaN written as None) and the result rebuilt from it: ``params``,
    ``stderr``, ``notes`` and ``success`` come back equal; data arrays a dict does not hold
    come back empty (each type's ``from_dict`` says which);
``params_frame()``
    one row per parameter: ``parameter``, ``value``, ``stderr`` (pandas);
``to_frame()``
    the type's own table (its data, its shift table, ...); the parameter table where the
    type has no other;
``_repr_html_()``
    the notebook view, drawn by :func:`result_table_html` for every type.

The mixin :class:`ResultContract` supplies ``params_frame``, ``to_frame`` and ``_repr_html_``;
each type defines its own ``params``, ``stderr``, ``notes``, ``success``, ``message``,
``to_dict``, ``from_dict`` and the two hooks the table reads (:meth:`ResultContract._html_caption`
and :meth:`ResultContract._html_rows`).
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Mapping
from typing import Any

__all__ = ["ResultContract", "result_table_html", "stderr_or_nan", "none_as_nan",
           "format_number"]


def stderr_or_nan(value: Any) -> float:
    """A standard error as a float: NaN for None (not known) or anything not finite."""
    if value is None:
        return math.nan
    v = float(value)
    return v if math.isfinite(v) else math.nan


def none_as_nan(mapping: Mapping | None) -> dict:
    """``{name: float}`` from a JSON mapping whose unknown numbers were written as None."""
    return {str(k): stderr_or_nan(v) for k, v in (mapping or {}).items()}


def format_number(value: Any) -> str:
    """A parameter value or stderr as a person reads it: 6 significant digits, "nan" for
    NaN or None, text unchanged."""
    if isinstance(value, str):
        return value
    if value is None:
        return "nan"
    v = float(value)
    return f"{v:.6g}" if math.isfinite(v) else "nan"


def result_table_html(caption: str, summary_rows: Iterable[tuple[str, str]],
                      params: Mapping, stderr: Mapping, notes: Iterable[str],
                      success: bool, message: str) -> str:
    """The HTML table of a result: its caption, how it went (``success``, ``message``), the
    summary rows (name, text), one row per parameter (name, value, stderr) and the notes.

    Every piece of text is escaped here; the callers pass plain text.
    """
    def row(name: str, text: str) -> str:
        return (f"<tr><th style='text-align:left'>{html.escape(name)}</th>"
                f"<td colspan='2' style='text-align:left'>{html.escape(text)}</td></tr>")

    status = ("done" if success else "failed") + (f": {message}" if message else "")
    body = [row("status", status)] + [row(k, v) for k, v in summary_rows]
    if params:
        body.append("<tr><th style='text-align:left'>parameter</th><th>value</th>"
                    "<th>stderr</th></tr>")
        body += [f"<tr><td>{html.escape(str(k))}</td><td>{html.escape(format_number(v))}</td>"
                 f"<td>{html.escape(format_number(stderr.get(k)))}</td></tr>"
                 for k, v in params.items()]
    notes_html = "".join(f"<li>{html.escape(n)}</li>" for n in notes)
    return (f"<div><table><caption style='text-align:left'><b>{html.escape(caption)}</b>"
            f"</caption>{''.join(body)}</table>"
            + (f"<ul>{notes_html}</ul>" if notes_html else "") + "</div>")


class ResultContract:
    """Mixin of the shared part of the result contract (see the module notes).

    A subclass defines ``params``, ``stderr``, ``notes``, ``success``, ``message``,
    ``to_dict``, ``from_dict``, :meth:`_html_caption` and :meth:`_html_rows`. The mixin holds
    no fields and no properties of those names (a dataclass would read an inherited property
    as a field default).
    """

    __slots__ = ()

    def params_frame(self):
        """One row per parameter: ``parameter``, ``value``, ``stderr`` (NaN when not known)."""
        import pandas as pd

        params, stderr = self.params, self.stderr  # type: ignore[attr-defined]
        return pd.DataFrame({"parameter": list(params),
                             "value": list(params.values()),
                             "stderr": [stderr_or_nan(stderr.get(k)) for k in params]})

    def to_frame(self):
        """The parameter table (:meth:`params_frame`); types with data of their own
        override this with their table."""
        return self.params_frame()

    def _html_caption(self) -> str:
        """The title of the notebook table."""
        return type(self).__name__

    def _html_rows(self) -> list[tuple[str, str]]:
        """The summary rows (name, plain text) of the notebook table, above the parameters."""
        return []

    def _repr_html_(self) -> str:
        return result_table_html(self._html_caption(), self._html_rows(),
                                 self.params, self.stderr,  # type: ignore[attr-defined]
                                 self.notes, self.success,  # type: ignore[attr-defined]
                                 self.message)  # type: ignore[attr-defined]
