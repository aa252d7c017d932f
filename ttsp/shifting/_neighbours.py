"""Neighbouring isotherms: the pairwise shifts that seed the joint fit, and the gaps (private).

Each pair of neighbours (in temperature) is first tested for a gap in the ordinate: when the
ranges of some function are disjoint no horizontal shift can make them overlap
(:func:`~ttsp.shifting._overlap.ordinate_gap`). With a free vertical shift the test looks at
what no vertical shift changes: tan δ and δ, and the differences between the shifted functions.
Across every other pair the pairwise overlap shift (:func:`~ttsp.shifting._overlap.pair_shift`)
is the seed of the joint fit. With ``gaps="stop"`` a gap is an error naming both temperatures.

A build fits the same isotherms with two master-curve models to choose between them; the seeds
depend on the data alone, so the last few are kept (keyed by the data's bytes and the options
that matter) and the second fit reuses them.
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


#: seeds kept for reuse (a build's master-curve choice, then its checks)
_KEPT_SEEDS = 8
_seeds: OrderedDict = OrderedDict()


def neighbour_seeds(data: FitData, options: ShiftOptions) -> Neighbours:
    """Gaps in the ordinate between neighbours, and pairwise seeds across the others.

    Raises
    ------
    DataError
        With ``gaps="stop"``, when any neighbours cannot overlap.
    """
    key = _seed_key(data, options)
    if key not in _seeds:
        _seeds[key] = _computed_seeds(data, options)
        while len(_seeds) > _KEPT_SEEDS:
            _seeds.popitem(last=False)
    found = _seeds[key]
    if found.gaps and options.gaps == "stop":
        stop_on_gaps(found.gaps, options.temps)
    return Neighbours(pairs={k: dict(v) for k, v in found.pairs.items()}, gaps=dict(found.gaps))


def _seed_key(data: FitData, options: ShiftOptions) -> bytes:
    """What the seeds depend on: the log data of every isotherm, how the functions shift and
    the words for them."""
    h = hashlib.blake2b(digest_size=20)
    for xk, yk in zip(data.X, data.Y, strict=True):
        h.update(np.ascontiguousarray(xk, dtype=float).tobytes())
        h.update(np.ascontiguousarray(yk, dtype=float).tobytes())
        h.update(b"|")
    h.update(np.asarray(options.vsign, dtype=float).tobytes())
    h.update(b"v" if options.fit_vertical else b"-")
    h.update(np.asarray(options.temps, dtype=float).tobytes())
    # the names in a gap's message: G' for shear data, E' for tensile
    h.update(repr(tuple(options.derived.symbol(q) for q in options.chosen)).encode())
    return h.digest()


def _computed_seeds(data: FitData, options: ShiftOptions) -> Neighbours:
    X, Y = data.X, data.Y
    gap_info: dict[int, str] = {}
    pairs: dict[int, dict] = {}
    for k in range(options.n - 1):
        g, col = ordinate_gap(_gap_view(Y[k], options), _gap_view(Y[k + 1], options))
        if g > 0:
            what = (options.derived.symbol(options.chosen[col]) if not options.fit_vertical
                    else "vertical-shift-free")
            gap_info[k] = f"their {what} ranges are {g:.2f} decades apart"
            continue
        ps = pair_shift(X[k], Y[k], X[k + 1], Y[k + 1], options.vsign, options.fit_vertical)
        if ps is None:
            gap_info[k] = "fewer than 3 of their points can be made to overlap"
            continue
        pairs[k] = ps
    return Neighbours(pairs=pairs, gaps=gap_info)


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
