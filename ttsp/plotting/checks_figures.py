"""Figures that check a build: the shift-free superposition check of the measured isotherms
(van Gurp–Palmen plot, or local log–log slopes of time data) and the held-out isotherms'
prediction errors.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..data import Campaign

import numpy as np

from .._log_slope import local_log_slope
from .._validation import bad_value
from ._labels import _compliance_unit, _letters, _modulus_unit
from ._look import (
    _BLUE,
    _GREY,
    _VERMILLION,
    _colour_bar,
    _new_axes,
    _note,
    _style,
    _temperature_colours,
)
from ._thinning import drawn_indices

__all__ = ["plot_superposition_check", "plot_cross_validation"]


def _local_log_slope(x, y, half_window: int = 2):
    """d log10 y / d log10 x, smoothed over a fixed width in log x (:mod:`ttsp._log_slope`):
    at least ±``half_window`` neighbours, more on dense records."""
    return local_log_slope(x, y, min_points=half_window)


def plot_superposition_check(campaign: Campaign, ax: Axes | None = None):
    """Shift-free check of thermorheological simplicity, coloured by temperature.

    Frequency data: the van Gurp–Palmen plot, phase angle δ against |E*| (van Gurp & Palmen,
    Rheology Bulletin 67, 5, 1998; Trinkle & Friedrich, Rheol. Acta 40, 322, 2001). Time data:
    the local log–log slope −d log E/d log t (or d log D/d log t) against E (or D). Both
    coordinates are unchanged by a horizontal shift, so the isotherms of a thermorheologically
    simple material fall on one curve without any shifting; fanning out shows complexity.

    Returns
    -------
    matplotlib Axes
    """
    ax = _new_axes(ax)
    colours = _temperature_colours(campaign.temperatures_C)
    letter, cletter = _letters(campaign.modulus_kind)
    if campaign.domain == "frequency":
        full = campaign.with_derived()
        if not {"complex_modulus_Pa", "phase_angle_rad"} <= set(full.quantities):
            raise bad_value("campaign", "frequency data with E′ and E″ (or |E*| and δ) for the van "
                            "Gurp–Palmen plot", ", ".join(full.quantities))
        mags = np.concatenate([i.values["complex_modulus_Pa"] for i in full.isotherms])
        unit, factor = _modulus_unit(mags)
        for iso in full.isotherms:
            c = colours.to_rgba(iso.temperature_C)
            m = iso.values["complex_modulus_Pa"]
            order = np.argsort(m)
            order = order[drawn_indices(order.size, len(full.isotherms))]
            ax.plot(m[order] / factor, np.degrees(iso.values["phase_angle_rad"][order]),
                    marker="o", ms=3.6, lw=0.8, color=c, mec=c, mfc=c, zorder=3)
        _style(ax, logx=True)
        ax.set_xlabel(f"|{letter}*| ({unit})")
        ax.set_ylabel("Phase angle δ (°)")
    else:
        quantity = ("relaxation_modulus_Pa" if "relaxation_modulus_Pa" in campaign.quantities
                    else "creep_compliance_1_per_Pa")
        sign = -1.0 if quantity == "relaxation_modulus_Pa" else 1.0
        values = np.concatenate([i.values[quantity] for i in campaign.isotherms])
        if quantity == "relaxation_modulus_Pa":
            unit, factor = _modulus_unit(values)
            xlabel = f"{letter}(t) ({unit})"
            ylabel = f"Local slope −d log {letter} / d log t"
        else:
            unit, factor = _compliance_unit(values)
            xlabel = f"{cletter}(t) ({unit})"
            ylabel = f"Local slope d log {cletter} / d log t"
        for iso in campaign.isotherms:
            c = colours.to_rgba(iso.temperature_C)
            y = iso.values[quantity]
            slope = sign * _local_log_slope(iso.x, y)
            ok = np.zeros(slope.size, dtype=bool)
            ok[drawn_indices(slope.size, len(campaign.isotherms))] = True
            ok &= np.isfinite(slope)
            ax.plot(y[ok] / factor, slope[ok], marker="o", ms=3.6, lw=0.8, color=c, mec=c, mfc=c,
                    zorder=3)
        _style(ax, logx=True)
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
    _colour_bar(ax, colours)
    return ax


def plot_cross_validation(result, ax: Axes | None = None):
    """The held-out isotherms: rms prediction error (%) of each, left out of the build, at
    the shift its law gives and at its best shift, against temperature.

    The gap between the two markers of an isotherm is what the shift law costs there; the
    lower one is the error of the master curve itself (:mod:`ttsp.crossval`).

    Returns
    -------
    matplotlib Axes
        Temperature in °C on x, rms relative error in per cent on y (linear, from zero).
    """
    ax = _new_axes(ax, size=(6.0, 3.8))
    cv = result.cross_validation
    rows = [(h.temperature_C, h.rms_percent_at_law_aT.get("all", np.nan),
             h.rms_percent_at_best_aT.get("all", np.nan)) for h in cv.per_isotherm]
    t, at_law, at_best = (np.array(v, dtype=float) for v in zip(*rows, strict=True))
    ok = np.isfinite(at_law) & np.isfinite(at_best)
    for ti, a, b in zip(t[ok], at_law[ok], at_best[ok], strict=True):
        ax.plot([ti, ti], [b, a], color=_GREY, lw=0.9, zorder=1)
    ax.plot(t[ok], at_law[ok], "o", color=_VERMILLION, ms=5.5, zorder=3,
            label="at the law's a$_T$ (the prediction)")
    ax.plot(t[ok], at_best[ok], "s", color=_BLUE, mfc="white", mew=1.2, ms=5.5, zorder=3,
            label="at the best a$_T$ (the master curve alone)")
    failed = ~ok
    if failed.any():
        for ti in t[failed]:
            ax.axvline(ti, color=_GREY, lw=0.8, ls=(0, (2, 2)), zorder=0)
    _style(ax)
    ax.set_xlabel("Temperature of the held-out isotherm T (°C)")
    ax.set_ylabel("rms prediction error (%)")
    params = cv.params
    _note(ax, f"median {params['median_rms_percent_at_law_aT']:.3g} % at the law's a$_T$, "
              f"{params['median_rms_percent_at_best_aT']:.3g} % at the best", loc="upper left")
    ax.legend(fontsize=8.5, frameon=False, loc="lower right")
    hi = float(np.nanmax(at_law[ok])) if ok.any() else 10.0
    ax.set_ylim(0.0, hi * 1.45)      # from zero: the errors compare as amounts
    return ax
