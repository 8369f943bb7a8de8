"""The command line's outside edge: every failure is one line and an exit code
(2 input, 3 solver, 4 internal error "please report"), never a traceback
unless --debug; the same range checks on the command line and in files.

Plumbing checks (bad input is refused with the key named); the physical
upper bounds are orders of magnitude of the trade (common practice, no source).
"""
import subprocess
import sys
import textwrap

import pytest

FILL = textwrap.dedent("""
    kind = "fill"
    [fluid]
    composition = "nitrogen"
    [vessel]
    volume = "50 L"
    [initial]
    temperature = "15 degC"
    pressure = "10 bar"
    [supply]
    temperature = "15 degC"
    pressure = "200 bar"
    [stop]
    target_pressure = "150 bar"
    [limits]
    max_gas_temperature = "150 degC"
""")

BLOWDOWN = textwrap.dedent("""
    kind = "transient_vent"
    [fluid]
    composition = "nitrogen"
    [vessel]
    volume = "50 L"
    [initial]
    temperature = "15 degC"
    pressure = "100 bar"
    [transient]
    duration = "10 h"
    output_interval = "1 us"
    [transient.restriction]
    type = "orifice"
    diameter = "2 mm"
    discharge_coefficient = 0.8
""")


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "eosfill", *args], capture_output=True, text=True,
                          cwd=cwd, timeout=180)


def one_line_error(r, code, *fragments):
    assert r.returncode == code, (r.returncode, r.stderr)
    assert "Traceback" not in r.stderr
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, r.stderr
    for f in fragments:
        assert f in r.stderr, (f, r.stderr)
    assert "nan" not in r.stdout.lower()


@pytest.mark.parametrize("args, key", [
    (("--T", "300 K", "--P", "1e30 bar"), "--P"),
    (("--T", "300 K", "--P", "0 bar"), "--P"),
    (("--T", "1e6 K", "--P", "5 bar"), "--T"),
    (("--T", "300 K", "--P", "5 bar", "--ambient-pressure", "-5 bar"), "--ambient-pressure"),
    (("--T", "300 K", "--P", "5 bar", "--ambient-pressure", "1 barg"), "--ambient-pressure"),
])
def test_state_out_of_range_exit_2(args, key):
    r = run("state", "--fluid", "nitrogen", *args)
    one_line_error(r, 2, key, "absolute" if "1 barg" in args else "out of range")
    assert r.stdout == ""


def test_state_messages_in_command_line_words():
    r = run("state", "--fluid", "methane=0.9,ethane=0.2", "--T", "300 K", "--P", "5 bar")
    one_line_error(r, 2, "--normalise", "1.1")
    assert "np.float64" not in r.stderr and "normalise=True" not in r.stderr


def test_ambient_pressure_same_check_in_a_file(tmp_path):
    sc = tmp_path / "amb.toml"
    sc.write_text(FILL + '[ambient]\npressure = "-5 bar"\n')
    r_file = run("run", str(sc))
    r_cli = run("state", "--fluid", "nitrogen", "--T", "300 K", "--P", "5 bar", "--ambient-pressure", "-5 bar")
    one_line_error(r_file, 2, "ambient.pressure", "out of range")
    tail = r_cli.stderr.split("': ", 1)[-1]  # the same reason after the key and value
    assert tail.strip() in r_file.stderr


@pytest.mark.parametrize("old, new, key", [
    ('volume = "50 L"', 'volume = "1e300 L"', "vessel.volume"),
    ('temperature = "15 degC"\n    pressure = "200 bar"', 'temperature = "1e6 K"\n    pressure = "200 bar"',
     "supply.temperature"),
    ('pressure = "200 bar"', 'pressure = "1e30 bar"', "supply.pressure"),
])
def test_scenario_upper_bounds_exit_2(tmp_path, old, new, key):
    sc = tmp_path / "big.toml"
    text = FILL.replace(old.replace("\n    ", "\n"), new.replace("\n    ", "\n"))
    assert text != FILL
    sc.write_text(text)
    r = run("run", str(sc))
    one_line_error(r, 2, key, "out of range")


def test_output_count_bounded_before_memory_runs_out(tmp_path):
    sc = tmp_path / "us.toml"
    sc.write_text(BLOWDOWN)
    r = run("run", str(sc))
    one_line_error(r, 2, "transient.output_interval", "output times")


def test_deeply_nested_toml_exit_2(tmp_path):
    sc = tmp_path / "deep.toml"
    sc.write_text("a = " + "[" * 5000 + "]" * 5000 + "\n")
    r = run("run", str(sc))
    one_line_error(r, 2, "deep.toml", "nested")


def test_utf8_byte_order_mark_accepted(tmp_path):
    from eosfill.io.scenario import load_scenario

    sc = tmp_path / "bom.toml"
    sc.write_bytes(b"\xef\xbb\xbf" + FILL.encode("utf-8"))
    assert load_scenario(sc).vessel.volume == pytest.approx(0.05)


def test_unwritable_output_exit_2(tmp_path):
    sc = tmp_path / "ok.toml"
    sc.write_text(FILL)
    r = run("run", str(sc), "--json", "/sys/r.json")  # sysfs refuses new files, even for root
    one_line_error(r, 2, "/sys/r.json")


def test_internal_error_exit_4_please_report(monkeypatch, capsys):
    from eosfill.io import cli

    def broken(args):
        raise ZeroDivisionError("a bug")

    monkeypatch.setattr(cli, "cmd_fluids", broken)
    assert cli.main(["fluids"]) == 4
    err = capsys.readouterr().err
    assert "internal error" in err and "please report" in err and "Traceback" not in err
    assert cli.main(["--debug", "fluids"]) == 4
    err = capsys.readouterr().err
    assert "Traceback" in err and "ZeroDivisionError" in err


# --------------------------------------------------------------------------
# nothing half-written; no overwrite without --force; [output] stays beside the scenario
# --------------------------------------------------------------------------
def test_a_failing_output_leaves_nothing_behind(tmp_path):
    sc = tmp_path / "ok.toml"
    sc.write_text(FILL)
    r = run("run", str(sc), "--csv", "k.csv", "--json", "k.json", "--report", "/sys/r.html", cwd=tmp_path)
    one_line_error(r, 2, "/sys/r.html", "nothing was written")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ok.toml"]  # no k.csv, k.json, no temporary file


def test_existing_file_needs_force_and_scenario_is_never_overwritten(tmp_path):
    sc = tmp_path / "ok.toml"
    sc.write_text(FILL)
    out = tmp_path / "r.json"
    out.write_text("keep me")
    r = run("run", str(sc), "--json", str(out))
    one_line_error(r, 2, "exists", "--force")
    assert out.read_text() == "keep me"
    r = run("run", str(sc), "--json", str(sc), "--force")
    one_line_error(r, 2, "scenario file")
    assert sc.read_text() == FILL
    r = run("run", str(sc), "--json", str(out), "--force")
    assert r.returncode == 0, r.stderr
    assert out.read_text().startswith("{")


@pytest.mark.parametrize("path", ["../elsewhere.json", "/tmp/elsewhere.json", "sub/../../x.json"])
def test_output_paths_stay_in_the_scenario_folder(tmp_path, path):
    from eosfill import InputError
    from eosfill.io.scenario import load_scenario

    folder = tmp_path / "sent"
    folder.mkdir()
    (folder / "sub").mkdir()
    sc = folder / "fill.toml"
    sc.write_text(FILL + f'[output]\njson = "{path}"\n')
    with pytest.raises(InputError, match="output.json.*outside the scenario's folder"):
        load_scenario(sc)
    assert load_scenario(sc, allow_output_outside=True).output.json.name.endswith(".json")


def test_output_paths_relative_to_the_scenario_file(tmp_path):
    from eosfill.io.scenario import load_scenario

    sc = tmp_path / "fill.toml"
    sc.write_text(FILL + '[output]\njson = "r.json"\nreport = "r.html"\n')
    out = load_scenario(sc).output
    assert out.json == (tmp_path / "r.json").resolve() and out.report == (tmp_path / "r.html").resolve()
    sc.write_text(FILL + '[output]\njson = "fill.toml"\n')
    with pytest.raises(Exception, match="scenario file itself"):
        load_scenario(sc)
