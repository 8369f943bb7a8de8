"""Command line (python -m eosfill): output and exit codes (0 ok, 2 bad input,
3 solver failure or missing solver).

Plumbing checks: printed numbers are compared with the Python API (the
physics behind them is checked against outside sources - thermo, CoolProp,
published values - in the test_cubic_*, test_states, test_vessel and
test_transient files) or with identities they must satisfy.
"""
import subprocess
import sys
import textwrap

import pytest

import eosfill


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "eosfill", *args], capture_output=True, text=True,
                          cwd=cwd, timeout=120)


def test_state_tp():
    r = run("state", "--fluid", "methane=0.9,ethane=0.1", "--T", "15 degC", "--P", "200 bar")
    assert r.returncode == 0, r.stderr
    st = eosfill.Fluid({"methane": 0.9, "ethane": 0.1}).state(T=288.15, P=200e5)
    assert f"{st.Z:.6g}" in r.stdout
    assert f"{st.h:.6g}" in r.stdout
    for word in ("density", "enthalpy", "entropy", "speed of sound", "Caution", "298.15 K"):
        assert word in r.stdout


def test_state_gauge_and_psi():
    r = run("state", "--fluid", "nitrogen", "--model", "srk", "--T", "60 degF", "--P", "3000 psig")
    assert r.returncode == 0, r.stderr
    P = 3000 * 4.4482216152605 / 0.0254**2 + 101325.0  # NIST SP 811 (2008) App. B; gauge + 1 atm
    assert f"{P / 1e5:.6g} bar" in r.stdout  # printed in bar (1 bar = 1e5 Pa, BIPM SI Brochure 2019)


@pytest.mark.parametrize("args, fragment", [
    (("--fluid", "metane", "--T", "15 degC", "--P", "200 bar"), "unknown fluid 'metane'"),
    (("--fluid", "nitrogen", "--T", "15 degC", "--P", "200 kg"), "--P = '200 kg'"),
    (("--fluid", "nitrogen", "--T", "15 degC"), "exactly two"),
    (("--fluid", "methane=0.9,ethane=0.2", "--T", "15 degC", "--P", "2 bar"), "sum"),
    (("--fluid", "methane=abc", "--T", "15 degC", "--P", "2 bar"), "not a number"),
])
def test_state_bad_input_exit_2(args, fragment):
    r = run("state", *args)
    assert r.returncode == 2
    assert fragment in r.stderr
    assert r.stdout == ""


def test_argparse_error_is_2():
    assert run("state").returncode == 2
    assert run("nonsense").returncode == 2


def test_fluids_lists_table():
    r = run("fluids")
    assert r.returncode == 0, r.stderr
    assert "methane" in r.stdout and "74-82-8" in r.stdout  # CAS of methane (CAS Registry)
    assert "Tc K" in r.stdout and "omega" in r.stdout


def test_explain_prints_trace():
    r = run("explain", "--fluid", "methane=0.9,ethane=0.1", "--T", "15 degC", "--P", "200 bar")
    assert r.returncode == 0, r.stderr
    st = eosfill.Fluid({"methane": 0.9, "ethane": 0.1}).state(T=288.15, P=200e5)
    import re

    # the trace recomputes h step by step: equal to the State's to round-off
    # (the 15th digit may differ, so compare numbers, not text)
    h_trace = float(re.search(r"^\s*h = (\S+) J/mol", r.stdout, re.M).group(1))
    assert h_trace == pytest.approx(st.h, rel=1e-13)
    assert "(C7)" in r.stdout and "κ = 0.37464" in r.stdout


def test_explain_bad_temperature_exit_2():
    r = run("explain", "--fluid", "nitrogen", "--T", "15 bar", "--P", "200 bar")
    assert r.returncode == 2 and "--T" in r.stderr


def test_run_malformed_scenario_exit_2_writes_nothing(tmp_path):
    sc = tmp_path / "bad.toml"
    sc.write_text(textwrap.dedent("""
        kind = "fill"
        [fluid]
        composition = "nitrogen"
        [vessel]
        volume = "50 kg"
        [initial]
        empty = true
        [supply]
        temperature = "15 degC"
        pressure = "200 bar"
        [stop]
        target_pressure = "150 bar"
    """))
    out = tmp_path / "r.json"
    r = run("run", str(sc), "--json", str(out), "--csv", str(tmp_path / "r.csv"))
    assert r.returncode == 2
    assert "vessel.volume" in r.stderr and str(sc) in r.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.toml"]


def test_run_valid_scenario(tmp_path):
    sc = tmp_path / "ok.toml"
    sc.write_text(textwrap.dedent("""
        kind = "fill"
        [fluid]
        composition = "nitrogen"
        [vessel]
        volume = "50 L"
        [initial]
        empty = true
        [supply]
        temperature = "15 degC"
        pressure = "200 bar"
        [stop]
        target_pressure = "150 bar"
    """))
    r = run("run", str(sc))
    assert r.returncode == 0, r.stderr


def test_main_in_process(capsys):
    from eosfill.io.cli import main

    assert main(["state", "--fluid", "argon", "--T", "300 K", "--P", "1 bar"]) == 0
    assert "argon" in capsys.readouterr().out
    assert main(["state", "--fluid", "argon", "--T", "300 K", "--P", "-2 bar"]) == 2


def test_state_two_phase_prints_the_split():
    """A two-phase state prints its vapour fraction and both phases; the
    printed numbers satisfy the lever rule on specific volume (consistency):
    1/ρ = w_V/ρ_V + (1 - w_V)/ρ_L with w_V the vapour mass fraction."""
    r = run("state", "--fluid", "propane=0.6,n-butane=0.4", "--T", "300 K", "--P", "6 bar")
    assert r.returncode == 0, r.stderr
    rows = {}
    for line in r.stdout.splitlines():
        label, _, rest = line.strip().partition("  ")
        rows.setdefault(label.strip(), rest.split())
    rho = float(rows["density"][0])
    rho_L = float(rows["liquid density"][0])
    rho_V = float(rows["vapour density"][0])
    w_V = float(rows["vapour fraction"][2].strip("("))
    assert 0.0 < w_V < 1.0
    assert 1.0 / rho == pytest.approx(w_V / rho_V + (1.0 - w_V) / rho_L, rel=1e-4)  # 6 printed digits
    assert "liquid x propane" in r.stdout and "n/a (two-phase)" in r.stdout
