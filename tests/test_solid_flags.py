"""Solid-region flags in every layer that reports states: vessel end states,
time-resolved rows, `eosfill state` and reports.  The boundary itself is
checked against published values in test_solid.py (Span & Wagner 1996: CO2
triple point 216.592 K, sublimation pressure Eq. 3.12); here each check is
that a state on the solid side of that boundary is flagged, naming the fluid
and the temperature, and that a state away from it is not.
"""
from __future__ import annotations

import html
import subprocess
import sys
import textwrap

import numpy as np
import pytest

import eosfill
from eosfill import transient
from eosfill.equilibrium import solid as S
from eosfill.transient import flow
from eosfill.vessel import Stream, Vessel, vent

pytestmark = pytest.mark.filterwarnings("ignore::eosfill.RangeWarning", "ignore::eosfill.LimitWarning")
CO2 = eosfill.Fluid("carbon dioxide")


@pytest.fixture(scope="module")
def co2_vent():
    # 50 L of CO2 at 20 °C, 50 bar vented adiabatically to 1.2 bar: the cubic ends two-phase at
    # about -85 °C, below the triple point (216.592 K) and above p_sub (Span & Wagner 1996, Eq. 3.12)
    return vent(Vessel(0.05), Stream(CO2, 293.15, P=50e5), stop="target_pressure", target=1.2e5)


@pytest.mark.slow
def test_co2_vent_to_1p2_bar_is_flagged_solid(co2_vent):
    r = co2_vent
    T = r.final.T
    assert T < 216.592 and r.final.P > float(S.co2_sublimation_pressure(T))
    solid = [f for f in r.flags if "solid region" in f]
    assert len(solid) == 1
    assert "carbon dioxide" in solid[0] and f"{T:.6g} K" in solid[0] and f"{T - 273.15:.2f} °C" in solid[0]
    assert r.final.solid == solid
    assert "SOLID REGION" in str(r)


def test_vent_above_the_triple_point_is_not_flagged():
    # nitrogen vented from 300 K, 200 bar to 20 bar ends near 151 K, far above its triple point 63.151 K
    r = vent(Vessel(0.01), Stream(eosfill.Fluid("nitrogen"), 300.0, P=200e5), stop="target_pressure", target=20e5)
    assert r.final.T > 100.0
    assert not r.final.solid and not any("solid" in f for f in r.flags)


def test_fill_from_a_supply_in_the_solid_region_is_flagged():
    # CO2 supply at -70 °C, 20 bar (below 216.592 K, above p_sub = 0.198 MPa): the supply line
    # itself may hold dry ice; a -10 °C, 40 bar liquid supply (above the triple point) is not flagged
    from eosfill.vessel import fill

    cold = fill(Vessel(0.04), Stream(CO2, 203.15, P=20e5), Stream(CO2, 288.15, P=10e5),
                stop="target_pressure", target=15e5)
    assert any(f.startswith("supply: carbon dioxide at 203.15 K") for f in cold.flags)
    warm = fill(Vessel(0.04), Stream(CO2, 263.15, P=40e5), Stream(CO2, 288.15, P=10e5),
                stop="target_pressure", target=30e5)
    assert not any("solid" in f for f in warm.flags)


@pytest.mark.slow
def test_time_resolved_rows_carry_a_solid_column():
    # CO2 near saturation at -40 °C vented to 3 bar: rows below 216.592 K at pressures above
    # p_sub (Span & Wagner 1996) are flagged; the warm rows are not
    res = transient.simulate(CO2, 0.01, mode="vent", initial_temperature=233.15, initial_pressure=8e5,
                             restriction=flow.MassFlow(0.02), back_pressure=1e5, duration=600.0,
                             target_pressure=3e5, n_output=11)
    T, P = np.asarray(res.T_gas), np.asarray(res.P)
    expected = (T < 216.592) & (P > S.co2_sublimation_pressure(np.minimum(T, 216.592)))
    assert res.solid.dtype == bool and res.solid.shape == T.shape
    assert res.solid.tolist() == expected.tolist()
    assert expected.any() and not expected[0]
    flag = [f for f in res.flags if "solid region" in f]
    assert len(flag) == 1 and "carbon dioxide" in flag[0]
    i = int(np.argmax(res.solid))
    assert f"{res.t[i]:.4g} s" in flag[0] and f"{T[i]:.6g} K" in flag[0]
    assert "solid" in res.to_dataframe().columns


def _cli(*args):
    return subprocess.run([sys.executable, "-m", "eosfill", *args], capture_output=True, text=True, timeout=300)


def test_cli_state_co2_minus_70_degC_10_bar_says_solid_region():
    # end to end through the command line: -70 °C is below CO2's triple point, 10 bar above
    # p_sub(203.15 K) = 0.198 MPa
    r = _cli("state", "--fluid", "carbon dioxide", "--T", "-70 degC", "--P", "10 bar")
    assert r.returncode == 0, r.stderr
    phase_line = next(line for line in r.stdout.splitlines() if line.strip().startswith("phase"))
    assert "solid region" in phase_line and "liquid" in phase_line  # "... the cubic alone says liquid"
    assert any(line.startswith("WARNING: carbon dioxide") and "203.15 K" in line for line in r.stdout.splitlines())
    explain = _cli("explain", "--fluid", "carbon dioxide", "--T", "-70 degC", "--P", "10 bar")
    assert explain.returncode == 0 and "WARNING: carbon dioxide" in explain.stdout
    warm = _cli("state", "--fluid", "carbon dioxide", "--T", "-40 degC", "--P", "10 bar")
    assert warm.returncode == 0 and "solid region" not in warm.stdout and "WARNING" not in warm.stdout


@pytest.mark.slow
def test_report_limits_box_shows_the_solid_flag(tmp_path):
    scenario = tmp_path / "co2_vent.toml"
    scenario.write_text(textwrap.dedent("""\
        # test scenario (our own values): CO2 vented to 1.2 bar
        kind = "vent"
        title = "CO2 vented to 1.2 bar"
        [fluid]
        composition = "carbon dioxide"
        model = "PR"
        [vessel]
        volume = "50 L"
        [initial]
        temperature = "20 degC"
        pressure = "50 bar"
        [stop]
        target_pressure = "1.2 bar"
        """))
    out = tmp_path / "r.md"
    r = _cli("run", str(scenario), "--report", str(out))
    assert r.returncode == 0, r.stderr
    text = html.unescape(out.read_text(encoding="utf-8"))
    limits = text[text.index("Limits"):text.index("Inputs")]
    assert "solid region" in limits and "carbon dioxide" in limits and "Span & Wagner 1996" in limits
    assert "SOLID REGION (the cubic alone: two-phase)" in text  # the end-state table's phase row
