"""The pieces of a build result a figure draws: the shift table in temperature order, the
shifted points per isotherm, the material-functions table with its band, the range the Prony
series was fitted over.

Layer 4 (figures); no matplotlib here.
"""

from __future__ import annotations

import numpy as np

from ..units import kelvin_to_celsius


def _shift_table(result):
    """Temperatures (K), log10 a_T, their stderr and log10 b_T of a build, in temperature order."""
    shifts = result.shifts
    t = np.asarray(shifts.temperature_K, dtype=float)
    a = np.asarray(shifts.log10_aT, dtype=float)
    se = getattr(shifts, "log10_aT_stderr", None)
    se = np.full(t.shape, np.nan) if se is None else np.array(
        [np.nan if v is None else v for v in np.ravel(se)], dtype=float)
    b = getattr(shifts, "log10_bT", None)
    b = np.zeros(t.shape) if b is None else np.asarray(b, dtype=float)
    order = np.argsort(t, kind="stable")
    return t[order], a[order], se[order], b[order]


def _reduced_data(result):
    """Per isotherm: (temperature_C, reduced x, {quantity: shifted values}, outlier mask).

    Taken from the build's master-curve table (every input point, shifted), so the figure shows
    exactly what was written to ``master_curve.csv``.
    """
    campaign = result.campaign
    frame = result.master_curve_frame()
    xcol = "reduced_frequency_rad_s" if campaign.domain == "frequency" else "reduced_time_s"
    quantities = [q for q in campaign.quantities if q in frame.columns]
    out = []
    group_key = "isotherm" if "isotherm" in frame.columns else "temperature_K"
    for _, part in frame.groupby(group_key, sort=True):
        part = part.sort_values(xcol)
        tK = float(part["temperature_K"].iloc[0])
        outlier = (part["outlier"].to_numpy(dtype=bool) if "outlier" in part.columns
                   else np.zeros(len(part), dtype=bool))
        out.append((float(kelvin_to_celsius(tK)), part[xcol].to_numpy(dtype=float),
                    {q: part[q].to_numpy(dtype=float) for q in quantities}, outlier))
    out.sort(key=lambda item: item[0])
    return out


#: Level of the uncertainty band drawn around the model's material functions (ttsp.bands).
BAND_LEVEL = 0.95


def _functions(result):
    """The material-functions table of a build (model at the reference temperature), with its
    95 % band columns when the build made bands."""
    return result.material_functions_frame(points_per_decade=20, band=BAND_LEVEL)


def _valid_range(result):
    rng = getattr(result.series, "valid_reduced_time_range_s", None)
    return None if rng is None else (float(rng[0]), float(rng[1]))
