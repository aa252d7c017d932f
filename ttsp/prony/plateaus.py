"""Whether the data of a Prony fit reach their plateaus: local log-log slopes at the data's ends.

At the short-time (high-frequency) end a glassy plateau has |d ln E/d ln t| (or
|d ln E'/d ln ω|) near 0; at the long-time end a rubbery plateau has it near 0 and a liquid's
terminal zone has it near 2 for E'(ω) (Ferry, *Viscoelastic Properties of Polymers*, 3rd ed.,
Wiley 1980, ch. 3). Where an end reaches neither, that end of the series is extrapolated and
the fit says so.

Imports numpy only.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from .series import PronySeries

__all__ = ["slope_frequency", "slope_time", "plateau_verdicts", "frequency_verdicts",
           "time_verdicts", "APPROACHING_TERMINAL_SLOPE"]


#: A long-time slope of the storage modulus above this (|d ln E'/d ln ω|, or of E(t) in time)
#: is read as the approach to a liquid's terminal zone (slope 2 for G', 1 for G'' in flow:
#: Ferry 1980, ch. 3), not as a rubber short of its plateau, where the slopes of the transition
#: zone stay near 0.5-1 (Rouse behaviour; Ferry 1980, ch. 10) [from memory].
APPROACHING_TERMINAL_SLOPE = 1.2


def slope_frequency(series: PronySeries, omega: float) -> float:
    """d ln E'/d ln ω of a series at ω (dimensionless)."""
    x = omega * series.tau_s
    num = float(np.sum(series.modulus_Pa * 2 * x * x / (1 + x * x) ** 2))
    return num / float(series.storage_modulus(omega))


def slope_time(level: float, rate: float, coef: np.ndarray, times: np.ndarray, t: float,
               creep: bool) -> float:
    """|d ln F/d ln t| at t for F = E(t) = level + Σ c e^{−t/τ} or
    F = D(t) = level + rate·t + Σ c (1 − e^{−t/λ}) (dimensionless)."""
    e = np.exp(-t / times)
    if creep:
        value = level + rate * t + float(np.sum(coef * (1 - e)))
        deriv = rate * t + float(np.sum(coef * (t / times) * e))
    else:
        value = level + float(np.sum(coef * e))
        deriv = float(np.sum(coef * (t / times) * e))
    return abs(deriv / value) if value > 0 else math.inf


def plateau_verdicts(slope_short: float, slope_long: float, plateau_slope: float,
                     terminal_slope: float, what_short: str, what_long: str,
                     symbol: str, x: str) -> tuple[bool, bool, bool, list[str]]:
    """Glassy plateau reached, rubbery plateau reached, terminal zone reached, and the warnings.

    A plateau has |d ln F/d ln x| <= ``plateau_slope`` at its end of the data; the terminal
    zone a long-end slope of at least ``terminal_slope`` (``symbol`` and ``x`` name F and x in
    the messages, ``what_short`` and ``what_long`` the ends).
    """
    glassy = slope_short <= plateau_slope
    rubbery = slope_long <= plateau_slope
    terminal = slope_long >= terminal_slope
    msgs = []
    if not glassy:
        msgs.append(f"the data do not reach the glassy plateau: |d ln {symbol}/d ln {x}| = "
                    f"{slope_short:.3g} at the {what_short} (a plateau has <= {plateau_slope}); "
                    "the instantaneous modulus and the short-time end of the series are "
                    "extrapolated")
    if not rubbery and not terminal and slope_long >= APPROACHING_TERMINAL_SLOPE:
        msgs.append(f"the data end on the way into the terminal (flow) zone: |d ln {symbol}/"
                    f"d ln {x}| = {slope_long:.3g} at the {what_long}, rising towards the "
                    f"{terminal_slope:g}-or-more of a liquid's flow; for a melt that is the "
                    "expected end, and its equilibrium modulus is zero by physics; the "
                    "long-time end of the series is extrapolated")
    elif not rubbery and not terminal:
        msgs.append(f"the data do not reach the rubbery plateau: |d ln {symbol}/d ln {x}| = "
                    f"{slope_long:.3g} at the {what_long} (a plateau has <= {plateau_slope}); "
                    "the equilibrium modulus and the long-time end of the series are "
                    "extrapolated")
    return glassy, rubbery, terminal, msgs


def frequency_verdicts(series: PronySeries, omega_min: float, omega_max: float,
                       plateau_slope: float, modulus_kind: str):
    """The verdicts of a frequency fit, from the slopes of E' at ω_max (glassy end) and ω_min
    (rubbery end; terminal from a slope of 1.8, near the 2 of a liquid's E')."""
    return plateau_verdicts(slope_frequency(series, omega_max), slope_frequency(series, omega_min),
                            plateau_slope, 1.8, "highest reduced frequency",
                            "lowest reduced frequency",
                            "G'" if modulus_kind == "shear" else "E'", "ω")


def time_verdicts(level: float, rate: float, coef: np.ndarray, times: np.ndarray,
                  t_min: float, t_max: float, plateau_slope: float, creep: bool,
                  modulus_kind: str = "tensile"):
    """The verdicts of a time fit, from the slopes of E(t) or D(t) (G(t) or J(t) in shear)
    at t_min and t_max (terminal from a slope of 2 for E(t), 1 for D(t), whose flow term grows
    as t)."""
    shear = modulus_kind == "shear"
    return plateau_verdicts(slope_time(level, rate, coef, times, t_min, creep),
                            slope_time(level, rate, coef, times, t_max, creep),
                            plateau_slope, 1.0 if creep else 2.0,
                            "shortest reduced time", "longest reduced time",
                            ("J" if shear else "D") if creep else ("G" if shear else "E"), "t")
