"""Does superposition hold? Validity checks with a measured value, a threshold and a verdict.

Every check is a small function that measures one thing and returns a frozen
:class:`CheckResult`: a name, a status (``"pass"``, ``"warn"`` or ``"fail"``), the measured
value, the threshold it was judged against and one or two plain sentences saying what the
result means and what to do. :func:`run_checks` runs every registered check whose inputs are
available (a check without its inputs is skipped, not failed).

The checks
----------
``simplicity_van_gurp_palmen``
    Spread of the raw isotherms about each other in the phase angle δ against log|E*| plane,
    which needs no shift factor (van Gurp & Palmen, Rheology Bulletin 67, 5-8, 1998; Trinkle &
    Friedrich, Rheol. Acta 40, 322-328, 2001).
``simplicity_loss_vs_storage``
    The same in the log E'' against log E' plane (no shift factor needed either; Ferry,
    Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 11).
``shifted_superposition``
    After shifting: spread of log tan δ of the isotherms against reduced frequency
    (tan δ is unchanged by a vertical shift, so it tests the horizontal shifts alone); for
    time-domain data, the spread of the shifted measured function.
``kramers_kronig``
    Whether E' and E'' of the master curve are the two faces of one relaxation spectrum
    (Booij & Thoone, Rheol. Acta 21, 15-24, 1982): each is fitted alone with a non-negative
    Prony series and the other is predicted from it.
``function_agreement``
    Shifts found on E' alone and on E'' alone, compared isotherm by isotherm against their
    standard errors, and their difference tested for a steady drift with log a_T; a
    disagreement names the isotherms (or the drift) and its size in decades.
``overlap_coverage``
    Decades of overlap in the ordinate between neighbouring isotherms; gaps named.
``monotonic_shifts``
    log10 a_T must fall as the temperature rises (Ferry 1980, ch. 11); violations named.
``law_residuals``
    A systematic pattern in the residuals of the shift law (runs test of Wald & Wolfowitz,
    Ann. Math. Stat. 11, 147-162, 1940, and a curvature test) suggests a transition such as
    crossing Tg, where the temperature dependence turns from WLF-like to Arrhenius (Struik,
    Physical Aging in Amorphous Polymers and Other Materials, 1978).
``prony_fit_quality`` and ``master_curve_range``
    Residuals of the Prony fit; whether the data reach the plateaus, or the series' ends are
    extrapolated.
``outliers`` and ``noise_level``
    Points flagged as outliers by the shifting, and the noise of each isotherm estimated from
    third differences of its logarithmic values.

Messages of shear data use G and J (:mod:`ttsp.checks.words`). Every threshold is set on
``benchmarks/bench_checks.py`` (simple campaigns for the false-alarm rates, graded complex ones
for detection; the rates are in DEVELOPERS.md).

All computation is numpy/scipy; nothing is printed and no warning is issued: a check reports.

One module per family of checks
-------------------------------
``result``                  :class:`CheckResult`, :func:`worst_status`, the grading
``_inputs``                 the shift table matched to the campaign's isotherms
``noise``                   the noise estimate several checks read (:func:`estimate_noise`)
``spread``                  how far apart isotherms lie in a plane (used by the next two)
``simplicity``              van Gurp–Palmen and loss against storage, before any shift
``shifted_superposition``   the shifted isotherms about each other
``kramers_kronig``          E' and E'' from one spectrum
``function_agreement``      shifts of E' alone and of E'' alone compared
``overlap_coverage``        overlap of neighbouring isotherms; gaps
``monotonic_shifts``        log10 a_T falling with temperature
``law_residuals``           patterns in the residuals of the shift law
``prony_fit``               the Prony series' fit and range
``data_quality``            outliers and noise level
``relaxation_vs_creep``     E(t) and D(t) against each other
``words``                   the symbols of shear data in the messages
``registry``                the registry and :func:`run_checks`
"""

from .data_quality import (
                           NOISE_FAIL_PERCENT,
                           NOISE_ISOTHERM_PERCENT,
                           NOISE_ISOTHERM_RATIO,
                           NOISE_WARN_PERCENT,
                           OUTLIER_FAIL_PERCENT,
                           OUTLIER_WARN_PERCENT,
                           check_noise_level,
                           check_outliers,
)
from .function_agreement import (
                           AGREEMENT_FAIL_DECADES,
                           AGREEMENT_TOLERANCE_DECADES,
                           AGREEMENT_TREND_DECADES,
                           AGREEMENT_TREND_Z,
                           AGREEMENT_WARN_DECADES,
                           AGREEMENT_Z,
                           check_function_agreement,
                           disagreeing_temperatures_K,
)
from .kramers_kronig import (
                           KK_EDGE_DECADES,
                           KK_FAIL_PERCENT,
                           KK_MIN_RATIO,
                           KK_NOISE_FACTOR,
                           KK_TERMS_PER_DECADE,
                           KK_WARN_PERCENT,
                           check_kramers_kronig,
)
from .law_residuals import (
                           LAW_PATTERN_ALPHA,
                           LAW_RESIDUAL_FAIL_DECADES,
                           LAW_RESIDUAL_FLOOR_DECADES,
                           check_law_residuals,
)
from .monotonic_shifts import MONOTONIC_SIGMA, check_monotonic_shifts
from .noise import NOISE_FLOOR_LOG10, NOISE_FLOOR_RAD, estimate_noise
from .overlap_coverage import (
                           GAP_NOISE_FACTOR,
                           MIN_OVERLAP_DECADES,
                           MIN_OVERLAP_FRACTION,
                           check_overlap_coverage,
)
from .prony_fit import (
                           PRONY_RMS_FAIL_PERCENT,
                           PRONY_RMS_WARN_PERCENT,
                           check_master_curve_range,
                           check_prony_fit_quality,
)
from .registry import CHECK_NAMES, run_checks
from .relaxation_vs_creep import (
                           RELAXATION_CREEP_FAIL_PERCENT,
                           RELAXATION_CREEP_WARN_PERCENT,
                           check_relaxation_creep,
)
from .result import STATUSES, CheckResult, worst_status
from .shifted_superposition import check_shifted_superposition
from .simplicity import check_loss_vs_storage, check_van_gurp_palmen
from .spread import (
                           MIN_CLASS_POINTS,
                           MIN_PAIR_POINTS,
                           SPREAD_FAIL,
                           SPREAD_TOLERANCE_LOG10,
                           SPREAD_TOLERANCE_RAD,
                           SPREAD_WARN,
)

__all__ = [
    "STATUSES",
    "CHECK_NAMES",
    "CheckResult",
    "run_checks",
    "worst_status",
    "estimate_noise",
    "check_van_gurp_palmen",
    "check_loss_vs_storage",
    "check_shifted_superposition",
    "check_kramers_kronig",
    "check_function_agreement",
    "check_overlap_coverage",
    "check_monotonic_shifts",
    "check_law_residuals",
    "check_prony_fit_quality",
    "check_master_curve_range",
    "check_outliers",
    "check_noise_level",
    "check_relaxation_creep",
    "disagreeing_temperatures_K",
    # the thresholds, each documented in the module of its check
    "NOISE_FLOOR_LOG10", "NOISE_FLOOR_RAD",
    "SPREAD_WARN", "SPREAD_FAIL", "SPREAD_TOLERANCE_RAD", "SPREAD_TOLERANCE_LOG10",
    "MIN_PAIR_POINTS", "MIN_CLASS_POINTS",
    "KK_WARN_PERCENT", "KK_FAIL_PERCENT", "KK_MIN_RATIO", "KK_NOISE_FACTOR", "KK_EDGE_DECADES",
    "KK_TERMS_PER_DECADE",
    "AGREEMENT_WARN_DECADES", "AGREEMENT_FAIL_DECADES", "AGREEMENT_Z",
    "AGREEMENT_TOLERANCE_DECADES", "AGREEMENT_TREND_Z", "AGREEMENT_TREND_DECADES",
    "MIN_OVERLAP_DECADES", "MIN_OVERLAP_FRACTION", "GAP_NOISE_FACTOR",
    "MONOTONIC_SIGMA",
    "LAW_PATTERN_ALPHA", "LAW_RESIDUAL_FLOOR_DECADES", "LAW_RESIDUAL_FAIL_DECADES",
    "PRONY_RMS_WARN_PERCENT", "PRONY_RMS_FAIL_PERCENT",
    "OUTLIER_WARN_PERCENT", "OUTLIER_FAIL_PERCENT",
    "NOISE_WARN_PERCENT", "NOISE_FAIL_PERCENT", "NOISE_ISOTHERM_RATIO", "NOISE_ISOTHERM_PERCENT",
    "RELAXATION_CREEP_WARN_PERCENT", "RELAXATION_CREEP_FAIL_PERCENT",
]
