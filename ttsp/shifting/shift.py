"""Automatic horizontal (and vertical) shift factors by one joint fit of all isotherms.

All isotherms are shifted at once onto a reference temperature in log–log coordinates, using
every measured function jointly (E' and E'' by default, or |E*| and δ, or tan δ alone, or E(t)
and/or D(t) in the time domain). The model for point j of the isotherm at temperature T_k and
function q is::

    log10 y_kj = F_q(log10 x_kj ± log10 a_T(T_k)) + v_q log10 b_T(T_k)

with ``+`` for frequency (reduced frequency ω·a_T) and ``−`` for time (reduced time t/a_T),
``v_q = +1`` for a modulus, ``−1`` for a compliance and ``0`` for tan δ or δ. The master
curves F_q come from one smooth relaxation spectrum shared by all functions (so E' and E''
stay Kramers–Kronig consistent), or, on request, from an independent penalised B-spline per
function (Eilers & Marx, Statistical Science 11:89, 1996). Curve and every shift are fitted
together (global simultaneous optimisation; Honerkamp & Weese, Rheol. Acta 32:57, 1993,
discuss this kind of estimate), so every overlap — not only that of neighbours — constrains
every shift, and errors do not add up along a chain of pairwise shifts. Pairwise overlap
shifts only provide the starting point. The loss is Huber's (Robust Statistics, 1981) on
residuals scaled by a per-function noise level estimated from the median absolute residual,
so an outlier is down-weighted and flagged but never deleted. :mod:`ttsp.shifting._joint_fit`
has the numerics, :mod:`ttsp.shifting._overlap` the pairwise shifts and the gap test,
:mod:`ttsp.shifting._bridge` the small shift law used to bridge gaps.

Conventions
-----------
* log10 a_T > 0 below the reference temperature (slower); a_T(T_ref) = 1.
* Vertical shift b_T = T·ρ(T)/(T_ref·ρ_ref) (Ferry, Viscoelastic Properties of Polymers,
  3rd ed., 1980, ch. 11) in ``"density"`` mode with ρ(T) = ρ_ref [1 − α_v (T − T_ref)]. The
  reduced modulus is E/b_T and the reduced compliance D·b_T; tan δ and δ are not shifted.
  ``"fit"`` mode fits a free log10 b_T per isotherm with the same convention.
* Reference temperature anywhere. When it is not a measured temperature, the fit is first done
  with the isotherm nearest to it held at zero, and then the gauge is fixed by subtracting
  log10 a_T interpolated at T_ref: the cubic in T through four consecutive measured
  temperatures around T_ref, two on each side where possible, when T_ref lies inside the
  measured range (Lagrange form; all isotherms when there are fewer than four), the straight
  line through the two nearest when it lies outside (with an
  :class:`~ttsp.exceptions.ExtrapolationWarning`). log10 a_T curves strongly near Tg: with
  isotherms 12 K apart a quadratic missed the real binders' shift at an unmeasured reference by
  0.03–0.07 decade, the cubic by 0.01–0.03, and for a reference midway between evenly spaced
  isotherms its weights (−1/16, 9/16, 9/16, −1/16) also pass on less noise.
  The same linear map is applied to the covariance, so the standard errors include the noise
  that the interpolation passes on (not its approximation error, which the cubic keeps small). A reference within 0.05 K of an isotherm is that isotherm.
* Standard errors: from the Gauss–Newton curvature of the joint penalised objective (the
  shift block of its inverse, i.e. with the master curve's own uncertainty included), times
  Huber's variance factor. They are 0 for the measured reference isotherm (exact by
  definition) and NaN for user-fixed shifts. For an isotherm flagged low-information the joint
  stderr mostly reflects the weak prior that keeps the fit stable (about 1 decade), not the
  data, so it is replaced by the larger data-only one, sqrt(variance factor / Σ w (slope/σ)²),
  capped at :data:`UNDETERMINED_STDERR` decades (a value that says "not determined").
* Gaps: neighbours whose ordinate ranges are disjoint for some function cannot overlap under
  any horizontal shift; neither can neighbours whose reduced ranges are still apart after the
  fit. By default that is an error naming both temperatures and the gap.
"""

from __future__ import annotations

import warnings as _warnings
from dataclasses import dataclass, field
from html import escape
from typing import Mapping, Sequence

import numpy as np

from ._bridge import fit_offset_law
from ._curve_models import MASTER_MODELS
from ._joint_fit import JointProblem, fit_joint
from .._noise import typical_log_noise
from ._overlap import ordinate_gap, pair_shift
from .._arrays import evenly_spaced_indices
from .._validation import bad_value, check_choice, check_finite, check_positive
from ..data import QUANTITIES, REFERENCE_SNAP_K, Campaign
from ..exceptions import DataError, ExtrapolationWarning, FitQualityWarning
from ..units import kelvin_to_celsius

__all__ = ["ShiftResult", "shift_isotherms", "default_reference_temperature_K",
           "VERTICAL_MODES", "GAP_MODES"]

VERTICAL_MODES = ("none", "density", "fit")
GAP_MODES = ("stop", "bridge")

#: how a function carries the vertical shift: log y = F + v·log10 b_T
VERTICAL_SIGN = {"storage_modulus_Pa": 1, "loss_modulus_Pa": 1, "complex_modulus_Pa": 1,
                 "relaxation_modulus_Pa": 1, "creep_compliance_1_per_Pa": -1,
                 "tan_delta": 0, "phase_angle_rad": 0}

_FIXED_MATCH_K = 0.5       # a fixed shift's temperature must be this close to an isotherm's
_MIN_SLOPE = 0.02          # decades per decade: below this an isotherm lies on a plateau
#: the stderr (decades) reported for a shift the data do not determine at all: wider than any
#: physical range of shift factors
UNDETERMINED_STDERR = 100.0
#: where an undetermined shift must still be used (a law through too few other shifts, the
#: abscissa noise of a check), its stderr counts as at most this many decades: the width of the
#: weak prior the joint fit puts on every shift
USED_STDERR_CAP = 1.0


def default_reference_temperature_K(campaign: Campaign) -> float:
    """The measured temperature nearest the median of the campaign's temperatures, in K.

    With an even number of isotherms the median falls midway between two of them; the lower
    one is returned (a documented, deterministic choice).
    """
    if not isinstance(campaign, Campaign) or len(campaign) == 0:
        raise bad_value("campaign", "a Campaign with at least one isotherm", campaign)
    t = campaign.temperatures_K
    med = float(np.median(t))
    return float(t[int(np.argmin(np.abs(t - med) + 1e-12 * (t > med)))])


def _ro(a, dtype=float):
    arr = np.array(a, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


def _num(v):
    v = float(v)
    return v if np.isfinite(v) else None


@dataclass(frozen=True)
class ShiftResult:
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
    warnings : tuple of str
        Everything the caller should know (also emitted as Python warnings).
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
    warnings: tuple = ()
    log10_aT_covariance: np.ndarray | None = None
    residual_correlation: float = float("nan")
    correlation_inflation: float = 1.0

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
                for t, v in zip(np.round(self.temperature_C, 6), self.log10_aT)}

    @property
    def stderr(self) -> dict:
        """``{"log10_aT[<T> °C]": stderr}`` as plain floats (NaN for fixed shifts)."""
        return {f"log10_aT[{t:g} °C]": float(v)
                for t, v in zip(np.round(self.temperature_C, 6), self.log10_aT_stderr)}

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
                                            self.overlap_quality, self.flags)]
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
                "converged": bool(self.converged), "warnings": list(self.warnings),
                "stderr_method": STDERR_METHOD,
                "residual_lag1_correlation": _num(self.residual_correlation),
                "stderr_correlation_inflation": float(self.correlation_inflation),
                "shift_factors": rows}

    def shifted_frame(self, campaign: Campaign):
        """Every point of ``campaign`` with its reduced abscissa and shifted values (DataFrame).

        Columns: ``isotherm``, ``temperature_K``, ``temperature_C``, the measured abscissa
        (``frequency_rad_s`` or ``time_s``), the reduced one (``reduced_frequency_rad_s`` =
        ω·a_T or ``reduced_time_s`` = t/a_T), ``log10_aT``, ``log10_bT``, every measured
        function as a *reduced* value (moduli divided by b_T, compliances multiplied by b_T,
        tan δ and δ unchanged; with b_T = 1 these are the measured values), ``source_row`` and
        ``outlier``. No point is dropped.
        """
        import pandas as pd

        if not isinstance(campaign, Campaign):
            raise bad_value("campaign", "a Campaign", type(campaign).__name__)
        if (len(campaign) != len(self)
                or not np.allclose(campaign.temperatures_K, self.temperature_K, atol=1e-6)
                or any(i.n_points != m.size for i, m in zip(campaign.isotherms,
                                                             self.outlier_mask))):
            raise DataError("shifted_frame: the campaign does not match these shift factors "
                            f"(it has {len(campaign)} isotherms, the shifts cover {len(self)}; "
                            "temperatures and point counts must agree)")
        names = [q for q in QUANTITIES if any(q in i.values for i in campaign.isotherms)]
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

    def _repr_html_(self) -> str:
        head = (f"<b>Shift factors</b>: T<sub>ref</sub> = {self.reference_temperature_C:.2f} °C, "
                f"{len(self)} isotherms, on {', '.join(self.quantities_used)}; vertical "
                f"{self.vertical_mode}; rms residual {self.rms_residual:.4f} decades")
        rows = "".join(
            f"<tr><td>{tc:.2f}</td><td>{a:.4f}</td><td>{e:.4f}</td><td>{b:.4f}</td>"
            f"<td>{q:.4f}</td><td>{escape(', '.join(f))}</td></tr>"
            for tc, a, e, b, q, f in zip(self.temperature_C, self.log10_aT, self.log10_aT_stderr,
                                         self.log10_bT, self.overlap_quality, self.flags))
        warn = "".join(f"<li>{escape(w)}</li>" for w in self.warnings)
        return (f"<div>{head}<table><tr><th>T (°C)</th><th>log10 a<sub>T</sub></th>"
                f"<th>stderr</th><th>log10 b<sub>T</sub></th><th>overlap rms</th><th>flags</th>"
                f"</tr>{rows}</table>{'<ul>' + warn + '</ul>' if warn else ''}</div>")


# ---- input handling ---------------------------------------------------------------------------
def _resolve_quantities(campaign: Campaign, quantities) -> tuple:
    derived = campaign.with_derived()
    available = derived.quantities
    if isinstance(quantities, str) and quantities == "auto":
        if campaign.domain == "frequency":
            for pair in (("storage_modulus_Pa", "loss_modulus_Pa"),
                         ("complex_modulus_Pa", "phase_angle_rad")):
                if set(pair) <= set(available):
                    return pair, derived
            chosen = tuple(q for q in available if QUANTITIES[q].domain == "frequency")[:1]
        else:
            chosen = tuple(q for q in ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa")
                           if q in available)
        if not chosen:
            raise DataError("no material function is measured in every isotherm; found "
                            f"{', '.join(campaign.quantities) or 'none'}")
        return chosen, derived
    if isinstance(quantities, str):
        quantities = (quantities,)
    try:
        chosen = tuple(quantities)
    except TypeError:
        raise bad_value("quantities", "'auto', 'tan_delta' or a sequence of function names",
                        quantities) from None
    if not chosen or len(set(chosen)) != len(chosen):
        raise bad_value("quantities", "a non-empty sequence of distinct function names", quantities)
    for q in chosen:
        if q not in QUANTITIES or QUANTITIES[q].domain != campaign.domain:
            names = [n for n in QUANTITIES if QUANTITIES[n].domain == campaign.domain]
            raise bad_value("quantities", f"'auto' or names among {', '.join(names)}", q)
        if q not in available:
            raise DataError(f"quantities: {q} is not measured (nor derivable) in every isotherm; "
                            f"available: {', '.join(available) or 'none'}")
    return chosen, derived


def _match_fixed(fixed, temps_K) -> dict:
    if fixed is None:
        return {}
    if not isinstance(fixed, Mapping):
        raise bad_value("fixed_log10_aT", "a mapping of temperature_K to log10 a_T", fixed)
    out = {}
    for t, v in fixed.items():
        t = check_positive("fixed_log10_aT temperature_K", t)
        v = check_finite(f"fixed_log10_aT[{t:g}]", v)
        k = int(np.argmin(np.abs(temps_K - t)))
        if abs(temps_K[k] - t) > _FIXED_MATCH_K:
            raise bad_value("fixed_log10_aT temperature_K",
                            f"within {_FIXED_MATCH_K} K of a measured isotherm "
                            f"({', '.join(f'{x:.2f}' for x in temps_K)} K)", t)
        out[k] = v
    return out


def _gauge_weights(temps_K, t_ref):
    """Weights w with w·f ≈ f(T_ref): inside the range, the Lagrange cubic through the four
    consecutive temperatures around T_ref (two on each side where there are two, else the
    four nearest consecutive ones; all of them when fewer); outside, the straight line
    through the two nearest. Four nearest by distance alone could put three on one side of a
    cluster, where the cubic extrapolates with weights of 5 and more."""
    n = temps_K.size
    w = np.zeros(n)
    inside = temps_K.min() <= t_ref <= temps_K.max()
    if inside:
        order = np.argsort(temps_K, kind="stable")
        k = int(np.clip(np.searchsorted(temps_K[order], t_ref) - 1, 0, n - 2))  # lower neighbour
        lo, hi = max(0, k - 1), min(n, k + 3)
        lo, hi = max(0, min(lo, hi - 4)), min(n, max(hi, lo + 4))
        idx = order[lo:hi]
    else:
        idx = np.argsort(np.abs(temps_K - t_ref), kind="stable")[:2]
    for a in idx:
        others = [b for b in idx if b != a]
        w[a] = np.prod([(t_ref - temps_K[b]) / (temps_K[a] - temps_K[b]) for b in others])
    return w, inside


# ---- the fit ----------------------------------------------------------------------------------
#: Isotherms with more points than this are thinned for the joint fit (evenly by rank along x):
#: a few dozen points per isotherm determine its shift to the noise limit, while the cost of the
#: fit grows with the number of points (a 500-isotherm, 1e6-point campaign would not fit in
#: memory). The standard errors then describe the points used, so they err on the safe side.
MAX_FIT_POINTS_PER_ISOTHERM = 60
#: how the stderr are computed (summary.json ``shifting.stderr_method``)
STDERR_METHOD = ("inverse Gauss-Newton curvature times Huber's variance factor, inflated by "
                 "(1 + rho)/(1 - rho) for the lag-one correlation rho of the residuals along "
                 "each isotherm (an AR(1) effective number of points; 1 when uncorrelated)")
#: Points whose residual exceeds this many robust noise scales are flagged as outliers. The
#: scale is the median absolute residual about the fitted master curve, which the curve's own
#: freedom makes 5-20 % smaller than the noise; at 4 scales a point 2.5 % off in 1 % noise was
#: flagged in 3 of 24 seeded campaigns and pure noise in 3 of 2136 points, at 5 scales in 1 of
#: 24 and 0 of 2136 (a 2.5-sigma deviation is not an outlier; common practice puts the line
#: at 3-5 scales). Points off by 0.4 decade in 2 % noise (about 45 scales) are flagged either way.
OUTLIER_THRESHOLD = 5.0
#: one function's point-to-point noise must be at least this many times another's before the
#: joint fit weighs them differently (see _fit_component)
NOISE_RATIO_TRUSTED = 3.0
#: No instrument sweeps more than this many decades of frequency or time in one isotherm; more
#: means a wrong unit or a corrupt column (and would overflow the master-curve model).
MAX_DECADES_PER_ISOTHERM = 30.0


def shift_isotherms(campaign: Campaign, reference_temperature_K: float | None = None, *,
                    quantities: str | Sequence[str] = "auto", vertical: str = "none",
                    expansion_coefficient_per_K: float | None = None,
                    fixed_log10_aT: Mapping[float, float] | None = None, gaps: str = "stop",
                    robust: bool = True, outlier_threshold: float = OUTLIER_THRESHOLD,
                    low_information_stderr: float = 0.05, master_curve: str = "auto",
                    smoothing: float | None = None,
                    start_from: ShiftResult | None = None) -> ShiftResult:
    """Find the shift factors of all isotherms of a campaign by one joint fit.

    Parameters
    ----------
    campaign : Campaign
        At least two isotherms. Isotherm order does not matter (the campaign sorts them).
    reference_temperature_K : float, optional
        Where log10 a_T = 0, in K; any value (see the module notes for a reference between
        isotherms). Default :func:`default_reference_temperature_K`.
    quantities : "auto", "tan_delta" or sequence of str
        Functions shifted jointly. ``"auto"``: E' and E'' (frequency; |E*| and δ if those are
        what was measured), E(t) and/or D(t) (time). ``"tan_delta"``: tan δ alone, which no
        vertical shift affects.
    vertical : {"none", "density", "fit"}
        ``"density"``: b_T = T ρ(T)/(T_ref ρ_ref), ρ(T) = ρ_ref [1 − α_v (T − T_ref)]
        (needs ``expansion_coefficient_per_K``). ``"fit"``: a free log10 b_T per isotherm, fitted
        jointly; needs at least two functions, one of which carries the vertical shift.
    expansion_coefficient_per_K : float, optional
        Volumetric thermal expansion coefficient α_v, in 1/K (about 6e-4 for rubbers).
    fixed_log10_aT : mapping of float to float, optional
        ``{temperature_K: log10 a_T}`` held fixed; the others are fitted around them (the fixed
        values then also fix the gauge, so log10 a_T(T_ref) is what they imply).
    gaps : {"stop", "bridge"}
        Neighbours that cannot overlap: ``"stop"`` raises a DataError naming them;
        ``"bridge"`` places the isotherms beyond a gap by a WLF or Arrhenius law fitted to the
        largest connected group (flag ``"bridged"``, stderr from the law's prediction).
    robust : bool
        Huber loss (threshold 1.5 noise scales); else plain least squares.
    outlier_threshold : float
        Points with a residual above this many robust noise scales are flagged as outliers.
    low_information_stderr : float
        Isotherms whose shift stderr exceeds this (decades), or whose data have a local slope
        below 0.02 decades per decade, are flagged ``"low-information"``.
    master_curve : {"auto", "spectrum", "spline"}
        The model of the master curve fitted together with the shifts. ``"spectrum"``: one
        smooth relaxation (or retardation) spectrum shared by all functions, so E' and E''
        (or |E*| and δ) stay Kramers–Kronig consistent; ``"spline"``: an independent penalised
        B-spline per function, no physics. ``"auto"``: the spectrum, unless both E(t) and D(t)
        are shifted together (then splines).
    smoothing : float, optional
        Weight λ of the roughness penalty λ ρ ∫ f^(d)(u)² du (ρ: points per decade); on the
        log-spectrum d = 2, default 0.05; on a spline d = 3, default 3. Larger is stiffer.
    start_from : ShiftResult, optional
        Shifts fitted earlier to these isotherms or to more of them (a fold of the
        cross-validation starts from the full build's): the joint fit's iterations start at
        them. The objective (its prior centred on the pairwise seeds) is unchanged, so the
        result is the same optimum to the solver's tolerance, in fewer iterations.

    Returns
    -------
    ShiftResult

    Raises
    ------
    DataError
        Bad options; a quantity that is not measured; neighbours that do not overlap (with
        ``gaps="stop"``); a vertical ``"fit"`` with too few functions; ``"density"`` without
        an expansion coefficient.
    FitError
        When the joint fit fails numerically.
    """
    if not isinstance(campaign, Campaign):
        raise bad_value("campaign", "a Campaign", type(campaign).__name__)
    if len(campaign) < 2:
        raise bad_value("campaign", "a Campaign with at least 2 isotherms",
                        f"{len(campaign)} isotherm(s)")
    temps = campaign.temperatures_K
    if reference_temperature_K is None:
        t_ref = default_reference_temperature_K(campaign)
    else:
        t_ref = check_positive("reference_temperature_K", reference_temperature_K)
    check_choice("vertical", vertical, VERTICAL_MODES)
    check_choice("gaps", gaps, GAP_MODES)
    if not isinstance(robust, (bool, np.bool_)):
        raise bad_value("robust", "True or False", robust)
    outlier_threshold = check_positive("outlier_threshold", outlier_threshold)
    low_information_stderr = check_positive("low_information_stderr", low_information_stderr)
    if smoothing is not None:
        smoothing = check_positive("smoothing", smoothing)
    check_choice("master_curve", master_curve, ("auto",) + MASTER_MODELS)
    if start_from is not None and not isinstance(start_from, ShiftResult):
        raise bad_value("start_from", "a ShiftResult or None", type(start_from).__name__)
    if vertical == "density":
        if expansion_coefficient_per_K is None:
            raise bad_value("expansion_coefficient_per_K",
                            "given (volumetric expansion coefficient in 1/K) with "
                            "vertical='density'", None)
        alpha = check_positive("expansion_coefficient_per_K", expansion_coefficient_per_K,
                               allow_zero=True)
    elif expansion_coefficient_per_K is not None:
        raise bad_value("expansion_coefficient_per_K", "None unless vertical='density'",
                        expansion_coefficient_per_K)
    else:
        alpha = None

    chosen, derived = _resolve_quantities(campaign, quantities)
    vsign = np.array([VERTICAL_SIGN[q] for q in chosen])
    model = master_curve
    if model == "auto":
        model = ("spline" if {"relaxation_modulus_Pa", "creep_compliance_1_per_Pa"} <= set(chosen)
                 else "spectrum")
    fit_vertical = vertical == "fit"
    if fit_vertical and (len(chosen) < 2 or not np.any(vsign != 0)):
        raise DataError("vertical='fit' needs at least two functions, one of them a modulus or "
                        f"compliance, to separate vertical from horizontal shifts; shifting on "
                        f"{', '.join(chosen)} alone cannot (use vertical='none' or 'density')")
    fixed = _match_fixed(fixed_log10_aT, temps)
    user_fixed = set(fixed)
    n = len(temps)
    ref_idx = int(np.argmin(np.abs(temps - t_ref)))
    ref_measured = abs(temps[ref_idx] - t_ref) <= REFERENCE_SNAP_K
    if fixed and ref_measured:
        if ref_idx in fixed and abs(fixed[ref_idx]) > 0:
            raise bad_value(f"fixed_log10_aT at the reference temperature "
                            f"{kelvin_to_celsius(temps[ref_idx]):g} °C", "0",
                            fixed[ref_idx])
        fixed[ref_idx] = 0.0
    direction = 1.0 if campaign.domain == "frequency" else -1.0
    notes: list[str] = []

    # known vertical shifts
    if vertical == "density":
        rho = 1.0 - alpha * (temps - t_ref)
        if np.any(rho <= 0):
            raise bad_value("expansion_coefficient_per_K",
                            "small enough that the density stays positive over the campaign",
                            expansion_coefficient_per_K)
        c_known = np.log10(temps * rho / t_ref)
    else:
        c_known = np.zeros(n)

    # per-isotherm log data (m_k, Q); NaN where a value is missing or not positive
    X, Y = [], []
    for k, iso in enumerate(derived.isotherms):
        X.append(np.log10(iso.x))
        cols = []
        for q, v in zip(chosen, vsign):
            val = np.asarray(iso.values[q], float)
            with np.errstate(divide="ignore", invalid="ignore"):
                ly = np.where(np.isfinite(val) & (val > 0), np.log10(val), np.nan)
            cols.append(ly - v * c_known[k])
        Y.append(np.column_stack(cols))

    for k, xk in enumerate(X):
        span = float(xk.max() - xk.min()) if xk.size else 0.0
        if span > MAX_DECADES_PER_ISOTHERM:
            what = campaign.x_name.split("_")[0]
            raise DataError(f"{campaign.source + ': ' if campaign.source else ''}the isotherm at "
                            f"{kelvin_to_celsius(temps[k]):g} °C spans {span:.0f} decades of "
                            f"{what}; a measurement spans at most {MAX_DECADES_PER_ISOTHERM:g} "
                            f"(check the {what} column and its unit)")

    # Dense isotherms are thinned for the fit (every point is still shifted and reported)
    kept = [evenly_spaced_indices(xk.size, MAX_FIT_POINTS_PER_ISOTHERM) for xk in X]
    if any(kk.size < xk.size for kk, xk in zip(kept, X)):
        notes.append(f"isotherms with more than {MAX_FIT_POINTS_PER_ISOTHERM} points were thinned "
                     f"to {MAX_FIT_POINTS_PER_ISOTHERM} points evenly spread in "
                     f"{campaign.x_name.split('_')[0]} for the shift fit; every point is shifted "
                     f"and reported, outliers are looked for among the points fitted")
        X = [xk[kk] for xk, kk in zip(X, kept)]
        Y = [yk[kk] for yk, kk in zip(Y, kept)]

    def gap_view(Yk):
        if not fit_vertical:
            return Yk
        cols = [Yk[:, q] for q in range(len(chosen)) if vsign[q] == 0]
        nz = [q for q in range(len(chosen)) if vsign[q] != 0]
        cols += [Yk[:, q] - vsign[q] * vsign[nz[0]] * Yk[:, nz[0]] for q in nz[1:]]
        return np.column_stack(cols)

    # gaps in the ordinate between neighbours, and pairwise seeds across the others
    gap_info: dict[int, str] = {}
    pairs: dict[int, dict] = {}
    for k in range(n - 1):
        g, col = ordinate_gap(gap_view(Y[k]), gap_view(Y[k + 1]))
        if g > 0:
            what = (derived.symbol(chosen[col]) if not fit_vertical else "vertical-shift-free")
            gap_info[k] = f"their {what} ranges are {g:.2f} decades apart"
            continue
        ps = pair_shift(X[k], Y[k], X[k + 1], Y[k + 1], vsign, fit_vertical)
        if ps is None:
            gap_info[k] = "fewer than 3 of their points can be made to overlap"
            continue
        pairs[k] = ps

    def stop_on_gaps(info):
        msgs = [f"isotherms at {kelvin_to_celsius(temps[k]):g} °C and "
                f"{kelvin_to_celsius(temps[k + 1]):g} °C do not overlap: {why}"
                for k, why in sorted(info.items())]
        raise DataError("; ".join(msgs) + ". Measure between them, or pass gaps='bridge' to "
                        "place the isotherms beyond the gap by a shift law fitted to the rest")

    if gap_info and gaps == "stop":
        stop_on_gaps(gap_info)

    # joint fit per connected group; a post-fit check may split groups further
    warm = _start_of(start_from, temps, fit_vertical)
    for _round in range(n):
        comps, start = [], 0
        for k in range(n - 1):
            if k in gap_info:
                comps.append(list(range(start, k + 1)))
                start = k + 1
        comps.append(list(range(start, n)))
        fits = {}
        new_gaps = {}
        for ci, comp in enumerate(comps):
            if len(comp) < 2:
                continue
            fits[ci] = _fit_component(comp, X, Y, pairs, chosen, vsign, fit_vertical,
                                      direction, fixed, temps, t_ref, robust, model, smoothing,
                                      warm)
            u = fits[ci]["u_range"]
            for a in range(len(comp) - 1):
                if u[a + 1][0] > u[a][1] or u[a][0] > u[a + 1][1]:
                    size = max(u[a + 1][0] - u[a][1], u[a][0] - u[a + 1][1])
                    new_gaps[comp[a]] = (f"after the best shift their "
                                         f"{campaign.x_name.split('_')[0]} ranges are still "
                                         f"{size:.2f} decades apart")
        if not new_gaps:
            break
        if gaps == "stop":
            stop_on_gaps(new_gaps)
        gap_info.update(new_gaps)

    # assemble shifts and covariances in one gauge
    s = np.zeros(n)
    c = np.zeros(n)
    cov_s = np.zeros((n, n))
    cov_c = np.zeros((n, n))
    bridged = np.zeros(n, bool)
    for ci, comp in enumerate(comps):
        if ci in fits:
            f = fits[ci]
            ix = np.ix_(comp, comp)
            s[comp], c[comp] = f["s"], f["c"]
            cov_s[ix], cov_c[ix] = f["cov_s"], f["cov_c"]
    for comp in comps:
        if len(comp) == 1 and comp[0] in fixed:
            s[comp[0]] = fixed[comp[0]]
    bridge_note = None
    if len(comps) > 1:
        bridge_note = _bridge_groups(comps, s, cov_s, bridged, fixed, temps, t_ref)
        if fit_vertical:
            bridge_note += ("; the bridge places a_T only: each group keeps its own vertical "
                            "gauge (log10 b_T = 0 at one of its isotherms), so b_T across the "
                            "gap is not determined by the data")
        notes.append(bridge_note)

    comp_stderr = np.sqrt(np.clip(np.diag(cov_s), 0.0, None))   # within each group

    # fix the gauge at the reference temperature
    if not fixed:
        if ref_measured:
            w = np.zeros(n)
            w[ref_idx] = 1.0
        else:
            w, inside = _gauge_weights(temps, t_ref)
            if not inside:
                msg = (f"reference temperature {kelvin_to_celsius(t_ref):g} °C lies outside the "
                       f"measured range; log10 a_T there is extrapolated linearly from the two "
                       f"nearest isotherms")
                notes.append(msg)
                _warnings.warn(msg, ExtrapolationWarning, stacklevel=2)
        M = np.eye(n) - np.outer(np.ones(n), w)
        s = M @ s
        cov_s = M @ cov_s @ M.T
        if fit_vertical:
            c = M @ c
            cov_c = M @ cov_c @ M.T
    else:
        if fit_vertical:
            w, _ = _gauge_weights(temps, t_ref) if not ref_measured else (
                np.eye(n)[ref_idx], True)
            M = np.eye(n) - np.outer(np.ones(n), w)
            c = M @ c
            cov_c = M @ cov_c @ M.T
        if not ref_measured:
            w, _ = _gauge_weights(temps, t_ref)
            at_ref = float(w @ s)
            if abs(at_ref) > 0.02:
                notes.append(f"with the fixed shifts given, log10 a_T interpolated at the "
                             f"reference temperature is {at_ref:.3f}, not 0")
    stderr = np.sqrt(np.clip(np.diag(cov_s), 0.0, None))
    for k in user_fixed:
        stderr[k] = np.nan
    if ref_measured:
        stderr[ref_idx] = 0.0
    log10_bT = c + c_known
    bT_err = np.sqrt(np.clip(np.diag(cov_c), 0.0, None))

    # per-isotherm diagnostics
    outlier_mask = [np.zeros(iso.n_points, bool) for iso in campaign.isotherms]
    quality = np.full(n, np.nan)
    cond_se = np.full(n, np.nan)
    slope_rms = np.full(n, np.nan)
    sq_all, n_all, objective, iterations, converged = 0.0, 0, 0.0, 0, True
    rho_all, inflation_all = float("nan"), 1.0
    inflation_of = np.ones(n)      # the correlation factor of each isotherm's group
    sig_sum = {q: [] for q in chosen}
    for ci, comp in enumerate(comps):
        if ci not in fits:
            continue
        f = fits[ci]
        sol = f["solution"]
        inflation_of[comp] = sol.correlation_inflation
        if sol.correlation_inflation >= inflation_all:
            rho_all, inflation_all = sol.residual_correlation, sol.correlation_inflation
        objective += sol.objective
        iterations += sol.iterations
        converged &= sol.converged
        for q, name in enumerate(chosen):
            sig_sum[name].append((sol.sigma[q], np.sum(f["fn"] == q)))
        out = np.abs(sol.scaled_residual) > outlier_threshold
        for a, k in enumerate(comp):
            sel = f["iso"] == a
            pts = f["point"][sel]
            np.logical_or.at(outlier_mask[k], kept[k][pts], out[sel])
        for a, k in enumerate(comp):
            sel = f["iso"] == a
            pt_out = outlier_mask[k][kept[k][f["point"][sel]]]
            res = sol.residual[sel][~pt_out]
            uu = sol.u[sel][~pt_out]
            sq_all += float(np.sum(res ** 2))
            n_all += res.size
            near = np.zeros(uu.size, bool)
            for b in (a - 1, a + 1):
                if 0 <= b < len(comp):
                    lo, hi = f["u_range"][b]
                    near |= (uu >= lo) & (uu <= hi)
            if near.any():
                quality[k] = float(np.sqrt(np.mean(res[near] ** 2)))
            sl = sol.slope[sel]
            sg = sol.sigma[f["fn"][sel]]
            info = np.sum(sol.weights[sel] * (sl / sg) ** 2)
            cond_se[k] = np.sqrt(sol.variance_factor / info) if info > 0 else np.inf
            slope_rms[k] = float(np.sqrt(np.mean(sl ** 2)))
    rms_residual = float(np.sqrt(sq_all / n_all)) if n_all else float("nan")

    flags = []
    low_info = []
    for k in range(n):
        fl = []
        if ref_measured and k == ref_idx:
            fl.append("reference")
        if k in user_fixed:
            fl.append("fixed")
        if bridged[k]:
            fl.append("bridged")
        if (k - 1) in gap_info:
            fl.append("gap-below")
        if k in gap_info:
            fl.append("gap-above")
        # judged on the data alone: the stderr within its connected group (not the gauge's)
        # and the stderr given all other parameters (which catches the gauge anchor too),
        # before the allowance for correlated residuals: that widens every stderr of a group
        # alike and says how far the curve misfits, not whether this isotherm is placed
        se = max(comp_stderr[k] / np.sqrt(inflation_of[k]),
                 cond_se[k] if not np.isnan(cond_se[k]) else 0.0)
        flat = np.isfinite(slope_rms[k]) and slope_rms[k] < _MIN_SLOPE
        if k not in user_fixed and not bridged[k] and (
                se > low_information_stderr or flat):
            fl.append("low-information")
            low_info.append(k)
        n_out = int(outlier_mask[k].sum())
        if n_out:
            fl.append(f"outliers:{n_out}")
        flags.append(tuple(fl))
    for k in low_info:   # the data's own uncertainty, not the prior's (module notes)
        if k != ref_idx or not ref_measured:
            stderr[k] = max(stderr[k], min(cond_se[k], UNDETERMINED_STDERR))
    if low_info:
        msg = ("shift poorly determined (plateau or too little overlap) for the isotherm(s) at "
               + ", ".join(f"{kelvin_to_celsius(temps[k]):g} °C" for k in low_info)
               + "; flagged 'low-information'")
        notes.append(msg)
        _warnings.warn(msg, FitQualityWarning, stacklevel=2)
    if bridge_note is not None:
        _warnings.warn(bridge_note, FitQualityWarning, stacklevel=2)
    n_out_total = sum(int(m.sum()) for m in outlier_mask)
    if n_out_total:
        notes.append(f"{n_out_total} point(s) flagged as outliers (residual above "
                     f"{outlier_threshold:g} robust noise scales); kept in the output")
    if not converged:
        notes.append("the joint fit stopped at its iteration limit before converging")
    scale = {}
    for name, lst in sig_sum.items():
        if lst:
            tot = sum(m for _, m in lst)
            scale[name] = float(np.sqrt(sum(sg ** 2 * m for sg, m in lst) / max(tot, 1)))
    curve = ("one shared smooth spectrum" if model == "spectrum"
             else "a penalised spline per function")
    method = (f"joint fit of all shifts and {curve} on log10 {', '.join(chosen)} "
              f"({'Huber loss' if robust else 'least squares'}), seeded by pairwise overlaps")
    return ShiftResult(
        reference_temperature_K=float(t_ref), temperature_K=_ro(temps), log10_aT=_ro(s),
        log10_aT_stderr=_ro(stderr), log10_bT=_ro(log10_bT), log10_bT_stderr=_ro(bT_err),
        overlap_quality=_ro(quality), flags=tuple(flags),
        outlier_mask=tuple(_ro(m, bool) for m in outlier_mask), quantities_used=tuple(chosen),
        vertical_mode=vertical, method=method, objective=float(objective),
        rms_residual=rms_residual, domain=campaign.domain, residual_scale_log10=scale,
        expansion_coefficient_per_K=alpha, converged=bool(converged), iterations=iterations,
        warnings=tuple(notes), log10_aT_covariance=_ro(cov_s),
        residual_correlation=float(rho_all), correlation_inflation=float(inflation_all))


def _bridge_groups(comps, s, cov_s, bridged, fixed, temps, t_ref) -> str:
    """Place disconnected groups by a shift law fitted to the main group (in place).

    The main group is the largest one (the one nearest the reference on a tie); with user-fixed
    shifts, the largest group holding one, and groups holding fixed shifts keep their own gauge.
    Every other group is moved as a block by the mean difference between the law and its
    shifts; its covariance gains the law's prediction variance (parameters, scatter and
    disagreement between WLF and Arrhenius).
    """
    has_fixed = [ci for ci, comp in enumerate(comps) if any(k in fixed for k in comp)]
    pool = has_fixed or list(range(len(comps)))
    main = max(pool, key=lambda ci: (len(comps[ci]),
                                     -min(abs(temps[k] - t_ref) for k in comps[ci])))
    law = fit_offset_law(temps[comps[main]], s[comps[main]], all_temperatures_K=temps)
    for ci, comp in enumerate(comps):
        if ci == main or ci in has_fixed:
            continue
        pred, pred_se = law.predict(temps[comp])
        s[comp] += float(np.mean(pred - s[comp]))
        cov_s[np.ix_(comp, comp)] += float(np.mean(pred_se ** 2))
        bridged[comp] = True
    return (f"{int(bridged.sum())} isotherm(s) placed across a gap by a "
            f"{'WLF' if law.model == 'wlf' else 'Arrhenius'} law fitted to "
            f"{len(comps[main])} connected isotherms (flag 'bridged')")


def _start_of(start_from, temps, fit_vertical):
    """Per isotherm (log10 a_T, log10 b_T) of an earlier fit, matched by temperature (NaN
    where it has no such isotherm); None without an earlier fit."""
    if start_from is None:
        return None
    known = np.asarray(start_from.temperature_K, float)
    s, c = np.full(temps.size, np.nan), np.zeros(temps.size)
    for k, t in enumerate(temps):
        j = np.flatnonzero(np.abs(known - t) <= 1e-9 * max(abs(t), 1.0))
        if j.size:
            s[k] = start_from.log10_aT[j[0]]
            if fit_vertical:
                c[k] = start_from.log10_bT[j[0]]
    return s, c


def _component_start(start, comp, anchor, gauge_fixed):
    """The earlier fit's shifts of one group in the group's gauge (0 at its anchor unless
    fixed shifts set the gauge), or None when it lacks one of the group's isotherms."""
    if start is None:
        return None
    s, c = start[0][comp], start[1][comp]
    if not np.all(np.isfinite(s)):
        return None
    return (s if gauge_fixed else s - s[anchor]), c - c[anchor]


def _fit_component(comp, X, Y, pairs, functions, vsign, fit_vertical, direction, fixed, temps,
                   t_ref, robust, master_curve, smoothing, start=None):
    """Seed by chained pairwise shifts, then fit one connected group of isotherms jointly
    (iterations from ``start``, an earlier fit's shifts, when given)."""
    m = len(comp)
    s0 = np.zeros(m)
    c0 = np.zeros(m)
    for a in range(m - 1):
        p = pairs[comp[a]]
        s0[a + 1] = s0[a] + direction * p["delta"]
        c0[a + 1] = c0[a] + p["offset"]
    local_fixed = {a: fixed[k] for a, k in enumerate(comp) if k in fixed}
    fixed_here = bool(local_fixed)
    anchor = int(np.argmin(np.abs(temps[comp] - t_ref)))
    if local_fixed:
        s0 += np.mean([v - s0[a] for a, v in local_fixed.items()])
    else:
        s0 -= s0[anchor]
        local_fixed = {anchor: 0.0}
    c0 -= c0[anchor]
    xs, ys, iso, fn, point = [], [], [], [], []
    # ordered by function, then isotherm: the master-curve model evaluates each function on
    # its own block of rows
    for q in range(len(functions)):
        for a, k in enumerate(comp):
            ok = np.isfinite(Y[k][:, q])
            xs.append(X[k][ok])
            ys.append(Y[k][ok, q])
            iso.append(np.full(ok.sum(), a))
            fn.append(np.full(ok.sum(), q))
            point.append(np.flatnonzero(ok))
    x, y = np.concatenate(xs), np.concatenate(ys)
    iso, fn, point = np.concatenate(iso), np.concatenate(fn), np.concatenate(point)
    # each function's point-to-point noise (third differences along each isotherm), which
    # sets its weight against the others of its kind (see _global_fit.estimate_sigma) when
    # it clearly differs: with ten points per isotherm the estimate scatters by up to a factor
    # of two between functions of equal noise (measured on the test campaigns), so a ratio
    # below NOISE_RATIO_TRUSTED counts as equal noise
    noise = np.array([typical_log_noise([X[k] for k in comp], [Y[k][:, q] for k in comp])
                      for q in range(len(functions))])
    ratio = noise / noise.min()
    prob = JointProblem(x=x, y=y, iso=iso, fn=fn, n_iso=m, functions=functions,
                        direction=direction, vertical_sign=vsign, s_fixed=local_fixed,
                        fit_vertical=fit_vertical, c_fixed={anchor: 0.0},
                        relative_noise=np.where(ratio >= NOISE_RATIO_TRUSTED, ratio, 1.0))
    sol = fit_joint(prob, s0, c0 if fit_vertical else None, model=master_curve, robust=robust,
                    smoothing=smoothing,
                    start=_component_start(start, comp, anchor, bool(fixed_here)))
    u_range = [(float(sol.u[iso == a].min()), float(sol.u[iso == a].max())) for a in range(m)]
    return {"s": sol.s, "c": sol.c if fit_vertical else np.zeros(m), "cov_s": sol.cov_s,
            "cov_c": sol.cov_c, "solution": sol, "iso": iso, "fn": fn, "point": point,
            "u_range": u_range}
