"""Fit of a Prony series to a frequency master curve E'(ω), E''(ω), in named steps.

Check the options and the data, lay the relaxation-time grid, stack the E' and E'' rows into
one weighted linear problem, solve it by non-negative least squares (with optional pruning),
build the series and assemble the result (:mod:`ttsp.prony.fit_result`). The equations are in
:func:`fit_prony_frequency`.

Imports numpy only (scipy inside the solver).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import partial

import numpy as np
from numpy.typing import ArrayLike

from .._validation import bad_value, check_positive
from .fit_result import PronyFit, assemble_fit
from .fit_steps import FitOptions, nonzero_terms, refuse_all_zero
from .nnls import (
    LinearProblem,
    measured_values,
    positive_abscissa,
    relative_weights,
    relaxation_time_grid,
    solve_with_pruning,
)
from .plateaus import frequency_verdicts
from .series import PronySeries

__all__ = ["fit_prony_frequency"]


def fit_prony_frequency(omega_rad_s: ArrayLike, storage_modulus_Pa: ArrayLike,
                        loss_modulus_Pa: ArrayLike, *, terms_per_decade: float = 2.0,
                        margin_decades: float = 1.0, relative: bool = True,
                        loss_weight: float = 1.0, equilibrium_modulus_Pa: float | None = None,
                        tau_s: ArrayLike | None = None,
                        prune_tolerance_percent: float | None = None, plateau_slope: float = 0.05,
                        modulus_kind: str = "tensile",
                        reference_temperature_K: float | None = None) -> PronyFit:
    """Fit a non-negative Prony series to a frequency master curve E'(ω), E''(ω).

    With the relaxation times τ_i fixed on a log-spaced grid, the model is linear in
    (E_∞, E_i):

    .. math::
       E'(\\omega_j) = E_\\infty + \\sum_i E_i \\frac{\\omega_j^2\\tau_i^2}{1+\\omega_j^2\\tau_i^2},
       \\qquad E''(\\omega_j) = \\sum_i E_i \\frac{\\omega_j\\tau_i}{1+\\omega_j^2\\tau_i^2}.

    The E' and E'' rows are stacked and each row is divided by its measured value
    (relative residuals), so every decade of modulus counts and E'' is not swamped by E'
    when tan δ is small; the problem min ||W(Ax − y)||, x ≥ 0 is solved by non-negative least
    squares (Lawson & Hanson 1974; docs/methods.md §4.2). The grid spans
    [1/ω_max, 1/ω_min] widened by ``margin_decades`` at each end; the default two terms per
    decade keeps the ripple of a uniform series in E'' near 0.15 % (one per decade: ≈ 12 %).

    Parameters
    ----------
    omega_rad_s : array_like
        Reduced angular frequencies ω·a_T (rad/s), > 0.
    storage_modulus_Pa, loss_modulus_Pa : array_like or None
        Measured E' and E'' (Pa) at ``omega_rad_s``; > 0 when ``relative``. One of them may
        be None to fit the other alone (with E'' alone, E_∞ is not determined and is 0 unless
        given).
    terms_per_decade : float
        Density of the relaxation-time grid (terms per decade), default 2.
    margin_decades : float
        Extension of the grid beyond the data at each end (decades), default 1.
    relative : bool
        Relative residuals (default). If False, absolute residuals with each quantity
        scaled by its largest value.
    loss_weight : float
        Extra factor on the E'' rows (dimensionless, > 0), default 1.
    equilibrium_modulus_Pa : float, optional
        Fix E_∞ (Pa) instead of fitting it (0 for a liquid).
    tau_s : array_like, optional
        Use these relaxation times (s) instead of the log-spaced grid.
    prune_tolerance_percent : float, optional
        Prune terms by backward elimination (refitting after each removal) while the rms
        relative deviation stays within this many percentage points of the full fit's.
    plateau_slope : float
        Largest |d ln E'/d ln ω| at a data end that counts as a plateau, default 0.05.
    modulus_kind : {"tensile", "shear"}
        Which modulus the data are.
    reference_temperature_K : float, optional
        Reference temperature of the master curve (K), stored in the series.

    Returns
    -------
    PronyFit
        The series (valid reduced time range [1/ω_max, 1/ω_min]), rms and max relative
        deviation (%), residuals, and the plateau verdicts.

    Raises
    ------
    DataError
        If an input breaks its rule (non-positive ω or moduli, lengths differ, ...).
    FitError
        If the non-negative solver does not converge.

    Warns
    -----
    FitQualityWarning
        When the data reach neither the glassy nor the rubbery plateau (or terminal zone) at
        an end: that end of the series is extrapolated.
    """
    options = FitOptions.checked(terms_per_decade, margin_decades, relative, tau_s,
                                 prune_tolerance_percent, plateau_slope, modulus_kind,
                                 reference_temperature_K)
    data = _frequency_data(omega_rad_s, storage_modulus_Pa, loss_modulus_Pa, loss_weight,
                           equilibrium_modulus_Pa, options.relative)
    return _fit(data, options)


@dataclass(frozen=True, eq=False)
class _FrequencyData:
    """The checked data of a frequency fit: ω (rad/s), the quantities given (E' and/or E''),
    their values (Pa), the weight of the E'' rows and the fixed E_∞ (Pa) or None."""

    omega_rad_s: np.ndarray
    quantities: list
    values: list
    loss_weight: float
    fixed_equilibrium_Pa: float | None


def _frequency_data(omega_rad_s, storage_modulus_Pa, loss_modulus_Pa, loss_weight,
                    equilibrium_modulus_Pa, relative: bool) -> _FrequencyData:
    """Check the data; with E'' alone and no E_∞ given, E_∞ is fixed at 0 (not determined)."""
    w = positive_abscissa("omega_rad_s", omega_rad_s)
    if storage_modulus_Pa is None and loss_modulus_Pa is None:
        raise bad_value("storage_modulus_Pa and loss_modulus_Pa", "given (at least one)", None)
    lw = check_positive("loss_weight", loss_weight)
    quantities, ys = [], []
    if storage_modulus_Pa is not None:
        quantities.append("storage_modulus")
        ys.append(measured_values("storage_modulus_Pa", storage_modulus_Pa, w.size, relative))
    if loss_modulus_Pa is not None:
        quantities.append("loss_modulus")
        ys.append(measured_values("loss_modulus_Pa", loss_modulus_Pa, w.size, relative))
    e_fixed = None
    if equilibrium_modulus_Pa is not None:
        e_fixed = check_positive("equilibrium_modulus_Pa", equilibrium_modulus_Pa,
                                 allow_zero=True)
    elif "storage_modulus" not in quantities:
        e_fixed = 0.0
    return _FrequencyData(w, quantities, ys, lw, e_fixed)


def _fit(data: _FrequencyData, options: FitOptions) -> PronyFit:
    """Grid, problem, solution, series and result of a checked frequency fit."""
    w = data.omega_rad_s
    tau = relaxation_time_grid(options.tau_s, 1.0 / w.max(), 1.0 / w.min(),
                               options.terms_per_decade, options.margin_decades)
    problem, blocks = _stacked_problem(data, tau, options.relative)
    x, removed = solve_with_pruning(problem, options.prune_tolerance_percent)
    refuse_all_zero(x, problem.n_fixed, data.fixed_equilibrium_Pa)
    settings = _settings(data, options, removed)
    series = _series(x, tau, problem.n_fixed, data, options, settings)
    verdicts = partial(frequency_verdicts, series, float(w.min()), float(w.max()),
                       options.plateau_slope, options.modulus_kind)
    return assemble_fit(problem, x, tau, domain="frequency", quantities=data.quantities,
                        abscissa=w, blocks=blocks,
                        fixed_names=["equilibrium_modulus_Pa"][:problem.n_fixed],
                        term_name="modulus_{}_Pa", series=series, settings=settings,
                        verdicts=verdicts)


def _stacked_problem(data: _FrequencyData, tau: np.ndarray,
                     relative: bool) -> tuple[LinearProblem, list[slice]]:
    """The E' rows (ω²τ²/(1 + ω²τ²), plus a column of ones for a free E_∞) and the E'' rows
    (ωτ/(1 + ω²τ²)) stacked, each weighted (E'' also by ``loss_weight``); the row slices."""
    w = data.omega_rad_s
    e_fixed = data.fixed_equilibrium_Pa
    wt = w[:, None] * tau[None, :]
    den = 1.0 + wt * wt
    blocks_a, blocks_off, blocks_w, blocks = [], [], [], []
    start = 0
    for q, y in zip(data.quantities, data.values, strict=True):
        if q == "storage_modulus":
            a = wt * wt / den
            ones = np.ones((w.size, 1))
            off = np.full(w.size, e_fixed if e_fixed is not None else 0.0)
        else:
            a = wt / den
            ones = np.zeros((w.size, 1))
            off = np.zeros(w.size)
        if e_fixed is None:
            a = np.hstack([ones, a])
        weight = relative_weights(y, relative)
        if q == "loss_modulus":
            weight = weight * data.loss_weight
        blocks_a.append(a)
        blocks_off.append(off)
        blocks_w.append(weight)
        blocks.append(slice(start, start + w.size))
        start += w.size
    problem = LinearProblem(np.vstack(blocks_a), np.concatenate(data.values),
                            np.concatenate(blocks_w), np.concatenate(blocks_off),
                            n_fixed=0 if e_fixed is not None else 1)
    return problem, blocks


def _settings(data: _FrequencyData, options: FitOptions, removed: int) -> dict:
    """The options of the fit, for the provenance and ``PronyFit.settings``."""
    return dict(terms_per_decade=options.terms_per_decade,
                margin_decades=options.margin_decades, relative=options.relative,
                loss_weight=data.loss_weight,
                equilibrium_fixed=data.fixed_equilibrium_Pa is not None,
                user_tau=options.tau_s is not None,
                prune_tolerance_percent=options.prune_tolerance_percent, pruned_terms=removed,
                plateau_slope=options.plateau_slope, solver="scipy.optimize.nnls")


def _series(x: np.ndarray, tau: np.ndarray, n_fixed: int, data: _FrequencyData,
            options: FitOptions, settings: dict) -> PronySeries:
    """The fitted series (non-zero terms), valid over [1/ω_max, 1/ω_min] (s)."""
    w = data.omega_rad_s
    coef, times = nonzero_terms(x, tau, n_fixed)
    fixed = data.fixed_equilibrium_Pa   # None: E_inf is free, the first coefficient (n_fixed 1)
    e_inf = float(x[0]) if fixed is None else float(fixed)
    method = "non-negative least squares on " + " and ".join(data.quantities)
    return PronySeries(e_inf, times, coef,
                       **options.series_metadata((1.0 / float(w.max()), 1.0 / float(w.min())),
                                                 method, settings))
