"""Honest outputs: strict JSON (RFC 8259) checked against the shipped JSON
Schema (with the `jsonschema` package), CSV headers with units in one
convention, absent columns left out, gauge inputs echoed as gauge.

Plumbing checks against the open standards (RFC 8259 JSON, JSON Schema
2020-12); the physics behind the numbers is checked in test_vessel.py and
test_transient.py.
"""
import json
import re
import textwrap

import pytest

jsonschema = pytest.importorskip("jsonschema")

from eosfill.io import jobs, tables  # noqa: E402
from eosfill.io.scenario import load_scenario  # noqa: E402

VENT = textwrap.dedent("""
    kind = "transient_vent"
    [fluid]
    composition = "nitrogen"
    [vessel]
    volume = "50 L"
    working_pressure = "100 barg"
    [initial]
    temperature = "15 degC"
    pressure = "100 barg"
    [stop]
    target_pressure = "50 barg"
    [transient]
    duration = "10 min"
    output_interval = "20 s"
    [transient.restriction]
    type = "orifice"
    diameter = "2 mm"
    discharge_coefficient = 0.8
    [limits]
    min_gas_temperature = "-100 degC"
""")

FILL = textwrap.dedent("""
    kind = "fill"
    [fluid]
    composition = "nitrogen"
    [vessel]
    volume = "50 L"
    [initial]
    temperature = "15 degC"
    pressure = "10 barg"
    [supply]
    temperature = "15 degC"
    pressure = "200 bar"
    [stop]
    target_pressure = "150 bar"
    [limits]
    max_gas_temperature = "150 degC"
""")

HEADER = re.compile(r"^[A-Za-z_]+ \[[^\]]+\]$")  # name [unit]


def _strict_load(text):
    def refuse(token):
        raise ValueError(f"not RFC 8259 JSON: {token}")

    return json.loads(text, parse_constant=refuse)


def _run(tmp_path, text, name):
    sc_path = tmp_path / f"{name}.toml"
    sc_path.write_text(text)
    sc = load_scenario(sc_path)
    sc.output.json, sc.output.csv = tmp_path / f"{name}.json", tmp_path / f"{name}.csv"
    res = jobs.run_scenario(sc)
    return sc, res, _strict_load(sc.output.json.read_text()), sc.output.csv.read_text().splitlines()


def test_adiabatic_vent_json_is_strict_and_valid(tmp_path):
    sc, res, doc, csv_lines = _run(tmp_path, VENT, "vent")
    jsonschema.validate(doc, tables.result_schema())
    r = doc["result"]
    assert all(v is None for v in r["T_wall_inner"])  # no wall: absent, null (not NaN)
    assert r["peaks"]["min_T_wall_inner"] == [None, None]
    assert doc["complete"] is True and "licensed practice" in doc["caution"]
    header = csv_lines[0].split(",")
    assert header[:3] == ["t [s]", "P [bar]", "T_gas [°C]"]
    assert not any(h.startswith(("T_wall", "Q_wall", "bank", "mdot_in")) for h in header)
    assert all(HEADER.match(h) for h in header if h != "phase")
    assert "nan" not in "\n".join(csv_lines).lower()
    assert len(csv_lines) - 1 == res.t.size


def test_end_state_json_valid_and_csv_same_convention(tmp_path):
    sc, res, doc, csv_lines = _run(tmp_path, FILL, "fill")
    jsonschema.validate(doc, tables.result_schema())
    assert doc["result"]["final"]["P"] == pytest.approx(150e5, rel=1e-9)
    header = csv_lines[0].split(",")
    assert header == ["vessel_mass [kg]", "T [°C]", "P [bar]"]
    last = [float(x) for x in csv_lines[-1].split(",")]
    assert last[2] == pytest.approx(150.0, rel=1e-5)  # six significant digits
    assert all(len(x.replace("-", "").replace(".", "").lstrip("0")) <= 6 for x in csv_lines[-1].split(","))


def test_schema_refuses_nan_and_missing_keys(tmp_path):
    """The schema has teeth: a document with a NaN-ish string or without its result fails."""
    sc, res, doc, _ = _run(tmp_path, FILL, "fill2")
    bad = json.loads(json.dumps(doc))
    bad["result"]["final"]["T"] = "NaN"
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(bad, tables.result_schema())
    del doc["result"]
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(doc, tables.result_schema())
    with pytest.raises(ValueError):
        tables.json.dumps({"x": float("nan")}, allow_nan=False)


def test_gauge_inputs_echoed_as_gauge(tmp_path):
    from eosfill.io.report import input_rows, job_paragraph

    p = tmp_path / "g.toml"
    p.write_text(VENT)
    sc = load_scenario(p)
    assert sc.initial.pressure == pytest.approx(100e5 + 101325.0)  # stored absolute (gauge + 1 atm)
    assert "100 barg" in "\n".join(sc.summary())
    rows = dict(input_rows(sc))
    assert rows["initial.pressure"] == "100 barg" and rows["stop.target_pressure"] == "50 barg"
    assert rows["vessel.working_pressure"] == "100 barg"
    assert "100 barg" in job_paragraph(sc) and "an orifice" in job_paragraph(sc)


BLOWDOWN = textwrap.dedent("""
    kind = "transient_vent"
    [fluid]
    composition = { methane = 0.95, ethane = 0.03, nitrogen = 0.02 }
    [vessel]
    volume = "2 m3"
    wall_mass = "1500 kg"
    wall_specific_heat = "480 J/kg/K"
    internal_area = "9 m2"
    external_area = "9.5 m2"
    [initial]
    temperature = "20 degC"
    pressure = "100 barg"
    [stop]
    target_pressure = "3 barg"
    [transient]
    duration = "30 min"
    output_interval = "INTERVAL"
    back_pressure = "2 barg"
    [transient.restriction]
    type = "orifice"
    diameter = "12 mm"
    discharge_coefficient = 0.84
    [transient.heat_transfer]
    model = "wall"
    inner_coefficient = "150 W/m2/K"
    outer_coefficient = "5 W/m2/K"
    [limits]
    min_gas_temperature = "-60 degC"
""")


def test_lowest_temperature_does_not_depend_on_the_output_grid(tmp_path):
    """The lowest gas temperature of a blowdown is located on the integrator's
    dense output: the same with a 60 s and a 300 s output interval, and at or
    below every value on either grid (consistency; the grid alone gave
    -41.53 degC at 60 s and -7.2 degC at 300 s)."""
    lows = []
    for interval in ("60 s", "300 s"):
        p = tmp_path / f"b{interval.split()[0]}.toml"
        p.write_text(BLOWDOWN.replace("INTERVAL", interval))
        r = jobs.run_scenario(load_scenario(p), write=False)
        lo, when = r.peak("T_gas", "min")
        assert lo <= r.T_gas.min() + 1e-9 and 0.0 < when < r.t[-1]
        assert r.dense["t"].size > r.t.size  # the plots draw these points, not the grid
        lows.append(lo)
    assert lows[0] == pytest.approx(lows[1], abs=1e-4)
    assert lows[0] < 273.15 - 41.6


def test_two_phase_region_only_where_the_process_comes_near_it():
    """Kay's rule pseudo-critical temperature (Kay 1936) times 1.3: hydrogen at 15 degC
    (Tc 33.1 K, Leachman 2009) is far from its dome; liquefied CO2 at -5 degC
    (Tc 304.1 K, Span & Wagner 1996) is inside the region where it matters."""
    import eosfill
    from eosfill.io.plots_path import dome_relevant

    h2 = eosfill.Fluid("hydrogen")
    co2 = eosfill.Fluid("carbon dioxide")
    assert not dome_relevant(h2, h2.mole_fractions, 288.15)
    assert dome_relevant(co2, co2.mole_fractions, 268.15)
    ng = eosfill.Fluid({"methane": 0.95, "ethane": 0.03, "nitrogen": 0.02})
    assert not dome_relevant(ng, ng.mole_fractions, 288.15)  # 1.3 x 192 K = 250 K
    assert dome_relevant(ng, ng.mole_fractions, 231.3)  # a blowdown to -41.9 degC


def test_point_labels_neither_overlap_nor_leave_the_axes():
    pytest.importorskip("matplotlib")
    from eosfill.io.plots import _figure
    from eosfill.io.plots_path import _place_labels

    fig = _figure(6.0, 4.0)
    ax = fig.add_subplot(1, 1, 1)
    xs, ys = [1.0, 1.02, 1.04, 1.99], [1.0, 1.02, 1.04, 1.99]  # three crowded points, one at the corner
    ax.plot(xs, ys, "o")
    ax.set_xlim(0.9, 2.0)
    ax.set_ylim(0.9, 2.0)
    fig.tight_layout()
    _place_labels(fig, ax, [(x, y, f"after bank {i}") for i, (x, y) in enumerate(zip(xs, ys))])
    r = fig.canvas.get_renderer()
    boxes = [t.get_window_extent(r) for t in ax.texts]
    frame = ax.get_window_extent(r)
    assert len(boxes) == 4
    for i, b in enumerate(boxes):
        assert frame.x0 <= b.x0 and b.x1 <= frame.x1 and frame.y0 <= b.y0 and b.y1 <= frame.y1
        assert not any(b.overlaps(o) for o in boxes[:i])


def test_job_text_says_what_happened(tmp_path):
    """The report's job paragraph ends with how the run ended (from the result), and
    a vent whose content is two-phase from the start says so, not that a liquid forms."""
    import eosfill
    from eosfill.io.report import job_paragraph
    from eosfill.io.summaries import render

    sc, res, _, _ = _run(tmp_path, VENT, "v")
    text = job_paragraph(sc, result=res)
    assert f"It stopped at {res.t[-1]:.6g} s: target pressure reached" in text
    assert "an orifice of 2 mm bore" in text and "a orifice" not in text
    p = tmp_path / "co2.toml"
    p.write_text(textwrap.dedent("""
        kind = "vent"
        [fluid]
        composition = "carbon dioxide"
        [vessel]
        volume = "50 L"
        [initial]
        temperature = "15 degC"
        mass = "10 kg"
        [stop]
        target_mass = "6 kg"
        [limits]
        min_gas_temperature = "-80 degC"
    """))
    # 200 kg/m3 at 15 degC lies between CO2's saturated vapour and liquid densities
    # (about 160 and 820 kg/m3, Span & Wagner 1996 tables, from memory): two-phase from the start
    with pytest.warns(eosfill.LimitWarning) as rec:
        r = jobs.run_scenario(load_scenario(p), write=False)
    assert any("from the start" in str(w.message) for w in rec)
    assert not any("forms during the vent" in str(w.message) for w in rec)
    assert "liquid present from the start" in render(r)
