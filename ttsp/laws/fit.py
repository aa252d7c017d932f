"""Fitting a shift law to a table of shift factors: :func:`fit_shift_law`.

Each law is fitted by weighted least squares (:mod:`ttsp.laws._solver`); with
``model="auto"`` several are fitted and one is chosen by held-out prediction
(:mod:`ttsp.laws.choice`).

References
----------
Akaike, H. (1974). A new look at the statistical model identification. IEEE Trans. Autom.
Control 19, 716-723.
Schwarz, G. (1978). Estimating the dimension of a model. Ann. Stat. 6, 461-464.
Aitken, A. C. (1935). On least squares and linear combination of observations. Proc. R. Soc.
Edinburgh 55, 42-48.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterable, Mapping
from typing import Any, NamedTuple

import numpy as np

from .._validation import bad_value, check_choice, check_finite, check_positive
from ..exceptions import DataError, FitError, FitQualityWarning
from ._solver import Outcome, fit_one
from ._table import ShiftTable, checked_shifts, weighted_table
from .choice import HELD_OUT_GAIN_MIN, WeightingsWithout, choose_by_held_out, held_out_scores
from .names import AUTO_MODELS
from .registry import SHIFT_LAWS
from .results import ShiftLawFit

__all__ = ["fit_shift_law"]


class _Candidate(NamedTuple):
    """A law fitted to the table, its information criteria, and its held parameters and
    bounds (as given by the user, those of this law only)."""

    outcome: Outcome
    aic: float
    bic: float
    fixed: dict
    bounds: dict


def fit_shift_law(temperature_K: Any, log10_aT: Any, *, reference_temperature_K: float,
                  model: str = "auto", stderr: Any = None, covariance: Any = None,
                  fixed: Mapping[str, float] | None = None,
                  bounds: Mapping[str, tuple[float, float]] | None = None,
                  polynomial_order: int = 2) -> ShiftLawFit:
    """Fit a shift law to a table of shift factors by weighted least squares.

    Minimises Σ [(log10 a_T,i - law(T_i)) / s_i]², s_i the shift stderr (1 when not given), or
    rᵀC⁻¹r with a ``covariance`` C (generalised least squares), by lmfit's Levenberg-Marquardt
    from each law's own start values: its linear constants solved exactly for each trial of
    the nonlinear ones on a grid (WLF: C2, also from the linearisation (T - T_ref)/log10 a_T =
    -C2/C1 - (T - T_ref)/C1; VFT: T_inf; WLF-Arrhenius: C2 and the break Tg). Arrhenius and
    polynomial laws, linear in their constants, are solved directly when unbounded.

    With ``model="auto"`` the laws of :data:`~ttsp.laws.AUTO_MODELS` with more points than free
    parameters are fitted and the one that best predicts left-out interior shifts is returned
    (leave-one-out, Stone 1974; :mod:`ttsp.laws.choice`, which also says when BIC decides);
    AIC and BIC (Akaike 1974; Schwarz 1978) are reported for each. VFT (WLF with other
    constants: ``.law.to_vft()``) and the empirical polynomial are fitted by name only.

    Parameters
    ----------
    temperature_K : array_like
        Absolute temperatures of the shift table, in K (1-D).
    log10_aT : array_like
        log10 a_T at those temperatures (decades), > 0 below the reference.
    reference_temperature_K : float
        Reference temperature in K, where the law is 0. It need not be a measured temperature.
    model : str
        ``"auto"`` or a name of :data:`~ttsp.laws.SHIFT_LAWS`.
    stderr : array_like, optional
        Standard error of each log10 a_T (decades). Zero or missing (NaN/None) entries are
        unknown, not exact: they get the table's smallest positive stderr. None positive:
        the fit is unweighted.
    covariance : array_like, optional
        Covariance of the log10 a_T (n × n, decades²), e.g. ``ShiftResult.log10_aT_covariance``:
        jointly found shifts are correlated, and weighing by its inverse (Aitken 1935) lets the
        law average out their common drift. Zero variances are unknown (as for ``stderr``); a
        zero-variance direction shared by rows (a gauge condition) is left out. It sets the
        weights; ``stderr`` defaults to the square root of its diagonal.
    fixed : mapping, optional
        Parameters held at given values, e.g. ``{"C1": 17.44, "C2_K": 51.6}``.
    bounds : mapping, optional
        (low, high) for parameters, e.g. ``{"C2_K": (10, 300)}``, intersected with the limits
        that keep the law defined over the data (e.g. C2 > T_ref - min T for WLF).
    polynomial_order : int
        Order of the polynomial law (default 2).

    Returns
    -------
    ShiftLawFit

    Raises
    ------
    DataError
        Invalid input (shapes, non-finite values, negative stderr, unknown model), or
        ``fixed``/``bounds`` naming a parameter the law lacks (the message lists the allowed).
    FitError
        Too few points (a law needs more points than free parameters) or the solver failed.

    Warns
    -----
    FitQualityWarning
        A parameter ended at a bound or its uncertainty could not be estimated.
    """
    T, y = checked_shifts(temperature_K, log10_aT)
    tr = check_positive("reference_temperature_K", reference_temperature_K)
    check_choice("model", model, ("auto",) + tuple(SHIFT_LAWS))
    order = _checked_order(polynomial_order)
    table = weighted_table(T, y, tr, stderr, covariance)
    models = AUTO_MODELS if model == "auto" else (model,)
    fixed_all, bounds_all = _checked_fixed_and_bounds(fixed, bounds, models, model, order)
    rows, candidates, held_out = _fit_candidates(models, model, table, fixed_all, bounds_all,
                                                 order)
    chosen, reason = _choose(model, models, candidates, held_out, table)
    _complete_rows(rows, candidates[chosen].bic, held_out)
    result = _fit_result(table, candidates[chosen], rows, reason)
    for note in result.notes:
        warnings.warn(f"{chosen} fit: {note}", FitQualityWarning, stacklevel=2)
    return result


def _checked_order(polynomial_order: Any) -> int:
    if isinstance(polynomial_order, bool) or not isinstance(polynomial_order, (int, np.integer)) \
            or not 1 <= polynomial_order <= 6:
        raise bad_value("polynomial_order", "an integer from 1 to 6", polynomial_order)
    return int(polynomial_order)


def _checked_fixed_and_bounds(fixed, bounds, models: tuple, model: str, order: int):
    """``fixed`` and ``bounds`` validated against the parameters of the laws to fit."""
    allowed = []
    for m in models:
        allowed += [nm for nm in SHIFT_LAWS[m].fit_parameter_names(order) if nm not in allowed]
    what = f"the {model!r} law" if model != "auto" else "the laws compared by 'auto'"
    return _check_fixed_and_bounds(fixed, bounds, allowed, what)


def _check_fixed_and_bounds(fixed, bounds, allowed: Iterable[str], what: str):
    allowed = list(allowed)
    fixed_clean: dict = {}
    if fixed is not None:
        if not isinstance(fixed, Mapping):
            raise bad_value("fixed", "a mapping of parameter names to numbers", fixed)
        for name, value in fixed.items():
            if name not in allowed:
                raise bad_value("fixed", f"keyed by parameters of {what} ("
                                + ", ".join(allowed) + ")", name)
            fixed_clean[name] = check_finite(f"fixed[{name!r}]", value)
    bounds_clean: dict = {}
    if bounds is not None:
        if not isinstance(bounds, Mapping):
            raise bad_value("bounds", "a mapping of parameter names to (low, high) pairs", bounds)
        for name, pair in bounds.items():
            if name not in allowed:
                raise bad_value("bounds", f"keyed by parameters of {what} ("
                                + ", ".join(allowed) + ")", name)
            try:
                lo, hi = (float(v) for v in pair)
            except (TypeError, ValueError):
                raise bad_value(f"bounds[{name!r}]", "a pair (low, high) of numbers", pair) from None
            if np.isnan(lo) or np.isnan(hi) or not lo < hi:
                raise bad_value(f"bounds[{name!r}]", "a pair (low, high) with low < high", pair)
            bounds_clean[name] = (lo, hi)
    return fixed_clean, bounds_clean


def _fit_candidates(models: tuple, model: str, table: ShiftTable, fixed_all: dict,
                    bounds_all: dict, order: int) -> tuple[list, dict, dict]:
    """Every law of ``models`` fitted: one row each for ``candidates`` (in the order of
    ``models``), the laws fitted, and under ``"auto"`` each one's held-out score. Under
    ``"auto"`` a law that cannot be fitted is a row with its reason; otherwise it raises.

    Under ``"auto"`` the laws are fitted from the fewest constants up, and a law that could
    not be preferred whatever its score is not fitted (:func:`_cannot_be_preferred`)."""
    rows: dict = {}
    candidates: dict = {}
    held_out: dict = {}

    def n_free(m):   # constants the fit determines: the law's names less those held
        names = SHIFT_LAWS[m].fit_parameter_names(order)
        return len(names) - sum(n in fixed_all for n in names)

    without = WeightingsWithout(table)
    for m in sorted(models, key=lambda m: (n_free(m), models.index(m))):
        why = (_cannot_be_preferred(n_free(m), models, candidates, held_out, table)
               if model == "auto" else "")
        if why:
            rows[m] = {"model": m, "n_free": n_free(m), "status": "not needed", "detail": why,
                       "chi_square": None, "aic": None, "bic": None, "delta_bic": None}
            continue
        rows[m], candidate = _fit_candidate(m, model, table, fixed_all, bounds_all, order)
        if candidate is not None:
            candidates[m] = candidate
            if model == "auto":
                held_out.update(held_out_scores({m: candidate}, table, order, without))
    if not candidates:
        raise FitError("no shift law could be fitted: "
                       + "; ".join(rows[m]["detail"] for m in models))
    return [rows[m] for m in models], candidates, held_out


def _cannot_be_preferred(k: int, models: tuple, candidates: dict, held_out: dict,
                         table: ShiftTable) -> str:
    """Why a law with ``k`` free constants need not be fitted, or "": the laws with fewer
    already predict the left-out shifts within their noise (the choice among them scores at
    most HELD_OUT_GAIN_MIN squared standard errors), so one with more constants, on a table
    long enough to score it by held-out prediction, could not beat that choice by more than
    that. The laws are fitted in order of their free constants, so every law with fewer is
    among ``candidates``; the outcome is the same as fitting it, and the saving is the
    costliest fit of the build (the four-constant WLF-Arrhenius law and its refits, three
    quarters of the law fit's time)."""
    simpler = {c: v for c, v in candidates.items() if len(v.outcome.free_names) < k}
    if not (simpler and table.weighted and table.T_fit.size - 1 > k and table.T_fit.size > 2):
        return ""
    chosen, _ = choose_by_held_out(simpler, {c: held_out[c] for c in simpler}, models,
                                   weighted=True, n_rows=table.weigh.size)
    a = held_out[chosen]
    if not (math.isfinite(a) and a <= HELD_OUT_GAIN_MIN):
        return ""
    return (f"not fitted: the {chosen} law already predicts left-out shift factors within "
            f"their noise (mean squared error {a:.3g} squared standard errors, at most "
            f"{HELD_OUT_GAIN_MIN:g}), so a law with more constants could not be preferred")


def _fit_candidate(m: str, model: str, table: ShiftTable, fixed_all: dict, bounds_all: dict,
                   order: int) -> tuple[dict, _Candidate | None]:
    cls = SHIFT_LAWS[m]
    nm = cls.fit_parameter_names(order)
    fx = {k: v for k, v in fixed_all.items() if k in nm}
    bd = {k: v for k, v in bounds_all.items() if k in nm}
    k_free = len(nm) - len(fx)
    row = {"model": m, "n_free": k_free, "status": "fitted", "detail": "",
           "chi_square": None, "aic": None, "bic": None, "delta_bic": None}
    short = _too_few_points(cls, k_free, fx, table)
    if short:
        if model != "auto":
            raise FitError(short)
        row.update(status="skipped", detail=short)
        return row, None
    try:
        out = _fit_valid_law(cls, table, fx, bd, order)
    except FitError as exc:
        if model != "auto":
            raise
        row.update(status="failed", detail=str(exc))
        return row, None
    aic, bic = _information(out.chi_square, table.weigh.size, k_free, table.floor)
    row.update(chi_square=out.chi_square, aic=aic, bic=bic)
    return row, _Candidate(out, aic, bic, fx, bd)


def _too_few_points(cls, k_free: int, fixed: dict, table: ShiftTable) -> str:
    """Why the table is too short for the law (a law needs more points than free parameters,
    and some laws more), or "" when it is long enough."""
    n = table.n
    least, why = cls.minimum_points(fixed)
    if table.weigh.size > k_free and n >= least:
        return ""
    return (f"the {cls.model} law has {k_free} free parameters and needs more points than that"
            + why + f"; the table has {n}"
            + (f", of which {table.weigh.size} independent of the reference's gauge"
               if table.weigh.size < n else "")
            + (" besides the reference's own shift (0 by definition, it carries no "
               "information)" if n < table.T.size else ""))


def _fit_valid_law(cls, table: ShiftTable, fixed: dict, bounds: dict, order: int) -> Outcome:
    """One law fitted; FitError when the solver did not converge or its constants do not
    define a valid law."""
    m, tr = cls.model, table.tr
    out = fit_one(cls, table.T_fit, table.y_fit, table.weigh, tr, fixed, bounds, order)
    if not out.success:
        raise FitError(f"{m}: the solver did not converge ({out.message})")
    try:
        cls(tr, out.params)
    except DataError as exc:
        raise FitError(f"{m}: the fitted constants do not define a valid law "
                       f"({exc})") from exc
    return out


def _information(chi2: float, n: int, k: int, floor: float) -> tuple[float, float]:
    """AIC = n ln(χ²/n) + 2k and BIC = n ln(χ²/n) + k ln n, χ² floored at ``floor``."""
    c = max(chi2, floor)
    neg2ll = n * math.log(c / n)
    return neg2ll + 2 * k, neg2ll + k * math.log(n)


def _choose(model: str, models: tuple, candidates: dict, held_out: dict,
            table: ShiftTable) -> tuple[str, str]:
    """The law returned and the sentence saying why."""
    ranking = sorted(candidates, key=lambda m: (candidates[m].bic,
                                                len(candidates[m].outcome.free_names),
                                                models.index(m)))
    if model != "auto":
        return ranking[0], f"the {ranking[0]} law was requested"
    if len(ranking) == 1 and not math.isfinite(held_out.get(ranking[0], math.nan)):
        return (ranking[0], f"the {ranking[0]} law was the only one that could be fitted to "
                            f"{table.n} points")
    return choose_by_held_out(candidates, held_out, models, weighted=table.weighted,
                              n_rows=table.weigh.size)


def _complete_rows(rows: list, bic: float, held_out: Mapping[str, float]) -> None:
    """Each candidate row gains its BIC difference to the chosen law and its held-out score."""
    for r in rows:
        if r["bic"] is not None:
            r["delta_bic"] = r["bic"] - bic
        if r["model"] in held_out:
            v = held_out[r["model"]]
            r["held_out_mean_square"] = v if math.isfinite(v) else None


def _fit_result(table: ShiftTable, chosen: _Candidate, rows: list, reason: str) -> ShiftLawFit:
    """The chosen law over the data's range, with its residuals on every row."""
    out, T, tr = chosen.outcome, table.T, table.tr
    law = out.cls(tr, out.params, (float(T.min()), float(T.max())))
    fitted = law._evaluate(law.params, T, tr)
    residuals = table.y - fitted
    derived, derived_stderr = _derived_figures(out, tr)
    dof = table.weigh.size - len(out.free_names)
    return ShiftLawFit(
        law=law,
        params=dict(law.params),
        stderr=dict(out.stderr),
        correlation=dict(out.correlation),
        residuals=_frozen(residuals),
        temperature_K=_frozen(T),
        log10_aT_data=_frozen(table.y),
        log10_aT_stderr=_frozen(table.stderr),
        chi_square=float(out.chi_square),
        reduced_chi_square=float(out.chi_square / dof),
        degrees_of_freedom=dof,
        aic=float(chosen.aic),
        bic=float(chosen.bic),
        n_points=table.n,
        n_free=len(out.free_names),
        fixed_parameters=tuple(k for k in law.params if k not in out.free_names),
        derived=derived,
        derived_stderr=derived_stderr,
        candidates=tuple(rows),
        reason=reason,
        success=out.success,
        message=out.message,
        nfev=out.nfev,
        notes=tuple(out.notes),
        method=out.method,
        weighting=table.weighting,
    )


def _derived_figures(outcome: Outcome, tr: float) -> tuple[dict, dict]:
    """The law's derived figures, their standard errors propagated through the covariance of
    the free parameters (0 when they depend on held ones only, NaN without a covariance)."""
    free = list(outcome.free_names)
    cov = outcome.covariance

    def stderr_of(grad: Mapping[str, float]) -> float:
        if not any(n in free for n in grad):
            return 0.0
        if cov is None:
            return float("nan")
        g = np.array([grad.get(n, 0.0) for n in free])
        return float(np.sqrt(max(g @ cov @ g, 0.0)))

    return outcome.cls.derived_figures(outcome.params, tr, stderr_of)


def _frozen(a) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.setflags(write=False)
    return a
