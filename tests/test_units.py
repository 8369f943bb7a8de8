"""Unit conversions at the outside edge (eosfill.io.units), checked against the
exact definitions of the units, each cited beside its check."""
import math

import pytest

from eosfill.errors import InputError
from eosfill.io.units import format_quantity, is_gauge, parse_quantity

REL = 1e-12

# exact definitions
BAR = 1e5  # Pa; BIPM SI Brochure 9th ed. 2019, Table 8 (1 bar = 0.1 MPa = 100 000 Pa)
ATM = 101325.0  # Pa; BIPM SI Brochure 9th ed. 2019, Table 8 (standard atmosphere, exact)
LBF = 4.4482216152605  # N; NIST SP 811 (2008) Appendix B.8 (1 lbf = 4.448 221 615 260 5 N exactly)
INCH = 0.0254  # m; NIST SP 811 (2008) Appendix B.8 (1 in = 0.0254 m exactly)
PSI = LBF / INCH**2  # Pa; NIST SP 811 (2008) Appendix B: 1 psi = 6894.757293168 Pa, derived from lbf and in
LITRE = 1e-3  # m3; BIPM SI Brochure 9th ed. 2019, Table 8 (1 L = 1 dm3 = 1e-3 m3)
T_ICE = 273.15  # K; BIPM SI Brochure 9th ed. 2019, §2.3.1: t/°C = T/K - 273.15
# ISO 80000-5:2019 / NIST SP 811 (2008) B.9: T/K = (t/°F + 459.67)/1.8
LB = 0.45359237  # kg; NIST SP 811 (2008) Appendix B.8 (1 lb = 0.453 592 37 kg exactly)


def close(a, b, rel=REL):
    return math.isclose(a, b, rel_tol=rel, abs_tol=1e-12)


@pytest.mark.parametrize("text, expected", [
    ("350 bar", 350 * BAR),          # BIPM SI Brochure 2019, Table 8
    ("1 atm", ATM),                  # BIPM SI Brochure 2019, Table 8
    ("3 MPa", 3e6),                  # SI prefix mega = 1e6, BIPM SI Brochure 2019, Table 7
    ("250 kPa", 250e3),              # SI prefix kilo
    ("1 psi", PSI),                  # NIST SP 811 (2008) App. B (from lbf and in)
    ("5000 psi", 5000 * PSI),
    ("100 mbar", 100 * 1e-3 * BAR),
])
def test_pressure_units(text, expected):
    assert close(parse_quantity(text, "pressure", "p"), expected)


def test_psi_value_nist():
    # NIST SP 811 (2008) Appendix B.8: 1 psi = 6.894 757 E+03 Pa (printed rounded);
    # the exact derived value 6894.757293168... follows from lbf and in.
    assert close(parse_quantity("1 psi", "pressure", "p"), 6894.757293168361, rel=1e-13)


@pytest.mark.parametrize("text, gauge", [
    ("20 barg", 20 * BAR), ("20 bar(g)", 20 * BAR), ("20 bar gauge", 20 * BAR),
    ("3000 psig", 3000 * PSI), ("150 kPag", 150e3), ("-0.5 barg", -0.5 * BAR),
])
def test_gauge_pressure_adds_ambient(text, gauge):
    # gauge pressure = absolute - ambient: common practice, no source
    assert close(parse_quantity(text, "pressure", "p"), gauge + ATM)
    assert close(parse_quantity(text, "pressure", "p", ambient_pressure=95000.0), gauge + 95000.0)
    assert is_gauge(text)


@pytest.mark.parametrize("text", ["20 bara", "20 bar(a)", "20 bar abs", "290 psia"])
def test_absolute_marks(text):
    value = parse_quantity(text, "pressure", "p")
    expected = 290 * PSI if "psia" in text else 20 * BAR
    assert close(value, expected)
    assert not is_gauge(text)


def test_pascal_is_not_mistaken_for_absolute_mark():
    # "kPa" ends in "a" but is the kilopascal (SI prefix + pascal)
    assert close(parse_quantity("101.325 kPa", "pressure", "p"), ATM)
    assert not is_gauge("3 MPa")


@pytest.mark.parametrize("text, kelvin", [
    ("15 degC", 15 + T_ICE), ("15 °C", 15 + T_ICE), ("15 C", 15 + T_ICE), ("-40 degC", -40 + T_ICE),
    ("300 K", 300.0),
    ("60 degF", (60 + 459.67) / 1.8), ("-40 degF", (-40 + 459.67) / 1.8), ("32 °F", T_ICE),
    ("491.67 degR", T_ICE),  # NIST SP 811 (2008) B.9: T/K = (T/°R)/1.8
])
def test_temperature_offsets(text, kelvin):
    assert close(parse_quantity(text, "temperature", "t"), kelvin)


def test_minus_forty_is_the_same_in_both_scales():
    # t/°F = 1.8 t/°C + 32 (NIST SP 811 (2008) B.9) -> -40 °C = -40 °F
    assert close(parse_quantity("-40 degF", "temperature", "t"), parse_quantity("-40 degC", "temperature", "t"))


@pytest.mark.parametrize("text, expected, kind", [
    ("50 L", 50 * LITRE, "volume"),                       # BIPM SI Brochure 2019, Table 8
    ("2.5 m3", 2.5, "volume"), ("2.5 m^3", 2.5, "volume"), ("2.5 m³", 2.5, "volume"),
    ("12 kg", 12.0, "mass"), ("500 g", 0.5, "mass"),
    ("10 lb", 10 * LB, "mass"),                           # NIST SP 811 (2008) App. B
    ("0.5 in", 0.5 * INCH, "length"), ("2 mm", 2e-3, "length"),
    ("5 min", 300.0, "time"), ("2 h", 7200.0, "time"),    # BIPM SI Brochure 2019, Table 8
    ("3 MPa/min", 3e6 / 60.0, "pressure_rate"),
    ("500 W/m2/K", 500.0, "heat_transfer_coefficient"), ("500 W/(m2 K)", 500.0, "heat_transfer_coefficient"),
    ("0.48 kJ/kg/K", 480.0, "specific_heat"),
    ("0.42 kg/L", 420.0, "density"), ("180 kg/m3", 180.0, "density"),
    ("2 kg/min", 2.0 / 60.0, "mass_flow"),
    ("1.2 m2", 1.2, "area"),
])
def test_other_kinds(text, expected, kind):
    assert close(parse_quantity(text, kind, "k"), expected)


def test_per_mass_values_use_the_molar_mass():
    M = 0.016  # kg/mol, arbitrary test value
    assert close(parse_quantity("350 kJ/kg", "molar_energy", "h", molar_mass=M), 350e3 * M)
    assert close(parse_quantity("-1200 J/mol", "molar_energy", "h"), -1200.0)
    assert close(parse_quantity("4 kJ/kg/K", "molar_entropy", "s", molar_mass=M), 4e3 * M)
    with pytest.raises(InputError, match="molar mass"):
        parse_quantity("350 kJ/kg", "molar_energy", "h")


def test_bare_number_only_with_default_unit():
    assert parse_quantity(30, "time", "transient.output_times[0]", default_unit="s") == 30.0
    assert parse_quantity("30", "time", "t", default_unit="min") == 1800.0
    with pytest.raises(InputError, match=r"vessel\.volume.*unit is missing"):
        parse_quantity(50, "volume", "vessel.volume")


@pytest.mark.parametrize("text, kind, fragment", [
    ("50 kg", "volume", "'kg' is a mass"),
    ("15 degC", "pressure", "is a temperature"),
    ("200 bar", "temperature", "is a pressure"),
    ("twenty bar", "pressure", "does not start with a number"),
    ("20 blorp", "pressure", "unknown unit 'blorp'"),
    (True, "mass", "true/false"),
    ("nan bar", "pressure", "does not start with a number"),
])
def test_errors_name_key_value_and_dimension(text, kind, fragment):
    with pytest.raises(InputError) as info:
        parse_quantity(text, kind, "vessel.thing")
    msg = str(info.value)
    assert msg.startswith("vessel.thing = ")
    assert repr(text) in msg
    assert fragment in msg
    assert info.value.name == "vessel.thing"


@pytest.mark.parametrize("value, kind, unit, text", [
    (35e6, "pressure", None, "350 bar"),
    (288.15, "temperature", None, "15 °C"),
    (0.05, "volume", None, "50 L"),
    (12.0, "mass", None, "12 kg"),
    (35e6, "pressure", "MPa", "35 MPa"),
    (300.0, "temperature", "K", "300 K"),
])
def test_format_quantity(value, kind, unit, text):
    assert format_quantity(value, kind, unit) == text


def test_import_eosfill_does_not_load_pint():
    import subprocess
    import sys

    code = "import sys, eosfill, eosfill.io.units; print('pint' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
