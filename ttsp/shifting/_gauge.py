"""The gauge: log10 a_T = 0 at the reference temperature, and the standard errors (private).

The joint fit holds one isotherm of each group at zero (or the user's fixed shifts). Then the
gauge is moved to the reference temperature by subtracting log10 a_T there, a linear map
s → M s with M = I − 1 wᵀ that is applied to the covariance too (M C Mᵀ), so the standard
errors include the noise the interpolation passes on:

* a measured reference: w picks that isotherm;
* inside the measured range: the Lagrange cubic through four consecutive temperatures around
  T_ref, two on each side where possible (all of them when fewer than four);
* outside: the straight line through the two nearest (with an ExtrapolationWarning).

With fixed shifts the fixed values are the gauge of log10 a_T (log10 a_T(T_ref) is what they
imply, noted when it is not 0); a free vertical shift is still moved to the reference.
"""

from __future__ import annotations

import warnings as _warnings

import numpy as np

from ..exceptions import ExtrapolationWarning
from ..units import kelvin_to_celsius
from ._groups import Shifts
from ._options import ShiftOptions

__all__ = ["gauge_weights", "fix_gauge"]


def gauge_weights(temps_K, t_ref):
    """Weights w with w·f ≈ f(T_ref): inside the range, the Lagrange cubic through the four
    consecutive temperatures around T_ref (two on each side where there are two, else the
    four nearest consecutive ones; all of them when fewer); outside, the straight line
    through the two nearest. Four nearest by distance alone could put three on one side of a
    cluster, where the cubic extrapolates with weights of 5 and more."""
    n = temps_K.size
    w = np.zeros(n)
    inside = temps_K.min() <= t_ref <= temps_K.max()
    if inside:
        order = np.argsort(temps_K, kind="stable")
        k = int(np.clip(np.searchsorted(temps_K[order], t_ref) - 1, 0, n - 2))  # lower neighbour
        lo, hi = max(0, k - 1), min(n, k + 3)
        lo, hi = max(0, min(lo, hi - 4)), min(n, max(hi, lo + 4))
        idx = order[lo:hi]
    else:
        idx = np.argsort(np.abs(temps_K - t_ref), kind="stable")[:2]
    for a in idx:
        others = [b for b in idx if b != a]
        w[a] = np.prod([(t_ref - temps_K[b]) / (temps_K[a] - temps_K[b]) for b in others])
    return w, inside


def fix_gauge(shifts: Shifts, options: ShiftOptions) -> None:
    """Move the shifts and their covariances to the reference's gauge and compute the
    standard errors (in place). Warns (ExtrapolationWarning, for the caller of
    ``shift_isotherms``) when the reference lies outside the measured range."""
    n = options.n
    shifts.group_stderr = np.sqrt(np.clip(np.diag(shifts.cov_s), 0.0, None))  # within each group
    if options.fixed:
        _gauge_with_fixed_shifts(shifts, options)
    else:
        if options.ref_measured:
            w = np.zeros(n)
            w[options.ref_idx] = 1.0
        else:
            w, inside = gauge_weights(options.temps, options.t_ref)
            if not inside:
                msg = (f"reference temperature {kelvin_to_celsius(options.t_ref):g} °C lies "
                       f"outside the measured range; log10 a_T there is extrapolated linearly "
                       f"from the two nearest isotherms")
                shifts.notes.append(msg)
                _warnings.warn(msg, ExtrapolationWarning, stacklevel=3)
        M = np.eye(n) - np.outer(np.ones(n), w)
        shifts.s = M @ shifts.s
        shifts.cov_s = M @ shifts.cov_s @ M.T
        if options.fit_vertical:
            shifts.c = M @ shifts.c
            shifts.cov_c = M @ shifts.cov_c @ M.T
    _standard_errors(shifts, options)


def _gauge_with_fixed_shifts(shifts: Shifts, options: ShiftOptions) -> None:
    """Fixed shifts are the gauge of log10 a_T; a free log10 b_T still goes to the reference.
    Notes log10 a_T interpolated at an unmeasured reference when it is off 0 by > 0.02."""
    n = options.n
    if options.fit_vertical:
        w, _ = gauge_weights(options.temps, options.t_ref) if not options.ref_measured else (
            np.eye(n)[options.ref_idx], True)
        M = np.eye(n) - np.outer(np.ones(n), w)
        shifts.c = M @ shifts.c
        shifts.cov_c = M @ shifts.cov_c @ M.T
    if not options.ref_measured:
        w, _ = gauge_weights(options.temps, options.t_ref)
        at_ref = float(w @ shifts.s)
        if abs(at_ref) > 0.02:
            shifts.notes.append(f"with the fixed shifts given, log10 a_T interpolated at the "
                                f"reference temperature is {at_ref:.3f}, not 0")


def _standard_errors(shifts: Shifts, options: ShiftOptions) -> None:
    """stderr from the covariance: NaN for user-fixed shifts, 0 at a measured reference; and
    log10 b_T with the known vertical shift added back, with its stderr."""
    stderr = np.sqrt(np.clip(np.diag(shifts.cov_s), 0.0, None))
    for k in options.user_fixed:
        stderr[k] = np.nan
    if options.ref_measured:
        stderr[options.ref_idx] = 0.0
    shifts.stderr = stderr
    shifts.log10_bT = shifts.c + options.c_known
    shifts.log10_bT_stderr = np.sqrt(np.clip(np.diag(shifts.cov_c), 0.0, None))
