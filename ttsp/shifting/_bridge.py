"""A small shift law with a free offset, to place isotherms across a gap (private).

The connected isotherms' shifts are known only up to a common constant until the reference is
fixed, so the law carries an offset ``a``:

* WLF (Williams, Landel & Ferry, J. Am. Chem. Soc. 77:3701, 1955):
  log10 a_T = a − C1 (T − T_m)/(C2 + T − T_m), C2 in K;
* Arrhenius: log10 a_T = a + B (1/T − 1/T_m), B = E_a/(R ln 10) in K;

with T_m the mean temperature of the fitted isotherms (for conditioning only). ``model="auto"``
fits both when there are at least five shifts and keeps the lower small-sample Akaike criterion
(AICc, Hurvich & Tsai, Biometrika 76:297, 1989); with three or four shifts only Arrhenius is
fitted. This is a private helper of :mod:`ttsp.shifting`, independent of :mod:`ttsp.laws`
(whose laws pass through zero at the reference and so have no offset).

:func:`bridge_across_gaps` places the groups of isotherms that a gap separates from the main
group by the law fitted to that group (the step ``gaps="bridge"`` of the shift fit).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from ..exceptions import DataError
from ._groups import GroupFits, Shifts, assemble_shifts
from ._options import ShiftOptions

__all__ = ["OffsetLaw", "fit_offset_law", "bridge_across_gaps"]


@dataclass(frozen=True)
class OffsetLaw:
    model: str               # "wlf" or "arrhenius"
    params: np.ndarray       # (a, C1, C2_K) or (a, B_K)
    cov: np.ndarray
    scatter: float           # rms of the shifts about the law (decades), model error per point
    t_mean_K: float
    alternatives: tuple = ()  # the other fitted laws: their disagreement is model uncertainty

    def _f(self, p, T):
        T = np.asarray(T, float)
        if self.model == "wlf":
            a, c1, c2 = p
            return a - c1 * (T - self.t_mean_K) / (c2 + T - self.t_mean_K)
        a, b = p
        return a + b * (1.0 / T - 1.0 / self.t_mean_K)

    def predict(self, T):
        """Law value and its standard error at temperatures T (K).

        The variance adds the parameters' (delta method), the scatter of the fitted shifts
        about the law, and the squared difference to any other law that was fitted (model
        uncertainty: extrapolation across a gap depends on the law chosen).
        """
        val, se = self._predict(T)
        for alt in self.alternatives:
            v2, _ = alt._predict(T)
            se = np.sqrt(se ** 2 + (v2 - val) ** 2)
        return val, se

    def _predict(self, T):
        T = np.atleast_1d(np.asarray(T, float))
        val = self._f(self.params, T)
        eps = 1e-6 * np.maximum(np.abs(self.params), 1.0)
        G = np.empty((T.size, self.params.size))
        for j in range(self.params.size):
            dp = np.zeros_like(self.params)
            dp[j] = eps[j]
            G[:, j] = (self._f(self.params + dp, T) - self._f(self.params - dp, T)) / (2 * eps[j])
        var = np.einsum("ij,jk,ik->i", G, self.cov, G) + self.scatter ** 2
        return val, np.sqrt(var)


def _aicc(rss, n, k):
    rss = max(rss, 1e-300)
    return n * np.log(rss / n) + 2 * k + 2 * k * (k + 1) / max(n - k - 1, 1e-9)


def fit_offset_law(temperature_K, log10_aT, *, all_temperatures_K, model="auto") -> OffsetLaw:
    """Fit WLF or Arrhenius with a free offset to shifts of connected isotherms.

    ``all_temperatures_K`` are the temperatures the law must reach (WLF stays finite there:
    C2 + T − T_m > 1 K).
    """
    T = np.asarray(temperature_K, float)
    s = np.asarray(log10_aT, float)
    n = T.size
    if n < 3:
        raise DataError("gaps='bridge' needs at least 3 connected isotherms to fit a shift law "
                        f"through; the largest connected group has {n}")
    tm = float(T.mean())
    fits = []
    # Arrhenius: linear
    X = np.column_stack([np.ones(n), 1.0 / T - 1.0 / tm])
    p, *_ = np.linalg.lstsq(X, s, rcond=None)
    rss = float(np.sum((X @ p - s) ** 2))
    dof = max(n - 2, 1)
    sc = np.sqrt(rss / dof)
    cov = np.linalg.pinv(X.T @ X) * max(sc ** 2, 1e-12)
    fits.append((_aicc(rss, n, 2), OffsetLaw("arrhenius", p, cov, float(sc), tm)))
    if model in ("auto", "wlf") and n >= 5:
        t_low = float(np.min(all_temperatures_K))
        c2_min = tm - t_low + 1.0
        best_start: tuple[float, np.ndarray] | None = None   # (rss, [C1, ..., C2])
        for c2 in np.geomspace(max(c2_min, 1.0) + 1e-3, max(10 * c2_min, 2000.0), 60):
            Xw = np.column_stack([np.ones(n), -(T - tm) / (c2 + T - tm)])
            pw, *_ = np.linalg.lstsq(Xw, s, rcond=None)
            r = float(np.sum((Xw @ pw - s) ** 2))
            if best_start is None or r < best_start[0]:
                best_start = (r, np.array([pw[0], pw[1], c2]))
        assert best_start is not None   # geomspace gives 60 trials

        def resid(q):
            return q[0] - q[1] * (T - tm) / (q[2] + T - tm) - s

        res = least_squares(resid, best_start[1], bounds=([-np.inf, -np.inf, c2_min],
                                                    [np.inf, np.inf, np.inf]))
        rss_w = float(np.sum(res.fun ** 2))
        dof = max(n - 3, 1)
        sc_w = np.sqrt(rss_w / dof)
        cov_w = np.linalg.pinv(res.jac.T @ res.jac) * max(sc_w ** 2, 1e-12)
        fits.append((_aicc(rss_w, n, 3), OffsetLaw("wlf", res.x, cov_w, float(sc_w), tm)))
    if model == "wlf" and len(fits) == 2:
        best = fits[1][1]
    elif model == "arrhenius":
        best = fits[0][1]
    else:
        best = min(fits, key=lambda f: f[0])[1]
    others = tuple(f[1] for f in fits if f[1] is not best)
    return OffsetLaw(best.model, best.params, best.cov, best.scatter, best.t_mean_K, others)


def bridge_across_gaps(groups: GroupFits, options: ShiftOptions) -> Shifts:
    """The shifts of every isotherm: each group's in the campaign's arrays
    (:func:`~ttsp.shifting._groups.assemble_shifts`) and, with more than one connected group,
    the others placed by a law fitted to the main one (flag ``bridged``, and a note that is
    also a warning of the shift fit).

    Raises
    ------
    DataError
        The main group has fewer than 3 isotherms.
    """
    shifts = assemble_shifts(groups, options)
    if len(groups.comps) > 1:
        note = _bridge_groups(groups.comps, shifts.s, shifts.cov_s, shifts.bridged,
                              options.fixed, options.temps, options.t_ref)
        if options.fit_vertical:
            note += ("; the bridge places a_T only: each group keeps its own vertical "
                     "gauge (log10 b_T = 0 at one of its isotherms), so b_T across the "
                     "gap is not determined by the data")
        shifts.bridge_note = note
        shifts.notes.append(note)
    return shifts


def _bridge_groups(comps, s, cov_s, bridged, fixed, temps, t_ref) -> str:
    """Place disconnected groups by a shift law fitted to the main group (in place).

    The main group is the largest one (the one nearest the reference on a tie); with user-fixed
    shifts, the largest group holding one, and groups holding fixed shifts keep their own gauge.
    Every other group is moved as a block by the mean difference between the law and its
    shifts; its covariance gains the law's prediction variance (parameters, scatter and
    disagreement between WLF and Arrhenius).
    """
    has_fixed = [ci for ci, comp in enumerate(comps) if any(k in fixed for k in comp)]
    pool = has_fixed or list(range(len(comps)))
    main = max(pool, key=lambda ci: (len(comps[ci]),
                                     -min(abs(temps[k] - t_ref) for k in comps[ci])))
    law = fit_offset_law(temps[comps[main]], s[comps[main]], all_temperatures_K=temps)
    for ci, comp in enumerate(comps):
        if ci == main or ci in has_fixed:
            continue
        pred, pred_se = law.predict(temps[comp])
        s[comp] += float(np.mean(pred - s[comp]))
        cov_s[np.ix_(comp, comp)] += float(np.mean(pred_se ** 2))
        bridged[comp] = True
    return (f"{int(bridged.sum())} isotherm(s) placed across a gap by a "
            f"{'WLF' if law.model == 'wlf' else 'Arrhenius'} law fitted to "
            f"{len(comps[main])} connected isotherms (flag 'bridged')")
