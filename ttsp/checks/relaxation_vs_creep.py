"""Relaxation against creep: measured E(t) and D(t) of one material must obey the convolution
identity ∫₀ᵗ E(t − u) D(u) du = t (Ferry 1980, ch. 3)."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..shifting import ShiftResult

import numpy as np

from ..data import Campaign
from ..exceptions import DataError
from ..relaxation_creep import compare_relaxation_creep
from ._inputs import _align_shifts, _keep, _reduced_log_x
from .result import CheckResult, _grade

__all__ = ["check_relaxation_creep", "RELAXATION_CREEP_WARN_PERCENT",
           "RELAXATION_CREEP_FAIL_PERCENT"]


#: largest departure of ∫₀ᵗ E(t−u) D(u) du from t (%) that passes, and that only warns. An exact
#: Prony pair sampled with 1 % noise departs by about 0.4 %; one curve shifted by 0.2 decade on a
#: slope of 0.4 by 17-27 % (tests/test_relaxation_creep.py). On a slope of 0.1 (near a plateau)
#: the same shift gives about 5 %, a warning.
RELAXATION_CREEP_WARN_PERCENT = 5.0
RELAXATION_CREEP_FAIL_PERCENT = 10.0


def check_relaxation_creep(campaign: Campaign, shifts: ShiftResult) -> CheckResult | None:
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
    table = _align_shifts(campaign, shifts)
    curves: dict[str, tuple[list, list]] = {"relaxation_modulus_Pa": ([], []), "creep_compliance_1_per_Pa": ([], [])}
    for k, iso in enumerate(campaign.isotherms):
        keep = _keep(table, k, iso.n_points)
        lt = _reduced_log_x(campaign, table, k)
        for q, sign in (("relaxation_modulus_Pa", -1.0), ("creep_compliance_1_per_Pa", 1.0)):
            if q in iso.values:
                # finite only: read from two files, each function has its own times
                use = keep & np.isfinite(iso.values[q])
                curves[q][0].append(10 ** lt[use])
                curves[q][1].append(iso.values[q][use] * 10 ** (sign * table.log10_bT[k]))
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
