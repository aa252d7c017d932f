"""Neighbouring isotherms: the pairwise shifts that seed the joint fit, and the gaps (private).

Each pair of neighbours (in temperature) is first tested for a gap in the ordinate: when the
ranges of some function are disjoint no horizontal shift can make them overlap
(:func:`~ttsp.shifting._overlap.ordinate_gap`). With a free vertical shift the test looks at
what no vertical shift changes: tan δ and δ, and the differences between the shifted functions.
Across every other pair the pairwise overlap shift (:func:`~ttsp.shifting._overlap.pair_shift`)
is the seed of the joint fit. With ``gaps="stop"`` a gap is an error naming both temperatures.

A build fits the same isotherms with two master-curve models to choose between them, and each
fold of its cross-validation fits them again less one; a pair's seed depends on the two
isotherms alone, so the last few hundred are kept (keyed by the pair's bytes and how the
functions shift) and reused.
"""

from __future__ import annotations

import hashlib
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from ..exceptions import DataError
from ..units import kelvin_to_celsius
from ._fit_data import FitData
from ._options import ShiftOptions
from ._overlap import ordinate_gap, pair_shift

__all__ = ["Neighbours", "neighbour_seeds", "stop_on_gaps"]


@dataclass
class Neighbours:
    """``pairs``: isotherm k -> the pairwise shift that lays k + 1 on k (``delta``,
    ``offset``, ...); ``gaps``: isotherm k -> why k and k + 1 cannot overlap."""

    pairs: dict
    gaps: dict


#: pairwise seeds kept for reuse: a build's two master-curve models, then each fold of its
#: cross-validation (all pairs but the one across the left-out isotherm)
_KEPT_PAIRS = 512
_pairs: OrderedDict = OrderedDict()


def neighbour_seeds(data: FitData, options: ShiftOptions) -> Neighbours:
    """Gaps in the ordinate between neighbours, and pairwise seeds across the others.

    Raises
    ------
    DataError
        With ``gaps="stop"``, when any neighbours cannot overlap.
    """
    X, Y = data.X, data.Y
    gap_info: dict[int, str] = {}
    pairs: dict[int, dict] = {}
    for k in range(options.n - 1):
        g, col, ps = _pair(X[k], Y[k], X[k + 1], Y[k + 1], options)
        if g > 0:
            what = (options.derived.symbol(options.chosen[col]) if not options.fit_vertical
                    else "vertical-shift-free")
            gap_info[k] = f"their {what} ranges are {g:.2f} decades apart"
            continue
        if ps is None:
            gap_info[k] = "fewer than 3 of their points can be made to overlap"
            continue
        pairs[k] = dict(ps)
    if gap_info and options.gaps == "stop":
        stop_on_gaps(gap_info, options.temps)
    return Neighbours(pairs=pairs, gaps=gap_info)


def _pair(xa, Ya, xb, Yb, options: ShiftOptions):
    """The ordinate gap of two neighbours (and its column) and, without a gap, the pairwise
    shift that lays b on a (None when too few points overlap); kept for reuse."""
    h = hashlib.blake2b(digest_size=20)
    for a in (xa, Ya, xb, Yb, options.vsign):
        arr = np.ascontiguousarray(a, dtype=float)
        h.update(repr(arr.shape).encode())
        h.update(arr.tobytes())
    h.update(b"v" if options.fit_vertical else b"-")
    key = h.digest()
    if key in _pairs:
        _pairs.move_to_end(key)
        return _pairs[key]
    g, col = ordinate_gap(_gap_view(Ya, options), _gap_view(Yb, options))
    ps = (pair_shift(xa, Ya, xb, Yb, options.vsign, options.fit_vertical) if g <= 0
          else None)
    _pairs[key] = (g, col, ps)
    while len(_pairs) > _KEPT_PAIRS:
        _pairs.popitem(last=False)
    return _pairs[key]


def _gap_view(Yk, options: ShiftOptions):
    """The columns a gap is looked for in: all of them, or with a free vertical shift, those
    it leaves alone (tan δ, δ) and each shifted function less the first one."""
    if not options.fit_vertical:
        return Yk
    chosen, vsign = options.chosen, options.vsign
    cols = [Yk[:, q] for q in range(len(chosen)) if vsign[q] == 0]
    nz = [q for q in range(len(chosen)) if vsign[q] != 0]
    cols += [Yk[:, q] - vsign[q] * vsign[nz[0]] * Yk[:, nz[0]] for q in nz[1:]]
    return np.column_stack(cols)


def stop_on_gaps(info: dict, temps) -> None:
    """Raise the DataError naming every pair of neighbours in ``info`` and why."""
    msgs = [f"isotherms at {kelvin_to_celsius(temps[k]):g} °C and "
            f"{kelvin_to_celsius(temps[k + 1]):g} °C do not overlap: {why}"
            for k, why in sorted(info.items())]
    raise DataError("; ".join(msgs) + ". Measure between them, or pass gaps='bridge' to "
                    "place the isotherms beyond the gap by a shift law fitted to the rest")
