"""eosfill.io.jobs: scenarios to results and files; the demo scenarios run.

Consistency and plumbing tests (the physics is checked against outside
sources in test_vessel.py).
"""
from __future__ import annotations

import json
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

import eosfill
from eosfill.io.summaries import render
from eosfill.io import jobs
from eosfill.io.scenario import load_scenario

DEMOS = sorted((Path(__file__).resolve().parent.parent / "data" / "scenarios").glob("*.toml"))
STEADY = [p for p in DEMOS if "kind = \"transient" not in p.read_text()]


def test_demo_scenarios_present():
    names = {p.name for p in DEMOS}
    for n in ("cylinder_fill_residual.toml", "ngv_cascade_3bank.toml", "liquefied_co2_fill.toml",
              "blend_fill_h2_ch4.toml", "vent_blowdown_endstate.toml"):
        assert n in names


@pytest.mark.parametrize("path", STEADY, ids=lambda p: p.stem)
def test_demo_runs_and_writes_files(path, tmp_path):
    sc = load_scenario(path)
    sc.output.json, sc.output.csv, sc.output.report = tmp_path / "r.json", tmp_path / "r.csv", tmp_path / "r.html"
    res = jobs.run_scenario(sc)
    text = render(res)
    assert "local codes" in text and "energy closure" in text
    assert abs(res.energy_closure) < 1e-9 and abs(res.mass_closure) < 1e-9
    data = json.loads((tmp_path / "r.json").read_text())
    assert data["result"]["final"]["T"] == pytest.approx(res.final.T)
    assert data["scenario"]["kind"] == sc.kind
    assert len((tmp_path / "r.csv").read_text().splitlines()) >= 2
    html = (tmp_path / "r.html").read_text()
    assert "local codes" in html and "data:image/png;base64," in html  # caution and an embedded plot


def test_cli_run_prints_summary(tmp_path):
    demo = [p for p in DEMOS if p.name == "cylinder_fill_residual.toml"][0]
    r = subprocess.run([sys.executable, "-m", "eosfill", "run", str(demo), "--json", str(tmp_path / "o.json")],
                       capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    assert "stopped by: target_pressure" in r.stdout and "settled at" in r.stdout
    assert (tmp_path / "o.json").is_file()


def _write(tmp_path, body):
    p = tmp_path / "s.toml"
    p.write_text(textwrap.dedent(body))
    return load_scenario(p)


def test_transient_kind_runs_through_the_transient_module(tmp_path):
    """A time-resolved kind goes to eosfill.transient.model; a constant mass flow into an
    empty vessel adds exactly flow x time (the run's own duration stop)."""
    sc = _write(tmp_path, """
        kind = "transient_fill"
        [fluid]
        composition = "nitrogen"
        [vessel]
        volume = "50 L"
        [initial]
        empty = true
        [supply]
        temperature = "15 degC"
        pressure = "200 bar"
        [transient]
        duration = "60 s"
        [transient.restriction]
        type = "mass_flow"
        mass_flow = "0.01 kg/s"
    """)
    res = jobs.run_scenario(sc, write=False)
    # exact: a prescribed mass flow of 0.01 kg/s for 60 s admits 0.6 kg
    assert res.mass[-1] - res.mass[0] == pytest.approx(0.01 * 60.0, rel=1e-6)
    assert "local codes" in render(res)


def test_limit_flags_become_warnings(tmp_path):
    sc = _write(tmp_path, """
        kind = "fill"
        [fluid]
        composition = "nitrogen"
        [vessel]
        volume = "50 L"
        working_pressure = "200 bar"
        wall_mass = "300 kg"
        wall_specific_heat = "480 J/kg/K"
        [initial]
        temperature = "15 degC"
        pressure = "10 bar"
        [supply]
        temperature = "15 degC"
        pressure = "300 bar"
        [stop]
        target_pressure = "280 bar"
        [limits]
        max_gas_temperature = "18 degC"
    """)
    with pytest.warns(eosfill.LimitWarning):
        res = jobs.run_scenario(sc)
    assert any("max_gas_temperature" in f for f in res.flags)
    assert res.settled.P > 200e5  # a heavy wall keeps the gas cool: it settles above the nominal
    assert any("overfill" in f for f in res.flags)


def test_unmet_stop_is_reported(tmp_path):
    sc = _write(tmp_path, """
        kind = "fill"
        [fluid]
        composition = "nitrogen"
        [vessel]
        volume = "50 L"
        [initial]
        empty = true
        [supply]
        temperature = "15 degC"
        pressure = "100 bar"
        [stop]
        target_mass = "40 kg"
    """)
    with pytest.warns(eosfill.LimitWarning) as rec:
        res = jobs.run_scenario(sc)
    assert any("cannot be met" in str(w.message) for w in rec)
    assert not res.stop_met and "NOT MET" in render(res)


def test_wall_mass_without_specific_heat_is_input_error(tmp_path):
    sc = _write(tmp_path, """
        kind = "vent"
        [fluid]
        composition = "nitrogen"
        [vessel]
        volume = "50 L"
        wall_mass = "50 kg"
        [initial]
        temperature = "15 degC"
        pressure = "100 bar"
        [stop]
        target_pressure = "10 bar"
    """)
    with pytest.raises(eosfill.InputError, match="wall_specific_heat"):
        jobs.run_scenario(sc)
