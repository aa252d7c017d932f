"""The data the shift fit works on: per isotherm, log10 x and log10 of each function (private).

Per isotherm k, ``X[k]`` = log10 of the frequency (rad/s) or time (s), and ``Y[k]`` (m_k, Q)
= log10 of each of the Q functions shifted on, less its known vertical shift v_q log10 b_T
(NaN where a value is missing or not positive). Dense isotherms are thinned for the fit evenly
by rank along x (:data:`MAX_FIT_POINTS_PER_ISOTHERM`); ``kept[k]`` holds the indices of the
points kept, so that outliers found among them are marked on the campaign's own points.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .._arrays import evenly_spaced_rows
from ..data import Campaign
from ..exceptions import DataError
from ..units import kelvin_to_celsius
from ._options import ShiftOptions

__all__ = ["FitData", "prepare_fit_data", "MAX_FIT_POINTS_PER_ISOTHERM",
           "MAX_DECADES_PER_ISOTHERM"]

#: Isotherms with more points than this are thinned for the joint fit (evenly by rank along x):
#: a few dozen points per isotherm determine its shift to the noise limit, while the cost of the
#: fit grows with the number of points (a 500-isotherm, 1e6-point campaign would not fit in
#: memory). The standard errors then describe the points used, so they err on the safe side.
MAX_FIT_POINTS_PER_ISOTHERM = 60
#: No instrument sweeps more than this many decades of frequency or time in one isotherm; more
#: means a wrong unit or a corrupt column (and would overflow the master-curve model).
MAX_DECADES_PER_ISOTHERM = 30.0


@dataclass
class FitData:
    """Per isotherm: log10 x (``X``), log10 values less the known vertical shift (``Y``,
    one column per function), the indices of the points kept for the fit (``kept``); and the
    note on thinning, if any."""

    X: list
    Y: list
    kept: list
    notes: list = field(default_factory=list)


def prepare_fit_data(campaign: Campaign, options: ShiftOptions) -> FitData:
    """The log data of every isotherm, its span checked, thinned for the fit.

    Raises
    ------
    DataError
        An isotherm spans more than :data:`MAX_DECADES_PER_ISOTHERM` decades.
    """
    X, Y = _log_data(options)
    _check_spans(campaign, X, options.temps)
    # Dense isotherms are thinned for the fit (every point is still shifted and reported)
    kept = [evenly_spaced_rows(yk.T, xk.size, MAX_FIT_POINTS_PER_ISOTHERM) for xk, yk in zip(X, Y, strict=True)]
    notes = []
    if any(kk.size < xk.size for kk, xk in zip(kept, X, strict=True)):
        notes.append(f"isotherms with more than {MAX_FIT_POINTS_PER_ISOTHERM} points were thinned "
                     f"to {MAX_FIT_POINTS_PER_ISOTHERM} points evenly spread in "
                     f"{campaign.x_name.split('_')[0]} for the shift fit; every point is shifted "
                     f"and reported, outliers are looked for among the points fitted")
        X = [xk[kk] for xk, kk in zip(X, kept, strict=True)]
        Y = [yk[kk] for yk, kk in zip(Y, kept, strict=True)]
    return FitData(X=X, Y=Y, kept=kept, notes=notes)


def _log_data(options: ShiftOptions):
    """Per-isotherm log data (m_k, Q); NaN where a value is missing or not positive."""
    X, Y = [], []
    for k, iso in enumerate(options.derived.isotherms):
        X.append(np.log10(iso.x))
        cols = []
        for q, v in zip(options.chosen, options.vsign, strict=True):
            val = np.asarray(iso.values[q], float)
            with np.errstate(divide="ignore", invalid="ignore"):
                ly = np.where(np.isfinite(val) & (val > 0), np.log10(val), np.nan)
            cols.append(ly - v * options.c_known[k])
        Y.append(np.column_stack(cols))
    return X, Y


def _check_spans(campaign: Campaign, X, temps) -> None:
    for k, xk in enumerate(X):
        span = float(xk.max() - xk.min()) if xk.size else 0.0
        if span > MAX_DECADES_PER_ISOTHERM:
            what = campaign.x_name.split("_")[0]
            raise DataError(f"{campaign.source + ': ' if campaign.source else ''}the isotherm at "
                            f"{kelvin_to_celsius(temps[k]):g} °C spans {span:.0f} decades of "
                            f"{what}; a measurement spans at most {MAX_DECADES_PER_ISOTHERM:g} "
                            f"(check the {what} column and its unit)")
