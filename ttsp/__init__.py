"""ttsp: time–temperature superposition master curves from temperature campaigns.

The handful of functions a notebook needs are importable from here; heavy modules load only
when first used, so ``import ttsp`` stays fast and never loads matplotlib.
"""

from __future__ import annotations

__version__ = "0.1.0"

_LAZY = {
    "read_campaign": ("ttsp.io.readers", "read_campaign"),
    "Campaign": ("ttsp.data", "Campaign"),
    "Isotherm": ("ttsp.data", "Isotherm"),
    "DataError": ("ttsp.exceptions", "DataError"),
    "FitError": ("ttsp.exceptions", "FitError"),
    "ExtrapolationWarning": ("ttsp.exceptions", "ExtrapolationWarning"),
}

__all__ = sorted(_LAZY) + ["__version__"]


def __getattr__(name):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        value = getattr(importlib.import_module(module), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'ttsp' has no attribute {name!r}")


def __dir__():
    return __all__
