"""Figures of the model's material functions at the reference temperature: E(t) and D(t) over
reduced time, E', E'' and tan δ over reduced frequency; extrapolated parts dashed and shaded,
with the uncertainty band when the build made one.

Layer 4 (figures). matplotlib is imported inside the functions only.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..build_result import BuildResult

import math

import numpy as np

from ._build_data import _functions, _reduced_data, _valid_range
from ._curves import _band, _band_handle, _extrapolation_handle, _model_line, _shade_extrapolation
from ._labels import (
    _AT,
    _compliance_unit,
    _frequency_unit,
    _letters,
    _modulus_unit,
    _reduced_x_label,
)
from ._look import (
    _BLUE,
    _GREEN,
    _VERMILLION,
    _log_scale,
    _new_axes,
    _style,
    _style_twin,
    _tidy_log_axis,
    _tref_title,
)

__all__ = ["plot_time_functions", "plot_frequency_functions"]


def _twin_legend(ax, twin, extra=()):
    """One legend for an axes and its twin, in a row below the x-axis label (curves that span
    the whole width leave no free corner inside)."""
    lines = [ln for ln in ax.get_lines() + twin.get_lines() if not ln.get_label().startswith("_")]
    handles = lines + list(extra)
    ax.legend(handles, [h.get_label() for h in handles], fontsize=8.5, frameon=False,
              loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=len(handles),
              handlelength=1.8, columnspacing=1.2)


def plot_time_functions(result: BuildResult, ax: Axes | None = None):
    """Relaxation modulus E(t) (left axis) and creep compliance D(t) (right axis) of the model
    at the reference temperature over reduced time; extrapolated parts dashed and shaded.

    Returns
    -------
    matplotlib Axes
        The E(t) axes; the D(t) axes is its twin (``ax.figure.axes``).
    """
    ax = _new_axes(ax, size=(6.4, 4.4))
    letter, cletter = _letters(result.campaign.modulus_kind)
    frame = _functions(result)
    t = frame["time_s"].to_numpy()
    e = frame["relaxation_modulus_Pa"].to_numpy()
    d = frame["creep_compliance_1_per_Pa"].to_numpy()
    ext = frame["extrapolated"].to_numpy(dtype=bool)
    eunit, efactor = _modulus_unit(e)
    dunit, dfactor = _compliance_unit(d)
    _model_line(ax, t, e / efactor, ext, colour=_BLUE, label=f"{letter}(t) relaxation modulus")
    banded = _band(ax, frame, "relaxation_modulus", t, efactor, _BLUE)
    twin = ax.twinx()
    _model_line(twin, t, d / dfactor, ext, colour=_VERMILLION,
                label=f"{cletter}(t) creep compliance")
    _measured_over_model(result, ax, twin, efactor, dfactor)
    _band(twin, frame, "creep_compliance", t, dfactor, _VERMILLION)
    rng = _valid_range(result)
    _style(ax, logx=True, logy=True)
    ax.tick_params(which="both", right=False)
    _log_scale(twin, "y")
    _style_twin(twin, _VERMILLION)
    _style_twin_left(ax, _BLUE)
    if rng is not None:
        _shade_extrapolation(ax, rng[0], rng[1], float(t.min()), float(t.max()))
    ax.set_xlim(float(t.min()), float(t.max()))
    ax.set_xlabel(f"Reduced time t/{_AT} (s)")
    ax.set_ylabel(f"Relaxation modulus {letter}(t) ({eunit})")
    twin.set_ylabel(f"Creep compliance {cletter}(t) ({dunit})")
    _tidy_log_axis(ax.yaxis)
    _tidy_log_axis(twin.yaxis)
    _twin_legend(ax, twin, ([_extrapolation_handle()] if ext.any() else [])
                 + ([_band_handle()] if banded else []))
    _tref_title(ax, result, "from the Prony series")
    return ax


def _measured_over_model(result, ax, twin, efactor, dfactor):
    """When both E(t) and D(t) were measured, their shifted points under the model lines: the
    D(t) line is interconverted from the series fitted to E(t), so the figure shows the one
    curve drawn over the other measured one (the check ``relaxation_creep`` gives the number).
    At most 400 points of each, evenly by rank of reduced time."""
    names = ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
    if result.campaign.domain != "time" or not set(names) <= set(result.campaign.quantities):
        return
    data = _reduced_data(result)
    t = np.concatenate([d[1] for d in data])
    for q, axis, colour, factor in ((names[0], ax, _BLUE, efactor),
                                    (names[1], twin, _VERMILLION, dfactor)):
        y = np.concatenate([d[2][q] for d in data])
        order = np.argsort(t)
        pick = order[np.unique(np.linspace(0, order.size - 1, min(400, order.size)).astype(int))]
        axis.plot(t[pick], y[pick] / factor, ls="none", marker="o", ms=2.2, alpha=0.35,
                  color=colour, zorder=2)


def _style_twin_left(ax, colour):
    ax.yaxis.label.set_color(colour)
    ax.tick_params(axis="y", which="both", colors=colour)
    ax.spines["left"].set_color(colour)


def plot_frequency_functions(result: BuildResult, ax: Axes | None = None):
    """Storage and loss modulus (left axis, log) and tan δ (right axis, linear) of the model at
    the reference temperature over reduced frequency; extrapolated parts dashed and shaded.

    Returns
    -------
    matplotlib Axes
        The modulus axes; the tan δ axes is its twin.
    """
    ax = _new_axes(ax, size=(6.4, 4.4))
    campaign = result.campaign
    letter, _ = _letters(campaign.modulus_kind)
    xunit, xfactor = _frequency_unit(campaign)
    frame = _functions(result)
    omega = 2.0 * math.pi * frame["frequency_Hz"].to_numpy()
    order = np.argsort(omega)
    x = omega[order] / xfactor
    ep = frame["storage_modulus_Pa"].to_numpy()[order]
    epp = frame["loss_modulus_Pa"].to_numpy()[order]
    tand = frame["tan_delta"].to_numpy()[order]
    ext = frame["extrapolated"].to_numpy(dtype=bool)[order]
    unit, factor = _modulus_unit(np.concatenate([ep, epp]))
    _model_line(ax, x, ep / factor, ext, colour=_BLUE, label=f"{letter}′ storage modulus")
    _model_line(ax, x, epp / factor, ext, colour=_VERMILLION, label=f"{letter}″ loss modulus")
    banded = _band(ax, frame, "storage_modulus", x, factor, _BLUE, order)
    _band(ax, frame, "loss_modulus", x, factor, _VERMILLION, order)
    twin = ax.twinx()
    _model_line(twin, x, tand, ext, colour=_GREEN, lw=1.3, label="tan δ")
    _style(ax, logx=True, logy=True)
    ax.tick_params(which="both", right=False)
    _style_twin(twin, _GREEN)
    finite = tand[np.isfinite(tand)]
    twin.set_ylim(0.0, float(finite.max()) * 1.08 if finite.size else 1.0)
    rng = _valid_range(result)
    if rng is not None:
        # the series' range is in reduced time; the matching angular frequencies are ω = 1/t
        _shade_extrapolation(ax, 1.0 / rng[1] / xfactor, 1.0 / rng[0] / xfactor,
                             float(x.min()), float(x.max()))
    ax.set_xlim(float(x.min()), float(x.max()))
    ax.set_xlabel(_reduced_x_label(campaign, xunit, "frequency"))
    ax.set_ylabel(f"{letter}′, {letter}″ ({unit})")
    twin.set_ylabel("Loss factor tan δ")
    _tidy_log_axis(ax.yaxis)
    _twin_legend(ax, twin, ([_extrapolation_handle()] if ext.any() else [])
                 + ([_band_handle()] if banded else []))
    _tref_title(ax, result, "from the Prony series")
    return ax
