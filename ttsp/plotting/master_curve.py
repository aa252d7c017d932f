"""Figures of the measured isotherms and of the master curve: the isotherms as read, and every
point at its reduced frequency or time with the fitted Prony model, coloured by temperature.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..build_result import BuildResult
    from ..data import Campaign

import math

import numpy as np

from .._validation import bad_value, check_choice
from ._build_data import _functions, _reduced_data
from ._curves import _extrapolation_handle, _model_line
from ._labels import _frequency_unit, _pretty, _reduced_x_label, _unit_kind, _value_axis
from ._look import (
    _GREY,
    _INK,
    _colour_bar,
    _new_axes,
    _style,
    _temperature_colours,
    _tidy_log_axis,
    _tref_title,
)
from ._thinning import drawn_indices

__all__ = ["plot_isotherms", "plot_master_curve"]

_QUANTITY_ALIASES = {
    "storage_modulus": "storage_modulus_Pa",
    "loss_modulus": "loss_modulus_Pa",
    "complex_modulus": "complex_modulus_Pa",
    "phase_angle": "phase_angle_rad",
    "relaxation_modulus": "relaxation_modulus_Pa",
    "creep_compliance": "creep_compliance_1_per_Pa",
    "tan_delta": "tan_delta",
}


def _resolve_quantities(campaign, quantity):
    present = campaign.quantities
    if quantity in (None, "auto"):
        if campaign.domain == "frequency":
            pick = [q for q in ("storage_modulus_Pa", "loss_modulus_Pa") if q in present]
            if not pick:
                pick = [q for q in ("complex_modulus_Pa", "tan_delta") if q in present][:1]
        else:
            pick = [q for q in ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
                    if q in present][:1]
        return pick or list(present[:1])
    names = [quantity] if isinstance(quantity, str) else list(quantity)
    out = []
    for name in names:
        full = _QUANTITY_ALIASES.get(name, name)
        check_choice("quantity", full, present)
        out.append(full)
    kinds = {_unit_kind(q) for q in out}
    if len(kinds) > 1:
        raise bad_value("quantity", "functions that share one axis unit (moduli together, or one "
                        "other function)", names)
    return out


_MARKERS = ("o", "^", "s", "D")


def plot_isotherms(campaign: Campaign, ax: Axes | None = None, quantity="auto"):
    """Plot the measured isotherms as read, coloured by temperature, with a colour bar in °C.

    Parameters
    ----------
    campaign : ttsp.Campaign
        The measurements (frequency sweeps or time-domain tests).
    ax : matplotlib Axes, optional
        Where to draw; a new figure is made when None.
    quantity : str or sequence of str
        ``"auto"`` (E′ and E″ for frequency data, E(t) or D(t) for time data) or names of
        measured functions (``"storage_modulus"``, ``"loss_modulus"``, ``"tan_delta"``,
        ``"complex_modulus"``, ``"phase_angle"``, ``"relaxation_modulus"``,
        ``"creep_compliance"``, with or without their unit suffix) that share one axis unit.

    Returns
    -------
    matplotlib Axes
        Log–log axes of the function against frequency (Hz or rad/s) or time (s).
    """
    campaign = campaign.with_derived() if campaign.domain == "frequency" else campaign
    quantities = _resolve_quantities(campaign, quantity)
    ax = _new_axes(ax)
    freq = campaign.domain == "frequency"
    xunit, xfactor = _frequency_unit(campaign) if freq else ("s", 1.0)
    values = np.concatenate([iso.values[q] for iso in campaign.isotherms for q in quantities
                             if q in iso.values])
    ylabel, yfactor, ylog = _value_axis(campaign, quantities, values)
    colours = _temperature_colours(campaign.temperatures_C)
    n_curves = len(campaign.isotherms) * len(quantities)
    for iso in campaign.isotherms:
        c = colours.to_rgba(iso.temperature_C)
        pick = drawn_indices(iso.n_points, n_curves)
        for k, q in enumerate(quantities):
            if q not in iso.values:
                continue
            filled = k == 0
            ax.plot(iso.x[pick] / xfactor, iso.values[q][pick] / yfactor,
                    marker=_MARKERS[k % len(_MARKERS)], ms=3.6, lw=0.8, color=c,
                    mfc=c if filled else "white", mec=c, mew=0.9, zorder=3)
    _style(ax, logx=True, logy=ylog)
    ax.set_xlabel(f"Frequency f ({xunit})" if freq and xunit == "Hz" else
                  f"Angular frequency ω ({xunit})" if freq else "Time t (s)")
    ax.set_ylabel(ylabel)
    if len(quantities) > 1:
        from matplotlib.lines import Line2D

        handles = [Line2D([], [], color=_INK, lw=0.8, marker=_MARKERS[k % len(_MARKERS)], ms=4,
                          mfc=_INK if k == 0 else "white", mec=_INK,
                          label=_pretty(campaign.symbol(q)))
                   for k, q in enumerate(quantities)]
        ax.legend(handles=handles, fontsize=8.5, frameon=False, loc="best")
    if ylog:
        _tidy_log_axis(ax.yaxis)
    _colour_bar(ax, colours)
    return ax


def plot_master_curve(result: BuildResult, ax: Axes | None = None):
    """The master curve at the reference temperature: every point at its reduced frequency
    (f·a_T) or reduced time (t/a_T), coloured by its temperature, with the fitted Prony model.

    Parameters
    ----------
    result : ttsp.workflow.BuildResult

    Returns
    -------
    matplotlib Axes
        Log–log axes; the model is solid over the fitted range and dashed beyond it. Points
        the shifting flagged as outliers are drawn as grey crosses (they are kept, not dropped).
    """
    from matplotlib.lines import Line2D

    campaign = result.campaign
    freq = campaign.domain == "frequency"
    data = _reduced_data(result)
    quantities = [q for q in _resolve_quantities(campaign, "auto") if q in data[0][2]]
    ax = _new_axes(ax)
    xunit, xfactor = _frequency_unit(campaign) if freq else ("s", 1.0)
    values = np.concatenate([d[2][q] for d in data for q in quantities])
    ylabel, yfactor, ylog = _value_axis(campaign, quantities, values)
    colours = _temperature_colours([d[0] for d in data])
    n_outliers = 0
    xs_all = []
    for t_C, x, vals, outlier in data:
        c = colours.to_rgba(t_C)
        xs_all.append(x)
        drawn = np.zeros(x.size, dtype=bool)
        drawn[drawn_indices(x.size, len(data) * len(quantities))] = True
        for k, q in enumerate(quantities):
            y = vals[q]
            keep = drawn & ~outlier & np.isfinite(y)
            ax.plot(x[keep] / xfactor, y[keep] / yfactor, ls="none",
                    marker=_MARKERS[k % len(_MARKERS)], ms=3.4, mec=c, mfc=c if k == 0 else "white",
                    mew=0.8, zorder=3)
            if outlier.any():
                ax.plot(x[outlier] / xfactor, y[outlier] / yfactor, ls="none", marker="x", ms=5,
                        color=_GREY, mew=1.0, zorder=3)
        n_outliers += int(outlier.sum())   # points, as the outliers check counts them
    # the fitted model at the reference temperature, half a decade beyond the data at most
    x_drawn = np.concatenate(xs_all)
    lo, hi = float(x_drawn.min()) / 10 ** 0.5, float(x_drawn.max()) * 10 ** 0.5
    frame = _functions(result)
    ext = frame["extrapolated"].to_numpy(dtype=bool)
    xm = 2.0 * math.pi * frame["frequency_Hz"].to_numpy() if freq else frame["time_s"].to_numpy()
    order = np.argsort(xm)
    window = (xm[order] >= lo) & (xm[order] <= hi)
    model_columns = {"storage_modulus_Pa", "loss_modulus_Pa", "tan_delta",
                     "relaxation_modulus_Pa", "creep_compliance_1_per_Pa"}
    model_drawn = False
    for q in quantities:
        if q in model_columns and q in frame.columns:
            idx = order[window]
            _model_line(ax, xm[idx] / xfactor, frame[q].to_numpy()[idx] / yfactor, ext[idx],
                        colour=_INK, lw=1.2)
            model_drawn = True
    handles = [Line2D([], [], ls="none", marker=_MARKERS[k % len(_MARKERS)], ms=4, mec=_INK,
                      mfc=_INK if k == 0 else "white", label=_pretty(campaign.symbol(q)))
               for k, q in enumerate(quantities)]
    if model_drawn:
        handles.append(Line2D([], [], color=_INK, lw=1.2, label="Prony series"))
        if ext[order][window].any():
            handles.append(_extrapolation_handle())
    if n_outliers:
        handles.append(Line2D([], [], ls="none", marker="x", color=_GREY,
                              label=f"flagged outlier points ({n_outliers})"))
    _style(ax, logx=True, logy=ylog)
    ax.set_xlabel(_reduced_x_label(campaign, xunit))
    ax.set_ylabel(ylabel)
    ax.legend(handles=handles, fontsize=8.5, frameon=False, loc="best")
    if ylog:
        _tidy_log_axis(ax.yaxis)
    _tref_title(ax, result, "master curve")
    _colour_bar(ax, colours)
    return ax
