"""Every fit and result type of ttsp keeps the one result contract (ttsp/result_contract.py).

The instances come from one real build of the packaged demo campaign (with the relaxation
spectrum and cross-validation on), plus a closed-form fit to its master curve, so the contract
is checked on the objects users get.
"""

from __future__ import annotations

import json
import math
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import ttsp
from ttsp.build_result import BuildResult
from ttsp.checks.result import CheckResult
from ttsp.closed_forms import ClosedFormFit, fit_closed_form
from ttsp.crossval import CrossValidation
from ttsp.laws.results import ShiftLawFit
from ttsp.prony.fit_result import PronyFit
from ttsp.result_contract import ResultContract
from ttsp.shifting.result import ShiftResult
from ttsp.spectrum import RelaxationSpectrum

DEMO = Path(ttsp.__file__).parent / "demo_data" / "damping_elastomer_dma.csv"

#: every result type, and how to take its instance from the demo build
RESULT_TYPES = {
    ShiftResult: lambda built: built["build"].shifts,
    ShiftLawFit: lambda built: built["build"].law_fit,
    PronyFit: lambda built: built["build"].prony_fit,
    CheckResult: lambda built: built["build"].checks[0],
    RelaxationSpectrum: lambda built: built["build"].relaxation_spectrum,
    CrossValidation: lambda built: built["build"].cross_validation,
    ClosedFormFit: lambda built: built["closed_form"],
    BuildResult: lambda built: built["build"],
}


@pytest.fixture(scope="module")
def built():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = ttsp.build(ttsp.read_campaign([DEMO]), spectrum=True)
        master = result.master_curve_frame()
        master = master[~master["outlier"]]
        closed = fit_closed_form("sigmoid", master["reduced_frequency_rad_s"].to_numpy(),
                                 storage_modulus_Pa=master["storage_modulus_Pa"].to_numpy(),
                                 loss_modulus_Pa=master["loss_modulus_Pa"].to_numpy())
    return {"build": result, "closed_form": closed}


def same_numbers(a: dict, b: dict) -> bool:
    """Equal keys and values, NaN equal to NaN, text compared as text."""
    if list(a) != list(b):
        return False
    for k in a:
        x, y = a[k], b[k]
        if isinstance(x, str) or isinstance(y, str):
            if x != y:
                return False
        elif not (math.isnan(x) and math.isnan(y)) and not math.isclose(x, y, rel_tol=1e-12,
                                                                         abs_tol=1e-12):
            return False
    return True


@pytest.mark.parametrize("result_type", list(RESULT_TYPES), ids=lambda t: t.__name__)
def test_every_result_keeps_the_contract(built, result_type):
    result = RESULT_TYPES[result_type](built)
    assert isinstance(result, result_type) and isinstance(result, ResultContract)

    params, stderr = dict(result.params), dict(result.stderr)
    assert params and list(params) == list(stderr)
    assert all(type(v) is float for v in stderr.values())          # NaN allowed, None not
    assert all(isinstance(v, (float, str)) for v in params.values())
    assert isinstance(result.notes, tuple) and all(isinstance(n, str) for n in result.notes)
    assert type(result.success) is bool and isinstance(result.message, str)

    data = json.loads(json.dumps(result.to_dict(), allow_nan=False))   # JSON-ready: no NaN
    back = result_type.from_dict(data)
    assert type(back) is result_type
    assert same_numbers(dict(back.params), params)
    assert same_numbers(dict(back.stderr), stderr)
    assert back.notes == result.notes and back.success == result.success

    frame = result.params_frame()
    assert isinstance(frame, pd.DataFrame) and list(frame.columns) == ["parameter", "value",
                                                                         "stderr"]
    assert len(frame) == len(params) and list(frame["parameter"]) == list(params)
    assert isinstance(result.to_frame(), pd.DataFrame)

    page = result._repr_html_()
    assert page.count("<table>") == 1 and "<th>stderr</th>" in page
    first = next(iter(params)).replace("'", "&#x27;").replace('"', "&quot;")
    assert first in page
    assert all(n.replace("<", "&lt;")[:20] in page for n in result.notes[:3])


def test_the_law_fit_gives_its_band_as_a_method(built):
    fit = built["build"].law_fit
    t = np.linspace(*fit.law.valid_temperature_range_K, 5)
    np.testing.assert_array_equal(fit.band(t), ttsp.laws.law_prediction_stderr(fit, t))


def test_old_names_of_the_notes_still_read(built):
    result = built["build"]
    assert result.warnings is result.notes
    assert result.shifts.warnings is result.shifts.notes
    assert result.prony_fit.warnings is result.prony_fit.notes
