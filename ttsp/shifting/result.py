"""The result of a shift fit: :class:`ShiftResult` (shift factors, their uncertainties, flags).

The result evaluates and exports itself: the shift table (:meth:`ShiftResult.to_frame`), the
JSON summary (:meth:`ShiftResult.to_dict`, whose ``shift_factors`` list is the output
contract; :meth:`ShiftResult.from_dict` reads it back), every point of the campaign reduced to
the reference temperature (:meth:`ShiftResult.shifted_frame`) and an HTML table for notebooks.
It keeps the result contract of :mod:`ttsp.result_contract`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from .._validation import bad_value
from ..data import QUANTITIES, Campaign
from ..exceptions import DataError
from ..result_contract import ResultContract, none_as_nan, stderr_or_nan
from ..units import celsius_to_kelvin, kelvin_to_celsius

__all__ = ["ShiftResult", "STDERR_METHOD"]

#: how the stderr are computed (summary.json ``shifting.stderr_method``)
STDERR_METHOD = ("inverse Gauss-Newton curvature times Huber's variance factor, inflated by "
                 "(1 + rho)/(1 - rho) for the lag-one correlation rho of the residuals along "
                 "each isotherm (an AR(1) effective number of points; 1 when uncorrelated)")


def _num(v):
    v = float(v)
    return v if np.isfinite(v) else None


@dataclass(frozen=True)
class ShiftResult(ResultContract):
    """Shift factors of a campaign, their uncertainties and how well the isotherms overlap.

    Attributes
    ----------
    reference_temperature_K : float
        Where log10 a_T = 0 (and log10 b_T = 0), in K.
    temperature_K : array
        Isotherm temperatures, ascending, in K.
    log10_aT, log10_aT_stderr : array
        Horizontal shift (decades; > 0 below the reference) and its standard error. The
        stderr is 0 for the measured reference isotherm and NaN for a user-fixed shift.
    log10_bT, log10_bT_stderr : array
        Vertical shift b_T = T ρ/(T_ref ρ_ref) (decades); zeros when ``vertical_mode`` is
        ``"none"``. Reduced modulus = E/b_T, reduced compliance = D·b_T.
    overlap_quality : array
        Per isotherm: rms misfit, in decades of log10 value, of its points (outliers left out)
        against the master curve, counting only the points whose reduced abscissa lies within
        the range of a neighbouring isotherm, i.e. where it overlaps. Smaller is better; the
        noise of the data (``residual_scale_log10``) is the floor. NaN where nothing overlaps.
    flags : tuple of tuple of str
        Per isotherm: ``"reference"``, ``"fixed"``, ``"bridged"`` (placed by a fitted shift law
        across a gap), ``"gap-below"`` / ``"gap-above"`` (no overlap with that neighbour),
        ``"low-information"`` (the shift is poorly determined: stderr above the threshold or
        data on a plateau), ``"outliers:N"`` (N points flagged); a build adds
        ``"functions-disagree"`` where the function_agreement check finds the shifts of E'
        alone and E'' alone apart (:mod:`ttsp.checks.function_agreement`).
    outlier_mask : tuple of bool arrays
        Per isotherm, per point (in the campaign's point order): True where any function's
        residual exceeds ``outlier_threshold`` robust noise scales. Flagged, never deleted.
    quantities_used : tuple of str
        The functions the shifts were fitted on.
    vertical_mode : str
        ``"none"``, ``"density"`` or ``"fit"``.
    method : str
        A one-line description of the estimator.
    objective : float
        Final value of the robust penalised objective (in squared noise scales).
    rms_residual : float
        rms residual of all non-outlier points against the master curves, decades.
    residual_scale_log10 : mapping
        Robust noise scale of each function, decades.
    notes : tuple of str
        Everything the caller should know (also emitted as Python warnings); ``warnings`` is
        the same tuple under its former name.
    log10_aT_covariance : array
        Covariance matrix of ``log10_aT`` (decades²) from the same curvature as the stderr, in
        the reference's gauge; with ``fixed_log10_aT`` the fixed shifts are the gauge and their
        rows and columns are zero. Shifts found together along a chain of overlaps are
        correlated; a shift law fitted with this matrix (``fit_shift_law(covariance=...)``)
        averages out their common drift. The low-information floor of the stderr is not in it.
    residual_correlation, correlation_inflation : float
        Pooled lag-one correlation of the fit's residuals along each isotherm, and the factor
        (1 + ρ)/(1 − ρ) ≥ 1 by which the covariance (and the stderr²) was inflated because
        correlated residuals carry fewer independent points than they number
        (:mod:`ttsp._residual_correlation`); the largest over connected groups.

    The result keeps the result contract (:mod:`ttsp.result_contract`): ``params`` and
    ``stderr`` are the horizontal shifts by isotherm, ``success`` is ``converged``;
    ``to_frame`` is the shift table (one row per isotherm, so per parameter).
    """

    reference_temperature_K: float
    temperature_K: np.ndarray
    log10_aT: np.ndarray
    log10_aT_stderr: np.ndarray
    log10_bT: np.ndarray
    log10_bT_stderr: np.ndarray
    overlap_quality: np.ndarray
    flags: tuple
    outlier_mask: tuple
    quantities_used: tuple
    vertical_mode: str
    method: str
    objective: float
    rms_residual: float
    domain: str = "frequency"
    residual_scale_log10: Mapping[str, float] = field(default_factory=dict)
    expansion_coefficient_per_K: float | None = None
    converged: bool = True
    iterations: int = 0
    notes: tuple = ()
    log10_aT_covariance: np.ndarray | None = None
    residual_correlation: float = float("nan")
    correlation_inflation: float = 1.0
    #: per fitted group: its temperatures (K), its shifts in the group's own gauge and the
    #: fitted spectrum (None for splines); where a related fit (a cross-validation fold)
    #: starts its curve
    fitted_curves: tuple = field(default=(), repr=False, compare=False)

    # ---- views -------------------------------------------------------------------------------
    @property
    def reference_temperature_C(self) -> float:
        return float(kelvin_to_celsius(self.reference_temperature_K))

    @property
    def temperature_C(self) -> np.ndarray:
        return kelvin_to_celsius(self.temperature_K)

    @property
    def params(self) -> dict:
        """``{"log10_aT[<T> °C]": value}`` as plain floats."""
        return {f"log10_aT[{t:g} °C]": float(v)
                for t, v in zip(np.round(self.temperature_C, 6), self.log10_aT, strict=True)}

    @property
    def stderr(self) -> dict:
        """``{"log10_aT[<T> °C]": stderr}`` as plain floats (NaN for fixed shifts)."""
        return {f"log10_aT[{t:g} °C]": float(v)
                for t, v in zip(np.round(self.temperature_C, 6), self.log10_aT_stderr, strict=True)}

    @property
    def warnings(self) -> tuple:
        """The notes under their former name (read-only)."""
        return self.notes

    @property
    def success(self) -> bool:
        """Whether the shift fit converged."""
        return bool(self.converged)

    @property
    def message(self) -> str:
        """One line on how the fit went."""
        how = "converged" if self.converged else "did not converge"
        return f"{how} after {self.iterations} iterations, {len(self)} isotherms"

    def __len__(self) -> int:
        return int(self.temperature_K.size)

    # ---- export ------------------------------------------------------------------------------
    def to_frame(self):
        """The shift table, one row per isotherm (DataFrame)."""
        import pandas as pd

        return pd.DataFrame({
            "temperature_K": self.temperature_K,
            "temperature_C": self.temperature_C,
            "log10_aT": self.log10_aT,
            "log10_aT_stderr": self.log10_aT_stderr,
            "log10_bT": self.log10_bT,
            "log10_bT_stderr": self.log10_bT_stderr,
            "overlap_quality": self.overlap_quality,
            "n_outliers": [int(m.sum()) for m in self.outlier_mask],
            "flags": [";".join(f) for f in self.flags],
        })

    def to_dict(self) -> dict:
        """JSON-ready summary; ``shift_factors`` is the list of the output contract."""
        rows = [{"temperature_C": float(tc), "log10_aT": float(a), "log10_aT_stderr": _num(e),
                 "log10_bT": float(b), "overlap_quality": _num(q), "flags": list(f)}
                for tc, a, e, b, q, f in zip(self.temperature_C, self.log10_aT,
                                            self.log10_aT_stderr, self.log10_bT,
                                            self.overlap_quality, self.flags, strict=True)]
        return {"reference_temperature_C": self.reference_temperature_C,
                "domain": self.domain,
                "quantities_used": list(self.quantities_used),
                "vertical_mode": self.vertical_mode,
                "vertical_shift_convention": "reduced modulus = E / b_T, reduced compliance = "
                                             "D * b_T, b_T = T rho / (T_ref rho_ref)",
                "expansion_coefficient_per_K": (None if self.expansion_coefficient_per_K is None
                                                else float(self.expansion_coefficient_per_K)),
                "method": self.method, "objective": float(self.objective),
                "rms_residual": float(self.rms_residual),
                "residual_scale_log10": {k: float(v) for k, v in self.residual_scale_log10.items()},
                "converged": bool(self.converged), "warnings": list(self.notes),
                "stderr_method": STDERR_METHOD,
                "residual_lag1_correlation": _num(self.residual_correlation),
                "stderr_correlation_inflation": float(self.correlation_inflation),
                "shift_factors": rows}

    def shifted_frame(self, campaign: Campaign, functions=None):
        """Every point of ``campaign`` with its reduced abscissa and shifted values (DataFrame).

        Columns: ``isotherm``, ``temperature_K``, ``temperature_C``, the measured abscissa
        (``frequency_rad_s`` or ``time_s``), the reduced one (``reduced_frequency_rad_s`` =
        ω·a_T or ``reduced_time_s`` = t/a_T), ``log10_aT``, ``log10_bT``, every measured
        function as a *reduced* value (moduli divided by b_T, compliances multiplied by b_T,
        tan δ and δ unchanged; with b_T = 1 these are the measured values), ``source_row`` and
        ``outlier``. No point is dropped. ``functions`` (names): only those of the measured
        functions (a fit that needs two of them need not hold every column of a dense campaign).
        """
        import pandas as pd

        if not isinstance(campaign, Campaign):
            raise bad_value("campaign", "a Campaign", type(campaign).__name__)
        if (len(campaign) != len(self)
                or not np.allclose(campaign.temperatures_K, self.temperature_K, atol=1e-6)
                or any(i.n_points != m.size for i, m in zip(campaign.isotherms,
                                                             self.outlier_mask, strict=True))):
            raise DataError("shifted_frame: the campaign does not match these shift factors "
                            f"(it has {len(campaign)} isotherms, the shifts cover {len(self)}; "
                            "temperatures and point counts must agree)")
        names = [q for q in QUANTITIES if any(q in i.values for i in campaign.isotherms)
                 and (functions is None or q in functions)]
        xr_name = "reduced_" + campaign.x_name
        isos = campaign.isotherms
        counts = np.array([iso.n_points for iso in isos])

        def per_point(values):
            return np.repeat(np.asarray(values), counts)

        x = np.concatenate([iso.x for iso in isos])
        a_T = per_point(10.0 ** self.log10_aT)
        b_T = per_point(10.0 ** self.log10_bT)
        cols = {"isotherm": per_point(np.arange(len(isos))),
                "temperature_K": per_point([iso.temperature_K for iso in isos]),
                "temperature_C": per_point([iso.temperature_C for iso in isos]),
                campaign.x_name: x,
                xr_name: x * a_T if campaign.domain == "frequency" else x / a_T,
                "log10_aT": per_point(self.log10_aT), "log10_bT": per_point(self.log10_bT)}
        for q in names:
            v = np.concatenate([np.asarray(iso.values.get(q, np.full(iso.n_points, np.nan)),
                                           float) for iso in isos])
            kind = QUANTITIES[q].unit_kind
            cols[q] = v / b_T if kind == "modulus" else (v * b_T if kind == "compliance" else v)
        cols["source_row"] = np.concatenate([iso.source_rows for iso in isos])
        cols["outlier"] = np.concatenate([np.asarray(m, bool) for m in self.outlier_mask])
        return pd.DataFrame(cols)

    @classmethod
    def from_dict(cls, data: Mapping) -> ShiftResult:
        """Rebuild the result from :meth:`to_dict` output (or a summary's ``shifting`` section
        with its ``shift_factors`` put back).

        Temperatures, shifts, stderr (None read as NaN), overlap, flags and the fit's figures
        come back; not in the dict: the vertical shifts' stderr (NaN), the outlier masks
        (empty; the flags still count the outliers), the covariance (None) and the iterations.
        """
        rows = list(data["shift_factors"])

        def column(key: str) -> np.ndarray:
            return np.array([stderr_or_nan(r.get(key)) for r in rows])

        t_C = column("temperature_C")
        alpha = data.get("expansion_coefficient_per_K")
        return cls(
            reference_temperature_K=float(celsius_to_kelvin(data["reference_temperature_C"])),
            temperature_K=np.asarray(celsius_to_kelvin(t_C), dtype=float),
            log10_aT=column("log10_aT"), log10_aT_stderr=column("log10_aT_stderr"),
            log10_bT=column("log10_bT"), log10_bT_stderr=np.full(len(rows), np.nan),
            overlap_quality=column("overlap_quality"),
            flags=tuple(tuple(r.get("flags") or ()) for r in rows),
            outlier_mask=tuple(np.zeros(0, bool) for _ in rows),
            quantities_used=tuple(data.get("quantities_used") or ()),
            vertical_mode=str(data.get("vertical_mode", "none")),
            method=str(data.get("method", "")), objective=stderr_or_nan(data.get("objective")),
            rms_residual=stderr_or_nan(data.get("rms_residual")),
            domain=str(data.get("domain", "frequency")),
            residual_scale_log10=none_as_nan(data.get("residual_scale_log10")),
            expansion_coefficient_per_K=None if alpha is None else float(alpha),
            converged=bool(data.get("converged", True)),
            notes=tuple(data.get("notes", data.get("warnings")) or ()),
            residual_correlation=stderr_or_nan(data.get("residual_lag1_correlation")),
            correlation_inflation=float(data.get("stderr_correlation_inflation", 1.0)))

    def _html_caption(self) -> str:
        return "Shift factors"

    def _html_rows(self) -> list[tuple[str, str]]:
        rows = [("reference temperature", f"{self.reference_temperature_C:.2f} °C"),
                ("isotherms", f"{len(self)}, shifted on {', '.join(self.quantities_used)}"),
                ("vertical shift", self.vertical_mode),
                ("rms residual", f"{self.rms_residual:.4f} decades")]
        vertical = self.vertical_mode != "none"
        rows += [(f"{t:g} °C", ", ".join(([f"log10 bT {b:.4f}"] if vertical else []) + list(f)))
                 for t, b, f in zip(np.round(self.temperature_C, 6), self.log10_bT, self.flags, strict=True)
                 if f or vertical]
        return rows
