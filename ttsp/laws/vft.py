"""The Vogel-Fulcher-Tammann (VFT) law in decimal logarithms, with its start values and bounds
for a fit. It is the WLF law written with other constants (B = C1 C2, T_inf = T_ref - C2).

References
----------
Vogel, H. (1921). Phys. Z. 22, 645. Fulcher, G. S. (1925). J. Am. Ceram. Soc. 8, 339.
Tammann, G. & Hesse, W. (1926). Z. Anorg. Allg. Chem. 156, 245.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from .._validation import bad_value
from ._start_grid import best_trial, grid_above, grid_lstsq
from .base import ShiftLaw, bound_margin_K
from .conversions import vft_to_wlf
from .names import VFT

if TYPE_CHECKING:
    from ._weighting import Weighting
    from .base import Bounds
    from .wlf import WLFLaw

__all__ = ["VFTLaw"]


class VFTLaw(ShiftLaw):
    """Vogel-Fulcher-Tammann law, written in decimal logarithms.

    log10 a_T = B / (T - T_inf) - B / (T_ref - T_inf)

    (Vogel, Phys. Z. 22, 645, 1921; Fulcher, J. Am. Ceram. Soc. 8, 339, 1925; Tammann & Hesse,
    Z. Anorg. Allg. Chem. 156, 245, 1926). ``B_K`` here is the **log10** constant: it equals
    C1 C2 of the equivalent WLF law (T_inf = T_ref - C2). The natural-log form
    ln a_T = B' / (T - T_inf) - ... has B' = ln(10) B_K = 2.303 C1 C2.

    Parameters (in ``params``)
    --------------------------
    B_K : K (log10 form).
    T_inf_K : K, the Vogel temperature, below the reference temperature.
    """

    model: ClassVar[str] = VFT
    _units: ClassVar[dict] = {"B_K": "K", "T_inf_K": "K"}
    _limit_name: ClassVar[str] = "the VFT divergence T_inf"

    @classmethod
    def _check_params(cls, p, tr):
        if p["T_inf_K"] >= tr:
            raise bad_value("T_inf_K", f"below the reference temperature {tr:.6g} K", p["T_inf_K"])

    @staticmethod
    def _evaluate(p, T, tr):
        b, ti = p["B_K"], p["T_inf_K"]
        return b / (T - ti) - b / (tr - ti)

    @staticmethod
    def _slope(p, T, tr):
        return -p["B_K"] / (T - p["T_inf_K"]) ** 2

    @staticmethod
    def _lower_limit_K(p, tr):
        return p["T_inf_K"]

    def _params_at(self, new_tr):
        return dict(self.params)

    def to_wlf(self) -> WLFLaw:
        """The identical law in WLF form about the same reference (C2 = T_ref - T_inf, C1 = B/C2)."""
        from .wlf import WLFLaw  # wlf imports this module

        wlf = vft_to_wlf(self.params["B_K"], self.params["T_inf_K"], self.reference_temperature_K)
        return WLFLaw(self.reference_temperature_K, wlf, self.valid_temperature_range_K)

    # ---- fitting -------------------------------------------------------------------------
    @classmethod
    def default_bounds(cls, T: np.ndarray, tr: float, fixed: Mapping[str, float], order: int):
        b = super().default_bounds(T, tr, fixed, order)
        b["T_inf_K"] = (-np.inf, min(float(T.min()), tr) - bound_margin_K(T, tr))
        return b

    @classmethod
    def check_fixed(cls, fixed: Mapping[str, float], T: np.ndarray, tr: float):
        if "T_inf_K" in fixed and fixed["T_inf_K"] >= min(T.min(), tr):
            raise bad_value("fixed['T_inf_K']", f"below the lowest temperature and the reference "
                                                f"({min(T.min(), tr):.6g} K)", fixed["T_inf_K"])

    @classmethod
    def start_values(cls, T: np.ndarray, y: np.ndarray, weigh: Weighting, tr: float,
                     fixed: Mapping[str, float], bounds: Mapping[str, Bounds], order: int):
        """The best trial of T_inf on a grid below the data, B solved for each."""
        if "T_inf_K" in fixed:
            ti_grid = np.array([fixed["T_inf_K"]])
        else:
            top = min(float(T.min()), tr)
            lo, hi = bounds["T_inf_K"]
            ti_grid = top - grid_above(0.0, (top - hi, top - lo))
        with np.errstate(all="ignore"):
            col = 1 / (T - ti_grid[:, None]) - 1 / (tr - ti_grid[:, None])
        coefs, sse = grid_lstsq({"B_K": col}, y, weigh, fixed)
        return best_trial(coefs, sse, {"T_inf_K": ti_grid})

    @classmethod
    def derived_figures(cls, p: Mapping[str, float], tr: float,
                        stderr_of: Callable[[Mapping[str, float]], float]):
        """The equivalent WLF constants C1 = B / C2 and C2 = T_ref - T_inf."""
        c2 = tr - p["T_inf_K"]
        d = {"C1": p["B_K"] / c2, "C2_K": c2}
        s = {"C1": stderr_of({"B_K": 1 / c2, "T_inf_K": p["B_K"] / c2 ** 2}),
             "C2_K": stderr_of({"T_inf_K": -1.0})}
        return d, s
