"""The shift fit as named steps: :func:`shift_isotherms`.

Options resolved once (``_options``), the log data of every isotherm thinned for the fit
(``_fit_data``), pairwise seeds and gaps between neighbours (``_neighbours``), one joint fit
per connected group (``_groups``, on ``_joint_fit`` and ``_curve_models``), the groups put
together and those beyond a gap placed by a law (``_bridge``), the gauge at the reference
temperature (``_gauge``), outliers and flags per isotherm (``_diagnostics``), and the frozen
:class:`~ttsp.shifting.result.ShiftResult`. The package docstring of :mod:`ttsp.shifting`
holds the model and its conventions.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ..data import Campaign
from ._bridge import bridge_across_gaps
from ._diagnostics import OUTLIER_THRESHOLD, Diagnosis, diagnose
from ._fit_data import FitData, prepare_fit_data
from ._gauge import fix_gauge
from ._groups import GroupFits, Shifts, fit_groups
from ._neighbours import neighbour_seeds
from ._options import ShiftOptions, resolve_options
from .result import ShiftResult

__all__ = ["shift_isotherms"]


def shift_isotherms(campaign: Campaign, reference_temperature_K: float | None = None, *,
                    quantities: str | Sequence[str] = "auto", vertical: str = "none",
                    expansion_coefficient_per_K: float | None = None,
                    fixed_log10_aT: Mapping[float, float] | None = None, gaps: str = "stop",
                    robust: bool = True, outlier_threshold: float = OUTLIER_THRESHOLD,
                    low_information_stderr: float = 0.05, master_curve: str = "auto",
                    smoothing: float | None = None, start_from: ShiftResult | None = None
                    ) -> ShiftResult:
    """Find the shift factors of all isotherms of a campaign by one joint fit.

    Parameters
    ----------
    campaign : Campaign
        At least two isotherms. Isotherm order does not matter (the campaign sorts them).
    reference_temperature_K : float, optional
        Where log10 a_T = 0, in K; any value (see the package notes for a reference between
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
    options = resolve_options(campaign, reference_temperature_K, quantities, vertical,
                              expansion_coefficient_per_K, fixed_log10_aT, gaps, robust,
                              outlier_threshold, low_information_stderr, master_curve,
                              smoothing, start_from)
    data = prepare_fit_data(campaign, options)
    neighbours = neighbour_seeds(data, options)
    groups = fit_groups(data, neighbours, options)
    shifts = bridge_across_gaps(groups, options)
    fix_gauge(shifts, options)
    diagnosis = diagnose(campaign, data, groups, shifts, options)
    return _result(campaign, options, data, shifts, diagnosis, groups)


def _read_only(a, dtype=float):
    """A read-only copy of ``a`` (the result's arrays cannot be changed in place)."""
    arr = np.array(a, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


def _result(campaign: Campaign, options: ShiftOptions, data: FitData, shifts: Shifts,
            diag: Diagnosis, groups: GroupFits) -> ShiftResult:
    """The frozen result: arrays read-only, the pooled noise scale of each function, the
    method in one line, the notes of every step in order as its warnings."""
    notes = data.notes + shifts.notes + diag.notes
    scale = {}
    for name, lst in diag.noise_scales.items():
        if lst:
            tot = sum(m for _, m in lst)
            scale[name] = float(np.sqrt(sum(sg ** 2 * m for sg, m in lst) / max(tot, 1)))
    chosen = options.chosen
    curve = ("one shared smooth spectrum" if options.model == "spectrum"
             else "a penalised spline per function")
    method = (f"joint fit of all shifts and {curve} on log10 {', '.join(chosen)} "
              f"({'Huber loss' if options.robust else 'least squares'}), seeded by pairwise "
              f"overlaps")
    return ShiftResult(
        reference_temperature_K=float(options.t_ref), temperature_K=_read_only(options.temps),
        log10_aT=_read_only(shifts.s), log10_aT_stderr=_read_only(shifts.stderr),
        log10_bT=_read_only(shifts.log10_bT), log10_bT_stderr=_read_only(shifts.log10_bT_stderr),
        overlap_quality=_read_only(diag.quality), flags=diag.flags,
        outlier_mask=tuple(_read_only(m, bool) for m in diag.outlier_mask),
        quantities_used=tuple(chosen), vertical_mode=options.vertical, method=method,
        objective=float(diag.objective), rms_residual=diag.rms_residual, domain=campaign.domain,
        residual_scale_log10=scale, expansion_coefficient_per_K=options.alpha,
        converged=bool(diag.converged), iterations=diag.iterations, notes=tuple(notes),
        log10_aT_covariance=_read_only(shifts.cov_s), residual_correlation=float(diag.rho_all),
        correlation_inflation=float(diag.inflation_all),
        fitted_curves=groups.fitted_curves(options.temps))
