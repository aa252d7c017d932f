"""Prony series (generalized Maxwell model): the series, its creep counterpart, and their fits.

- :mod:`~ttsp.prony.series`: :class:`PronySeries`, E(t) = E_∞ + Σ E_i exp(−t/τ_i), and every
  material function that follows from it in closed form (no file I/O; :mod:`ttsp.io.prony_csv`
  reads and writes series).
- :mod:`~ttsp.prony.creep_series`, :mod:`~ttsp.prony.secular`,
  :mod:`~ttsp.prony.exact_conversion`: the retardation (creep) series and the exact
  relaxation <-> creep conversion (public in :mod:`ttsp.interconvert`).
- :mod:`~ttsp.prony.fit_frequency`, :mod:`~ttsp.prony.fit_time`: non-negative fits to E'(ω),
  E''(ω) and to E(t), D(t), built from the shared NNLS core (:mod:`~ttsp.prony.nnls`), the
  shared steps (:mod:`~ttsp.prony.fit_steps`), the plateau verdicts
  (:mod:`~ttsp.prony.plateaus`) and the result (:mod:`~ttsp.prony.fit_result`).

Fitting uses fixed, log-spaced relaxation times and non-negative least squares (Lawson &
Hanson, *Solving Least Squares Problems*, Prentice-Hall 1974) with relative residuals, so that
every decade of modulus carries comparable weight. Every module here imports numpy only
(scipy inside the solver, pandas lazily inside ``to_frame``-like methods).
"""

from .fit_frequency import fit_prony_frequency
from .fit_result import PronyFit
from .fit_time import fit_prony_time
from .nnls import log_spaced_relaxation_times
from .series import NormalisedPronySeries, PronySeries

__all__ = [
    "PronySeries",
    "NormalisedPronySeries",
    "PronyFit",
    "fit_prony_frequency",
    "fit_prony_time",
    "log_spaced_relaxation_times",
]
