"""Joint fit of a master curve and the shifts of every isotherm (private).

The model, in log–log coordinates (decades), for point i of isotherm k and function q::

    y_i = F_q(u_i; θ) + v_q * c_k + noise,   u_i = x_i + d * s_k,   d = +1 (frequency), -1 (time)

``s_k`` = log10 a_T of isotherm k, ``c_k`` = log10 b_T (free only in the vertical "fit" mode),
``v_q`` = +1 for a modulus, -1 for a compliance, 0 for tan δ or δ. The master curves F come
from one of the models of :mod:`ttsp.shifting._curve_models`: one relaxation spectrum shared by
every function (default), or a penalised B-spline per function.

Shifts, vertical shifts and curve parameters are fitted together by damped Gauss–Newton
(Levenberg–Marquardt) on the stacked residuals: a full step over every parameter, which
converges to the optimum of the separable problem that variable projection (Golub & Pereyra,
SIAM J. Numer. Anal. 10:413, 1973) would reach. Bounds (E_e ≥ 0, spectrum strengths above
1e-13 of the largest) are kept by projection with an active set. A weak Gaussian prior
(1 decade) ties each shift to its pairwise starting value, so that a shift the data cannot
determine (a plateau) stays put instead of drifting. A robust loss (Huber, Robust Statistics,
1981) enters through iteratively re-weighted least squares, with the noise scale of each
function estimated from the median absolute residual.

Standard errors come from the inverse of the Gauss–Newton curvature of the penalised
objective (its shift block, so the curve's own uncertainty is included) times Huber's variance
factor Σψ(r)²/(n − p)/(mean ψ'(r))², p being the effective number of parameters (trace of the
hat matrix; the Bayesian reading of a penalised fit's covariance, Wahba, J. R. Stat. Soc. B
45:133, 1983). Residuals correlated along an isotherm (dense time-domain records: drift,
settling) hold fewer independent points than they number; the covariance is multiplied by the
AR(1) factor (1 + ρ)/(1 − ρ) of their pooled lag-one correlation ρ
(:mod:`ttsp._residual_correlation`), which is 1 for uncorrelated residuals. On the frequency
benchmark, 95 % of the shifts lie within 2 stderr of the truth; on dense relaxation and creep
campaigns with correlated noise (benchmarks/bench_time_domain.py) 90 % (without the factor
41–44 %).

Nothing here validates user input: :mod:`ttsp.shifting` does that.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.linalg import LinAlgError, lu_factor, lu_solve
from scipy.linalg.lapack import dpotrf, dpotrs

from .._residual_correlation import lag_one_correlation, variance_inflation
from ..exceptions import FitError
from . import _curve_models
from ._curve_models import CarriedSpectrum, make_curve_model

__all__ = ["JointProblem", "JointSolution", "fit_joint"]

_MAD_TO_SIGMA = 1.482602218505602  # 1 / Φ⁻¹(3/4): MAD of a normal sample to its σ
#: a weak prior keeps each shift within about this many decades of its start (pairwise seed):
#: negligible wherever the data determine a shift (stderr ~0.01), it stops a shift that the
#: data do not constrain (a plateau) from wandering off
_PRIOR_SD = 1.0
#: in a provisional round, a shift that moves by less than this fraction of its standard
#: error in a step has settled (see _Fit._settled)
_SETTLED_FRACTION = 0.01
#: steps of a round whose noise scales will still change (the last round has max_iter): on the
#: demo's E' alone, a first round over isotherms that a gap then split took all 200
_PROVISIONAL_ROUND_STEPS = 50


@dataclass
class JointProblem:
    """Flattened data of one connected set of isotherms.

    Every array has one entry per residual (one measured value of one function).
    """

    x: np.ndarray          # log10 of frequency (rad/s) or time (s)
    y: np.ndarray          # log10 of the measured value, known vertical shifts removed
    iso: np.ndarray        # isotherm index 0..n_iso-1
    fn: np.ndarray         # function index 0..n_fn-1
    n_iso: int
    functions: tuple       # names of the functions (ttsp.data.QUANTITIES keys)
    direction: float       # +1: reduced x = x + s; -1: reduced x = x - s
    vertical_sign: np.ndarray   # per function: +1, -1 or 0
    s_fixed: dict          # isotherm -> fixed log10 aT (includes the gauge anchor)
    fit_vertical: bool = False
    c_fixed: dict | None = None   # isotherm -> fixed log10 bT (the vertical gauge anchor)
    relative_noise: np.ndarray | None = None   # per function: its point-to-point noise, any unit

    @property
    def n_fn(self) -> int:
        return len(self.functions)


@dataclass
class JointSolution:
    s: np.ndarray            # log10 aT per isotherm (problem gauge)
    c: np.ndarray            # log10 bT per isotherm (zeros unless fitted)
    cov_s: np.ndarray        # covariance of s (zero rows/cols for fixed entries)
    cov_c: np.ndarray
    residual: np.ndarray     # raw residual in decades, per data entry
    scaled_residual: np.ndarray  # residual / sigma of its function
    sigma: np.ndarray        # noise scale per function, decades
    slope: np.ndarray        # dF_q/du at each data entry (decades per decade)
    u: np.ndarray            # reduced log10 x per data entry
    weights: np.ndarray      # final robust weights
    objective: float
    variance_factor: float   # residual variance of the scaled residuals (≈ 1 for pure noise)
    effective_parameters: float
    iterations: int
    converged: bool
    model: str
    residual_correlation: float = float("nan")   # pooled lag-one correlation along isotherms
    correlation_inflation: float = 1.0           # factor applied to cov_s and cov_c
    curve: CarriedSpectrum | None = None         # the fitted spectrum, to start a related fit



def _cholesky_solve(M: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Solve M x = b for a symmetric positive definite M by Cholesky (LAPACK potrf/potrs
    directly: the checking wrappers cost more than the factorisation at these sizes)."""
    c, info = dpotrf(M, lower=False, clean=False)
    if info != 0:
        raise LinAlgError(f"matrix not positive definite (potrf info {info})")
    x, info = dpotrs(c, b, lower=False)
    if info != 0:
        raise LinAlgError(f"potrs info {info}")
    return x


def _dense(M) -> np.ndarray:
    return M.toarray() if sp.issparse(M) else np.asarray(M)


@dataclass
class _Point:
    """Parameters of one iterate (packed, and as curve, shifts and vertical shifts) with the
    scaled residuals there, their Jacobian blocks and the objective."""

    vec: np.ndarray
    theta: np.ndarray
    s: np.ndarray
    c: np.ndarray
    r: np.ndarray
    J: tuple
    phi: float


@dataclass
class _Step:
    """An accepted step: where it leads, and its largest shift change (decades)."""

    point: _Point
    big: float


@dataclass
class _OffGrid:
    """A trial step that moved the data off the model's grid (curve, shifts, vertical)."""

    theta: np.ndarray
    s: np.ndarray
    c: np.ndarray


class _Fit:
    """The state of one joint fit: problem, model, current parameters, noise scales and the
    robust loss; the Gauss–Newton iteration and what it needs."""

    def __init__(self, prob: JointProblem, model, s0, c0, start=None, start_curve=None):
        self.p = prob
        self.model = model
        n = prob.n_iso
        self.free_s = np.array([k not in prob.s_fixed for k in range(n)])
        c_fixed = prob.c_fixed or {}
        self.free_c = (np.array([k not in c_fixed for k in range(n)]) if prob.fit_vertical
                       else np.zeros(n, bool))
        self.s = np.asarray(s0, float).copy()
        for k, v in prob.s_fixed.items():
            self.s[k] = v
        self.c = np.zeros(n) if c0 is None else np.asarray(c0, float).copy()
        for k, v in c_fixed.items():
            self.c[k] = v
        self.vs = np.asarray(prob.vertical_sign, float)[prob.fn]
        self.s_prior, self.c_prior = self.s.copy(), self.c.copy()
        if start is not None:
            # iterations start elsewhere; the prior (the objective) stays where s0, c0 put it
            s_start, c_start = start
            self.s[self.free_s] = np.asarray(s_start, float)[self.free_s]
            if c_start is not None:
                self.c[self.free_c] = np.asarray(c_start, float)[self.free_c]
        self.sigma = np.ones(prob.n_fn)
        self.huber: float | None = None
        self.iterations = 0
        self.converged = False
        self.theta = model.build(self.u(self.s), carried=start_curve)
        self._layout()

    def u(self, s):
        return self.p.x + self.p.direction * s[self.p.iso]

    def _layout(self):
        nt = self.model.n_theta
        ns, nc = int(self.free_s.sum()), int(self.free_c.sum())
        self.n_theta, self.n_par = nt, nt + ns + nc
        self.s_col = np.full(self.p.n_iso, -1)
        self.s_col[self.free_s] = nt + np.arange(ns)
        self.c_col = np.full(self.p.n_iso, -1)
        self.c_col[self.free_c] = nt + ns + np.arange(nc)
        self.sc = slice(nt, nt + ns + nc)

    def pack(self):
        return np.concatenate([self.theta, self.s[self.free_s], self.c[self.free_c]])

    def unpack(self, vec):
        nt, ns = self.n_theta, int(self.free_s.sum())
        s = self.s.copy()
        s[self.free_s] = vec[nt:nt + ns]
        c = self.c.copy()
        c[self.free_c] = vec[nt + ns:]
        return vec[:nt], s, c

    def evaluate(self, theta, s, c, jac=True):
        """Scaled residuals and the blocks of their Jacobian (J_theta, shift and vertical parts)."""
        p = self.p
        u = self.u(s)
        F, dF, Jt = self.model.evaluate(u, theta, jac)
        sig = self.sigma[p.fn]
        raw = p.y - F - self.vs * c[p.iso]
        r = raw / sig
        if not jac:
            return r, raw, dF, u, None
        n = r.size
        rows, cols, vals = [], [], []
        fs = self.s_col[p.iso] >= 0
        rows.append(np.flatnonzero(fs))
        cols.append(self.s_col[p.iso][fs] - self.n_theta)
        vals.append(-p.direction * dF[fs] / sig[fs])
        fc = (self.c_col[p.iso] >= 0) & (self.vs != 0)
        rows.append(np.flatnonzero(fc))
        cols.append(self.c_col[p.iso][fc] - self.n_theta)
        vals.append(-self.vs[fc] / sig[fc])
        n_sc = self.n_par - self.n_theta
        if n * n_sc <= _curve_models.DENSE_JACOBIAN_MAX_ENTRIES:
            Jsc = np.zeros((n, n_sc))
            for rr, cc, vv in zip(rows, cols, vals, strict=True):
                Jsc[rr, cc] += vv
        else:
            Jsc = sp.csr_matrix((np.concatenate(vals),
                                 (np.concatenate(rows), np.concatenate(cols))), shape=(n, n_sc))
        if sp.issparse(Jt):
            Jt = sp.diags(-1.0 / sig) @ Jt
        else:
            Jt = Jt * (-1.0 / sig)[:, None]
        return r, raw, dF, u, (Jt, Jsc)

    def normal(self, J, w):
        """Dense normal matrix JᵀWJ (+ penalty) and the J-part of the gradient helper."""
        Jt, Jsc = J
        P = self.n_par
        nt = self.n_theta
        A = np.zeros((P, P))
        WJsc = sp.diags(w) @ Jsc if sp.issparse(Jsc) else Jsc * w[:, None]
        if sp.issparse(Jt):
            A[:nt, :nt] = (Jt.T @ sp.diags(w) @ Jt).toarray()
            A[:nt, nt:] = _dense(Jt.T @ WJsc)
        else:
            A[:nt, :nt] = Jt.T @ (Jt * w[:, None])
            A[:nt, nt:] = _dense(WJsc.T @ Jt).T
        A[nt:, :nt] = A[:nt, nt:].T
        A[nt:, nt:] = _dense(Jsc.T @ WJsc)
        A[:nt, :nt] += self.model.pen
        A[np.arange(nt, P), np.arange(nt, P)] += 1.0 / _PRIOR_SD ** 2
        return A

    def gradient(self, J, w, r, theta, s, c):
        Jt, Jsc = J
        g = np.empty(self.n_par)
        g[:self.n_theta] = Jt.T @ (w * r) + self.model.pen @ theta
        g[self.n_theta:] = Jsc.T @ (w * r)
        g[self.n_theta:] += np.concatenate([(s - self.s_prior)[self.free_s],
                                            (c - self.c_prior)[self.free_c]]) / _PRIOR_SD ** 2
        return g

    def weights(self, r):
        if self.huber is None:
            return np.ones_like(r)
        a = np.abs(r)
        return np.where(a <= self.huber, 1.0, self.huber / np.maximum(a, 1e-300))

    def loss(self, r, theta, s, c):
        if self.huber is None:
            data = 0.5 * np.sum(r * r)
        else:
            a = np.abs(r)
            h = self.huber
            data = np.sum(np.where(a <= h, 0.5 * a * a, h * a - 0.5 * h * h))
        prior = (np.sum((s - self.s_prior)[self.free_s] ** 2)
                 + np.sum((c - self.c_prior)[self.free_c] ** 2)) / _PRIOR_SD ** 2
        return data + 0.5 * float(theta @ (self.model.pen @ theta)) + 0.5 * prior

    def gauss_newton(self, max_iter=100, tol=1e-10, max_shift_step=0.3, curve_only=False,
                     provisional=False):
        """Damped Gauss–Newton (Levenberg–Marquardt) from the current parameters; the curve
        alone with ``curve_only``. Each iteration takes the first damped step that does not
        raise the objective; it stops when the objective and the shifts have settled (see
        :meth:`_settled`; two steps running, while the objective only creeps), when no step
        descends, or after ``max_iter`` iterations. A ``provisional`` round, whose noise scales
        will still change, settles more loosely. Returns whether it converged."""
        vec = self.pack()
        theta, s, c = self.unpack(vec)
        point = self._point(vec, theta, s, c)
        # a model linear in its constants: with the shifts held (curve only) and no Huber
        # weights the problem is linear least squares, and the undamped step solves it; with
        # free shifts Gauss-Newton steps from near the optimum are nearly exact, so the damping
        # starts low and rises only when a step fails
        if self.model.linear:
            mu = 0.0 if curve_only and self.huber is None else 1e-8
        else:
            mu = 1e-3
        converged = False
        it = 0
        slow = 0
        for it in range(1, max_iter + 1):
            A, g_f, free = self._step_system(point, curve_only)
            mu, outcome = self._damped_step(point, A, g_f, free, mu, max_shift_step)
            if isinstance(outcome, _OffGrid):
                # the shifts moved the data off the model's grid: rebuild it around the trial
                # shifts (carrying the curve over) and start the iteration afresh
                self._rebuild_grid(outcome, it)
                return self.gauss_newton(max_iter, tol, max_shift_step, curve_only,
                                         provisional)
            if outcome is not None:
                dphi = point.phi - outcome.point.phi
                settled = self._settled(point.vec, outcome.point.vec, A, free, provisional)
                point, big = outcome.point, outcome.big
                # converged: the objective no longer changes, or the shifts have stopped
                # (< 1e-5 decades per step for two steps running) while the objective only
                # creeps (< 1e-4 of itself per step: the spectrum trading its constant
                # against modes beyond the data along a flat valley does this); with no
                # free shift (a curve-only pass) that is two steps of such creeping
                creep = settled and dphi <= 1e-4 * (1.0 + point.phi)
                slow = slow + 1 if creep else 0
                if (dphi <= tol * (1.0 + point.phi) and big < 1e-6) or slow >= 2:
                    converged = True
            self.theta, self.s, self.c = point.theta, point.s, point.c
            if outcome is None:
                converged = True  # no descent possible at machine precision: a minimum
            if converged:
                break
        self.iterations += it
        self.converged = converged
        return converged

    def _settled(self, old_vec, new_vec, A, free, provisional: bool) -> bool:
        """Whether every shift (and vertical shift) of a step moved by less than 1e-5 decade
        or, in a ``provisional`` round, by less than 1e-3 decade (a tenth of a typical stderr)
        or _SETTLED_FRACTION of its standard error, sqrt((A⁻¹)_kk) with A the normal matrix of
        the step (in units of the noise scales). A shift the data barely determine (two
        isotherms beyond a gap on a plateau, held by the weak prior and traded against the
        curve) zig-zags by 0.001-0.01 decade for hundreds of steps; against its standard error
        of two decades that is settled for a round whose noise scales will change anyway. Not
        in the last round: a small step does not bound what is left to go, and a shift that
        crept 0.006 decade per step was stopped 0.7 stderr short of its optimum."""
        nt = self.n_theta
        settled_shift = 1e-3 if provisional else 1e-5
        moved = np.abs(new_vec[nt:] - old_vec[nt:])
        if np.all(moved <= settled_shift):
            return True
        if not provisional:
            return False
        free_sc = free[nt:]
        if not np.all(moved[~free_sc] <= settled_shift):
            return False
        try:
            ridge = 1e-12 * (float(np.max(np.diag(A))) + 1.0)
            cov = np.linalg.inv(A + ridge * np.eye(A.shape[0]))
        except np.linalg.LinAlgError:
            return False
        sd = np.sqrt(np.maximum(np.diag(cov)[free[:nt].sum():], 0.0))
        return bool(np.all(moved[free_sc] <= np.maximum(settled_shift, _SETTLED_FRACTION * sd)))

    def _point(self, vec, theta, s, c) -> _Point:
        # with the Jacobian at once: most trial steps are accepted, and evaluating the
        # model a second time for it cost more than building it for a rejected step
        r, _, _, _, J = self.evaluate(theta, s, c)
        return _Point(vec, theta, s, c, r, J, self.loss(r, theta, s, c))

    def _step_system(self, point: _Point, curve_only: bool):
        """The normal matrix and gradient at ``point`` over the parameters free this step, and
        which those are: all but the shifts (curve only) and any parameter held at its bound
        with the gradient pushing outwards (an active set)."""
        nt = self.n_theta
        w = self.weights(point.r)
        A = self.normal(point.J, w)
        g = self.gradient(point.J, w, point.r, point.theta, point.s, point.c)
        free = np.ones(self.n_par, bool)
        if curve_only:
            free[nt:] = False
        at_bound = self.model.at_bound(point.theta, g[:nt])
        free[:nt][at_bound] = False
        return A[np.ix_(free, free)], g[free], free

    def _damped_step(self, point: _Point, A, g_f, free, mu: float, max_shift_step: float):
        """Levenberg–Marquardt: solve (A + µ diag A) δ = −g, raising the damping µ until the
        step does not raise the objective (at most 40 tries). Returns the damping for the next
        iteration and the outcome: an accepted :class:`_Step`, an :class:`_OffGrid` trial, or
        None when no step descends."""
        nt = self.n_theta
        dA = np.diag(A).copy()
        for _ in range(40):
            Mx = A + np.diag(mu * dA + 1e-12 * (dA.max() + 1.0))
            try:
                sf = _cholesky_solve(Mx, -g_f)
            except (LinAlgError, ValueError):
                mu = max(mu, 1e-8) * 10.0
                continue
            trial, big = self._limited_step(point.vec, sf, free, max_shift_step)
            if not np.all(np.isfinite(trial)):
                mu = max(mu, 1e-8) * 4.0
                continue
            trial[:nt] = self.model.project(trial[:nt])
            th_t, s_t, c_t = self.unpack(trial)
            if not self.model.on_grid(self.u(s_t)):
                return mu, _OffGrid(th_t, s_t, c_t)
            new = self._point(trial, th_t, s_t, c_t)
            if np.isfinite(new.phi) and new.phi <= point.phi:
                step = trial[free] - point.vec[free]
                return _next_damping(mu, point.phi - new.phi, A, g_f, step), _Step(new, big)
            mu = max(mu, 1e-8) * 4.0
        return mu, None

    def _limited_step(self, vec, step_free, free, max_shift_step: float):
        """The trial parameters ``vec + step``, the step scaled down so that no shift moves by
        more than ``max_shift_step`` decades, and the largest shift change of the step."""
        step = np.zeros(self.n_par)
        step[free] = step_free
        big = np.max(np.abs(step[self.sc])) if step[self.sc].size else 0.0
        if big > max_shift_step:
            step *= max_shift_step / big
            big = max_shift_step
        return vec + step, big

    def _rebuild_grid(self, off: _OffGrid, iterations: int) -> None:
        """Rebuild the model's grid around the trial shifts, the curve carried over (a linear
        model is first refitted at them by a short curve-only pass)."""
        self.s, self.c = off.s, off.c
        self.theta = self.model.build(self.u(off.s), off.theta)
        self._layout()
        self.iterations += iterations
        if self.model.linear:
            self.gauss_newton(max_iter=3, curve_only=True)

    def estimate_sigma(self, r_raw, floor=1e-5):
        """Noise scale per function: one pooled scale for all moduli and compliances (their
        log residuals are relative errors of the same kind), an own one for tan δ and δ;
        within the pool, each function's share follows its point-to-point noise
        (``JointProblem.relative_noise``), so that a function that is really noisier counts
        less, while a function that merely fits the master curve worse does not.

        Scales estimated from the residuals about the master curve measure the curve's misfit
        as much as the noise. On real campaigns the misfit dominates, and it differs between
        functions that do not superpose alike (asphalt binders: E' misses less than E''), so
        a scale per modulus let the better-fitting one set every shift and loosened the
        collapse of the other: the neighbour mismatch of both grew to 1.3-1.5 times that of
        chained pairwise shifts; pooled, 1.01-1.11 (benchmarks/bench_real.py).
        """
        fn = self.p.fn
        groups = [[q] for q in range(self.p.n_fn)]
        pooled = [q for q in range(self.p.n_fn) if self.p.vertical_sign[q] != 0]
        if len(pooled) > 1:
            groups = [pooled] + [[q] for q in range(self.p.n_fn) if q not in pooled]
        rel = (np.ones(self.p.n_fn) if self.p.relative_noise is None
               else np.asarray(self.p.relative_noise, dtype=float))
        sig = np.empty(self.p.n_fn)
        for group in groups:
            mask = np.isin(fn, group)
            rq = r_raw[mask] / rel[fn[mask]]
            base = max(_MAD_TO_SIGMA * np.median(np.abs(rq - np.median(rq))), floor)
            sig[group] = base * rel[group]
        return sig


def _next_damping(mu: float, actual: float, A, g, step) -> float:
    """The damping after an accepted step, by how well the quadratic model predicted its
    decrease: ρ = actual / (−gᵀδ − ½ δᵀAδ), µ ← µ max(1/3, 1 − (2ρ − 1)³) (Nielsen's rule:
    Madsen, Nielsen & Tingleff, Methods for Non-linear Least Squares Problems, DTU, 2004,
    §3.2). A step that decreased far less than predicted (a zig-zag across a curved valley)
    keeps the damping up instead of lowering it by three."""
    predicted = float(-g @ step - 0.5 * step @ (A @ step))
    if not predicted > 0.0 or mu == 0.0:
        return max(mu / 3.0, 1e-10) if mu > 0.0 else 0.0
    rho = actual / predicted
    return max(mu * max(1.0 / 3.0, 1.0 - (2.0 * rho - 1.0) ** 3), 1e-10)


def fit_joint(prob: JointProblem, s0, c0=None, *, model="spectrum", robust=True, huber=1.5,
              smoothing=None, max_iter=200, start=None, start_curve=None) -> JointSolution:
    """Fit a master curve and the shifts of one connected set of isotherms jointly.

    Parameters
    ----------
    prob : JointProblem
        Flattened data; fixed shifts include the gauge anchor.
    s0, c0 : array
        Starting log10 a_T (and log10 b_T) per isotherm, e.g. from pairwise overlaps; the
        weak prior on the shifts is centred on them.
    model : {"spectrum", "spline"}
        Master-curve model (:mod:`ttsp.shifting._curve_models`).
    robust : bool
        Huber loss with threshold ``huber`` noise scales; else plain least squares.
    smoothing : float, optional
        Penalty weight λ in λ ρ ∫ (f^(d))² (ρ: points per decade; d = 2 on the log-spectrum,
        d = 3 on a spline). Defaults 0.05 (spectrum) and 3 (spline), chosen on synthetic
        benchmark campaigns (benchmarks/bench_shifting.py).
    start : (array, array or None), optional
        Where the iterations start instead of ``s0, c0`` (e.g. the shifts of a fit on more
        isotherms). The objective, prior included, is unchanged; the noise scales start as
        without it, so that they settle along the same path (their fixed point is found only
        to 5 %, and a different start settles elsewhere within that).
    start_curve : CarriedSpectrum, optional
        The spectrum such a fit ended with (``JointSolution.curve``), where the spectrum model
        starts instead of its non-negative least-squares start: the first pass, the curve at
        the starting shifts, then takes a few steps instead of about fifteen.
    """
    fit = _Fit(prob, make_curve_model(prob, model, smoothing), s0, c0, start, start_curve)
    _settle(fit, huber if robust else None, max_iter)
    r, raw, dF, u, J = fit.evaluate(fit.theta, fit.s, fit.c)
    w = fit.weights(r)
    if not np.all(np.isfinite(r)):
        raise FitError("the joint shift fit produced non-finite residuals")
    factor = _inverse_curvature(fit, J, r)
    p_eff = _effective_parameters(fit, factor)
    psi, var = _variance_factor(fit, r, w, p_eff)
    rho, inflation = _correlation_inflation(prob, psi, r.size, p_eff)
    cov_s, cov_c = _shift_covariances(fit, factor, var * inflation)
    return JointSolution(s=fit.s.copy(), c=fit.c.copy(), cov_s=cov_s, cov_c=cov_c,
                         residual=raw, scaled_residual=raw / fit.sigma[prob.fn],
                         sigma=fit.sigma.copy(), slope=dF, u=u, weights=w,
                         objective=float(fit.loss(r, fit.theta, fit.s, fit.c)), variance_factor=var,
                         effective_parameters=p_eff, iterations=fit.iterations,
                         converged=bool(fit.converged), model=model,
                         residual_correlation=rho, correlation_inflation=inflation,
                         curve=fit.model.carried(fit.theta))


def _settle(fit: _Fit, huber: float | None, max_iter: int) -> None:
    """The curve at the starting shifts, then the joint fit with the noise scales
    re-estimated from its residuals until they settle."""
    # the curve at the starting shifts with a typical noise scale (0.01 decades, 2 %), then
    # the noise scales of its residuals, so that the penalty weighs against the data in the
    # right units from the first joint step on
    fit.sigma = np.full(fit.p.n_fn, 0.01)
    fit.gauss_newton(max_iter=min(max_iter, 50), tol=1e-4, curve_only=True)
    # then the joint fit, with the noise scales re-estimated from its residuals until they
    # settle (the first round's come from the curve at the starting shifts, so at least two)
    # A round whose noise scales will still change need not settle the shifts finely (see
    # _Fit._settled), nor run long (at most _PROVISIONAL_ROUND_STEPS steps: the next round
    # goes on from where it stops)
    for round_ in range(4):
        r, raw, _, _, _ = fit.evaluate(fit.theta, fit.s, fit.c, jac=False)
        new_sigma = fit.estimate_sigma(raw)
        change = np.max(np.abs(np.log(new_sigma / fit.sigma)))
        fit.sigma = new_sigma
        fit.huber = huber
        last = (round_ > 0 and change < 0.05) or round_ == 3
        fit.gauss_newton(max_iter=max_iter if last else min(max_iter, _PROVISIONAL_ROUND_STEPS),
                         provisional=not last)
        if last:
            break


# ---- the covariance of the shifts -------------------------------------------------------------
# Curvature of the penalised objective, its inverse, the effective number of parameters. With
# the Huber loss the covariance is Huber's asymptotic one for M-estimators (Robust Statistics,
# 1981, regression chapter): Σψ(r)²/(n − p) / (mean ψ'(r))² times the inverse of the
# unweighted curvature; with least squares (ψ(r) = r) the usual residual variance.
def _inverse_curvature(fit: _Fit, J, r):
    """LU factors of the unweighted Gauss–Newton curvature H = JᵀJ + penalty + prior (with a
    ridge of 1e-10 of its largest diagonal entry)."""
    H = fit.normal(J, np.ones_like(r))
    H[np.diag_indices_from(H)] += 1e-10 * (np.max(np.diag(H)) + 1.0)
    try:
        return lu_factor(H, check_finite=False)
    except (LinAlgError, ValueError) as exc:  # pragma: no cover - degenerate input only
        raise FitError(f"the joint shift fit is singular: {exc}") from None


def _effective_parameters(fit: _Fit, factor) -> float:
    """p = P − tr(H⁻¹ RᵀR), the trace of the hat matrix, R the rows of the penalty and of the
    prior on the shifts."""
    R = fit.model.pen_rows
    n_sc = fit.n_par - fit.n_theta
    Rt = np.zeros((fit.n_par, R.shape[0] + n_sc))
    Rt[:fit.n_theta, :R.shape[0]] = R.T
    Rt[fit.n_theta + np.arange(n_sc), R.shape[0] + np.arange(n_sc)] = 1.0 / _PRIOR_SD
    return fit.n_par - float(np.sum(Rt * lu_solve(factor, Rt, check_finite=False)))


def _variance_factor(fit: _Fit, r, w, p_eff: float):
    """ψ(r) per residual and Huber's variance factor Σψ(r)²/(n − p)/(mean ψ'(r))² (the mean
    slope held at 0.5 at least)."""
    dof = max(r.size - p_eff, 1.0)
    psi = w * r
    dpsi = np.mean(np.abs(r) <= fit.huber) if fit.huber is not None else 1.0
    return psi, float(np.sum(psi * psi) / dof / max(dpsi, 0.5) ** 2)


def _correlation_inflation(prob: JointProblem, psi, n: int, p_eff: float):
    """The pooled lag-one correlation ρ of ψ along each isotherm and function, and the AR(1)
    factor by which the covariance grows (:mod:`ttsp._residual_correlation`)."""
    # residuals correlated along each isotherm carry fewer independent pieces of information
    # than points: the covariance is inflated by the AR(1) factor of their pooled lag-one
    # correlation (ttsp._residual_correlation), 1 for uncorrelated residuals; the bias of the
    # estimate is that of a sequence of (n - p_eff)/n_seq free points, what the curve leaves
    seq = prob.iso * prob.n_fn + prob.fn
    rho = lag_one_correlation(psi, seq)
    n_seq = max(np.unique(seq).size, 1)
    return rho, variance_inflation(rho, (n - p_eff) / n_seq, n - n_seq)


def _shift_covariances(fit: _Fit, factor, scale: float):
    """Covariance of log10 a_T and of log10 b_T per isotherm: the shift block of H⁻¹ times
    ``scale`` (variance factor × correlation inflation), zero rows and columns for fixed
    entries."""
    n_iso = fit.p.n_iso
    n_s, n_c = int(fit.free_s.sum()), int(fit.free_c.sum())
    cov_s = np.zeros((n_iso, n_iso))
    cov_c = np.zeros((n_iso, n_iso))
    if n_s + n_c:
        E = np.zeros((fit.n_par, n_s + n_c))
        E[fit.n_theta + np.arange(n_s + n_c), np.arange(n_s + n_c)] = 1.0
        X = lu_solve(factor, E, check_finite=False)[fit.n_theta:] * scale
        X = 0.5 * (X + X.T)
        fs = np.flatnonzero(fit.free_s)
        fc = np.flatnonzero(fit.free_c)
        cov_s[np.ix_(fs, fs)] = X[:n_s, :n_s]
        cov_c[np.ix_(fc, fc)] = X[n_s:, n_s:]
    return cov_s, cov_c
