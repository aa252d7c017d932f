"""The joint fit of each connected group of isotherms, and their shifts put together (private).

Neighbours without a gap between them form connected groups; each group of two or more
isotherms is fitted jointly (:func:`~ttsp.shifting._joint_fit.fit_joint`), seeded by its
chained pairwise shifts and held at 0 at the isotherm nearest the reference (or at the user's
fixed shifts). Neighbours whose reduced ranges are still apart after the fit are a gap too: the
groups are split there and fitted again. An earlier fit (``start_from``) only moves where the
iterations start. :func:`assemble_shifts` then puts every group's shifts and covariances into
the arrays of the whole campaign, each group still in its own gauge.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .._blas import one_blas_thread
from .._noise import typical_log_noise
from ._fit_data import FitData
from ._joint_fit import JointProblem, JointSolution, fit_joint
from ._neighbours import Neighbours, stop_on_gaps
from ._options import ShiftOptions

__all__ = ["GroupFit", "GroupFits", "Shifts", "fit_groups", "assemble_shifts",
           "NOISE_RATIO_TRUSTED"]

#: one function's point-to-point noise must be at least this many times another's before the
#: joint fit weighs them differently (see _fit_group)
NOISE_RATIO_TRUSTED = 3.0


@dataclass
class GroupFit:
    """The joint fit of one group: shifts ``s``, vertical shifts ``c`` and their covariances
    in the group's gauge, the solution, and per fitted value its isotherm within the group
    (``iso``), function (``fn``) and point within the isotherm's fitted points (``point``);
    ``u_range`` the reduced log10 x range of each isotherm."""

    s: np.ndarray
    c: np.ndarray
    cov_s: np.ndarray
    cov_c: np.ndarray
    solution: JointSolution
    iso: np.ndarray
    fn: np.ndarray
    point: np.ndarray
    u_range: list


@dataclass
class GroupFits:
    """The connected groups (lists of isotherm indices), the fit of each group of two or more
    by its position in ``comps``, and every gap (isotherm k -> why k and k + 1 do not
    overlap), those found after the fit included."""

    comps: list
    fits: dict
    gaps: dict

    def fitted_curves(self, temps: np.ndarray) -> tuple:
        """Per fitted group: its temperatures, its shifts in its own gauge and its fitted
        spectrum (``ShiftResult.fitted_curves``)."""
        return tuple((temps[comp], self.fits[ci].s.copy(), self.fits[ci].solution.curve)
                     for ci, comp in enumerate(self.comps) if ci in self.fits)


@dataclass
class Shifts:
    """log10 a_T (``s``) and log10 b_T (``c``) of every isotherm with their covariances, which
    isotherms were ``bridged``, and the notes of these steps; later the stderr within each group
    (``group_stderr``), and, in the reference's gauge, ``stderr``, ``log10_bT`` (the known
    vertical shift included) and ``log10_bT_stderr``."""

    s: np.ndarray
    c: np.ndarray
    cov_s: np.ndarray
    cov_c: np.ndarray
    bridged: np.ndarray
    notes: list = field(default_factory=list)
    bridge_note: str | None = None
    group_stderr: np.ndarray | None = None
    stderr: np.ndarray | None = None
    log10_bT: np.ndarray | None = None
    log10_bT_stderr: np.ndarray | None = None


def fit_groups(data: FitData, neighbours: Neighbours, options: ShiftOptions) -> GroupFits:
    """Joint fit per connected group; a post-fit check may split groups further.

    Raises
    ------
    DataError
        With ``gaps="stop"``, when neighbours are still apart after the fit.
    """
    n = options.n
    gap_info = neighbours.gaps
    warm = _start_of(options.start_from, options.temps, options.fit_vertical)
    x_word = options.derived.x_name.split("_")[0]
    for _round in range(n):
        comps = _connected_groups(gap_info, n)
        fits = {}
        new_gaps = {}
        for ci, comp in enumerate(comps):
            if len(comp) < 2:
                continue
            with one_blas_thread():   # small problems: see ttsp._blas
                fits[ci] = _fit_group(comp, data, neighbours.pairs, options, warm)
            new_gaps.update(_gaps_after_fit(comp, fits[ci].u_range, x_word))
        if not new_gaps:
            break
        if options.gaps == "stop":
            stop_on_gaps(new_gaps, options.temps)
        gap_info.update(new_gaps)
    return GroupFits(comps=comps, fits=fits, gaps=gap_info)


def _connected_groups(gap_info: dict, n: int) -> list:
    """Runs of neighbouring isotherms without a gap between them."""
    comps, start = [], 0
    for k in range(n - 1):
        if k in gap_info:
            comps.append(list(range(start, k + 1)))
            start = k + 1
    comps.append(list(range(start, n)))
    return comps


def _gaps_after_fit(comp: list, u: list, x_word: str) -> dict:
    """Neighbours of a fitted group whose reduced ranges are still apart."""
    gaps = {}
    for a in range(len(comp) - 1):
        if u[a + 1][0] > u[a][1] or u[a][0] > u[a + 1][1]:
            size = max(u[a + 1][0] - u[a][1], u[a][0] - u[a + 1][1])
            gaps[comp[a]] = (f"after the best shift their {x_word} ranges are still "
                             f"{size:.2f} decades apart")
    return gaps


def _at_temperature(known: np.ndarray, t: float) -> np.ndarray:
    """Indices of ``known`` temperatures equal to ``t`` (to 1e-9 of it)."""
    return np.flatnonzero(np.abs(known - t) <= 1e-9 * max(abs(t), 1.0))


def _start_of(start_from, temps, fit_vertical):
    """Per isotherm (log10 a_T, log10 b_T) of an earlier fit, matched by temperature (NaN
    where it has no such isotherm); None without an earlier fit."""
    if start_from is None:
        return None
    known = np.asarray(start_from.temperature_K, float)
    s, c = np.full(temps.size, np.nan), np.zeros(temps.size)
    for k, t in enumerate(temps):
        j = _at_temperature(known, t)
        if j.size:
            s[k] = start_from.log10_aT[j[0]]
            if fit_vertical:
                c[k] = start_from.log10_bT[j[0]]
    return s, c


def _component_start(start, comp, anchor, gauge_fixed):
    """The earlier fit's shifts of one group in the group's gauge (0 at its anchor unless
    fixed shifts set the gauge), or None when it lacks one of the group's isotherms."""
    if start is None:
        return None
    s, c = start[0][comp], start[1][comp]
    if not np.all(np.isfinite(s)):
        return None
    return (s if gauge_fixed else s - s[anchor]), c - c[anchor]


def _component_curve(start_from, temps, anchor_T: float, gauge_fixed: bool,
                     direction: float):
    """The spectrum of the earlier fit's group that holds ``temps`` (all of them), moved into
    this group's gauge (its shift 0 at ``anchor_T`` unless fixed shifts set the gauge); None
    when no such group has one."""
    if start_from is None:
        return None
    for group_T, group_s, curve in start_from.fitted_curves:
        if curve is None:
            continue
        if not all(_at_temperature(group_T, t).size for t in temps):
            continue
        if gauge_fixed:
            return curve
        a = _at_temperature(group_T, anchor_T)
        # u here = x + d (s − s[anchor]) = u there − d s[anchor]
        return curve.moved(-direction * float(group_s[a[0]]))
    return None


def _fit_group(comp, data: FitData, pairs, options: ShiftOptions, start=None) -> GroupFit:
    """Seed by chained pairwise shifts, then fit one connected group of isotherms jointly
    (iterations from ``start``, an earlier fit's shifts, when given)."""
    X, Y, functions, vsign = data.X, data.Y, options.chosen, options.vsign
    fixed, temps = options.fixed, options.temps
    m = len(comp)
    s0 = np.zeros(m)
    c0 = np.zeros(m)
    for a in range(m - 1):
        p = pairs[comp[a]]
        s0[a + 1] = s0[a] + options.direction * p["delta"]
        c0[a + 1] = c0[a] + p["offset"]
    local_fixed = {a: fixed[k] for a, k in enumerate(comp) if k in fixed}
    fixed_here = bool(local_fixed)
    anchor = int(np.argmin(np.abs(temps[comp] - options.t_ref)))
    if local_fixed:
        s0 += np.mean([v - s0[a] for a, v in local_fixed.items()])
    else:
        s0 -= s0[anchor]
        local_fixed = {anchor: 0.0}
    c0 -= c0[anchor]
    xs, ys, iso_rows, fn_rows, point_rows = [], [], [], [], []
    # ordered by function, then isotherm: the master-curve model evaluates each function on
    # its own block of rows
    for q in range(len(functions)):
        for a, k in enumerate(comp):
            ok = np.isfinite(Y[k][:, q])
            xs.append(X[k][ok])
            ys.append(Y[k][ok, q])
            iso_rows.append(np.full(ok.sum(), a))
            fn_rows.append(np.full(ok.sum(), q))
            point_rows.append(np.flatnonzero(ok))
    x, y = np.concatenate(xs), np.concatenate(ys)
    iso, fn = np.concatenate(iso_rows), np.concatenate(fn_rows)
    point = np.concatenate(point_rows)
    # each function's point-to-point noise (third differences along each isotherm), which
    # sets its weight against the others of its kind (see _Fit.estimate_sigma in _joint_fit)
    # when it clearly differs: with ten points per isotherm the estimate scatters by up to a
    # factor of two between functions of equal noise (measured on the test campaigns), so a
    # ratio below NOISE_RATIO_TRUSTED counts as equal noise
    noise = np.array([typical_log_noise([X[k] for k in comp], [Y[k][:, q] for k in comp])
                      for q in range(len(functions))])
    ratio = noise / noise.min()
    prob = JointProblem(x=x, y=y, iso=iso, fn=fn, n_iso=m, functions=functions,
                        direction=options.direction, vertical_sign=vsign, s_fixed=local_fixed,
                        fit_vertical=options.fit_vertical, c_fixed={anchor: 0.0},
                        relative_noise=np.where(ratio >= NOISE_RATIO_TRUSTED, ratio, 1.0))
    sol = fit_joint(prob, s0, c0 if options.fit_vertical else None, model=options.model,
                    robust=options.robust, smoothing=options.smoothing,
                    start=_component_start(start, comp, anchor, bool(fixed_here)),
                    start_curve=_component_curve(options.start_from, temps[comp],
                                                 float(temps[comp][anchor]), fixed_here,
                                                 options.direction))
    u_range = [(float(sol.u[iso == a].min()), float(sol.u[iso == a].max())) for a in range(m)]
    return GroupFit(s=sol.s, c=sol.c if options.fit_vertical else np.zeros(m), cov_s=sol.cov_s,
                    cov_c=sol.cov_c, solution=sol, iso=iso, fn=fn, point=point,
                    u_range=u_range)


def assemble_shifts(groups: GroupFits, options: ShiftOptions) -> Shifts:
    """Every group's shifts and covariances in the campaign's arrays (each group in its own
    gauge); an isolated isotherm with a fixed shift takes it, other isolated ones 0."""
    n = options.n
    s = np.zeros(n)
    c = np.zeros(n)
    cov_s = np.zeros((n, n))
    cov_c = np.zeros((n, n))
    for ci, comp in enumerate(groups.comps):
        if ci in groups.fits:
            f = groups.fits[ci]
            ix = np.ix_(comp, comp)
            s[comp], c[comp] = f.s, f.c
            cov_s[ix], cov_c[ix] = f.cov_s, f.cov_c
    for comp in groups.comps:
        if len(comp) == 1 and comp[0] in options.fixed:
            s[comp[0]] = options.fixed[comp[0]]
    return Shifts(s=s, c=c, cov_s=cov_s, cov_c=cov_c, bridged=np.zeros(n, bool))
