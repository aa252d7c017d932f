"""Why a master curve left no points for a curve fit, said in terms of the data.

Layer 2 (numpy and pandas frames only). The Prony fit takes the master-curve points that are
not flagged as outliers of the shift; when the joint shift flags every point, the solver would
only say that it got no abscissa. The usual cause is measured functions that cannot belong to
one material, such as a loss modulus that is a fixed multiple of the storage modulus.
"""

from __future__ import annotations

import numpy as np

__all__ = ["explain_no_fit_points", "fixed_loss_ratio"]

#: E''/E' counts as one fixed number when its largest and smallest values are within 1 %.
FIXED_RATIO_SPREAD = 1.01


def explain_no_fit_points(frame, columns, symbols, source: str) -> str:
    """The one-line message for a master curve with fewer than two usable points.

    Parameters
    ----------
    frame : pandas.DataFrame
        The shifted frame of :meth:`ttsp.shifting.ShiftResult.shifted_frame` (with ``outlier``).
    columns : sequence of str
        The functions the fit needs (SI column names).
    symbols : mapping
        Column name -> symbol shown to the user (``E'``).
    source : str
        The campaign's source, for the message.
    """
    n = len(frame)
    present = frame[list(columns)].notna().all(axis=1)
    flagged = int(frame["outlier"].astype(bool).sum()) if "outlier" in frame else 0
    names = " and ".join(symbols[c] for c in columns)
    if flagged and flagged >= int(present.sum()) - 1:
        text = (f"{source}: no master-curve point is left to fit the Prony series to: the "
                f"shift flagged {flagged} of {n} points as outliers: {names} cannot be "
                f"shifted together")
        if list(columns) == ["storage_modulus_Pa", "loss_modulus_Pa"]:
            ratio = (frame["loss_modulus_Pa"] / frame["storage_modulus_Pa"]).to_numpy(float)
            ratio = ratio[np.isfinite(ratio) & (ratio > 0)]
            if ratio.size and ratio.max() <= FIXED_RATIO_SPREAD * ratio.min():
                text += (f"; {symbols['loss_modulus_Pa']} is {np.median(ratio):.4g} times "
                         f"{symbols['storage_modulus_Pa']} at every point, as if one column "
                         f"were computed from the other: check the "
                         f"{symbols['loss_modulus_Pa']} column")
        return text
    return (f"{source}: no master-curve point has all of {names} to fit the Prony series to "
            f"({int(present.sum())} of {n} points have them)")


def fixed_loss_ratio(campaign) -> float | None:
    """E''/E' when it is one fixed number at every point of a frequency campaign (within
    FIXED_RATIO_SPREAD), else None. No linear viscoelastic material has a loss factor that is
    the same at every frequency and temperature over a campaign's range (it would need a
    power-law modulus of one slope everywhere; Ferry 1980, ch. 3): such columns were computed
    one from the other, or mislabelled."""
    if campaign.domain != "frequency" or not {"storage_modulus_Pa", "loss_modulus_Pa"} <= set(
            campaign.quantities):
        return None
    ratios = np.concatenate([np.asarray(i.values["loss_modulus_Pa"], float)
                             / np.asarray(i.values["storage_modulus_Pa"], float)
                             for i in campaign.isotherms])
    ratios = ratios[np.isfinite(ratios) & (ratios > 0)]
    if ratios.size < 3 or ratios.max() > FIXED_RATIO_SPREAD * ratios.min():
        return None
    return float(np.median(ratios))
