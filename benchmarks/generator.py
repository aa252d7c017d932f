"""Exact synthetic temperature campaigns for benchmarks (and tests): Prony spectra + WLF shifts.

A generalized Maxwell model E(t) = E∞ + Σ E_i exp(−t/τ_i) at the reference temperature gives
the exact storage and loss moduli (Ferry, Viscoelastic Properties of Polymers, 1980, ch. 3):

    E'(ω) = E∞ + Σ E_i (ωτ_i)²/(1 + (ωτ_i)²),     E''(ω) = Σ E_i ωτ_i/(1 + (ωτ_i)²)

and thermorheological simplicity moves every τ_i to τ_i·a_T at temperature T with WLF
log10 a_T = −C1 (T − T_r)/(C2 + T − T_r). The spectrum E_i over log τ_i (four terms per
decade, which keeps the Prony ripple far below the noise) has one of three shapes:

* ``"symmetric"``: a Gaussian in log τ;
* ``"skewed"``: a split Gaussian, three times wider on the short-time side;
* ``"bimodal"``: two Gaussians 2.4 widths apart, the slower one at 35 % of the faster.

It is centred and scaled on the window of reduced frequency (or time) that the campaign covers,
so the data show the transition rather than a plateau. Noise is multiplicative and log-normal:
value · exp(noise · N(0, 1)), independent for every value (2 % by default, on both moduli).
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from ttsp.data import Campaign, Isotherm  # noqa: E402

SHAPES = ("symmetric", "skewed", "bimodal")


@dataclass(frozen=True)
class Truth:
    """What generated a synthetic campaign."""

    spectrum_shape: str
    C1: float
    C2_K: float
    reference_temperature_K: float
    temperatures_K: np.ndarray
    log10_aT: np.ndarray          # exact, relative to reference_temperature_K
    log10_bT: np.ndarray          # exact vertical shift applied (zeros by default)
    E_inf: float                  # Pa
    E_i: np.ndarray               # Pa
    tau_i: np.ndarray             # s, at the reference temperature

    def storage_loss(self, omega_rad_s):
        """Exact E'(ω), E''(ω) at the reference temperature (Pa)."""
        return prony_storage_loss(omega_rad_s, self.E_inf, self.E_i, self.tau_i)

    def relaxation(self, t_s):
        """Exact E(t) at the reference temperature (Pa)."""
        return prony_relaxation(t_s, self.E_inf, self.E_i, self.tau_i)


def wlf_log10_aT(temperature_K, C1, C2_K, reference_temperature_K):
    """WLF: log10 a_T = −C1 (T − T_r)/(C2 + T − T_r)."""
    d = np.asarray(temperature_K, float) - reference_temperature_K
    return -C1 * d / (C2_K + d)


def prony_storage_loss(omega, E_inf, E_i, tau_i):
    wt = np.asarray(omega, float)[..., None] * np.asarray(tau_i)
    w2 = wt * wt
    return (E_inf + np.sum(E_i * w2 / (1 + w2), axis=-1), np.sum(E_i * wt / (1 + w2), axis=-1))


def prony_relaxation(t, E_inf, E_i, tau_i):
    return E_inf + np.sum(E_i * np.exp(-np.asarray(t, float)[..., None] / np.asarray(tau_i)),
                          axis=-1)


def spectrum(shape, center_log10_tau, width_decades, *, per_decade=4, E_glassy=1e9,
             E_inf=1e6):
    """Prony terms (tau_i, E_i) of the given shape; Σ E_i = E_glassy − E_inf."""
    if shape not in SHAPES:
        raise ValueError(f"spectrum_shape must be one of {SHAPES}; got {shape!r}")
    w = float(width_decades)
    lt = np.arange(center_log10_tau - 6 * w, center_log10_tau + 6 * w + 1e-9, 1.0 / per_decade)
    z = lt - center_log10_tau
    if shape == "symmetric":
        h = np.exp(-0.5 * (z / w) ** 2)
    elif shape == "skewed":
        h = np.where(z < 0, np.exp(-0.5 * (z / (1.5 * w)) ** 2),
                     np.exp(-0.5 * (z / (0.5 * w)) ** 2))
    else:
        h = (np.exp(-0.5 * ((z + 1.2 * w) / (0.5 * w)) ** 2)
             + 0.35 * np.exp(-0.5 * ((z - 1.2 * w) / (0.5 * w)) ** 2))
    keep = h > 1e-8
    E = h[keep] / h[keep].sum() * (E_glassy - E_inf)
    return 10.0 ** lt[keep], E


def make_campaign(spectrum_shape, C1, C2_K, reference_temperature_K, temperatures_K,
                  frequencies_Hz=None, noise=0.02, seed=0, *, domain="frequency", times_s=None,
                  log10_bT=None, spectrum_center_log10_tau=None, spectrum_width_decades=None,
                  modulus_kind="tensile", E_glassy=1e9, E_inf=1e6):
    """An exact campaign with noise, and the truth that made it.

    Parameters
    ----------
    spectrum_shape : {"symmetric", "skewed", "bimodal"}
    C1, C2_K : float
        WLF constants about ``reference_temperature_K`` (C2 in K).
    temperatures_K : array
        Isotherm temperatures, K.
    frequencies_Hz : array, optional
        Default: 10 log-spaced values from 0.1 to 100 Hz (ω = 2πf).
    noise : float
        Standard deviation of the log-normal multiplicative noise (0.02 = 2 %).
    seed : int
        Seed of the noise generator.
    domain : {"frequency", "time"}
        Time domain gives E(t) at ``times_s`` (default 10 values, 1–1000 s).
    log10_bT : array, optional
        A vertical shift applied to the moduli (measured = reduced · b_T).

    Returns
    -------
    (Campaign, Truth)
    """
    rng = np.random.default_rng(seed)
    T = np.sort(np.asarray(temperatures_K, float))
    laT = wlf_log10_aT(T, C1, C2_K, reference_temperature_K)
    lbT = np.zeros_like(T) if log10_bT is None else np.asarray(log10_bT, float)
    if domain == "frequency":
        f = np.geomspace(0.1, 100.0, 10) if frequencies_Hz is None else np.asarray(frequencies_Hz)
        x = 2 * np.pi * np.asarray(f, float)
        lo, hi = np.log10(x.min()) + laT.min(), np.log10(x.max()) + laT.max()
        center = -(lo + hi) / 2          # E'' peak near ω τ = 1
    else:
        x = np.geomspace(1.0, 1000.0, 10) if times_s is None else np.asarray(times_s, float)
        lo, hi = np.log10(x.min()) - laT.max(), np.log10(x.max()) - laT.min()
        center = (lo + hi) / 2
    if spectrum_center_log10_tau is not None:
        center = spectrum_center_log10_tau
    width = (max((hi - lo) / 6.0, 1.0) if spectrum_width_decades is None
             else spectrum_width_decades)
    tau, Ei = spectrum(spectrum_shape, center, width, E_glassy=E_glassy, E_inf=E_inf)
    isos = []
    for k, t in enumerate(T):
        aT = 10.0 ** laT[k]
        bT = 10.0 ** lbT[k]
        if domain == "frequency":
            ep, epp = prony_storage_loss(x * aT, E_inf, Ei, tau)
            ep = ep * bT * np.exp(noise * rng.standard_normal(x.size))
            epp = epp * bT * np.exp(noise * rng.standard_normal(x.size))
            vals = {"storage_modulus_Pa": ep, "loss_modulus_Pa": epp}
        else:
            e = prony_relaxation(x / aT, E_inf, Ei, tau) * bT
            vals = {"relaxation_modulus_Pa": e * np.exp(noise * rng.standard_normal(x.size))}
        isos.append(Isotherm(t, x, vals, np.arange(x.size) + 2 + k * x.size))
    camp = Campaign(tuple(isos), domain, modulus_kind, source=f"synthetic {spectrum_shape}")
    truth = Truth(spectrum_shape, float(C1), float(C2_K), float(reference_temperature_K), T,
                  laT, lbT, float(E_inf), Ei, tau)
    return camp, truth


def campaign_temperatures(C1, C2_K, reference_temperature_K, n_isotherms, *, step_K=5.0,
                          max_step_decades=2.0):
    """5 K steps around the reference such that neighbours stay shiftable.

    Below the reference the WLF shift between neighbours grows quickly; temperatures are added
    below while that step stays ≤ ``max_step_decades`` (the 3-decade frequency window then
    keeps at least one decade of overlap) and at most half the isotherms lie below; the rest
    are above.
    """
    tr = reference_temperature_K
    below = 0
    while below < n_isotherms // 2:
        t_lo, t_hi = tr - (below + 1) * step_K, tr - below * step_K
        if C2_K + t_lo - tr <= 0:
            break
        step = (wlf_log10_aT(t_lo, C1, C2_K, tr) - wlf_log10_aT(t_hi, C1, C2_K, tr))
        if step > max_step_decades:
            break
        below += 1
    return tr + step_K * np.arange(-below, n_isotherms - below)


def benchmark_cases(n_cases=12, seed=20240601, n_isotherms=(12, 20)):
    """Random case specifications: shape cycles; C1 in [9, 19]; C2 in [45, 130] K; 5 K steps.

    Every fourth case puts the reference temperature midway between two isotherms.
    """
    rng = np.random.default_rng(seed)
    cases = []
    for i in range(n_cases):
        shape = SHAPES[i % 3]
        C1 = float(rng.uniform(9, 19))
        C2 = float(rng.uniform(45, 130))
        tr = float(np.round(rng.uniform(280, 400) / 5) * 5)
        n = int(rng.integers(n_isotherms[0], n_isotherms[1] + 1))
        temps = campaign_temperatures(C1, C2, tr, n)
        # the shift reference: the measured temperature nearest the median, or midway
        t_sorted = np.sort(temps)
        ref = float(t_sorted[(len(t_sorted) - 1) // 2])
        if i % 4 == 3:
            ref += 2.5
        cases.append({"name": f"{i:02d}-{shape}", "spectrum_shape": shape, "C1": C1, "C2_K": C2,
                      "wlf_reference_K": tr, "temperatures_K": temps, "shift_reference_K": ref,
                      "seed": int(rng.integers(0, 2 ** 31))})
    return cases


def case_campaign(case, noise=0.02):
    """Build the campaign of a case; truth re-referenced to its ``shift_reference_K``."""
    camp, truth = make_campaign(case["spectrum_shape"], case["C1"], case["C2_K"],
                                case["wlf_reference_K"], case["temperatures_K"], noise=noise,
                                seed=case["seed"])
    ref = case["shift_reference_K"]
    true = truth.log10_aT - float(wlf_log10_aT(ref, case["C1"], case["C2_K"],
                                               case["wlf_reference_K"]))
    return camp, truth, true
def points_at_true_shifts(case, noise=0.02):
    """The master-curve points of a case's campaign placed by its exact shifts: reduced ω
    (rad/s), E', E'' (Pa) in order of ω, and the generating spectrum (E_∞, E_i, τ_i) referred
    to the case's ``shift_reference_K`` like the shifts."""
    camp, truth, true_log10_aT = case_campaign(case, noise=noise)
    w = np.concatenate([iso.x * 10.0 ** la
                        for iso, la in zip(camp.isotherms, true_log10_aT, strict=True)])
    ep = np.concatenate([iso.values["storage_modulus_Pa"] for iso in camp.isotherms])
    epp = np.concatenate([iso.values["loss_modulus_Pa"] for iso in camp.isotherms])
    order = np.argsort(w)
    tau = truth.tau_i * 10.0 ** float(truth.log10_aT[0] - true_log10_aT[0])
    return w[order], ep[order], epp[order], (truth.E_inf, truth.E_i, tau)


