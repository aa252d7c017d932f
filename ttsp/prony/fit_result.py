"""The result of a Prony fit (:class:`PronyFit`) and its assembly from the solved problem.

Both fits (:mod:`ttsp.prony.fit_frequency`, :mod:`ttsp.prony.fit_time`) end here: residuals
per quantity (%, relative), rms and largest deviation, the coefficients with their linearised
standard errors (from the weighted design at the solution: the usual least-squares covariance
of the non-zero coefficients, Lawson & Hanson, *Solving Least Squares Problems*, 1974), and the
plateau verdicts (:mod:`ttsp.prony.plateaus`), emitted as :class:`FitQualityWarning`. The
fit keeps the result contract of :mod:`ttsp.result_contract`.

Imports numpy only (pandas lazily inside ``to_frame``).
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np

from .._arrays import readonly as _readonly
from .._arrays import to_plain as _plain
from ..exceptions import FitQualityWarning
from ..result_contract import ResultContract, none_as_nan
from .nnls import LinearProblem
from .series import PronySeries

__all__ = ["PronyFit", "assemble_fit", "frozen_map", "QUANTITY_SYMBOL"]

QUANTITY_SYMBOL = {"storage_modulus": "E'", "loss_modulus": "E''",
                   "relaxation_modulus": "E(t)", "creep_compliance": "D(t)"}

#: Where the plateau warnings point: the caller of ``fit_prony_frequency``/``fit_prony_time``
#: (user -> public fit -> its steps -> :func:`assemble_fit`).
_WARN_STACKLEVEL = 4


@dataclass(frozen=True, eq=False)
class PronyFit(ResultContract):
    """Result of a non-negative Prony fit (frozen): the series, its quality and its verdicts.

    Attributes
    ----------
    series : PronySeries
        The fitted relaxation series (zero terms dropped), carrying the valid reduced-time
        range and the fit rms/max deviations.
    domain : {"frequency", "time"}
        Kind of data fitted.
    quantities : tuple of str
        Fitted quantities, e.g. ``("storage_modulus", "loss_modulus")``.
    x : numpy.ndarray
        Abscissa of the data: reduced angular frequency (rad/s) or reduced time (s).
    measured, fitted, residuals_percent : mapping of str to numpy.ndarray
        Per quantity: the data, the fitted model at the data, and 100·(fitted/measured − 1).
    rms_percent, max_percent : float
        Root-mean-square and largest absolute relative deviation (%) over all fitted points.
    rms_percent_by_quantity : mapping of str to float
        The rms deviation (%) of each quantity.
    reaches_glassy_plateau, reaches_rubbery_plateau : bool
        Whether the local log-log slope of the fitted curve at the short-time (high-frequency)
        and long-time (low-frequency) end of the data is within ``plateau_slope``.
    reaches_terminal_zone : bool
        Whether the long-time end reaches terminal flow instead (E' ∝ ω² or fast decay).
    notes : tuple of str
        The doubts about the fit (also emitted as :class:`FitQualityWarning`); ``warnings`` is
        the same tuple under its former name.
    candidate_tau_s : numpy.ndarray
        The full grid of relaxation times offered to the solver (s).
    params, stderr : mapping of str to float
        Fitted coefficients (Pa) and their standard errors: for the fixed columns (E_∞, D_g,
        the fluidity) the larger half-width of the profile interval at Δχ² = 1, the other
        coefficients refitted non-negative (defined at the bound 0 too); for the terms the
        linearised one (NaN where not finite).
    settings : mapping
        The options of the fit.
    creep : object or None
        For ``quantity="creep_compliance"``: the fitted retardation series.
    success : bool, message : str
        The non-negative least-squares solve returned (always True for a fit that exists),
        and one line saying how many terms it kept.

    The fit keeps the result contract (:mod:`ttsp.result_contract`); ``to_frame`` is the
    table of the fitted data.
    """

    series: PronySeries
    domain: str
    quantities: tuple
    x: np.ndarray
    measured: Mapping
    fitted: Mapping
    residuals_percent: Mapping
    rms_percent: float
    max_percent: float
    rms_percent_by_quantity: Mapping
    reaches_glassy_plateau: bool
    reaches_rubbery_plateau: bool
    reaches_terminal_zone: bool
    notes: tuple
    candidate_tau_s: np.ndarray
    params: Mapping
    stderr: Mapping
    settings: Mapping
    creep: Any = None
    success: bool = True
    message: str = ""

    @property
    def warnings(self) -> tuple:
        """The notes under their former name (read-only)."""
        return self.notes

    @property
    def x_name(self) -> str:
        """Column name of the abscissa: ``omega_rad_s`` or ``time_s``."""
        return "omega_rad_s" if self.domain == "frequency" else "time_s"

    @property
    def n_terms(self) -> int:
        """Number of non-zero terms in the fitted series."""
        return self.series.n_terms

    def to_dict(self) -> dict:
        """JSON-ready summary (no data arrays; see :meth:`to_frame` for those)."""
        return _plain({
            "series": self.series.to_dict(),
            "domain": self.domain,
            "quantities": list(self.quantities),
            "n_points": int(self.x.size),
            "n_terms": self.n_terms,
            "n_candidate_terms": int(self.candidate_tau_s.size),
            "rms_percent": self.rms_percent,
            "max_percent": self.max_percent,
            "rms_percent_by_quantity": dict(self.rms_percent_by_quantity),
            "reaches_glassy_plateau": self.reaches_glassy_plateau,
            "reaches_rubbery_plateau": self.reaches_rubbery_plateau,
            "reaches_terminal_zone": self.reaches_terminal_zone,
            "warnings": list(self.notes),
            "params": dict(self.params),
            "stderr": _plain(dict(self.stderr), nonfinite_as_none=True),
            "settings": dict(self.settings),
            "success": bool(self.success),
            "message": self.message,
        })

    @classmethod
    def from_dict(cls, data: Mapping) -> PronyFit:
        """Rebuild a fit from :meth:`to_dict` output.

        The series, verdicts, figures, params, stderr (None read as NaN), settings and notes
        come back; the data (``x``, ``measured``, ``fitted``, ``residuals_percent``) and the
        candidate grid are not in the dict and come back empty, the creep series as None.
        """
        quantities = tuple(data.get("quantities") or ())
        empty = {q: _readonly(np.empty(0)) for q in quantities}
        return cls(series=PronySeries.from_dict(data["series"]), domain=str(data["domain"]),
                   quantities=quantities, x=_readonly(np.empty(0)), measured=frozen_map(empty),
                   fitted=frozen_map(empty), residuals_percent=frozen_map(empty),
                   rms_percent=float(data["rms_percent"]), max_percent=float(data["max_percent"]),
                   rms_percent_by_quantity=frozen_map(dict(data.get("rms_percent_by_quantity")
                                                           or {})),
                   reaches_glassy_plateau=bool(data.get("reaches_glassy_plateau")),
                   reaches_rubbery_plateau=bool(data.get("reaches_rubbery_plateau")),
                   reaches_terminal_zone=bool(data.get("reaches_terminal_zone")),
                   notes=tuple(data.get("notes", data.get("warnings")) or ()),
                   candidate_tau_s=_readonly(np.empty(0)),
                   params=frozen_map({k: float(v) for k, v in (data.get("params") or {}).items()}),
                   stderr=frozen_map(none_as_nan(data.get("stderr"))),
                   settings=frozen_map(dict(data.get("settings") or {})),
                   success=bool(data.get("success", True)), message=str(data.get("message", "")))

    def to_frame(self):
        """Tidy table of the fitted data: abscissa, quantity, measured, fitted, residual_percent."""
        import pandas as pd

        parts = [pd.DataFrame({self.x_name: self.x, "quantity": q,
                               "measured": self.measured[q], "fitted": self.fitted[q],
                               "residual_percent": self.residuals_percent[q]})
                 for q in self.quantities]
        return pd.concat(parts, ignore_index=True)

    def _html_caption(self) -> str:
        return "Prony fit"

    def _html_rows(self) -> list[tuple[str, str]]:
        rng = self.series.valid_reduced_time_range_s
        rows = [("data", f"{self.domain}, {self.x.size} points"),
                ("terms", f"{self.n_terms} of {self.candidate_tau_s.size} non-zero")]
        if rng is not None:
            rows.append(("valid reduced time", f"{rng[0]:.6g} – {rng[1]:.6g} s"))
        rows.append(("plateaus", f"glassy {'reached' if self.reaches_glassy_plateau else 'not reached'}"
                                 f", rubbery {'reached' if self.reaches_rubbery_plateau else 'not reached'}"))
        rows += [(f"{QUANTITY_SYMBOL.get(q, q)} rms / max (%)",
                  f"{self.rms_percent_by_quantity[q]:.3g} / "
                  f"{np.max(np.abs(self.residuals_percent[q]), initial=0.0):.3g}")
                 for q in self.quantities]
        return rows


def frozen_map(d: dict) -> Mapping:
    """A read-only view of ``d`` whose array values are read-only too."""
    return MappingProxyType({k: (_readonly(v) if isinstance(v, np.ndarray) else v)
                             for k, v in d.items()})


def assemble_fit(problem: LinearProblem, x: np.ndarray, tau: np.ndarray, *, domain, quantities,
                 abscissa, blocks, fixed_names, term_name, series, settings,
                 verdicts: Callable, creep=None) -> PronyFit:
    """Assemble the frozen result: residuals, rms/max, params/stderr, plateau verdicts.

    ``blocks`` are the row slices of each quantity in the stacked problem; ``fixed_names``
    name the fixed columns, ``term_name`` (a format with one field) the non-zero terms;
    ``verdicts`` returns the plateau verdicts and their messages, which are warned here.
    """
    fitted_all = problem.model(x)
    rel_all = 100.0 * (fitted_all / problem.measured - 1.0)
    measured, fitted, resid, rms_by = _per_quantity(problem, fitted_all, rel_all, quantities,
                                                    blocks)
    rms = float(np.sqrt(np.mean(rel_all ** 2)))
    mx = float(np.max(np.abs(rel_all)))
    series = series.replace(fit_rms_percent=rms, fit_max_percent=mx)
    params, stderr = _params_and_stderr(problem, x, fixed_names, term_name)
    glassy, rubbery, terminal, msgs = verdicts()
    for m in msgs:
        warnings.warn(m, FitQualityWarning, stacklevel=_WARN_STACKLEVEL)
    return PronyFit(series=series, domain=domain, quantities=tuple(quantities),
                    x=_readonly(abscissa), measured=frozen_map(measured),
                    fitted=frozen_map(fitted), residuals_percent=frozen_map(resid),
                    rms_percent=rms, max_percent=mx, rms_percent_by_quantity=frozen_map(rms_by),
                    reaches_glassy_plateau=glassy, reaches_rubbery_plateau=rubbery,
                    reaches_terminal_zone=terminal, notes=tuple(msgs),
                    candidate_tau_s=_readonly(tau), params=frozen_map(params),
                    stderr=frozen_map(stderr), settings=frozen_map(_plain(settings)),
                    creep=creep, message=f"non-negative least squares: {series.n_terms} of "
                                         f"{tau.size} candidate terms non-zero")


def _per_quantity(problem: LinearProblem, fitted_all: np.ndarray, rel_all: np.ndarray,
                  quantities, blocks) -> tuple[dict, dict, dict, dict]:
    """Measured, fitted, residuals (%) and rms (%) of each quantity's block of rows."""
    measured, fitted, resid, rms_by = {}, {}, {}, {}
    for q, sl in zip(quantities, blocks, strict=True):
        measured[q] = problem.measured[sl]
        fitted[q] = fitted_all[sl]
        resid[q] = rel_all[sl]
        rms_by[q] = float(np.sqrt(np.mean(rel_all[sl] ** 2)))
    return measured, fitted, resid, rms_by


def _params_and_stderr(problem: LinearProblem, x: np.ndarray, fixed_names,
                       term_name: str) -> tuple[dict, dict]:
    """The fixed columns and the non-zero terms as plain floats, with their standard errors.

    A fixed column (E_∞, D_g, the fluidity) reports the larger half-width of its profile
    interval (:meth:`LinearProblem.profile_interval`), defined at the bound 0 too: with data
    short of the plateau the linearised error on the non-zero terms alone misses the slow
    terms that trade with E_∞ (on the benchmark campaigns E_∞ fell within it 57 % of the time
    and within two of it 78 %, against 73 % and 97 % for the profile; docs/methods.md §4.2).
    A term reports its linearised standard error (NaN where not finite).
    """
    err = problem.stderr(x)
    nf = problem.n_fixed
    params, stderr = {}, {}
    for k, name in enumerate(fixed_names):
        params[name] = float(x[k])
        low, high = problem.profile_interval(x, k)
        half = max(high - x[k], x[k] - low)
        stderr[name] = float(half) if np.isfinite(half) else float("nan")
    keep = np.flatnonzero(x[nf:] > 0) + nf
    for i, j in enumerate(keep, start=1):
        params[term_name.format(i)] = float(x[j])
        stderr[term_name.format(i)] = float(err[j]) if np.isfinite(err[j]) else float("nan")
    return params, stderr
