"""The CSV writer of the output tables: the same bytes as pandas' own writer, faster.

pandas ``DataFrame.to_csv(index=False, float_format="%.10g", lineterminator="\\n")`` is the
independent reference; the quoting rule is RFC 4180's as Python's csv module applies it.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest

from ttsp.io.writers import frame_to_csv_text


def pandas_text(frame: pd.DataFrame) -> str:
    frame = frame.copy()
    for col in [c for c in frame.columns if c.endswith("temperature_K")]:
        twin = col[:-1] + "C"
        if twin not in frame.columns:
            frame.insert(list(frame.columns).index(col), twin, frame[col] - 273.15)
    return frame.to_csv(index=False, float_format="%.10g", lineterminator="\n")


def test_mixed_columns_match_pandas_byte_for_byte():
    rng = np.random.default_rng(1)
    x = rng.lognormal(0.0, 8.0, 9) * rng.choice([-1.0, 1.0], 9)
    x[2], x[5], x[7] = np.nan, np.inf, -np.inf
    frame = pd.DataFrame({
        "temperature_K": np.linspace(250.0, 400.0, 9),
        "value, with comma": x,
        "count": np.arange(9, dtype=np.int64) - 4,
        "flag": np.arange(9) % 2 == 0,
        "note": ["plain", 'has "quotes"', "has,comma", "", None, "line\nbreak", "°C ünïcode",
                 "x", "y"],
        "tiny": np.array([1e-300, 5e-324, 0.0, -0.0, 1.0, 123456789012.0, 1.5, 2.5, 1 / 3]),
    })
    assert frame_to_csv_text(frame) == pandas_text(frame)


def test_kelvin_column_gets_its_celsius_twin_unless_present():
    frame = pd.DataFrame({"temperature_C": [20.0], "temperature_K": [293.15]})
    assert frame_to_csv_text(frame) == pandas_text(frame)
    assert frame_to_csv_text(frame).splitlines()[0] == "temperature_C,temperature_K"


@pytest.mark.parametrize("frame", [
    pd.DataFrame({"a": [1.0, np.nan]}),                                 # one column, an empty field
    pd.DataFrame({"a": ["x", ""]}),
    pd.DataFrame([[1.0, 2.0]], columns=["a", "a"]),                     # a repeated name
    pd.DataFrame({"c": pd.Categorical([1 / 3, 0.5]), "v": [1.0, 2.0]}),  # an extension dtype
    pd.DataFrame({"n": pd.array([1, None], dtype="Int64"), "v": [1.0, 2.0]}),
    pd.DataFrame({"s": ["carriage\rreturn", "x"], "v": [1.0, 2.0]}),
    pd.DataFrame({"a": np.array([], dtype=float), "b": np.array([], dtype=float)}),
    pd.DataFrame({"f32": np.array([1 / 3, 2e-8], dtype=np.float32), "v": [1.0, 2.0]}),
])
def test_edge_cases_match_pandas(frame):
    assert frame_to_csv_text(frame) == pandas_text(frame)


def test_a_column_kind_it_does_not_handle_goes_to_pandas():
    frame = pd.DataFrame({"when": pd.to_datetime(["2026-12-02", "2026-12-03"]),
                          "v": [1.0, 2.0]})
    assert frame_to_csv_text(frame) == pandas_text(frame)


@pytest.fixture(scope="module")
def build_frames():
    import ttsp
    from ttsp.cli import demo_input

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = ttsp.build(ttsp.read_campaign(demo_input()))
    return [result.shifts.to_frame(), result.master_curve_frame(), result.series.to_frame(),
            result.series.finite_element_table(), result.material_functions_frame()]


def test_every_output_table_of_a_build_matches_pandas(build_frames):
    for frame in build_frames:
        assert frame_to_csv_text(frame) == pandas_text(frame)
