"""Steps the frequency and the time Prony fits share, around the NNLS core of
:mod:`ttsp.prony.nnls`: the options both take (checked once), the refusal of an all-zero
series, the non-zero terms of a solution, and the metadata every fitted series carries.

Imports numpy only.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from .._validation import check_choice, check_positive
from ..exceptions import FitError
from .series import MODULUS_KINDS

__all__ = ["FitOptions", "refuse_all_zero", "nonzero_terms"]


@dataclass(frozen=True, eq=False)
class FitOptions:
    """The options common to both fits, as the caller gave them (they go into the provenance
    unchanged), after :meth:`checked` has validated them.

    Attributes
    ----------
    terms_per_decade : float
        Density of the relaxation-time grid (terms per decade), > 0.
    margin_decades : float
        Extension of the grid beyond the data (decades), >= 0.
    relative : bool
        Relative residuals (else absolute, each quantity scaled by its largest value).
    tau_s : array_like or None
        The user's relaxation times (s), checked when the grid is made.
    prune_tolerance_percent : float or None
        Pruning tolerance (percentage points of rms), >= 0.
    plateau_slope : float
        Largest |d ln F/d ln x| at a data end that counts as a plateau, > 0.
    modulus_kind : {"tensile", "shear"}
        Which modulus the data are.
    reference_temperature_K : float or None
        Reference temperature of the master curve (K), > 0.
    """

    terms_per_decade: Any
    margin_decades: Any
    relative: bool
    tau_s: Any
    prune_tolerance_percent: Any
    plateau_slope: Any
    modulus_kind: str
    reference_temperature_K: Any

    @classmethod
    def checked(cls, terms_per_decade: float, margin_decades: float, relative: bool,
                tau_s: ArrayLike | None, prune_tolerance_percent: float | None,
                plateau_slope: float, modulus_kind: str,
                reference_temperature_K: float | None) -> FitOptions:
        """Validate the options (message template of ``_validation``) and keep them as given.

        Raises
        ------
        DataError
            If an option breaks its rule.
        """
        check_positive("terms_per_decade", terms_per_decade)
        check_positive("margin_decades", margin_decades, allow_zero=True)
        if prune_tolerance_percent is not None:
            check_positive("prune_tolerance_percent", prune_tolerance_percent, allow_zero=True)
        check_positive("plateau_slope", plateau_slope)
        check_choice("modulus_kind", modulus_kind, MODULUS_KINDS)
        if reference_temperature_K is not None:
            check_positive("reference_temperature_K", reference_temperature_K)
        return cls(terms_per_decade, margin_decades, bool(relative), tau_s,
                   prune_tolerance_percent, plateau_slope, modulus_kind, reference_temperature_K)

    def series_metadata(self, valid_reduced_time_range_s: tuple[float, float], method: str,
                        settings: dict) -> dict:
        """Keyword arguments of the fitted :class:`~ttsp.prony.PronySeries` besides its terms:
        modulus kind, reference temperature, valid range (s) and provenance."""
        return dict(modulus_kind=self.modulus_kind,
                    reference_temperature_K=self.reference_temperature_K,
                    valid_reduced_time_range_s=valid_reduced_time_range_s,
                    provenance={"method": method, **settings})


def refuse_all_zero(x: np.ndarray, n_fixed: int, fixed_equilibrium_Pa: float | None) -> None:
    """Raise FitError when the solution has no non-zero term and no equilibrium modulus."""
    if not np.any(x[n_fixed:] > 0) and (fixed_equilibrium_Pa or 0.0) == 0 and (
            n_fixed == 0 or x[0] == 0):
        raise FitError("the non-negative fit returned an all-zero series; the data cannot be "
                       "described by a Prony series with these settings")


def nonzero_terms(x: np.ndarray, tau: np.ndarray, n_fixed: int) -> tuple[np.ndarray, np.ndarray]:
    """The non-zero coefficients of the solution and their times (s), in grid order."""
    keep = x[n_fixed:] > 0
    return x[n_fixed:][keep], tau[keep]
