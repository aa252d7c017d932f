"""The size limit of a campaign: how many points ttsp reads at most, so that a file too large to
hold is refused before it fills the memory.

The limit is ``max_points=`` in Python, else the environment variable ``TTSP_MAX_POINTS``, else
:data:`DEFAULT_MAX_POINTS`. A text file is first judged by its size in bytes and its line count
(counted in chunks, never held whole); the rows actually read are counted against the limit as
each file of a campaign is read.
"""

from __future__ import annotations

import os

from .._validation import where
from ..exceptions import DataError

__all__ = ["DEFAULT_MAX_POINTS", "MAX_POINTS_ENV", "points_limit", "too_large_error",
           "refuse_oversized_file"]

# Size guard: a campaign with more points than this is refused before it fills the memory.
DEFAULT_MAX_POINTS = 2_000_000
MAX_POINTS_ENV = "TTSP_MAX_POINTS"
_BYTES_PER_POINT = 256      # a file larger than max_points * this is refused unread


def points_limit(max_points=None) -> int:
    """The size limit: ``max_points`` if given, else $TTSP_MAX_POINTS, else the default."""
    source, value = "max_points", max_points
    if value is None:
        source, value = MAX_POINTS_ENV, os.environ.get(MAX_POINTS_ENV)
        if value is None or not str(value).strip():
            return DEFAULT_MAX_POINTS
    try:
        limit = int(str(value).strip().replace("_", ""))
    except ValueError:
        limit = 0
    if limit < 1 or isinstance(value, bool):
        raise DataError(f"{source} must be a whole number of points of 1 or more; got {value!r}")
    return limit


def too_large_error(path: str, what: str, limit: int) -> DataError:
    """The error for a file or campaign over the limit: ``what`` says by how much."""
    return DataError(f"{where(path)}{what}; ttsp reads at most {limit:,} points at once, to stop "
                     f"before memory runs out: split the campaign, or raise the limit with the "
                     f"environment variable {MAX_POINTS_ENV} (max_points= in Python)")


def refuse_oversized_file(path: str, limit: int) -> None:
    """Refuse a file too large to hold before reading it: by its size, then by its line count
    (counted in chunks, so a huge file is never held in memory whole)."""
    size = os.path.getsize(path)
    if size > limit * _BYTES_PER_POINT:
        raise too_large_error(path, f"the file is {size / 1e9:.3g} GB, larger than "
                                    f"{limit * _BYTES_PER_POINT / 1e9:.3g} GB", limit)
    if size < 4 * limit:  # too short to hold more lines than the limit
        return
    lines = 0
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 24), b""):
            lines += chunk.count(b"\n")
            if lines > limit + 1000:  # a preamble and a header are not points
                raise too_large_error(path, f"the file has more than {limit + 1000:,} lines",
                                      limit)
