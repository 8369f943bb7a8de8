"""The hand-optimised single-state kernels against their vectorised oracles.

Consistency checks (the vectorised forms are themselves checked against
thermo and CoolProp elsewhere): every number of eosfill.model.scalar must equal
eosfill.states.common.props_Tv / the State to round-off.
"""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import eosfill
from eosfill.equilibrium import solvers as equilibrium
from eosfill.equilibrium.saturation_curve import saturation_curve
from eosfill.model import scalar
from eosfill.states import common as states

NATGAS = {"methane": 0.85, "ethane": 0.07, "propane": 0.04, "nitrogen": 0.02, "carbon dioxide": 0.02}


# T from 30 K reaches below some Cp° fits on purpose (held-constant extension); the
# RangeWarning itself is asserted in test_warnings.py
@pytest.mark.filterwarnings("ignore::eosfill.errors.RangeWarning")
@settings(max_examples=60, deadline=None)
@given(model=st.sampled_from(["PR", "PR78", "SRK"]), mix=st.booleans(),
       T=st.floats(30.0, 1500.0), vr=st.floats(1.2, 1e4), shift=st.booleans())
def test_props_Tv_matches_vectorised(model, mix, T, vr, shift):
    fluid = eosfill.Fluid(NATGAS if mix else "nitrogen", model=model,
                          volume_shift="peneloux" if shift else None)
    k = scalar.FixedComposition(fluid)
    v = vr * k.b  # any volume above the co-volume
    P, u, h, s, cv, dPdT, dPdv = k.props_Tv(T, v)
    ref = states.props_Tv(fluid, np.array([T]), np.array([v + k.shift]))
    for name, val in (("P", P), ("u", u), ("h", h), ("s", s), ("cv", cv)):
        assert val == pytest.approx(float(ref[name][0]), rel=1e-11, abs=1e-8), name
    if P > 0:
        st_ = fluid.single_phase(T, P, which="vapour" if vr > 5 else "stable")
        if abs(st_.v - v) < 1e-9 * v:
            assert dPdT == pytest.approx(st_.dP_dT_v, rel=1e-10)
            assert dPdv == pytest.approx(st_.dP_dv_T, rel=1e-9)


@pytest.mark.parametrize("key", ["u", "h", "s"])
def test_T_at_v_inverts_props(key):
    fluid = eosfill.Fluid(NATGAS)
    k = scalar.FixedComposition(fluid)
    for T, v in ((320.0, 1e-4), (250.0, 5e-4), (600.0, 2e-3)):
        target = dict(zip("Puhs", k.props_Tv(T, v)[:4]))[key]
        assert k.T_at_v(key, target, v, 300.0, 50.0, 2000.0) == pytest.approx(T, rel=1e-12)


def test_saturation_curve_classifies_like_the_exact_solve():
    fluid = eosfill.Fluid("carbon dioxide")
    curve = saturation_curve(fluid)
    T = np.array([230.0, 260.0, 290.0, 300.0])
    sat = equilibrium.saturation_pressure(T, fluid.params)
    for i, t in enumerate(T):
        assert curve.classify(t, 1.05 * sat["v_V"][i]) == "gas-side"
        assert curve.classify(t, 0.95 * sat["v_L"][i]) == "liquid-side"
        assert curve.classify(t, 0.5 * (sat["v_L"][i] + sat["v_V"][i])) == "near"


def test_scalar_state_path_equals_batch_path():
    """Fluid.state with one (u, v) takes the scalar path; with two, the batch path."""
    g = eosfill.Fluid("nitrogen")
    ref = g.state(T=np.array([300.0, 90.0]), P=np.array([20e6, 1e5]))
    one = g.state(u=ref.u[0], v=ref.v[0])
    both = g.state(u=ref.u, v=ref.v)
    assert one.T == pytest.approx(both.T[0], rel=1e-12)
    assert one.P == pytest.approx(both.P[0], rel=1e-11)


@settings(max_examples=150, deadline=None)
@given(model=st.sampled_from(["PR", "PR78", "SRK"]), T=st.floats(90.0, 700.0), logP=st.floats(4.0, 7.7),
       w=st.lists(st.floats(0.0, 1.0), min_size=5, max_size=5).filter(lambda v: sum(v) > 0.1),
       which=st.sampled_from(["stable", "liquid", "vapour"]))
def test_lnphi_one_matches_vectorised(model, T, logP, w, which):
    """ln φ of one state in plain floats equals the vectorised (C10) with the same root."""
    from eosfill.model import cubic

    g = eosfill.Fluid(NATGAS, model=model)
    x = np.array(w) / sum(w)
    P = 10.0**logP
    lp, Z = scalar.lnphi_one(T, P, x.tolist(), g.params, which)
    sol = cubic.solve_volume_from_TP(np.array([T]), np.array([P]), x[None, :], g.params, which=which)
    ref = cubic.ln_phi(np.array([T]), np.array([P]), sol["Z"], x[None, :], g.params)
    assert Z == pytest.approx(float(sol["Z"][0]), rel=1e-11)
    np.testing.assert_allclose(lp, ref[0], rtol=1e-9, atol=1e-10)
