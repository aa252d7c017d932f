"""Error and warning types of ttsp.

One hierarchy: every error the user can cause is a :class:`DataError` (a ``ValueError``);
a numerical solver that cannot produce an answer raises :class:`FitError` (a ``RuntimeError``).
The command line turns a ``TtspError`` into one line on stderr and exit code 2.
"""

from __future__ import annotations

__all__ = [
    "TtspError",
    "DataError",
    "FitError",
    "TtspWarning",
    "ExtrapolationWarning",
    "DroppedRowsWarning",
    "FitQualityWarning",
]


class TtspError(Exception):
    """Base class of every error raised on purpose by ttsp."""


class DataError(TtspError, ValueError):
    """The input (a file, a column, an option value) is not usable as given.

    The message names the file, the column and the first bad row where they are known.
    """


class FitError(TtspError, RuntimeError):
    """A fit or solver could not produce a usable answer."""


class TtspWarning(UserWarning):
    """Base class of ttsp's warnings."""


class ExtrapolationWarning(TtspWarning):
    """A value was requested outside the range the data or the fitted law cover."""


class DroppedRowsWarning(TtspWarning):
    """Rows were left out for a stated reason (for example blank trailing rows)."""


class FitQualityWarning(TtspWarning):
    """A fit converged, but its quality or its determinacy is doubtful."""
