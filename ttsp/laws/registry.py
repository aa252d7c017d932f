"""The registry of shift laws (model name -> law class) and :func:`make_shift_law`."""

from __future__ import annotations

from .._validation import check_choice
from .arrhenius import ArrheniusLaw
from .base import ShiftLaw
from .names import LAW_MODELS
from .polynomial import PolynomialLaw
from .vft import VFTLaw
from .wlf import WLFLaw
from .wlf_arrhenius import WLFArrheniusLaw

__all__ = ["SHIFT_LAWS", "make_shift_law"]

_CLASS_OF_MODEL = {cls.model: cls for cls in
                   (WLFLaw, ArrheniusLaw, WLFArrheniusLaw, VFTLaw, PolynomialLaw)}

#: Registry of shift laws: model name -> law class, in the order of
#: :data:`~ttsp.laws.names.LAW_MODELS` (a name without its class fails at import).
SHIFT_LAWS: dict[str, type[ShiftLaw]] = {model: _CLASS_OF_MODEL[model] for model in LAW_MODELS}


def make_shift_law(model: str, reference_temperature_K: float, *,
                   valid_temperature_range_K: tuple[float, float] | None = None,
                   **params: float) -> ShiftLaw:
    """Build a shift law from known constants, without data.

    Parameters
    ----------
    model : str
        One of ``"wlf"``, ``"arrhenius"``, ``"wlf-arrhenius"``, ``"vft"``, ``"polynomial"``.
    reference_temperature_K : float
        Reference temperature in K.
    valid_temperature_range_K : (float, float), optional
        Range (K) over which the constants are trusted; outside it evaluation warns.
    **params : float
        The law's constants with their unit-suffixed names, e.g. ``C1=17.44, C2_K=51.6``
        (see the law classes in :data:`SHIFT_LAWS`).

    Returns
    -------
    ShiftLaw

    Examples
    --------
    >>> law = make_shift_law("wlf", 373.15, C1=17.44, C2_K=51.6)
    >>> round(law.log10_aT(423.15), 4)
    -8.5827
    """
    check_choice("model", model, SHIFT_LAWS)
    return SHIFT_LAWS[model](reference_temperature_K, dict(params), valid_temperature_range_K)
