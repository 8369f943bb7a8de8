"""Scenario files: a valid one read to the right SI values, malformed ones
rejected with the key path in the message.  Numbers in the scenarios below
are invented test inputs (demo values), not reference data; the expected SI
values follow from the unit definitions cited in tests/test_units.py
(bar: BIPM SI Brochure 9th ed. 2019, Table 8; psi: NIST SP 811 (2008) App. B)."""
import math
import textwrap

import re

import pytest

from eosfill.errors import InputError
from eosfill.io.scenario import Scenario, load_scenario

BAR = 1e5
ATM = 101325.0
PSI = 4.4482216152605 / 0.0254**2

VALID = """
kind = "fill"
title = "test fill"

[fluid]
composition = { methane = 0.9, ethane = 0.06, nitrogen = 0.04 }
model = "PR"
[[fluid.kij]]
pair = ["methane", "nitrogen"]
kij = 0.03

[vessel]
volume = "50 L"
wall_mass = "60 kg"
wall_specific_heat = "0.48 kJ/kg/K"
working_pressure = "200 bar"

[initial]
temperature = "15 degC"
pressure = "20 barg"
composition = { nitrogen = 1.0 }

[supply]
temperature = "60 degF"
pressure = "3600 psi"

[stop]
target_settled_pressure = "200 bar"

[ambient]
temperature = "25 degC"
pressure = "0.95 bar"

[limits]
max_gas_temperature = "85 degC"
max_fill_density = "180 kg/m3"
"""


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(textwrap.dedent(text), encoding="utf-8")
    return p


def test_valid_scenario_reads_to_si(tmp_path):
    sc = load_scenario(write(tmp_path, VALID))
    assert isinstance(sc, Scenario)
    assert sc.kind == "fill"
    assert math.isclose(sc.vessel.volume, 0.05, rel_tol=1e-12)
    assert math.isclose(sc.vessel.wall_specific_heat, 480.0, rel_tol=1e-12)
    assert math.isclose(sc.vessel.working_pressure, 200 * BAR, rel_tol=1e-12)
    assert math.isclose(sc.initial.temperature, 288.15, rel_tol=1e-12)
    # gauge pressure measured from the scenario's own ambient pressure
    assert math.isclose(sc.ambient.pressure, 0.95 * BAR, rel_tol=1e-12)
    assert math.isclose(sc.initial.pressure, 20 * BAR + 0.95 * BAR, rel_tol=1e-12)
    assert math.isclose(sc.supply.temperature, (60 + 459.67) / 1.8, rel_tol=1e-12)  # T/K = (t/°F + 459.67)/1.8, NIST SP 811
    assert math.isclose(sc.supply.pressure, 3600 * PSI, rel_tol=1e-12)
    assert math.isclose(sc.stop.target_settled_pressure, 200 * BAR, rel_tol=1e-12)
    assert math.isclose(sc.stop.settled_temperature, 288.15)  # default 15 °C, common practice
    assert math.isclose(sc.limits.max_gas_temperature, 358.15, rel_tol=1e-12)
    assert sc.limits.max_fill_density == 180.0
    assert sc.fluid_spec.composition == {"methane": 0.9, "ethane": 0.06, "nitrogen": 0.04}
    fl = sc.fluid()
    assert fl.names == ("methane", "ethane", "nitrogen")
    i, j = fl.names.index("methane"), fl.names.index("nitrogen")
    assert fl.kij[i, j] == 0.03
    assert list(sc.mole_fractions(sc.initial.composition)) == [0.0, 0.0, 1.0]
    assert sc.to_dict()["vessel"]["volume"] == sc.vessel.volume


def test_mass_fractions_become_mole_fractions(tmp_path):
    text = VALID.replace('model = "PR"', 'model = "SRK"\nbasis = "mass"').replace(
        "{ methane = 0.9, ethane = 0.06, nitrogen = 0.04 }", "{ methane = 0.5, ethane = 0.5 }")
    sc = load_scenario(write(tmp_path, text))
    from eosfill.model.components import get_component

    m1, m2 = get_component("methane").M, get_component("ethane").M
    x1 = (0.5 / m1) / (0.5 / m1 + 0.5 / m2)
    assert math.isclose(sc.fluid_spec.composition["methane"], x1, rel_tol=1e-12)
    assert sc.fluid().model.name == "SRK"


def test_other_components_enter_the_fluid_at_zero(tmp_path):
    text = VALID.replace("composition = { nitrogen = 1.0 }", 'composition = "argon"')
    sc = load_scenario(write(tmp_path, text))
    assert sc.fluid().names[-1] == "argon"
    assert sc.fluid().mole_fractions[-1] == 0.0


def test_cascade_and_transient_sections(tmp_path):
    text = """
    kind = "transient_fill"
    [fluid]
    composition = "hydrogen"
    [vessel]
    volume = "120 L"
    wall_mass = "80 kg"
    wall_specific_heat = "900 J/kg/K"
    internal_area = "1.4 m2"
    [initial]
    temperature = "20 degC"
    pressure = "50 bar"
    [[banks]]
    volume = "300 L"
    temperature = "20 degC"
    pressure = "450 bar"
    [[banks]]
    name = "high"
    volume = "0.3 m3"
    temperature = "20 degC"
    pressure = "900 bar"
    [cascade]
    switch_pressure_difference = "20 bar"
    [stop]
    target_pressure = "700 bar"
    temperature_limit = "85 degC"
    [transient]
    duration = "5 min"
    output_times = [0, 30, "1 min", "5 min"]
    [transient.restriction]
    type = "orifice"
    diameter = "2 mm"
    discharge_coefficient = 0.8
    [transient.heat_transfer]
    model = "wall"
    inner_coefficient = "250 W/m2/K"
    """
    sc = load_scenario(write(tmp_path, text))
    assert [b.pressure for b in sc.banks] == [450 * BAR, 900 * BAR]
    assert sc.banks[1].volume == pytest.approx(0.3)
    assert sc.cascade.switch_pressure_difference == 20 * BAR
    assert sc.transient.duration == 300.0
    assert sc.transient.output_times == [0.0, 30.0, 60.0, 300.0]
    assert sc.transient.restriction.diameter == pytest.approx(2e-3)
    assert sc.transient.heat_transfer.inner_coefficient == 250.0


MALFORMED = [
    # (what to change in VALID, expected fragments of the message)
    ("unknown key", ('volume = "50 L"', 'volume = "50 L"\nvolum = "3 L"'),
     ["vessel.volum", "unknown key", "did you mean 'volume'"]),
    ("missing required key", ('volume = "50 L"\n', ""), ["vessel.volume", "missing required key"]),
    ("wrong unit", ('volume = "50 L"', 'volume = "50 kg"'), ["vessel.volume", "'50 kg'", "expected a volume"]),
    ("unit missing", ('volume = "50 L"', "volume = 50"), ["vessel.volume", "unit is missing"]),
    ("negative volume", ('volume = "50 L"', 'volume = "-50 L"'), ["vessel.volume", "out of range"]),
    ("below absolute zero", ('temperature = "15 degC"', 'temperature = "-300 degC"'),
     ["initial.temperature", "absolute zero"]),
    ("unknown fluid", ("methane = 0.9,", "metane = 0.9,"), ["fluid.composition.metane", "unknown fluid"]),
    ("fractions do not sum to one", ("methane = 0.9,", "methane = 0.8,"), ["fluid.composition", "sum to"]),
    ("unknown kind", ('kind = "fill"', 'kind = "topup"'), ["kind", "'topup'", "fill"]),
    ("bad model", ('model = "PR"', 'model = "BWR"'), ["fluid.model", "'BWR'"]),
    ("both pressure and mass", ('pressure = "20 barg"', 'pressure = "20 barg"\nmass = "1 kg"'),
     ["initial.mass", "not both"]),
    ("two stop criteria", ('target_settled_pressure = "200 bar"',
                           'target_settled_pressure = "200 bar"\ntarget_mass = "8 kg"'),
     ["stop.target_mass", "one stop criterion"]),
    ("supply below vessel", ('pressure = "3600 psi"', 'pressure = "10 bar"'), ["supply.pressure", "above initial.pressure"]),
    ("kij pair not a pair", ('pair = ["methane", "nitrogen"]', 'pair = ["methane"]'), ["fluid.kij[0].pair"]),
    ("kij out of range", ("kij = 0.03", "kij = 1.5"), ["fluid.kij[0].kij", "out of range"]),
    ("vent with supply", ('kind = "fill"', 'kind = "vent"'), ["supply", "not allowed for kind 'vent'"]),
    ("transient section in a steady fill", ("[limits]", '[transient]\nduration = "1 min"\n[limits]'),
     ["transient", "only for kind"]),
    ("missing section", ("[vessel]\nvolume", "[vessl]\nvolume"), ["vessl", "unknown key"]),
    ("wrong type of section", ('kind = "fill"', 'kind = "fill"\ncascade = 5'), ["cascade", "expected a table"]),
    ("wrong type of value", ('title = "test fill"', "title = 5"), ["title", "expected a string"]),
    ("fraction as string", ("nitrogen = 1.0 }", 'nitrogen = "1" }'), ["initial.composition.nitrogen", "fraction"]),
]


@pytest.mark.parametrize("what, change, fragments", MALFORMED, ids=[m[0] for m in MALFORMED])
def test_malformed_scenarios(tmp_path, what, change, fragments):
    old, new = change
    assert old in VALID, what
    path = write(tmp_path, VALID.replace(old, new, 1))
    before = sorted(p.name for p in tmp_path.iterdir())
    with pytest.raises(InputError) as info:
        load_scenario(path)
    msg = str(info.value)
    assert msg.startswith(str(path)), msg  # names the file
    for frag in fragments:
        assert frag in msg, f"{what}: {frag!r} not in {msg!r}"
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # nothing written


def test_not_toml(tmp_path):
    path = write(tmp_path, "kind = fill\n[vessel\n")
    with pytest.raises(InputError, match="not valid TOML"):
        load_scenario(path)


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="not found"):
        load_scenario(tmp_path / "nope.toml")


def test_output_folder_must_exist(tmp_path):
    path = write(tmp_path, VALID + '\n[output]\njson = "no/such/folder/r.json"\n')
    with pytest.raises(InputError, match=r"output\.json.*does not exist"):
        load_scenario(path)


def test_transient_restriction_keys_of_another_type(tmp_path):
    text = """
    kind = "transient_vent"
    [fluid]
    composition = "carbon dioxide"
    [vessel]
    volume = "1 m3"
    [initial]
    temperature = "20 degC"
    pressure = "50 bar"
    [transient]
    duration = "10 min"
    [transient.restriction]
    type = "orifice"
    diameter = "5 mm"
    discharge_coefficient = 0.6
    Kv = 1.2
    """
    with pytest.raises(InputError, match=r"transient\.restriction\.Kv.*unknown key"):
        load_scenario(write(tmp_path, text))


LAYERED = """
kind = "transient_fill"
[fluid]
composition = "hydrogen"
[vessel]
volume = "60 L"
internal_area = "1.0 m2"
inner_radius = "138 mm"
[[vessel.wall_layers]]
thickness = "5 mm"
conductivity = "0.45 W/m/K"
density = "950 kg/m3"
specific_heat = "1.9 kJ/kg/K"
cells = 3
[[vessel.wall_layers]]
thickness = "0.022 m"
conductivity = "0.6 W/(m K)"
density = "1.55 kg/L"
specific_heat = "1000 J/kg/K"
[initial]
temperature = "15 degC"
pressure = "5 MPa"
[supply]
temperature = "-33 degC"
pressure = "87.5 MPa"
temperature_schedule = [["0 s", "-15 degC"], ["0.5 min", "-33 degC"]]
[stop]
target_pressure = "70 MPa"
[transient]
duration = "10 min"
[transient.restriction]
type = "pressure_ramp"
rate = "20 MPa/min"
[transient.heat_transfer]
model = "wall"
inner_coefficient = "500 W/m2/K"
"""


def test_layered_wall_and_precooling_schedule_read_to_si(tmp_path):
    # unit factors: kJ = 1000 J, kg/L = 1000 kg/m3, min = 60 s, degC offset 273.15 K
    # (BIPM SI Brochure, 9th ed., 2019, Tables 6 and 8)
    sc = load_scenario(write(tmp_path, LAYERED))
    lay = sc.vessel.wall_layers
    assert [w.thickness for w in lay] == pytest.approx([0.005, 0.022])
    assert lay[0].specific_heat == pytest.approx(1900.0) and lay[1].density == pytest.approx(1550.0)
    assert [w.cells for w in lay] == [3, 4]
    assert sc.vessel.inner_radius == pytest.approx(0.138)
    assert sc.supply.temperature_schedule == [pytest.approx((0.0, 258.15)), pytest.approx((30.0, 240.15))]


@pytest.mark.parametrize("change,fragment", [
    (("inner_radius = \"138 mm\"\n", ""), "vessel.inner_radius"),
    (("[\"0.5 min\", \"-33 degC\"]", "[\"0 s\", \"-33 degC\"]"), "temperature_schedule[1][0]"),
    (("[\"0 s\", \"-15 degC\"]", "[\"0 s\", \"-15 bar\"]"), "temperature_schedule[0][1]"),
    (("conductivity = \"0.45 W/m/K\"", "conductivity = \"0.45 W/m2/K\""), "wall_layers[0].conductivity"),
])
def test_layered_wall_and_schedule_errors_name_the_key(tmp_path, change, fragment):
    path = write(tmp_path, LAYERED.replace(*change))
    with pytest.raises(InputError, match=re.escape(fragment)):
        load_scenario(path)
