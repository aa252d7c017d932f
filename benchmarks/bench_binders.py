"""Real asphalt-binder data: held-out isotherm prediction and agreement with published shifts.

Data: ../shared/data/asphalt-binder-ptf (MIT licence, TFHRC ABML; see its README) when present,
else tests/data (binders 1-5 only). Replicate 1 of each binder: 7 isotherms 10–82 °C, G' and G''.

Rows:
* Held-out prediction (interconversion issue target): leave one interior isotherm out, build
  master curve + WLF law from the rest (reference 58 °C), predict G' and G'' at the left-out
  temperature and its frequencies; rms relative error %. Target: median over binders and
  held-out temperatures <= 5 %.
* Shift factors vs the authors' published ones (reference 60 °C): max |difference| (target
  <= 0.15 decade); binders 6–10 are held out of all tuning.

Beside each held-out prediction: the same prediction from a plain baseline written here, the
chained pairwise shifts of ``bench_shifting.py`` (each isotherm laid on its neighbour in turn), a
WLF law fitted to them unweighted and a default Prony fit to the master curve they make; the
medians compare both over the same held-out isotherms.

Run: ``python benchmarks/bench_binders.py``. Prints a table; asserts nothing.
"""

from __future__ import annotations

import statistics
import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import ttsp  # noqa: E402
from ttsp.data import Campaign  # noqa: E402
from ttsp.laws import fit_shift_law  # noqa: E402
from ttsp.prony import fit_prony_frequency  # noqa: E402

sys.path.insert(0, str(ROOT / "benchmarks"))
from bench_shifting import pairwise_baseline  # noqa: E402

SHARED = ROOT.parent / "shared" / "data" / "asphalt-binder-ptf"


def load():
    if (SHARED / "binder_frequency_sweeps_long.csv").is_file():
        data = pd.read_csv(SHARED / "binder_frequency_sweeps_long.csv")
        shifts = pd.read_csv(SHARED / "authors_shift_factors_log10aT_Tref60C.csv")
    else:
        data = pd.read_csv(ROOT / "tests" / "data" / "asphalt_binder_ptf_lanes1-5.csv")
        shifts = pd.read_csv(ROOT / "tests" / "data" / "asphalt_binder_ptf_shift_factors_lanes1-5.csv")
    return data[data["rep"] == 1], shifts[shifts["rep"] == 1]


def campaign(rows):
    frame = pd.DataFrame({"temperature_K": rows["T_C"] + 273.15,
                          "frequency_rad_s": rows["omega_rad_s"],
                          "storage_modulus_Pa": rows["Gp_Pa"], "loss_modulus_Pa": rows["Gpp_Pa"]})
    return Campaign.from_frame(frame, modulus_kind="shear", source="binder")


def rms_error_percent(gp, gpp, test) -> float:
    """rms over G' and G'' of the relative prediction errors (%), the two pooled."""
    e1 = np.mean((gp / test["Gp_Pa"].to_numpy() - 1) ** 2)
    e2 = np.mean((gpp / test["Gpp_Pa"].to_numpy() - 1) ** 2)
    return 100 * float(np.sqrt((e1 + e2) / 2))


def baseline_prediction(train, test, held_C, reference_K) -> float:
    """The plain baseline: chained pairwise shifts, unweighted WLF, default Prony fit."""
    s = pairwise_baseline(train, reference_K)
    law = fit_shift_law(train.temperatures_K, s, reference_temperature_K=reference_K,
                        model="wlf").law
    w = np.concatenate([i.x * 10.0 ** a for i, a in zip(train.isotherms, s, strict=True)])
    ep = np.concatenate([i.values["storage_modulus_Pa"] for i in train.isotherms])
    epp = np.concatenate([i.values["loss_modulus_Pa"] for i in train.isotherms])
    order = np.argsort(w)
    series = fit_prony_frequency(w[order], ep[order], epp[order], modulus_kind="shear").series
    wt = test["omega_rad_s"].to_numpy() * 10.0 ** float(law.log10_aT(held_C + 273.15))
    return rms_error_percent(series.storage_modulus(wt), series.loss_modulus(wt), test)


def main():
    warnings.simplefilter("ignore")
    data, published = load()
    print(f"{'binder':>6}{'held out °C':>12}{'rms G′ %':>10}{'rms G″ %':>10}"
          f"{'both %':>9}{'baseline %':>12}")
    errors, baseline, shift_rows = [], [], []
    for lane, rows in data.groupby("lane"):
        temps = sorted(rows["T_C"].unique())
        for held in temps[1:-1]:
            train = campaign(rows[rows["T_C"] != held])
            test = rows[rows["T_C"] == held]
            try:
                result = ttsp.build(train, reference_temperature_C=58.0, law="wlf")
            except ttsp.DataError as exc:  # leaving it out opens a gap: nothing to predict from
                print(f"{lane:>6}{held:>12.0f}   skipped: {str(exc)[:60]}…")
                continue
            f = test["omega_rad_s"].to_numpy() / (2 * np.pi)
            gp = result.model.storage_modulus(f, held + 273.15)
            gpp = result.model.loss_modulus(f, held + 273.15)
            e1 = 100 * np.sqrt(np.mean((gp / test["Gp_Pa"].to_numpy() - 1) ** 2))
            e2 = 100 * np.sqrt(np.mean((gpp / test["Gpp_Pa"].to_numpy() - 1) ** 2))
            errors.append(rms_error_percent(gp, gpp, test))
            baseline.append(baseline_prediction(train, test, held, 58.0 + 273.15))
            print(f"{lane:>6}{held:>12.0f}{e1:>10.2f}{e2:>10.2f}{errors[-1]:>9.2f}"
                  f"{baseline[-1]:>12.2f}")
        full = ttsp.build(campaign(rows), reference_temperature_C=60.0, law="wlf")
        pub = published[published["lane"] == lane].set_index("T_C")["log10_aT"]
        ours = pd.Series(full.shifts.log10_aT, index=np.round(full.shifts.temperature_K - 273.15))
        diff = max(abs(ours[t] - pub[t]) for t in pub.index)
        shift_rows.append((lane, diff))
    print(f"median held-out rms error {statistics.median(errors):.2f} %  (target <= 5 %); "
          f"plain baseline on the same isotherms {statistics.median(baseline):.2f} %")
    print()
    print(f"{'binder':>6}{'max |ours − published| log10 aT':>34}")
    for lane, d in shift_rows:
        print(f"{lane:>6}{d:>34.3f}" + ("   (held out of tuning)" if lane >= 6 else ""))
    print("target <= 0.15 decade")


if __name__ == "__main__":
    main()
