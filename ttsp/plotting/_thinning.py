"""How many points a figure draws: an even subset of each curve when a figure would otherwise
hold more than :data:`DRAWN_POINTS_PER_FIGURE` (every point stays in the CSV tables).

Layer 4 (figures); no matplotlib here.
"""

from __future__ import annotations

import numpy as np

from .._arrays import evenly_spaced_indices

# Points drawn per figure: a figure of a million points is a 30 MB SVG that a browser cannot
# open and that nobody can read. Every point stays in the CSVs; the figures draw an even subset
# of each curve (by rank of its abscissa), at least MIN_DRAWN_PER_CURVE of each.
DRAWN_POINTS_PER_FIGURE = 6_000
MIN_DRAWN_PER_CURVE = 24


def drawn_indices(n_points: int, n_curves: int) -> np.ndarray:
    """Indices of the points of one curve (of ``n_curves`` in a figure) that a figure draws:
    all of them when the figure stays within :data:`DRAWN_POINTS_PER_FIGURE`, else an even
    subset by rank (the data should be sorted along the curve)."""
    per_curve = max(MIN_DRAWN_PER_CURVE, DRAWN_POINTS_PER_FIGURE // max(n_curves, 1))
    return evenly_spaced_indices(n_points, per_curve)
