"""The options of a build, checked once: what the user asks the whole job to do (layer 3)."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from html import escape

from ._validation import bad_value, check_choice
from .laws.names import LAW_MODELS
from .master_choice import MASTER_CURVE_CHOICES
from .selection import normalise_exclude, normalise_fixed

SCHEMA_VERSION = "1"
LAW_CHOICES = ("auto",) + LAW_MODELS
VERTICAL_CHOICES = ("none", "density", "fit", "auto")
SHIFT_ON_CHOICES = ("auto", "tan_delta")
GAP_CHOICES = ("stop", "bridge")
MATERIAL_CHOICES = ("solid", "liquid")


@dataclass(frozen=True)
class BuildOptions:
    """Settings of a build (no logic). Temperatures in °C, as users give them.

    Parameters
    ----------
    reference_temperature_C : float, optional
        Reference temperature of the master curve; default: the measured temperature nearest the
        campaign's median.
    law : str
        Shift law: ``auto`` (chosen by information criterion), ``wlf``, ``arrhenius``,
        ``wlf-arrhenius``, ``vft`` or ``polynomial``.
    vertical : str
        Vertical shift: ``none``, ``density`` (b_T = Tρ/(T_ref ρ_ref), needs
        ``expansion_coefficient_per_K``), ``fit``, or ``auto``: each of those that can be
        built, judged by held-out isotherms (:mod:`ttsp.vertical_choice`; the result's
        options then carry the chosen one).
    shift_on : str
        ``auto`` (all measured functions jointly) or ``tan_delta`` (frequency data only).
    gaps : str
        ``stop`` at isotherms that do not overlap, or ``bridge`` them with a fitted law.
    prony_terms_per_decade : float
        Density of the relaxation times of the Prony series (default 2).
    glass_transition_C : float, optional
        Tg for the WLF/Arrhenius law (fitted when not given).
    master_curve : str
        Model of the master curve the shifts are fitted with: ``spectrum`` (one relaxation
        spectrum shared by all functions), ``splines`` (a smooth curve per function) or
        ``auto`` (both fitted, the one whose shifts lay neighbouring isotherms better on each
        other kept; :mod:`ttsp.master_choice`).
    cross_validation : bool
        Leave interior isotherms out in turn (at most 8), rebuild from the others and predict them
        (:mod:`ttsp.crossval`): the build's own accuracy figure on its data. On by default.
    material : str
        ``solid`` (the Prony series' equilibrium modulus E_∞ ≥ 0 is fitted; a creep fit has no
        flow term) or ``liquid`` (a melt or solution: E_∞ = 0 by physics, and a creep
        compliance is fitted with a steady-flow term t/η₀; Ferry 1980, ch. 3). Passed to every
        Prony fit of the build.
    spectrum : bool
        Also fit the continuous relaxation spectrum H(τ) to the master curve (frequency data
        with E' and E''; :func:`ttsp.spectrum.fit_relaxation_spectrum`): written to
        ``relaxation_spectrum.csv`` and drawn in the report. Off by default (it adds a
        regularised fit with a scan of its strength to every build).
    exclude_C : tuple of float
        Isotherms (°C, each within 0.5 K of a measured one) left out of the build.
    isochrone_frequency_Hz : float
        Frequency (Hz) of the isochrone and of the glass transition read from it (default 1).
    service_temperature_C : float, optional
        A temperature (°C) at which the material functions are also tabulated
        (:meth:`BuildResult.material_functions_frame`, ``service_functions.csv``).
    fixed_log10_aT : mapping of float to float
        ``{temperature_C: log10 a_T}`` shifts held at given values; the others are fitted around
        them (:func:`ttsp.shifting.shift_isotherms`). Keys may be numbers or their text (as
        ``to_dict()`` writes them, for JSON).
    bands : bool
        Make the bootstrap ensemble behind the uncertainty bands of every prediction
        (:mod:`ttsp.bands`; stored in ``summary.json`` so that ``ttsp predict --band`` needs
        no data). On by default; off saves its cost (64 non-negative refits of the series).
    """

    reference_temperature_C: float | None = None
    law: str = "auto"
    vertical: str = "none"
    expansion_coefficient_per_K: float | None = None
    shift_on: str = "auto"
    gaps: str = "stop"
    prony_terms_per_decade: float = 2.0
    glass_transition_C: float | None = None
    spectrum: bool = False
    master_curve: str = "auto"
    cross_validation: bool = True
    material: str = "solid"
    exclude_C: tuple = ()
    fixed_log10_aT: tuple = ()
    service_temperature_C: float | None = None
    isochrone_frequency_Hz: float = 1.0
    bands: bool = True

    def __post_init__(self):
        object.__setattr__(self, "exclude_C", normalise_exclude(self.exclude_C))
        object.__setattr__(self, "fixed_log10_aT", normalise_fixed(self.fixed_log10_aT))
        check_choice("law", self.law, LAW_CHOICES)
        check_choice("material", self.material, MATERIAL_CHOICES)
        check_choice("master_curve", self.master_curve, MASTER_CURVE_CHOICES)
        for name in ("spectrum", "cross_validation", "bands"):
            if not isinstance(getattr(self, name), bool):
                raise bad_value(name, "True or False", getattr(self, name))
        check_choice("vertical", self.vertical, VERTICAL_CHOICES)
        check_choice("shift_on", self.shift_on, SHIFT_ON_CHOICES)
        check_choice("gaps", self.gaps, GAP_CHOICES)
        if not (isinstance(self.prony_terms_per_decade, (int, float))
                and 0.25 <= self.prony_terms_per_decade <= 10):
            raise bad_value("prony_terms_per_decade", "between 0.25 and 10",
                            self.prony_terms_per_decade)
        f = self.isochrone_frequency_Hz
        if not (isinstance(f, (int, float)) and math.isfinite(float(f)) and f > 0):
            raise bad_value("isochrone_frequency_Hz", "a positive frequency in Hz", f)
        for name in ("reference_temperature_C", "service_temperature_C"):
            value = getattr(self, name)
            if value is not None and not (isinstance(value, (int, float))
                                          and math.isfinite(float(value))):
                raise bad_value(name, "a finite temperature in °C", value)

    def to_dict(self) -> dict:
        """The settings as JSON-ready values (temperatures of fixed shifts as text keys)."""
        out = asdict(self)
        out["exclude_C"] = list(self.exclude_C)
        out["fixed_log10_aT"] = {f"{t:.10g}": v for t, v in self.fixed_log10_aT}
        return out

    def _repr_html_(self) -> str:
        rows = "".join(f"<tr><th style='text-align:left'>{escape(k)}</th><td>{escape(str(v))}</td></tr>"
                       for k, v in self.to_dict().items())
        return f"<div><b>Build options</b><table>{rows}</table></div>"
