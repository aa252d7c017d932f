"""Figures of a campaign and of a build: raw isotherms, master curve, shift factors with their law,
the Prony fit, the material functions and the shift-free superposition check.

Every ``plot_*`` function draws on the :class:`~matplotlib.axes.Axes` it is given (a new
figure is made when ``ax`` is None) and returns it, so figures compose in a notebook or a paper.
matplotlib is imported inside the functions only, and pyplot never: figures are plain
:class:`matplotlib.figure.Figure` objects, so nothing global is touched and batch runs do not
accumulate open figures. Importing this package stays cheap.

Conventions of the figures
--------------------------
- Temperature is coded by a colourblind-safe sequential map (viridis without its palest end,
  which vanishes on white paper) with a colour bar in °C.
- Moduli are shown in Pa, kPa, MPa or GPa, whichever suits their magnitude; compliances in the
  inverse unit. Frequencies are in Hz or rad/s, following the unit the campaign was read in.
- Symbols follow the data: E, E′, E″, D for tensile campaigns; G, G′, G″, J for shear ones.
- Model curves are solid inside the range the Prony series was fitted to and dashed outside it
  (extrapolation); the outside is also shaded.

Modules
-------
- shared: ``_look`` (palette, axes style, tick labels, notes), ``_labels`` (symbols and units of
  the axes), ``_curves`` (model lines, extrapolation, bands), ``_thinning`` (points drawn per
  figure), ``_build_data`` (the pieces of a build result a figure draws);
- one family of figures each: ``master_curve`` (isotherms, master curve), ``shift_factors``,
  ``prony_figures`` (Prony fit, relaxation spectrum), ``material_functions`` (time and
  frequency functions), ``checks_figures`` (superposition check, cross-validation),
  ``isochrone`` (isochrone and Tg);
- every figure of a build: ``figure_set`` (names, rendering), ``saving`` (PNG and SVG files).
"""

from __future__ import annotations

# read by users as ttsp.plotting.DISPLAY_MODULUS_UNITS (the units a figure picks from)
from ..units import DISPLAY_MODULUS_UNITS  # noqa: F401
from ._build_data import BAND_LEVEL
from ._thinning import DRAWN_POINTS_PER_FIGURE, MIN_DRAWN_PER_CURVE, drawn_indices
from .checks_figures import plot_cross_validation, plot_superposition_check
from .figure_set import (
                         CAMPAIGN_FIGURES,
                         FIGURE_NAMES,
                         OPTIONAL_FIGURES,
                         figure_names,
                         render_campaign_figures,
                         render_figures,
)
from .isochrone import plot_isochrone
from .master_curve import plot_isotherms, plot_master_curve
from .material_functions import plot_frequency_functions, plot_time_functions
from .prony_figures import plot_prony_fit, plot_relaxation_spectrum
from .saving import figure_files, load_matplotlib, save_figures
from .shift_factors import plot_shift_factors

__all__ = [
    # the figures of a build, by name, and their files
    "FIGURE_NAMES",
    "OPTIONAL_FIGURES",
    "CAMPAIGN_FIGURES",
    "figure_files",
    "figure_names",
    "render_figures",
    "render_campaign_figures",
    "save_figures",
    "load_matplotlib",
    # one figure each
    "plot_isotherms",
    "plot_master_curve",
    "plot_shift_factors",
    "plot_prony_fit",
    "plot_time_functions",
    "plot_frequency_functions",
    "plot_superposition_check",
    "plot_relaxation_spectrum",
    "plot_cross_validation",
    "plot_isochrone",
    # how much a figure draws
    "BAND_LEVEL",
    "DRAWN_POINTS_PER_FIGURE",
    "MIN_DRAWN_PER_CURVE",
    "drawn_indices",
]
