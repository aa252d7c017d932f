"""Placeholders in ``ttsp ... --help`` as a person reads them: ``NUMBER``, ``PATH``,
``[auto|wlf|...]``, no ``<bool>`` after a flag, ``INPUT...`` rather than ``{inputs}...``.

Typer 0.2x writes the Python type of each parameter (``<float range>``, ``<list[Path]>``,
``<bool>``); this module rewords what it shows, and nothing else. It is applied once, by
:mod:`ttsp.cli`, and only when the typer in use has the methods it rewords (older and newer
versions that do not are left as they are).
"""

from __future__ import annotations

import re

__all__ = ["readable_placeholder", "apply"]

_WORDS = {"float": "NUMBER", "int": "INTEGER", "str": "TEXT", "path": "PATH", "Path": "PATH",
          "bool": ""}


def readable_placeholder(text):
    """``<float range>`` -> ``NUMBER``, ``<list[Path]>`` -> ``PATH``, ``<a|b>`` -> ``[a|b]``,
    ``<bool>`` -> ``""``; anything else unchanged."""
    if not isinstance(text, str):
        return text
    m = re.fullmatch(r"<(?:list\[)?([^<>\[\]]+?)(?: range)?\]?>(\.\.\.)?", text)
    if m is None:
        return text
    inner = m.group(1)
    if "|" in inner:
        return f"[{inner}]"
    return _WORDS.get(inner, inner.upper())


def apply() -> None:
    """Reword the placeholders of typer's help (idempotent)."""
    try:
        from typer import core
    except ImportError:  # pragma: no cover
        return
    base = getattr(core, "_TyperParameter", None)
    if base is None or getattr(base, "_ttsp_words", False) or not hasattr(base, "display_type"):
        return
    original = base.display_type

    def display_type(self, ctx):
        return readable_placeholder(original(self, ctx))

    base.display_type = display_type
    base._ttsp_words = True
    argument = getattr(core, "TyperArgument", None)
    if argument is not None and hasattr(argument, "_usage_display_name"):
        def usage_name(self):
            name = str(self.display_name_raw).upper()
            name = name if self.required else f"[{name}]"
            return name + ("..." if self.nargs != 1 else "")

        argument._usage_display_name = usage_name
