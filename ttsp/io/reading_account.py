"""A plain-text account of what the reader understood from a campaign's files (``ttsp inspect``)."""

from __future__ import annotations

import math

from ..data import Campaign


def describe_campaign(campaign: Campaign) -> str:
    """A plain-text account of what the reader understood."""
    lines = [f"source: {campaign.source}",
             f"domain: {campaign.domain}   modulus kind: {campaign.modulus_kind}   "
             f"isotherms: {len(campaign)}   points: {campaign.n_points}",
             "functions: " + ", ".join(f"{campaign.symbol(q)} ({q})" for q in campaign.quantities),
             "units as read: " + ", ".join(f"{k} -> {v}" for k, v in campaign.units_as_read.items())]
    counts = campaign.measured_points()
    if any(n < campaign.n_points for n in counts.values()):
        lines.append("measured at their own times (files read together): " + ", ".join(
            f"{campaign.symbol(q)} at {n} points" for q, n in counts.items()))
    if campaign.metadata.get("assumed units"):
        lines.append(f"assumed units (no unit in the header): {campaign.metadata['assumed units']}")
    if campaign.dropped_rows:
        lines.append("rows left out: " + ", ".join(f"{v} {k}" for k, v in campaign.dropped_rows.items()))
    if campaign.metadata.get("skipped rows"):
        lines.append(f"skipped rows: {campaign.metadata['skipped rows']}")
    x = "frequency (Hz)" if campaign.domain == "frequency" else "time (s)"
    lines.append(f"{'T (°C)':>9}  {'points':>6}  {x + ' from':>20}  {'to':>10}")
    for iso in campaign.isotherms:
        lo, hi = iso.x[0], iso.x[-1]
        if campaign.domain == "frequency":
            lo, hi = lo / (2 * math.pi), hi / (2 * math.pi)
        lines.append(f"{iso.temperature_C:9.2f}  {iso.n_points:6d}  {lo:20.4g}  {hi:10.4g}")
    return "\n".join(lines)
