"""Repeated time stamps within one isotherm: merged into one point, or named when they conflict.

Instruments that print times to a few significant digits repeat a time on long logarithmic
sweeps: with four digits, every step shorter than 0.1 % of t falls on the same printed value
(above 1000 s, steps under 1 s repeat). Such rows are one measurement time, not conflicting
data. They are merged into one point whose value is the mean of the log10 values (the mean of a
positive quantity's logarithm, the scale on which the fits weigh residuals), and the number of
rows absorbed is counted. Repeats whose values differ far beyond the isotherm's noise are not a
rounding artefact and are refused (docs/methods.md §1.1; common practice, no source).
"""

from __future__ import annotations

import numpy as np

from ._noise import NOISE_FLOOR_LOG10, third_difference_sigmas

__all__ = ["REPEAT_POLICIES", "CONFLICT_NOISE_MULTIPLE", "RepeatMerge", "merge_repeats"]

REPEAT_POLICIES = ("merge", "refuse")

#: Repeats whose log10 values span more than this many times the isotherm's noise (and more
#: than this many times NOISE_FLOOR_LOG10) conflict. For two normal errors of deviation σ the
#: spread exceeds 10σ with probability about 1e-12, so no honest repeat is refused even among
#: tens of thousands [common practice, no source].
CONFLICT_NOISE_MULTIPLE = 10.0


class RepeatMerge:
    """The outcome of :func:`merge_repeats` for one isotherm (plain attributes).

    ``order`` indexes the kept rows (the first row of each distinct time, in ascending time);
    ``values`` the merged values by quantity; ``merged`` the number of rows absorbed;
    ``conflict`` None, or ``(quantity, first_row_index, conflicting_row_index, spread_log10,
    limit_log10)`` for the first repeat whose values differ far beyond the noise.
    """

    def __init__(self, order, values, merged, conflict):
        self.order, self.values, self.merged, self.conflict = order, values, merged, conflict


def merge_repeats(x, values, positive) -> RepeatMerge:
    """Merge rows of one isotherm that share an abscissa.

    Parameters
    ----------
    x : array
        Times (s) of the isotherm's rows, in file order.
    values : mapping of str to array
        The measured functions at those rows.
    positive : mapping of str to bool
        Whether a quantity is positive (merged as the mean of log10 values, else arithmetic mean).

    Returns
    -------
    RepeatMerge
        A repeat group of values v_1..v_k is replaced by 10^(mean log10 v_i). Its spread
        max log10 v − min log10 v is compared with CONFLICT_NOISE_MULTIPLE·max(σ, floor), σ the
        third-difference noise of the merged log10 sequence
        (:func:`ttsp._noise.third_difference_sigmas`).
    """
    x = np.asarray(x, dtype=float)
    order = np.argsort(x, kind="stable")
    xs = x[order]
    starts = np.flatnonzero(np.r_[True, np.diff(xs) != 0])
    merged = int(x.size - starts.size)
    if merged == 0:
        return RepeatMerge(order, {q: np.asarray(v, dtype=float)[order] for q, v in values.items()},
                           0, None)
    counts = np.diff(np.r_[starts, x.size])
    out, conflict = {}, None
    most_seen = np.zeros(starts.size, dtype=int) if values else counts
    for q, v in values.items():
        vs = np.asarray(v, dtype=float)[order]
        logs = positive[q]
        with np.errstate(divide="ignore", invalid="ignore"):
            y = np.log10(vs) if logs else vs
        # a row without this function (the other test's point, when relaxation and creep come
        # from two files) takes no part in its mean; a time with no value stays missing
        seen = np.isfinite(y)
        n_seen = np.add.reduceat(seen.astype(int), starts)
        with np.errstate(divide="ignore", invalid="ignore"):
            mean = np.add.reduceat(np.where(seen, y, 0.0), starts) / n_seen
        mean[n_seen == 0] = np.nan
        most_seen = np.maximum(most_seen, n_seen)
        out[q] = 10.0 ** mean if logs else mean
        if conflict is None and logs:
            spread = (np.maximum.reduceat(np.where(seen, y, -np.inf), starts)
                      - np.minimum.reduceat(np.where(seen, y, np.inf), starts))
            spread[n_seen == 0] = 0.0
            sigma = third_difference_sigmas([mean])[0]
            limit = CONFLICT_NOISE_MULTIPLE * max(sigma if np.isfinite(sigma) else 0.0,
                                                  NOISE_FLOOR_LOG10)
            bad = np.flatnonzero(spread > limit)
            if bad.size:
                g = int(bad[0])
                members = order[starts[g]:starts[g] + counts[g]]
                group = y[starts[g]:starts[g] + counts[g]]
                first = int(np.flatnonzero(np.isfinite(group))[0])
                deviation = np.abs(group - group[first])
                deviation[~np.isfinite(deviation)] = -1.0
                conflict = (q, int(members[first]), int(members[int(np.argmax(deviation))]),
                            float(spread[g]), float(limit))
    # rows absorbed: beyond the first value of a function at a time (a relaxation and a creep
    # point at one time, read from two files, are one row, not a repeat)
    merged = int(np.maximum(most_seen - 1, 0).sum())
    return RepeatMerge(order[starts], out, merged, conflict)
