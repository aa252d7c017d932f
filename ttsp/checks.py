"""Does superposition hold? Validity checks with a measured value, a threshold and a verdict.

Every check is a small function that measures one thing and returns a frozen
:class:`CheckResult`: a name, a status (``"pass"``, ``"warn"`` or ``"fail"``), the measured
value, the threshold it was judged against and one or two plain sentences saying what the
result means and what to do. :func:`run_checks` runs every registered check whose inputs are
available (a check without its inputs is skipped, not failed).

The checks
----------
``simplicity_van_gurp_palmen``
    Spread of the raw isotherms about each other in the phase angle δ against log|E*| plane,
    which needs no shift factor (van Gurp & Palmen, Rheology Bulletin 67, 5-8, 1998; Trinkle &
    Friedrich, Rheol. Acta 40, 322-328, 2001).
``simplicity_loss_vs_storage``
    The same in the log E'' against log E' plane (no shift factor needed either; Ferry,
    Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 11).
``shifted_superposition``
    After shifting: spread of log tan δ of the isotherms against reduced frequency
    (tan δ is unchanged by a vertical shift, so it tests the horizontal shifts alone); for
    time-domain data, the spread of the shifted measured function.
``kramers_kronig``
    Whether E' and E'' of the master curve are the two faces of one relaxation spectrum
    (Booij & Thoone, Rheol. Acta 21, 15-24, 1982): each is fitted alone with a non-negative
    Prony series and the other is predicted from it.
``function_agreement`` (:mod:`ttsp.checks_agreement`)
    Shifts found on E' alone and on E'' alone, compared isotherm by isotherm against their
    standard errors; a disagreement names the isotherms and its size in decades.
``overlap_coverage``
    Decades of overlap in the ordinate between neighbouring isotherms; gaps named.
``monotonic_shifts``
    log10 a_T must fall as the temperature rises (Ferry 1980, ch. 11); violations named.
``law_residuals``
    A systematic pattern in the residuals of the shift law (runs test of Wald & Wolfowitz,
    Ann. Math. Stat. 11, 147-162, 1940, and a curvature test) suggests a transition such as
    crossing Tg, where the temperature dependence turns from WLF-like to Arrhenius (Struik,
    Physical Aging in Amorphous Polymers and Other Materials, 1978).
``prony_fit_quality`` and ``master_curve_range``
    Residuals of the Prony fit; whether the data reach the plateaus, or the series' ends are
    extrapolated.
``outliers`` and ``noise_level``
    Points flagged as outliers by the shifting, and the noise of each isotherm estimated from
    third differences of its logarithmic values.

Messages of shear data use G and J (:mod:`ttsp.checks_words`). Every threshold is set on
``benchmarks/bench_checks.py`` (simple campaigns for the false-alarm rates, graded complex ones
for detection; the rates are in DEVELOPERS.md).

All computation is numpy/scipy; nothing is printed and no warning is issued: a check reports.
"""

from __future__ import annotations

import html
import math
import weakref
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Callable, Mapping

import numpy as np

from ._arrays import to_plain
from ._noise import NOISE_FLOOR_LOG10 as _NOISE_FLOOR_LOG10
from ._noise import third_difference_sigmas
from ._validation import bad_value, check_choice
from .checks_words import in_the_symbols_of
from .data import Campaign
from .exceptions import DataError, FitError

__all__ = [
    "STATUSES",
    "CHECK_NAMES",
    "CheckResult",
    "run_checks",
    "worst_status",
    "estimate_noise",
    "check_van_gurp_palmen",
    "check_loss_vs_storage",
    "check_shifted_superposition",
    "check_kramers_kronig",
    "check_overlap_coverage",
    "check_monotonic_shifts",
    "check_law_residuals",
    "check_prony_fit_quality",
    "check_master_curve_range",
    "check_outliers",
    "check_noise_level",
    "check_relaxation_creep",
]

STATUSES = ("pass", "warn", "fail")

# ----------------------------------------------------------------------------------------------
# Thresholds. Each is a named constant with the reason for its value.
# ----------------------------------------------------------------------------------------------

#: Smallest noise (decades of log10) assumed for a logarithmic quantity (see ttsp._noise).
NOISE_FLOOR_LOG10 = _NOISE_FLOOR_LOG10
#: Smallest noise (rad) assumed for the phase angle δ: what 0.46 % noise on E' and E'' gives at
#: δ = 45° (σ_δ = sin δ cos δ · √2 · ln 10 · 0.002 ≈ 0.0033 rad), rounded down.
NOISE_FLOOR_RAD = 0.003
#: Spread of overlapping isotherms: the rms of their distances in units of the combined noise
#: and tolerance (below). For isotherms that superpose and whose noise is as estimated, the
#: normalised distances are at most about standard normal (rms ≤ 1; measured about 0.6 on
#: exact WLF campaigns with 2 % noise added, 0.2-0.3 without noise). The noise estimate from a
#: few third differences can be off by a factor up to about 2, so up to 2.5 passes; above 5 the
#: curves differ far beyond noise and tolerance, the signature of thermorheological complexity
#: (mechanisms with different temperature dependences: Ngai & Plazek, ch. 26 in Mark (ed.),
#: Physical Properties of Polymers Handbook, 2nd ed., 2007).
SPREAD_WARN = 2.5
SPREAD_FAIL = 5.0
#: Scatter between isotherms allowed beyond their noise, added in quadrature to the combined
#: noise of each pair: 1° in δ and 0.013 decade (3 %) in a modulus, about the reproducibility of
#: DMA between specimens [common practice, no source]. Without it, very clean data (three
#: significant figures) would fail on deviations no engineer would act on. With it, real asphalt
#: binders (shared/data/asphalt-binder-ptf, whose isotherms 12-70 K apart differ by 2.5-3.4° in
#: δ: mild complexity, as their provenance note says) warn, and clear complexity still fails.
SPREAD_TOLERANCE_RAD = 0.0175
SPREAD_TOLERANCE_LOG10 = 0.013
#: Fewest points of one isotherm inside its neighbour's range for a pair to count.
MIN_PAIR_POINTS = 2
#: Fewest points pooled over the pairs of one temperature separation for its rms to count.
MIN_CLASS_POINTS = 10

#: Kramers–Kronig: disagreement (rms, %) between a measured function and its prediction from the
#: other function of the master curve. It reads about as the error of the level of E'': on the
#: exact test spectra a copy of E'' scaled by 1.1 gives 9 %, by 1.2 18 %, by 1.6 (with a slope
#: change) 61 %, while a consistent curve gives 0.1 % (exact) or about 3 % (2 % noise)
#: [computed here, tests/test_checks.py]. But on finite windows of exact simple campaigns the
#: check's own truncation reads far more (benchmarks/bench_checks.py, 192 simple frequency
#: campaigns: 17 above 10 %, 6 above 20 %, 2 above 25 %, 1 above 50 %, largest 50.8 %), so the
#: thresholds are read off that null distribution: 20 % warns (3 % of simple campaigns; the
#: 97th percentile) and 50 % fails (0.5 %). An E'' wrong by a fifth in level now passes this
#: check alone; E'' on its own shift law is caught by function_agreement.
KK_WARN_PERCENT = 20.0
KK_FAIL_PERCENT = 50.0
#: A function is predicted from the other only where it is at least this fraction of the other
#: (E'' where tan δ ≥ 0.2, E' where tan δ ≤ 5): E'' follows from the slope of E', and where
#: tan δ is small that slope drowns in the noise of E' (at 2 % noise the prediction of E'' is
#: off by about 2 % at tan δ = 0.26, 5 % at 0.13 and 20 % at 0.013; measured on exact spectra
#: with added noise). Symmetrically for E' in the terminal zone.
KK_MIN_RATIO = 0.2
#: The warn level is at least this many times the measured noise (%): no prediction can agree
#: better than the scatter of the data it comes from.
KK_NOISE_FACTOR = 2.5
#: Ends of the master curve left out of the Kramers–Kronig comparison (decades of reduced
#: frequency): there a predicted function depends on the spectrum outside the data.
KK_EDGE_DECADES = 0.5
#: Density of the relaxation-time grid of the Kramers–Kronig fits (per decade): two per decade
#: keep the ripple of E'' near 0.15 % (docs/methods.md §8).
KK_TERMS_PER_DECADE = 2.0

#: Overlap coverage: an overlap of at least 0.1 decade in the ordinate, or at least a quarter of
#: the narrower isotherm's ordinate span (isotherms on a plateau span little), lets a horizontal
#: shift be found from the data [common practice, no source]. A negative overlap (disjoint
#: ordinate ranges) is a gap: no horizontal shift can make the isotherms meet (docs/methods.md §2.5).
MIN_OVERLAP_DECADES = 0.1
MIN_OVERLAP_FRACTION = 0.25
#: Disjoint ordinate ranges closer than this many noise standard deviations count as touching
#: (warn), not as a gap (fail).
GAP_NOISE_FACTOR = 3.0

#: Monotonic shifts: a rise of log10 a_T with temperature larger than this many combined
#: standard errors is a violation beyond the uncertainty (fail); a smaller one is a warning.
MONOTONIC_SIGMA = 2.0

#: Law residuals: significance level of the pattern tests (runs and curvature; each is tested at
#: half of it, Bonferroni).
LAW_PATTERN_ALPHA = 0.05
#: Residuals whose rms is below this (decades) carry no pattern worth a warning: 0.02 decade is
#: about the accuracy of good automatic shifts at 2 % noise (rms 0.017 decade on
#: benchmarks/bench_shifting.py).
LAW_RESIDUAL_FLOOR_DECADES = 0.02
#: A law that misses the shift factors by more than this rms (decades; a factor 2 in time) fails.
LAW_RESIDUAL_FAIL_DECADES = 0.3

#: Prony fit: rms relative deviation (%) above which the fit describes the master curve worse
#: than its noise explains. The warn level is at least 2.5 times the measured noise.
PRONY_RMS_WARN_PERCENT = 5.0
PRONY_RMS_FAIL_PERCENT = 15.0

#: Outliers: share of points (%) flagged by the shifting. A few per cent are usual in real data
#: (spikes at the ends of sweeps); a fifth of the data not fitting means superposition or the
#: data are doubtful [common practice, no source].
OUTLIER_WARN_PERCENT = 5.0
OUTLIER_FAIL_PERCENT = 20.0

#: Noise: relative noise (%) of a campaign's moduli. DMA moduli usually repeat within a few %
#: [common practice, no source]; above 15 % the checks here lose their power. The warn level
#: sits above what the third-difference estimate reads on campaigns with up to 5 % true noise
#: (10 points per isotherm: up to 5.9 % measured on benchmarks/bench_checks.py, where 5.0 warned
#: on 13 % of simple campaigns); measured rates are in DEVELOPERS.md.
NOISE_WARN_PERCENT = 7.5
NOISE_FAIL_PERCENT = 15.0
#: An isotherm whose noise is this many times the campaign's typical noise, and above
#: NOISE_ISOTHERM_PERCENT, is named (warn). With 10 points per isotherm the third-difference
#: estimate of one isotherm scatters widely: on simple benchmark campaigns the noisiest of 20
#: isotherms read 3-4 times the median (up to 13 % at 4 % true noise), so 3 times and 5 %
#: warned on 5 % of simple campaigns (benchmarks/bench_checks.py --quick).
NOISE_ISOTHERM_RATIO = 5.0
NOISE_ISOTHERM_PERCENT = 10.0

_LN10 = math.log(10.0)
_RESIDUAL_ZERO_DECADES = 1e-9


# ----------------------------------------------------------------------------------------------
# the result
# ----------------------------------------------------------------------------------------------
def _json_ready(value):
    """JSON-ready copy with NaN and infinities as None."""
    return to_plain(value, nonfinite_as_none=True)


@dataclass(frozen=True)
class CheckResult:
    """The verdict of one check.

    Parameters
    ----------
    name : str
        Stable identifier of the check (``"kramers_kronig"``, ...).
    status : {"pass", "warn", "fail"}
        The verdict.
    value : float, str or None
        The measured value (units in ``details["unit"]`` and in the message).
    threshold : float, str or None
        What the value was judged against.
    message : str
        One or two plain sentences: what the result means and what to do.
    details : dict
        JSON-ready supporting numbers (per isotherm or per pair, named gaps, ...).

    Raises
    ------
    DataError
        If ``status`` is not one of :data:`STATUSES`.
    """

    name: str
    status: str
    value: float | str | None
    threshold: float | str | None
    message: str
    details: Mapping = field(default_factory=dict)

    def __post_init__(self):
        check_choice("status", self.status, STATUSES)
        for attr in ("value", "threshold"):
            v = getattr(self, attr)
            if v is not None and not isinstance(v, str):
                object.__setattr__(self, attr, _json_ready(float(v)))
        object.__setattr__(self, "details", MappingProxyType(_json_ready(dict(self.details))))

    @property
    def passed(self) -> bool:
        return self.status == "pass"

    def to_dict(self) -> dict:
        """JSON-ready: name, status, value, threshold, message, details."""
        return {"name": self.name, "status": self.status, "value": self.value,
                "threshold": self.threshold, "message": self.message,
                "details": _json_ready(dict(self.details))}

    def _repr_html_(self) -> str:
        colour = {"pass": "#1a7f37", "warn": "#9a6700", "fail": "#cf222e"}[self.status]
        return (f"<table><tr><td><b style='color:{colour}'>{self.status}</b></td>"
                f"<td>{html.escape(self.name)}</td><td>value {html.escape(_short(self.value))}</td>"
                f"<td>threshold {html.escape(_short(self.threshold))}</td></tr>"
                f"<tr><td colspan='4'>{html.escape(self.message)}</td></tr></table>")


def _short(value) -> str:
    """A value as a person reads it: four significant digits for numbers."""
    return f"{value:.4g}" if isinstance(value, float) else str(value)


def worst_status(results) -> str:
    """The worst status among check results (``"pass"`` for none)."""
    rank = {s: i for i, s in enumerate(STATUSES)}
    return max((r.status for r in results), key=rank.__getitem__, default="pass")


def _grade(value: float, warn: float, fail: float) -> str:
    """"pass" up to ``warn``, "warn" up to ``fail``, "fail" above (NaN: warn)."""
    if not math.isfinite(value):
        return "warn"
    return "pass" if value <= warn else ("warn" if value <= fail else "fail")


def _fmt_C(temperature_K: float) -> str:
    return f"{temperature_K - 273.15:.4g} °C"


# ----------------------------------------------------------------------------------------------
# noise
# ----------------------------------------------------------------------------------------------
def _log_or_linear(quantity: str, values: np.ndarray) -> np.ndarray:
    v = np.asarray(values, dtype=float)
    if quantity == "phase_angle_rad":
        return v
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(v > 0, np.log10(np.where(v > 0, v, 1.0)), np.nan)


# Noise estimates by campaign identity (campaigns compare by value, so they are not hashable);
# a weak reference tells a live entry from a recycled id. Several checks need the same estimate.
_NOISE_CACHE: dict = {}
_NOISE_CACHE_SIZE = 16


def estimate_noise(campaign: Campaign) -> dict:
    """Noise of every material function of every isotherm (computed once per campaign; see
    :func:`_estimate_noise`). Treat the returned dict as read-only."""
    hit = _NOISE_CACHE.get(id(campaign))
    if hit is not None and hit[0]() is campaign:
        return hit[1]
    noise = _estimate_noise(campaign)
    try:
        ref = weakref.ref(campaign)
    except TypeError:  # not weak-referenceable: nothing to cache
        return noise
    if len(_NOISE_CACHE) >= _NOISE_CACHE_SIZE:
        _NOISE_CACHE.pop(next(iter(_NOISE_CACHE)))
    _NOISE_CACHE[id(campaign)] = (ref, noise)
    return noise


def _estimate_noise(campaign: Campaign) -> dict:
    """Noise of every material function of every isotherm, from third differences.

    The noise of a positive quantity is the standard deviation of its log10 values (decades;
    multiply by ln 10 for the relative noise), that of the phase angle δ in radians. See
    :func:`ttsp._noise.third_difference_sigmas` for the estimator.

    Parameters
    ----------
    campaign : Campaign
        The measured campaign (derived functions are filled in with ``with_derived``).

    Returns
    -------
    dict
        ``{"per_isotherm": [{"temperature_K": T, quantity: sigma, ...}, ...],
        "typical": {quantity: sigma}}``: per isotherm (NaN where fewer than 5 points), and the
        median over isotherms floored at :data:`NOISE_FLOOR_LOG10` or :data:`NOISE_FLOOR_RAD`.
    """
    campaign = _as_campaign(campaign).with_derived()
    cells = [(k, q, _log_or_linear(q, v)) for k, iso in enumerate(campaign.isotherms)
             for q, v in iso.values.items()]
    sigmas = third_difference_sigmas([y for _, _, y in cells])
    per = [{"temperature_K": iso.temperature_K} for iso in campaign.isotherms]
    pooled = {}
    for (k, q, _), sd in zip(cells, sigmas):
        per[k][q] = float(sd)
        pooled.setdefault(q, []).append(float(sd))
    typical = {}
    for q, vals in pooled.items():
        vals = np.asarray(vals, dtype=float)
        vals = vals[np.isfinite(vals)]
        floor = NOISE_FLOOR_RAD if q == "phase_angle_rad" else NOISE_FLOOR_LOG10
        typical[q] = max(float(np.median(vals)) if vals.size else floor, floor)
    return {"per_isotherm": per, "typical": typical}


# ----------------------------------------------------------------------------------------------
# inputs from the other modules (duck-typed, so that a test may pass a small stand-in)
# ----------------------------------------------------------------------------------------------
def _as_campaign(campaign) -> Campaign:
    if not isinstance(campaign, Campaign):
        raise bad_value("campaign", "a ttsp Campaign", type(campaign).__name__)
    return campaign


@dataclass(frozen=True)
class _Shifts:
    """The shift table aligned with the campaign's isotherms (internal)."""

    temperature_K: np.ndarray
    log10_aT: np.ndarray
    stderr: np.ndarray          # NaN where unknown
    log10_bT: np.ndarray
    flags: tuple                # one tuple of str per isotherm
    outliers: tuple             # one bool array per isotherm, or None when not given
    reference_temperature_K: float | None


def _array(obj, name, n, default):
    value = getattr(obj, name, None)
    if value is None:
        return np.full(n, default, dtype=float)
    arr = np.array([np.nan if v is None else v for v in np.ravel(value)], dtype=float)
    if arr.size != n:
        raise bad_value(f"shifts.{name}", f"one value per shift-table row ({n})",
                        f"{arr.size} values")
    return arr


def _align_shifts(campaign: Campaign, shifts) -> _Shifts:
    """Match the rows of a shift table to the campaign's isotherms by temperature."""
    try:
        temps = np.asarray(shifts.temperature_K, dtype=float).ravel()
        log_a = np.asarray(shifts.log10_aT, dtype=float).ravel()
    except AttributeError:
        raise bad_value("shifts", "a shift result with temperature_K and log10_aT",
                        type(shifts).__name__) from None
    n = temps.size
    if log_a.size != n:
        raise bad_value("shifts.log10_aT", f"one value per temperature ({n})",
                        f"{log_a.size} values")
    stderr = _array(shifts, "log10_aT_stderr", n, np.nan)
    log_b = _array(shifts, "log10_bT", n, 0.0)
    log_b[~np.isfinite(log_b)] = 0.0
    flags = getattr(shifts, "flags", None)
    flags = tuple(tuple(f) if f else () for f in flags) if flags is not None else ((),) * n
    if len(flags) != n:
        raise bad_value("shifts.flags", f"one tuple per shift-table row ({n})",
                        f"{len(flags)} tuples")
    masks = getattr(shifts, "outlier_mask", None)
    iso_t = campaign.temperatures_K
    index = []
    for t in iso_t:
        k = int(np.argmin(np.abs(temps - t))) if n else -1
        if n == 0 or abs(temps[k] - t) > 1e-6 * max(1.0, t):
            raise DataError(f"shifts must hold a row for every isotherm of the campaign; none "
                            f"for {_fmt_C(t)}")
        index.append(k)
    index = np.asarray(index)
    if masks is not None:
        if len(masks) != n:
            raise bad_value("shifts.outlier_mask", f"one array per shift-table row ({n})",
                            f"{len(masks)} arrays")
        masks = tuple(np.asarray(masks[k], dtype=bool) for k in index)
        for iso, m in zip(campaign.isotherms, masks):
            if m.shape != iso.x.shape:
                raise bad_value("shifts.outlier_mask", "one flag per point of each isotherm",
                                f"{m.size} flags for {iso.n_points} points at "
                                f"{_fmt_C(iso.temperature_K)}")
    tr = getattr(shifts, "reference_temperature_K", None)
    return _Shifts(iso_t, log_a[index], stderr[index], log_b[index],
                   tuple(flags[k] for k in index), masks,
                   None if tr is None else float(tr))


def _reduced_log_x(campaign: Campaign, table: _Shifts, k: int) -> np.ndarray:
    """log10 of reduced frequency ω·a_T or reduced time t/a_T of isotherm k."""
    sign = 1.0 if campaign.domain == "frequency" else -1.0
    return np.log10(campaign.isotherms[k].x) + sign * table.log10_aT[k]


def _keep(table: _Shifts | None, k: int, n: int) -> np.ndarray:
    if table is None or table.outliers is None:
        return np.ones(n, dtype=bool)
    return ~table.outliers[k]


# ----------------------------------------------------------------------------------------------
# pairwise spread of neighbouring curves in a plane
# ----------------------------------------------------------------------------------------------
def _curve(x: np.ndarray, y: np.ndarray):
    """Finite (x, y) of one isotherm in measurement order (ascending ω or t), or None below 2."""
    ok = np.isfinite(x) & np.isfinite(y)
    x, y = np.asarray(x, dtype=float)[ok], np.asarray(y, dtype=float)[ok]
    return (x, y) if x.size >= 2 else None


#: largest (jobs x points x segments) computed as one array by :func:`_distances`
_DISTANCE_BATCH = 1_000_000


def _distances(jobs):
    """Normalised distances of a's points from the polyline of b, for points inside b's x-range,
    for every job ``(a, b, sx, sy)`` at once.

    Both coordinates are divided by their combined noise (``sx``, ``sy``: the root sum of
    squares of the two isotherms' noise), and each point of a is measured to the nearest point of
    the polyline through b's points in measurement order (the parametric curve x(ω), y(ω)).
    In these units the distance of a point from a curve it belongs to is about a standard normal
    deviate whatever the local slope, so a steep stretch (a plateau seen edge-on) is not taken for
    spread; this is the effective-variance idea of orthogonal fitting (Orear, Am. J. Phys. 50,
    912, 1982). Points whose nearest point is an end of the polyline, past that end, lie beyond
    the curve and are left out. Returns, per job, (normalised distances, ordinate offsets to the
    nearest point). The jobs are padded to a common size and computed as one array operation
    (many small pairs cost little more than one).
    """
    if not jobs:
        return []
    J = len(jobs)
    ma = max(a[0].size for a, _, _, _ in jobs)
    mb = max(b[0].size for _, b, _, _ in jobs)
    if J > 1 and J * ma * mb > _DISTANCE_BATCH:   # keep the work arrays small: in halves
        return _distances(jobs[:J // 2]) + _distances(jobs[J // 2:])
    xa, ya = np.full((J, ma), np.nan), np.full((J, ma), np.nan)
    xb, yb = np.full((J, mb), np.nan), np.full((J, mb), np.nan)
    sx, sy = np.empty((J, 1, 1)), np.empty((J, 1, 1))
    nb = np.empty(J, dtype=int)
    for k, (a, b, sxk, syk) in enumerate(jobs):
        xa[k, :a[0].size], ya[k, :a[0].size] = a
        xb[k, :b[0].size], yb[k, :b[0].size] = b
        sx[k], sy[k] = sxk, syk
        nb[k] = b[0].size
    with np.errstate(invalid="ignore"):
        inside = (xa >= np.nanmin(xb, axis=1)[:, None]) & (xa <= np.nanmax(xb, axis=1)[:, None])
    px, py = xa[:, :, None] / sx, ya[:, :, None] / sy              # (J, ma, 1)
    ax, ay = xb[:, None, :-1] / sx, yb[:, None, :-1] / sy          # (J, 1, mb - 1)
    dx, dy = np.diff(xb, axis=1)[:, None, :] / sx, np.diff(yb, axis=1)[:, None, :] / sy
    length2 = dx * dx + dy * dy
    with np.errstate(invalid="ignore", divide="ignore"):
        u = np.where(length2 > 0, ((px - ax) * dx + (py - ay) * dy) / length2, 0.0)
    last = nb - 2                                                  # each job's last segment
    beyond = np.zeros(u.shape, dtype=bool)
    beyond[:, :, 0] = u[:, :, 0] < 0.0
    rows = np.arange(J)
    beyond[rows, :, last] |= u[rows, :, last] > 1.0
    u = np.clip(u, 0.0, 1.0)
    cx, cy = ax + u * dx, ay + u * dy
    d2 = (px - cx) ** 2 + (py - cy) ** 2
    d2 = np.where(np.isfinite(d2), d2, np.inf)                     # padding: never the nearest
    best = np.argmin(d2, axis=2)                                   # (J, ma)
    jj, ii = np.indices(best.shape)
    use = inside & ~beyond[jj, ii, best]
    offset = (py[:, :, 0] - cy[jj, ii, best]) * sy[:, :, 0]
    dist = np.sqrt(d2[jj, ii, best])
    return [(dist[k][use[k]], offset[k][use[k]]) for k in range(J)]


def _pairwise_spread(temperatures_K, curves, sx, sy, tx, ty):
    """Spread of isotherms about each other, by how far apart in temperature they are.

    Each isotherm is compared with those 1, 2, 4, 8, ... places above it in temperature order,
    wherever their abscissa ranges overlap (see :func:`_distances`). The normalised distances
    are pooled per separation; the value is the largest pooled rms over the separations with at
    least :data:`MIN_CLASS_POINTS` points. Neighbours differ little even in a complex material,
    whose shape changes build up with temperature; distant pairs show them at full size, and the
    doubling keeps the work near n log n pairs instead of n²/2. ``curves`` holds (x, y) or None
    per isotherm in temperature order; ``sx`` and ``sy`` the noise of x and y per isotherm,
    ``tx`` and ``ty`` the tolerances added in quadrature to the combined noise of each pair.
    Returns (value, raw rms of that separation, pairs, classes).
    """
    pairs, classes = [], []
    n = len(curves)
    for d in (1 << p for p in range(max(1, (n - 1).bit_length()))):
        norms, raws = [], []
        todo, jobs = [], []
        for i in range(n - d):
            j = i + d
            a, b = curves[i], curves[j]
            if (a is None or b is None or a[0].max() < b[0].min()
                    or b[0].max() < a[0].min()):
                continue
            sxx = math.sqrt(sx[i] ** 2 + sx[j] ** 2 + tx ** 2)
            syy = math.sqrt(sy[i] ** 2 + sy[j] ** 2 + ty ** 2)
            todo.append((i, j))
            jobs += [(a, b, sxx, syy), (b, a, sxx, syy)]
        found = _distances(jobs)
        for m, (i, j) in enumerate(todo):
            (n_ab, r_ab), (n_ba, r_ba) = found[2 * m], found[2 * m + 1]
            if n_ab.size + n_ba.size < MIN_PAIR_POINTS:
                continue
            norm = np.concatenate([n_ab, n_ba])
            raw = np.concatenate([r_ab, r_ba])
            pairs.append({"temperature_low_C": temperatures_K[i] - 273.15,
                          "temperature_high_C": temperatures_K[j] - 273.15,
                          "points": int(norm.size),
                          "rms_normalised": float(np.sqrt(np.mean(norm ** 2))),
                          "rms": float(np.sqrt(np.mean(raw ** 2)))})
            norms.append(norm)
            raws.append(raw)
        if norms:
            norm, raw = np.concatenate(norms), np.concatenate(raws)
            classes.append({"places_apart": d, "pairs": len(norms), "points": int(norm.size),
                            "rms_normalised": float(np.sqrt(np.mean(norm ** 2))),
                            "rms": float(np.sqrt(np.mean(raw ** 2)))})
    if not classes:
        return math.nan, math.nan, pairs, classes
    counted = [c for c in classes if c["points"] >= MIN_CLASS_POINTS] or classes
    top = max(counted, key=lambda c: c["rms_normalised"])
    return top["rms_normalised"], top["rms"], pairs, classes


def _spread_result(name, plane, unit, value, raw, pairs, classes, advice_fail):
    """Grade an rms spread (multiples of noise and tolerance) and word the verdict."""
    threshold = SPREAD_WARN
    if not pairs:
        return CheckResult(name, "warn", None, threshold,
                           f"No two isotherms overlap in the {plane}, so superposition cannot be "
                           "judged there; measure at closer temperatures or over a wider range.",
                           {"pairs": [], "unit": "multiples of noise and tolerance",
                            "rms_spread_unit": unit})
    # the worst pair named in the message: among pairs with a few points, not a lone pair of two
    named = [p for p in pairs if p["points"] >= 2 * MIN_PAIR_POINTS] or pairs
    worst = max(named, key=lambda p: p["rms_normalised"])
    status = _grade(value, SPREAD_WARN, SPREAD_FAIL)
    which = f"{worst['temperature_low_C']:.4g} °C and {worst['temperature_high_C']:.4g} °C"
    size = f"{value:.2g} times what noise and a small tolerance allow; rms {raw:.2g} {unit}"
    if status == "pass":
        msg = (f"The isotherms fall on one curve in the {plane} (spread {size}); superposition "
               "is supported.")
    elif status == "warn":
        msg = (f"The isotherms scatter about each other in the {plane} (spread {size}; worst "
               f"between {which}). Superposition is doubtful there: compare the shifted "
               "curves before trusting the master curve.")
    else:
        msg = (f"The isotherms do not fall on one curve in the {plane} (spread {size}; worst "
               f"between {which}). {advice_fail}")
    return CheckResult(name, status, value, threshold, msg,
                       {"unit": "multiples of noise and tolerance", "rms_spread": raw,
                        "rms_spread_unit": unit,
                        "points_compared": int(sum(c["points"] for c in classes)),
                        "by_separation": classes,
                        "fail_threshold": SPREAD_FAIL, "worst_pair": [
                            worst["temperature_low_C"], worst["temperature_high_C"]],
                        "pairs": pairs})


_COMPLEX_ADVICE = ("The material looks thermorheologically complex (several mechanisms with "
                   "different temperature dependences, a phase change or a changing sample); "
                   "a single master curve will misrepresent it, so use a narrower temperature "
                   "range or model the processes separately.")


def _typical_noise(noise: dict, quantity: str) -> np.ndarray:
    """Per-isotherm noise: the mean square of own and typical noise (stabilised, floored)."""
    typical = noise["typical"].get(quantity, NOISE_FLOOR_LOG10)
    own = np.array([row.get(quantity, math.nan) for row in noise["per_isotherm"]], dtype=float)
    own = np.where(np.isfinite(own), own, typical)
    return np.sqrt(0.5 * (own ** 2 + typical ** 2))


# ----------------------------------------------------------------------------------------------
# 1. thermorheological simplicity
# ----------------------------------------------------------------------------------------------
def _frequency_planes(campaign: Campaign):
    c = campaign.with_derived()
    both = {"storage_modulus_Pa", "loss_modulus_Pa"}
    if c.domain != "frequency" or not both <= set(c.quantities):
        return None
    return c


def _plane_spread(campaign, shifts, xq, yq, tx, ty):
    """Spread of the raw isotherms in the plane (log10 x-quantity, y-quantity); see callers.

    Every point is used: the outlier flags of the shifting are relative to a master curve, and a
    material that does not superpose produces many of them. Moduli are divided by b_T when the
    shifts carry vertical shifts (reduced modulus E/b_T).
    """
    c = _frequency_planes(_as_campaign(campaign))
    if c is None:
        return None
    table = _align_shifts(c, shifts) if shifts is not None else None
    noise = estimate_noise(c)
    sx, sy = _typical_noise(noise, xq), _typical_noise(noise, yq)
    curves = []
    for k, iso in enumerate(c.isotherms):
        log_b = table.log10_bT[k] if table is not None else 0.0
        x = np.log10(iso.values[xq]) - log_b
        y = (np.asarray(iso.values[yq], dtype=float) if yq == "phase_angle_rad"
             else np.log10(iso.values[yq]) - log_b)
        curves.append(_curve(x, y))
    return _pairwise_spread(c.temperatures_K, curves, sx, sy, tx, ty)


def check_van_gurp_palmen(campaign: Campaign, *, shifts=None) -> CheckResult | None:
    """Spread of the raw isotherms in the van Gurp–Palmen plane, δ against log10|E*|.

    If the material is thermorheologically simple (and b_T = 1), a change of temperature only
    slides each isotherm along one curve δ(|E*|), so the raw isotherms collapse without any
    shift factor (van Gurp & Palmen, Rheology Bulletin 67, 5-8, 1998; Trinkle & Friedrich,
    Rheol. Acta 40, 322-328, 2001). For pairs of isotherms whose |E*| ranges overlap, each
    point of one is measured to the curve of the other in units of the combined noise and
    tolerance (:data:`SPREAD_TOLERANCE_RAD`, :data:`SPREAD_TOLERANCE_LOG10`; see
    :func:`_distances`); the value is the largest rms of these normalised distances over the
    temperature separations of the pairs (see :func:`_pairwise_spread`). When ``shifts``
    carries vertical shifts, |E*| is divided by b_T first.

    Parameters
    ----------
    campaign : Campaign
        Frequency-domain data with E' and E'' (or |E*| and δ).
    shifts : shift result, optional
        Only its ``log10_bT`` is used.

    Returns
    -------
    CheckResult or None
        None when the campaign is not frequency-domain data with both moduli. Value: the rms
        spread in multiples of noise and tolerance; ``details["rms_spread"]`` in degrees.
    """
    out = _plane_spread(campaign, shifts, "complex_modulus_Pa", "phase_angle_rad",
                        SPREAD_TOLERANCE_LOG10, SPREAD_TOLERANCE_RAD)
    if out is None:
        return None
    value, raw, pairs, classes = out
    for p in pairs + classes:
        p["rms_degrees"] = math.degrees(p.pop("rms"))
    return _spread_result("simplicity_van_gurp_palmen", "phase angle against |E*| plane "
                          "(van Gurp–Palmen)", "degrees", value,
                          math.degrees(raw) if math.isfinite(raw) else raw, pairs, classes,
                          _COMPLEX_ADVICE)


def check_loss_vs_storage(campaign: Campaign, *, shifts=None) -> CheckResult | None:
    """Spread of the raw isotherms in the log10 E'' against log10 E' plane.

    Like :func:`check_van_gurp_palmen`, this plane has no frequency axis: the isotherms of a
    thermorheologically simple material fall on one curve without shifting (Ferry 1980, ch. 11;
    the log–log form of the Cole–Cole plot). Distances are normalised by the combined noise and
    tolerance as in :func:`check_van_gurp_palmen`.

    Returns
    -------
    CheckResult or None
        None when the campaign is not frequency-domain data with both moduli. Value: the rms
        spread in multiples of noise and tolerance; ``details["rms_spread"]`` in decades of E''.
    """
    out = _plane_spread(campaign, shifts, "storage_modulus_Pa", "loss_modulus_Pa",
                        SPREAD_TOLERANCE_LOG10, SPREAD_TOLERANCE_LOG10)
    if out is None:
        return None
    value, raw, pairs, classes = out
    for p in pairs + classes:
        p["rms_decades"] = p.pop("rms")
    return _spread_result("simplicity_loss_vs_storage", "log E'' against log E' plane",
                          "decades of E''", value, raw, pairs, classes, _COMPLEX_ADVICE)


def check_shifted_superposition(campaign: Campaign, shifts) -> CheckResult | None:
    """Superposition error after shifting: spread of overlapping shifted isotherms.

    Frequency data: log10 tan δ against log10(ω·a_T). tan δ is unchanged by a vertical shift, so
    this tests the horizontal shifts alone (docs/methods.md §6.1; common practice). Time data: log10 of
    the measured function divided by b_T (times b_T for a compliance) against log10(t/a_T).
    Every pair of isotherms whose reduced ranges overlap is compared as in
    :func:`check_van_gurp_palmen`, the shift standard errors entering as noise of the abscissa.
    Points flagged as outliers are left out while they are few (at most
    :data:`OUTLIER_WARN_PERCENT` of the points); when more are flagged they are kept, since
    so many "outliers" are the misfit this check is about.

    Parameters
    ----------
    campaign : Campaign
    shifts : shift result
        ``temperature_K``, ``log10_aT`` and optionally ``log10_aT_stderr``, ``log10_bT``,
        ``outlier_mask``.

    Returns
    -------
    CheckResult or None
        None when the campaign has no function to compare.
    """
    c = _as_campaign(campaign).with_derived()
    table = _align_shifts(c, shifts)
    if c.domain == "frequency":
        if "tan_delta" not in c.quantities:
            return None
        quantity, vertical = "tan_delta", False
    else:
        quantity = next((q for q in ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
                         if q in c.quantities), None)
        if quantity is None:
            return None
        vertical = True
    noise = estimate_noise(c)
    sy = _typical_noise(noise, quantity)
    # an undetermined shift reports a stderr up to 100 decades; more abscissa noise than the cap
    # would turn its pairs into ordinate-only comparisons, so it counts as at most that
    from .shifting import USED_STDERR_CAP

    sx = np.clip(np.where(np.isfinite(table.stderr), table.stderr, 0.0), NOISE_FLOOR_LOG10,
                 USED_STDERR_CAP)
    flagged = sum(int(m.sum()) for m in table.outliers) if table.outliers is not None else 0
    drop_outliers = 0 < flagged <= OUTLIER_WARN_PERCENT / 100.0 * c.n_points
    curves = []
    for k, iso in enumerate(c.isotherms):
        keep = _keep(table if drop_outliers else None, k, iso.n_points)
        y = np.log10(iso.values[quantity])
        if vertical:
            y = y - (table.log10_bT[k] if quantity != "creep_compliance_1_per_Pa"
                     else -table.log10_bT[k])
        curves.append(_curve(_reduced_log_x(c, table, k)[keep], y[keep]))
    # tan δ combines two moduli, so its tolerance is √2 that of one; the abscissa carries the
    # shift standard errors and no tolerance
    ty = SPREAD_TOLERANCE_LOG10 * (math.sqrt(2.0) if quantity == "tan_delta" else 1.0)
    value, raw, pairs, classes = _pairwise_spread(c.temperatures_K, curves, sx, sy, 0.0, ty)
    for p in pairs + classes:
        p["rms_decades"] = p.pop("rms")
    symbol = "tan δ" if quantity == "tan_delta" else c.symbol(quantity)
    xname = "reduced frequency" if c.domain == "frequency" else "reduced time"
    result = _spread_result(
        "shifted_superposition", f"shifted {symbol} against {xname}", f"decades of {symbol}",
        value, raw, pairs, classes,
        "The shifted isotherms do not superpose: either the shift factors are wrong (check the "
        "flagged isotherms) or the material is thermorheologically complex.")
    details = dict(result.details)
    details["quantity"] = quantity
    details["outliers_left_out"] = flagged if drop_outliers else 0
    return CheckResult(result.name, result.status, result.value, result.threshold,
                       result.message, details)


# ----------------------------------------------------------------------------------------------
# 2. Kramers–Kronig consistency
# ----------------------------------------------------------------------------------------------
def _master_curve(campaign: Campaign, shifts, prony_fit):
    """(ω_r, E', E'') of the master curve: from the shifts if given, else from the Prony fit."""
    if shifts is not None:
        c = campaign.with_derived()
        if c.domain != "frequency" or not {"storage_modulus_Pa",
                                           "loss_modulus_Pa"} <= set(c.quantities):
            return None
        table = _align_shifts(c, shifts)
        w, e1, e2, temps = [], [], [], []
        for k, iso in enumerate(c.isotherms):
            keep = _keep(table, k, iso.n_points)
            b = 10.0 ** table.log10_bT[k]
            w.append(10.0 ** _reduced_log_x(c, table, k)[keep])
            e1.append(iso.values["storage_modulus_Pa"][keep] / b)
            e2.append(iso.values["loss_modulus_Pa"][keep] / b)
            temps.append(np.full(int(keep.sum()), iso.temperature_K))
        w, e1, e2, temps = (np.concatenate(v) for v in (w, e1, e2, temps))
        source = "shifted campaign"
    elif prony_fit is not None:
        if getattr(prony_fit, "domain", None) != "frequency" or not {
                "storage_modulus", "loss_modulus"} <= set(prony_fit.quantities):
            return None
        w = np.asarray(prony_fit.x, dtype=float)
        e1 = np.asarray(prony_fit.measured["storage_modulus"], dtype=float)
        e2 = np.asarray(prony_fit.measured["loss_modulus"], dtype=float)
        temps = np.full(w.shape, np.nan)
        source = "data of the Prony fit"
    else:
        return None
    ok = np.isfinite(w) & np.isfinite(e1) & np.isfinite(e2) & (w > 0) & (e1 > 0) & (e2 > 0)
    order = np.argsort(w[ok], kind="stable")
    return w[ok][order], e1[ok][order], e2[ok][order], temps[ok][order], source


def _nnls_relative(design: np.ndarray, y: np.ndarray) -> np.ndarray:
    """min Σ ((A c)_j / y_j − 1)², c ≥ 0 (Lawson & Hanson, Solving Least Squares Problems,
    1974), with columns scaled to unit norm for conditioning."""
    from scipy.optimize import nnls

    a = design / y[:, None]
    norms = np.linalg.norm(a, axis=0)
    norms[norms == 0] = 1.0
    try:
        coef, _ = nnls(a / norms, np.ones_like(y), maxiter=max(200, 50 * a.shape[1]))
    except RuntimeError as exc:  # iteration limit of the active-set method
        raise FitError(f"non-negative least squares did not converge: {exc}") from None
    return coef / norms


def _kk_predictions(w, e1, e2):
    """Fit E' alone and E'' alone with non-negative Prony series; predict the other function.

    E' = E_∞ + Σ E_i ω²τ_i²/(1+ω²τ_i²) and E'' = Σ E_i ωτ_i/(1+ω²τ_i²) with common E_i ≥ 0
    (Ferry 1980, ch. 4): a series fitted to one function fixes the other, which is the discrete
    form of the Kramers–Kronig relations (Booij & Thoone 1982). E_∞ is not fixed by E'' and is
    chosen (≥ 0) to match E' best, since the relations leave that constant free.
    """
    lo, hi = math.log10(1.0 / w.max()) - 1.0, math.log10(1.0 / w.min()) + 1.0
    n_tau = max(2, int(math.ceil((hi - lo) * KK_TERMS_PER_DECADE)) + 1)
    tau = np.logspace(lo, hi, n_tau)
    wt = w[:, None] * tau[None, :]
    k1 = wt * wt / (1.0 + wt * wt)
    k2 = wt / (1.0 + wt * wt)
    c1 = _nnls_relative(np.hstack([np.ones((w.size, 1)), k1]), e1)
    pred2 = k2 @ c1[1:]
    c2 = _nnls_relative(k2, e2)
    shape = k1 @ c2
    # E_∞ ≥ 0 minimising Σ((E_∞ + shape)/E' − 1)²: closed form of the one-column problem
    e_inf = max(0.0, float(np.sum((1.0 - shape / e1) / e1) / np.sum(1.0 / e1 ** 2)))
    pred1 = e_inf + shape
    return pred1, pred2


def _kk_disagreement(w, e1, e2, inner):
    """rms (%) of E' predicted from E'' and of E'' predicted from E', where each is not tiny."""
    pred1, pred2 = _kk_predictions(w, e1, e2)
    ratio = e2 / e1
    use2 = inner & (ratio >= KK_MIN_RATIO)          # E'' predicted where it is not tiny
    use1 = inner & (ratio <= 1.0 / KK_MIN_RATIO)    # E' predicted where it is not tiny
    dev1 = 100.0 * (pred1[use1] / e1[use1] - 1.0)
    dev2 = 100.0 * (pred2[use2] / e2[use2] - 1.0)
    rms1 = float(np.sqrt(np.mean(dev1 ** 2))) if dev1.size >= 3 else math.nan
    rms2 = float(np.sqrt(np.mean(dev2 ** 2))) if dev2.size >= 3 else math.nan
    return rms1, rms2, dev1, dev2, use1, use2


def _kk_worst_isotherms(point_T, dev, n=3):
    """[(T_K, rms %)] of the isotherms with the largest rms deviation, at most n."""
    point_T = np.asarray(point_T, dtype=float)
    ok = np.isfinite(point_T)
    if not ok.any():
        return []
    rows = [(float(t), float(np.sqrt(np.mean(dev[ok & (point_T == t)] ** 2))))
            for t in np.unique(point_T[ok])]
    return sorted(rows, key=lambda r: -r[1])[:n]


def check_kramers_kronig(campaign: Campaign | None = None, *, shifts=None,
                         prony_fit=None) -> CheckResult | None:
    """Kramers–Kronig consistency of E' and E'' of the master curve.

    For a causal linear material E' and E'' are the two faces of one relaxation spectrum
    (Booij & Thoone, Rheol. Acta 21, 15-24, 1982; docs/methods.md §6.2). E' alone is fitted with a
    non-negative Prony series and E'' predicted from it, and E'' alone is fitted and E' predicted
    (common practice, docs/methods.md §6.2). The value is the larger rms relative disagreement (%)
    between a prediction and the measured function, over the master curve without its outer
    :data:`KK_EDGE_DECADES` (there a prediction depends on the spectrum beyond the data).

    Parameters
    ----------
    campaign : Campaign, optional
        Needed with ``shifts``.
    shifts : shift result, optional
        Builds the master curve from the campaign (outliers left out, b_T divided out).
    prony_fit : PronyFit, optional
        Used when ``shifts`` is not given: the master-curve data it was fitted to. Its joint-fit
        rms per quantity is reported in the details.

    Returns
    -------
    CheckResult or None
        None for time-domain data or without both moduli.
    """
    if shifts is not None:
        _as_campaign(campaign)
    curve = _master_curve(campaign, shifts, prony_fit)
    if curve is None:
        return None
    w, e1, e2, point_T, source = curve
    lw = np.log10(w)
    inner = (lw >= lw[0] + KK_EDGE_DECADES) & (lw <= lw[-1] - KK_EDGE_DECADES)
    if inner.sum() < 5 or w.size < 8:
        return CheckResult("kramers_kronig", "warn", None, KK_WARN_PERCENT,
                           "The master curve is too short to test whether E' and E'' agree; "
                           "measure over a wider range of reduced frequency.",
                           {"points": int(w.size), "source": source})
    rms1, rms2, dev1, dev2, use1, use2 = _kk_disagreement(w, e1, e2, inner)
    if not (math.isfinite(rms1) or math.isfinite(rms2)):
        return CheckResult("kramers_kronig", "warn", None, KK_WARN_PERCENT,
                           "The master curve has too few points where E' and E'' are comparable "
                           "to test whether they agree; measure over a wider range.",
                           {"points": int(w.size), "source": source})
    value = float(np.nanmax([rms1, rms2]))
    noise_pct = math.nan
    if campaign is not None:
        noise_pct = _noise_percent(estimate_noise(campaign))[0]
    warn = KK_WARN_PERCENT
    if math.isfinite(noise_pct):
        warn = max(warn, KK_NOISE_FACTOR * noise_pct)
    fail = max(KK_FAIL_PERCENT, 2.0 * warn)
    status = _grade(value, warn, fail)
    details = {"unit": "%", "source": source, "points": int(w.size),
               "loss_from_storage_points": int(use2.sum()),
               "loss_from_storage_rms_percent": rms2,
               "loss_from_storage_mean_percent": float(np.mean(dev2)) if dev2.size else None,
               "storage_from_loss_points": int(use1.sum()),
               "storage_from_loss_rms_percent": rms1,
               "storage_from_loss_mean_percent": float(np.mean(dev1)) if dev1.size else None,
               "noise_percent": noise_pct, "fail_threshold": fail}
    if prony_fit is not None and getattr(prony_fit, "rms_percent_by_quantity", None):
        details["joint_fit_rms_percent"] = {str(k): float(v) for k, v in
                                            prony_fit.rms_percent_by_quantity.items()}
    worse = ("E'' predicted from E'" if not rms1 >= rms2 else "E' predicted from E''")
    worst = _kk_worst_isotherms(point_T[use2] if not rms1 >= rms2 else point_T[use1],
                                dev2 if not rms1 >= rms2 else dev1)
    details["worst_isotherms"] = [{"temperature_C": t - 273.15, "rms_percent": r}
                                  for t, r in worst]
    where = ("; largest at " + ", ".join(f"{_fmt_C(t)} ({r:.2g} %)" for t, r in worst)
             if worst and status != "pass" else "")
    if status == "pass":
        msg = (f"E' and E'' of the master curve agree with one relaxation spectrum within "
               f"{value:.2g} % (Kramers–Kronig); they are consistent.")
    elif status == "warn":
        msg = (f"{worse} misses the measured curve by {value:.2g} % rms{where}: "
               "E' and E'' agree only roughly with one spectrum. Check the ends of the master "
               "curve and the shifts; use the Prony series with care.")
    else:
        msg = (f"{worse} misses the measured curve by {value:.2g} % rms{where}, so "
               "E' and E'' cannot be the two faces of one relaxation spectrum "
               "(Kramers–Kronig). Look for instrument "
               "artefacts (inertia, clamp compliance, phase error), nonlinearity or shifts that "
               "differ between E' and E''.")
    return CheckResult("kramers_kronig", status, value, warn, msg, details)


# ----------------------------------------------------------------------------------------------
# 3. overlap coverage
# ----------------------------------------------------------------------------------------------
def _ordinate_quantity(campaign: Campaign) -> str | None:
    order = (("storage_modulus_Pa", "complex_modulus_Pa") if campaign.domain == "frequency"
             else ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa"))
    return next((q for q in order if q in campaign.quantities), None)


def _ordinate_overlap(ya: np.ndarray, yb: np.ndarray):
    """(overlap in decades, narrower span) of two sets of log10 values."""
    ya, yb = ya[np.isfinite(ya)], yb[np.isfinite(yb)]
    overlap = min(ya.max(), yb.max()) - max(ya.min(), yb.min())
    span = min(np.ptp(ya), np.ptp(yb))
    return float(overlap), float(span)


def check_overlap_coverage(campaign: Campaign, *, shifts=None) -> CheckResult | None:
    """Decades of overlap in the ordinate between neighbouring isotherms; gaps named.

    A horizontal shift moves an isotherm along log x only, so two isotherms of a monotonic
    function (E', |E*|, E(t), D(t)) can be made to meet only if their ordinate ranges intersect
    (docs/methods.md §2.5; the area-between-curves method of Gergesova et al., J. Rheol. 55, 1, 2011,
    works on exactly that common ordinate range). For each neighbouring pair the overlap is
    min(upper ends) − max(lower ends) of log10 of the function. A pair overlaps enough with
    ≥ :data:`MIN_OVERLAP_DECADES` or ≥ :data:`MIN_OVERLAP_FRACTION` of the narrower span; with
    disjoint ranges (beyond :data:`GAP_NOISE_FACTOR` noise) it is a gap. For frequency data a gap
    in E' that tan δ bridges (its ordinate ranges overlap) is a warning, not a failure. Shifts
    that the shifting marked as bridged by a law are named too.

    Parameters
    ----------
    campaign : Campaign
    shifts : shift result, optional
        Only its ``flags`` are used ("bridged", "gap-below", "gap-above", ...).

    Returns
    -------
    CheckResult or None
        None without a monotonic function to compare.
    """
    c = _as_campaign(campaign).with_derived()
    quantity = _ordinate_quantity(c)
    if quantity is None or len(c) < 2:
        return None
    table = _align_shifts(c, shifts) if shifts is not None else None
    sigma = estimate_noise(c)["typical"].get(quantity, NOISE_FLOOR_LOG10)
    tolerance = GAP_NOISE_FACTOR * math.sqrt(2.0) * sigma
    pairs, gaps, thin, bridged_by_tan = [], [], [], []
    for k in range(len(c) - 1):
        a, b = c.isotherms[k], c.isotherms[k + 1]
        ka, kb = _keep(table, k, a.n_points), _keep(table, k + 1, b.n_points)
        overlap, span = _ordinate_overlap(np.log10(a.values[quantity][ka]),
                                          np.log10(b.values[quantity][kb]))
        name = f"{a.temperature_C:.4g} °C and {b.temperature_C:.4g} °C"
        pair = {"temperature_low_C": a.temperature_C, "temperature_high_C": b.temperature_C,
                "overlap_decades": overlap, "narrower_span_decades": span}
        if c.domain == "frequency" and "tan_delta" in c.quantities:
            pair["tan_delta_overlap_decades"], _ = _ordinate_overlap(
                np.log10(a.values["tan_delta"][ka]), np.log10(b.values["tan_delta"][kb]))
        if overlap < -tolerance:
            if pair.get("tan_delta_overlap_decades", -1.0) >= MIN_OVERLAP_DECADES:
                pair["verdict"] = "gap bridged by tan δ"
                bridged_by_tan.append(f"{name} ({-overlap:.2g} decade apart)")
            else:
                pair["verdict"] = "gap"
                gaps.append(f"{name} ({-overlap:.2g} decade apart)")
        elif overlap < MIN_OVERLAP_DECADES and (span <= 0 or overlap < MIN_OVERLAP_FRACTION * span):
            pair["verdict"] = "thin"
            thin.append(f"{name} ({max(overlap, 0.0):.2g} decade)")
        else:
            pair["verdict"] = "ok"
        pairs.append(pair)
    bridged, weak = [], []
    if table is not None:
        bridged = [_fmt_C(t) for t, f in zip(table.temperature_K, table.flags)
                   if any("bridg" in str(x) for x in f)]
        weak = [_fmt_C(t) for t, f in zip(table.temperature_K, table.flags)
                if "low-information" in f]
    value = min(p["overlap_decades"] for p in pairs)
    symbol = c.symbol(quantity)
    details = {"unit": f"decades of {symbol}", "quantity": quantity, "pairs": pairs,
               "gaps": gaps, "thin": thin, "gaps_bridged_by_tan_delta": bridged_by_tan,
               "bridged_shifts": bridged, "low_information_shifts": weak,
               "noise_tolerance_decades": tolerance}
    threshold = (f">= {MIN_OVERLAP_DECADES:g} decade or >= {MIN_OVERLAP_FRACTION:.0%} of the "
                 "narrower span; no gap")
    if gaps:
        msg = (f"Neighbouring isotherms do not overlap in {symbol} between {'; '.join(gaps)}, so "
               "the data cannot fix the shift across the gap. Measure at "
               "temperatures between them, widen the frequency or time range, or bridge the gap "
               "with a shift law and treat those shifts as model-based.")
        status = "fail"
    elif thin or bridged_by_tan or bridged:
        parts = []
        if thin:
            parts.append(f"thin overlap in {symbol} between {'; '.join(thin)}")
        if bridged_by_tan:
            parts.append(f"{symbol} does not overlap between {'; '.join(bridged_by_tan)} but "
                         "tan δ does")
        if bridged:
            parts.append(f"shifts bridged by a law at {', '.join(bridged)}")
        if weak:
            parts.append(f"shifts poorly determined (a plateau or little overlap) at "
                         f"{', '.join(weak)}")
        msg = ("Coverage is marginal: " + "; ".join(parts) + ". Those shift factors rest on "
               "little data; check them or measure at intermediate temperatures.")
        status = "warn"
    else:
        least = min(pairs, key=lambda p: p["overlap_decades"])
        flat = (" on a plateau, where the isotherms span little"
                if least["narrower_span_decades"] < MIN_OVERLAP_DECADES else "")
        msg = (f"Every pair of neighbouring isotherms overlaps in {symbol} (least "
               f"{value:.2g} decade, between {least['temperature_low_C']:.4g} °C and "
               f"{least['temperature_high_C']:.4g} °C{flat})")
        if weak:
            # A note, not a warning: plateau isotherms of exact simple campaigns are flagged
            # low-information too (20 % of benchmarks/bench_checks.py --quick warned on it);
            # whether superposition holds there is judged by function_agreement.
            msg += (f", but the shifts at {', '.join(weak)} are poorly determined (a plateau "
                    "or little overlap): they rest on little data.")
        else:
            msg += "; the data can fix every shift."
        status = "pass"
    return CheckResult("overlap_coverage", status, value, threshold, msg, details)


# ----------------------------------------------------------------------------------------------
# 4. monotonic shifts
# ----------------------------------------------------------------------------------------------
def check_monotonic_shifts(shifts) -> CheckResult:
    """log10 a_T must fall as the temperature rises; violations named.

    Every relaxation time shortens on heating, so a_T decreases monotonically with temperature
    (Ferry 1980, ch. 11; the WLF and Arrhenius laws both do). A rise between neighbouring
    temperatures is compared with the combined standard error √(s_k² + s_{k+1}²): beyond
    :data:`MONOTONIC_SIGMA` of it, it fails; within it (or without standard errors, a rise of
    at most 0.01 decade) it warns.

    Parameters
    ----------
    shifts : shift result
        ``temperature_K``, ``log10_aT``, optionally ``log10_aT_stderr``.

    Returns
    -------
    CheckResult
        Value: the number of neighbouring pairs where log10 a_T does not fall.
    """
    try:
        t = np.asarray(shifts.temperature_K, dtype=float).ravel()
        a = np.asarray(shifts.log10_aT, dtype=float).ravel()
    except AttributeError:
        raise bad_value("shifts", "a shift result with temperature_K and log10_aT",
                        type(shifts).__name__) from None
    if t.size != a.size:
        raise bad_value("shifts.log10_aT", f"one value per temperature ({t.size})",
                        f"{a.size} values")
    s = _array(shifts, "log10_aT_stderr", t.size, np.nan)
    order = np.argsort(t, kind="stable")
    t, a, s = t[order], a[order], s[order]
    violations, significant = [], 0
    for k in range(t.size - 1):
        rise = a[k + 1] - a[k]
        if rise >= 0:
            se = math.hypot(s[k], s[k + 1]) if np.isfinite(s[k]) and np.isfinite(s[k + 1]) \
                else math.nan
            beyond = rise > MONOTONIC_SIGMA * se if math.isfinite(se) else rise > 0.01
            significant += bool(beyond)
            violations.append({"temperature_low_C": t[k] - 273.15,
                               "temperature_high_C": t[k + 1] - 273.15,
                               "rise_decades": float(rise), "combined_stderr_decades": se,
                               "beyond_uncertainty": bool(beyond)})
    details = {"unit": "pairs", "violations": violations}
    named = "; ".join(f"{v['temperature_low_C']:.4g} °C → {v['temperature_high_C']:.4g} °C "
                      f"(+{v['rise_decades']:.2g} decade)" for v in violations)
    if not violations:
        return CheckResult("monotonic_shifts", "pass", 0.0, 0.0,
                           "log10 a_T falls steadily as the temperature rises, as it must.",
                           details)
    if len(violations) == t.size - 1 and t.size > 2:
        hint = (" It rises everywhere: the sign convention looks reversed (log10 a_T must be "
                "> 0 below the reference temperature).")
    else:
        hint = (" Check those isotherms for a wrong temperature, a poorly determined shift or "
                "a transition in the material.")
    status = "fail" if significant else "warn"
    lead = ("log10 a_T rises with temperature" if significant else
            "log10 a_T does not fall (within its uncertainty)")
    return CheckResult("monotonic_shifts", status, float(len(violations)), 0.0,
                       f"{lead} between {named}.{hint}", details)


# ----------------------------------------------------------------------------------------------
# 5. law residuals
# ----------------------------------------------------------------------------------------------
def _runs_p_value(signs: np.ndarray) -> tuple[int, float, float]:
    """Exact lower-tail probability of at most the observed number of sign runs.

    Under independence, with n1 positive and n2 negative signs in random order, the number of
    runs R has P(R = 2k) = 2 C(n1−1, k−1) C(n2−1, k−1) / C(n, n1) and P(R = 2k+1) =
    [C(n1−1, k) C(n2−1, k−1) + C(n1−1, k−1) C(n2−1, k)] / C(n, n1) (Wald & Wolfowitz, Ann. Math.
    Stat. 11, 147-162, 1940). Returns (runs, expected runs, P(R ≤ runs)).
    """
    n1 = int(np.sum(signs > 0))
    n2 = int(np.sum(signs < 0))
    n = n1 + n2
    runs = 1 + int(np.sum(signs[1:] != signs[:-1]))
    if n1 == 0 or n2 == 0:
        return runs, 1.0, 1.0
    expected = 1.0 + 2.0 * n1 * n2 / n
    total = math.comb(n, n1)

    def prob(r):
        k, odd = divmod(r, 2)
        if not odd:
            return 2 * math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k - 1) / total
        return (math.comb(n1 - 1, k) * math.comb(n2 - 1, k - 1)
                + math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k)) / total

    return runs, expected, float(min(1.0, sum(prob(r) for r in range(2, runs + 1))))


def _curvature_p_value(t: np.ndarray, r: np.ndarray) -> tuple[float, float]:
    """Two-sided p-value of the quadratic term of r ~ c0 + c1 τ + c2 τ², τ the centred,
    scaled temperature (ordinary least squares t-test; Draper & Smith, Applied Regression
    Analysis, 3rd ed., 1998, ch. 3). Returns (t statistic, p)."""
    from scipy import stats

    if t.size < 5:
        return math.nan, 1.0
    tau = (t - t.mean()) / (np.ptp(t) or 1.0)
    x = np.column_stack([np.ones_like(tau), tau, tau ** 2])
    coef, *_ = np.linalg.lstsq(x, r, rcond=None)
    dof = t.size - 3
    resid = r - x @ coef
    s2 = float(resid @ resid) / dof
    cov = s2 * np.linalg.inv(x.T @ x)
    se = math.sqrt(max(cov[2, 2], 0.0))
    if se == 0:
        return (math.inf, 0.0) if abs(coef[2]) > 0 else (0.0, 1.0)
    tstat = float(coef[2] / se)
    return tstat, float(2.0 * stats.t.sf(abs(tstat), dof))


def check_law_residuals(law_fit, *, shifts=None) -> CheckResult:
    """A systematic pattern in the residuals of the fitted shift law.

    The residuals (data − law, decades) ordered by temperature are tested for too few sign
    runs (Wald & Wolfowitz 1940) and for curvature (t-test of a quadratic in T); each at
    :data:`LAW_PATTERN_ALPHA`/2 (Bonferroni). A pattern only counts when the residuals exceed
    both :data:`LAW_RESIDUAL_FLOOR_DECADES` and twice the typical shift standard error. A
    pattern in a single law suggests the temperature dependence changes inside the range, most
    often on crossing the glass transition: WLF above Tg, Arrhenius below (Struik 1978;
    docs/methods.md §6.4, §3.1), so the law across Tg ('wlf-arrhenius') is suggested.

    Parameters
    ----------
    law_fit : ShiftLawFit
        ``residuals``, ``temperature_K``, ``law.model`` (and ``log10_aT_stderr`` if known).
    shifts : shift result, optional
        Its ``log10_aT_stderr`` is used when the law fit carries none.

    Returns
    -------
    CheckResult
        Value: the smaller Bonferroni-corrected p-value of the two pattern tests.
    """
    try:
        r = np.asarray(law_fit.residuals, dtype=float).ravel()
        t = np.asarray(law_fit.temperature_K, dtype=float).ravel()
    except AttributeError:
        raise bad_value("law_fit", "a shift-law fit with residuals and temperature_K",
                        type(law_fit).__name__) from None
    if r.size != t.size:
        raise bad_value("law_fit.residuals", f"one value per temperature ({t.size})",
                        f"{r.size} values")
    model = str(getattr(getattr(law_fit, "law", None), "model", None)
                or getattr(law_fit, "model", "") or "")
    stderr = np.asarray(getattr(law_fit, "log10_aT_stderr", np.full(t.size, np.nan)),
                        dtype=float).ravel()
    if not np.isfinite(stderr).any() and shifts is not None:
        stderr = _array(shifts, "log10_aT_stderr", np.size(shifts.temperature_K), np.nan)
    typical_se = float(np.nanmedian(stderr)) if np.isfinite(stderr).any() else 0.0
    order = np.argsort(t, kind="stable")
    t, r = t[order], r[order]
    informative = np.abs(r) > _RESIDUAL_ZERO_DECADES
    t, r = t[informative], r[informative]
    rms = float(np.sqrt(np.mean(r ** 2))) if r.size else 0.0
    floor = max(LAW_RESIDUAL_FLOOR_DECADES, 2.0 * typical_se)
    runs, expected, p_runs = _runs_p_value(np.sign(r)) if r.size else (0, 0.0, 1.0)
    tstat, p_curv = _curvature_p_value(t, r)
    p = min(1.0, 2.0 * min(p_runs, p_curv))
    details = {"unit": "p-value", "model": model, "rms_residual_decades": rms,
               "residual_floor_decades": floor, "runs": runs, "expected_runs": expected,
               "runs_p_value": p_runs, "curvature_t": tstat, "curvature_p_value": p_curv,
               "points": int(r.size)}
    if rms > LAW_RESIDUAL_FAIL_DECADES:
        status = "fail"
    elif rms > floor and p < LAW_PATTERN_ALPHA:
        status = "warn"
    else:
        status = "pass"
    suggest = None
    if status != "pass":
        if model in ("wlf", "vft", "arrhenius"):
            suggest = "wlf-arrhenius"
            advice = ("The temperature dependence changes inside the range, as on crossing Tg: "
                      "try the law across Tg (--law wlf-arrhenius), or fit only one side.")
        else:
            advice = ("The law does not follow the shift factors; look for a transition in the "
                      "range or a wrong shift, and fit the law on a narrower range.")
    details["suggested_law"] = suggest
    if status == "pass":
        why = ("within the shift uncertainty" if rms <= floor else "without a systematic pattern")
        msg = (f"The {model or 'shift'} law follows the shift factors (rms residual "
               f"{rms:.2g} decade, {why}).")
    elif status == "warn":
        msg = (f"The residuals of the {model} law follow a systematic pattern in temperature "
               f"(rms {rms:.2g} decade, {runs} sign runs, p = {p:.2g}). {advice}")
    else:
        msg = (f"The {model} law misses the shift factors by {rms:.2g} decade rms. {advice}")
    return CheckResult("law_residuals", status, p, LAW_PATTERN_ALPHA, msg, details)


# ----------------------------------------------------------------------------------------------
# 6. Prony fit quality and range
# ----------------------------------------------------------------------------------------------
def check_prony_fit_quality(prony_fit, *, campaign: Campaign | None = None) -> CheckResult:
    """Residuals of the Prony fit against thresholds.

    The rms relative deviation (%) is judged against :data:`PRONY_RMS_WARN_PERCENT` (raised to
    2.5 times the measured noise of the campaign when that is larger: no fit can beat the
    noise) and :data:`PRONY_RMS_FAIL_PERCENT`; the largest deviation is reported.

    Parameters
    ----------
    prony_fit : PronyFit
        ``rms_percent``, ``max_percent``, optionally ``rms_percent_by_quantity``.
    campaign : Campaign, optional
        To measure the noise.
    """
    try:
        rms, mx = float(prony_fit.rms_percent), float(prony_fit.max_percent)
    except AttributeError:
        raise bad_value("prony_fit", "a Prony fit with rms_percent and max_percent",
                        type(prony_fit).__name__) from None
    noise_pct = math.nan
    if campaign is not None:
        noise_pct = _noise_percent(estimate_noise(campaign))[0]
    warn = max(PRONY_RMS_WARN_PERCENT, 2.5 * noise_pct) if math.isfinite(noise_pct) \
        else PRONY_RMS_WARN_PERCENT
    fail = max(PRONY_RMS_FAIL_PERCENT, 2 * warn)
    status = _grade(rms, warn, fail)
    details = {"unit": "%", "rms_percent": rms, "max_percent": mx, "fail_threshold": fail,
               "noise_percent": noise_pct}
    by = getattr(prony_fit, "rms_percent_by_quantity", None)
    if by:
        details["rms_percent_by_quantity"] = {str(k): float(v) for k, v in by.items()}
    if status == "pass":
        msg = (f"The Prony series follows the master curve within {rms:.2g} % rms "
               f"(largest {mx:.2g} %).")
    else:
        msg = (f"The Prony series misses the master curve by {rms:.2g} % rms (largest "
               f"{mx:.2g} %). Use more terms per decade, check the master curve for steps "
               "between isotherms, or check Kramers–Kronig consistency.")
    return CheckResult("prony_fit_quality", status, rms, warn, msg, details)


def check_master_curve_range(prony_fit) -> CheckResult:
    """Whether the master curve reaches its plateaus, or the series' ends are extrapolated.

    At a data end where the local slope |d ln E/d ln x| of the fitted curve exceeds the plateau
    criterion of the fit, the glassy (instantaneous) or rubbery (equilibrium) modulus is not
    measured but extrapolated by the series (docs/methods.md §4.4). Predictions beyond the
    valid reduced-time range are extrapolations too.

    Parameters
    ----------
    prony_fit : PronyFit
        ``reaches_glassy_plateau``, ``reaches_rubbery_plateau``, ``reaches_terminal_zone``,
        ``series.valid_reduced_time_range_s``.

    Returns
    -------
    CheckResult
        Value: the number of extrapolated ends (0, 1 or 2).
    """
    try:
        glassy = bool(prony_fit.reaches_glassy_plateau)
        rubbery = bool(prony_fit.reaches_rubbery_plateau)
    except AttributeError:
        raise bad_value("prony_fit", "a Prony fit with plateau verdicts",
                        type(prony_fit).__name__) from None
    terminal = bool(getattr(prony_fit, "reaches_terminal_zone", False))
    series = getattr(prony_fit, "series", None)
    rng = getattr(series, "valid_reduced_time_range_s", None)
    ends = []
    approaching = any("terminal (flow) zone" in str(w)
                      for w in getattr(prony_fit, "warnings", ()) or ())
    if not glassy:
        ends.append("short-time (glassy) end")
    if not (rubbery or terminal):
        ends.append("long-time (terminal, flow) end, which for a melt is the expected end "
                    "(its equilibrium modulus is zero by physics)" if approaching
                    else "long-time (rubbery) end")
    details = {"unit": "extrapolated ends", "glassy_plateau_reached": glassy,
               "rubbery_plateau_reached": rubbery, "terminal_zone_reached": terminal,
               "extrapolated_ends": ends,
               "valid_reduced_time_range_s": list(rng) if rng is not None else None}
    where = (f" (valid reduced time {rng[0]:.3g} s to {rng[1]:.3g} s)" if rng is not None else "")
    if not ends:
        msg = (f"The master curve reaches both ends of the relaxation{where}; the series is "
               "measured, not extrapolated, inside that window.")
        if terminal:
            msg += (" Its long-time end is the terminal (flow) zone of a liquid, whose "
                    "equilibrium modulus is zero by physics.")
        return CheckResult("master_curve_range", "pass", 0.0, 0.0, msg, details)
    msg = (f"The data do not reach the {' and the '.join(ends)}: the series is extrapolated "
           f"there{where}. That says nothing against superposition, but do not use the series "
           "outside that window; measure at more temperatures to reach the plateau.")
    # A note on the range, not a verdict on superposition: exact simple campaigns that stop
    # short of a plateau warned here on 73 % of benchmarks/bench_checks.py --quick (old code).
    return CheckResult("master_curve_range", "pass", float(len(ends)), 0.0, msg, details)


# ----------------------------------------------------------------------------------------------
# 7. data quality
# ----------------------------------------------------------------------------------------------
def check_outliers(campaign: Campaign, shifts) -> CheckResult | None:
    """Share of points the shifting flagged as outliers, per isotherm.

    Parameters
    ----------
    campaign : Campaign
    shifts : shift result
        Its ``outlier_mask`` (one bool array per isotherm).

    Returns
    -------
    CheckResult or None
        None when the shift result carries no outlier flags. Value: % of points flagged.
    """
    c = _as_campaign(campaign)
    table = _align_shifts(c, shifts)
    if table.outliers is None:
        return None
    counts = [int(m.sum()) for m in table.outliers]
    total = int(sum(counts))
    share = 100.0 * total / max(c.n_points, 1)
    per = [{"temperature_C": iso.temperature_C, "outliers": n, "points": iso.n_points}
           for iso, n in zip(c.isotherms, counts) if n]
    status = _grade(share, OUTLIER_WARN_PERCENT, OUTLIER_FAIL_PERCENT)
    named = ", ".join(f"{p['outliers']} at {p['temperature_C']:.4g} °C" for p in per[:8])
    details = {"unit": "% of points", "outliers": total, "points": c.n_points,
               "per_isotherm": per, "fail_threshold": OUTLIER_FAIL_PERCENT}
    if total == 0:
        msg = "The shifting flagged no point as an outlier."
    elif status == "pass":
        msg = (f"The shifting flagged {total} of {c.n_points} points as outliers ({named}); they "
               "are kept in the outputs and left out of the fits.")
    else:
        msg = (f"The shifting flagged {total} of {c.n_points} points ({share:.2g} %) as outliers "
               f"({named}). So many points that do not fit the others point to bad data or a "
               "material that does not superpose; inspect those isotherms.")
    return CheckResult("outliers", status, share, OUTLIER_WARN_PERCENT, msg, details)


def _noise_percent(noise: dict):
    """(typical relative noise in % over the measured moduli, per-isotherm rows in %)."""
    keys = [q for q in noise["typical"] if q not in ("phase_angle_rad", "tan_delta",
                                                     "complex_modulus_Pa")]
    if not keys:
        keys = list(noise["typical"])
    typical = max(100.0 * _LN10 * noise["typical"][q] for q in keys)
    rows = []
    for row in noise["per_isotherm"]:
        vals = [row.get(q, math.nan) for q in keys]
        vals = [v for v in vals if math.isfinite(v)]
        rows.append({"temperature_C": row["temperature_K"] - 273.15,
                     "noise_percent": 100.0 * _LN10 * max(vals) if vals else None})
    return typical, rows, keys


def check_noise_level(campaign: Campaign) -> CheckResult:
    """Noise level of the data, estimated per isotherm from third differences.

    The relative noise (%) of each measured modulus or compliance is 100·ln 10 times the
    standard deviation of its log10 values from :func:`estimate_noise`. The value is the
    campaign's typical noise (median over isotherms, largest over the functions); isotherms
    noisier than :data:`NOISE_ISOTHERM_RATIO` times that are named.

    Returns
    -------
    CheckResult
        Value: typical relative noise in %.
    """
    c = _as_campaign(campaign)
    noise = estimate_noise(c)
    floored, rows, keys = _noise_percent(noise)
    floor = 100.0 * _LN10 * NOISE_FLOOR_LOG10
    # The headline is the measured scatter (median over isotherms of the per-isotherm estimate,
    # largest over the functions); the floor the other checks assume is only stated as a floor.
    measured = []
    for q in keys:
        vals = np.array([row.get(q, math.nan) for row in noise["per_isotherm"]], dtype=float)
        vals = vals[np.isfinite(vals)]
        if vals.size:
            measured.append(100.0 * _LN10 * float(np.median(vals)))
    typical = max(measured) if measured else floored
    noisy = [r for r in rows if r["noise_percent"] is not None
             and r["noise_percent"] > max(NOISE_ISOTHERM_RATIO * typical, NOISE_ISOTHERM_PERCENT)]
    status = _grade(typical, NOISE_WARN_PERCENT, NOISE_FAIL_PERCENT)
    if status == "pass" and noisy:
        status = "warn"
    details = {"unit": "%", "quantities": keys, "per_isotherm": rows,
               "noisy_isotherms": [r["temperature_C"] for r in noisy],
               "floor_percent": floor, "assumed_by_checks_percent": floored,
               "fail_threshold": NOISE_FAIL_PERCENT}
    named = ", ".join(f"{r['temperature_C']:.4g} °C ({r['noise_percent']:.2g} %)" for r in noisy)
    if status == "pass":
        msg = f"The data scatter by about {typical:.2g} % about smooth curves; that is usual."
        if typical < floor:
            msg += (f" The other checks assume at least {floor:.2g} % (a floor for "
                    "reproducibility between isotherms).")
    elif typical <= NOISE_WARN_PERCENT:
        msg = (f"Most isotherms scatter by about {typical:.2g} %, but some are much noisier: "
               f"{named}. Check those measurements (soak time, clamping, strain amplitude).")
    else:
        msg = (f"The data scatter by about {typical:.2g} % about smooth curves, which blurs the "
               "shift factors and weakens the other checks; average repeated sweeps or "
               "increase the strain amplitude within the linear range.")
    return CheckResult("noise_level", status, typical, NOISE_WARN_PERCENT, msg, details)


# ----------------------------------------------------------------------------------------------
# relaxation against creep (issue 23)
# ----------------------------------------------------------------------------------------------
#: largest departure of ∫₀ᵗ E(t−u) D(u) du from t (%) that passes, and that only warns. An exact
#: Prony pair sampled with 1 % noise departs by about 0.4 %; one curve shifted by 0.2 decade on a
#: slope of 0.4 by 17-27 % (tests/test_relaxation_creep.py). On a slope of 0.1 (near a plateau)
#: the same shift gives about 5 %, a warning.
RELAXATION_CREEP_WARN_PERCENT = 5.0
RELAXATION_CREEP_FAIL_PERCENT = 10.0


def check_relaxation_creep(campaign: Campaign, shifts) -> CheckResult | None:
    """Relaxation modulus and creep compliance of the same material checked against each other.

    Both master curves (reduced times t/a_T, moduli divided and compliances multiplied by b_T)
    are smoothed by Prony series and the identity ∫₀ᵗ E(t − u) D(u) du = t is evaluated on
    their common reduced-time range (:func:`ttsp.relaxation_creep.compare_relaxation_creep`;
    Ferry 1980, ch. 3). The value is the largest departure, in %. None unless the campaign
    holds both E(t) and D(t).
    """
    if campaign.domain != "time":
        return None
    present = {q for iso in campaign.isotherms for q in iso.values}
    if not {"relaxation_modulus_Pa", "creep_compliance_1_per_Pa"} <= present:
        return None
    from .relaxation_creep import compare_relaxation_creep

    table = _align_shifts(campaign, shifts)
    curves = {"relaxation_modulus_Pa": ([], []), "creep_compliance_1_per_Pa": ([], [])}
    for k, iso in enumerate(campaign.isotherms):
        keep = _keep(table, k, iso.n_points)
        lt = _reduced_log_x(campaign, table, k)
        for q, sign in (("relaxation_modulus_Pa", -1.0), ("creep_compliance_1_per_Pa", 1.0)):
            if q in iso.values:
                curves[q][0].append(10 ** lt[keep])
                curves[q][1].append(iso.values[q][keep] * 10 ** (sign * table.log10_bT[k]))
    (te, e), (td, d) = ((np.concatenate(a), np.concatenate(b)) for a, b in curves.values())
    try:
        cmp = compare_relaxation_creep(te, e, td, d)
    except DataError as exc:
        return CheckResult("relaxation_creep", "warn", None, RELAXATION_CREEP_FAIL_PERCENT,
                           f"Relaxation and creep could not be compared: {exc}.", {})
    value = cmp.max_departure_percent
    status = _grade(value, RELAXATION_CREEP_WARN_PERCENT, RELAXATION_CREEP_FAIL_PERCENT)
    symbols = (campaign.symbol("relaxation_modulus_Pa"),
               campaign.symbol("creep_compliance_1_per_Pa"))
    msg = (f"The measured {symbols[0]} and {symbols[1]} obey the convolution identity "
           f"within {value:.2g} %: they describe one material." if status == "pass" else
           f"The measured {symbols[0]} and {symbols[1]} depart from the convolution identity by "
           f"up to {value:.2g} %: one of the two is offset in time or level (temperature, "
           f"clamping, a different specimen or a compliance calibration).")
    return CheckResult("relaxation_creep", status, value, RELAXATION_CREEP_FAIL_PERCENT, msg,
                       {"unit": "%", **cmp.to_dict()})


# ----------------------------------------------------------------------------------------------
# the registry
# ----------------------------------------------------------------------------------------------
def _function_agreement(campaign, shifts):
    from .checks_agreement import check_function_agreement

    return check_function_agreement(campaign, shifts)


@dataclass(frozen=True)
class _Entry:
    name: str
    needs: tuple
    run: Callable


_REGISTRY = (
    _Entry("noise_level", ("campaign",), lambda c, s, l, p: check_noise_level(c)),
    _Entry("simplicity_van_gurp_palmen", ("campaign",),
           lambda c, s, l, p: check_van_gurp_palmen(c, shifts=s)),
    _Entry("simplicity_loss_vs_storage", ("campaign",),
           lambda c, s, l, p: check_loss_vs_storage(c, shifts=s)),
    _Entry("function_agreement", ("campaign", "shifts"),
           lambda c, s, l, p: _function_agreement(c, s)),
    _Entry("overlap_coverage", ("campaign",),
           lambda c, s, l, p: check_overlap_coverage(c, shifts=s)),
    _Entry("shifted_superposition", ("campaign", "shifts"),
           lambda c, s, l, p: check_shifted_superposition(c, s)),
    _Entry("outliers", ("campaign", "shifts"), lambda c, s, l, p: check_outliers(c, s)),
    _Entry("monotonic_shifts", ("shifts",), lambda c, s, l, p: check_monotonic_shifts(s)),
    _Entry("law_residuals", ("law_fit",), lambda c, s, l, p: check_law_residuals(l, shifts=s)),
    _Entry("kramers_kronig", ("campaign", "shifts|prony_fit"),
           lambda c, s, l, p: check_kramers_kronig(c, shifts=s, prony_fit=p)),
    _Entry("prony_fit_quality", ("prony_fit",),
           lambda c, s, l, p: check_prony_fit_quality(p, campaign=c)),
    _Entry("master_curve_range", ("prony_fit",), lambda c, s, l, p: check_master_curve_range(p)),
    _Entry("relaxation_creep", ("campaign", "shifts"),
           lambda c, s, l, p: check_relaxation_creep(c, s)),
)

#: Names of the registered checks, in the order :func:`run_checks` runs them.
CHECK_NAMES = tuple(e.name for e in _REGISTRY)


def run_checks(campaign: Campaign, *, shifts=None, law_fit=None,
               prony_fit=None) -> tuple[CheckResult, ...]:
    """Run every registered check whose inputs are available.

    Parameters
    ----------
    campaign : Campaign
        The measured campaign.
    shifts : shift result, optional
        From the shifting (``temperature_K``, ``log10_aT``, ``log10_aT_stderr``, ``log10_bT``,
        ``flags``, ``outlier_mask``).
    law_fit : ShiftLawFit, optional
    prony_fit : PronyFit, optional

    Returns
    -------
    tuple of CheckResult
        In registry order (:data:`CHECK_NAMES`). A check whose inputs are missing, or that does
        not apply to the data (a phase-angle check on relaxation data), is left out. A check that
        cannot be evaluated on these data (a solver failure inside it, :class:`FitError`) is
        reported as a warning.

    Raises
    ------
    DataError
        If ``campaign`` is not a Campaign or ``shifts`` does not belong to it.
    """
    campaign = _as_campaign(campaign)
    if shifts is not None:
        _align_shifts(campaign, shifts)
    given = {"campaign": campaign, "shifts": shifts, "law_fit": law_fit, "prony_fit": prony_fit}
    out = []
    for entry in _REGISTRY:
        if not all(any(given[alt] is not None for alt in need.split("|"))
                   for need in entry.needs):
            continue
        try:
            result = entry.run(campaign, shifts, law_fit, prony_fit)
        except FitError as exc:
            result = CheckResult(entry.name, "warn", None, None,
                                 f"This check could not be evaluated on these data ({exc}).",
                                 {"error": str(exc)})
        if result is not None:
            out.append(in_the_symbols_of(result, campaign.modulus_kind))
    return tuple(out)
