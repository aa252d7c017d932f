"""The campaign model (ttsp.data): validation with file/column/row, grouping by temperature,
immutability, exact frame round trips, derived frequency-domain functions."""

import dataclasses
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ttsp.data import QUANTITIES, X_COLUMN, Campaign, Isotherm, group_temperatures
from ttsp.exceptions import DataError

EP, EPP, TAN = "storage_modulus_Pa", "loss_modulus_Pa", "tan_delta"


def frame(temps_K=(293.15, 293.15, 313.15, 313.15), x=(1.0, 10.0, 1.0, 10.0),
          ep=(2e6, 3e6, 1e6, 2e6), **extra):
    cols = {"temperature_K": list(temps_K), "frequency_rad_s": list(x), EP: list(ep)}
    cols.update({k: list(v) for k, v in extra.items()})
    return pd.DataFrame(cols)


def campaign():
    return Campaign.from_frame(frame(), source="mem.csv")


# ---- building ---------------------------------------------------------------------------------
def test_from_frame_groups_and_sorts():
    df = frame(temps_K=(313.15, 293.15, 313.15, 293.15), x=(10.0, 10.0, 1.0, 1.0),
               ep=(4.0, 3.0, 2.0, 1.0))
    c = Campaign.from_frame(df)
    assert c.temperatures_K.tolist() == [293.15, 313.15]        # ascending temperature
    np.testing.assert_array_equal(c.isotherms[0].x, [1.0, 10.0])  # ascending x
    np.testing.assert_array_equal(c.isotherms[0].values[EP], [1.0, 3.0])  # values follow x
    np.testing.assert_array_equal(c.isotherms[1].values[EP], [2.0, 4.0])
    # without source_row, rows are counted as in a file with one header line: frame row i -> i+2
    assert c.isotherms[0].source_rows.tolist() == [5, 3]
    assert c.domain == "frequency" and c.x_name == "frequency_rad_s" == X_COLUMN["frequency"]
    assert c.quantities == (EP,) and c.n_points == 4 and len(c) == 2


def test_temperatures_within_tolerance_form_one_isotherm():
    # a controller holds about ±0.5 K (common practice): 24.9 and 25.1 °C are one isotherm
    df = frame(temps_K=(298.05, 298.25, 313.15, 313.15))
    c = Campaign.from_frame(df)
    assert len(c) == 2
    assert c.isotherms[0].temperature_K == pytest.approx(298.15, abs=1e-12)   # the mean
    assert len(Campaign.from_frame(df, temperature_tolerance_K=0.05)) == 3


def test_equal_temperatures_are_kept_exactly():
    # the mean of thirteen equal doubles is not always that double; the isotherm keeps it exact
    assert np.mean([293.15] * 13) != 293.15
    df = frame(temps_K=[293.15] * 13 + [313.15] * 2, x=list(range(1, 14)) + [1, 2],
               ep=[1.0] * 15)
    assert Campaign.from_frame(df).isotherms[0].temperature_K == 293.15


def test_group_temperatures_chain_and_span():
    # steps of 0.4 K chain within a tolerance of 0.5 K, but one group spans at most 2 x 0.5 K
    t = np.array([300.0, 300.4, 300.8, 301.2, 310.0])
    groups = group_temperatures(t, 0.5)
    assert [g.tolist() for g in groups] == [[0, 1, 2], [3], [4]]
    assert [g.tolist() for g in group_temperatures(t[::-1], 0.5)] == [[2, 3, 4], [1], [0]]


def test_domain_and_kind_from_the_frame():
    df = pd.DataFrame({"temperature_K": [300, 300, 320, 320], "time_s": [1, 2, 1, 2],
                       "relaxation_modulus_Pa": [2.0, 1.0, 2.0, 1.0]})
    c = Campaign.from_frame(df, modulus_kind="shear")
    assert (c.domain, c.modulus_kind, c.x_name) == ("time", "shear", "time_s")
    assert c.symbol("relaxation_modulus_Pa") == "G(t)"


def test_a_function_may_be_missing_in_a_whole_isotherm():
    df = frame(**{TAN: [0.1, 0.2, np.nan, np.nan]})
    c = Campaign.from_frame(df)
    assert set(c.isotherms[0].values) == {EP, TAN}
    assert set(c.isotherms[1].values) == {EP}
    assert c.quantities == (EP,)                     # only what every isotherm has


def test_from_frame_does_not_modify_the_frame():
    df = frame(temps_K=(313.15, 293.15, 313.15, 293.15), x=(10.0, 10.0, 1.0, 1.0))
    before = df.copy(deep=True)
    Campaign.from_frame(df)
    pd.testing.assert_frame_equal(df, before)


# ---- errors -----------------------------------------------------------------------------------
@pytest.mark.parametrize("df, kwargs, message", [
    (frame(), {"domain": "space"}, r"mem\.csv: domain must be 'frequency' or 'time'; got 'space'"),
    (frame(), {"modulus_kind": "bulk"}, r"modulus_kind must be 'tensile' or 'shear'; got 'bulk'"),
    (frame(), {"temperature_tolerance_K": -0.1},
     r"temperature_tolerance_K must be non-negative and finite; got -0.1"),
    (frame().drop(columns="temperature_K"), {},
     r"mem\.csv: missing a temperature column \(temperature_K\); columns found: frequency_rad_s"),
    (frame().drop(columns="frequency_rad_s"), {},
     r"mem\.csv: missing a frequency column \(frequency_rad_s\)"),
    (frame(), {"domain": "time"}, r"mem\.csv: missing a time column \(time_s\)"),
    (frame().drop(columns=EP), {}, r"mem\.csv: no measured material function found"),
    (frame(relaxation_modulus_Pa=[1, 1, 1, 1]), {},
     r"mem\.csv, column 'relaxation_modulus_Pa': relaxation modulus does not belong to "
     r"frequency-domain data"),
    (frame().iloc[:0], {}, r"mem\.csv: no data rows"),
    (frame(ep=(1.0, "x", 2.0, 3.0)), {},
     r"mem\.csv, column 'storage_modulus_Pa', row 3: value must be a number; got 'x'"),
    (frame(temps_K=(293.15, np.nan, 300, 300)), {},
     r"column 'temperature_K', row 3: value must be a finite number; got nan"),
    (frame(temps_K=(293.15, 293.15, -1.0, -1.0)), {},
     r"column 'temperature_K', row 4: value must be above absolute zero; got -1"),
    (frame(x=(1.0, 10.0, 1.0, -10.0)), {},
     r"column 'frequency_rad_s', row 5: value must be positive \(it is taken in a logarithm\); "
     r"got -10"),
    (frame(ep=(1.0, np.inf, 1.0, 1.0)), {},
     r"column 'storage_modulus_Pa', row 3: value must be a finite number; got inf"),
    (frame(ep=(1.0, np.nan, 1.0, 1.0)), {},       # NaN in part of an isotherm
     r"column 'storage_modulus_Pa', row 3: value must be a finite number; got nan"),
    (frame(ep=(1.0, 1.0, 0.0, 1.0)), {},
     r"column 'storage_modulus_Pa', row 4: value must be positive \(it is taken in a "
     r"logarithm\); got 0"),
    (frame(ep=[np.nan] * 4, **{TAN: [np.nan] * 4}), {},
     r"mem\.csv: no measured material function has any value"),
    (frame(x=(1.0, 10.0, 1.0, 1.0)), {},
     r"column 'frequency_rad_s', row 5: duplicate point: the same frequency 1 at the same "
     r"temperature as row 4"),
    (frame(temps_K=[293.15] * 4, x=(1, 2, 3, 4)), {},
     r"mem\.csv, column 'temperature_K': superposition needs at least 2 isotherms; found 1 "
     r"\(20 °C\) with a grouping tolerance of 0.5 K"),
])
def test_from_frame_errors(df, kwargs, message):
    with pytest.raises(DataError, match=message) as info:
        Campaign.from_frame(df, **{"source": "mem.csv", **kwargs})
    assert "\n" not in str(info.value)


def test_messages_name_the_original_header_and_unit():
    df = frame(ep=(1e6, 1e6, -2e6, 1e6))
    df["source_row"] = [11, 12, 13, 14]
    with pytest.raises(DataError, match=r"^run\.csv, column \"E' \(MPa\)\", row 13: value must be "
                                        r"positive \(it is taken in a logarithm\); got -2 MPa$"):
        Campaign.from_frame(df, source="run.csv", column_labels={EP: "E' (MPa)"},
                            units_as_read={"E' (MPa)": "MPa"})


def test_messages_name_the_file_of_each_row():
    df = frame(x=(1.0, 10.0, 1.0, 1.0))
    df["source_row"] = [2, 3, 2, 3]
    df["source_file"] = ["a.csv", "a.csv", "b.csv", "c.csv"]
    with pytest.raises(DataError, match=r"^c\.csv, column 'frequency_rad_s', row 3: duplicate "
                                        r"point: .* as row 2 of b\.csv$"):
        Campaign.from_frame(df, source="3 files")


@pytest.mark.parametrize("args, message", [
    ((float("nan"), [1.0], {}), r"temperature_K must be finite and above absolute zero"),
    ((-5.0, [1.0], {}), r"temperature_K must be finite and above absolute zero \(in K\); got -5.0"),
    (("warm", [1.0], {}), r"temperature_K must be a number in kelvin; got 'warm'"),
    ((300.0, [[1.0, 2.0]], {}), r"x must be a one-dimensional array; got 'an array of shape \(1, 2\)'"),
    ((300.0, [1.0, 2.0], {EP: [1.0]}),
     r"values\['storage_modulus_Pa'\] must be one value per x point \(2\); got 'shape \(1,\)'"),
    ((300.0, [1.0], {"modulus": [1.0]}), r"values must be keyed by names of ttsp.data.QUANTITIES"),
    ((300.0, [1.0, 1.0], {EP: [1.0, 2.0]}),
     r"x must be free of repeated values at one temperature; got 1.0"),
])
def test_isotherm_errors(args, message):
    with pytest.raises(DataError, match=message):
        Isotherm(*args)


def test_isotherm_source_rows_shape():
    with pytest.raises(DataError, match=r"source_rows must be one row number per point \(2\)"):
        Isotherm(300.0, [1.0, 2.0], {EP: [1.0, 2.0]}, source_rows=[1])


def test_campaign_constructor_errors():
    iso = Isotherm(300.0, [1.0], {EP: [1.0]})
    with pytest.raises(DataError, match=r"isotherms\[1\] must be an Isotherm; got 'dict'"):
        Campaign((iso, {}), "frequency")
    with pytest.raises(DataError, match=r"domain must be 'frequency' or 'time'; got 'both'"):
        Campaign((iso,), "both")
    with pytest.raises(DataError, match=r"modulus_kind must be 'tensile' or 'shear'; got 'bulk'"):
        Campaign((iso,), "frequency", "bulk")


# ---- immutability -----------------------------------------------------------------------------
def test_arrays_are_read_only_and_dataclasses_frozen():
    c = campaign()
    iso = c.isotherms[0]
    for arr in (iso.x, iso.values[EP], iso.source_rows):
        with pytest.raises(ValueError, match="read-only"):
            arr[0] = 1.0
    with pytest.raises(TypeError):
        iso.values[EP] = np.ones(2)                 # the mapping is a read-only proxy
    with pytest.raises(dataclasses.FrozenInstanceError):
        iso.temperature_K = 1.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        c.domain = "time"
    with pytest.raises(TypeError):
        c.metadata["x"] = "y"
    assert isinstance(c.isotherms, tuple)


def test_isotherm_copies_its_inputs():
    x = np.array([10.0, 1.0])
    e = np.array([2.0, 1.0])
    iso = Isotherm(300.0, x, {EP: e})
    x[0] = 99.0
    e[0] = 99.0
    np.testing.assert_array_equal(iso.x, [1.0, 10.0])
    np.testing.assert_array_equal(iso.values[EP], [1.0, 2.0])
    assert x.flags.writeable and e.flags.writeable  # the caller's arrays are left as they were


def test_equality_is_by_value_and_not_hashable():
    assert campaign() == campaign()
    other = Campaign.from_frame(frame(ep=(2e6, 3e6, 1e6, 2.5e6)), source="mem.csv")
    assert campaign() != other
    assert Isotherm(300.0, [1.0], {TAN: [np.nan]}) == Isotherm(300.0, [1.0], {TAN: [np.nan]})
    with pytest.raises(TypeError):
        hash(campaign())


# ---- frames -----------------------------------------------------------------------------------
def test_to_frame_columns_and_attrs():
    c = Campaign.from_frame(frame(**{TAN: [0.1, 0.2, np.nan, np.nan]}), source="f.csv",
                            units_as_read={"E'": "MPa"}, metadata={"Material": "m"},
                            dropped_rows={"blank lines": 2})
    df = c.to_frame()
    assert list(df.columns) == ["isotherm", "temperature_K", "frequency_rad_s", EP, TAN,
                                "source_row"]
    assert df["isotherm"].tolist() == [0, 0, 1, 1]
    assert np.isnan(df[TAN].iloc[2:]).all()
    assert df.attrs["metadata"] == {"Material": "m"}
    assert df.attrs["dropped_rows"] == {"blank lines": 2}


def test_frame_round_trip_is_exact():
    c = Campaign.from_frame(frame(**{TAN: [0.1, 0.2, np.nan, np.nan]}), source="f.csv",
                            units_as_read={"E'": "MPa"}, metadata={"Material": "m"})
    back = Campaign.from_frame(c.to_frame())
    for a, b in zip(c.isotherms, back.isotherms, strict=True):
        assert a.temperature_K == b.temperature_K
        np.testing.assert_array_equal(a.x, b.x)
        assert set(a.values) == set(b.values)
        for q in a.values:
            np.testing.assert_array_equal(a.values[q], b.values[q])
        np.testing.assert_array_equal(a.source_rows, b.source_rows)
    assert (back.domain, back.modulus_kind, back.source) == (c.domain, c.modulus_kind, c.source)
    assert dict(back.metadata) == dict(c.metadata)
    assert back == c


def test_round_trip_keeps_isotherms_closer_than_the_tolerance():
    # built with a fine tolerance, two isotherms 0.2 K apart survive the round trip
    c = Campaign.from_frame(frame(temps_K=(298.05, 298.05, 298.25, 298.25)),
                            temperature_tolerance_K=0.05)
    assert len(Campaign.from_frame(c.to_frame())) == 2


@st.composite
def campaigns(draw):
    n_iso = draw(st.integers(2, 5))
    temps = draw(st.lists(st.floats(200.0, 500.0), min_size=n_iso, max_size=n_iso,
                          unique_by=lambda t: round(t)))
    rows = []
    for t in temps:
        xs = draw(st.lists(st.floats(1e-3, 1e3), min_size=1, max_size=6, unique=True))
        with_tan = draw(st.booleans())
        for x in xs:
            ep = draw(st.floats(1e3, 1e10))
            rows.append({"temperature_K": t, "frequency_rad_s": x, EP: ep,
                         TAN: draw(st.floats(1e-3, 10.0)) if with_tan else np.nan})
    return pd.DataFrame(rows)


@settings(max_examples=40, deadline=None)
@given(campaigns(), st.randoms(use_true_random=False))
def test_isotherm_order_does_not_matter(df, rnd):
    # property: shuffling the rows (and so the order of the isotherms) gives an equal campaign,
    # and to_frame -> from_frame returns identical arrays
    df = df.assign(source_row=np.arange(len(df)) + 2)
    order = list(range(len(df)))
    rnd.shuffle(order)
    a = Campaign.from_frame(df, temperature_tolerance_K=0.01)
    b = Campaign.from_frame(df.iloc[order].reset_index(drop=True), temperature_tolerance_K=0.01)
    assert a == b
    assert list(a.temperatures_K) == sorted(a.temperatures_K)
    assert Campaign.from_frame(a.to_frame()) == a


# ---- derived functions ------------------------------------------------------------------------
def test_with_derived_from_storage_and_loss():
    # a 3-4-5 triangle: |E*| = 5, tan δ = 4/3, δ = atan2(4, 3) (exact arithmetic facts)
    df = pd.DataFrame({"temperature_K": [300.0, 320.0], "frequency_rad_s": [1.0, 1.0],
                       EP: [3.0, 6.0], EPP: [4.0, 8.0]})
    d = Campaign.from_frame(df, min_isotherms=1).with_derived().isotherms[0].values
    assert d["complex_modulus_Pa"][0] == pytest.approx(5.0, rel=1e-15)
    assert d[TAN][0] == pytest.approx(4.0 / 3.0, rel=1e-15)
    assert d["phase_angle_rad"][0] == pytest.approx(math.atan2(4.0, 3.0), rel=1e-15)


def test_with_derived_from_magnitude_and_phase():
    df = pd.DataFrame({"temperature_K": [300.0, 320.0], "frequency_rad_s": [1.0, 1.0],
                       "complex_modulus_Pa": [5.0, 5.0],
                       "phase_angle_rad": [math.atan2(4, 3), math.atan2(4, 3)]})
    d = Campaign.from_frame(df).with_derived().isotherms[1].values
    assert d[EP][0] == pytest.approx(3.0, rel=1e-14)     # E' = |E*| cos δ
    assert d[EPP][0] == pytest.approx(4.0, rel=1e-14)    # E'' = |E*| sin δ


def test_with_derived_keeps_time_domain_as_is():
    df = pd.DataFrame({"temperature_K": [300, 320], "time_s": [1, 1],
                       "relaxation_modulus_Pa": [2.0, 1.0]})
    c = Campaign.from_frame(df)
    assert c.with_derived() is c


# ---- notebooks --------------------------------------------------------------------------------
def test_summary_and_html():
    c = campaign()
    rows = c.summary_rows()
    assert [r["temperature_C"] for r in rows] == [20.0, 40.0]
    assert rows[0]["points"] == 2 and rows[0]["quantities"] == "E'"
    html = c._repr_html_()
    assert "2 isotherms" in html and "<td>20.00</td>" in html and "<td>40.00</td>" in html


def test_quantities_table_is_complete():
    assert set(QUANTITIES) == {EP, EPP, TAN, "complex_modulus_Pa", "phase_angle_rad",
                               "relaxation_modulus_Pa", "creep_compliance_1_per_Pa"}
