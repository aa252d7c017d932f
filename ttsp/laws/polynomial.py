"""The polynomial law in (T - T_ref), an empirical law linear in its coefficients."""

from __future__ import annotations

import math
from typing import ClassVar

import numpy as np

from .base import LinearShiftLaw
from .names import POLYNOMIAL

__all__ = ["PolynomialLaw"]


def _poly_name(k: int) -> str:
    """Name of the k-th polynomial coefficient: a1_per_K, a2_per_K2, a3_per_K3, ..."""
    return "a1_per_K" if k == 1 else f"a{k}_per_K{k}"


def _poly_unit(k: int) -> str:
    return "1/K" if k == 1 else f"1/K^{k}"


class PolynomialLaw(LinearShiftLaw):
    """Polynomial law in (T - T_ref), zero at the reference temperature.

    log10 a_T = a1 (T - T_ref) + a2 (T - T_ref)^2 + ... + an (T - T_ref)^n

    An empirical law used for asphalt concrete and bituminous mixes, second order by default
    (compared with WLF, Arrhenius and others in e.g. Materials 15, 4325, 2022). It must not
    be extrapolated.

    Parameters (in ``params``)
    --------------------------
    a1_per_K : 1/K; a2_per_K2 : 1/K^2; a3_per_K3 : 1/K^3; ... (contiguous from a1).
    """

    model: ClassVar[str] = POLYNOMIAL

    @classmethod
    def _expected_names(cls, params=None):
        order = 0
        if params:
            for name in params:
                if isinstance(name, str) and name.startswith("a"):
                    digits = name[1:].split("_", 1)[0]
                    if digits.isdigit() and _poly_name(int(digits)) == name:
                        order = max(order, int(digits))
        return tuple(_poly_name(k) for k in range(1, max(order, 1) + 1))

    @property
    def order(self) -> int:
        """Polynomial order n."""
        return len(self.params)

    def _unit_of(self, name):
        return _poly_unit(int(name[1:].split("_", 1)[0]))

    @staticmethod
    def _coefficients(p):
        return np.array([0.0] + [p[_poly_name(k)] for k in range(1, len(p) + 1)])

    @classmethod
    def _evaluate(cls, p, T, tr):
        return np.polynomial.polynomial.polyval(T - tr, cls._coefficients(p))

    @classmethod
    def _slope(cls, p, T, tr):
        c = np.polynomial.polynomial.polyder(cls._coefficients(p))
        return np.polynomial.polynomial.polyval(T - tr, c)

    def _params_at(self, new_tr):
        # P(x) about T_ref; about T_ref' = T_ref + d:  P(y + d) - P(d), y = T - T_ref'.
        d = new_tr - self.reference_temperature_K
        c = self._coefficients(self.params)
        n = len(c) - 1
        shifted = np.zeros(n + 1)
        for j in range(n + 1):
            for k in range(j, n + 1):
                shifted[j] += c[k] * math.comb(k, j) * d ** (k - j)
        return {_poly_name(k): float(shifted[k]) for k in range(1, n + 1)}

    # ---- fitting -------------------------------------------------------------------------
    @classmethod
    def fit_parameter_names(cls, order: int):
        return cls._expected_names({_poly_name(k): 0 for k in range(1, order + 1)})

    @classmethod
    def linear_columns(cls, T: np.ndarray, tr: float, order: int):
        return {_poly_name(k): (T - tr) ** k for k in range(1, order + 1)}
