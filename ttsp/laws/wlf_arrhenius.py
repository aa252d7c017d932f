"""WLF above the glass transition and Arrhenius below it, joined at the break temperature Tg;
with its start values (a grid of trial breaks and C2), bounds and rules for held parameters.

References
----------
Christensen, D. W. & Anderson, D. A. (1992). J. Assoc. Asphalt Paving Technol. 61, 67.
Williams, M. L., Landel, R. F. & Ferry, J. D. (1955). J. Am. Chem. Soc. 77, 3701-3707.
Ferry, J. D. (1980). Viscoelastic Properties of Polymers, 3rd ed., Wiley, ch. 11.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ._weighting import Weighting
    from .base import Bounds

from collections.abc import Mapping
from typing import ClassVar

import numpy as np

from .._validation import bad_value, check_positive
from ._common import ARRHENIUS_K_PER_KJ_MOL
from ._start_grid import best_trials, grid_above, grid_lstsq
from .base import ShiftLaw, bound_margin_K
from .names import WLF_ARRHENIUS
from .wlf import wlf_derived_figures

__all__ = ["WLFArrheniusLaw"]

#: trial break temperatures per interval between neighbouring data temperatures
_TG_TRIALS_PER_INTERVAL = 8
#: at most this many trial break temperatures in all: on a table of 500 isotherms, 8 per
#: interval made 4,000 trials, and with the C2 grid (trials x rows) arrays of 2 GB
_TG_TRIALS_TOTAL = 200
#: starts of the nonlinear fit: the best trial in each of this many best Tg intervals
_STARTS = 3


class WLFArrheniusLaw(ShiftLaw):
    """WLF above the glass transition, Arrhenius below it, continuous in value at Tg.

    With W(T) = -C1 (T - T_ref) / (C2 + T - T_ref) and k = E_a / (ln(10) R),

        h(T) = W(T)                            for T >= Tg
        h(T) = W(Tg) + k (1/T - 1/Tg)          for T <  Tg
        log10 a_T = h(T) - h(T_ref)

    When T_ref >= Tg (the usual case) h(T_ref) = 0 and the WLF branch is the plain WLF law about
    T_ref. The slope is continuous at Tg only if E_a = ln(10) R C1 C2 Tg^2 / (C2 + Tg - T_ref)^2;
    otherwise the law has a kink there. A common engineering form (e.g. asphalt binders,
    Christensen & Anderson, J. Assoc. Asphalt Paving Technol. 61, 67, 1992; WLF part: Williams,
    Landel & Ferry 1955; Arrhenius part: Ferry 1980, ch. 11).

    Parameters (in ``params``)
    --------------------------
    C1 : dimensionless (decades), WLF branch about T_ref.
    C2_K : K, WLF branch about T_ref; C2 + Tg - T_ref > 0 so that WLF is finite above Tg.
    activation_energy_kJ_per_mol : kJ/mol, Arrhenius branch below Tg.
    glass_transition_K : K, the break temperature Tg.
    """

    model: ClassVar[str] = WLF_ARRHENIUS
    _units: ClassVar[dict] = {"C1": "", "C2_K": "K", "activation_energy_kJ_per_mol": "kJ/mol",
                              "glass_transition_K": "K"}
    data_range_parameters: ClassVar[frozenset] = frozenset({"glass_transition_K"})

    @classmethod
    def _check_params(cls, p, tr):
        tg = check_positive("glass_transition_K", p["glass_transition_K"])
        if p["C2_K"] + tg - tr <= 0:
            raise bad_value("C2_K", f"greater than T_ref - Tg = {tr - tg:.6g} K (so that the WLF "
                                    "branch stays finite above Tg)", p["C2_K"])

    @staticmethod
    def _h(p, T, tr):
        c1, c2 = p["C1"], p["C2_K"]
        tg = p["glass_transition_K"]
        k = p["activation_energy_kJ_per_mol"] * ARRHENIUS_K_PER_KJ_MOL
        tw = np.maximum(T, tg)
        wlf = -c1 * (tw - tr) / (c2 + tw - tr)
        return wlf + np.where(T < tg, k * (1.0 / T - 1.0 / tg), 0.0)

    @classmethod
    def _evaluate(cls, p, T, tr):
        return cls._h(p, T, tr) - cls._h(p, np.asarray(float(tr)), tr)

    @staticmethod
    def _slope(p, T, tr):
        c1, c2 = p["C1"], p["C2_K"]
        k = p["activation_energy_kJ_per_mol"] * ARRHENIUS_K_PER_KJ_MOL
        return np.where(T >= p["glass_transition_K"], -c1 * c2 / (c2 + T - tr) ** 2, -k / T ** 2)

    def _params_at(self, new_tr):
        p = self.params
        c2_new = p["C2_K"] + new_tr - self.reference_temperature_K
        if abs(c2_new) < 1e-9 * self.reference_temperature_K:
            raise bad_value("reference_temperature_K",
                            "different from the WLF divergence T_ref - C2", new_tr)
        out = dict(p)
        out["C1"] = p["C1"] * p["C2_K"] / c2_new
        out["C2_K"] = c2_new
        return out

    # ---- fitting -------------------------------------------------------------------------
    @classmethod
    def default_bounds(cls, T: np.ndarray, tr: float, fixed: Mapping[str, float], order: int):
        """Tg within the data's range; C2 keeping the WLF branch finite above the lowest Tg."""
        tmin, tmax = float(T.min()), float(T.max())
        margin = bound_margin_K(T, tr)
        b = super().default_bounds(T, tr, fixed, order)
        if "C2_K" in fixed:   # keep the WLF branch finite above Tg: Tg > T_ref - C2
            b["glass_transition_K"] = (max(tmin, tr - fixed["C2_K"] + margin), tmax)
        else:
            b["glass_transition_K"] = (tmin, tmax)
        tg_low = fixed.get("glass_transition_K", tmin)
        b["C2_K"] = (tr - tg_low + margin, np.inf)
        return b

    @classmethod
    def check_fixed(cls, fixed: Mapping[str, float], T: np.ndarray, tr: float):
        if {"C2_K", "glass_transition_K"} <= set(fixed):
            tg = fixed["glass_transition_K"]
            if fixed["C2_K"] + tg - tr <= 0:
                raise bad_value("fixed['C2_K']", f"greater than T_ref - Tg = {tr - tg:.6g} K "
                                                 "(else the WLF branch diverges above Tg)",
                                fixed["C2_K"])

    @classmethod
    def minimum_points(cls, fixed: Mapping[str, float]):
        if "glass_transition_K" in fixed:
            return 0, ""
        return 4, " (and two on each side of Tg)"

    @classmethod
    def start_values(cls, T: np.ndarray, y: np.ndarray, weigh: Weighting, tr: float,
                     fixed: Mapping[str, float], bounds: Mapping[str, Bounds], order: int):
        """Every (Tg, C2) pair of the trial grids in one batch, C1 and E_a solved for each; the
        best start in each of the three best Tg intervals."""
        trials = _break_and_c2_trials(T, tr, fixed, bounds)
        if trials is None:
            return []
        tg, c2 = trials
        t_hi = np.maximum(T, tg)                      # (G, n): the WLF branch above Tg
        t_r = np.maximum(tr, tg)
        cols = {"C1": -(t_hi - tr) / (c2 + t_hi - tr) + (t_r - tr) / (c2 + t_r - tr),
                "activation_energy_kJ_per_mol": ARRHENIUS_K_PER_KJ_MOL * (
                    np.where(T < tg, 1 / T - 1 / tg, 0.0) - np.where(tr < tg, 1 / tr - 1 / tg, 0.0))}
        coefs, sse = grid_lstsq(cols, y, weigh, fixed)
        starts, seen = [], set()
        for _, start in best_trials(coefs, sse, {"C2_K": c2[:, 0], "glass_transition_K": tg[:, 0]}):
            if start["glass_transition_K"] not in seen:
                seen.add(start["glass_transition_K"])
                starts.append(start)
            if len(starts) == _STARTS:
                break
        return starts

    @classmethod
    def derived_figures(cls, p: Mapping[str, float], tr: float,
                        stderr_of: Callable[[Mapping[str, float]], float]):
        """Those of the WLF branch (see :func:`~ttsp.laws.wlf.wlf_derived_figures`)."""
        return wlf_derived_figures(p, tr, stderr_of)


def _break_and_c2_trials(T: np.ndarray, tr: float, fixed: Mapping[str, float],
                         bounds: Mapping[str, tuple[float, float]]):
    """The (Tg, C2) trials as two (G, 1) columns, or None when there is none: for each trial
    break, the C2 grid that keeps the WLF branch finite above it."""
    tg_parts, c2_parts = [], []
    for tg in _tg_candidates(T, fixed, bounds["glass_transition_K"]):
        if "C2_K" in fixed:
            c2_grid = np.array([fixed["C2_K"]])
        else:
            lo, hi = bounds["C2_K"]
            c2_grid = grid_above(tr - tg, (max(lo, tr - tg), hi))
        c2_grid = c2_grid[c2_grid + tg - tr > 0]
        tg_parts.append(np.full(c2_grid.size, float(tg)))
        c2_parts.append(c2_grid)
    if not tg_parts or sum(p.size for p in tg_parts) == 0:
        return None
    tg, c2 = (np.concatenate(v)[:, None] for v in (tg_parts, c2_parts))
    return tg, c2


def _tg_candidates(T: np.ndarray, fixed: Mapping[str, float],
                   bounds: tuple[float, float]) -> np.ndarray:
    """Trial break temperatures leaving at least two points on each side: evenly spaced
    inside each interval between neighbouring data temperatures (ends excluded).

    Within an interval the fit is smooth in Tg, but its optimum need not be near the
    midpoint; from a midpoint start Levenberg-Marquardt can crawl along the valley of the
    (C2, Tg) trade-off for thousands of evaluations (binder shift tables: 20,000 without
    converging). A start on a fine grid begins next to the optimum. Past
    :data:`_TG_TRIALS_TOTAL` trials in all (over 25 intervals) each interval gets fewer, at
    least one: with many isotherms the intervals themselves are the fine grid."""
    if "glass_transition_K" in fixed:
        return np.array([fixed["glass_transition_K"]])
    ts = np.sort(T)
    counts_below = np.arange(1, ts.size)
    keep = (counts_below >= 2) & (ts.size - counts_below >= 2) & (ts[1:] > ts[:-1])
    per_interval = int(min(_TG_TRIALS_PER_INTERVAL,
                           max(1, _TG_TRIALS_TOTAL // max(int(keep.sum()), 1))))
    frac = (np.arange(per_interval) + 0.5) / per_interval
    mids = (ts[:-1][keep, None] + frac * (ts[1:] - ts[:-1])[keep, None]).ravel()
    lo, hi = bounds
    inside = mids[(mids > lo) & (mids < hi)]
    if inside.size == 0 and np.isfinite(lo) and np.isfinite(hi):
        inside = np.array([0.5 * (lo + hi)])
    return inside
