"""The measured material functions ttsp knows, and the names a campaign's columns take.

:data:`QUANTITIES` is the registry: for each material function, its SI column name, the kind of
its unit, the domain it is measured in, its tensile and shear symbols (E′ or G′ ...) and whether
it must be positive (it is taken in a logarithm). :data:`X_COLUMN` names the independent
variable of each domain; :data:`MAX_MAGNITUDE` and :data:`MAX_TEMPERATURE_K` bound what a
measurement may report. :mod:`ttsp.data` re-exports every name.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

__all__ = ["Quantity", "QUANTITIES", "DOMAINS", "MODULUS_KINDS", "X_COLUMN", "MAX_MAGNITUDE",
           "MAX_TEMPERATURE_K"]

DOMAINS = ("frequency", "time")
MODULUS_KINDS = ("tensile", "shear")
X_COLUMN = {"frequency": "frequency_rad_s", "time": "time_s"}


@dataclass(frozen=True)
class Quantity:
    """A measured material function: its column name, unit kind and symbols."""

    name: str
    unit_kind: str
    domain: str
    tensile_symbol: str
    shear_symbol: str
    positive: bool  # must be > 0 (it is taken in a logarithm)
    label: str

    def symbol(self, modulus_kind: str) -> str:
        return self.tensile_symbol if modulus_kind == "tensile" else self.shear_symbol


# Largest values a measurement may report, far beyond any real material, so that the squares
# and products of the fits stay finite (moduli near 1e300 Pa overflowed inside them): the stiffest
# solid, diamond, has a Young's modulus of about 1.2e12 Pa, and no viscoelastic test runs above a
# few hundred °C (both facts of common knowledge, recalled from memory).
MAX_MAGNITUDE = {"modulus": 1e15, "compliance": 1e15}   # Pa, 1/Pa
MAX_TEMPERATURE_K = 10_000.0

QUANTITIES: Mapping[str, Quantity] = MappingProxyType({q.name: q for q in (
    Quantity("storage_modulus_Pa", "modulus", "frequency", "E'", "G'", True, "storage modulus"),
    Quantity("loss_modulus_Pa", "modulus", "frequency", "E''", "G''", True, "loss modulus"),
    Quantity("tan_delta", "dimensionless", "frequency", "tan δ", "tan δ", True, "loss factor tan δ"),
    Quantity("complex_modulus_Pa", "modulus", "frequency", "|E*|", "|G*|", True,
             "complex modulus magnitude"),
    Quantity("phase_angle_rad", "angle", "frequency", "δ", "δ", True, "phase angle"),
    Quantity("relaxation_modulus_Pa", "modulus", "time", "E(t)", "G(t)", True,
             "relaxation modulus"),
    Quantity("creep_compliance_1_per_Pa", "compliance", "time", "D(t)", "J(t)", True,
             "creep compliance"),
)})
