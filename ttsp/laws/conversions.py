"""Conversions between parameterisations: WLF constants at another reference temperature, and
WLF to VFT and back.

Reference: Ferry, J. D. (1980). Viscoelastic Properties of Polymers, 3rd ed., Wiley, ch. 11.
"""

from __future__ import annotations

from .._validation import bad_value, check_finite, check_positive

__all__ = ["wlf_at_reference", "wlf_to_vft", "vft_to_wlf"]


def wlf_at_reference(C1: float, C2_K: float, old_reference_K: float,
                     new_reference_K: float) -> dict:
    """WLF constants referred to another reference temperature.

    C1' = C1 C2 / (C2 + T' - T) and C2' = C2 + T' - T (Ferry 1980, ch. 11). The product C1 C2
    and T_inf = T - C2 do not change.

    Parameters
    ----------
    C1 : float
        C1 at the old reference (dimensionless).
    C2_K : float
        C2 at the old reference, in K.
    old_reference_K, new_reference_K : float
        Old reference T and new reference T', in K.

    Returns
    -------
    dict
        ``{"C1": C1', "C2_K": C2'}``.

    Raises
    ------
    DataError
        The new reference is at or below the divergence T_inf = T - C2.
    """
    c1 = check_finite("C1", C1)
    c2 = check_positive("C2_K", C2_K)
    t_old = check_positive("old_reference_K", old_reference_K)
    t_new = check_positive("new_reference_K", new_reference_K)
    c2_new = c2 + t_new - t_old
    if c2_new <= 0:
        raise bad_value("new_reference_K",
                        f"above the WLF divergence T - C2 = {t_old - c2:.6g} K", new_reference_K)
    return {"C1": c1 * c2 / c2_new, "C2_K": c2_new}


def wlf_to_vft(C1: float, C2_K: float, reference_temperature_K: float) -> dict:
    """VFT constants (log10 form) of a WLF law: T_inf = T_ref - C2 and B = C1 C2.

    log10 a_T = B/(T - T_inf) - B/(T_ref - T_inf) equals the WLF expression identically
    (Ferry 1980, ch. 11). For the natural-log VFT form multiply B by ln(10) (B' = 2.303 C1 C2).

    Returns
    -------
    dict
        ``{"B_K": C1*C2, "T_inf_K": T_ref - C2}``, both in K.
    """
    c1 = check_finite("C1", C1)
    c2 = check_positive("C2_K", C2_K)
    tr = check_positive("reference_temperature_K", reference_temperature_K)
    return {"B_K": c1 * c2, "T_inf_K": tr - c2}


def vft_to_wlf(B_K: float, T_inf_K: float, reference_temperature_K: float) -> dict:
    """WLF constants of a VFT law in log10 form: C2 = T_ref - T_inf and C1 = B / C2.

    Returns
    -------
    dict
        ``{"C1": B/(T_ref - T_inf), "C2_K": T_ref - T_inf}``.

    Raises
    ------
    DataError
        T_inf is not below the reference temperature.
    """
    b = check_finite("B_K", B_K)
    ti = check_finite("T_inf_K", T_inf_K)
    tr = check_positive("reference_temperature_K", reference_temperature_K)
    if ti >= tr:
        raise bad_value("T_inf_K", f"below the reference temperature {tr:.6g} K", T_inf_K)
    return {"C1": b / (tr - ti), "C2_K": tr - ti}
