"""Error and warning types of ttsp.

One hierarchy: every error the user can cause is a :class:`DataError` (a ``ValueError``);
a numerical solver that cannot produce an answer raises :class:`FitError` (a ``RuntimeError``).
The command line turns a ``TtspError`` into one line on stderr and exit code 2.
"""

from __future__ import annotations

__all__ = [
    "TtspError",
    "DataError",
    "OptionValueError",
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


class OptionValueError(DataError):
    """An option was given a value it cannot take (``--column oops``, ``--repeats sum``).

    Raised by the shared build steps (:mod:`ttsp.runner`) without knowing who called them: the
    command line reports it as a usage error of that option (``Invalid value for --column:
    ...``, exit 2), and a batch or a script sees a :class:`DataError` with the same text.

    Parameters
    ----------
    option : str
        The option as the user typed it (``"--column"``).
    reason : str
        What is wrong with the value, naming the value.
    """

    def __init__(self, option: str, reason: str):
        super().__init__(option, reason)   # both in args: the error survives pickling
        self.option, self.reason = option, reason

    def __str__(self) -> str:
        return f"Invalid value for {self.option}: {self.reason}"


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
