"""The checks' inputs from the other modules: a campaign, and a shift table matched to its
isotherms. Duck-typed, so that a test may pass a small stand-in for a shift result."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._validation import bad_value
from ..data import Campaign
from ..exceptions import DataError
from .result import _fmt_C


def _as_campaign(campaign) -> Campaign:
    if not isinstance(campaign, Campaign):
        raise bad_value("campaign", "a ttsp Campaign", type(campaign).__name__)
    return campaign


@dataclass(frozen=True)
class _Shifts:
    """The shift table aligned with the campaign's isotherms (internal)."""

    temperature_K: np.ndarray
    log10_aT: np.ndarray
    stderr: np.ndarray          # NaN where unknown
    log10_bT: np.ndarray
    flags: tuple                # one tuple of str per isotherm
    outliers: tuple | None      # one bool array per isotherm, or None when not given
    reference_temperature_K: float | None


def _array(obj, name, n, default):
    value = getattr(obj, name, None)
    if value is None:
        return np.full(n, default, dtype=float)
    arr = np.array([np.nan if v is None else v for v in np.ravel(value)], dtype=float)
    if arr.size != n:
        raise bad_value(f"shifts.{name}", f"one value per shift-table row ({n})",
                        f"{arr.size} values")
    return arr


def _align_shifts(campaign: Campaign, shifts) -> _Shifts:
    """Match the rows of a shift table to the campaign's isotherms by temperature."""
    try:
        temps = np.asarray(shifts.temperature_K, dtype=float).ravel()
        log_a = np.asarray(shifts.log10_aT, dtype=float).ravel()
    except AttributeError:
        raise bad_value("shifts", "a shift result with temperature_K and log10_aT",
                        type(shifts).__name__) from None
    n = temps.size
    if log_a.size != n:
        raise bad_value("shifts.log10_aT", f"one value per temperature ({n})",
                        f"{log_a.size} values")
    stderr = _array(shifts, "log10_aT_stderr", n, np.nan)
    log_b = _array(shifts, "log10_bT", n, 0.0)
    log_b[~np.isfinite(log_b)] = 0.0
    flags = getattr(shifts, "flags", None)
    flags = tuple(tuple(f) if f else () for f in flags) if flags is not None else ((),) * n
    if len(flags) != n:
        raise bad_value("shifts.flags", f"one tuple per shift-table row ({n})",
                        f"{len(flags)} tuples")
    masks = getattr(shifts, "outlier_mask", None)
    iso_t = campaign.temperatures_K
    rows = []
    for t in iso_t:
        k = int(np.argmin(np.abs(temps - t))) if n else -1
        if n == 0 or abs(temps[k] - t) > 1e-6 * max(1.0, t):
            raise DataError(f"shifts must hold a row for every isotherm of the campaign; none "
                            f"for {_fmt_C(t)}")
        rows.append(k)
    index = np.asarray(rows)
    if masks is not None:
        if len(masks) != n:
            raise bad_value("shifts.outlier_mask", f"one array per shift-table row ({n})",
                            f"{len(masks)} arrays")
        masks = tuple(np.asarray(masks[k], dtype=bool) for k in index)
        for iso, m in zip(campaign.isotherms, masks, strict=True):
            if m.shape != iso.x.shape:
                raise bad_value("shifts.outlier_mask", "one flag per point of each isotherm",
                                f"{m.size} flags for {iso.n_points} points at "
                                f"{_fmt_C(iso.temperature_K)}")
    tr = getattr(shifts, "reference_temperature_K", None)
    return _Shifts(iso_t, log_a[index], stderr[index], log_b[index],
                   tuple(flags[k] for k in index), masks,
                   None if tr is None else float(tr))


def _reduced_log_x(campaign: Campaign, table: _Shifts, k: int) -> np.ndarray:
    """log10 of reduced frequency ω·a_T or reduced time t/a_T of isotherm k."""
    sign = 1.0 if campaign.domain == "frequency" else -1.0
    return np.log10(campaign.isotherms[k].x) + sign * table.log10_aT[k]


def _keep(table: _Shifts | None, k: int, n: int) -> np.ndarray:
    if table is None or table.outliers is None:
        return np.ones(n, dtype=bool)
    return ~table.outliers[k]
