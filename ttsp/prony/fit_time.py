"""Fit of a Prony series to a time master curve E(t) or D(t), in named steps.

Check the options and the data, lay the relaxation (or retardation) time grid, build the
weighted linear problem, solve it by non-negative least squares (with optional pruning), turn
the solution into the relaxation series (for creep data by the exact conversion of
:mod:`ttsp.prony.exact_conversion`) and assemble the result (:mod:`ttsp.prony.fit_result`).
The equations are in :func:`fit_prony_time`.

Imports numpy only (scipy inside the solver).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import partial

import numpy as np
from numpy.typing import ArrayLike

from .._validation import bad_value, check_choice, check_positive
from ..exceptions import FitError
from .creep_series import CreepSeries
from .exact_conversion import creep_to_relaxation
from .fit_result import PronyFit, assemble_fit
from .fit_steps import FitOptions, nonzero_terms, refuse_all_zero
from .nnls import (
    LinearProblem,
    log_grid,
    measured_values,
    positive_abscissa,
    relative_weights,
    relaxation_time_grid,
    solve_with_pruning,
)
from .plateaus import time_verdicts
from .series import PronySeries

__all__ = ["fit_prony_time"]

_TIME_QUANTITIES = ("relaxation_modulus", "creep_compliance")


def fit_prony_time(time_s: ArrayLike, values, *, quantity: str = "relaxation_modulus",
                   terms_per_decade: float = 2.0, margin_decades: float = 1.0,
                   short_time_margin_decades: float = 0.25, relative: bool = True,
                   equilibrium_modulus_Pa: float | None = None, fluid: bool = False,
                   tau_s: ArrayLike | None = None, prune_tolerance_percent: float | None = None,
                   plateau_slope: float = 0.05, modulus_kind: str = "tensile",
                   reference_temperature_K: float | None = None) -> PronyFit:
    """Fit a non-negative Prony series to a time master curve E(t) or D(t).

    ``quantity="relaxation_modulus"``: with τ_i fixed on a log-spaced grid from
    t_min/10^short_time_margin_decades to t_max·10^margin_decades, E(t_j) = E_∞ + Σ E_i exp(−t_j/τ_i) is linear
    in (E_∞, E_i) and is solved by non-negative least squares with relative residuals
    (Lawson & Hanson 1974; docs/methods.md §4.2).

    ``quantity="creep_compliance"``: a retardation series
    D(t) = D_g + Σ D_j (1 − exp(−t/λ_j)) [+ φ t if ``fluid``], all coefficients ≥ 0, is fitted
    the same way on a log-spaced λ grid, then converted exactly into the relaxation series by
    :func:`ttsp.interconvert.creep_to_relaxation` (docs/methods.md §5.1-5.2; Tschoegl 1989, ch. 4).
    The fitted creep series is kept in ``PronyFit.creep``.

    Parameters
    ----------
    time_s : array_like
        Reduced times t/a_T (s), > 0.
    values : array_like
        E(t) (Pa) or D(t) (1/Pa) at ``time_s``; > 0 when ``relative``.
    quantity : {"relaxation_modulus", "creep_compliance"}
        What ``values`` are.
    terms_per_decade, relative, tau_s, prune_tolerance_percent, plateau_slope
        As for :func:`fit_prony_frequency` (``tau_s`` are the retardation times for creep).
    margin_decades : float
        Extension of the grid beyond the longest time (decades), default 1.
    short_time_margin_decades : float
        Extension of the grid below the shortest time (decades), default 0.25. A term with
        τ well below t_min is not determined by the data, since exp(−t_min/τ) vanishes,
        and only adds arbitrary stiffness to E_0 (docs/methods.md §4.4): with a full decade of
        margin, 2 % noise made E_0 several times too large in trials.
    equilibrium_modulus_Pa : float, optional
        Fix E_∞ (Pa) of a relaxation fit instead of fitting it (relaxation data only).
    fluid : bool
        Creep data only: add a steady-flow term φ·t (φ = 1/η0 ≥ 0, 1/(Pa·s)) for a liquid.
    modulus_kind : {"tensile", "shear"}
        Which modulus (or compliance) the data are.
    reference_temperature_K : float, optional
        Reference temperature of the master curve (K), stored in the series.

    Returns
    -------
    PronyFit
        With the valid reduced time range [t_min, t_max]; residuals are those of the fitted
        quantity.

    Raises
    ------
    DataError
        If an input breaks its rule.
    FitError
        If the solver fails or the fit finds no glassy compliance.

    Warns
    -----
    FitQualityWarning
        When an end of the data does not reach its plateau (that end is extrapolated).
    """
    check_choice("quantity", quantity, _TIME_QUANTITIES)
    options = FitOptions.checked(terms_per_decade, margin_decades, relative, tau_s,
                                 prune_tolerance_percent, plateau_slope, modulus_kind,
                                 reference_temperature_K)
    data = _time_data(time_s, values, quantity, options.relative, equilibrium_modulus_Pa,
                      fluid, short_time_margin_decades)
    return _fit(data, options)


@dataclass(frozen=True, eq=False)
class _TimeData:
    """The checked data of a time fit: t (s), the values (E in Pa or D in 1/Pa), what they
    are, the fixed E_∞ (Pa) or None, the flow term's presence and the short-time margin
    (decades)."""

    time_s: np.ndarray
    values: np.ndarray
    quantity: str
    fixed_equilibrium_Pa: float | None
    fluid: bool
    short_time_margin_decades: float

    @property
    def creep(self) -> bool:
        return self.quantity == "creep_compliance"

    @property
    def time_range_s(self) -> tuple[float, float]:
        return float(self.time_s.min()), float(self.time_s.max())


def _time_data(time_s, values, quantity: str, relative: bool, equilibrium_modulus_Pa, fluid,
               short_time_margin_decades) -> _TimeData:
    """Check the data and the options that depend on the quantity (E_∞ fixed for relaxation
    only, a flow term for creep only)."""
    t = positive_abscissa("time_s", time_s)
    creep = quantity == "creep_compliance"
    y = measured_values("values", values, t.size, relative)
    e_fixed = None
    if equilibrium_modulus_Pa is not None:
        if creep:
            raise bad_value("equilibrium_modulus_Pa", "None for creep-compliance data",
                            equilibrium_modulus_Pa)
        e_fixed = check_positive("equilibrium_modulus_Pa", equilibrium_modulus_Pa,
                                 allow_zero=True)
    if fluid and not creep:
        raise bad_value("fluid", "False for relaxation-modulus data (a liquid has E_inf = 0: "
                        "pass equilibrium_modulus_Pa=0)", fluid)
    short = check_positive("short_time_margin_decades", short_time_margin_decades,
                           allow_zero=True)
    return _TimeData(t, y, quantity, e_fixed, fluid, short)


def _fit(data: _TimeData, options: FitOptions) -> PronyFit:
    """Grid, problem, solution, series and result of a checked time fit."""
    t = data.time_s
    tau = _time_grid(data, options)
    design, fixed_names, term_name = _design(data, tau)
    offset = np.full(t.size, data.fixed_equilibrium_Pa
                     if data.fixed_equilibrium_Pa is not None else 0.0)
    problem = LinearProblem(design, data.values, relative_weights(data.values, options.relative),
                            offset, n_fixed=len(fixed_names))
    x, removed = solve_with_pruning(problem, options.prune_tolerance_percent)
    _refuse_empty(x, problem.n_fixed, data)
    settings = _settings(data, options, removed)
    coef, times = nonzero_terms(x, tau, problem.n_fixed)
    series, creep, level, rate = _series(x, coef, times, data, options, settings)
    verdicts = partial(time_verdicts, level, rate, coef, times, *data.time_range_s,
                       options.plateau_slope, data.creep, options.modulus_kind)
    return assemble_fit(problem, x, tau, domain="time", quantities=[data.quantity], abscissa=t,
                        blocks=[slice(0, t.size)], fixed_names=fixed_names,
                        term_name=term_name, series=series, settings=settings,
                        verdicts=verdicts, creep=creep)


def _time_grid(data: _TimeData, options: FitOptions) -> np.ndarray:
    """τ (s) from t_min/10^short_time_margin_decades to t_max·10^margin_decades, or the
    user's times."""
    tmin, tmax = data.time_range_s
    if options.tau_s is None:
        return log_grid(math.log10(tmin) - data.short_time_margin_decades,
                        math.log10(tmax) + float(options.margin_decades),
                        float(options.terms_per_decade))
    return relaxation_time_grid(options.tau_s, tmin, tmax, options.terms_per_decade,
                                options.margin_decades)


def _design(data: _TimeData, tau: np.ndarray) -> tuple[np.ndarray, list[str], str]:
    """The design matrix (fixed columns first), the fixed columns' names and the terms' name.

    Relaxation: e^{−t/τ_i}, with a column of ones for a free E_∞. Creep: 1 − e^{−t/λ_j},
    with a column of ones for D_g and a column t for the fluidity φ of a liquid.
    """
    t = data.time_s
    e = np.exp(-t[:, None] / tau[None, :])
    fixed_cols = []
    if data.creep:
        a = 1.0 - e
        fixed_cols.append(np.ones(t.size))
        fixed_names = ["glassy_compliance_1_per_Pa"]
        if data.fluid:
            fixed_cols.append(t)
            fixed_names.append("fluidity_1_per_Pa_s")
        term_name = "compliance_{}_1_per_Pa"
    else:
        a = e
        fixed_names = []
        if data.fixed_equilibrium_Pa is None:
            fixed_cols.append(np.ones(t.size))
            fixed_names = ["equilibrium_modulus_Pa"]
        term_name = "modulus_{}_Pa"
    if fixed_cols:
        a = np.hstack([np.column_stack(fixed_cols), a])
    return a, fixed_names, term_name


def _refuse_empty(x: np.ndarray, n_fixed: int, data: _TimeData) -> None:
    """A creep fit needs D_g > 0 (else E_0 is unbounded); a relaxation fit a non-zero term."""
    if data.creep and not x[0] > 0:
        raise FitError("the creep fit found no instantaneous compliance (D_g = 0), so the "
                       "glassy modulus is unbounded; the data must start at shorter times")
    if not data.creep:
        refuse_all_zero(x, n_fixed, data.fixed_equilibrium_Pa)


def _settings(data: _TimeData, options: FitOptions, removed: int) -> dict:
    """The options of the fit, for the provenance and ``PronyFit.settings``."""
    return dict(quantity=data.quantity, terms_per_decade=options.terms_per_decade,
                margin_decades=options.margin_decades,
                short_time_margin_decades=data.short_time_margin_decades,
                relative=options.relative,
                equilibrium_fixed=data.fixed_equilibrium_Pa is not None,
                fluid=bool(data.fluid), user_tau=options.tau_s is not None,
                prune_tolerance_percent=options.prune_tolerance_percent, pruned_terms=removed,
                plateau_slope=options.plateau_slope, solver="scipy.optimize.nnls")


def _series(x: np.ndarray, coef: np.ndarray, times: np.ndarray, data: _TimeData,
            options: FitOptions, settings: dict):
    """The relaxation series, the fitted creep series (or None), and the level and rate of
    the fitted function (E_∞ and 0, or D_g and φ) for the plateau slopes."""
    metadata = options.series_metadata(data.time_range_s,
                                       f"non-negative least squares on {data.quantity}",
                                       settings)
    if data.creep:
        phi = float(x[1]) if data.fluid else 0.0
        series, creep = _relaxation_of_creep(float(x[0]), phi, coef, times, metadata)
        return series, creep, float(x[0]), phi
    e_fixed = data.fixed_equilibrium_Pa   # a free E_inf is the first (fixed) column
    level = float(x[0]) if e_fixed is None else float(e_fixed)
    return PronySeries(level, times, coef, **metadata), None, level, 0.0


def _relaxation_of_creep(glassy_compliance: float, fluidity: float, compliance: np.ndarray,
                         retardation_s: np.ndarray, metadata: dict):
    """Exact conversion of the fitted retardation series into a relaxation series
    (:func:`ttsp.prony.exact_conversion.creep_to_relaxation`, docs/methods.md §5.1-5.2)."""
    creep = CreepSeries(glassy_compliance, retardation_s, compliance, fluidity,
                        modulus_kind=metadata["modulus_kind"],
                        reference_temperature_K=metadata["reference_temperature_K"],
                        valid_reduced_time_range_s=metadata["valid_reduced_time_range_s"],
                        provenance=metadata["provenance"])
    return creep_to_relaxation(creep).replace(**metadata), creep
