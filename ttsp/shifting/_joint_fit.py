"""Joint fit of a master curve and the shifts of every isotherm (private).

The model, in log–log coordinates (decades), for point i of isotherm k and function q::

    y_i = F_q(u_i; θ) + v_q * c_k + noise,   u_i = x_i + d * s_k,   d = +1 (frequency), -1 (time)

``s_k`` = log10 a_T of isotherm k, ``c_k`` = log10 b_T (free only in the vertical "fit" mode),
``v_q`` = +1 for a modulus, -1 for a compliance, 0 for tan δ or δ. Two master models F:

``"spectrum"`` (default)
    One relaxation spectrum shared by every measured function: a generalized Maxwell model
    E(t) = E_e + Σ g_j exp(−t/τ_j) with τ_j on a fixed grid (five per decade, two decades
    beyond the data on each side: a mode further out acts on the data only as a constant or
    not at all, which E_e and the nearer modes carry), g_j = exp(φ_j) > 0 and E_e ≥ 0, so E', E'', |E*|, δ and
    tan δ all follow from the same parameters and are consistent with each other (the
    Kramers–Kronig relations hold by construction; Ferry, Viscoelastic Properties of Polymers,
    3rd ed., 1980, ch. 3). Creep compliance uses a retardation spectrum
    D(t) = D_g + Σ h_j (1 − exp(−t/λ_j)) the same way. The log-spectrum is penalised by its
    squared second differences (a smooth spectrum); a spectrum model of the master curve fitted
    with the shifts is among the options Honerkamp & Weese discuss (Rheol. Acta 32:57, 1993).
    Because E' and E'' are tied together, each isotherm's shift is pinned by both at once,
    which is what makes the joint fit more precise than a fit of two independent curves (on the
    benchmark, rms error 0.015 against 0.020 decades). It starts from a non-negative
    least-squares spectrum at the pairwise shifts.
``"spline"``
    One cubic B-spline per function on uniform knots with a third-difference penalty (P-spline,
    Eilers & Marx, Statistical Science 11:89, 1996): no physics, any function.

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
from scipy.optimize import nnls

from .._residual_correlation import lag_one_correlation, variance_inflation
from ..exceptions import FitError

__all__ = ["JointProblem", "JointSolution", "fit_joint", "MASTER_MODELS"]

MASTER_MODELS = ("spectrum", "spline")
_MAD_TO_SIGMA = 1.482602218505602  # 1 / Φ⁻¹(3/4): MAD of a normal sample to its σ
_LN10 = np.log(10.0)
#: a weak prior keeps each shift within about this many decades of its start (pairwise seed):
#: negligible wherever the data determine a shift (stderr ~0.01), it stops a shift that the
#: data do not constrain (a plateau) from wandering off
_PRIOR_SD = 1.0


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
    c_fixed: dict = None   # isotherm -> fixed log10 bT (the vertical gauge anchor)
    relative_noise: np.ndarray = None   # per function: its point-to-point noise, any unit

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


# ---- master models ------------------------------------------------------------------------------
def _basis(u, u0, h, nb):
    """Uniform cubic B-spline basis: column indices, values and first derivatives (4 per row)."""
    z = (u - u0) / h
    j = np.clip(np.floor(z).astype(np.int64), 0, nb - 4)
    t = z - j
    t2 = t * t
    t3 = t2 * t
    omt = 1.0 - t
    B = np.column_stack([omt ** 3 / 6.0, (3 * t3 - 6 * t2 + 4) / 6.0,
                         (-3 * t3 + 3 * t2 + 3 * t + 1) / 6.0, t3 / 6.0])
    dB = np.column_stack([-omt ** 2 / 2.0, (3 * t2 - 4 * t) / 2.0,
                          (-3 * t2 + 2 * t + 1) / 2.0, t2 / 2.0]) / h
    cols = j[:, None] + np.arange(4)
    return cols, B, dB


class _SplineModel:
    """One penalised cubic B-spline per function: F_q(u) = Σ_b θ_qb B_b(u)."""

    linear = True

    def __init__(self, prob, smoothing, spacing=0.2, order=3, margin=1.5):
        self.p = prob
        self.h = float(spacing)
        self.order = int(order)
        self.margin = float(margin)
        self.lam = float(smoothing)

    def build(self, u, theta_old=None):
        lo, hi = float(u.min()), float(u.max())
        m = self.margin + 3 * self.h
        self.u0 = lo - m
        self.nb = int(np.ceil((hi - lo + 2 * m) / self.h)) + 3
        self.lo_ok, self.hi_ok = self.u0, self.u0 + (self.nb - 3) * self.h
        self.n_theta = self.nb * self.p.n_fn
        D = np.diff(np.eye(self.nb), self.order, axis=0)
        counts = np.bincount(self.p.fn, minlength=self.p.n_fn)
        rho = np.maximum(counts, 1) / max(hi - lo, 1.0)
        # λ ρ_q ∫ F_q'''(u)² du, the integral being h^(1-2d) Σ (Δ^d θ)²; ρ_q (points per
        # decade) keeps one λ meaning one bandwidth at any data density
        scale = self.lam * rho * self.h ** (1 - 2 * self.order)
        self.pen_rows = np.zeros((D.shape[0] * self.p.n_fn, self.n_theta))
        for q in range(self.p.n_fn):
            self.pen_rows[q * D.shape[0]:(q + 1) * D.shape[0],
                          q * self.nb:(q + 1) * self.nb] = np.sqrt(scale[q]) * D
        self.pen = self.pen_rows.T @ self.pen_rows
        return np.zeros(self.n_theta)   # a linear model: the first Gauss–Newton step solves it

    def on_grid(self, u):
        return u.min() >= self.lo_ok + 1e-9 and u.max() <= self.hi_ok - 1e-9

    def project(self, theta):
        return theta

    def at_bound(self, theta, grad):
        return np.zeros(theta.size, bool)

    def evaluate(self, u, theta, jac=True):
        cols, B, dB = _basis(u, self.u0, self.h, self.nb)
        cols = cols + (self.p.fn * self.nb)[:, None]
        th = theta[cols]
        F = np.einsum("ij,ij->i", B, th)
        dF = np.einsum("ij,ij->i", dB, th)
        if not jac:
            return F, dF, None
        n = u.size
        if n * self.n_theta <= _DENSE_SHIFT_JACOBIAN:
            # small problems (most campaigns): the same entries in a dense array, whose
            # products cost less than building sparse matrices at every step
            J = np.zeros((n, self.n_theta))
            J[np.arange(n)[:, None], cols] = B
            return F, dF, J
        J = sp.csr_matrix((B.ravel(), (np.repeat(np.arange(n), 4), cols.ravel())),
                          shape=(n, self.n_theta))
        return F, dF, J


def _rows_of(mask: np.ndarray):
    """The rows where ``mask`` holds: a slice when they are contiguous (a view, no copy)."""
    idx = np.flatnonzero(mask)
    if idx.size and idx[-1] - idx[0] + 1 == idx.size:
        return slice(int(idx[0]), int(idx[-1]) + 1)
    return idx


#: which kernel family each function belongs to and how it follows from (E1, E2)
_SPECTRAL_KIND = {"storage_modulus_Pa": "E1", "loss_modulus_Pa": "E2",
                  "complex_modulus_Pa": "abs", "tan_delta": "tan", "phase_angle_rad": "phase",
                  "relaxation_modulus_Pa": "relax", "creep_compliance_1_per_Pa": "creep"}


class _SpectrumModel:
    """A smooth positive spectrum shared by all functions (see the module docstring).

    θ = [E_0, φ_1 … φ_M]: E_0 ≥ 0 is the equilibrium modulus E_e (or glassy compliance D_g),
    exp(φ_j) the strength of the mode at τ_j, both in units of ``10**log10_scale`` (Pa or
    1/Pa). The constant is linear, not exp(φ_0): a logarithmic parameter has a gradient
    proportional to its value, so once it had shrunk the fit could not bring it back and slow
    modes would imitate it, with a spurious tail in E''.
    """

    linear = False

    def __init__(self, prob, y, smoothing, spacing=0.2, order=2, margin=2.0):
        self.p = prob
        self.h = float(spacing)
        self.order = int(order)
        self.margin = float(margin)
        self.lam = float(smoothing)
        self.kinds = [_SPECTRAL_KIND[f] for f in prob.functions]
        self.kind_of_row = np.array(self.kinds, dtype=object)[prob.fn]
        self.row_groups = [(kind, _rows_of(prob.fn == q)) for q, kind in enumerate(self.kinds)
                           if np.any(prob.fn == q)]
        self.time = prob.direction < 0
        scaled = [q for q, k in enumerate(self.kinds) if k not in ("tan", "phase")]
        sel = np.isin(prob.fn, scaled)
        self.log10_scale = float(np.median(y[sel])) if sel.any() else 0.0
        self.offset = np.array([self.log10_scale if k not in ("tan", "phase") else 0.0
                                for k in self.kinds])[prob.fn]
        self.y = y

    def build(self, u, theta_old=None):
        lo, hi = float(u.min()), float(u.max())
        m = self.margin
        # grid of log10 τ: in frequency ω τ = 1 at log τ = -u; in time t/τ = 1 at log τ = u
        a, b = (lo - m, hi + m) if self.time else (-hi - m, -lo + m)
        old = getattr(self, "ltau", None)
        self.ltau = np.arange(a, b + 1e-9, self.h)
        self.lo_ok, self.hi_ok = lo - (m - 1.0), hi + (m - 1.0)
        M = self.ltau.size
        self.n_theta = M + 1
        D = np.diff(np.eye(M), self.order, axis=0)
        rho = self.p.x.size / max(hi - lo, 1.0)
        scale = self.lam * rho * self.h ** (1 - 2 * self.order)
        scaled = any(k not in ("tan", "phase") for k in self.kinds)
        self.pen_rows = np.zeros((D.shape[0] + (0 if scaled else 1), self.n_theta))
        self.pen_rows[:D.shape[0], 1:] = np.sqrt(scale) * D
        if not scaled:
            # tan δ and δ do not see the modulus scale: fix it with a tiny ridge on Σ φ
            self.pen_rows[-1, 1:] = np.sqrt(1e-6 * rho) / np.sqrt(M)
        self.pen = self.pen_rows.T @ self.pen_rows
        if theta_old is not None and old is not None:
            phi = np.interp(self.ltau, old, theta_old[1:])
            return np.concatenate([[theta_old[0]], phi])
        return self._start(u)

    def _kernels(self, u):
        """Kernel matrices at reduced abscissae u: (K, dK/dln x) for E1/E2 (frequency) or for
        relaxation/creep (time), as a dict by kind."""
        X = self._x(u)
        if self.time:
            ex = np.exp(-X)
            return {"relax": (ex, -X * ex), "creep": (1.0 - ex, X * ex)}
        X2 = X * X
        den = 1.0 + X2
        return {"E1": (X2 / den, 2.0 * X2 / den ** 2), "E2": (X / den, X * (1.0 - X2) / den ** 2)}

    def _start(self, u):
        """Starting spectrum: non-negative least squares (Lawson & Hanson, Solving Least Squares
        Problems, 1974) of the relative misfit of the functions that are linear in the spectrum
        (E', E'', E(t), D(t)) at the starting shifts, smoothed over 0.4 decade so that its
        logarithm is finite and smooth; a flat spectrum when no such function is measured."""
        lin = np.flatnonzero(np.isin(self.kind_of_row, ["E1", "E2", "relax", "creep"]))
        if lin.size < 3:
            return self._flat_start(u)
        if lin.size > 3000:
            lin = lin[np.linspace(0, lin.size - 1, 3000).astype(int)]
        kern = self._kernels(u[lin])
        kinds = self.kind_of_row[lin]
        K = np.zeros((lin.size, self.ltau.size))
        const = np.zeros(lin.size)
        for kind, (Kk, _) in kern.items():
            r = kinds == kind
            K[r] = Kk[r]
            const[r] = 0.0 if kind == "E2" else 1.0
        E = 10.0 ** (self.y[lin] - self.offset[lin])
        A = np.column_stack([const, K]) / E[:, None]
        try:
            sol, _ = nnls(A, np.ones(lin.size), maxiter=50 * A.shape[1])
        except RuntimeError:   # pragma: no cover - nnls iteration limit
            return self._flat_start(u)
        g = sol[1:]
        if not np.any(g > 0):
            return self._flat_start(u)
        k = np.exp(-0.5 * (np.arange(-6, 7) * self.h / 0.4) ** 2)
        g = np.convolve(g, k / k.sum(), mode="same")
        g = g + 1e-4 * g.max()
        return np.concatenate([[sol[0]], np.log(g)])

    def _flat_start(self, u):
        """A flat spectrum spanning the measured range of the (scaled) values, and a constant
        term of half the smallest value of a function that contains it (E', |E*|, E(t), D(t)).

        The constant must not start near zero: its gradient is proportional to it, so a tiny
        start would stay tiny and slow modes would have to imitate it, with a wrong E'' tail.
        """
        y = self.y - self.offset
        scaled = np.array([k not in ("tan", "phase") for k in self.kind_of_row])
        if scaled.any():
            lo_v, hi_v = 10.0 ** np.min(y[scaled]), 10.0 ** np.max(y[scaled])
        else:
            lo_v, hi_v = 1.0, 100.0
        with_constant = np.isin(self.kind_of_row, ["E1", "abs", "relax", "creep"])
        base = 10.0 ** np.min(y[with_constant]) if with_constant.any() else lo_v
        n_win = max((u.max() - u.min()) / self.h, 1.0)
        phi = np.full(self.ltau.size, np.log(max(hi_v - lo_v, 1e-3 * hi_v) / n_win))
        return np.concatenate([[base / 2.0], phi])

    def on_grid(self, u):
        return u.min() >= self.lo_ok and u.max() <= self.hi_ok

    #: modes weaker than exp(-30) ≈ 1e-13 of the strongest are held there: they are invisible
    #: in any data, and letting their logarithm slide towards -∞ only makes the fit creep
    _FLOOR = 30.0

    def project(self, theta):
        """Keep the constant term non-negative (a value below 1e-8 of the scale, no measurable
        equilibrium modulus, is set to 0) and the log-strengths above the floor."""
        floor = np.max(theta[1:]) - self._FLOOR
        if theta[0] < 1e-8 or np.any(theta[1:] < floor):
            theta = theta.copy()
            if theta[0] < 1e-8:
                theta[0] = 0.0
            theta[1:] = np.maximum(theta[1:], floor)
        return theta

    def at_bound(self, theta, grad):
        """Parameters held at their bound this step (an active set): the constant at 0 and
        log-strengths at the floor, each with a gradient that would take it further."""
        held = np.zeros(theta.size, bool)
        held[0] = theta[0] <= 0.0 and grad[0] > 0.0
        floor = np.max(theta[1:]) - self._FLOOR
        held[1:] = (theta[1:] <= floor + 1e-12) & (grad[1:] > 0.0)
        return held

    def _x(self, u):
        """x = ω τ_j (frequency) or t/τ_j (time) for every row and mode, as an outer product
        (no power per element)."""
        b = 10.0 ** (-self.ltau if self.time else self.ltau)
        return np.multiply.outer(10.0 ** np.clip(u, -150, 150), b)

    def evaluate(self, u, theta, jac=True):
        n = u.size
        g = np.exp(np.clip(theta[1:], -700, 700))
        e0 = float(theta[0])
        X = self._x(u)
        F = np.empty(n)
        dF = np.empty(n)
        J = np.empty((n, self.n_theta)) if jac else None
        kinds = self.kind_of_row
        if self.time:
            for kind in ("relax", "creep"):
                r = np.flatnonzero(kinds == kind)
                if r.size == 0:
                    continue
                Xr = X[r]
                ex = np.exp(-Xr)
                dK = Xr * ex
                if kind == "relax":
                    K = ex
                    dK = -dK
                else:
                    K = 1.0 - ex
                E = e0 + K @ g
                F[r] = np.log(E)
                dF[r] = (dK @ g) / E
                if jac:
                    J[r, 0] = 1.0 / E
                    J[r, 1:] = K * g * (1.0 / E)[:, None]
        else:
            # each function on its own rows (contiguous when the problem is ordered by
            # function), with only the kernels and derivatives that function needs
            for kind, r in self.row_groups:
                Xr = X[r]
                inv = 1.0 / (1.0 + Xr * Xr)
                K2 = Xr * inv                      # ωτ/(1 + ω²τ²)
                K1 = Xr * K2                       # ω²τ²/(1 + ω²τ²)
                if kind == "E1":
                    a1 = e0 + K1 @ g
                    F[r] = np.log(a1)
                    dF[r] = 2.0 * ((K1 * inv) @ g) / a1       # dE'/dln ω / E'
                    if jac:
                        J[r, 0] = 1.0 / a1
                        J[r, 1:] = K1 * ((1.0 / a1)[:, None] * g)
                    continue
                if kind == "E2":
                    a2 = K2 @ g
                    F[r] = np.log(a2)
                    dF[r] = ((K2 * (inv - K1)) @ g) / a2      # dE''/dln ω / E''
                    if jac:
                        J[r, 0] = 0.0
                        J[r, 1:] = K2 * ((1.0 / a2)[:, None] * g)
                    continue
                a1, a2 = e0 + K1 @ g, K2 @ g
                E1u, E2u = 2.0 * ((K1 * inv) @ g), (K2 * (inv - K1)) @ g
                if kind == "abs":
                    m2 = a1 * a1 + a2 * a2
                    F[r] = 0.5 * np.log(m2)
                    c1, c2 = a1 / m2, a2 / m2
                elif kind == "tan":
                    F[r] = np.log(a2 / a1)
                    c1, c2 = -1.0 / a1, 1.0 / a2
                else:  # phase angle δ = atan2(E2, E1)
                    m2 = a1 * a1 + a2 * a2
                    d = np.arctan2(a2, a1)
                    F[r] = np.log(d)
                    c1, c2 = -a2 / (m2 * d), a1 / (m2 * d)
                dF[r] = c1 * E1u + c2 * E2u
                if jac:
                    J[r, 0] = c1
                    J[r, 1:] = (c1[:, None] * K1 + c2[:, None] * K2) * g
        # natural log of the scaled value -> log10 of the value in SI
        F = F / _LN10 + self.offset
        if jac:
            J /= _LN10
        return F, dF, J


# ---- the joint fit ----------------------------------------------------------------------------
#: the Jacobian of the residuals in the shifts (one or two nonzeros per row) is held dense up
#: to this many entries: small problems (most campaigns) then skip the fixed cost of sparse
#: matrices, large ones keep the sparse products that grow linearly with the data
_DENSE_SHIFT_JACOBIAN = 200_000


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


class _Fit:
    def __init__(self, prob: JointProblem, model, s0, c0, start=None):
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
        self.huber = None
        self.iterations = 0
        self.converged = False
        self.theta = model.build(self.u(self.s))
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
        if n * n_sc <= _DENSE_SHIFT_JACOBIAN:
            Jsc = np.zeros((n, n_sc))
            for rr, cc, vv in zip(rows, cols, vals):
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

    def gauss_newton(self, max_iter=100, tol=1e-10, max_shift_step=0.3, curve_only=False):
        vec = self.pack()
        theta, s, c = self.unpack(vec)
        r, _, _, _, J = self.evaluate(theta, s, c)
        phi = self.loss(r, theta, s, c)
        mu = 1e-4 if self.model.linear else 1e-3
        converged = False
        nt = self.n_theta
        it = 0
        slow = 0
        for it in range(1, max_iter + 1):
            w = self.weights(r)
            A = self.normal(J, w)
            g = self.gradient(J, w, r, theta, s, c)
            # free parameters of this step: all but the shifts (curve only) and any parameter
            # held at its bound with the gradient pushing outwards (an active set)
            free = np.ones(self.n_par, bool)
            if curve_only:
                free[nt:] = False
            at_bound = self.model.at_bound(theta, g[:nt])
            free[:nt][at_bound] = False
            A, g_f = A[np.ix_(free, free)], g[free]
            dA = np.diag(A).copy()
            accepted = False
            for _ in range(40):
                Mx = A + np.diag(mu * dA + 1e-12 * (dA.max() + 1.0))
                try:
                    sf = _cholesky_solve(Mx, -g_f)
                except (LinAlgError, ValueError):
                    mu *= 10.0
                    continue
                step = np.zeros(self.n_par)
                step[free] = sf
                big = np.max(np.abs(step[self.sc])) if step[self.sc].size else 0.0
                if big > max_shift_step:
                    step *= max_shift_step / big
                    big = max_shift_step
                trial = vec + step
                if not np.all(np.isfinite(trial)):
                    mu *= 4.0
                    continue
                trial[:nt] = self.model.project(trial[:nt])
                th_t, s_t, c_t = self.unpack(trial)
                if not self.model.on_grid(self.u(s_t)):
                    # the shifts moved the data off the model's grid: rebuild it around the
                    # trial shifts (carrying the curve over) and start the iteration afresh
                    self.s, self.c = s_t, c_t
                    self.theta = self.model.build(self.u(s_t), th_t)
                    self._layout()
                    self.iterations += it
                    if self.model.linear:
                        self.gauss_newton(max_iter=3, curve_only=True)
                    return self.gauss_newton(max_iter, tol, max_shift_step, curve_only)
                # with the Jacobian at once: most trial steps are accepted, and evaluating the
                # model a second time for it cost more than building it for a rejected step
                r_t, _, _, _, J_t = self.evaluate(th_t, s_t, c_t)
                phi_t = self.loss(r_t, th_t, s_t, c_t)
                if np.isfinite(phi_t) and phi_t <= phi:
                    dphi = phi - phi_t
                    vec, theta, s, c, r, J, phi = trial, th_t, s_t, c_t, r_t, J_t, phi_t
                    mu = max(mu / 3.0, 1e-10)
                    accepted = True
                    # converged: the objective no longer changes, or the shifts have stopped
                    # (< 1e-5 decades per step for two steps running) while the objective only
                    # creeps (< 1e-4 of itself per step: the spectrum trading its constant
                    # against modes beyond the data along a flat valley does this); with no
                    # free shift (a curve-only pass) that is two steps of such creeping
                    creep = big < 1e-5 and dphi <= 1e-4 * (1.0 + phi)
                    slow = slow + 1 if creep else 0
                    if (dphi <= tol * (1.0 + phi) and big < 1e-6) or slow >= 2:
                        converged = True
                    break
                mu *= 4.0
            self.theta, self.s, self.c = theta, s, c
            if not accepted:
                converged = True  # no descent possible at machine precision: a minimum
            if converged:
                break
        self.iterations += it
        self.converged = converged
        return converged

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


def fit_joint(prob: JointProblem, s0, c0=None, *, model="spectrum", robust=True, huber=1.5,
              smoothing=None, max_iter=200, start=None) -> JointSolution:
    """Fit a master curve and the shifts of one connected set of isotherms jointly.

    Parameters
    ----------
    prob : JointProblem
        Flattened data; fixed shifts include the gauge anchor.
    s0, c0 : array
        Starting log10 a_T (and log10 b_T) per isotherm, e.g. from pairwise overlaps; the
        weak prior on the shifts is centred on them.
    model : {"spectrum", "spline"}
        Master-curve model (see the module docstring).
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
    """
    if model == "spectrum":
        m = _SpectrumModel(prob, prob.y, 0.05 if smoothing is None else smoothing)
    else:
        m = _SplineModel(prob, 3.0 if smoothing is None else smoothing)
    fit = _Fit(prob, m, s0, c0, start)
    # the curve at the starting shifts with a typical noise scale (0.01 decades, 2 %), then
    # the noise scales of its residuals, so that the penalty weighs against the data in the
    # right units from the first joint step on
    fit.sigma = np.full(prob.n_fn, 0.01)
    fit.gauss_newton(max_iter=min(max_iter, 50), tol=1e-4, curve_only=True)
    # then the joint fit, with the noise scales re-estimated from its residuals until they
    # settle (the first round's come from the curve at the starting shifts, so at least two)
    for round_ in range(4):
        r, raw, _, _, _ = fit.evaluate(fit.theta, fit.s, fit.c, jac=False)
        new_sigma = fit.estimate_sigma(raw)
        change = np.max(np.abs(np.log(new_sigma / fit.sigma)))
        fit.sigma = new_sigma
        fit.huber = huber if robust else None
        fit.gauss_newton(max_iter=max_iter)
        if round_ > 0 and change < 0.05:
            break
    r, raw, dF, u, J = fit.evaluate(fit.theta, fit.s, fit.c)
    w = fit.weights(r)
    if not np.all(np.isfinite(r)):
        raise FitError("the joint shift fit produced non-finite residuals")

    # curvature of the penalised objective, its inverse, the effective number of parameters.
    # With the Huber loss the covariance is Huber's asymptotic one for M-estimators (Robust
    # Statistics, 1981, regression chapter): Σψ(r)²/(n − p) / (mean ψ'(r))² times the inverse
    # of the unweighted curvature; with least squares (ψ(r) = r) the usual residual variance
    H = fit.normal(J, np.ones_like(r))
    H[np.diag_indices_from(H)] += 1e-10 * (np.max(np.diag(H)) + 1.0)
    try:
        factor = lu_factor(H, check_finite=False)
    except (LinAlgError, ValueError) as exc:  # pragma: no cover - degenerate input only
        raise FitError(f"the joint shift fit is singular: {exc}") from None
    R = m.pen_rows
    n_sc = fit.n_par - fit.n_theta
    Rt = np.zeros((fit.n_par, R.shape[0] + n_sc))
    Rt[:fit.n_theta, :R.shape[0]] = R.T
    Rt[fit.n_theta + np.arange(n_sc), R.shape[0] + np.arange(n_sc)] = 1.0 / _PRIOR_SD
    p_eff = fit.n_par - float(np.sum(Rt * lu_solve(factor, Rt, check_finite=False)))
    dof = max(r.size - p_eff, 1.0)
    psi = w * r
    dpsi = np.mean(np.abs(r) <= fit.huber) if fit.huber is not None else 1.0
    var = float(np.sum(psi * psi) / dof / max(dpsi, 0.5) ** 2)
    # residuals correlated along each isotherm carry fewer independent pieces of information
    # than points: the covariance is inflated by the AR(1) factor of their pooled lag-one
    # correlation (ttsp._residual_correlation), 1 for uncorrelated residuals; the bias of the
    # estimate is that of a sequence of (n - p_eff)/n_seq free points, what the curve leaves
    seq = prob.iso * prob.n_fn + prob.fn
    rho = lag_one_correlation(psi, seq)
    n_seq = max(np.unique(seq).size, 1)
    inflation = variance_inflation(rho, (r.size - p_eff) / n_seq, r.size - n_seq)
    n_s, n_c = int(fit.free_s.sum()), int(fit.free_c.sum())
    cov_s = np.zeros((prob.n_iso, prob.n_iso))
    cov_c = np.zeros((prob.n_iso, prob.n_iso))
    if n_s + n_c:
        E = np.zeros((fit.n_par, n_s + n_c))
        E[fit.n_theta + np.arange(n_s + n_c), np.arange(n_s + n_c)] = 1.0
        X = lu_solve(factor, E, check_finite=False)[fit.n_theta:] * (var * inflation)
        X = 0.5 * (X + X.T)
        fs = np.flatnonzero(fit.free_s)
        fc = np.flatnonzero(fit.free_c)
        cov_s[np.ix_(fs, fs)] = X[:n_s, :n_s]
        cov_c[np.ix_(fc, fc)] = X[n_s:, n_s:]
    return JointSolution(s=fit.s.copy(), c=fit.c.copy(), cov_s=cov_s, cov_c=cov_c,
                         residual=raw, scaled_residual=raw / fit.sigma[prob.fn],
                         sigma=fit.sigma.copy(), slope=dF, u=u, weights=w,
                         objective=float(fit.loss(r, fit.theta, fit.s, fit.c)), variance_factor=var,
                         effective_parameters=p_eff, iterations=fit.iterations,
                         converged=bool(fit.converged), model=model,
                         residual_correlation=rho, correlation_inflation=inflation)
