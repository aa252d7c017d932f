"""Synthetic campaigns shared by the tests: moduli of a known generalized Maxwell (Prony) series
shifted by a known WLF law, so what a build finds can be checked against the truth.

Storage and loss moduli of a Prony series, E'(ω) = E_inf + Σ E_i (ωτ_i)² / (1 + (ωτ_i)²) and
E''(ω) = Σ E_i ωτ_i / (1 + (ωτ_i)²) (Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980,
ch. 3; docs/methods.md), taken at the reduced frequency ω a_T with
log10 a_T = -C1 (T - T_ref) / (C2 + T - T_ref) (Williams, Landel & Ferry, J. Am. Chem. Soc.
77:3701, 1955).

Three materials, one per family of tests that used them before they were shared here:

* ``SWEEPS``: the 10 isotherms x 8 frequencies campaign file of the command-line tests
  (WLF C1 = 9, C2 = 100 K at 20 °C; a Gaussian spectrum of modes over 14 decades);
* ``BATCH``: the tiny 5 x 6 campaign files of the batch tests (WLF C1 = 12, C2 = 80 K at
  56.85 °C);
* ``REPORT``: the in-memory 8 x 8 campaign of the report tests (WLF C1 = 9, C2 = 100 K at
  20 °C; 17 modes).

The fixtures built on these live in tests/conftest.py.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ttsp.data import Campaign, Isotherm


@dataclass(frozen=True)
class MaxwellWLF:
    """A generalized Maxwell series (modes ``tau_s``, ``modulus_Pa``; ``equilibrium_Pa``)
    shifted by WLF (``c1``, ``c2_K`` at ``reference_C``)."""

    tau_s: np.ndarray
    modulus_Pa: np.ndarray
    equilibrium_Pa: float
    c1: float
    c2_K: float
    reference_C: float

    def log10_aT(self, t_C, c1=None, c2_K=None):
        """WLF log10 a_T at ``t_C`` (°C); other C1, C2 than the material's where given."""
        c1 = self.c1 if c1 is None else c1
        c2_K = self.c2_K if c2_K is None else c2_K
        return -c1 * (t_C - self.reference_C) / (c2_K + t_C - self.reference_C)

    def moduli(self, omega_rad_s):
        """(E', E'') in Pa of the Prony series at the angular frequencies ``omega_rad_s``."""
        wt = np.outer(omega_rad_s, self.tau_s)
        storage = self.equilibrium_Pa + (self.modulus_Pa * wt**2 / (1 + wt**2)).sum(1)
        return storage, (self.modulus_Pa * wt / (1 + wt**2)).sum(1)


def _gaussian_modes(log10_tau, center, width, total_Pa=None):
    """Mode strengths exp(-((log10 τ - center) / width)² / 2), scaled to ``total_Pa``."""
    weights = np.exp(-0.5 * ((log10_tau - center) / width) ** 2)
    return weights if total_Pa is None else total_Pa * weights / weights.sum()


_SWEEPS_TAU_S = 10.0 ** np.arange(-9.0, 5.01, 0.5)
SWEEPS = MaxwellWLF(_SWEEPS_TAU_S, 1e9 * _gaussian_modes(np.log10(_SWEEPS_TAU_S), -2.0, 2.0) / 8.0,
                    2e6, 9.0, 100.0, 20.0)

_BATCH_TAU_S = 10.0 ** np.arange(-6.0, 4.01, 0.25)
_BATCH_MODULUS_PA = 1e9 * _gaussian_modes(np.log10(_BATCH_TAU_S), -1.0, 1.5)
_BATCH_MODULUS_PA *= (1e9 - 1e6) / _BATCH_MODULUS_PA.sum()
BATCH = MaxwellWLF(_BATCH_TAU_S, _BATCH_MODULUS_PA, 1e6, 12.0, 80.0, 56.85)

_REPORT_LOG10_TAU = np.linspace(-8, 4, 17)
REPORT = MaxwellWLF(10.0 ** _REPORT_LOG10_TAU,
                    _gaussian_modes(_REPORT_LOG10_TAU, -2.0, 2.0, 1.5e9), 2e6, 9.0, 100.0, 20.0)


# ---- SWEEPS: the campaign file of the command-line tests --------------------------------------
SWEEPS_TEMPERATURES_C = np.arange(0.0, 45.1, 5.0)
SWEEPS_HEADER = "Temperature (°C),Frequency (Hz),E' (MPa),E'' (MPa)"


def campaign_rows(temps_C=SWEEPS_TEMPERATURES_C, n_freq=8, *, noise=0.0, seed=3):
    """(t °C, f Hz, E' Pa, E'' Pa) of ``SWEEPS``, f from 0.1 to 100 Hz; with ``noise``, E' and
    E'' of each isotherm are multiplied by exp(noise N(0, 1)) (log-normal), seeded."""
    rng = np.random.default_rng(seed)
    f = np.logspace(-1, 2, n_freq)
    rows = []
    for t in temps_C:
        storage, loss = SWEEPS.moduli(2 * np.pi * f * 10 ** SWEEPS.log10_aT(t))
        if noise:
            storage = storage * np.exp(noise * rng.standard_normal(f.size))
            loss = loss * np.exp(noise * rng.standard_normal(f.size))
        rows += list(zip([t] * n_freq, f, storage, loss, strict=True))
    return rows


def write_campaign(path: Path, rows: Sequence | None = None, *, scale=1.0, loss_factor=None,
                   last_row_temperature=None) -> Path:
    """Write ``rows`` (default: the noise-free ``campaign_rows()``) as a CSV in °C, Hz and MPa.

    ``scale`` multiplies both moduli, ``loss_factor`` replaces E'' by E' x loss_factor, and
    ``last_row_temperature`` (text) replaces the temperature of the last row: bad inputs.
    """
    lines = [SWEEPS_HEADER]
    for t, f, storage, loss in rows or campaign_rows():
        loss = storage * loss_factor if loss_factor is not None else loss
        lines.append(f"{t:g},{f:.6g},{storage * scale / 1e6:.8g},{loss * scale / 1e6:.8g}")
    if last_row_temperature is not None:
        lines[-1] = f"{last_row_temperature}," + lines[-1].split(",", 1)[1]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def write_noisy_campaign(path: Path, *, noise=0.01, seed=3) -> Path:
    """The campaign file of the command-line tests: ``SWEEPS`` with 1 % log-normal noise."""
    return write_campaign(path, campaign_rows(noise=noise, seed=seed))


# ---- BATCH: tiny campaign files and manifests of the batch tests -----------------------------
def write_batch_campaign(path: Path, *, seed=0, noise=0.01, c1=BATCH.c1, c2=BATCH.c2_K) -> Path:
    """A 5 x 6 frequency-sweep campaign of ``BATCH`` (other WLF C1, C2 where given): exact
    moduli at ω a_T with 1 % log-normal noise, in K-free SI columns (°C, Hz, Pa)."""
    rng = np.random.default_rng(seed)
    f = np.geomspace(0.1, 100.0, 6)
    rows = ["temperature_C,frequency_Hz,storage_modulus_Pa,loss_modulus_Pa"]
    for t in BATCH.reference_C + 6.0 * np.arange(-2, 3):
        storage, loss = BATCH.moduli(2 * np.pi * f * 10.0 ** BATCH.log10_aT(t, c1, c2))
        storage = storage * np.exp(noise * rng.standard_normal(6))
        loss = loss * np.exp(noise * rng.standard_normal(6))
        rows += [f"{t:.2f},{a:.8g},{b:.8g},{c:.8g}" for a, b, c in zip(f, storage, loss, strict=True)]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def write_manifest(path: Path, rows, header="id,path,law,reference_temperature_C") -> Path:
    """A batch manifest: ``header`` and one comma-separated line per row."""
    path.write_text(header + "\n" + "".join(",".join(map(str, r)) + "\n" for r in rows),
                    encoding="utf-8")
    return path


# ---- REPORT: the in-memory campaign of the report tests ---------------------------------------
def report_campaign(*, source, metadata, seed, units_as_read) -> Campaign:
    """``REPORT`` at 8 isotherms from -20 to 50 °C x 8 frequencies (0.1 to 100 Hz), E' and E''
    multiplied by 1 + 0.005 N(0, 1), seeded."""
    rng = np.random.default_rng(seed)
    f = np.logspace(-1, 2, 8)
    parts = []
    for t_c in (-20, -10, 0, 10, 20, 30, 40, 50):
        storage, loss = REPORT.moduli(2 * np.pi * f * 10 ** REPORT.log10_aT(t_c))
        noise = 1 + 0.005 * rng.standard_normal((2, f.size))
        parts.append(pd.DataFrame({
            "temperature_K": t_c + 273.15, "frequency_rad_s": 2 * np.pi * f,
            "storage_modulus_Pa": storage * noise[0], "loss_modulus_Pa": loss * noise[1]}))
    return Campaign.from_frame(pd.concat(parts, ignore_index=True), domain="frequency",
                               source=source, units_as_read=units_as_read, metadata=metadata)


# ---- the exact campaigns of the shift tests (Ferry 1980 ch. 3 modes; WLF 1955 shifts) ----
SHIFT_TEST_TEMPERATURES_K = 300 + 5 * np.arange(9.0)


def wlf_320(T, C1=10.0, C2=80.0, Tr=320.0):
    d = np.asarray(T, float) - Tr
    return -C1 * d / (C2 + d)


def gaussian_spectrum(center, width, E_g=1e9, E_inf=1e6):
    lt = np.arange(center - 6 * width, center + 6 * width + 1e-9, 0.25)
    h = np.exp(-0.5 * ((lt - center) / width) ** 2)
    return 10.0 ** lt, h / h.sum() * (E_g - E_inf), E_inf


def shift_test_campaign(temps=SHIFT_TEST_TEMPERATURES_K, *, noise=0.02, seed=1, domain="frequency",
             log10_bT=None, center=None, width=None, E_inf=1e6, n_points=10, Tr=320.0):
    """The exact campaign of the shift tests: a Prony spectrum (Gaussian in log τ) under WLF(C1=10, C2=80 K, T_r=320 K); returns
    (campaign, exact log10 a_T relative to 320 K)."""
    rng = np.random.default_rng(seed)
    T = np.asarray(temps, float)
    laT = wlf_320(T, Tr=Tr)
    bT = np.zeros_like(T) if log10_bT is None else np.asarray(log10_bT, float)
    if domain == "frequency":
        x = 2 * np.pi * np.geomspace(0.1, 100, n_points)
        lo, hi = np.log10(x[0]) + laT.min(), np.log10(x[-1]) + laT.max()
        c = -(lo + hi) / 2 if center is None else center
    else:
        x = np.geomspace(1.0, 1000.0, n_points)
        lo, hi = np.log10(x[0]) - laT.max(), np.log10(x[-1]) - laT.min()
        c = (lo + hi) / 2 if center is None else center
    tau, Ei, Einf = gaussian_spectrum(c, max((hi - lo) / 6, 1.0) if width is None else width,
                             E_inf=E_inf)
    isos = []
    for k, t in enumerate(T):
        a, b = 10.0 ** laT[k], 10.0 ** bT[k]
        if domain == "frequency":
            wt = x[:, None] * a * tau
            ep = (Einf + np.sum(Ei * wt ** 2 / (1 + wt ** 2), axis=1)) * b
            epp = np.sum(Ei * wt / (1 + wt ** 2), axis=1) * b
            vals = {"storage_modulus_Pa": ep * np.exp(noise * rng.standard_normal(x.size)),
                    "loss_modulus_Pa": epp * np.exp(noise * rng.standard_normal(x.size))}
        else:
            e = (Einf + np.sum(Ei * np.exp(-x[:, None] / (a * tau)), axis=1)) * b
            vals = {"relaxation_modulus_Pa": e * np.exp(noise * rng.standard_normal(x.size))}
        isos.append(Isotherm(t, x, vals, np.arange(x.size) + 2 + k * x.size))
    return Campaign(tuple(isos), domain), laT
