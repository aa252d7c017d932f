"""The master-curve models of the joint shift fit (private): a shared spectrum, or splines.

The joint fit (:mod:`ttsp.shifting._joint_fit`) lays every isotherm on a master curve F_q of
each function q in log–log coordinates (decades), y = F_q(u; θ) at the reduced abscissa u. A
model here builds its parameters θ over the range of u, evaluates F_q, its slope dF_q/du and
the Jacobian ∂F/∂θ, keeps θ within its bounds and carries the roughness penalty (its rows
``pen_rows`` and their product ``pen``). Two models:

``"spectrum"`` (default)
    One relaxation spectrum shared by every measured function: a generalized Maxwell model
    E(t) = E_e + Σ g_j exp(−t/τ_j) with τ_j on a fixed grid (five per decade, two decades
    beyond the data on each side: a mode further out acts on the data only as a constant or
    not at all, which E_e and the nearer modes carry), g_j = exp(φ_j) > 0 and E_e ≥ 0, so E',
    E'', |E*|, δ and tan δ all follow from the same parameters and are consistent with each
    other (the Kramers–Kronig relations hold by construction; Ferry, Viscoelastic Properties of
    Polymers, 3rd ed., 1980, ch. 3). Creep compliance uses a retardation spectrum
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
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.optimize import nnls

__all__ = ["MASTER_MODELS", "CarriedSpectrum", "SpectrumModel", "SplineModel",
           "make_curve_model", "DENSE_JACOBIAN_MAX_ENTRIES"]

MASTER_MODELS = ("spectrum", "spline")
_LN10 = np.log(10.0)
#: a Jacobian (of the spline in its coefficients here, of the residuals in the shifts in the
#: joint fit; a few nonzeros per row) is held dense up to this many entries: small problems
#: (most campaigns) then skip the fixed cost of sparse matrices, large ones keep the sparse
#: products that grow linearly with the data. Read at each use, so a test can force the
#: sparse form.
DENSE_JACOBIAN_MAX_ENTRIES = 200_000


def make_curve_model(prob, model: str, smoothing: float | None):
    """The master-curve model ``model`` ("spectrum" or "spline") of a joint problem, with its
    default penalty weight λ when ``smoothing`` is None: 0.05 on the log-spectrum, 3 on a
    spline (chosen on synthetic benchmark campaigns, benchmarks/bench_shifting.py)."""
    if model == "spectrum":
        return SpectrumModel(prob, prob.y, 0.05 if smoothing is None else smoothing)
    return SplineModel(prob, 3.0 if smoothing is None else smoothing)


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


class SplineModel:
    """One penalised cubic B-spline per function: F_q(u) = Σ_b θ_qb B_b(u)."""

    linear = True

    def __init__(self, prob, smoothing, spacing=0.2, order=3, margin=1.5):
        self.p = prob
        self.h = float(spacing)
        self.order = int(order)
        self.margin = float(margin)
        self.lam = float(smoothing)

    def build(self, u, theta_old=None, carried=None):
        """Knots over the reduced range u and the penalty; θ starts at zero (``theta_old`` and
        ``carried`` are not needed: the first Gauss–Newton step solves a linear model)."""
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

    def carried(self, theta) -> None:
        """Nothing to carry to another fit (see :meth:`build`)."""
        return None

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
        if n * self.n_theta <= DENSE_JACOBIAN_MAX_ENTRIES:
            # small problems (most campaigns): the same entries in a dense array, whose
            # products cost less than building sparse matrices at every step
            J = np.zeros((n, self.n_theta))
            J[np.arange(n)[:, None], cols] = B
            return F, dF, J
        J = sp.csr_matrix((B.ravel(), (np.repeat(np.arange(n), 4), cols.ravel())),
                          shape=(n, self.n_theta))
        return F, dF, J


#: the spectrum model's kernels are made for at most this many rows at a time: the temporaries
#: of one evaluation then stay a few MB whatever the campaign's size (a 500-isotherm
#: campaign's folds, run two at a time, held several hundred MB each without it)
EVAL_CHUNK_ROWS = 4096


def _row_chunks(rows):
    """``rows`` (a slice or an index array) in pieces of at most EVAL_CHUNK_ROWS rows."""
    if isinstance(rows, slice):
        return [slice(a, min(a + EVAL_CHUNK_ROWS, rows.stop))
                for a in range(rows.start, rows.stop, EVAL_CHUNK_ROWS)]
    return [rows[a:a + EVAL_CHUNK_ROWS] for a in range(0, rows.size, EVAL_CHUNK_ROWS)]


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


@dataclass(frozen=True)
class CarriedSpectrum:
    """A fitted spectrum in absolute units, to start another fit of nearly the same isotherms
    from (a cross-validation fold): log10 τ_j, E_0 and φ_j as in :class:`SpectrumModel`, in
    units of ``10**log10_scale``, and whether it is a time-domain (relaxation/creep) one."""

    ltau: np.ndarray
    theta: np.ndarray
    log10_scale: float
    time: bool

    def moved(self, du: float) -> CarriedSpectrum:
        """The same spectrum for reduced abscissae u + du (another gauge of the shifts): in
        frequency ωτ = 1 at log10 τ = −u, in time t/τ = 1 at log10 τ = u."""
        return CarriedSpectrum(self.ltau + (du if self.time else -du), self.theta,
                               self.log10_scale, self.time)


class SpectrumModel:
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

    def build(self, u, theta_old=None, carried: CarriedSpectrum | None = None):
        """The grid of log10 τ over the reduced range u, its penalty, and the starting θ: the
        old θ moved onto the new grid (``theta_old``, after the shifts left the old one), a
        ``carried`` spectrum of another fit in this fit's units, or :meth:`_start`."""
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
        if carried is not None and carried.time == self.time:
            # the same spectrum in this fit's units: strengths times 10**(old − new scale)
            d = carried.log10_scale - self.log10_scale
            phi = np.interp(self.ltau, carried.ltau, carried.theta[1:]) + _LN10 * d
            return np.concatenate([[carried.theta[0] * 10.0 ** d], phi])
        return self._start(u)

    def carried(self, theta) -> CarriedSpectrum:
        """``theta`` on the present grid as a :class:`CarriedSpectrum`."""
        return CarriedSpectrum(self.ltau.copy(), np.array(theta, float), self.log10_scale,
                               bool(self.time))

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
        F = np.empty(n)
        dF = np.empty(n)
        J: np.ndarray | None = np.empty((n, self.n_theta)) if jac else None
        kinds = self.kind_of_row
        if self.time:
            for kind, r in ((k, rr) for k in ("relax", "creep")
                            for rr in _row_chunks(np.flatnonzero(kinds == k))):
                if r.size == 0:
                    continue
                Xr = self._x(u[r])
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
                if J is not None:
                    J[r, 0] = 1.0 / E
                    J[r, 1:] = K * g * (1.0 / E)[:, None]
        else:
            # each function on its own rows (contiguous when the problem is ordered by
            # function), with only the kernels and derivatives that function needs
            for kind, r in ((k, rr) for k, rows in self.row_groups for rr in _row_chunks(rows)):
                Xr = self._x(u[r])
                inv = 1.0 / (1.0 + Xr * Xr)
                K2 = Xr * inv                      # ωτ/(1 + ω²τ²)
                K1 = Xr * K2                       # ω²τ²/(1 + ω²τ²)
                if kind == "E1":
                    a1 = e0 + K1 @ g
                    F[r] = np.log(a1)
                    dF[r] = 2.0 * ((K1 * inv) @ g) / a1       # dE'/dln ω / E'
                    if J is not None:
                        J[r, 0] = 1.0 / a1
                        J[r, 1:] = K1 * ((1.0 / a1)[:, None] * g)
                    continue
                if kind == "E2":
                    a2 = K2 @ g
                    F[r] = np.log(a2)
                    dF[r] = ((K2 * (inv - K1)) @ g) / a2      # dE''/dln ω / E''
                    if J is not None:
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
                if J is not None:
                    J[r, 0] = c1
                    J[r, 1:] = (c1[:, None] * K1 + c2[:, None] * K2) * g
        # natural log of the scaled value -> log10 of the value in SI
        F = F / _LN10 + self.offset
        if J is not None:
            J /= _LN10
        return F, dF, J
