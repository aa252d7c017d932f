"""ttsp: time–temperature superposition master curves from temperature campaigns.

The handful of functions a notebook needs are importable from here; heavy modules load only
when first used, so ``import ttsp`` stays fast and never loads matplotlib.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"   # the one place: pyproject.toml reads it (tool.setuptools.dynamic)

_LAZY = {
    "read_campaign": ("ttsp.io.readers", "read_campaign"),
    "Campaign": ("ttsp.data", "Campaign"),
    "Isotherm": ("ttsp.data", "Isotherm"),
    "build": ("ttsp.workflow", "build"),
    "BuildOptions": ("ttsp.workflow", "BuildOptions"),
    "check": ("ttsp.workflow", "check"),
    "predict": ("ttsp.workflow", "predict"),
    "shift_isotherms": ("ttsp.shifting", "shift_isotherms"),
    "fit_shift_law": ("ttsp.laws", "fit_shift_law"),
    "make_shift_law": ("ttsp.laws", "make_shift_law"),
    "PronySeries": ("ttsp.prony", "PronySeries"),
    "fit_prony_frequency": ("ttsp.prony", "fit_prony_frequency"),
    "fit_prony_time": ("ttsp.prony", "fit_prony_time"),
    "relaxation_to_creep": ("ttsp.interconvert", "relaxation_to_creep"),
    "ViscoelasticModel": ("ttsp.model", "ViscoelasticModel"),
    "stress_under_strain": ("ttsp.history", "stress_under_strain"),
    "strain_under_stress": ("ttsp.history", "strain_under_stress"),
    "DataError": ("ttsp.exceptions", "DataError"),
    "FitError": ("ttsp.exceptions", "FitError"),
    "ExtrapolationWarning": ("ttsp.exceptions", "ExtrapolationWarning"),
}

__all__ = sorted(_LAZY) + ["__version__"]


def __getattr__(name):
    if name in _LAZY:
        module, attr = _LAZY[name]
        value = getattr(importlib.import_module(module), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'ttsp' has no attribute {name!r}")


def __dir__():
    return __all__
