"""The compiled equilibrium inner loops against the numpy forms they replaced.

Consistency checks (the flash and saturation built on them are checked
against thermo in test_states.py): Rachford-Rice (E2) and the tangent-plane
stability test (E3, Michelsen 1982) compiled must give the numpy forms'
answers (tests/_oracles.py); Rachford-Rice's β must zero (E2).
"""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import eosfill
from _oracles import rachford_rice_oracle, stability_test_oracle
from eosfill.equilibrium import solvers as eq

NATGAS = {"methane": 0.80, "ethane": 0.07, "propane": 0.05, "n-butane": 0.03, "nitrogen": 0.03,
          "carbon dioxide": 0.02}


@settings(max_examples=200, deadline=None)
@given(z=st.lists(st.floats(0.0, 1.0), min_size=2, max_size=6).filter(lambda v: sum(v) > 0.1),
       lnK=st.lists(st.floats(-5.0, 5.0), min_size=6, max_size=6))
def test_rachford_rice_kernel_equals_numpy_form(z, lnK):
    z = np.array(z) / sum(z)
    K = np.exp(np.array(lnK[:z.size]))
    b_clip, b = eq.rachford_rice(np.vstack([z, z]), np.vstack([K, K]))
    r_clip, r = rachford_rice_oracle(np.vstack([z, z]), np.vstack([K, K]))
    assert b[0] == pytest.approx(r[0], rel=1e-10, abs=1e-12)
    assert b_clip[1] == pytest.approx(r_clip[1], rel=1e-10, abs=1e-12)
    if z.min() > 1e-3 and K.min() < 1.0 < K.max() and abs(b[0]) < 900.0:  # a root inside the (limited) bracket
        rr = np.sum(z * (K - 1.0) / (1.0 + b[0] * (K - 1.0)))
        assert abs(rr) < 1e-9 * np.sum(z * np.abs(K - 1.0) / np.abs(1.0 + b[0] * (K - 1.0)))


def test_rachford_rice_shapes():
    z = np.array([0.5, 0.3, 0.2])
    K = np.array([3.0, 0.8, 0.1])
    b0, b = eq.rachford_rice(z, K)
    assert np.shape(b) == () and 0.0 < float(b0) < 1.0
    bb, _ = eq.rachford_rice(np.broadcast_to(z, (3, 4, 3)), K)
    assert bb.shape == (3, 4) and np.all(bb == float(b0))


@settings(max_examples=40, deadline=None)
@given(T=st.floats(180.0, 320.0), logP=st.floats(5.0, 7.3), model=st.sampled_from(["PR", "SRK"]))
def test_stability_kernel_equals_numpy_form(T, logP, model):
    g = eosfill.Fluid(NATGAS, model=model)
    z = np.array(g.mole_fractions)[None, :]
    Ta, Pa = np.array([T]), np.array([10.0**logP])
    us, lnK0, tm, lnW = eq.stability_test(Ta, Pa, z, g.params, return_trials=True)
    ru, rlnK0, rtm, rlnW = stability_test_oracle(Ta, Pa, z, g.params, return_trials=True)
    assert us[0] == ru[0]
    assert tm[0] == pytest.approx(rtm[0], rel=1e-6, abs=1e-9)
    np.testing.assert_allclose(lnK0, rlnK0, rtol=1e-6, atol=1e-8)
    # warm start from the trials gives the same verdict as the cold start
    assert eq.stability_test(Ta, Pa, z, g.params, lnW_start=lnW)[0][0] == ru[0]


def test_stability_batch_equals_one_state():
    g = eosfill.Fluid(NATGAS)
    T = np.linspace(190.0, 300.0, 100)
    P = np.full(100, 4e6)
    z = np.broadcast_to(g.mole_fractions, (100, g.nc))
    us, lnK0, tm = eq.stability_test(T, P, z, g.params)   # parallel loop
    assert us.any() and not us.all()
    for k in (0, 37, 99):
        one = eq.stability_test(T[k:k + 1], P[k:k + 1], z[k:k + 1], g.params)
        assert one[0][0] == us[k] and one[2][0] == tm[k]
        np.testing.assert_array_equal(one[1][0], lnK0[k])
