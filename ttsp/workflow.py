"""The main job in one call: campaign → shift factors → shift law → Prony series → material
functions → checks, returned as one frozen :class:`BuildResult`. No file I/O happens here.
"""

from __future__ import annotations

import hashlib
import math
import warnings
from dataclasses import asdict, dataclass, replace

import numpy as np

from . import __version__
from ._arrays import evenly_spaced_indices, outside_log_range
from ._validation import bad_value, check_choice
from .data import REFERENCE_SNAP_K, Campaign
from .master_choice import MASTER_CURVE_CHOICES, choose_master_curve
from .exceptions import DataError, FitError, FitQualityWarning, TtspWarning
from .bands import band_columns
from . import checks as check_suite   # run_checks looked up at each build: a test may replace it
from .checks import disagreeing_temperatures_K
from .laws.names import LAW_MODELS
from .units import celsius_to_kelvin, kelvin_to_celsius

__all__ = ["BuildOptions", "BuildResult", "build", "LAW_CHOICES", "VERTICAL_CHOICES",
           "SHIFT_ON_CHOICES", "SCHEMA_VERSION"]

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
        from .selection import normalise_exclude, normalise_fixed

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
        from html import escape

        rows = "".join(f"<tr><th style='text-align:left'>{escape(k)}</th><td>{escape(str(v))}</td></tr>"
                       for k, v in self.to_dict().items())
        return f"<div><b>Build options</b><table>{rows}</table></div>"


def _spectrum_summary(spectrum):
    """The summary.json entry of the continuous spectrum (its table is in the CSV file)."""
    if spectrum is None:
        return None
    return {"file": "relaxation_spectrum.csv", "method": spectrum.method,
            "regularisation": float(spectrum.regularisation),
            "equilibrium_modulus_Pa": float(spectrum.equilibrium_modulus_Pa),
            "rms_percent": float(spectrum.rms_percent), "max_percent": float(spectrum.max_percent),
            "effective_parameters": float(spectrum.effective_parameters),
            "valid_tau_range_s": [float(v) for v in spectrum.valid_tau_range_s],
            "points": int(np.asarray(spectrum.tau_s).size)}


def _campaign_hash(campaign: Campaign) -> str:
    h = hashlib.sha256()
    for iso in campaign.isotherms:
        h.update(np.float64(iso.temperature_K).tobytes())
        h.update(np.ascontiguousarray(iso.x).tobytes())
        for k in sorted(iso.values):
            h.update(k.encode())
            h.update(np.ascontiguousarray(iso.values[k]).tobytes())
    return h.hexdigest()


@dataclass(frozen=True, repr=False)
class BuildResult:
    """Everything a build produced. Evaluates and exports itself; no file I/O.

    Attributes
    ----------
    campaign : Campaign
    options : BuildOptions
    shifts : ttsp.shifting.ShiftResult
    law_fit : ttsp.laws.ShiftLawFit
    prony_fit : ttsp.prony.PronyFit
    model : ttsp.model.ViscoelasticModel
    checks : tuple of ttsp.checks.CheckResult
    warnings : tuple of str
    input_sha256 : str
    input_files : tuple of str
    glass_transition : ttsp.transition.GlassTransitionEstimate or None
        E'' and tan δ peak temperatures at 1 Hz (frequency data only).
    relaxation_spectrum : ttsp.spectrum.RelaxationSpectrum or None
        H(τ) of the master curve when ``options.spectrum`` asked for it (frequency data).
    master_curve : ttsp.master_choice.MasterCurveChoice or None
        Which model of the master curve the shifts were fitted with, and why.
    cross_validation : ttsp.crossval.CrossValidation or None
        Held-out isotherm predictions (None when ``options.cross_validation`` is off).
    vertical_choice : ttsp.vertical_choice.VerticalChoice or None
        The vertical shift chosen and why, when ``vertical="auto"`` was asked for.
    """

    campaign: Campaign
    options: BuildOptions
    shifts: object
    law_fit: object
    prony_fit: object
    model: object
    checks: tuple
    warnings: tuple
    input_sha256: str
    input_files: tuple = ()
    glass_transition: object = None
    relaxation_spectrum: object = None
    master_curve: object = None
    cross_validation: object = None
    vertical_choice: object = None

    @property
    def reference_temperature_K(self) -> float:
        return float(self.shifts.reference_temperature_K)

    @property
    def reference_temperature_C(self) -> float:
        return float(kelvin_to_celsius(self.reference_temperature_K))

    @property
    def series(self):
        return self.prony_fit.series

    @property
    def failed_checks(self) -> tuple:
        return tuple(c for c in self.checks if c.status == "fail")

    # ---- tables --------------------------------------------------------------------------------
    def master_curve_frame(self):
        """Every input point with its reduced x and shifted values (none dropped)."""
        return self.shifts.shifted_frame(self.campaign)

    def material_functions_frame(self, points_per_decade: int = 10, temperature_C=None,
                                 band=None):
        """E(t), D(t), E', E'', tan δ at the reference temperature on one log grid.

        Row i holds the time t_i and the frequency f_i = 1/(2π t_i) (so ω_i = 1/t_i), over the
        series' valid reduced range widened by one decade each side (those rows are flagged).
        With ``temperature_C`` the same functions at that temperature (through the model's
        a_T and b_T, :class:`ttsp.model.ViscoelasticModel`), over the same reduced range
        (times t_i·a_T); rows are flagged ``extrapolated`` outside the reduced range, and all
        rows when the temperature lies outside the shift law's fitted range.
        With ``band=LEVEL`` (and a build made with bands) each of E(t), D(t), E', E'' also gets
        its interval columns (:func:`band_columns`; :mod:`ttsp.bands`).
        """
        import pandas as pd

        from .model import QUANTITY_COLUMNS

        lo, hi = self.series.valid_reduced_time_range_s
        t = np.logspace(math.log10(lo) - 1, math.log10(hi) + 1,
                        int(round((math.log10(hi) - math.log10(lo) + 2) * points_per_decade)) + 1)
        if temperature_C is not None:
            return self._functions_at(t, float(temperature_C))
        omega = 1.0 / t
        creep = self.model.creep_series
        frame = pd.DataFrame({
            "time_s": t,
            "relaxation_modulus_Pa": self.series.relaxation_modulus(t),
            "creep_compliance_1_per_Pa": creep.creep_compliance(t),
            "frequency_Hz": omega / (2 * math.pi),
            "storage_modulus_Pa": self.series.storage_modulus(omega),
            "loss_modulus_Pa": self.series.loss_modulus(omega),
            "tan_delta": self.series.tan_delta(omega),
            "extrapolated": outside_log_range(t, lo, hi),
        })
        ensemble = getattr(self.model, "ensemble", None)
        if band is not None and ensemble is not None:
            for q in ("relaxation_modulus", "creep_compliance", "storage_modulus",
                      "loss_modulus"):
                x = ({"time_s": t} if q in ("relaxation_modulus", "creep_compliance")
                     else {"frequency_Hz": frame["frequency_Hz"].to_numpy()})
                b = ensemble.interval(q, frame[QUANTITY_COLUMNS[q]].to_numpy(),
                                      self.reference_temperature_K, band,
                                      central_log10_aT=0.0, **x)
                low, high = band_columns(q)
                frame[low], frame[high] = b.low, b.high
            frame.attrs["band_level"] = float(band)
        frame.attrs["reference_temperature_C"] = self.reference_temperature_C
        return frame

    def _functions_at(self, reduced_t, temperature_C: float):
        import pandas as pd

        from .exceptions import ExtrapolationWarning
        from .selection import MATCH_K   # the isotherm tolerance: within it, not beyond

        lo, hi = self.series.valid_reduced_time_range_s
        T_K = float(celsius_to_kelvin(temperature_C))
        rng = self.model.law.valid_temperature_range_K
        beyond_law = rng is not None and not rng[0] - MATCH_K <= T_K <= rng[1] + MATCH_K
        m = self.model
        with warnings.catch_warnings():   # the 'extrapolated' column says where, row by row
            warnings.simplefilter("ignore", ExtrapolationWarning)
            t = reduced_t * 10.0 ** float(m.log10_aT(T_K))
            f = 1.0 / (2 * math.pi * t)
            frame = pd.DataFrame({
                "temperature_C": np.full(t.size, temperature_C),
                "time_s": t,
                "relaxation_modulus_Pa": m.relaxation_modulus(t, T_K),
                "creep_compliance_1_per_Pa": m.creep_compliance(t, T_K),
                "frequency_Hz": f,
                "storage_modulus_Pa": m.storage_modulus(f, T_K),
                "loss_modulus_Pa": m.loss_modulus(f, T_K),
                "tan_delta": m.tan_delta(f, T_K),
                "extrapolated": outside_log_range(reduced_t, lo, hi) | beyond_law,
            })
        frame.attrs["temperature_C"] = temperature_C
        return frame

    # ---- the output contract -------------------------------------------------------------------
    def summary(self, *, created_utc: str = "") -> dict:
        """The content of ``summary.json`` (schema version 1; see ``ttsp/schema``)."""
        law = self.law_fit.to_dict()
        law_section = {
            "model": law["model"],
            "parameters": law["parameters"],
            "parameter_stderr": law.get("parameter_stderr", {}),
            "reference_temperature_C": law["reference_temperature_C"],
            "valid_temperature_range_C": law["valid_temperature_range_C"],
        }
        law_section.update({k: v for k, v in law.items() if k not in law_section})
        prony = self.series.to_dict()
        shifting = self.shifts.to_dict()
        shift_factors = shifting.pop("shift_factors")
        return {
            "schema_version": SCHEMA_VERSION,
            "tool_version": __version__,
            "created_utc": created_utc,
            "input_sha256": self.input_sha256,
            "input_files": list(self.input_files),
            "options": self.options.to_dict(),
            "domain": self.campaign.domain,
            "modulus_kind": self.campaign.modulus_kind,
            "source": self.campaign.source,
            "units_as_read": dict(self.campaign.units_as_read),
            "rows_left_out": dict(self.campaign.dropped_rows),
            "reference_temperature_C": self.reference_temperature_C,
            "shift_factors": shift_factors,
            "shifting": shifting,
            "shift_law": law_section,
            "prony": prony,
            "glass_transition": (self.glass_transition.to_dict()
                                 if self.glass_transition is not None else None),
            "relaxation_spectrum": _spectrum_summary(self.relaxation_spectrum),
            "master_model": self.master_curve.to_dict() if self.master_curve is not None else None,
            "cross_validation": (self.cross_validation.to_dict()
                                 if self.cross_validation is not None else None),
            "vertical_choice": (self.vertical_choice.to_dict()
                                if self.vertical_choice is not None else None),
            "bands": (self.model.ensemble.to_dict()
                      if getattr(self.model, "ensemble", None) is not None else None),
            "checks": [c.to_dict() for c in self.checks],
            "warnings": list(self.warnings),
        }

    def __repr__(self) -> str:
        return (f"BuildResult({len(self.campaign)} isotherms, reference "
                f"{self.reference_temperature_C:.2f} °C, law {self.law_fit.law.model}, "
                f"{self.series.n_terms} Prony terms, checks: "
                + ", ".join(f"{sum(c.status == s for c in self.checks)} {s}"
                            for s in ("pass", "warn", "fail")) + ")")

    def _repr_html_(self) -> str:
        from html import escape

        law = self.law_fit
        params = ", ".join(f"{escape(k)} = {v:.5g} ± {law.stderr.get(k) or float('nan'):.2g}"
                           for k, v in law.params.items())
        lo, hi = self.series.valid_reduced_time_range_s
        rows = [("source", escape(str(self.campaign.source))),
                ("isotherms", f"{len(self.campaign)} ({self.campaign.domain} domain, "
                              f"{self.campaign.modulus_kind})"),
                ("reference temperature", f"{self.reference_temperature_C:.2f} °C"),
                ("shift law", f"{escape(law.law.model)}: {params}"),
                ("Prony series", f"{self.series.n_terms} terms, rms {self.prony_fit.rms_percent:.2f} %, "
                                 f"valid reduced time {lo:.3g} – {hi:.3g} s")]
        g = self.glass_transition
        if g is not None and g.loss_peak_from_model_K is not None:
            rows.append(("Tg (E'' peak at 1 Hz)", f"{g.loss_peak_from_model_K - 273.15:.1f} °C"))
        table = "".join(f"<tr><th style='text-align:left'>{k}</th><td>{v}</td></tr>" for k, v in rows)
        checks = "".join(f"<li><b>{escape(c.status)}</b> {escape(c.name)}: {escape(c.message)}</li>"
                         for c in self.checks)
        warns = "".join(f"<li>{escape(w)}</li>" for w in self.warnings)
        return (f"<div><b>ttsp build</b><table>{table}</table><b>checks</b><ul>{checks}</ul>"
                + (f"<b>warnings</b><ul>{warns}</ul>" if warns else "") + "</div>")


#: The Prony fit uses at most this many master-curve points (evenly by rank of reduced x): a
#: 40-term non-negative fit is fully determined by far fewer, and its cost grows with the points.
MAX_PRONY_POINTS = 20_000
#: The checks compare isotherms point by point; beyond this many points per isotherm they look
#: at an even subset (their verdicts are about curves, not single points).
MAX_CHECK_POINTS_PER_ISOTHERM = 60


def _fit_points(frame, x_name: str, columns, limit: int):
    """The master-curve points a curve fit uses: every function in ``columns`` present, not
    flagged as an outlier, in order of the reduced abscissa, at most ``limit`` of them (evenly
    by rank)."""
    ok = frame[columns].notna().all(axis=1)
    if "outlier" in frame:
        ok &= ~frame["outlier"].astype(bool)
    used = frame.loc[ok].sort_values(x_name)
    return used.iloc[evenly_spaced_indices(len(used), limit)]


def _prony_points(campaign: Campaign, shifts):
    """The master-curve points the Prony fit uses, their abscissa name, columns and the time
    quantity (None for frequency data)."""
    frame = shifts.shifted_frame(campaign)
    x_name = "reduced_frequency_rad_s" if campaign.domain == "frequency" else "reduced_time_s"
    if campaign.domain == "frequency":
        columns = ["storage_modulus_Pa", "loss_modulus_Pa"]
        quantity = None
    else:
        quantity = ("relaxation_modulus" if "relaxation_modulus_Pa" in campaign.quantities
                    else "creep_compliance")
        columns = ["relaxation_modulus_Pa" if quantity == "relaxation_modulus"
                   else "creep_compliance_1_per_Pa"]
    return _fit_points(frame, x_name, columns, MAX_PRONY_POINTS), frame, x_name, columns, quantity


def _fit_prony(campaign: Campaign, shifts, options: BuildOptions):
    from .prony import fit_prony_frequency, fit_prony_time

    used, frame, x_name, columns, quantity = _prony_points(campaign, shifts)
    if len(used) < 2:   # say what is wrong with the data, not that the solver got no abscissa
        from ._fit_points_diagnosis import explain_no_fit_points

        raise DataError(explain_no_fit_points(frame, columns, {q: campaign.symbol(q) for q in
                                                               columns}, campaign.source))
    liquid = options.material == "liquid"
    # the campaign's modulus kind labels the series (G for shear data), and a liquid's
    # equilibrium modulus is 0 by physics (its creep compliance grows as t/η₀)
    common = dict(terms_per_decade=options.prony_terms_per_decade,
                  modulus_kind=campaign.modulus_kind)
    if campaign.domain == "frequency":
        return fit_prony_frequency(used[x_name].to_numpy(), used[columns[0]].to_numpy(),
                                   used[columns[1]].to_numpy(),
                                   equilibrium_modulus_Pa=0.0 if liquid else None, **common)
    if quantity == "creep_compliance":
        return fit_prony_time(used[x_name].to_numpy(), used[columns[0]].to_numpy(),
                              quantity=quantity, fluid=liquid, **common)
    return fit_prony_time(used[x_name].to_numpy(), used[columns[0]].to_numpy(), quantity=quantity,
                          equilibrium_modulus_Pa=0.0 if liquid else None, **common)


def _thin_for_checks(campaign: Campaign, shifts):
    """The campaign and shift result restricted to an even subset of each dense isotherm."""
    from .data import Isotherm

    picks = [evenly_spaced_indices(iso.n_points, MAX_CHECK_POINTS_PER_ISOTHERM) for iso in campaign.isotherms]
    if all(p.size == iso.n_points for p, iso in zip(picks, campaign.isotherms)):
        return campaign, shifts
    isos = tuple(Isotherm(iso.temperature_K, iso.x[p], {k: v[p] for k, v in iso.values.items()},
                          iso.source_rows[p]) for iso, p in zip(campaign.isotherms, picks))
    thin = Campaign(isos, campaign.domain, campaign.modulus_kind, campaign.source,
                    campaign.units_as_read, campaign.metadata, campaign.dropped_rows)
    mask = tuple(np.asarray(m)[p] for m, p in zip(shifts.outlier_mask, picks))
    return thin, replace(shifts, outlier_mask=mask)


def build(campaign: Campaign, options: BuildOptions | None = None, *, input_sha256: str | None = None,
          input_files=(), progress=None, **option_values) -> BuildResult:
    """Run the whole job on a campaign and return a :class:`BuildResult`.

    Parameters
    ----------
    campaign : Campaign
        From :func:`ttsp.read_campaign` or :meth:`Campaign.from_frame`.
    options : BuildOptions, optional
        Settings; alternatively give them as keywords (``reference_temperature_C=25``, ``law="wlf"``).
    input_sha256 : str, optional
        Hash of the input files (the CLI passes :func:`ttsp.io.readers.hash_inputs`);
        default: a hash of the campaign's numbers.
    progress : callable, optional
        Called with the name of each step as it starts (the CLI prints them).

    Warnings raised by the steps are collected into ``result.warnings`` (and re-emitted).
    """
    from .shifting import default_reference_temperature_K

    if options is None:
        options = BuildOptions(**option_values)
    elif option_values:
        raise DataError("give either options=BuildOptions(...) or keyword options, not both")
    if not isinstance(campaign, Campaign):
        raise bad_value("campaign", "a ttsp Campaign (see ttsp.read_campaign)", type(campaign).__name__)
    from .selection import fixed_shifts_K, without_isotherms

    campaign = without_isotherms(campaign, options.exclude_C).with_derived()
    fixed_shifts_K(campaign, dict(options.fixed_log10_aT))   # each names an isotherm
    if not set(campaign.quantities) - {"tan_delta", "phase_angle_rad"}:
        have, (e1, e2) = " and ".join(map(campaign.symbol, campaign.quantities)), map(
            campaign.symbol, ("storage_modulus_Pa", "loss_modulus_Pa"))
        raise DataError(f"{campaign.source}: a master curve needs a modulus or a compliance; the "
                        f"campaign has only {have}: no Prony series can be fitted to it (add "
                        f"{e1} and {e2} columns)")
    if options.shift_on == "tan_delta" and campaign.domain != "frequency":
        raise DataError("shift_on='tan_delta' needs frequency-domain data; this campaign is "
                        "time-domain")
    from ._fit_points_diagnosis import fixed_loss_ratio

    ratio = fixed_loss_ratio(campaign)
    if ratio is not None:
        e1, e2 = campaign.symbol("storage_modulus_Pa"), campaign.symbol("loss_modulus_Pa")
        where = f"{campaign.source}: " if campaign.source else ""
        raise DataError(f"{where}{e1} and {e2} cannot be shifted together; {e2} is "
                        f"{ratio:.4g} times {e1} at every point, as if one column were computed "
                        f"from the other: check the {e2} column")
    t_ref_K = (celsius_to_kelvin(options.reference_temperature_C).item()
               if options.reference_temperature_C is not None
               else default_reference_temperature_K(campaign))
    step = progress or (lambda name: None)
    from threadpoolctl import threadpool_limits

    # The linear algebra here is many small problems: one BLAS thread is faster than several,
    # and much faster on a loaded machine or beside other worker processes.
    with threadpool_limits(limits=1, user_api="blas"), \
            warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", TtspWarning)
        held_out = vertical_choice = None
        if options.vertical == "auto":
            options, fitted, held_out, vertical_choice = _choose_vertical(campaign, options,
                                                                          t_ref_K, step)
        else:
            fitted = fit_steps(campaign, options, t_ref_K, step)
        shifts, law_fit, prony_fit, model = (fitted.shifts, fitted.law_fit, fitted.prony_fit,
                                             fitted.model)
        spectrum = None
        if options.spectrum:
            step("relaxation spectrum")
            spectrum = _fit_spectrum(campaign, shifts, t_ref_K)
        step("checks")
        check_campaign, check_shifts = _thin_for_checks(campaign, shifts)
        checks = tuple(check_suite.run_checks(check_campaign, shifts=check_shifts,
                                              law_fit=law_fit, prony_fit=prony_fit))
        shifts = _flag_disagreements(shifts, checks)
        glass = None
        if campaign.domain == "frequency":
            from .transition import estimate_glass_transition

            glass = estimate_glass_transition(model, campaign,
                                              frequency_Hz=options.isochrone_frequency_Hz)
        if options.bands:
            step("uncertainty bands")
            model = replace(model, ensemble=_fit_bands(campaign, shifts, law_fit, prony_fit,
                                                       options))
        if not options.cross_validation:
            held_out = None
        elif held_out is None:
            from .crossval import cross_validate

            step("cross-validation")
            held_out = cross_validate(campaign, options, t_ref_K, full=fitted)
    messages = []
    for w in caught:
        text = str(w.message)
        if text not in messages:
            messages.append(text)
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    for source in (shifts, prony_fit):
        for text in getattr(source, "warnings", ()) or ():
            if text not in messages:
                messages.append(text)
    return BuildResult(campaign, options, shifts, law_fit, prony_fit, model, checks, tuple(messages),
                       input_sha256 or _campaign_hash(campaign), tuple(str(f) for f in input_files),
                       glass, spectrum, fitted.master_curve, held_out, vertical_choice)


def _choose_vertical(campaign, options, t_ref_K, step):
    """``vertical="auto"``: every candidate built and cross-validated
    (:func:`ttsp.vertical_choice.choose_vertical_shift`), the progress named once."""
    from .crossval import cross_validate
    from .vertical_choice import choose_vertical_shift

    step("shift factors (vertical shift chosen by held-out isotherms)")
    return choose_vertical_shift(
        options, lambda o: fit_steps(campaign, o, t_ref_K),
        lambda o, fitted: cross_validate(campaign, o, t_ref_K, full=fitted))


@dataclass(frozen=True)
class FittedSteps:
    """The fitted parts of a build that predictions need (no checks, no extras)."""

    shifts: object
    master_curve: object
    law_fit: object
    prony_fit: object
    model: object


def fit_steps(campaign: Campaign, options: BuildOptions, t_ref_K: float, step=None, *,
              measure_collapse: bool = True, start_from=None) -> FittedSteps:
    """Shift factors (with the master-curve model chosen), shift law, Prony series and the
    model they make, for a campaign already checked and with its derived functions.

    The build and each fold of the cross-validation run exactly these steps; a fold does not
    measure the collapse of its shifts against chained pairwise shifts
    (``measure_collapse=False``), which only the build reports, and starts its shift fit's
    iterations from the full build's shifts (``start_from``: same optimum, fewer iterations).
    """
    from .model import VerticalShift, ViscoelasticModel
    from .shifting import shift_isotherms

    from .selection import fixed_shifts_K

    step = step or (lambda name: None)
    step("shift factors")
    # a fold of the cross-validation may have left a fixed isotherm out
    fixed_shifts = fixed_shifts_K(campaign, dict(options.fixed_log10_aT), strict=False) or None

    def fit_shifts(model_name):
        return shift_isotherms(
            campaign, t_ref_K,
            quantities="tan_delta" if options.shift_on == "tan_delta" else "auto",
            vertical=options.vertical,
            expansion_coefficient_per_K=options.expansion_coefficient_per_K,
            gaps=options.gaps, master_curve=model_name, fixed_log10_aT=fixed_shifts,
            start_from=start_from)

    requested = options.master_curve
    if requested == "auto" and options.shift_on != "tan_delta" and {
            "relaxation_modulus_Pa", "creep_compliance_1_per_Pa"} <= set(campaign.quantities):
        requested = "splines"   # no one spectrum model carries E(t) and D(t) together here
    shifts, choice = choose_master_curve(campaign, requested, fit_shifts, t_ref_K,
                                         measure=measure_collapse)
    _refuse_if_nothing_placed(campaign, shifts)
    if choice.requested != options.master_curve:
        choice = replace(choice, requested=options.master_curve,
                         reason=choice.reason.replace(
                             "was asked for", "is the one that carries E(t) and D(t) together"))
    fixed = ({"glass_transition_K": float(celsius_to_kelvin(options.glass_transition_C))}
             if options.glass_transition_C is not None and options.law == "wlf-arrhenius"
             else None)
    step("shift law")
    law_fit = _fit_law(shifts, t_ref_K, options.law, fixed)
    step("Prony series")
    prony_fit = _fit_prony(campaign, shifts, options)
    if prony_fit.series.reference_temperature_K is None:
        prony_fit = _with_series(prony_fit,
                                 prony_fit.series.replace(reference_temperature_K=t_ref_K))
    model = ViscoelasticModel(prony_fit.series, law_fit.law, VerticalShift.from_shifts(shifts))
    return FittedSteps(shifts, choice, law_fit, prony_fit, model)


#: Master-curve points the band's bootstrap refits each member to (evenly by rank): each of
#: its members is one NNLS fit, and the band's spread does not need every point of a dense
#: campaign.
MAX_BAND_POINTS = 2_000


def _fit_bands(campaign, shifts, law_fit, prony_fit, options):
    """The bootstrap ensemble of :mod:`ttsp.bands` on the Prony fit's own points (None with a
    warning when it cannot be made: a build is not sunk by an extra)."""
    from .bands import fit_band_ensemble

    used, _, x_name, columns, quantity = _prony_points(campaign, shifts)
    used = used.iloc[evenly_spaced_indices(len(used), MAX_BAND_POINTS)]
    try:
        return fit_band_ensemble(used[x_name].to_numpy(),
                                 {c: used[c].to_numpy() for c in columns},
                                 used["isotherm"].to_numpy(), domain=campaign.domain,
                                 series=prony_fit.series, shifts=shifts, law_fit=law_fit,
                                 terms_per_decade=options.prony_terms_per_decade,
                                 quantity=quantity, seed=0)
    except (DataError, FitError) as exc:
        warnings.warn(f"the uncertainty bands could not be made: {exc}", TtspWarning,
                      stacklevel=3)
        return None


#: The continuous spectrum is fitted to at most this many master-curve points (evenly by rank
#: of reduced frequency): its regularisation scan solves one problem per trial strength.
MAX_SPECTRUM_POINTS = 400


def _fit_spectrum(campaign, shifts, reference_temperature_K):
    """H(τ) of the master curve (frequency data with E' and E''), or None with a warning."""
    from .spectrum import fit_relaxation_spectrum

    if campaign.domain != "frequency" or not {"storage_modulus_Pa", "loss_modulus_Pa"} <= set(
            campaign.quantities):
        warnings.warn("the continuous relaxation spectrum needs frequency data with E' and E''; "
                      "it was not fitted", TtspWarning, stacklevel=3)
        return None
    used = _fit_points(shifts.shifted_frame(campaign), "reduced_frequency_rad_s",
                       ["storage_modulus_Pa", "loss_modulus_Pa"], MAX_SPECTRUM_POINTS)
    try:
        return fit_relaxation_spectrum(used["reduced_frequency_rad_s"].to_numpy(),
                                       used["storage_modulus_Pa"].to_numpy(),
                                       used["loss_modulus_Pa"].to_numpy(),
                                       modulus_kind=campaign.modulus_kind,
                                       reference_temperature_K=reference_temperature_K)
    except (DataError, FitError) as exc:   # an extra output must not sink a good build
        warnings.warn(f"the continuous relaxation spectrum could not be fitted: {exc}",
                      TtspWarning, stacklevel=3)
        return None


_NOT_FOR_THE_LAW = ("low-information", "bridged")

#: a law whose reduced chi-square with the shift covariance exceeds this misses the shifts by
#: far more than their noise (on average by more than about three standard errors)
LACK_OF_FIT_REDUCED_CHI_SQUARE = 10.0


def _refuse_if_nothing_placed(campaign: Campaign, shifts) -> None:
    """A DataError when the data place no isotherm: every shift but the reference's is
    poorly determined (flat curves, or overlaps too thin), so the shift factors, the law and
    everything after them would be numbers without information (flat E' and E'' got shifts
    of +12 to -12 decades before this)."""
    flags = [set(f) for f in shifts.flags]
    free = [f for f in flags if not {"reference", "fixed"} & f]
    if len(free) < 2 or not all("low-information" in f for f in free):
        return
    names = " and ".join(campaign.symbol(q) for q in shifts.quantities_used)
    where = f"{campaign.source}: " if campaign.source else ""
    raise DataError(f"{where}no isotherm can be placed on the master curve: {names} barely "
                    f"change with {campaign.x_name.split('_')[0]} in any isotherm (or neighbours "
                    f"overlap too little), so no horizontal shift is determined; superposition "
                    f"needs curves that change across each isotherm")


def _fit_law(shifts, t_ref_K: float, model: str, fixed):
    """The build's shift law: generalised least squares with the shifts' covariance, else
    each shift weighed by its stderr.

    The covariance describes the noise of the shifts, correlated along the chain of overlaps;
    fitting with it lets the law average out a common drift (on the benchmark campaigns the
    worst law error fell from 0.12 to 0.08 decade). It is used where it describes the misfit:
    all shifts used are well determined and the law fits them about as well as their noise
    allows. The estimate does not change when the covariance is scaled, and its scale is known
    only roughly (the stderr err by tens of percent), so a reduced chi-square of 2 or 3 is no
    reason to drop it; above LACK_OF_FIT_REDUCED_CHI_SQUARE (real binders that are not quite
    thermorheologically simple give reduced chi-squares in the hundreds) the misfit is the
    material's, not the chain's noise, and the law is fitted to each shift weighed by its
    stderr instead, which stays closer to the shifts themselves; a note and a
    FitQualityWarning say so. Not when the reference lies outside the measured range:
    its gauge is extrapolated, which moves every shift by the same unknown amount; that inflates
    the chi-square, and only the covariance fit (which leaves the gauge direction out) is immune
    to it. A shift the data do not determine reports a stderr up to 100 decades; when such rows
    must join the law (fewer than three others), it counts with its stderr capped at
    USED_STDERR_CAP.
    """
    from .laws import fit_shift_law
    from .shifting import USED_STDERR_CAP

    use, determined = _law_rows(shifts)
    args = (shifts.temperature_K[use], shifts.log10_aT[use])
    kwargs = {"reference_temperature_K": t_ref_K, "model": model, "fixed": fixed,
              "stderr": np.minimum(shifts.log10_aT_stderr[use], USED_STDERR_CAP)}
    cov = shifts.log10_aT_covariance
    if not determined or cov is None:
        return fit_shift_law(*args, **kwargs)
    temps = shifts.temperature_K
    extrapolated = not temps.min() - REFERENCE_SNAP_K <= t_ref_K <= temps.max() + REFERENCE_SNAP_K
    try:
        fit = fit_shift_law(*args, covariance=cov[np.ix_(use, use)], **kwargs)
    except FitError as exc:
        note = (f"the shift law could not be fitted with the covariance of the shift factors "
                f"({exc}); it was fitted with each shift weighted by its stderr")
    else:
        if fit.reduced_chi_square <= LACK_OF_FIT_REDUCED_CHI_SQUARE or extrapolated:
            return fit
        note = (f"with the covariance of the shift factors the best law ({fit.law.model}) "
                f"missed them by far more than their noise (reduced chi-square "
                f"{fit.reduced_chi_square:.3g}, above {LACK_OF_FIT_REDUCED_CHI_SQUARE:g}); the "
                f"law was fitted with each shift weighted by its stderr instead")
    warnings.warn(note, FitQualityWarning, stacklevel=3)
    fit = fit_shift_law(*args, **kwargs)
    return replace(fit, notes=fit.notes + (note,))


def _law_rows(shifts) -> tuple[np.ndarray, bool]:
    """Which shift factors the law is fitted to, and whether all of them are well determined.

    All but the poorly determined ones (flagged low-information on a plateau, or bridged
    across a gap by a law already), unless that would leave fewer than three. Those left out
    are named in a warning; the law's valid range then covers only the temperatures it was
    fitted to (common practice, no source)."""
    flagged = np.array([any(f.startswith(_NOT_FOR_THE_LAW) for f in flags) for flags in shifts.flags])
    if flagged.any() and (~flagged).sum() >= 3:
        names = ", ".join(f"{t - 273.15:g} °C" for t in shifts.temperature_K[flagged])
        warnings.warn(f"the shift law was fitted without the poorly determined shift factors at "
                      f"{names} (low-information or bridged)", TtspWarning, stacklevel=3)
        return ~flagged, True
    return np.ones(len(shifts.temperature_K), dtype=bool), not flagged.any()


def _with_series(prony_fit, series):
    return replace(prony_fit, series=series)


def _flag_disagreements(shifts, checks):
    """The shifts with ``"functions-disagree"`` in the flags of the isotherms that the
    function_agreement check names (shifts of E' alone and E'' alone differ there)."""
    agreement = next((c for c in checks if c.name == "function_agreement"), None)
    named = disagreeing_temperatures_K(agreement)
    if not named:
        return shifts
    temps = np.asarray(shifts.temperature_K, dtype=float)
    flags = [tuple(f) for f in shifts.flags]
    for t in named:
        k = int(np.argmin(np.abs(temps - t)))
        if abs(temps[k] - t) < 1e-6 * max(1.0, t) and "functions-disagree" not in flags[k]:
            flags[k] = flags[k] + ("functions-disagree",)
    return replace(shifts, flags=tuple(flags))


def check(campaign: Campaign, **option_values) -> tuple:
    """Run a build and return only its checks (each with status, value, threshold, message)."""
    return build(campaign, **option_values).checks


def predict(model, quantity: str, temperature_C, *, time_s=None, frequency_Hz=None, band=None):
    """Evaluate a material function at a temperature (°C) from a build result or a model.

    ``model`` is a :class:`BuildResult`, a :class:`~ttsp.model.ViscoelasticModel`, or the dict
    read from a ``summary.json``. Returns a tidy DataFrame with unit-suffixed columns; with
    ``band=LEVEL`` (e.g. 0.95) also the interval columns of :func:`band_columns`
    (:mod:`ttsp.bands`), and the level in ``frame.attrs["band_level"]``.
    """
    import pandas as pd

    from .model import QUANTITY_COLUMNS, ViscoelasticModel

    if isinstance(model, BuildResult):
        model = model.model
    elif isinstance(model, dict):
        model = ViscoelasticModel.from_summary(model)
    values = model.evaluate(quantity, celsius_to_kelvin(temperature_C), time_s=time_s,
                            frequency_Hz=frequency_Hz, band=band)
    banded = None
    if band is not None:
        banded, values = values, values.value
    x_name, x = ("time_s", time_s) if time_s is not None else ("frequency_Hz", frequency_Hz)
    t = np.broadcast_to(np.asarray(temperature_C, dtype=float), np.shape(values))
    frame = pd.DataFrame({"temperature_C": t.ravel(),
                          x_name: np.broadcast_to(np.asarray(x, dtype=float),
                                                  np.shape(values)).ravel(),
                          QUANTITY_COLUMNS[quantity]: np.ravel(values)})
    if banded is not None:
        low, high = band_columns(quantity)
        frame[low] = np.ravel(np.broadcast_to(banded.low, np.shape(values)))
        frame[high] = np.ravel(np.broadcast_to(banded.high, np.shape(values)))
        frame.attrs["band_level"] = banded.level
    return frame
