"""Studies of scenario files (eosfill.io.sweep, eosfill sweep).

What is checked here, and where the physics is checked instead:
* a sweep's rows equal single runs of the same cases (eosfill.io.jobs.run_scenario,
  the code of ``eosfill run``) exactly, the vectorised batch path included;
  the single runs' physics is checked against thermo/CoolProp and published
  values in tests/test_vessel.py and tests/test_transient.py;
* overrides are checked like scenario keys (a bad value is a failure row
  naming the key path, never an abort);
* Monte Carlo: the mean of a near-linear output is the nominal run's value
  within its standard error; the same seed gives the same rows on the pool
  and on Dask (a LocalCluster of two one-thread workers);
* the limit search's answer, rerun as a single case, meets the limit within
  its tolerance;
* SIGTERM to a worker and then to the parent of ``eosfill sweep``, then
  ``--resume``: every case exactly once.
"""
import importlib.util
import math
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest

pd = pytest.importorskip("pandas")
pytest.importorskip("pyarrow")

from eosfill.io import jobs  # noqa: E402
from eosfill.errors import InputError  # noqa: E402
from eosfill.io.sweep import load_study, result_row, sweep_scenario  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
pytestmark = pytest.mark.filterwarnings("ignore::eosfill.LimitWarning", "ignore::eosfill.RangeWarning")

# Demo values (our own): a 50 L adiabatic cylinder of a natural gas filled by mass.
BASE = """
kind = "fill"
title = "study test (demo values)"

[fluid]
composition = { methane = 0.9, ethane = 0.06, nitrogen = 0.04 }

[vessel]
volume = "50 L"
working_pressure = "200 bar"

[initial]
temperature = "15 degC"
pressure = "20 bar"

[supply]
temperature = "15 degC"
pressure = "250 bar"

[stop]
target_mass = "7 kg"
"""


def scenario_file(tmp_path, sweep, base=BASE, name="study.toml"):
    p = tmp_path / name
    p.write_text(base + textwrap.dedent(sweep), encoding="utf-8")
    return p


def same(a, b):
    return a == b or (isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b))


def test_batch_rows_equal_single_runs_exactly(tmp_path, monkeypatch):
    p = scenario_file(tmp_path, """
        [sweep]
        [sweep.grid]
        "initial.pressure" = ["10 bar", "30 bar"]
        "supply.temperature" = ["0 degC", "30 degC"]
        "stop.target_mass" = ["5 kg", "8 kg"]
    """)
    study = load_study(p)
    assert len(study.cases) == 8
    single = [study.case.run_one(c) for c in study.cases]
    calls = []
    real = jobs.run_scenario
    monkeypatch.setattr(jobs, "run_scenario", lambda *a, **k: calls.append(1) or real(*a, **k))
    batch = study.case.run_batch(study.cases)
    assert calls == []  # every case went through the vectorised path
    for s, b in zip(single, batch):
        assert s.keys() == b.keys()
        assert all(same(s[k], b[k]) for k in s), [(k, s[k], b[k]) for k in s if not same(s[k], b[k])]
    # a case the batch cannot take (a pressure target) runs singly, in the same call
    p2 = scenario_file(tmp_path, """
        [sweep]
        [sweep.grid]
        "stop.target_mass" = ["5 kg", "6 kg"]
    """, base=BASE, name="s2.toml")
    study2 = load_study(p2)
    assert all(same(a, b) for r1, r2 in zip(study2.case.run_batch(study2.cases),
                                           [study2.case.run_one(c) for c in study2.cases])
               for a, b in zip(r1.values(), r2.values()))


@pytest.mark.parametrize("stop, values", [
    ("target_pressure", ["150 bar", "200 bar", "260 bar"]),          # 260 bar: above the supply, an input error
    ("target_settled_pressure", ["150 bar", "240 bar", "10 bar"]),   # 240 bar cooled: the supply cannot; 10 bar: below the start
    ("supply_pressure", None),
])
def test_pressure_target_batch_rows_equal_single_runs_exactly(tmp_path, monkeypatch, stop, values):
    base = BASE.replace('target_mass = "7 kg"', f'{stop} = "{values[0]}"' if values else "supply_pressure = true")
    grid = f'"stop.{stop}" = [{", ".join(repr(v).replace(chr(39), chr(34)) for v in values)}]' if values else ""
    p = scenario_file(tmp_path, f"""
        [sweep]
        [sweep.grid]
        "initial.pressure" = ["10 bar", "30 bar"]
        "supply.temperature" = ["0 degC", "30 degC"]
        {grid}
    """, base=base)
    study = load_study(p)
    single = []
    for c in study.cases:
        try:
            single.append(study.case.run_one(c))
        except Exception as exc:  # noqa: BLE001 - compared with the batch's row
            single.append(exc)
    calls = []
    real = jobs.run_scenario
    monkeypatch.setattr(jobs, "run_scenario", lambda *a, **k: calls.append(1) or real(*a, **k))
    batch = study.case.run_batch(study.cases)
    assert calls == []  # every case, failed ones included, went through the vectorised path
    for s, b in zip(single, batch):
        if isinstance(s, Exception):
            assert type(b) is type(s) and str(b) == str(s)
            continue
        assert s.keys() == b.keys()
        assert all(same(s[k], b[k]) for k in s), [(k, s[k], b[k]) for k in s if not same(s[k], b[k])]
    if stop != "supply_pressure":
        kinds = {type(r).__name__ if isinstance(r, Exception) else (r["stop"], r["stop_met"]) for r in batch}
        assert "InputError" in kinds
        assert (stop, True) in kinds
        if stop == "target_settled_pressure":
            assert ("supply_pressure", False) in kinds


def test_vent_batch_rows_equal_single_runs_exactly(tmp_path, monkeypatch):
    # adiabatic vents of nitrogen (demo values): the isentropic end state, the enthalpy let out
    # and the lowest temperature on the path, all cases in one call of each solver
    base = """
kind = "vent"
[fluid]
composition = "nitrogen"
[vessel]
volume = "200 L"
[initial]
temperature = "20 degC"
pressure = "150 bar"
[stop]
target_pressure = "20 bar"
[limits]
min_gas_temperature = "-80 degC"
"""
    p = scenario_file(tmp_path, """
        [sweep]
        [sweep.grid]
        "initial.temperature" = ["20 degC", "40 degC"]
        "stop.target_pressure" = ["20 bar", "40 bar"]
    """, base=base)
    study = load_study(p)
    single = [study.case.run_one(c) for c in study.cases]
    calls = []
    real = jobs.run_scenario
    monkeypatch.setattr(jobs, "run_scenario", lambda *a, **k: calls.append(1) or real(*a, **k))
    batch = study.case.run_batch(study.cases)
    assert calls == []
    for s, b in zip(single, batch):
        assert all(same(s[k], b[k]) for k in s), [(k, s[k], b[k]) for k in s if not same(s[k], b[k])]
    # the ideal-gas isentrope T0 (P/P0)^((g-1)/g), g = 1.4 for a diatomic gas (exact for an ideal gas),
    # ends at -108, -72, -97 and -58 degC: the -80 degC limit is passed in the first and third cases only
    # (margins of 8 K and more cover the real-gas correction)
    assert [r["flags"] for r in batch] == [1, 0, 1, 0]
    assert [r["T_min [K]"] < 193.15 for r in batch] == [True, False, True, False]


def test_sweep_rows_are_single_runs_of_the_overridden_scenario(tmp_path):
    p = scenario_file(tmp_path, """
        [sweep]
        [sweep.grid]
        "vessel.volume" = { from = "40 L", to = "60 L", steps = 3 }
    """)
    df = sweep_scenario(p, workers=1)
    assert df["vessel.volume [m3]"].tolist() == pytest.approx([0.04, 0.05, 0.06], rel=1e-15)
    # the same case written out by hand and run as `eosfill run` runs it
    from eosfill.io.scenario import load_scenario

    q = tmp_path / "one.toml"
    q.write_text(BASE.replace('volume = "50 L"', 'volume = "60 L"'), encoding="utf-8")
    row = result_row(jobs.run_scenario(load_scenario(q), write=False))
    last = df.iloc[2]
    assert all(same(row[k], last[k]) if not isinstance(row[k], (bool, np.bool_)) else row[k] == last[k] for k in row)


def test_bad_override_is_a_failure_row_naming_the_key(tmp_path):
    p = scenario_file(tmp_path, """
        [sweep]
        [sweep.grid]
        "initial.pressure" = ["20 bar", "300 bar", "40 bar"]
    """)
    df = sweep_scenario(p, workers=1)
    assert df["status"].tolist() == ["ok", "input", "ok"]
    assert "supply.pressure" in df["message"][1] and str(p) in df["message"][1]
    assert np.isnan(df["T_end [K]"][1])


@pytest.mark.parametrize("sweep, fragment", [
    ('[sweep]\nsteps = 3\n[sweep.grid]\n"initial.pressure" = ["1 bar"]\n', "sweep.steps"),
    ('[sweep]\n[sweep.grid]\n"initial.pressure" = ["1 bar", "20 degC"]\n', "one kind"),
    ('[sweep]\nsamples = 5\n[sweep.draw]\n"supply.temperature" = { distribution = "normal", mean = "15 degC" }\n',
     "mean, sd"),
    ('[sweep]\n[sweep.grid]\n"initial.pressure" = { from = "1 bar", to = "2 bar", steps = 1 }\n', "steps"),
    ('[sweep]\n[sweep.limit]\ninput = "stop.target_mass"\noutput = "T_hot [K]"\nlimit = "50 degC"\n'
     'low = "1 kg"\nhigh = "2 kg"\ntolerance = "0.1 kg"\n', "sweep.limit.output"),
])
def test_bad_sweep_section_names_the_key(tmp_path, sweep, fragment):
    with pytest.raises(InputError, match=fragment):
        load_study(scenario_file(tmp_path, sweep))


def test_monte_carlo_mean_is_the_nominal_within_its_standard_error(tmp_path):
    # T_end is near-linear in the supply temperature over +-2 K, so the mean of
    # the draws is the nominal run's T_end to well within the standard error
    p = scenario_file(tmp_path, """
        [sweep]
        seed = 12
        samples = 64
        [sweep.draw]
        "supply.temperature" = { distribution = "normal", mean = "15 degC", sd = "2 K" }
    """)
    df = sweep_scenario(p, workers=1)
    assert (df["status"] == "ok").all()
    from eosfill.io.scenario import load_scenario

    nominal = result_row(jobs.run_scenario(load_scenario(p), write=False))["T_end [K]"]
    T = df["T_end [K]"].to_numpy()
    se = T.std(ddof=1) / math.sqrt(T.size)
    assert se > 0.05  # the draws really spread the output
    assert abs(T.mean() - nominal) < 3 * se


def test_limit_search_answer_meets_the_limit_when_rerun(tmp_path):
    # the mass at which the adiabatic fill's end temperature reaches 45 degC
    p = scenario_file(tmp_path, """
        [sweep]
        [sweep.grid]
        "initial.pressure" = ["10 bar", "40 bar"]
        [sweep.limit]
        input = "stop.target_mass"
        output = "T_end [K]"
        limit = "45 degC"
        low = "2 kg"
        high = "9 kg"
        tolerance = "0.005 kg"
    """)
    study = load_study(p)
    df = sweep_scenario(p, workers=1)
    assert (df["status"] == "ok").all()
    col = "stop.target_mass at limit [kg]"
    for _, row in df.iterrows():
        m = row[col]
        assert row["stop.target_mass bracket width [kg]"] <= 0.005
        case = {"initial.pressure [Pa]": row["initial.pressure [Pa]"]}
        at = study.case.run_one({**case, "stop.target_mass [kg]": m})["T_end [K]"]
        past = study.case.run_one({**case, "stop.target_mass [kg]": m + 0.005})["T_end [K]"]
        assert at <= 318.15 < past
        assert 3 <= row["limit runs"] <= 40
    if importlib.util.find_spec("matplotlib") is not None:  # the report draws the limit-search curve
        from eosfill.io.study_report import build_study_report

        rep = build_study_report(study, df)
        assert [f.name for f in rep.figures].count("limit") == 1


def test_pool_and_dask_give_the_same_rows_for_the_same_seed(tmp_path):
    distributed = pytest.importorskip("dask.distributed")
    p = scenario_file(tmp_path, """
        [sweep]
        seed = 5
        samples = 3
        chunk_size = 2
        [sweep.grid]
        "initial.pressure" = ["10 bar", "30 bar"]
        [sweep.draw]
        "supply.temperature" = { distribution = "uniform", low = "5 degC", high = "25 degC" }
        "stop.target_mass" = { distribution = "triangular", low = "5 kg", mode = "6 kg", high = "8 kg" }
    """)
    pool = sweep_scenario(p, workers=2)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, distributed.Client(cluster) as client:
        on_dask = sweep_scenario(p, client=client)
        by_address = sweep_scenario(p, scheduler=cluster.scheduler_address)  # as --scheduler tcp://host:port
    assert len(pool) == 6 and (pool["status"] == "ok").all()
    pd.testing.assert_frame_equal(pool, on_dask)
    pd.testing.assert_frame_equal(pool, by_address)


def _children(pid):
    try:
        text = Path(f"/proc/{pid}/task/{pid}/children").read_text()
    except OSError:
        return []
    return [int(x) for x in text.split()]


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc for the worker processes")
def test_killed_sweep_resumes_with_every_case_once(tmp_path):
    # pressure targets: no batch, each case a root search (~0.1 s), one case per chunk
    p = scenario_file(tmp_path, """
        [sweep]
        chunk_size = 1
        [sweep.grid]
        "stop.target_pressure" = { from = "100 bar", to = "200 bar", steps = 14 }
    """, base=BASE.replace('target_mass = "7 kg"', 'target_pressure = "150 bar"'))
    out = tmp_path / "rows.csv"
    parts = tmp_path / "rows.csv.parts"
    cmd = [sys.executable, "-m", "eosfill", "sweep", str(p), "-o", str(out), "--workers", "2"]
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    proc = subprocess.Popen(cmd, cwd=tmp_path, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)

    def wait_for_chunks(n, timeout=120):
        end = time.time() + timeout
        while time.time() < end:
            if parts.exists() and len(list(parts.glob("part-*.csv"))) >= n:
                return
            if proc.poll() is not None:
                pytest.fail(f"sweep ended early: {proc.communicate()}")
            time.sleep(0.05)
        pytest.fail("no chunks written in time")

    try:
        wait_for_chunks(1)
        workers = _children(proc.pid)
        assert workers, "no worker processes"
        os.kill(workers[0], signal.SIGTERM)  # a worker dies mid-sweep: the pool is rebuilt
        n = len(list(parts.glob("part-*.csv")))
        wait_for_chunks(n + 2)
        workers = _children(proc.pid)
        proc.send_signal(signal.SIGTERM)  # then the parent
        proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()
    assert proc.returncode == 128 + signal.SIGTERM
    for w in workers:  # no worker left behind
        for _ in range(100):
            if not Path(f"/proc/{w}").exists() or "Z" in Path(f"/proc/{w}/stat").read_text().split()[2]:
                break
            time.sleep(0.05)
        else:
            pytest.fail(f"worker {w} still running")
    assert not out.exists() and parts.exists()
    written = pd.concat([pd.read_csv(f) for f in parts.glob("part-*.csv")])["case"].tolist()
    assert 3 <= len(written) < 14 and len(set(written)) == len(written)
    res = subprocess.run(cmd + ["--resume"], cwd=tmp_path, capture_output=True, text=True, timeout=300)
    assert res.returncode == 0, res.stderr
    df = pd.read_csv(out)
    assert sorted(df["case"]) == list(range(14))
    assert (df["status"] == "ok").all()
    assert not parts.exists()
    assert "14 cases: 14 ok, 0 failed" in res.stdout


def test_cli_exit_codes_and_failed_count(tmp_path, capsys, monkeypatch):
    from eosfill.io.cli import main

    monkeypatch.chdir(tmp_path)
    bad = scenario_file(tmp_path, '[sweep]\n[sweep.grid]\n"initial.pressur" = ["1 bar", "2 bar"]\n', name="bad.toml")
    assert main(["sweep", str(bad), "-o", "x.parquet", "--workers", "1"]) == 2
    assert "initial.pressur" in capsys.readouterr().err
    assert not (tmp_path / "x.parquet").exists() and not (tmp_path / "x.parquet.parts").exists()
    p = scenario_file(tmp_path, """
        [sweep]
        [sweep.grid]
        "initial.pressure" = ["20 bar", "300 bar"]
    """)
    assert main(["sweep", str(p), "-o", "rows.parquet", "--workers", "1"]) == 0
    assert "2 cases: 1 ok, 1 failed (input 1" in capsys.readouterr().out
    assert pd.read_parquet(tmp_path / "rows.parquet")["status"].tolist() == ["ok", "input"]
    assert main(["sweep", str(p), "-o", "rows.txt"]) == 2
    assert ".parquet or .csv" in capsys.readouterr().err
    assert main(["sweep", str(p), "-o", "rows.csv", "--workers", "0"]) == 2
    assert not (tmp_path / "rows.csv.parts").exists()  # a bad option writes nothing


def test_study_report_has_its_parts(tmp_path):
    pytest.importorskip("matplotlib")
    from eosfill.io.study_report import write_study_report

    p = scenario_file(tmp_path, """
        [sweep]
        seed = 3
        samples = 4
        [sweep.grid]
        "initial.pressure" = ["10 bar", "30 bar", "300 bar"]
        "supply.temperature" = ["0 degC", "30 degC"]
        [sweep.draw]
        "stop.target_mass" = { distribution = "uniform", low = "5 kg", high = "7 kg" }
    """)
    study = load_study(p)
    df = sweep_scenario(p, workers=1)
    files = write_study_report(study, df, tmp_path / "study.html")
    html = (tmp_path / "study.html").read_text(encoding="utf-8")
    md = (tmp_path / "study.md").read_text(encoding="utf-8")
    assert html.count('class="box caution"') == 2 and "licensed practice govern" in html
    assert "Spearman" in html and "95 %" in html
    # 8 cases with 300 bar initial pressure (above the supply's) fail and are listed with the key at fault
    assert (df["status"] == "input").sum() == 8
    failures = md.split("## Failed cases")[1]
    assert failures.count("| input |") == 8 and "supply.pressure" in failures
    # a contour and a histogram per main output, each a PNG
    assert sum(f.suffix == ".png" for f in files) == 4 and html.count("data:image/png;base64,") == 4
