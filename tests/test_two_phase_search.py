"""The compiled two-phase searches (eosfill.equilibrium.two_phase_search).

Consistency checks (round trips: a state at (T, P) from the flash, its
h, s, u or v as the specification, the search must return the same T, P;
the states' agreement with thermo is checked in test_states.py).
"""
import numpy as np
import pytest

import eosfill
from eosfill.constants import R
from eosfill.equilibrium import two_phase_search as ts
from eosfill.states.mixture import _kernel_args

RICH = {"methane": 0.70, "ethane": 0.10, "propane": 0.10, "nitrogen": 0.05, "carbon dioxide": 0.05}


@pytest.fixture(scope="module")
def rich():
    return eosfill.Fluid(RICH, model="PR")


@pytest.mark.parametrize("key", ["h", "s", "u", "v"])
def test_fixed_P_round_trip(rich, key):
    st = rich.state(T=np.array([200.0, 220.0, 240.0]), P=np.full(3, 4e6))
    assert np.all(st.phase == "two-phase")
    target = np.asarray(getattr(st, key))
    scale = {"h": R * 300.0, "u": R * 300.0, "s": R, "v": 1.0}[key]
    z, m, ig, Pc, omega = _kernel_args(rich)
    kc = ts.KEY_CODES[key]
    T = np.empty(3)
    status = np.empty(3, dtype=np.int64)
    ts.fixed_P_batch(np.full(3, 4e6), kc, target, scale, np.full(3, 180.0), 50.0, 1000.0, z, m, ig, Pc, omega,
                     1e-12, 1e-12, 200, T, status)
    assert list(status) == [0, 0, 0]
    np.testing.assert_allclose(T, [200.0, 220.0, 240.0], rtol=1e-9)
    for k in range(3):   # the batch runs the one-state function
        T1, s1, _ = ts.fixed_P_one(4e6, kc, float(target[k]), scale, 180.0, 50.0, 1000.0, z, m, ig, Pc, omega,
                                   1e-12, 1e-12, 200)
        assert T1 == T[k] and s1 == 0


@pytest.mark.parametrize("key", ["u", "h", "s"])
def test_fixed_v_round_trip(rich, key):
    st = rich.state(T=np.array([200.0, 230.0]), P=np.array([3e6, 5e6]))
    assert np.all(st.phase == "two-phase")
    target = np.asarray(getattr(st, key))
    z, m, ig, Pc, omega = _kernel_args(rich)
    scale = R if key == "s" else R * 300.0
    T = np.empty(2)
    P = np.empty(2)
    status = np.empty(2, dtype=np.int64)
    ts.fixed_v_batch(np.asarray(st.v), ts.KEY_CODES[key], target, scale, np.full(2, 160.0), np.full(2, 1e6), z, m,
                     ig, Pc, omega, 1e-11, 60, T, P, status)
    assert list(status) == [0, 0]
    np.testing.assert_allclose(T, [200.0, 230.0], rtol=1e-8)
    np.testing.assert_allclose(P, [3e6, 5e6], rtol=1e-7)


def test_state_solvers_two_phase_round_trip(rich):
    """Through Fluid.state: (P, h) and (u, v) in the two-phase region return
    the (T, P) they were made from, verified and converged."""
    st = rich.state(T=220.0, P=4e6)
    a = rich.state(P=4e6, h=st.h)
    b = rich.state(u=st.u, v=st.v)
    assert a.status == 0 and b.status == 0
    assert a.T == pytest.approx(220.0, rel=1e-9) and a.phase == "two-phase"
    assert b.T == pytest.approx(220.0, rel=1e-8) and b.P == pytest.approx(4e6, rel=1e-7)
    assert a.vapor_fraction == pytest.approx(float(st.vapor_fraction), abs=1e-8)
