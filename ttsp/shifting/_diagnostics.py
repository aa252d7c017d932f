"""Per-isotherm diagnostics of the joint fit: outliers, overlap quality, flags (private).

From each group's solution: the points whose residual exceeds ``outlier_threshold`` robust
noise scales (flagged on the campaign's own points, never deleted); per isotherm the rms misfit
where it overlaps a neighbour (``overlap_quality``), the stderr of its shift given every other
parameter, sqrt(variance factor / Σ w (slope/σ)²), and the rms local slope of its data. An
isotherm is ``"low-information"`` when its shift is poorly determined or its data lie on a
plateau; its stderr is then the data's own (capped at :data:`UNDETERMINED_STDERR`), not that
of the weak prior that kept the fit stable.
"""

from __future__ import annotations

import warnings as _warnings
from dataclasses import dataclass, field

import numpy as np

from ..data import Campaign
from ..exceptions import FitQualityWarning
from ..units import kelvin_to_celsius
from ._fit_data import FitData
from ._groups import GroupFit, GroupFits, Shifts
from ._options import ShiftOptions

__all__ = ["Diagnosis", "diagnose", "OUTLIER_THRESHOLD", "UNDETERMINED_STDERR",
           "USED_STDERR_CAP"]

_MIN_SLOPE = 0.02          # decades per decade: below this an isotherm lies on a plateau
#: the stderr (decades) reported for a shift the data do not determine at all: wider than any
#: physical range of shift factors
UNDETERMINED_STDERR = 100.0
#: where an undetermined shift must still be used (a law through too few other shifts, the
#: abscissa noise of a check), its stderr counts as at most this many decades: the width of the
#: weak prior the joint fit puts on every shift
USED_STDERR_CAP = 1.0
#: Points whose residual exceeds this many robust noise scales are flagged as outliers. The
#: scale is the median absolute residual about the fitted master curve, which the curve's own
#: freedom makes 5-20 % smaller than the noise; at 4 scales a point 2.5 % off in 1 % noise was
#: flagged in 3 of 24 seeded campaigns and pure noise in 3 of 2136 points, at 5 scales in 1 of
#: 24 and 0 of 2136 (a 2.5-sigma deviation is not an outlier; common practice puts the line
#: at 3-5 scales). Points off by 0.4 decade in 2 % noise (about 45 scales) are flagged either way.
OUTLIER_THRESHOLD = 5.0


@dataclass
class Diagnosis:
    """What the fit says about each isotherm and overall.

    Per isotherm: ``outlier_mask`` (per point of the campaign), ``quality`` (overlap rms,
    decades), ``cond_se`` (stderr given all other parameters), ``slope_rms``, ``inflation_of``
    (the correlation factor of its group) and ``flags``. Overall: ``noise_scales`` (function ->
    (σ, points) of each group), the sum of squared residuals ``sq_all`` over ``n_all`` points,
    ``objective``, ``iterations``, ``converged``, the largest correlation factor
    ``inflation_all`` with its ``rho_all``, and the ``notes`` of this step.
    """

    outlier_mask: list
    quality: np.ndarray
    cond_se: np.ndarray
    slope_rms: np.ndarray
    inflation_of: np.ndarray
    noise_scales: dict
    sq_all: float = 0.0
    n_all: int = 0
    objective: float = 0.0
    iterations: int = 0
    converged: bool = True
    rho_all: float = float("nan")
    inflation_all: float = 1.0
    flags: tuple = ()
    notes: list = field(default_factory=list)

    @property
    def rms_residual(self) -> float:
        """rms residual of all non-outlier points against the master curves, decades."""
        return float(np.sqrt(self.sq_all / self.n_all)) if self.n_all else float("nan")


def diagnose(campaign: Campaign, data: FitData, groups: GroupFits, shifts: Shifts,
             options: ShiftOptions) -> Diagnosis:
    """Outliers, overlap quality and flags of every isotherm. Puts the data-only stderr of a
    low-information shift into ``shifts.stderr`` and warns (FitQualityWarning, for the caller
    of ``shift_isotherms``) of low-information and bridged isotherms."""
    n = options.n
    diag = Diagnosis(outlier_mask=[np.zeros(iso.n_points, bool) for iso in campaign.isotherms],
                     quality=np.full(n, np.nan), cond_se=np.full(n, np.nan),
                     slope_rms=np.full(n, np.nan), inflation_of=np.ones(n),
                     noise_scales={q: [] for q in options.chosen})
    for ci, comp in enumerate(groups.comps):
        if ci in groups.fits:
            _diagnose_group(diag, groups.fits[ci], comp, data.kept, options)
    low_info = _flag_isotherms(diag, shifts, groups.gaps, options)
    if low_info:
        msg = ("shift poorly determined (plateau or too little overlap) for the isotherm(s) at "
               + ", ".join(f"{kelvin_to_celsius(options.temps[k]):g} °C" for k in low_info)
               + "; flagged 'low-information'")
        diag.notes.append(msg)
        _warnings.warn(msg, FitQualityWarning, stacklevel=3)
    if shifts.bridge_note is not None:
        _warnings.warn(shifts.bridge_note, FitQualityWarning, stacklevel=3)
    n_out_total = sum(int(m.sum()) for m in diag.outlier_mask)
    if n_out_total:
        diag.notes.append(f"{n_out_total} point(s) flagged as outliers (residual above "
                          f"{options.outlier_threshold:g} robust noise scales); kept in the "
                          f"output")
    if not diag.converged:
        diag.notes.append("the joint fit stopped at its iteration limit before converging")
    return diag


def _diagnose_group(diag: Diagnosis, f: GroupFit, comp, kept, options: ShiftOptions) -> None:
    """One group's totals, noise scales and outliers, then each of its isotherms."""
    sol = f.solution
    diag.inflation_of[comp] = sol.correlation_inflation
    if sol.correlation_inflation >= diag.inflation_all:
        diag.rho_all, diag.inflation_all = sol.residual_correlation, sol.correlation_inflation
    diag.objective += sol.objective
    diag.iterations += sol.iterations
    diag.converged &= sol.converged
    for q, name in enumerate(options.chosen):
        diag.noise_scales[name].append((sol.sigma[q], np.sum(f.fn == q)))
    out = np.abs(sol.scaled_residual) > options.outlier_threshold
    for a, k in enumerate(comp):
        sel = f.iso == a
        pts = f.point[sel]
        np.logical_or.at(diag.outlier_mask[k], kept[k][pts], out[sel])
    for a, k in enumerate(comp):
        _diagnose_isotherm(diag, f, comp, a, k, kept)


def _diagnose_isotherm(diag: Diagnosis, f: GroupFit, comp, a: int, k: int, kept) -> None:
    """Isotherm k (the a-th of its group): its residuals in the totals, its overlap quality
    where it lies within a neighbour's reduced range, its conditional stderr and slope."""
    sol = f.solution
    sel = f.iso == a
    pt_out = diag.outlier_mask[k][kept[k][f.point[sel]]]
    res = sol.residual[sel][~pt_out]
    uu = sol.u[sel][~pt_out]
    diag.sq_all += float(np.sum(res ** 2))
    diag.n_all += res.size
    near = np.zeros(uu.size, bool)
    for b in (a - 1, a + 1):
        if 0 <= b < len(comp):
            lo, hi = f.u_range[b]
            near |= (uu >= lo) & (uu <= hi)
    if near.any():
        diag.quality[k] = float(np.sqrt(np.mean(res[near] ** 2)))
    sl = sol.slope[sel]
    sg = sol.sigma[f.fn[sel]]
    info = np.sum(sol.weights[sel] * (sl / sg) ** 2)
    diag.cond_se[k] = np.sqrt(sol.variance_factor / info) if info > 0 else np.inf
    diag.slope_rms[k] = float(np.sqrt(np.mean(sl ** 2)))


def _flag_isotherms(diag: Diagnosis, shifts: Shifts, gap_info: dict,
                    options: ShiftOptions) -> list:
    """The flags of every isotherm (into ``diag.flags``); the low-information ones get the
    data's own stderr. Returns the low-information isotherms."""
    group_stderr, stderr = shifts.group_stderr, shifts.stderr
    assert group_stderr is not None and stderr is not None   # set by the gauge step before
    flags = []
    low_info = []
    for k in range(options.n):
        fl = []
        if options.ref_measured and k == options.ref_idx:
            fl.append("reference")
        if k in options.user_fixed:
            fl.append("fixed")
        if shifts.bridged[k]:
            fl.append("bridged")
        if (k - 1) in gap_info:
            fl.append("gap-below")
        if k in gap_info:
            fl.append("gap-above")
        # judged on the data alone: the stderr within its connected group (not the gauge's)
        # and the stderr given all other parameters (which catches the gauge anchor too),
        # before the allowance for correlated residuals: that widens every stderr of a group
        # alike and says how far the curve misfits, not whether this isotherm is placed
        se = max(group_stderr[k] / np.sqrt(diag.inflation_of[k]),
                 diag.cond_se[k] if not np.isnan(diag.cond_se[k]) else 0.0)
        flat = np.isfinite(diag.slope_rms[k]) and diag.slope_rms[k] < _MIN_SLOPE
        if k not in options.user_fixed and not shifts.bridged[k] and (
                se > options.low_information_stderr or flat):
            fl.append("low-information")
            low_info.append(k)
        n_out = int(diag.outlier_mask[k].sum())
        if n_out:
            fl.append(f"outliers:{n_out}")
        flags.append(tuple(fl))
    diag.flags = tuple(flags)
    for k in low_info:   # the data's own uncertainty, not the prior's (module notes)
        if k != options.ref_idx or not options.ref_measured:
            stderr[k] = max(stderr[k], min(diag.cond_se[k], UNDETERMINED_STDERR))
    return low_info
