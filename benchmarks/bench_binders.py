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


def main():
    warnings.simplefilter("ignore")
    data, published = load()
    print(f"{'binder':>6}{'held out °C':>12}{'rms G′ %':>10}{'rms G″ %':>10}")
    errors, shift_rows = [], []
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
            errors.append(np.sqrt((e1**2 + e2**2) / 2))
            print(f"{lane:>6}{held:>12.0f}{e1:>10.2f}{e2:>10.2f}")
        full = ttsp.build(campaign(rows), reference_temperature_C=60.0, law="wlf")
        pub = published[published["lane"] == lane].set_index("T_C")["log10_aT"]
        ours = pd.Series(full.shifts.log10_aT, index=np.round(full.shifts.temperature_K - 273.15))
        diff = max(abs(ours[t] - pub[t]) for t in pub.index)
        shift_rows.append((lane, diff))
    print(f"median held-out rms error {statistics.median(errors):.2f} %  (target <= 5 %)")
    print()
    print(f"{'binder':>6}{'max |ours − published| log10 aT':>34}")
    for lane, d in shift_rows:
        print(f"{lane:>6}{d:>34.3f}" + ("   (held out of tuning)" if lane >= 6 else ""))
    print("target <= 0.15 decade")


if __name__ == "__main__":
    main()
