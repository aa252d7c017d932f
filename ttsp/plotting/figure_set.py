"""Which figures a build has, and all of them drawn at once: ``{name: matplotlib Figure}``.

Layer 4 (figures). matplotlib is imported inside the drawing functions only.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..build_result import BuildResult
    from ..data import Campaign

import numpy as np

from .._validation import bad_value
from .checks_figures import plot_cross_validation, plot_superposition_check
from .isochrone import plot_isochrone
from .master_curve import plot_isotherms, plot_master_curve
from .material_functions import plot_frequency_functions, plot_time_functions
from .prony_figures import plot_prony_fit, plot_relaxation_spectrum
from .shift_factors import plot_shift_factors

__all__ = ["FIGURE_NAMES", "OPTIONAL_FIGURES", "CAMPAIGN_FIGURES", "figure_names",
           "render_figures", "render_campaign_figures"]


#: Names of the figures every build has (also the stems of the saved files); see
#: :func:`figure_names` for those of one build.
FIGURE_NAMES = ("isotherms", "master_curve", "shift_factors", "prony_fit", "time_functions",
                "frequency_functions", "superposition_check")
#: Figures a build makes only when asked (``BuildOptions.spectrum``) or when it has what they
#: show (held-out isotherms): see :func:`figure_names`.
OPTIONAL_FIGURES = ("relaxation_spectrum", "isochrone", "cross_validation")

#: Figures that need only the measured campaign (they can be drawn before any fitting).
CAMPAIGN_FIGURES = ("isotherms", "superposition_check")


def render_campaign_figures(campaign: Campaign) -> dict:
    """The figures of :data:`CAMPAIGN_FIGURES`, which need no shift, law or series."""
    return {"isotherms": plot_isotherms(campaign).figure,
            "superposition_check": plot_superposition_check(campaign).figure}


def figure_names(result: BuildResult) -> tuple:
    """The names of the figures of this build: :data:`FIGURE_NAMES`, plus
    ``relaxation_spectrum`` when the build fitted the continuous spectrum,
    ``isochrone`` for frequency data (E', E'', tan δ against T with the Tg readings) and
    ``cross_validation`` when it predicted at least one held-out isotherm."""
    extra = []
    if getattr(result, "relaxation_spectrum", None) is not None:
        extra.append("relaxation_spectrum")
    if getattr(result, "glass_transition", None) is not None:
        extra.append("isochrone")
    cv = getattr(result, "cross_validation", None)
    if cv is not None and any(np.isfinite(h.rms_percent_at_law_aT.get("all", np.nan))
                              for h in cv.per_isotherm):
        extra.append("cross_validation")
    return FIGURE_NAMES + tuple(extra)


def render_figures(result: BuildResult, names=None) -> dict:
    """Every figure of a build (or those in ``names``) as ``{name: matplotlib Figure}``.

    Names are those of :func:`figure_names`. ``frequency_functions`` is made for every build: a
    series fitted to time-domain data has a frequency response too (Ferry 1980, ch. 3), it is
    simply further from the measurements.
    """
    makers = {
        "isotherms": lambda: plot_isotherms(result.campaign).figure,
        "master_curve": lambda: plot_master_curve(result).figure,
        "shift_factors": lambda: plot_shift_factors(result).figure,
        "prony_fit": lambda: plot_prony_fit(result)[0].figure,
        "time_functions": lambda: plot_time_functions(result).figure,
        "frequency_functions": lambda: plot_frequency_functions(result).figure,
        "superposition_check": lambda: plot_superposition_check(result.campaign).figure,
        "relaxation_spectrum": lambda: plot_relaxation_spectrum(
            result.relaxation_spectrum, series=result.series)[0].figure,
        "cross_validation": lambda: plot_cross_validation(result).figure,
        "isochrone": lambda: plot_isochrone(result).figure,
    }
    available = figure_names(result)
    wanted = available if names is None else tuple(names)
    unknown = [n for n in wanted if n not in available]
    if unknown:
        raise bad_value("names", "figure names of this build (figure_names(result))", unknown)
    return {name: makers[name]() for name in wanted}
