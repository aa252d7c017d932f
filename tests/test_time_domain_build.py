"""Time-domain shear campaigns through the build (issue 23, point 2): the campaign's modulus kind
and the liquid/solid nature reach the Prony fit. Synthetic melt invented here (seeded): a
Maxwell-type spectrum with no equilibrium modulus, shifted by a WLF law (Williams, Landel &
Ferry, J. Am. Chem. Soc. 77, 3701, 1955)."""

import numpy as np
import pandas as pd
import pytest

from ttsp.data import Campaign
from ttsp.exceptions import DataError
from ttsp.workflow import BuildOptions, build

TAU = 10.0 ** np.arange(-1.0, 4.5, 0.5)          # s at the reference temperature
GI = 1e5 * (TAU / TAU[0]) ** -0.5               # Pa: a melt's spectrum, no equilibrium term


def wlf(temp_C, ref_C=160.0, c1=5.0, c2=120.0):
    return -c1 * (temp_C - ref_C) / (c2 + temp_C - ref_C)


def melt_frame(quantity="relaxation_modulus_Pa", noise=0.005, seed=1):
    rng = np.random.default_rng(seed)
    t = np.geomspace(0.2, 3e4, 40)
    rows = []
    for temp in (130.0, 145.0, 160.0, 175.0, 190.0):
        tr = t / 10 ** wlf(temp)
        g = (GI * np.exp(-tr[:, None] / TAU)).sum(axis=1)
        if quantity == "creep_compliance_1_per_Pa":
            # a steady-flow compliance in its terminal form is enough here: J = J0 + t/η0
            eta = float((GI * TAU).sum())
            g = 1.0 / GI.sum() + tr / eta + 1e-6 * (1 - np.exp(-tr / 1.0))
        y = g * np.exp(rng.normal(0, noise, t.size))
        rows.append(pd.DataFrame({"temperature_K": temp + 273.15, "time_s": t, quantity: y}))
    return pd.concat(rows, ignore_index=True)


def test_shear_relaxation_gives_a_shear_series():
    c = Campaign.from_frame(melt_frame(), modulus_kind="shear")
    r = build(c, BuildOptions(reference_temperature_C=160, law="wlf", cross_validation=False))
    assert r.series.modulus_kind == "shear"
    assert r.summary()["prony"]["modulus_kind"] == "shear"


def test_liquid_has_zero_equilibrium_modulus():
    c = Campaign.from_frame(melt_frame(), modulus_kind="shear")
    solid = build(c, BuildOptions(reference_temperature_C=160, law="wlf", cross_validation=False))
    liquid = build(c, BuildOptions(reference_temperature_C=160, law="wlf", cross_validation=False,
                                   material="liquid"))
    assert liquid.series.equilibrium_modulus_Pa == 0.0
    assert liquid.summary()["options"]["material"] == "liquid"
    # the solid fit is free to leave a spurious E_inf: the liquid one is not
    assert solid.series.equilibrium_modulus_Pa >= 0.0


def test_liquid_creep_is_fitted_with_flow():
    c = Campaign.from_frame(melt_frame("creep_compliance_1_per_Pa"), modulus_kind="shear")
    r = build(c, BuildOptions(reference_temperature_C=160, law="wlf", cross_validation=False,
                              material="liquid"))
    assert r.series.modulus_kind == "shear"
    assert r.prony_fit.creep.fluidity_1_per_Pa_s > 0
    assert r.series.equilibrium_modulus_Pa == 0.0


def test_material_must_be_solid_or_liquid():
    with pytest.raises(DataError, match=r"material must be one of"):
        BuildOptions(material="gel")
