"""Everything a build produced, as one frozen result that evaluates and exports itself (layer 3).

No file I/O: the tables are DataFrames and the summary a dict; :mod:`ttsp.io.writers` writes
them. The result keeps the result contract of :mod:`ttsp.result_contract`.
"""

from __future__ import annotations

import hashlib
import math
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from . import __version__
from ._arrays import outside_log_range
from .bands import band_columns
from .build_options import SCHEMA_VERSION, BuildOptions
from .checks.result import CheckResult
from .crossval import CrossValidation
from .data import Campaign
from .exceptions import ExtrapolationWarning
from .laws.results import ShiftLawFit
from .model import QUANTITY_COLUMNS
from .result_contract import ResultContract
from .selection import MATCH_K
from .shifting.result import ShiftResult
from .units import celsius_to_kelvin, kelvin_to_celsius

if TYPE_CHECKING:  # the parts' types, for annotations only (they import this layer's peers)
    from .crossval import CrossValidation
    from .laws.results import ShiftLawFit
    from .master_choice import MasterCurveChoice
    from .model import ViscoelasticModel
    from .prony.fit_result import PronyFit
    from .shifting.result import ShiftResult
    from .spectrum import RelaxationSpectrum
    from .transition import GlassTransitionEstimate
    from .vertical_choice import VerticalChoice


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
class BuildResult(ResultContract):
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
    notes : tuple of str
        Every warning of the build, each once (``warnings`` is the same tuple under its
        former name).
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

    The result contract (:mod:`ttsp.result_contract`): ``params`` are the reference
    temperature (stderr 0: chosen, not estimated) and the shift law's constants
    (``shift_law.<name>``, with their stderr); ``success`` is False when a check failed;
    ``to_dict`` is :meth:`summary`; ``from_dict`` reads a summary back (see there).
    """

    campaign: Campaign
    options: BuildOptions
    shifts: ShiftResult
    law_fit: ShiftLawFit
    prony_fit: PronyFit
    model: ViscoelasticModel
    checks: tuple
    notes: tuple
    input_sha256: str
    input_files: tuple = ()
    glass_transition: GlassTransitionEstimate | None = None
    relaxation_spectrum: RelaxationSpectrum | None = None
    master_curve: MasterCurveChoice | None = None
    cross_validation: CrossValidation | None = None
    vertical_choice: VerticalChoice | None = None

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
    def warnings(self) -> tuple:
        """The notes under their former name (read-only)."""
        return self.notes

    # ---- the result contract -------------------------------------------------------------------
    @property
    def params(self) -> dict:
        """``reference_temperature_C`` and the shift law's constants as ``shift_law.<name>``."""
        return {"reference_temperature_C": self.reference_temperature_C,
                **{f"shift_law.{k}": float(v) for k, v in self.law_fit.params.items()}}

    @property
    def stderr(self) -> dict:
        """0 for the reference temperature (chosen), the law's stderr for its constants."""
        return {"reference_temperature_C": 0.0,
                **{f"shift_law.{k}": float(v) for k, v in self.law_fit.stderr.items()}}

    @property
    def success(self) -> bool:
        """False when a check failed."""
        return not self.failed_checks

    @property
    def message(self) -> str:
        """The count of checks by status."""
        return "checks: " + ", ".join(f"{sum(c.status == s for c in self.checks)} {s}"
                                      for s in ("pass", "warn", "fail"))

    def to_dict(self) -> dict:
        """The content of ``summary.json`` (:meth:`summary`, without a creation time)."""
        return self.summary()

    @classmethod
    def from_dict(cls, data: dict) -> BuildResult:
        """Read a summary (:meth:`summary`, ``summary.json``) back as far as it goes.

        The options, shifts, law fit, checks, cross-validation, notes and input hash come back
        (each through its type's ``from_dict``); the campaign, the Prony fit, the model and the
        other parts are not in a summary and come back as None, so only the contract and the
        parts named here can be used.
        """
        cv = data.get("cross_validation")
        # a partial result: the parts a summary does not hold are None (typed as built)
        return cls(campaign=None, options=BuildOptions(**data["options"]),  # type: ignore[arg-type]
                   shifts=ShiftResult.from_dict({**data["shifting"],
                                                 "shift_factors": data["shift_factors"]}),
                   law_fit=ShiftLawFit.from_dict(data["shift_law"]),
                   prony_fit=None, model=None,  # type: ignore[arg-type]
                   checks=tuple(CheckResult.from_dict(c) for c in data["checks"]),
                   notes=tuple(data.get("warnings") or ()),
                   input_sha256=str(data.get("input_sha256", "")),
                   input_files=tuple(data.get("input_files") or ()),
                   cross_validation=None if cv is None else CrossValidation.from_dict(cv))

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
        # the half-width of its profile interval (ttsp.prony.nnls): data short of the plateau
        # leave the equilibrium modulus poorly known, which the number alone does not say
        e_inf_stderr = float(dict(self.prony_fit.stderr).get("equilibrium_modulus_Pa", math.nan))
        prony["equilibrium_modulus_stderr_Pa"] = (e_inf_stderr if math.isfinite(e_inf_stderr)
                                                  else None)
        ensemble = getattr(self.model, "ensemble", None)
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
            "bands": ensemble.to_dict() if ensemble is not None else None,
            "checks": [c.to_dict() for c in self.checks],
            "warnings": list(self.notes),
        }

    def __repr__(self) -> str:
        isotherms = "?" if self.campaign is None else len(self.campaign)
        terms = "no" if self.prony_fit is None else self.series.n_terms
        return (f"BuildResult({isotherms} isotherms, reference "
                f"{self.reference_temperature_C:.2f} °C, law {self.law_fit.law.model}, "
                f"{terms} Prony terms, {self.message})")

    def _html_caption(self) -> str:
        return "ttsp build"

    def _html_rows(self) -> list[tuple[str, str]]:
        rows = [("reference temperature", f"{self.reference_temperature_C:.2f} °C"),
                ("shift law", self.law_fit.law.model)]
        if self.campaign is not None:
            rows[:0] = [("source", str(self.campaign.source)),
                        ("isotherms", f"{len(self.campaign)} ({self.campaign.domain} domain, "
                                      f"{self.campaign.modulus_kind})")]
        if self.prony_fit is not None:
            lo, hi = self.series.valid_reduced_time_range_s
            rows.append(("Prony series", f"{self.series.n_terms} terms, rms "
                                         f"{self.prony_fit.rms_percent:.2f} %, valid reduced "
                                         f"time {lo:.3g} – {hi:.3g} s"))
        g = self.glass_transition
        if g is not None and g.loss_peak_from_model_K is not None:
            rows.append(("Tg (E'' peak at 1 Hz)", f"{g.loss_peak_from_model_K - 273.15:.1f} °C"))
        rows += [(f"check {c.name}", f"{c.status}: {c.message}") for c in self.checks]
        return rows
