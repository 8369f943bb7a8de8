"""Fills to a pressure, a settled pressure or the supply pressure as vectorised batches
(eosfill.vessel.batch.fill_to_stop, eosfill.vessel.fill_rows, eosfill.vessel.roots).

What is checked here:
* each batch row equals the single fill (eosfill.vessel.fill) of the same case exactly
  (==, not approx), over drawn cases (hypothesis): mixtures and pure gases, empty
  vessels, gas already in the vessel (by pressure, by mass, of another composition);
* a row that fails (a target above the supply pressure, a settled pressure the initial
  content already passes) carries the exception the single fill raises, word for word;
  a settled target the supply cannot reach ends at the supply pressure, flagged, in both;
* the end state meets its target within the stated tolerance, and the balances close,
  recomputed with the numpy forms of the cubic and the Cp° polynomial (tests/_oracles.py,
  independent of the compiled kernels the solvers run);
* the root search itself: rows solved together equal rows solved alone; a row that
  cannot be bracketed fails alone.
The single fill's physics is checked against thermo, CoolProp and closed forms in
tests/test_vessel.py.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

import eosfill
from _oracles import props_Tv_oracle, single_phase_oracle
from eosfill.constants import R
from eosfill.vessel.balances import Stream, Vessel, common_fluid, fill
from eosfill.vessel.batch import fill_to_stop
from eosfill.vessel.fill_rows import TARGET_RTOL
from eosfill.vessel.roots import increasing_roots

pytestmark = pytest.mark.filterwarnings("ignore::eosfill.RangeWarning")

NG = {"methane": 0.9, "ethane": 0.06, "nitrogen": 0.04}  # demo composition of our own
T_SETTLE = 288.15
ROOT_STOPS = ("target_pressure", "target_settled_pressure", "supply_pressure")


def same(a, b):
    return a == b or (isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b))


def run_both(supply_fluid, initial_fluid, cases, stop):
    """Batch rows and single fills of the same cases: [(V, T_in, P_in, target, T0, P0, m0), ...]."""
    fluid, zs = common_fluid(*([supply_fluid] + ([initial_fluid] if initial_fluid is not None else [])))
    cols = np.array(cases, dtype=float).T
    V, T_in, P_in, target, T0, P0, m0 = cols
    res = fill_to_stop(fluid, zs[0], V, T_in, P_in, stop, target, T_SETTLE, T0=T0, P0=P0, mass0=m0,
                       z0=zs[1] if initial_fluid is not None else None)
    # the streams as a scenario gives them: compositions of one fluid holding every component
    supply_fluid = fluid.with_composition(zs[0])
    initial_fluid = fluid.with_composition(zs[1]) if initial_fluid is not None else supply_fluid
    singles = []
    for V_, Ti, Pi, tg, T0_, P0_, m0_ in cases:
        ini = None
        if not math.isnan(T0_):
            ini = Stream(initial_fluid, T0_, P=None if math.isnan(P0_) else P0_,
                         mass=None if math.isnan(m0_) else m0_)
        try:
            singles.append(fill(Vessel(V_), Stream(supply_fluid, Ti, P=Pi), ini, stop=stop,
                                target=None if stop == "supply_pressure" else tg, settled_temperature=T_SETTLE))
        except eosfill.EosfillError as exc:
            singles.append(exc)
    return res, singles


def assert_rows_equal(res, singles):
    for k, r in enumerate(singles):
        if isinstance(r, Exception):
            e = res["error"][k]
            assert e is not None, (k, r, res["ok"][k])
            assert type(e) is type(r) and str(e) == str(r)
            continue
        assert res["error"][k] is None
        if not res["ok"][k]:
            continue  # left to the single path (a two-phase end, a solid flag): nothing to compare
        pairs = [("T", r.final.T), ("P", r.final.P), ("n", r.final.n), ("mass", r.final.mass),
                 ("vapor_fraction", r.final.vapor_fraction), ("P_settled", r.settled.P),
                 ("energy_closure", r.energy_closure), ("mass_closure", r.mass_closure)]
        for key, value in pairs:
            assert same(float(res[key][k]), value), (k, key, value, res[key][k])
        assert res["phase"][k] == r.final.phase
        assert (res["stop"][k], bool(res["stop_met"][k])) == (r.stop, r.stop_met)


case = st.tuples(st.floats(0.01, 0.2), st.floats(250.0, 330.0), st.floats(100e5, 400e5),
                 st.floats(0.05, 1.0), st.floats(250.0, 320.0), st.floats(0.0, 0.3))


# no shrinking: a failing case is printed as drawn (each example solves ~10 fills)
@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow],
          phases=(Phase.explicit, Phase.reuse, Phase.generate))
@given(name=st.sampled_from(["NG", "nitrogen", "methane"]), stop=st.sampled_from(ROOT_STOPS),
       initial=st.sampled_from(["empty", "pressure", "mass", "other"]), rows=st.lists(case, min_size=2, max_size=4))
def test_batch_rows_equal_single_fills_exactly(name, stop, initial, rows):
    supply = eosfill.Fluid(NG if name == "NG" else name)
    other = None
    if initial == "other":  # gas of another composition already in the vessel (demo values)
        other = eosfill.Fluid({"nitrogen": 1.0} if name != "nitrogen" else {"nitrogen": 0.5, "methane": 0.5})
    cases = []
    for V, T_in, P_in, tf, T0, f0 in rows:
        P0 = f0 * P_in
        if initial == "empty" or P0 < 1e5:
            cases.append((V, T_in, P_in, 0.0, math.nan, math.nan, math.nan))
            P0 = 0.0
        elif initial == "mass":
            m0 = V * eosfill.Fluid(NG if name == "NG" else name).state(T=T0, P=P0).rho_mass
            cases.append((V, T_in, P_in, 0.0, T0, math.nan, m0))
        else:
            cases.append((V, T_in, P_in, 0.0, T0, P0, math.nan))
        # targets between the start and 1.1 x the supply (some above it: unreachable)
        goal = P0 + tf * 1.1 * (P_in - P0)
        cases[-1] = cases[-1][:3] + (goal if stop == "target_pressure" else 0.75 * goal,) + cases[-1][4:]
    res, singles = run_both(supply, other, cases, stop)
    assert_rows_equal(res, singles)
    assert sum(res["ok"]) + sum(e is not None for e in res["error"]) >= 1


def test_unreachable_targets_fail_or_stop_as_the_single_fill():
    # nitrogen (demo values): 50 L at 20 bar, supply 200 bar at 15 °C
    N2 = eosfill.Fluid("nitrogen")
    base = (0.05, 288.15, 200e5)
    cases = [base + (150e5, 288.15, 20e5, math.nan),   # reachable
             base + (250e5, 288.15, 20e5, math.nan),   # above the supply pressure: an input error
             base + (10e5, 288.15, 20e5, math.nan)]    # below the initial pressure: an input error
    res, singles = run_both(N2, None, cases, "target_pressure")
    assert_rows_equal(res, singles)
    assert res["ok"][0] and isinstance(singles[1], eosfill.InputError) and isinstance(singles[2], eosfill.InputError)
    assert "at most the supply pressure" in str(res["error"][1])
    settled = [base + (190e5, 288.15, 20e5, math.nan),  # the supply cannot reach it once cooled: stops at 200 bar
               base + (100e5, 288.15, 20e5, math.nan),  # reachable
               base + (15e5, 288.15, 20e5, math.nan)]   # the initial content is already above it
    res, singles = run_both(N2, None, settled, "target_settled_pressure")
    assert_rows_equal(res, singles)
    assert (res["stop"][0], bool(res["stop_met"][0])) == ("supply_pressure", False)
    assert res["P"][0] == pytest.approx(200e5, rel=TARGET_RTOL)
    assert "cannot be met" in res["unmet_flag"][0]
    assert isinstance(res["error"][2], eosfill.InputError) and "settled pressure" in str(res["error"][2])


@pytest.mark.parametrize("name", ["NG", "nitrogen"])
def test_batch_ends_meet_their_targets_and_close_against_the_numpy_forms(name):
    """The end state meets its target (TARGET_RTOL) and (V1)-(V3) close, both recomputed from
    the numpy forms of the cubic (C1-C11) and Poling's Cp° polynomial (tests/_oracles.py)."""
    g = eosfill.Fluid(NG if name == "NG" else name)
    rng = np.random.default_rng(13)
    n = 12
    V = rng.uniform(0.02, 0.15, n)
    T_in, P_in = rng.uniform(260.0, 320.0, n), rng.uniform(150e5, 350e5, n)
    T0, P0 = rng.uniform(260.0, 310.0, n), rng.uniform(5e5, 40e5, n)
    T0[:3] = P0[:3] = np.nan  # empty vessels
    P0_ = np.nan_to_num(P0)
    for stop, target in (("target_pressure", P0_ + rng.uniform(0.3, 0.95, n) * (P_in - P0_)),
                         ("target_settled_pressure", P0_ + rng.uniform(0.3, 0.6, n) * (P_in - P0_))):
        res = fill_to_stop(g, g.mole_fractions, V, T_in, P_in, stop, target, T_SETTLE, T0=T0, P0=P0)
        assert res["ok"].all() and res["stop_met"].all()
        z = g.mole_fractions
        c = z @ g.volume_shift
        n_f = res["n"]
        v_f = V / n_f
        end = props_Tv_oracle(g, res["T"], v_f + c)
        settled = props_Tv_oracle(g, np.full(n, T_SETTLE), v_f + c)
        P_goal = end["P"] if stop == "target_pressure" else settled["P"]
        # the root search's test is 1e-13 on the kernels' pressure; the numpy forms agree to round-off
        assert np.all(np.abs(P_goal / target - 1.0) <= TARGET_RTOL)
        assert np.all(np.abs(res["P"] / end["P"] - 1.0) < 1e-11)
        sup = single_phase_oracle(g, T_in, P_in)
        u0, n0 = np.zeros(n), np.zeros(n)
        full = np.isfinite(P0)
        ini = single_phase_oracle(g, T0[full], P0[full])
        n0[full] = V[full] / ini["v"]
        u0[full] = ini["u"]
        # (V2): n_f u_f - n_0 u_0 - (n_f - n_0) h_in = 0 (adiabatic, rigid), relative to n_f R T_f
        e = (n_f * end["u"] - n0 * u0 - (n_f - n0) * sup["h"]) / (n_f * R * res["T"])
        assert np.all(np.abs(e) < 1e-9), e
        # (V1): one composition, so the mass is M n_f and the reported mass_change follows
        M = z @ g.molar_masses
        assert np.allclose(res["mass"], n_f * M, rtol=1e-14, atol=0)
        assert np.all(np.abs(res["energy_closure"]) < 1e-9) and np.all(np.abs(res["mass_closure"]) < 1e-12)


def test_root_search_rows_are_independent_and_fail_alone():
    # f(x) = (x^3 - c) / c rises with x; its root c^(1/3) (exact); the third row cannot be bracketed below its cap
    c = np.array([2.0, 30.0, 1e6, 5.0])
    cap = np.array([10.0, 10.0, 10.0, 10.0])

    def f(rows, x):
        return (x ** 3 - c[rows]) / c[rows], {}

    x, fx, errors = increasing_roots(f, np.full(4, 0.1), np.full(4, 1.0), cap, "test")
    assert set(errors) == {2} and isinstance(errors[2], eosfill.ConvergenceError)
    assert "not reached" in str(errors[2]) and math.isnan(x[2])
    assert np.allclose(x[[0, 1, 3]], np.cbrt(c[[0, 1, 3]]), rtol=1e-13, atol=0)
    for i in (0, 1, 3):
        xi, fi, ei = increasing_roots(lambda rows, at: f(np.array([i])[rows], at), np.full(1, 0.1),
                                      np.full(1, 1.0), cap[:1], "test")
        assert not ei and xi[0] == x[i] and fi[0] == fx[i]  # bit for bit, alone or with the others
