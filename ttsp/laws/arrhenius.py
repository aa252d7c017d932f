"""The Arrhenius law, linear in its one constant (the activation energy).

References
----------
Arrhenius, S. (1889). Z. Phys. Chem. 4, 226.
Ferry, J. D. (1980). Viscoelastic Properties of Polymers, 3rd ed., Wiley, ch. 11.
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from ._common import ARRHENIUS_K_PER_KJ_MOL
from .base import LinearShiftLaw
from .names import ARRHENIUS

__all__ = ["ArrheniusLaw"]


class ArrheniusLaw(LinearShiftLaw):
    """Arrhenius law.

    ln a_T = (E_a / R) (1/T - 1/T_ref), i.e. log10 a_T = E_a / (ln(10) R) (1/T - 1/T_ref)

    (Arrhenius, Z. Phys. Chem. 4, 226, 1889; Ferry 1980, ch. 11), T in K and R =
    :data:`~ttsp.laws.GAS_CONSTANT_J_PER_MOL_K`.

    Parameters (in ``params``)
    --------------------------
    activation_energy_kJ_per_mol : kJ/mol.
    """

    model: ClassVar[str] = ARRHENIUS
    _units: ClassVar[dict] = {"activation_energy_kJ_per_mol": "kJ/mol"}

    @staticmethod
    def _evaluate(p, T, tr):
        return p["activation_energy_kJ_per_mol"] * ARRHENIUS_K_PER_KJ_MOL * (1.0 / T - 1.0 / tr)

    @staticmethod
    def _slope(p, T, tr):
        return -p["activation_energy_kJ_per_mol"] * ARRHENIUS_K_PER_KJ_MOL / T ** 2

    def _params_at(self, new_tr):
        return dict(self.params)

    @classmethod
    def linear_columns(cls, T: np.ndarray, tr: float, order: int):
        return {"activation_energy_kJ_per_mol": ARRHENIUS_K_PER_KJ_MOL * (1 / T - 1 / tr)}
