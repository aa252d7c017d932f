"""Shift-factor laws: WLF, Arrhenius, WLF above Tg with Arrhenius below, VFT and polynomial.

A *shift law* gives the horizontal shift factor log10 a_T as a function of the absolute
temperature T about a reference temperature T_ref, where log10 a_T(T_ref) = 0. The sign
follows the convention of the package: log10 a_T > 0 below the reference temperature, the
reduced frequency is omega * a_T and the reduced time t / a_T.

Every public name below is importable from ``ttsp.laws``; its module loads when first used,
so importing the package (or reading the law names) loads nothing else.

Contents
--------
* ``names``: the law names in one place (:data:`LAW_MODELS`, :data:`AUTO_MODELS`, display
  titles), read by the build's choices and the command line;
* ``base``: :class:`ShiftLaw`, frozen law objects that evaluate themselves
  (:meth:`ShiftLaw.log10_aT`, :meth:`ShiftLaw.activation_energy_kJ_per_mol`,
  :meth:`ShiftLaw.fragility`), change reference temperature (:meth:`ShiftLaw.at_reference`)
  and export themselves (``to_dict`` / ``from_dict`` / ``_repr_html_``); each law also carries
  its own start values, bounds and rules for held parameters, the hooks of the fit;
* ``wlf``, ``vft``, ``arrhenius``, ``wlf_arrhenius``, ``polynomial``: the laws;
* ``registry``: :data:`SHIFT_LAWS` (model name -> law class) and :func:`make_shift_law` to build
  a law from known constants without any data;
* ``conversions``: WLF constants at two reference temperatures and WLF against VFT
  (:func:`wlf_at_reference`, :func:`wlf_to_vft`, :func:`vft_to_wlf`);
* ``fit``: :func:`fit_shift_law`, a weighted least-squares fit (lmfit) of a law to a shift
  table, with an ``"auto"`` choice by held-out prediction (``choice``), returning a
  :class:`ShiftLawFit` (``results``, with :func:`law_prediction_stderr`);
* private engine: ``_table`` (the table checked and weighed), ``_weighting``, ``_start_grid``
  (separable least squares over trial grids), ``_solver`` (one law fitted), ``_refit`` (one law
  refitted to the table less a row), ``_common`` (constants and small helpers).

References
----------
Williams, M. L., Landel, R. F. & Ferry, J. D. (1955). J. Am. Chem. Soc. 77, 3701-3707.
Ferry, J. D. (1980). Viscoelastic Properties of Polymers, 3rd ed., Wiley, ch. 11.
Schwarz, G. (1978). Estimating the dimension of a model. Ann. Stat. 6, 461-464.
Stone, M. (1974). Cross-validatory choice and assessment of statistical predictions.
J. R. Stat. Soc. B 36, 111-147.
"""

from __future__ import annotations

import importlib

#: public name -> the module of this package that defines it
_HOME = {
    "GAS_CONSTANT_J_PER_MOL_K": "_common",
    "LAW_MODELS": "names",
    "AUTO_MODELS": "names",
    "LAW_TITLES": "names",
    "LAW_SHORT_TITLES": "names",
    "SHIFT_LAWS": "registry",
    "make_shift_law": "registry",
    "ShiftLaw": "base",
    "WLFLaw": "wlf",
    "ArrheniusLaw": "arrhenius",
    "WLFArrheniusLaw": "wlf_arrhenius",
    "VFTLaw": "vft",
    "PolynomialLaw": "polynomial",
    "ShiftLawFit": "results",
    "law_prediction_stderr": "results",
    "fit_shift_law": "fit",
    "wlf_at_reference": "conversions",
    "wlf_to_vft": "conversions",
    "vft_to_wlf": "conversions",
    "MAX_HELD_OUT_ROWS": "choice",
    "HELD_OUT_GAIN_RATIO": "choice",
    "HELD_OUT_GAIN_MIN": "choice",
    "BIC_VERY_STRONG": "choice",
    "LACK_OF_FIT_P": "choice",
}

__all__ = [
    "GAS_CONSTANT_J_PER_MOL_K",
    "SHIFT_LAWS",
    "AUTO_MODELS",
    "LAW_MODELS",
    "LAW_TITLES",
    "LAW_SHORT_TITLES",
    "ShiftLaw",
    "WLFLaw",
    "ArrheniusLaw",
    "WLFArrheniusLaw",
    "VFTLaw",
    "PolynomialLaw",
    "ShiftLawFit",
    "make_shift_law",
    "fit_shift_law",
    "law_prediction_stderr",
    "wlf_at_reference",
    "wlf_to_vft",
    "vft_to_wlf",
]


def __getattr__(name):
    if name in _HOME:
        value = getattr(importlib.import_module(f"{__name__}.{_HOME[name]}"), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_HOME))
