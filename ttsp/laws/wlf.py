"""The Williams-Landel-Ferry (WLF) law, with its start values and bounds for a fit.

References
----------
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

from .._validation import bad_value
from ._common import LN10
from ._start_grid import best_trial, grid_above, grid_lstsq
from .base import ShiftLaw, bound_margin_K
from .conversions import wlf_at_reference, wlf_to_vft
from .names import WLF
from .vft import VFTLaw

__all__ = ["WLFLaw"]


class WLFLaw(ShiftLaw):
    """Williams-Landel-Ferry law.

    log10 a_T = -C1 (T - T_ref) / (C2 + T - T_ref)

    (Williams, Landel & Ferry, J. Am. Chem. Soc. 77, 3701, 1955; Ferry 1980, ch. 11).
    It diverges at T_inf = T_ref - C2 and tends to -C1 for T >> T_ref. The "universal"
    constants referred to Tg are C1g = 17.44 and C2g = 51.6 K (WLF 1955).

    Parameters (in ``params``)
    --------------------------
    C1 : dimensionless (decades).
    C2_K : K, > 0.
    """

    model: ClassVar[str] = WLF
    _units: ClassVar[dict] = {"C1": "", "C2_K": "K"}
    _limit_name: ClassVar[str] = "the WLF divergence T_ref - C2"
    refit_solver: ClassVar[str] = "levenberg-marquardt"

    @classmethod
    def _check_params(cls, p, tr):
        if p["C2_K"] <= 0:
            raise bad_value("C2_K", "positive (the WLF divergence T_ref - C2 must lie below "
                                    "the reference temperature)", p["C2_K"])

    @staticmethod
    def _evaluate(p, T, tr):
        x = T - tr
        return -p["C1"] * x / (p["C2_K"] + x)

    @staticmethod
    def _slope(p, T, tr):
        return -p["C1"] * p["C2_K"] / (p["C2_K"] + T - tr) ** 2

    @staticmethod
    def _lower_limit_K(p, tr):
        return tr - p["C2_K"]

    def _params_at(self, new_tr):
        return wlf_at_reference(self.params["C1"], self.params["C2_K"],
                                self.reference_temperature_K, new_tr)

    @property
    def T_inf_K(self) -> float:
        """Divergence (Vogel) temperature T_inf = T_ref - C2 in K; unchanged by a new reference."""
        return self.reference_temperature_K - self.params["C2_K"]

    def at_glass_transition(self, glass_transition_K: float) -> WLFLaw:
        """The same law with the glass transition Tg (K) as reference: constants C1g, C2g."""
        return self.at_reference(glass_transition_K)

    def to_vft(self) -> VFTLaw:
        """The identical law written in VFT form (log10 form: B_K = C1 C2, T_inf = T_ref - C2)."""
        vft = wlf_to_vft(self.params["C1"], self.params["C2_K"], self.reference_temperature_K)
        return VFTLaw(self.reference_temperature_K, vft, self.valid_temperature_range_K)

    def free_volume(self, glass_transition_K: float) -> dict:
        """Free-volume figures at Tg from the Doolittle interpretation of WLF.

        f_g / B = 1 / (ln(10) C1g) and alpha_f / B = 1 / (ln(10) C1g C2g), where C1g, C2g are the
        constants referred to Tg (Doolittle, J. Appl. Phys. 22, 1471, 1951; Ferry 1980, ch. 11).
        B is the Doolittle constant, usually taken as 1.

        Parameters
        ----------
        glass_transition_K : float
            Glass transition temperature Tg in K.

        Returns
        -------
        dict
            ``glass_transition_K``, ``C1g``, ``C2g_K``, ``fractional_free_volume_over_B``
            (dimensionless) and ``expansion_coefficient_over_B_per_K`` (1/K).
        """
        g = self.at_glass_transition(glass_transition_K).params
        c1g, c2g = g["C1"], g["C2_K"]
        return {
            "glass_transition_K": float(glass_transition_K),
            "C1g": c1g,
            "C2g_K": c2g,
            "fractional_free_volume_over_B": 1.0 / (LN10 * c1g),
            "expansion_coefficient_over_B_per_K": 1.0 / (LN10 * c1g * c2g),
        }

    # ---- fitting -------------------------------------------------------------------------
    @classmethod
    def default_bounds(cls, T: np.ndarray, tr: float, fixed: Mapping[str, float], order: int):
        b = super().default_bounds(T, tr, fixed, order)
        b["C2_K"] = (max(0.0, tr - float(T.min())) + bound_margin_K(T, tr), np.inf)
        return b

    @classmethod
    def check_fixed(cls, fixed: Mapping[str, float], T: np.ndarray, tr: float):
        if "C2_K" in fixed and tr - fixed["C2_K"] >= T.min():
            raise bad_value("fixed['C2_K']", f"greater than T_ref - (lowest temperature) = "
                                             f"{tr - T.min():.6g} K (else the WLF law diverges "
                                             "inside the data)", fixed["C2_K"])

    @classmethod
    def start_values(cls, T: np.ndarray, y: np.ndarray, weigh: Weighting, tr: float,
                     fixed: Mapping[str, float], bounds: Mapping[str, Bounds], order: int):
        """The best trial of C2 on a grid (and the classical linearisation), C1 solved for
        each."""
        c2_grid = _c2_trials(T, y, tr, fixed, bounds["C2_K"])
        x = T - tr
        with np.errstate(all="ignore"):
            col = -x / (c2_grid[:, None] + x)
        coefs, sse = grid_lstsq({"C1": col}, y, weigh, fixed)
        return best_trial(coefs, sse, {"C2_K": c2_grid})

    @classmethod
    def derived_figures(cls, p: Mapping[str, float], tr: float,
                        stderr_of: Callable[[Mapping[str, float]], float]):
        return wlf_derived_figures(p, tr, stderr_of)


def _c2_trials(T: np.ndarray, y: np.ndarray, tr: float, fixed: Mapping[str, float],
               bounds: tuple[float, float]) -> np.ndarray:
    """Trial values of C2 (K): a grid above the data's divergence limit, with the classical
    linearisation (T-Tr)/log aT = -C2/C1 - (T-Tr)/C1 as one more trial (Ferry 1980, ch. 11)."""
    if "C2_K" in fixed:
        return np.array([fixed["C2_K"]])
    x = T - tr
    tmin = float(T.min())
    c2_grid = grid_above(max(0.0, tr - tmin), bounds)
    ok = (np.abs(y) > 1e-12) & (x != 0)
    if ok.sum() >= 2:
        s, i = np.polyfit(x[ok], x[ok] / y[ok], 1)
        if s != 0 and np.isfinite(i / s):
            c2_lin = i / s
            lo, hi = bounds
            if max(lo, tr - tmin) < c2_lin < hi:
                c2_grid = np.append(c2_grid, c2_lin)
    return c2_grid


def wlf_derived_figures(p: Mapping[str, float], tr: float,
                        stderr_of: Callable[[Mapping[str, float]], float]) -> tuple[dict, dict]:
    """WLF family: T_inf = T_ref - C2 and C1 C2 (the VFT constant B), both unchanged by a change
    of reference temperature, and C1/C2 = -d log10 a_T/dT at T_ref; with their standard
    errors."""
    c1, c2 = p["C1"], p["C2_K"]
    d = {"T_inf_K": tr - c2, "C1_times_C2_K": c1 * c2, "C1_over_C2_per_K": c1 / c2}
    s = {"T_inf_K": stderr_of({"C2_K": -1.0}),
         "C1_times_C2_K": stderr_of({"C1": c2, "C2_K": c1}),
         "C1_over_C2_per_K": stderr_of({"C1": 1 / c2, "C2_K": -c1 / c2 ** 2})}
    return d, s
