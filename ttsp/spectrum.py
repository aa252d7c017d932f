"""Continuous relaxation spectrum H(τ) from a frequency master curve, by Tikhonov regularisation.

The spectrum is defined by (Ferry 1980, ch. 3-4; docs/methods.md §4.1)

.. math::
   E'(\\omega) = E_e + \\int H(\\tau) \\frac{\\omega^2\\tau^2}{1+\\omega^2\\tau^2}\\, d\\ln\\tau, \\qquad
   E''(\\omega) = \\int H(\\tau) \\frac{\\omega\\tau}{1+\\omega^2\\tau^2}\\, d\\ln\\tau .

Recovering H from E', E'' is ill-posed. H is discretised on a fine log grid and found from

.. math:: \\min_{E_e \\ge 0,\\ h \\ge 0}\\ \\|W(Kx - y)\\|^2 + \\lambda^2 \\|L h / E_{ref}\\|^2,

with W the relative weights 1/y_j (E' and E'' rows stacked), L the second-difference operator
and E_ref the largest measured modulus, so that λ is dimensionless (Tikhonov 1963; Honerkamp &
Weese, Macromolecules 22:4372, 1989, for the rheological use). λ is chosen automatically by
generalized cross-validation (Golub, Heath & Wahba, Technometrics 21:215, 1979) or by the corner
of the L-curve (Hansen, SIAM Review 34:561, 1992), located as the point farthest from the chord
joining the ends of the curve in scaled log-log coordinates. With the positivity constraint, GCV uses the
influence matrix of the free (non-zero) unknowns, the usual approximation.

Only numpy and scipy are imported here (pandas lazily inside ``to_frame``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import KW_ONLY, dataclass

import numpy as np
from numpy.typing import ArrayLike

from ._arrays import nonnegative_argument as _evaluation_argument
from ._arrays import outside_log_range
from ._arrays import readonly as _readonly
from ._arrays import scalar_or_array as _scalar_or_array
from ._arrays import to_plain as _plain
from ._validation import bad_value, check_choice, check_positive
from .exceptions import FitError
from .prony import PronySeries
from .prony.fit_result import frozen_map
from .prony.nnls import log_grid, measured_values, positive_abscissa
from .prony.nnls import solve_nnls as _solve_nnls  # a module name tests replace
from .result_contract import ResultContract

__all__ = ["RelaxationSpectrum", "fit_relaxation_spectrum"]

_METHODS = ("gcv", "lcurve")
_GCV_TIE = 0.01  # relative GCV difference treated as a tie (see fit_relaxation_spectrum)


@dataclass(frozen=True, eq=False)
class RelaxationSpectrum(ResultContract):
    """A continuous relaxation spectrum H(τ) on a log grid, with how it was regularised.

    Attributes
    ----------
    tau_s : numpy.ndarray
        Grid of relaxation times τ_k (s, reduced time), increasing and log-spaced.
    H_Pa : numpy.ndarray
        Spectrum H(τ_k) (Pa), ≥ 0 (per unit ln τ).
    equilibrium_modulus_Pa : float
        E_e (Pa), ≥ 0.
    regularisation : float
        The chosen λ (dimensionless; penalty on the second differences of H/E_ref).
    method : {"gcv", "lcurve", "fixed"}
        How λ was chosen.
    lambda_grid, residual_norm, penalty_norm, criterion : numpy.ndarray
        The λ values tried, the weighted residual norm ||W(Kx − y)||, the penalty norm
        ||L h/E_ref|| and the selection criterion at each (GCV value, or the L-curve corner
        score: scaled distance below the chord joining the ends of the curve).
    rms_percent, max_percent : float
        rms and largest relative deviation (%) of the fitted E', E'' from the data.
    effective_parameters : float
        Trace of the influence matrix at the chosen λ (effective number of parameters).
    valid_tau_range_s : (float, float)
        [1/ω_max, 1/ω_min]: H is determined by the data only inside this window (docs/methods.md §4.3).
    modulus_kind : str
        "tensile" or "shear".
    reference_temperature_K : float or None
        Reference temperature of the master curve (K).

    The spectrum keeps the result contract (:mod:`ttsp.result_contract`): ``params`` are λ
    and E_e, their ``stderr`` NaN (not estimated); ``to_frame`` is the table of H(τ).
    """

    tau_s: np.ndarray
    H_Pa: np.ndarray
    equilibrium_modulus_Pa: float
    regularisation: float
    method: str
    lambda_grid: np.ndarray
    residual_norm: np.ndarray
    penalty_norm: np.ndarray
    criterion: np.ndarray
    rms_percent: float
    max_percent: float
    effective_parameters: float
    valid_tau_range_s: tuple
    _: KW_ONLY
    modulus_kind: str = "tensile"
    reference_temperature_K: float | None = None
    settings: Mapping | None = None

    # ------------------------------------------------------------------ evaluation
    @property
    def d_ln_tau(self) -> np.ndarray:
        """Quadrature weights in ln τ (trapezoid rule on the grid)."""
        return _trapezoid_weights(np.log(self.tau_s))

    @property
    def params(self) -> dict:
        """Plain-float summary parameters: the chosen λ and E_e (Pa)."""
        return {"regularisation": float(self.regularisation),
                "equilibrium_modulus_Pa": float(self.equilibrium_modulus_Pa)}

    @property
    def stderr(self) -> dict:
        """Standard errors are not estimated for a regularised spectrum (NaN)."""
        return {k: math.nan for k in self.params}

    @property
    def notes(self) -> tuple:
        """Doubts about the spectrum: none are judged here (the checks judge the fit)."""
        return ()

    @property
    def success(self) -> bool:
        """A spectrum that exists was solved (a failed solve raises)."""
        return True

    @property
    def message(self) -> str:
        """How λ was chosen."""
        return f"regularisation chosen by {self.method}"

    def spectrum(self, tau_s: ArrayLike):
        """H(τ) (Pa) at ``tau_s`` (s) by linear interpolation in ln τ; 0 outside the grid."""
        t = _evaluation_argument("tau_s", tau_s, allow_zero=False)
        out = np.interp(np.log(t), np.log(self.tau_s), self.H_Pa, left=0.0, right=0.0)
        return _scalar_or_array(np.asarray(out), tau_s)

    def relaxation_modulus(self, t_s: ArrayLike):
        """E(t) = E_e + ∫ H(τ) exp(−t/τ) d ln τ (Pa) at reduced times ``t_s`` (s)."""
        t = _evaluation_argument("t_s", t_s)
        out = self.equilibrium_modulus_Pa + np.exp(-t[..., None] / self.tau_s) @ self._weights()
        return _scalar_or_array(np.asarray(out), t_s)

    def storage_modulus(self, omega_rad_s: ArrayLike):
        """E'(ω) (Pa) at reduced angular frequencies ``omega_rad_s`` (rad/s)."""
        w = _evaluation_argument("omega_rad_s", omega_rad_s)
        x = w[..., None] * self.tau_s
        out = self.equilibrium_modulus_Pa + (x * x / (1 + x * x)) @ self._weights()
        return _scalar_or_array(np.asarray(out), omega_rad_s)

    def loss_modulus(self, omega_rad_s: ArrayLike):
        """E''(ω) (Pa) at reduced angular frequencies ``omega_rad_s`` (rad/s)."""
        w = _evaluation_argument("omega_rad_s", omega_rad_s)
        x = w[..., None] * self.tau_s
        out = (x / (1 + x * x)) @ self._weights()
        return _scalar_or_array(np.asarray(out), omega_rad_s)

    def tan_delta(self, omega_rad_s: ArrayLike):
        """tan δ = E''/E' (dimensionless)."""
        with np.errstate(invalid="ignore", divide="ignore"):
            out = np.asarray(self.loss_modulus(omega_rad_s)) / np.asarray(
                self.storage_modulus(omega_rad_s))
        return _scalar_or_array(out, omega_rad_s)

    def _weights(self) -> np.ndarray:
        return self.H_Pa * self.d_ln_tau

    def to_prony_series(self) -> PronySeries:
        """The discretised spectrum as a Prony series, E_k = H(τ_k)·Δln τ_k (zeros dropped)."""
        wts = self._weights()
        keep = wts > 0
        return PronySeries(self.equilibrium_modulus_Pa, self.tau_s[keep], wts[keep],
                           modulus_kind=self.modulus_kind,
                           reference_temperature_K=self.reference_temperature_K,
                           valid_reduced_time_range_s=self.valid_tau_range_s,
                           fit_rms_percent=self.rms_percent, fit_max_percent=self.max_percent,
                           provenance={"method": "discretised Tikhonov relaxation spectrum",
                                       "regularisation": self.regularisation,
                                       "selection": self.method})

    # ------------------------------------------------------------------ export
    def to_frame(self):
        """Tidy table: ``tau_s``, ``H_Pa``, ``in_valid_range`` (bool)."""
        import pandas as pd

        lo, hi = self.valid_tau_range_s
        return pd.DataFrame({"tau_s": self.tau_s, "H_Pa": self.H_Pa,
                             "in_valid_range": ~outside_log_range(self.tau_s, lo, hi)})

    def selection_frame(self):
        """The λ scan as a table (for an L-curve or GCV plot): ``regularisation``,
        ``residual_norm``, ``penalty_norm``, ``criterion``, ``chosen``."""
        import pandas as pd

        return pd.DataFrame({"regularisation": self.lambda_grid,
                             "residual_norm": self.residual_norm,
                             "penalty_norm": self.penalty_norm,
                             "criterion": self.criterion,
                             "chosen": self.lambda_grid == self.regularisation})

    def to_dict(self) -> dict:
        """JSON-ready dict (plain floats and lists)."""
        return _plain({
            "tau_s": self.tau_s, "H_Pa": self.H_Pa,
            "equilibrium_modulus_Pa": self.equilibrium_modulus_Pa,
            "regularisation": self.regularisation, "method": self.method,
            "rms_percent": self.rms_percent, "max_percent": self.max_percent,
            "effective_parameters": self.effective_parameters,
            "valid_tau_range_s": list(self.valid_tau_range_s),
            "modulus_kind": self.modulus_kind,
            "reference_temperature_K": self.reference_temperature_K,
            "selection": {"regularisation": self.lambda_grid,
                          "residual_norm": self.residual_norm,
                          "penalty_norm": self.penalty_norm, "criterion": self.criterion},
            "settings": dict(self.settings or {}),
        })

    @classmethod
    def from_dict(cls, data: Mapping) -> RelaxationSpectrum:
        """Rebuild the spectrum from :meth:`to_dict` output (everything comes back)."""
        def array(values) -> np.ndarray:
            return _readonly(np.array([np.nan if v is None else v for v in values], float))

        sel = data["selection"]
        return cls(tau_s=array(data["tau_s"]), H_Pa=array(data["H_Pa"]),
                   equilibrium_modulus_Pa=float(data["equilibrium_modulus_Pa"]),
                   regularisation=float(data["regularisation"]), method=str(data["method"]),
                   lambda_grid=array(sel["regularisation"]),
                   residual_norm=array(sel["residual_norm"]),
                   penalty_norm=array(sel["penalty_norm"]), criterion=array(sel["criterion"]),
                   rms_percent=float(data["rms_percent"]), max_percent=float(data["max_percent"]),
                   effective_parameters=float(data["effective_parameters"]),
                   valid_tau_range_s=tuple(float(v) for v in data["valid_tau_range_s"]),
                   modulus_kind=str(data.get("modulus_kind", "tensile")),
                   reference_temperature_K=data.get("reference_temperature_K"),
                   settings=frozen_map(dict(data.get("settings") or {})))

    def _html_caption(self) -> str:
        return f"Relaxation spectrum (Tikhonov, {self.method})"

    def _html_rows(self) -> list[tuple[str, str]]:
        lo, hi = self.valid_tau_range_s
        k = int(np.argmax(self.H_Pa))
        return [("grid", f"{self.tau_s.size} points, {self.tau_s[0]:.6g} – {self.tau_s[-1]:.6g} s"),
                ("valid τ range", f"{lo:.6g} – {hi:.6g} s"),
                ("effective parameters", f"{self.effective_parameters:.3g}"),
                ("peak", f"H = {self.H_Pa[k]:.6g} Pa at τ = {self.tau_s[k]:.6g} s"),
                ("fit rms / max", f"{self.rms_percent:.3g} % / {self.max_percent:.3g} %")]


def _trapezoid_weights(x: np.ndarray) -> np.ndarray:
    if x.size == 1:
        return np.ones(1)
    d = np.diff(x)
    w = np.zeros(x.size)
    w[:-1] += d / 2
    w[1:] += d / 2
    return w


def _second_difference(n: int) -> np.ndarray:
    if n < 3:
        return np.zeros((0, n))
    L = np.zeros((n - 2, n))
    idx = np.arange(n - 2)
    L[idx, idx] = 1.0
    L[idx, idx + 1] = -2.0
    L[idx, idx + 2] = 1.0
    return L


def _lcurve_corner_score(log_res: np.ndarray, log_pen: np.ndarray) -> np.ndarray:
    """Distance of each L-curve point below the chord joining its two ends.

    Both log axes are first scaled to [0, 1]; the corner is the point farthest from the
    chord on the origin side. This locates the same corner as Hansen's maximum-curvature
    rule on a well-formed L-curve, but is not thrown by the flat stretches that the
    positivity constraint produces (where the curvature of the discrete curve is 0/0).
    """
    def unit(v):
        span = v.max() - v.min()
        return (v - v.min()) / span if span > 0 else np.zeros_like(v)

    x, y = unit(log_res), unit(log_pen)
    x0, y0, x1, y1 = x[0], y[0], x[-1], y[-1]
    norm = math.hypot(x1 - x0, y1 - y0)
    if norm == 0:
        return np.zeros_like(x)
    # signed distance; positive on the side of the origin (small residual and penalty)
    return ((x1 - x0) * (y0 - y) - (x0 - x) * (y1 - y0)) / norm


def fit_relaxation_spectrum(omega_rad_s: ArrayLike, storage_modulus_Pa: ArrayLike,
                            loss_modulus_Pa: ArrayLike, *, points_per_decade: float = 8.0,
                            margin_decades: float = 1.0, method: str = "gcv",
                            regularisation: float | None = None, n_lambda: int = 40,
                            equilibrium_modulus_Pa: float | None = None,
                            modulus_kind: str = "tensile",
                            reference_temperature_K: float | None = None) -> RelaxationSpectrum:
    """Continuous relaxation spectrum H(τ) by non-negative Tikhonov regularisation.

    Solves min ||W(Kx − y)||² + λ²||L h/E_ref||² with x = (E_e, h) ≥ 0, W = diag(1/y) (E' and
    E'' rows stacked), L the second-difference operator and h = H(τ_k) on a log grid with
    trapezoid weights in ln τ (docs/methods.md §4.3; Honerkamp & Weese 1989). λ is chosen by
    generalized cross-validation (Golub, Heath & Wahba 1979) or by the L-curve corner
    (log penalty versus log residual, Hansen 1992; the corner is the point farthest from the
    chord joining the curve's ends, robust to the flat stretches the positivity constraint
    creates), unless given. GCV scores within 1 % of the minimum count as ties, resolved
    towards the smoother solution (larger λ).

    Parameters
    ----------
    omega_rad_s : array_like
        Reduced angular frequencies (rad/s), > 0.
    storage_modulus_Pa, loss_modulus_Pa : array_like
        Measured E'(ω) and E''(ω) (Pa), > 0.
    points_per_decade : float
        Density of the τ grid (points per decade), default 8 (docs/methods.md §4.3: 5-10).
    margin_decades : float
        Extension of the grid beyond [1/ω_max, 1/ω_min] at each end (decades), default 1.
    method : {"gcv", "lcurve"}
        How λ is chosen when ``regularisation`` is None.
    regularisation : float, optional
        Use this λ (dimensionless, > 0) instead of choosing it.
    n_lambda : int
        Number of λ values scanned (log-spaced from 1e-8 to 10 times the Frobenius norm of
        the weighted kernel, which bounds its largest singular value), default 40, at least 5.
    equilibrium_modulus_Pa : float, optional
        Fix E_e (Pa) instead of fitting it.
    modulus_kind : {"tensile", "shear"}
        Which modulus the data are.
    reference_temperature_K : float, optional
        Reference temperature (K), stored in the result.

    Returns
    -------
    RelaxationSpectrum

    Raises
    ------
    DataError
        If an input breaks its rule.
    FitError
        If the solver fails.
    """
    w = positive_abscissa("omega_rad_s", omega_rad_s)
    e1 = measured_values("storage_modulus_Pa", storage_modulus_Pa, w.size, True)
    e2 = measured_values("loss_modulus_Pa", loss_modulus_Pa, w.size, True)
    density = check_positive("points_per_decade", points_per_decade)
    margin = check_positive("margin_decades", margin_decades, allow_zero=True)
    _check_options(method, modulus_kind, reference_temperature_K, n_lambda)
    lam_fixed = None
    if regularisation is not None:
        lam_fixed = check_positive("regularisation", regularisation)
    e_fixed = None
    if equilibrium_modulus_Pa is not None:
        e_fixed = check_positive("equilibrium_modulus_Pa", equilibrium_modulus_Pa,
                                 allow_zero=True)
    tau = _tau_grid(w, density, margin, points_per_decade)
    problem = _TikhonovProblem.build(w, e1, e2, tau, e_fixed)
    grid = _lambda_grid(problem, lam_fixed, n_lambda)
    sols = [problem.solve(lam) for lam in grid]
    chosen, used, crit = _choose(sols, problem, method, lam_fixed)
    settings = dict(points_per_decade=density, margin_decades=margin, method=method,
                    n_lambda=int(n_lambda), equilibrium_fixed=e_fixed is not None,
                    penalty="second difference of H/E_ref", weights="relative (1/E', 1/E'')")
    return _spectrum(problem, sols, grid, chosen, used, crit, w, modulus_kind,
                     reference_temperature_K, settings)


def _check_options(method, modulus_kind, reference_temperature_K, n_lambda) -> None:
    """Check the options that are not numbers of the grid (DataError on a broken rule)."""
    check_choice("method", method, _METHODS)
    check_choice("modulus_kind", modulus_kind, ("tensile", "shear"))
    if reference_temperature_K is not None:
        check_positive("reference_temperature_K", reference_temperature_K)
    if not isinstance(n_lambda, (int, np.integer)) or isinstance(n_lambda, bool) or n_lambda < 5:
        raise bad_value("n_lambda", "an integer of at least 5", n_lambda)


def _tau_grid(w: np.ndarray, density: float, margin: float, points_per_decade) -> np.ndarray:
    """The log grid of τ (s) over [1/ω_max, 1/ω_min] widened by ``margin`` decades; at least
    three points, for the second differences."""
    wmin, wmax = float(w.min()), float(w.max())
    tau = log_grid(math.log10(1 / wmax) - margin, math.log10(1 / wmin) + margin, density)
    if tau.size < 3:
        raise bad_value("points_per_decade", "large enough for at least 3 grid points",
                        points_per_decade)
    return tau


@dataclass(frozen=True, eq=False)
class _TikhonovProblem:
    """The scaled problem min ||K u − b||² + λ²||L u||², u = (E_e, H)/E_ref ≥ 0.

    ``k1``, ``k2``: the E' and E'' kernels with the trapezoid weights in ln τ (unscaled);
    ``kern``: the stacked kernel with relative rows and unknowns scaled by E_ref (a first
    column of ones on the E' rows when E_e is free, ``n_fixed = 1``); ``b``: the scaled right
    side; ``L``: second differences of H (none on E_e).
    """

    tau: np.ndarray
    k1: np.ndarray
    k2: np.ndarray
    y: np.ndarray
    e_ref: float
    kern: np.ndarray
    b: np.ndarray
    L: np.ndarray
    n_fixed: int
    e_fixed: float | None

    @classmethod
    def build(cls, w, e1, e2, tau, e_fixed) -> _TikhonovProblem:
        dln = _trapezoid_weights(np.log(tau))
        x = w[:, None] * tau[None, :]
        k1 = x * x / (1 + x * x) * dln
        k2 = x / (1 + x * x) * dln
        y = np.concatenate([e1, e2])
        e_ref = float(y.max())
        # scaled unknowns u = H/E_ref (and E_e/E_ref); rows relative
        kern = np.vstack([k1, k2]) * e_ref / y[:, None]
        off = np.zeros(y.size)
        if e_fixed is None:
            col = np.concatenate([np.ones(w.size), np.zeros(w.size)]) * e_ref / y
            kern = np.hstack([col[:, None], kern])
            n_fixed = 1
        else:
            off[:w.size] = e_fixed
            n_fixed = 0
        b = (y - off) / y
        L = np.hstack([np.zeros((tau.size - 2, n_fixed)), _second_difference(tau.size)])
        return cls(tau, k1, k2, y, e_ref, kern, b, L, n_fixed, e_fixed)

    def solve(self, lam: float):
        """The NNLS solution at λ, its residual and penalty norms, and the trace of the
        influence matrix over the free (non-zero) unknowns (effective parameters)."""
        kern, L = self.kern, self.L
        a = np.vstack([kern, lam * L])
        rhs = np.concatenate([self.b, np.zeros(L.shape[0])])
        u = _solve_nnls(a, rhs)
        r = kern @ u - self.b
        act = np.flatnonzero(u > 0)
        if act.size:
            ka, la = kern[:, act], L[:, act]
            g = ka.T @ ka
            reg = g + lam * lam * (la.T @ la)
            try:
                trace = float(np.trace(np.linalg.solve(reg, g)))
            except np.linalg.LinAlgError:  # singular: fall back to least squares
                trace = float(np.trace(np.linalg.lstsq(reg, g, rcond=None)[0]))
        else:
            trace = 0.0
        return u, float(np.linalg.norm(r)), float(np.linalg.norm(L @ u)), trace


def _lambda_grid(problem: _TikhonovProblem, lam_fixed: float | None, n_lambda) -> np.ndarray:
    """The λ tried: the given one, or ``n_lambda`` log-spaced from 1e-8 to 10 times the
    Frobenius norm of the kernel (a cheap bound on its largest singular value)."""
    if lam_fixed is not None:
        return np.array([lam_fixed])
    scale = float(np.linalg.norm(problem.kern))
    return np.logspace(math.log10(scale) - 8, math.log10(scale) + 1, int(n_lambda))


def _choose(sols, problem: _TikhonovProblem, method: str, lam_fixed: float | None):
    """Index of the chosen λ, how it was chosen, and the criterion at each λ."""
    res = np.array([s[1] for s in sols])
    pen = np.array([s[2] for s in sols])
    trc = np.array([s[3] for s in sols])
    if lam_fixed is not None:
        return 0, "fixed", np.array([math.nan])
    if method == "gcv":
        m = problem.kern.shape[0]
        denom = np.maximum(m - trc, 1e-12)
        crit = m * res ** 2 / denom ** 2
        # GCV is often nearly flat over decades of λ near its minimum, where the argmin is
        # decided by noise: of the scores within _GCV_TIE of the minimum take the smoothest
        # (largest λ), in the spirit of the one-standard-error rule (Breiman, Friedman,
        # Olshen & Stone, Classification and Regression Trees, 1984).
        near = np.flatnonzero(crit <= crit.min() * (1 + _GCV_TIE))
        return int(near.max()), "gcv", crit
    crit = _lcurve_corner_score(np.log(np.maximum(res, 1e-300)),
                                np.log(np.maximum(pen, 1e-300)))
    return int(np.argmax(crit)), "lcurve", crit


def _spectrum(problem: _TikhonovProblem, sols, grid, chosen: int, used: str, crit, w,
              modulus_kind: str, reference_temperature_K, settings: dict) -> RelaxationSpectrum:
    """The result at the chosen λ: H and E_e back in Pa, and the fit's deviations (%)."""
    n_fixed = problem.n_fixed
    u = sols[chosen][0]
    if not np.any(u[n_fixed:] > 0):
        raise FitError("the regularised spectrum is zero everywhere; the data carry no "
                       "relaxation (or the regularisation is far too strong)")
    h = u[n_fixed:] * problem.e_ref
    # E_e free (no e_fixed): the first unknown, n_fixed 1
    e_e = float(u[0] * problem.e_ref) if problem.e_fixed is None else float(problem.e_fixed)
    fitted = np.concatenate([e_e + problem.k1 @ h, problem.k2 @ h])
    rel = 100 * (fitted / problem.y - 1)
    wmin, wmax = float(w.min()), float(w.max())
    return RelaxationSpectrum(
        tau_s=_readonly(problem.tau), H_Pa=_readonly(h), equilibrium_modulus_Pa=e_e,
        regularisation=float(grid[chosen]), method=used, lambda_grid=_readonly(grid),
        residual_norm=_readonly(np.array([s[1] for s in sols])),
        penalty_norm=_readonly(np.array([s[2] for s in sols])),
        criterion=_readonly(np.where(np.isfinite(crit), crit, np.nan)),
        rms_percent=float(np.sqrt(np.mean(rel ** 2))), max_percent=float(np.abs(rel).max()),
        effective_parameters=float(sols[chosen][3]), valid_tau_range_s=(1 / wmax, 1 / wmin),
        modulus_kind=modulus_kind, reference_temperature_K=reference_temperature_K,
        settings=frozen_map(settings))
