"""Uncertainty bands on predicted material functions: an ensemble made once at build time
(docs/methods.md §7a).

A prediction E(t, T) = b_T E_ref(t / a_T) inherits the errors of three fits: the shift factors
(which place the isotherms on the master curve), the Prony series fitted to that curve, and the
shift law that gives a_T at the requested temperature. :func:`fit_band_ensemble` draws K
members, each a Prony series refitted on a resampled master curve plus one draw of the law's
parameters; :class:`BandEnsemble` evaluates all members and turns their spread into an interval.

Method (and why not the linearised covariance): the Prony strengths come from non-negative
least squares; many sit on the constraint E_i = 0, where the linearised covariance of the
active set says nothing about the other side of the bound. A bootstrap needs no such
linearisation (Efron & Tibshirani, *An Introduction to the Bootstrap*, 1993, ch. 6 and 9,
residual resampling for regression). Each member

1. moves every isotherm along the reduced axis by a draw from the covariance of the shift
   factors (``ShiftResult.log10_aT_covariance``; their standard errors alone when it is not
   available), so the shift error reaches the curve;
2. replaces the relative residuals of the Prony fit by residuals drawn with replacement from
   the same isotherm (points within an isotherm share its conditions; resampling across
   isotherms would mix them), one draw per point for all its functions, so the noise reaches
   the curve;
3. refits the series with NNLS on the build's relaxation-time grid (shared by all members, so
   only the strengths are stored);
4. draws the law's free parameters from a normal distribution with the law's parameter
   covariance (standard errors and correlations of :class:`~ttsp.laws.ShiftLawFit`), the
   first-order picture of the law that :func:`ttsp.laws.law_prediction_stderr` also uses
   (JCGM 100:2008, GUM).

The law draws are independent of the shift draws, although the law was fitted to the shifts:
the shifts' error moves the curve, the law's error moves the temperature mapping, and at
T_ref (a_T = 1 exactly) only the first counts. The vertical shift b_T is taken as exact.

The interval is the bootstrap standard-error interval on a log scale (Efron & Tibshirani 1993,
ch. 13): value × 10^(±z·s) with s the standard deviation of log10 of the members' values and z
the normal quantile of the level. With K = 64 members s is known to about ±9 % (1/√(2K)); the
percentile interval would need several hundred members for a stable 95 % level.

Beyond the reduced window of the data the series is held only by its form, and NNLS members can
agree there for no good reason (a term-free tail is flat in every member). Outside the window
s is therefore at least s_edge·(1 + d), with s_edge the curve's spread at the nearer window
edge and d the distance from it in decades of reduced time: the band grows with distance and
never stays flat (a rule of this project, no source; the factor is a choice, not a fit).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING, NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from ._validation import bad_value
from .exceptions import DataError, FitError, FitQualityWarning
from .interconvert import relaxation_to_creep
from .model import QUANTITY_COLUMNS
from .prony import PronySeries, fit_prony_time, log_spaced_relaxation_times
from .prony.nnls import solve_nnls as _solve_nnls
from .shifting import USED_STDERR_CAP

if TYPE_CHECKING:
    from .laws import ShiftLaw, ShiftLawFit
    from .shifting import ShiftResult

__all__ = ["BandEnsemble", "Banded", "fit_band_ensemble", "check_level", "band_columns", "DEFAULT_MEMBERS",
           "DEFAULT_LEVEL", "BAND_METHOD"]

DEFAULT_MEMBERS = 64
DEFAULT_LEVEL = 0.95
BAND_METHOD = ("bootstrap: shifts drawn from their covariance, Prony residuals resampled within "
               "isotherms, series refitted by NNLS; law parameters drawn from their covariance; "
               "standard-error interval on log10; widened outside the data window by (1 + decades "
               "beyond)")


class Banded(NamedTuple):
    """A predicted value with its interval at ``level`` (same shape and unit as ``value``)."""

    value: np.ndarray | float
    low: np.ndarray | float
    high: np.ndarray | float
    level: float


def check_level(level: float) -> float:
    """The band level as a float in (0, 1); a percentage (1 < level < 100) is refused."""
    try:
        v = float(level)
    except (TypeError, ValueError):
        raise bad_value("band", "a level between 0 and 1 (e.g. 0.95)", level) from None
    if not (0.0 < v < 1.0) or not math.isfinite(v):
        raise bad_value("band", "a level between 0 and 1 (e.g. 0.95)", level)
    return v


def band_columns(quantity: str) -> tuple[str, str]:
    """The names of the interval columns of a quantity: ``<quantity>_low_<unit>`` and
    ``<quantity>_high_<unit>`` (``tan_delta_low``, ``tan_delta_high`` without a unit)."""
    unit = QUANTITY_COLUMNS[quantity][len(quantity):]
    return f"{quantity}_low{unit}", f"{quantity}_high{unit}"


def _digits(value) -> float:
    return float(f"{float(value):.7g}")


def _normal_quantile(level: float) -> float:
    from scipy.special import (
        ndtri,  # the normal quantile; scipy.stats takes 0.4 s to import
    )

    return float(ndtri(0.5 + level / 2.0))


@dataclass(frozen=True, repr=False)
class BandEnsemble:
    """K Prony series on one τ grid and K draws of the law's parameters.

    Attributes
    ----------
    members : tuple of ttsp.prony.PronySeries
        The K refitted series (reduced time at T_ref). From frequency or relaxation data they
        share the build's τ grid; a series fitted to creep data gets its relaxation times from
        the conversion, so each member keeps its own.
    law : shift law
        The build's law (its class and reference temperature are used for the draws).
    law_parameters : tuple of dict
        One parameter set per member (the same law form).
    valid_reduced_time_range_s : (float, float)
        The data window in reduced time (s) at T_ref.
    modulus_kind : str
    method : str
    """

    members: tuple
    law: ShiftLaw
    law_parameters: tuple
    valid_reduced_time_range_s: tuple
    modulus_kind: str = "tensile"
    method: str = BAND_METHOD

    @property
    def n_members(self) -> int:
        return len(self.members)

    # ---- members ------------------------------------------------------------------------------
    def _series(self):
        return self.members

    def _creep(self):
        cached = self.__dict__.get("_creep_members")
        if cached is None:
            cached = [relaxation_to_creep(s) for s in self._series()]
            object.__setattr__(self, "_creep_members", cached)
        return cached

    def _member_log10_aT(self, temperature_K) -> np.ndarray:
        """log10 a_T of every member, shape (K,) + shape of ``temperature_K``; NaN where a
        draw leaves its law's domain."""
        T = np.asarray(temperature_K, dtype=float)
        out = np.full((self.n_members,) + T.shape, np.nan)
        cls, tr, rng = type(self.law), self.law.reference_temperature_K, \
            self.law.valid_temperature_range_K
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            for k, p in enumerate(self.law_parameters):
                try:
                    out[k] = cls(tr, dict(p), rng).log10_aT(T)
                except Exception:   # a draw outside the law's domain counts as no answer
                    pass
        return out

    def _reduced_values(self, quantity: str, reduced: np.ndarray) -> np.ndarray:
        """Every member's quantity at reduced times (time quantities) or reduced angular
        frequencies, shape (K,) + reduced.shape."""
        members = self._creep() if quantity == "creep_compliance" else self._series()
        fn = {"relaxation_modulus": "relaxation_modulus", "creep_compliance": "creep_compliance",
              "storage_modulus": "storage_modulus", "loss_modulus": "loss_modulus",
              "tan_delta": "tan_delta"}[quantity]
        return np.stack([np.asarray(getattr(m, fn)(reduced), dtype=float) for m in members])

    # ---- the spread ---------------------------------------------------------------------------
    def log10_spread(self, quantity: str, temperature_K: ArrayLike, *,
                     time_s: ArrayLike | None = None, frequency_Hz: ArrayLike | None = None,
                     central_log10_aT: ArrayLike | None = None) -> np.ndarray:
        """Standard deviation over members of log10 of ``quantity`` at (x, T), widened outside
        the data window (module docstring). ``central_log10_aT`` (the build's law at T) sets
        the distance from the window."""
        is_time = time_s is not None
        x = np.asarray(time_s if is_time else frequency_Hz, dtype=float)
        T = np.asarray(temperature_K, dtype=float)
        shape = np.broadcast_shapes(x.shape, T.shape)
        x = np.broadcast_to(x, shape)
        if T.ndim == 0 or np.all(T == T.flat[0]):   # one temperature: one a_T per member
            la_b = np.broadcast_to(self._member_log10_aT(T.flat[0])[(...,) + (None,) * len(shape)],
                                   (self.n_members,) + shape)
        else:
            la_b = self._member_log10_aT(np.broadcast_to(T, shape))
        la_b = la_b.reshape(self.n_members, -1)   # flat: one column per point
        x = x.reshape(-1)
        a = 10.0 ** la_b
        with np.errstate(all="ignore"):
            reduced = x / a if is_time else 2.0 * math.pi * x * a
        vals = np.full(la_b.shape, np.nan)
        members = self._creep() if quantity == "creep_compliance" else self._series()
        fn = quantity
        with np.errstate(all="ignore"):
            for k, m in enumerate(members):
                ok = np.isfinite(reduced[k])
                if is_time:
                    ok &= reduced[k] >= 0
                else:
                    ok &= reduced[k] > 0
                if ok.any():
                    vals[k][ok] = np.asarray(getattr(m, fn)(reduced[k][ok]), dtype=float)
            logs = np.where(vals > 0, np.log10(np.where(vals > 0, vals, 1.0)), np.nan)
        good = np.sum(np.isfinite(logs), axis=0)
        spread = np.where(good >= 3, np.nanstd(np.where(good >= 3, logs, 0.0), axis=0, ddof=1),
                          np.inf)
        # widening outside the window, in decades of reduced time at the central a_T
        lo, hi = self.valid_reduced_time_range_s
        c = (np.nanmedian(la_b, axis=0) if central_log10_aT is None
             else np.broadcast_to(np.asarray(central_log10_aT, dtype=float), shape).reshape(-1))
        with np.errstate(all="ignore"):
            log_red_t = (np.log10(x) - c) if is_time else -(np.log10(2.0 * math.pi * x) + c)
        below = math.log10(lo) - log_red_t
        above = log_red_t - math.log10(hi)
        outside = (below > 0) | (above > 0)
        if np.any(outside):
            edges = np.array([lo, hi])
            edge_red = edges if quantity in ("relaxation_modulus", "creep_compliance") \
                else 1.0 / edges
            edge_vals = self._reduced_values(quantity, edge_red)
            with np.errstate(all="ignore"):
                edge_s = np.nanstd(np.log10(edge_vals), axis=0, ddof=1)
            s_edge = np.where(below > 0, edge_s[0], edge_s[1])
            d = np.clip(np.maximum(below, above), 0.0, None)
            spread = np.where(outside, np.maximum(spread, s_edge * (1.0 + d)), spread)
        return spread.reshape(shape)

    def interval(self, quantity: str, value: ArrayLike, temperature_K: ArrayLike, level: float,
                 **x: ArrayLike) -> Banded:
        """``value`` (the build's prediction) with its interval at ``level``."""
        level = check_level(level)
        s = self.log10_spread(quantity, temperature_K, **x)
        v = np.asarray(value, dtype=float)
        s = np.broadcast_to(s, v.shape)
        z = _normal_quantile(level)
        with np.errstate(over="ignore", invalid="ignore"):
            low, high = v * 10.0 ** (-z * s), v * 10.0 ** (z * s)
        low = np.where(np.isfinite(s), low, 0.0)
        high = np.where(np.isfinite(s), high, np.inf)
        if np.ndim(value) == 0:
            return Banded(float(v), float(low), float(high), level)
        return Banded(v, low, high, level)

    # ---- export -------------------------------------------------------------------------------
    def to_dict(self) -> dict:
        return {"method": self.method, "members": self.n_members,
                "default_level": DEFAULT_LEVEL,
                "source": "Efron & Tibshirani, An Introduction to the Bootstrap, 1993",
                # seven significant digits: the members' spread is what matters, and it is
                # known to about 9 % (module docstring); full precision would double the file
                "series": [{"equilibrium_modulus_Pa": _digits(m.equilibrium_modulus_Pa),
                            "tau_s": [_digits(v) for v in m.tau_s],
                            "modulus_Pa": [_digits(v) for v in m.modulus_Pa]}
                           for m in self.members],
                "law_parameters": [{k: float(v) for k, v in p.items()}
                                   for p in self.law_parameters],
                "valid_reduced_time_range_s": [float(v) for v in self.valid_reduced_time_range_s],
                "modulus_kind": self.modulus_kind}

    @classmethod
    def from_dict(cls, data, law) -> BandEnsemble:
        """From :meth:`to_dict` output (the ``bands`` section of a summary) and the build's law."""
        from .prony import PronySeries

        kind = data.get("modulus_kind", "tensile") if isinstance(data, dict) else "tensile"
        try:
            members = tuple(PronySeries(float(m["equilibrium_modulus_Pa"]),
                                        np.asarray(m["tau_s"], dtype=float),
                                        np.asarray(m["modulus_Pa"], dtype=float),
                                        modulus_kind=kind) for m in data["series"])
            params = tuple(dict(p) for p in data["law_parameters"])
            rng = tuple(float(v) for v in data["valid_reduced_time_range_s"])
        except (KeyError, TypeError, ValueError, DataError):
            raise DataError("summary's bands section cannot be read: it needs series, "
                            "law_parameters and valid_reduced_time_range_s as written by "
                            "'ttsp build'") from None
        if len(params) != len(members) or len(members) < 3 or len(rng) != 2:
            raise DataError("summary's bands section cannot be read: it needs at least 3 "
                            "members, each with one law draw")
        return cls(members, law, params, rng, kind, data.get("method", BAND_METHOD))


def _law_draws(law_fit, rng: np.random.Generator, n: int) -> tuple:
    """n parameter sets drawn from N(estimate, covariance of the free parameters)."""
    law = law_fit.law
    stderr = dict(law_fit.stderr)
    fixed = set(getattr(law_fit, "fixed_parameters", ()) or ())
    free = [k for k in law.params if k not in fixed and stderr.get(k) is not None
            and np.isfinite(stderr[k]) and stderr[k] > 0]
    base = {k: float(v) for k, v in law.params.items()}
    if not free:
        return tuple(dict(base) for _ in range(n))
    s = np.array([float(stderr[k]) for k in free])
    corr = np.eye(len(free))
    for (a, b), r in dict(getattr(law_fit, "correlation", {}) or {}).items():
        if a in free and b in free and r is not None and np.isfinite(r):
            i, j = free.index(a), free.index(b)
            corr[i, j] = corr[j, i] = float(r)
    cov = corr * np.outer(s, s)
    vals, vecs = np.linalg.eigh(cov)   # a correlation of ±1 gives a singular covariance
    root = vecs * np.sqrt(np.clip(vals, 0.0, None))
    draws = rng.standard_normal((n, len(free))) @ root.T
    out = []
    for row in draws:
        p = dict(base)
        for k, d in zip(free, row, strict=True):
            p[k] = base[k] + float(d)
        out.append(p)
    return tuple(out)


def _shift_draws(shifts, rng: np.random.Generator, n: int) -> np.ndarray:
    """n draws of the per-isotherm shift errors (decades), shape (n, isotherms)."""
    cov = getattr(shifts, "log10_aT_covariance", None)
    m = len(shifts.temperature_K)
    if cov is not None and np.shape(cov) == (m, m) and np.all(np.isfinite(cov)):
        C = np.asarray(cov, dtype=float)
    else:
        s = np.minimum(np.nan_to_num(np.asarray(shifts.log10_aT_stderr, dtype=float), nan=0.0),
                       USED_STDERR_CAP)
        C = np.diag(s ** 2)
    # an undetermined shift reports a stderr up to 100 decades; like the law, the bootstrap
    # counts it with at most USED_STDERR_CAP (its correlations kept)
    d = np.sqrt(np.clip(np.diag(C), 0.0, None))
    cap = np.where(d > USED_STDERR_CAP, USED_STDERR_CAP / np.where(d > 0, d, 1.0), 1.0)
    C = C * np.outer(cap, cap)
    C = 0.5 * (C + C.T)
    vals, vecs = np.linalg.eigh(C)
    root = vecs * np.sqrt(np.clip(vals, 0.0, None))
    return rng.standard_normal((n, m)) @ root.T


def _refit_frequency(omega, values: dict, tau, modulus_kind):
    """The build's frequency fit (ttsp.prony.fit_prony_frequency: E' and E'' rows stacked,
    relative residuals, E_∞ free when E' is there, NNLS; Lawson & Hanson 1974) on a fixed τ
    grid, without its diagnostics, which the members do not need (they cost three times the
    solve)."""
    wt = omega[:, None] * tau[None, :]
    den = 1.0 + wt * wt
    free_e = "storage_modulus_Pa" in values
    rows, rhs = [], []
    for name, y in values.items():
        a = wt * wt / den if name == "storage_modulus_Pa" else wt / den
        if free_e:
            a = np.hstack([np.full((omega.size, 1), 1.0 if name == "storage_modulus_Pa"
                                   else 0.0), a])
        rows.append(a / y[:, None])
        rhs.append(np.ones(omega.size))
    sol = _solve_nnls(np.vstack(rows), np.concatenate(rhs))
    e_inf, g = (float(sol[0]), sol[1:]) if free_e else (0.0, sol)
    keep = g > 0
    return PronySeries(e_inf, tau[keep], g[keep], modulus_kind=modulus_kind)


def _refit_member(xs, values: dict, domain: str, tau, quantity, terms_per_decade: float,
                  modulus_kind: str):
    """One member's Prony series refitted to a resampled master curve, or None when that
    resample cannot be fitted (the ensemble goes on without it)."""
    try:
        if domain == "frequency":
            return _refit_frequency(xs, values, tau, modulus_kind)
        (y,) = values.values()
        fit = fit_prony_time(xs, y, quantity=quantity, terms_per_decade=terms_per_decade,
                             modulus_kind=modulus_kind)
    except (DataError, FitError):
        return None
    s = fit.series
    return PronySeries(s.equilibrium_modulus_Pa, s.tau_s, s.modulus_Pa, modulus_kind=modulus_kind)


def fit_band_ensemble(x, values: dict, isotherm: ArrayLike, *, domain: str, series,
                      shifts: ShiftResult, law_fit: ShiftLawFit, terms_per_decade: float,
                      quantity: str | None = None, n_members: int = DEFAULT_MEMBERS,
                      seed: int = 0) -> BandEnsemble:
    """Bootstrap ensemble of the master curve's Prony series and the law (module docstring).

    Parameters
    ----------
    x : array_like
        Reduced abscissa of the points the build's Prony fit used (ω·a_T in rad/s for
        ``domain="frequency"``, t/a_T in s for ``"time"``).
    values : dict
        The fitted columns at those points (``storage_modulus_Pa`` and ``loss_modulus_Pa``, or
        the one time function), in Pa or 1/Pa.
    isotherm : array_like of int
        Index of each point's isotherm (rows of ``shifts``).
    domain : {"frequency", "time"}
    series : ttsp.prony.PronySeries
        The build's series (its window and τ range set the shared grid).
    shifts : ttsp.shifting.ShiftResult
    law_fit : ttsp.laws.ShiftLawFit
    terms_per_decade : float
        The build's grid density.
    quantity : str, optional
        The time function fitted (``relaxation_modulus`` or ``creep_compliance``).
    n_members : int
        Ensemble size K (default 64).
    seed : int
        Seed of the generator: the same build gives the same band.
    """
    rng = np.random.default_rng(seed)
    x = np.asarray(x, dtype=float)
    iso = np.asarray(isotherm, dtype=int)
    cols = list(values)
    ys = [np.asarray(values[c], dtype=float) for c in cols]
    lo, hi = series.valid_reduced_time_range_s
    if domain == "frequency":
        tau = log_spaced_relaxation_times(lo, hi, terms_per_decade=terms_per_decade,
                                          margin_decades=1.0)
        fitted = [series.storage_modulus(x) if c == "storage_modulus_Pa" else series.loss_modulus(x)
                  for c in cols]
    else:
        tau = None   # each member on the grid fit_prony_time makes for its own data
        fitted = [series.relaxation_modulus(x) if quantity == "relaxation_modulus"
                  else series.creep_compliance(x)]
    resid = [np.log(y / f) for y, f in zip(ys, fitted, strict=True)]
    # resampling within isotherms, vectorised: point p draws uniformly among the points of
    # its own isotherm (``order`` lists the points isotherm by isotherm)
    order = np.argsort(iso, kind="stable")
    _, start, size = np.unique(iso[order], return_index=True, return_counts=True)
    group = np.searchsorted(np.unique(iso), iso)
    dshift = _shift_draws(shifts, rng, n_members)
    members = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitQualityWarning)
        for k in range(n_members):
            d = dshift[k][iso]
            xs = x * 10.0 ** d if domain == "frequency" else x / 10.0 ** d
            # one draw per point for all its functions: E' and E'' of a point share its errors
            pick = order[start[group] + (rng.random(x.size) * size[group]).astype(int)]
            new = [f * np.exp(r[pick]) for f, r in zip(fitted, resid, strict=True)]
            member = _refit_member(xs, dict(zip(cols, new, strict=True)), domain, tau, quantity,
                                   terms_per_decade, series.modulus_kind)
            if member is not None:
                members.append(member)
    if len(members) < 3:
        raise FitError("the band's bootstrap could not refit the Prony series on resampled "
                       "master curves (fewer than 3 of them fitted)")
    laws = _law_draws(law_fit, rng, len(members))
    return BandEnsemble(tuple(members), law_fit.law, laws, (float(lo), float(hi)),
                        series.modulus_kind)
