"""Column headers: which material function, which unit (ttsp.io.headers).

The spellings are those listed in issue 2, item 3, plus variants common in lab spreadsheets
(a fact of common practice: quantity calculus ``T/K``, units after a comma, ``tan(δ)``).
"""

import pytest

from ttsp.io.headers import HeaderMeaning, interpret_header, split_unit

FREQ, TIME, TEMP = "frequency_rad_s", "time_s", "temperature_K"
EP, EPP, TAN = "storage_modulus_Pa", "loss_modulus_Pa", "tan_delta"
ESTAR, DELTA = "complex_modulus_Pa", "phase_angle_rad"
ET, DT = "relaxation_modulus_Pa", "creep_compliance_1_per_Pa"


@pytest.mark.parametrize("header, role, unit, kind", [
    # issue 2, item 3, each spelling as written there
    ("E' (MPa)", EP, "MPa", "tensile"),
    ("E'' [MPa]", EPP, "MPa", "tensile"),
    ("storage modulus [Pa]", EP, "Pa", "tensile"),
    ("G' (kPa)", EP, "kPa", "shear"),
    ("tan δ", TAN, None, None),
    ("tan delta", TAN, None, None),
    ("Temp (°C)", TEMP, "°C", None),
    ("T [K]", TEMP, "K", None),
    ("Freq (Hz)", FREQ, "Hz", None),
    ("omega [rad/s]", FREQ, "rad/s", None),
    ("time (min)", TIME, "min", None),
    ("D(t) (1/GPa)", DT, "1/GPa", "tensile"),
    # other units of item 3 in headers
    ("E(t) [psi]", ET, "psi", "tensile"),
    ("E' (ksi)", EP, "ksi", "tensile"),
    ("E' (dyn/cm²)", EP, "dyn/cm2", "tensile"),   # NFKC turns ² into 2; both parse
    ("G'' (GPa)", EPP, "GPa", "shear"),
    ("Temperature (°F)", TEMP, "°F", None),
    ("t (s)", TIME, "s", None),
    ("t [h]", TIME, "h", None),
    ("J(t) (1/MPa)", DT, "1/MPa", "shear"),
    ("D(t) (1/Pa)", DT, "1/Pa", "tensile"),
    # more spellings
    ("Loss Modulus (MPa)", EPP, "MPa", "tensile"),
    ("|E*| (MPa)", ESTAR, "MPa", "tensile"),
    ("Phase angle (°)", DELTA, "°", None),
    ("tan(delta)", TAN, None, None),
    ("tan(δ) (-)", TAN, "-", None),
    ("E''/E'", TAN, None, None),
    ("Temp. (°C)", TEMP, "°C", None),
    ("Temp/°C", TEMP, "°C", None),
    ("T / K", TEMP, "K", None),
    ("E'/MPa", EP, "MPa", "tensile"),
    ("Temperature, °C", TEMP, "°C", None),
    ("Temperature in °C", TEMP, "°C", None),
    ("Gp_Pa", EP, "Pa", "shear"),
    ("omega_rad_s", FREQ, "rad/s", None),
    ("E′ (MPa)", EP, "MPa", "tensile"),
    ("D (1/GPa)", DT, "1/GPa", "tensile"),
    ("T (C)", TEMP, "C", None),
    ("Angular frequency (rad/s)", FREQ, "rad/s", None),
])
def test_header_styles(header, role, unit, kind):
    m = interpret_header(header)
    assert m is not None, header
    assert (m.role, m.unit, m.modulus_kind) == (role, unit, kind)
    assert not m.fuzzy


@pytest.mark.parametrize("header, unit", [
    ("omega (1/s)", "rad/s"),            # an angular frequency in 1/s is rad/s
    ("ω [1/s]", "rad/s"),
    ("Angular frequency (1/s)", "rad/s"),
    ("Frequency (1/s)", "1/s"),          # cycles per second: read as Hz by ttsp.units
    # an angular frequency without a unit is rad/s by definition, never Hz (issue 16)
    ("angular frequency", "rad/s"),
    ("Angular Frequency", "rad/s"),
    ("omega", "rad/s"),
    ("ω", "rad/s"),
    ("Frequency", None),                 # no unit and no angular name: the default (Hz)
])
def test_per_second_follows_the_name(header, unit):
    assert interpret_header(header).unit == unit


def test_t_is_temperature_or_time_by_its_unit():
    assert interpret_header("T (°C)").role == TEMP
    assert interpret_header("t (s)").role == TIME
    assert interpret_header("T (s)").role == TIME     # the unit decides
    assert interpret_header("t (°C)").role == TEMP
    assert interpret_header("T").role == TEMP         # no unit: case decides
    assert interpret_header("t").role == TIME


def test_bare_modulus_follows_the_domain():
    assert interpret_header("E (MPa)").role == EP
    assert interpret_header("E (MPa)", domain="time").role == ET
    assert interpret_header("G (kPa)", domain="time") == HeaderMeaning(ET, "kPa", "shear")
    assert interpret_header("modulus (MPa)", domain="time").role == ET
    assert interpret_header("E' (MPa)", domain="time").role == EP   # a primed E stays E'


def test_bare_compliance_needs_a_compliance_unit():
    assert interpret_header("D") is None
    assert interpret_header("D (mm)") is None
    assert interpret_header("J (1/kPa)").role == DT


@pytest.mark.parametrize("header, role, kind", [
    ("Storage modulus E' (MPa)", EP, "tensile"),
    ("Shear storage modulus G' (kPa)", EP, "shear"),
    ("Loss modulus E'' (MPa)", EPP, "tensile"),
    ("Sample temperature (°C)", TEMP, None),
    ("Oscillation frequency (Hz)", FREQ, None),
    ("Creep compliance J(t) (1/MPa)", DT, "shear"),
])
def test_keyword_fallback_is_marked_fuzzy(header, role, kind):
    m = interpret_header(header)
    assert (m.role, m.modulus_kind, m.fuzzy) == (role, kind, True)


@pytest.mark.parametrize("header", ["Temperature rate (K/min)", "Sample ID", "Strain (%)", "",
                                    "Date/Time", "N/A", "Force (N)"])
def test_unrelated_headers_are_none(header):
    assert interpret_header(header) is None


@pytest.mark.parametrize("header, parts", [
    ("E' (MPa)", ("E'", "MPa")),
    ("E'' [MPa]", ("E''", "MPa")),
    ("D(t) (1/GPa)", ("D(t)", "1/GPa")),
    ("D(t)", ("D(t)", None)),          # a one-letter argument is not a unit
    ("T (K)", ("T", "K")),             # ... except these one-letter units
    ("omega/rad/s", ("omega", "rad/s")),
    ("D/(1/GPa)", ("D", "1/GPa")),
    ("Frequency, Hz", ("Frequency", "Hz")),
    ("tan δ", ("tan δ", None)),
    ('"E\' (MPa)"', ("E'", "MPa")),
])
def test_split_unit(header, parts):
    assert split_unit(header) == parts
