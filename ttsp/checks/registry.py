"""The registry of checks and :func:`run_checks`, which runs every check whose inputs are
available and words each result in the symbols of the campaign (G and J for shear)."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..laws import ShiftLawFit
    from ..prony import PronyFit
    from ..shifting import ShiftResult

from collections.abc import Callable
from dataclasses import dataclass

from ..data import Campaign
from ..exceptions import FitError
from ._inputs import _align_shifts, _as_campaign
from .data_quality import check_noise_level, check_outliers
from .function_agreement import check_function_agreement
from .kramers_kronig import check_kramers_kronig
from .law_residuals import check_law_residuals
from .monotonic_shifts import check_monotonic_shifts
from .overlap_coverage import check_overlap_coverage
from .prony_fit import check_master_curve_range, check_prony_fit_quality
from .relaxation_vs_creep import check_relaxation_creep
from .result import CheckResult
from .shifted_superposition import check_shifted_superposition
from .simplicity import check_loss_vs_storage, check_van_gurp_palmen
from .words import in_the_symbols_of

__all__ = ["CHECK_NAMES", "run_checks"]


@dataclass(frozen=True)
class _Entry:
    name: str
    needs: tuple
    run: Callable


_REGISTRY = (
    _Entry("noise_level", ("campaign",), lambda c, s, l, p: check_noise_level(c)),
    _Entry("simplicity_van_gurp_palmen", ("campaign",),
           lambda c, s, l, p: check_van_gurp_palmen(c, shifts=s)),
    _Entry("simplicity_loss_vs_storage", ("campaign",),
           lambda c, s, l, p: check_loss_vs_storage(c, shifts=s)),
    _Entry("function_agreement", ("campaign", "shifts"),
           lambda c, s, l, p: check_function_agreement(c, s)),
    _Entry("overlap_coverage", ("campaign",),
           lambda c, s, l, p: check_overlap_coverage(c, shifts=s)),
    _Entry("shifted_superposition", ("campaign", "shifts"),
           lambda c, s, l, p: check_shifted_superposition(c, s)),
    _Entry("outliers", ("campaign", "shifts"), lambda c, s, l, p: check_outliers(c, s)),
    _Entry("monotonic_shifts", ("shifts",), lambda c, s, l, p: check_monotonic_shifts(s)),
    _Entry("law_residuals", ("law_fit",), lambda c, s, l, p: check_law_residuals(l, shifts=s)),
    _Entry("kramers_kronig", ("campaign", "shifts|prony_fit"),
           lambda c, s, l, p: check_kramers_kronig(c, shifts=s, prony_fit=p)),
    _Entry("prony_fit_quality", ("prony_fit",),
           lambda c, s, l, p: check_prony_fit_quality(p, campaign=c)),
    _Entry("master_curve_range", ("prony_fit",), lambda c, s, l, p: check_master_curve_range(p)),
    _Entry("relaxation_creep", ("campaign", "shifts"),
           lambda c, s, l, p: check_relaxation_creep(c, s)),
)

#: Names of the registered checks, in the order :func:`run_checks` runs them.
CHECK_NAMES = tuple(e.name for e in _REGISTRY)


def run_checks(campaign: Campaign, *, shifts: ShiftResult | None = None,
               law_fit: ShiftLawFit | None = None,
               prony_fit: PronyFit | None = None) -> tuple[CheckResult, ...]:
    """Run every registered check whose inputs are available.

    Parameters
    ----------
    campaign : Campaign
        The measured campaign.
    shifts : shift result, optional
        From the shifting (``temperature_K``, ``log10_aT``, ``log10_aT_stderr``, ``log10_bT``,
        ``flags``, ``outlier_mask``).
    law_fit : ShiftLawFit, optional
    prony_fit : PronyFit, optional

    Returns
    -------
    tuple of CheckResult
        In registry order (:data:`CHECK_NAMES`). A check whose inputs are missing, or that does
        not apply to the data (a phase-angle check on relaxation data), is left out. A check that
        cannot be evaluated on these data (a solver failure inside it, :class:`FitError`) is
        reported as a warning.

    Raises
    ------
    DataError
        If ``campaign`` is not a Campaign or ``shifts`` does not belong to it.
    """
    campaign = _as_campaign(campaign)
    if shifts is not None:
        _align_shifts(campaign, shifts)
    given = {"campaign": campaign, "shifts": shifts, "law_fit": law_fit, "prony_fit": prony_fit}
    out = []
    for entry in _REGISTRY:
        if not all(any(given[alt] is not None for alt in need.split("|"))
                   for need in entry.needs):
            continue
        try:
            result = entry.run(campaign, shifts, law_fit, prony_fit)
        except FitError as exc:
            result = CheckResult(entry.name, "warn", None, None,
                                 f"This check could not be evaluated on these data ({exc}).",
                                 {"error": str(exc)})
        if result is not None:
            out.append(in_the_symbols_of(result, campaign.modulus_kind))
    return tuple(out)
