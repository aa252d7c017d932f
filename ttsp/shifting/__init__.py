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
so an outlier is down-weighted and flagged but never deleted.

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
  that the interpolation passes on (not its approximation error, which the cubic keeps
  small). A reference within 0.05 K of an isotherm is that isotherm.
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

Contents
--------
Public: :func:`shift_isotherms` (``shift``: the fit as named steps), :class:`ShiftResult`
(``result``), :func:`default_reference_temperature_K` and the constants below. Private, one
step each: ``_options`` (the options checked and resolved), ``_fit_data`` (log data per
isotherm, thinned), ``_neighbours`` (pairwise seeds and gaps, on ``_overlap``: the pairwise
overlap shift and the ordinate-gap test), ``_groups`` (one joint fit per connected group),
``_bridge`` (a small law with a free offset that places groups across a gap), ``_gauge``
(log10 a_T = 0 at the reference, the stderr), ``_diagnostics`` (outliers, overlap quality,
flags); the joint fit itself is ``_joint_fit`` (damped Gauss–Newton and the covariance) on
``_curve_models`` (the shared spectrum and the splines).
"""

from ._diagnostics import OUTLIER_THRESHOLD, UNDETERMINED_STDERR, USED_STDERR_CAP
from ._fit_data import MAX_DECADES_PER_ISOTHERM, MAX_FIT_POINTS_PER_ISOTHERM
from ._groups import NOISE_RATIO_TRUSTED
from ._options import GAP_MODES, VERTICAL_MODES, VERTICAL_SIGN, default_reference_temperature_K
from .result import STDERR_METHOD, ShiftResult
from .shift import shift_isotherms

__all__ = ["ShiftResult", "shift_isotherms", "default_reference_temperature_K",
           "VERTICAL_MODES", "GAP_MODES", "VERTICAL_SIGN", "UNDETERMINED_STDERR",
           "USED_STDERR_CAP", "MAX_FIT_POINTS_PER_ISOTHERM", "MAX_DECADES_PER_ISOTHERM",
           "OUTLIER_THRESHOLD", "NOISE_RATIO_TRUSTED", "STDERR_METHOD"]
