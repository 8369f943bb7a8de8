"""The study layer (eosfill.study) on functions with known answers: cases
from grids and seeded draws, failure rows, the kill-safe store and resume,
the limit search, the local pool.  The scenario binding, Dask and the
kill test of the command line are in tests/test_sweep.py."""
import math

import numpy as np
import pytest

from eosfill.errors import ConvergenceError, EosfillError, InputError
from eosfill.study import (Draw, Grid, LimitNotBracketed, LimitSearch, ResultStore, make_cases,
                           mean_and_standard_error, rank_correlations, run_study, search_limit)

pd = pytest.importorskip("pandas")


def square(c):
    x = c["x [m]"]
    if x < 0:
        raise InputError("x", x, "x >= 0")
    if x == 5:
        raise ConvergenceError("toy", "does not converge at 5", {"x": x}, 1.0)
    if x == 6:
        raise ZeroDivisionError("a bug")
    return {"y [m2]": x * x}


def cube(c):
    return {"y [-]": c["x [-]"] ** 3 + 0.0 * c.get("z [-]", 0.0)}


def test_grid_is_full_factorial_last_fastest():
    cases = make_cases([Grid("a", (1, 2)), Grid("b", (10, 20, 30))])
    assert [(c["a"], c["b"]) for c in cases] == [(1, 10), (1, 20), (1, 30), (2, 10), (2, 20), (2, 30)]


def test_draws_are_reproducible_and_crossed_with_the_grid():
    draws = [Draw("T", "normal", {"mean": 300.0, "sd": 2.0}), Draw("h", "uniform", {"low": 1.0, "high": 3.0})]
    a = make_cases([Grid("g", (0, 1))], draws, samples=50, seed=7)
    b = make_cases([Grid("g", (0, 1))], draws, samples=50, seed=7)
    c = make_cases([Grid("g", (0, 1))], draws, samples=50, seed=8)
    assert a == b and a != c and len(a) == 100
    # the same samples at each grid point
    assert [x["T"] for x in a[:50]] == [x["T"] for x in a[50:]]
    assert all(1.0 <= x["h"] < 3.0 for x in a)


@pytest.mark.parametrize("latin", [False, True])
def test_sample_means_within_their_standard_error(latin):
    # exact means of the distributions: normal mu; uniform (a+b)/2; triangular (a+c+b)/3
    draws = [Draw("n", "normal", {"mean": 5.0, "sd": 2.0}), Draw("u", "uniform", {"low": -1.0, "high": 3.0}),
             Draw("t", "triangular", {"low": 0.0, "mode": 1.0, "high": 5.0})]
    cases = make_cases((), draws, samples=4000, seed=11, latin_hypercube=latin)
    for d, exact in zip(draws, (5.0, 1.0, 2.0)):
        m, se = mean_and_standard_error([c[d.name] for c in cases])
        assert abs(m - exact) < 4 * se
    if latin:  # a Latin hypercube puts exactly one point in each of the n strata of each input
        q = np.sort([(c["u"] + 1.0) / 4.0 for c in cases])
        assert np.all(np.floor(q * 4000) == np.arange(4000))


def test_bad_draws_name_the_input():
    with pytest.raises(InputError, match="sd"):
        Draw("x", "normal", {"mean": 1.0, "sd": 0.0})
    with pytest.raises(InputError, match="mode"):
        Draw("x", "triangular", {"low": 0.0, "mode": 2.0, "high": 1.0})
    with pytest.raises(InputError, match="lognormal"):
        Draw("x", "lognormal", {})


def test_failures_are_rows_with_their_exit_class():
    cases = make_cases([Grid("x [m]", (1.0, -1.0, 5.0, 6.0, 3.0))])
    df = run_study(square, cases, workers=1)
    assert df["case"].tolist() == [0, 1, 2, 3, 4]
    assert df["status"].tolist() == ["ok", "input", "solver", "internal", "ok"]
    assert df["y [m2]"].iloc[[0, 4]].tolist() == [1.0, 9.0]
    assert df["y [m2]"].iloc[1:4].isna().all()
    assert "x >= 0" in df["message"].iloc[1] and "ZeroDivisionError" in df["message"].iloc[3]


def test_pool_gives_the_same_rows_as_one_process():
    cases = make_cases([Grid("x [m]", tuple(float(i) for i in range(12)))])
    serial = run_study(square, cases, workers=1)
    pool = run_study(square, cases, workers=2, chunk_size=2)
    pd.testing.assert_frame_equal(serial, pool)


def test_store_resumes_only_the_missing_cases(tmp_path):
    out = tmp_path / "r.csv"
    cases = make_cases([Grid("x [-]", tuple(float(i) for i in range(10)))])
    calls = []

    def counted(c):
        calls.append(c["x [-]"])
        return cube(c)

    # a study interrupted after two chunks: only their files exist
    from eosfill.study import fingerprint, run_chunk

    store = ResultStore(out, fingerprint(cases), len(cases))
    store.write_chunk(run_chunk(cube, None, list(enumerate(cases))[:3]))
    store.write_chunk(run_chunk(cube, None, list(enumerate(cases))[6:8]))
    (store.parts / ".tmp-half-written.csv").write_text("case,x\n99,")  # a kill mid-write
    with pytest.raises(InputError, match="--resume"):
        run_study(counted, cases, output=out, workers=1)
    df = run_study(counted, cases, output=out, workers=1, resume=True)
    assert sorted(calls) == [3.0, 4.0, 5.0, 8.0, 9.0]
    assert df["case"].tolist() == list(range(10))
    assert df["y [-]"].tolist() == [x ** 3 for x in range(10)]
    assert out.exists() and not store.parts.exists()
    assert pd.read_csv(out)["case"].tolist() == list(range(10))


def test_bad_options_write_nothing(tmp_path):
    cases = make_cases([Grid("x [-]", (1.0, 2.0))])
    for kw in ({"workers": 0}, {"chunk_size": 0}, {"workers": 1.5}):
        with pytest.raises(InputError):
            run_study(cube, cases, output=tmp_path / "r.csv", **kw)
    assert list(tmp_path.iterdir()) == []


def test_resume_refuses_another_study(tmp_path):
    out = tmp_path / "r.parquet"
    cases = make_cases([Grid("x [-]", (1.0, 2.0))])
    ResultStore(out, "abc", 2)
    with pytest.raises(InputError, match="another study"):
        run_study(cube, cases, output=out, resume=True, workers=1)


def test_limit_search_meets_the_limit_within_its_tolerance():
    # y = x^3 reaches 8 at x = 2 exactly
    spec = LimitSearch("x [-]", "y [-]", limit=8.0, low=0.0, high=5.0, tolerance=1e-6)
    row = search_limit(cube, {}, spec)
    x = row["x at limit [-]"]
    assert x <= 2.0 and 2.0 - x <= 1e-6
    assert cube({"x [-]": x})["y [-]"] <= 8.0 < cube({"x [-]": x + 1e-6})["y [-]"]
    assert row["limit runs"] <= 30
    # kept above: the answer is on the other side
    up = search_limit(cube, {}, LimitSearch("x [-]", "y [-]", 8.0, 0.0, 5.0, 1e-6, keep="above"))
    assert 2.0 <= up["x at limit [-]"] <= 2.0 + 1e-6
    with pytest.raises(LimitNotBracketed):
        search_limit(cube, {}, LimitSearch("x [-]", "y [-]", 1000.0, 0.0, 5.0, 1e-3))
    with pytest.raises(ConvergenceError, match="runs"):
        search_limit(cube, {}, LimitSearch("x [-]", "y [-]", 8.0, 0.0, 5.0, 1e-12, max_runs=5))


def test_rank_correlation_orders_inputs_by_influence():
    rng = np.random.default_rng(3)
    df = pd.DataFrame({"a": rng.random(200), "b": rng.random(200), "c": np.ones(200)})
    df["y"] = 10 * df["a"] + df["b"]
    ranking = rank_correlations(df, ["a", "b", "c"], "y")
    assert [r[0] for r in ranking] == ["a", "b"] and ranking[0][1] > 0.9


from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(chunks=st.lists(st.lists(st.integers(0, 19), min_size=1, max_size=6, unique=True), max_size=5),
       half_written=st.booleans())
def test_any_interruption_resumes_to_every_case_once(tmp_path_factory, chunks, half_written):
    # whatever chunks a killed study left (disjoint case ids, any order, maybe a
    # temporary file cut short), resuming runs exactly the missing cases
    from eosfill.study import fingerprint, run_chunk

    out = tmp_path_factory.mktemp("store") / "r.parquet"
    cases = make_cases([Grid("x [-]", tuple(float(i) for i in range(20)))])
    store = ResultStore(out, fingerprint(cases), len(cases))
    seen = set()
    for ids in chunks:
        ids = [i for i in ids if i not in seen]
        seen.update(ids)
        store.write_chunk(run_chunk(cube, None, [(i, cases[i]) for i in ids]))
    if half_written:
        (store.parts / ".tmp-cut-short.parquet").write_bytes(b"PAR1\x00")
    ran = []
    df = run_study(lambda c: ran.append(c["x [-]"]) or cube(c), cases, output=out, workers=1, resume=True)
    assert sorted(ran) == [float(i) for i in range(20) if i not in seen]
    assert df["case"].tolist() == list(range(20))
    assert df["y [-]"].tolist() == [float(i) ** 3 for i in range(20)]
