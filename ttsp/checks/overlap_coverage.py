"""Overlap coverage: do neighbouring isotherms overlap enough in the ordinate for the data to
fix their horizontal shift? Gaps, thin overlaps and shifts bridged by a law are named."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..shifting import ShiftResult

import math

import numpy as np

from ..data import Campaign
from ._inputs import _align_shifts, _as_campaign, _keep
from .noise import NOISE_FLOOR_LOG10, estimate_noise
from .result import CheckResult, _fmt_C

__all__ = ["check_overlap_coverage", "MIN_OVERLAP_DECADES", "MIN_OVERLAP_FRACTION",
           "GAP_NOISE_FACTOR"]


#: Overlap coverage: an overlap of at least 0.1 decade in the ordinate, or at least a quarter of
#: the narrower isotherm's ordinate span (isotherms on a plateau span little), lets a horizontal
#: shift be found from the data [common practice, no source]. A negative overlap (disjoint
#: ordinate ranges) is a gap: no horizontal shift can make the isotherms meet (docs/methods.md §2.5).
MIN_OVERLAP_DECADES = 0.1
MIN_OVERLAP_FRACTION = 0.25
#: Disjoint ordinate ranges closer than this many noise standard deviations count as touching
#: (warn), not as a gap (fail).
GAP_NOISE_FACTOR = 3.0


def _ordinate_quantity(campaign: Campaign) -> str | None:
    order = (("storage_modulus_Pa", "complex_modulus_Pa") if campaign.domain == "frequency"
             else ("relaxation_modulus_Pa", "creep_compliance_1_per_Pa"))
    return next((q for q in order if q in campaign.quantities), None)


def _ordinate_overlap(ya: np.ndarray, yb: np.ndarray):
    """(overlap in decades, narrower span) of two sets of log10 values."""
    ya, yb = ya[np.isfinite(ya)], yb[np.isfinite(yb)]
    overlap = min(ya.max(), yb.max()) - max(ya.min(), yb.min())
    span = min(np.ptp(ya), np.ptp(yb))
    return float(overlap), float(span)


def _pair_verdict(pair: dict, tolerance: float) -> str:
    """"gap" (disjoint beyond ``tolerance`` decades), "gap bridged by tan δ" (a gap in the
    function that tan δ overlaps), "thin" (too little overlap) or "ok"."""
    overlap, span = pair["overlap_decades"], pair["narrower_span_decades"]
    if overlap < -tolerance:
        if pair.get("tan_delta_overlap_decades", -1.0) >= MIN_OVERLAP_DECADES:
            return "gap bridged by tan δ"
        return "gap"
    if overlap < MIN_OVERLAP_DECADES and (span <= 0 or overlap < MIN_OVERLAP_FRACTION * span):
        return "thin"
    return "ok"


def _neighbour_pairs(c: Campaign, table, quantity: str, tolerance: float):
    """Every pair of neighbouring isotherms with its overlap in log10 of ``quantity`` (and of
    tan δ for frequency data) and its verdict; then the pairs named as gaps, thin overlaps and
    gaps bridged by tan δ. Points flagged as outliers in ``table`` are left out."""
    pairs = []
    named: dict[str, list] = {"gap": [], "thin": [], "gap bridged by tan δ": []}
    for k in range(len(c) - 1):
        a, b = c.isotherms[k], c.isotherms[k + 1]
        ka, kb = _keep(table, k, a.n_points), _keep(table, k + 1, b.n_points)
        # an isotherm whose every point is flagged (shifts held far from where its data lie)
        # is judged on all its points: the flags drop stray points, not whole isotherms
        ka, kb = (m if m.any() else np.ones_like(m) for m in (ka, kb))
        overlap, span = _ordinate_overlap(np.log10(a.values[quantity][ka]),
                                          np.log10(b.values[quantity][kb]))
        name = f"{a.temperature_C:.4g} °C and {b.temperature_C:.4g} °C"
        pair = {"temperature_low_C": a.temperature_C, "temperature_high_C": b.temperature_C,
                "overlap_decades": overlap, "narrower_span_decades": span}
        if c.domain == "frequency" and "tan_delta" in c.quantities:
            pair["tan_delta_overlap_decades"], _ = _ordinate_overlap(
                np.log10(a.values["tan_delta"][ka]), np.log10(b.values["tan_delta"][kb]))
        pair["verdict"] = _pair_verdict(pair, tolerance)
        if pair["verdict"] == "thin":
            named["thin"].append(f"{name} ({max(overlap, 0.0):.2g} decade)")
        elif pair["verdict"] != "ok":
            named[pair["verdict"]].append(f"{name} ({-overlap:.2g} decade apart)")
        pairs.append(pair)
    return pairs, named["gap"], named["thin"], named["gap bridged by tan δ"]


def _flagged_shifts(table) -> tuple[list, list]:
    """The temperatures (as text) of the shifts that the shifting bridged by a law, and of those
    it flagged low-information; none without a shift table."""
    if table is None:
        return [], []
    bridged = [_fmt_C(t) for t, f in zip(table.temperature_K, table.flags, strict=True)
               if any("bridg" in str(x) for x in f)]
    weak = [_fmt_C(t) for t, f in zip(table.temperature_K, table.flags, strict=True)
            if "low-information" in f]
    return bridged, weak


def _gap_message(symbol: str, gaps: list) -> str:
    """The failure: the gaps named, and how to close them."""
    return (f"Neighbouring isotherms do not overlap in {symbol} between {'; '.join(gaps)}, so "
            "the data cannot fix the shift across the gap. Measure at "
            "temperatures between them, widen the frequency or time range, or bridge the gap "
            "with a shift law and treat those shifts as model-based.")


def _marginal_message(symbol: str, thin: list, bridged_by_tan: list, bridged: list,
                      weak: list) -> str:
    """The warning: thin overlaps, gaps only tan δ bridges, shifts bridged by a law."""
    parts = []
    if thin:
        parts.append(f"thin overlap in {symbol} between {'; '.join(thin)}")
    if bridged_by_tan:
        parts.append(f"{symbol} does not overlap between {'; '.join(bridged_by_tan)} but "
                     "tan δ does")
    if bridged:
        parts.append(f"shifts bridged by a law at {', '.join(bridged)}")
    if weak:
        parts.append(f"shifts poorly determined (a plateau or little overlap) at "
                     f"{', '.join(weak)}")
    return ("Coverage is marginal: " + "; ".join(parts) + ". Those shift factors rest on "
            "little data; check them or measure at intermediate temperatures.")


def _covered_message(symbol: str, value: float, pairs: list, weak: list) -> str:
    """The pass: the least overlap, and a note on poorly determined shifts."""
    least = min(pairs, key=lambda p: p["overlap_decades"])
    flat = (" on a plateau, where the isotherms span little"
            if least["narrower_span_decades"] < MIN_OVERLAP_DECADES else "")
    msg = (f"Every pair of neighbouring isotherms overlaps in {symbol} (least "
           f"{value:.2g} decade, between {least['temperature_low_C']:.4g} °C and "
           f"{least['temperature_high_C']:.4g} °C{flat})")
    if weak:
        # A note, not a warning: plateau isotherms of exact simple campaigns are flagged
        # low-information too (20 % of benchmarks/bench_checks.py --quick warned on it);
        # whether superposition holds there is judged by function_agreement.
        return msg + (f", but the shifts at {', '.join(weak)} are poorly determined (a plateau "
                      "or little overlap): they rest on little data.")
    return msg + "; the data can fix every shift."


def check_overlap_coverage(campaign: Campaign, *,
                           shifts: ShiftResult | None = None) -> CheckResult | None:
    """Decades of overlap in the ordinate between neighbouring isotherms; gaps named.

    A horizontal shift moves an isotherm along log x only, so two isotherms of a monotonic
    function (E', |E*|, E(t), D(t)) can be made to meet only if their ordinate ranges intersect
    (docs/methods.md §2.5; the area-between-curves method of Gergesova et al., J. Rheol. 55, 1, 2011,
    works on exactly that common ordinate range). For each neighbouring pair the overlap is
    min(upper ends) − max(lower ends) of log10 of the function. A pair overlaps enough with
    ≥ :data:`MIN_OVERLAP_DECADES` or ≥ :data:`MIN_OVERLAP_FRACTION` of the narrower span; with
    disjoint ranges (beyond :data:`GAP_NOISE_FACTOR` noise) it is a gap. For frequency data a gap
    in E' that tan δ bridges (its ordinate ranges overlap) is a warning, not a failure. Shifts
    that the shifting marked as bridged by a law are named too.

    Parameters
    ----------
    campaign : Campaign
    shifts : shift result, optional
        Only its ``flags`` are used ("bridged", "gap-below", "gap-above", ...).

    Returns
    -------
    CheckResult or None
        None without a monotonic function to compare.
    """
    c = _as_campaign(campaign).with_derived()
    quantity = _ordinate_quantity(c)
    if quantity is None or len(c) < 2:
        return None
    table = _align_shifts(c, shifts) if shifts is not None else None
    sigma = estimate_noise(c)["typical"].get(quantity, NOISE_FLOOR_LOG10)
    tolerance = GAP_NOISE_FACTOR * math.sqrt(2.0) * sigma
    pairs, gaps, thin, bridged_by_tan = _neighbour_pairs(c, table, quantity, tolerance)
    bridged, weak = _flagged_shifts(table)
    value = min(p["overlap_decades"] for p in pairs)
    symbol = c.symbol(quantity)
    details = {"unit": f"decades of {symbol}", "quantity": quantity, "pairs": pairs,
               "gaps": gaps, "thin": thin, "gaps_bridged_by_tan_delta": bridged_by_tan,
               "bridged_shifts": bridged, "low_information_shifts": weak,
               "noise_tolerance_decades": tolerance}
    threshold = (f">= {MIN_OVERLAP_DECADES:g} decade or >= {MIN_OVERLAP_FRACTION:.0%} of the "
                 "narrower span; no gap")
    if gaps:
        status, msg = "fail", _gap_message(symbol, gaps)
    elif thin or bridged_by_tan or bridged:
        status, msg = "warn", _marginal_message(symbol, thin, bridged_by_tan, bridged, weak)
    else:
        status, msg = "pass", _covered_message(symbol, value, pairs, weak)
    return CheckResult("overlap_coverage", status, value, threshold, msg, details)
