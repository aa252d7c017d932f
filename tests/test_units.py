"""Unit parsing and conversion to SI and kelvin (ttsp.units).

Reference values are definitions, each named beside its test:
- SI prefixes k, M, G, m (BIPM, The International System of Units, 9th ed., 2019, Table 7);
- 1 lbf/in² = 6894.757293168... Pa, exact from 1 lbf = 4.4482216152605 N and 1 in = 0.0254 m
  (NIST SP 811, 2008, Appendix B.8 lists 6.894 757 E+03);
- 1 dyn/cm² = 1e-5 N / 1e-4 m² = 0.1 Pa (CGS definition of the dyne; NIST SP 811 B.8);
- ω = 2π f, so 1 Hz is 2π rad/s for a frequency in cycles per second (definition);
- T/K = t/°C + 273.15 (BIPM SI brochure, 9th ed., 2.3.1); T/K = (t/°F + 459.67)·5/9
  (NIST SP 811, B.9);
- 1 min = 60 s, 1 h = 3600 s, 1 d = 86 400 s (BIPM SI brochure, Table 8).
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from ttsp.exceptions import DataError
from ttsp.units import PSI_PA, celsius_to_kelvin, from_si, kelvin_to_celsius, parse_unit, to_si

TWO_PI = 2.0 * math.pi


@pytest.mark.parametrize("unit, value, si", [
    # moduli (SI prefixes; psi and ksi from NIST SP 811; dyn/cm² from the CGS definition)
    ("Pa", 7.0, 7.0),
    ("kPa", 2.0, 2.0e3),
    ("MPa", 2.5, 2.5e6),
    ("GPa", 3.0, 3.0e9),
    ("psi", 1.0, 6894.757293168),
    ("ksi", 1.0, 6894757.293168),
    ("dyn/cm²", 1.0, 0.1),
    ("dyn/cm2", 50.0, 5.0),
    ("N/mm²", 1.0, 1.0e6),
    ("mPa", 1.0, 1.0e-3),
    # frequencies: ω = 2π f
    ("Hz", 1.0, TWO_PI),
    ("Hz", 0.1, 0.1 * TWO_PI),
    ("rad/s", 3.0, 3.0),
    ("mHz", 10.0, 10.0e-3 * TWO_PI),
    # times (BIPM Table 8)
    ("s", 5.0, 5.0),
    ("min", 2.0, 120.0),
    ("h", 1.5, 5400.0),
    ("ms", 250.0, 0.25),
    # temperatures
    ("°C", 25.0, 298.15),
    ("°C", -40.0, 233.15),
    ("K", 300.0, 300.0),
    ("°F", 32.0, 273.15),
    ("°F", 212.0, 373.15),
    ("°F", -40.0, 233.15),   # -40 °F = -40 °C
    ("°F", 0.0, 459.67 * 5.0 / 9.0),
    # compliances: 1/MPa = 1e-6 /Pa
    ("1/Pa", 4.0, 4.0),
    ("1/MPa", 1.0, 1.0e-6),
    ("1/GPa", 2.0, 2.0e-9),
    ("1/psi", 1.0, 1.0 / 6894.757293168),
])
def test_conversion_to_si(unit, value, si):
    # rel 1e-12: the conversion is one multiply and one add in double precision; the psi value
    # above is written to 13 significant digits, which is why 1e-12 and not 1e-15
    assert float(to_si(value, unit)) == pytest.approx(si, rel=1e-12, abs=1e-12)


def test_psi_is_the_nist_exact_value():
    # NIST SP 811 B.8: lbf = 4.4482216152605 N (exact), in = 0.0254 m (exact)
    assert PSI_PA == pytest.approx(4.4482216152605 / 0.0254**2, rel=1e-15)
    assert PSI_PA == pytest.approx(6894.757293168, rel=1e-12)


@pytest.mark.parametrize("spelling, symbol", [
    ("MPa", "MPa"), ("MPA", "MPa"), ("Mpa", "MPa"), ("mpa", "MPa"), ("N/mm2", "MPa"),
    ("mPa", "mPa"),            # millipascal stays millipascal (not read as MPa, 1e9 apart)
    ("dyn/cm^2", "dyn/cm²"), ("dyne/cm2", "dyn/cm²"),
    ("GPa⁻¹", "1/GPa"), ("GPa^-1", "1/GPa"), ("1/gpa", "1/GPa"),
    ("°C", "°C"), ("℃", "°C"), ("degC", "°C"), ("deg C", "°C"), ("C", "°C"), ("ºC", "°C"),
    ("°F", "°F"), ("degF", "°F"), ("F", "°F"),
    ("K", "K"), ("kelvin", "K"),
    ("Hz", "Hz"), ("hz", "Hz"), ("rad/s", "rad/s"), ("rad s-1", "rad/s"), ("rad·s⁻¹", "rad/s"),
    ("sec", "s"), ("minutes", "min"), ("hr", "h"),
    ("  MPa  ", "MPa"),
])
def test_spellings(spelling, symbol):
    assert parse_unit(spelling).symbol == symbol


def test_kind_is_checked():
    assert parse_unit("°C", kind="temperature").kind == "temperature"
    with pytest.raises(DataError, match=r"unit must be a temperature unit; got 'MPa' \(a modulus unit\)"):
        parse_unit("MPa", kind="temperature")


@pytest.mark.parametrize("text", ["bar", "c", "f", "k", "furlong", "MHz"])
def test_unknown_unit(text):
    # lower-case c, f, k are not read as °C, °F, K: too easy to confuse with other symbols
    with pytest.raises(DataError, match=rf"unit must be one of .*; got '{text}'"):
        parse_unit(text)


def test_unknown_unit_of_a_kind_lists_that_kind_only():
    with pytest.raises(DataError, match=r"one of GPa, MPa, Pa, .*psi; got 'bar'") as info:
        parse_unit("bar", kind="modulus")
    assert "Hz" not in str(info.value)


def test_arrays_are_converted_elementwise():
    got = to_si(np.array([1.0, 10.0, 100.0]), "Hz")
    np.testing.assert_allclose(got, TWO_PI * np.array([1.0, 10.0, 100.0]), rtol=1e-15)


@given(st.sampled_from(["MPa", "psi", "ksi", "dyn/cm²", "Hz", "min", "h", "°C", "°F", "K",
                        "1/GPa", "1/psi"]),
       st.floats(min_value=-1e6, max_value=1e6, allow_nan=False))
def test_from_si_inverts_to_si(unit, value):
    # property: from_si(to_si(v)) = v to rounding (two affine operations, a few ulp)
    assert float(from_si(to_si(value, unit), unit)) == pytest.approx(value, rel=1e-12, abs=1e-9)


def test_celsius_kelvin_helpers():
    # BIPM SI brochure 2.3.1: T/K = t/°C + 273.15
    assert float(celsius_to_kelvin(0.0)) == 273.15
    assert float(kelvin_to_celsius(373.15)) == pytest.approx(100.0, abs=1e-12)
    np.testing.assert_allclose(kelvin_to_celsius(celsius_to_kelvin([-40.0, 25.0])), [-40.0, 25.0])
