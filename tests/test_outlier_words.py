"""The master-curve legend and the outliers check count the same thing: points (issue 16,
point 8). A point whose E' and E'' are both drawn is one flagged point, not two.

The campaign is test_shifting's generated WLF one with two planted 40 % errors (far beyond
any noise at 2 %), so that the shifting flags them.
"""

from __future__ import annotations

import re
import warnings

import numpy as np
from _campaigns import shift_test_campaign as campaign

from ttsp.data import Campaign, Isotherm


def test_legend_count_equals_the_checks_count_of_points():
    from ttsp.plotting import plot_master_curve
    from ttsp.workflow import build

    camp, _ = campaign(noise=0.02, seed=5)
    isos = list(camp.isotherms)
    for k, i in ((2, 3), (6, 7)):
        iso = isos[k]
        vals = {q: v.copy() for q, v in iso.values.items()}
        vals["storage_modulus_Pa"][i] *= 1.4
        isos[k] = Isotherm(iso.temperature_K, iso.x, vals, iso.source_rows)
    bad = Campaign(tuple(isos), camp.domain, camp.modulus_kind, camp.source, camp.units_as_read,
                   camp.metadata, camp.dropped_rows)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = build(bad, reference_temperature_C=320.0 - 273.15, law="wlf",
                       cross_validation=False)
    check = next(c for c in result.checks if c.name == "outliers")
    points = int(check.to_dict()["details"]["outliers"])
    assert points >= 2
    ax = plot_master_curve(result)
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    counted = [int(m.group(1)) for lab in labels
               for m in [re.search(r"outlier points \((\d+)\)", lab)] if m]
    assert counted == [points]
    assert points == sum(int(np.sum(m)) for m in result.shifts.outlier_mask)
