"""The terms of a series read back from a dict (``to_dict`` of a Prony or a creep series)."""

from __future__ import annotations

from collections.abc import Mapping

from .._validation import bad_value


def terms_from_dict(data, what: str, constant_key: str, time_key: str,
                    value_key: str) -> tuple[list[float], list[float]]:
    """(times, values) of ``data["terms"]``, after checking that ``data`` is a dict with
    ``constant_key`` and ``"terms"``; ``what`` names the series in the messages.

    Raises
    ------
    DataError
        If a required key is missing or a term is malformed.
    """
    if not isinstance(data, Mapping):
        raise bad_value(what, "a dict", data)
    for key in (constant_key, "terms"):
        if key not in data:
            raise bad_value(what, f"a dict with the key {key!r}", sorted(data))
    terms = data["terms"]
    try:
        return ([float(t[time_key]) for t in terms], [float(t[value_key]) for t in terms])
    except (TypeError, KeyError, ValueError):
        raise bad_value("terms", f"a list of {{{time_key!r}: ..., {value_key!r}: ...}}",
                        terms) from None
