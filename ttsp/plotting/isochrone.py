"""The isochronal figure: E', E'' and tan δ of the model against temperature at one frequency,
with the glass transition read three ways (onset of the E' drop, peak of E'', peak of tan δ).

Layer 4 (a figure). The values come from the build's model (:class:`ttsp.model.ViscoelasticModel`
``isochrone``) and its :class:`ttsp.transition.GlassTransitionEstimate`; nothing is fitted here.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.axes import Axes


import warnings

import numpy as np

from .._validation import bad_value
from ..exceptions import ExtrapolationWarning
from ._labels import _letters, _modulus_unit
from ._look import _BLUE, _GREEN, _INK, _VERMILLION, _new_axes, _style, _style_twin

__all__ = ["plot_isochrone"]


def plot_isochrone(result, ax: Axes | None = None):
    """E' and E'' (left axis, log) and tan δ (right axis, linear) against temperature (°C) at the
    frequency of ``result.glass_transition``, over the shift law's fitted range; vertical lines
    mark the E' onset, the E'' peak and the tan δ peak.

    Parameters
    ----------
    result : ttsp.workflow.BuildResult
        A build of frequency data (``result.glass_transition`` is not None).
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib Axes
        The modulus axes; the tan δ axes is its twin.
    """
    est = result.glass_transition
    if est is None:
        raise bad_value("result", "a build of frequency data (with a glass transition "
                                  "estimate)", "a build without one")
    ax = _new_axes(ax, size=(6.4, 4.4))
    letter, _ = _letters(result.campaign.modulus_kind)
    lo, hi = est.temperature_range_K
    T = np.linspace(lo, hi, 301)
    f = float(est.frequency_Hz)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        ep = np.asarray(result.model.isochrone("storage_modulus", T, f), dtype=float)
        epp = np.asarray(result.model.isochrone("loss_modulus", T, f), dtype=float)
        tand = np.asarray(result.model.isochrone("tan_delta", T, f), dtype=float)
    unit, factor = _modulus_unit(np.concatenate([ep, epp]))
    T_C = T - 273.15
    ax.plot(T_C, ep / factor, color=_BLUE, lw=1.6, label=f"{letter}′ storage modulus")
    ax.plot(T_C, epp / factor, color=_VERMILLION, lw=1.6, label=f"{letter}″ loss modulus")
    twin = ax.twinx()
    twin.plot(T_C, tand, color=_GREEN, lw=1.3, label="tan δ")
    marks = ((est.storage_onset_from_model_K, (0, (1, 1.5)), _BLUE, f"{letter}′ onset"),
             (est.loss_peak_from_model_K, (0, (4, 2)), _VERMILLION, f"{letter}″ peak"),
             (est.tan_delta_peak_from_model_K, (0, (6, 2, 1, 2)), _GREEN, "tan δ peak"))
    for value, style, colour, name in marks:
        if value is not None:
            ax.axvline(value - 273.15, color=colour, lw=1.0, ls=style, zorder=1,
                       label=f"Tg, {name}: {value - 273.15:.1f} °C")
    _style(ax, logy=True)
    ax.tick_params(which="both", right=False)
    _style_twin(twin, _GREEN)
    finite = tand[np.isfinite(tand)]
    twin.set_ylim(0.0, float(finite.max()) * 1.08 if finite.size else 1.0)
    ax.set_xlim(float(T_C[0]), float(T_C[-1]))
    ax.set_xlabel("Temperature T (°C)")
    ax.set_ylabel(f"{letter}′, {letter}″ ({unit})")
    twin.set_ylabel("Loss factor tan δ")
    handles, labels = ax.get_legend_handles_labels()
    h2, l2 = twin.get_legend_handles_labels()
    ax.legend(handles + h2, labels + l2, fontsize=8, frameon=False, loc="lower left")
    ax.set_title(f"Isochrone at {f:g} Hz (from the Prony series and shift law)", fontsize=9,
                 color=_INK, loc="left")
    return ax
