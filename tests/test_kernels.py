"""The compiled one-state kernels against their readable numpy oracles.

Consistency checks (the numpy forms of eosfill.model.cubic / idealgas are
themselves checked against thermo and CoolProp elsewhere, and the kernels
against thermo at 1e-8 through the State in test_cubic_reference.py): every
number of eosfill.model.properties / cubic_kernels / idealgas_kernels must
equal the oracle to round-off; a batch (serial or parallel) must equal the
one-state call exactly (the same compiled code).
"""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import eosfill
from _oracles import props_Tv_oracle, single_phase_oracle
from eosfill.equilibrium import solvers as equilibrium
from eosfill.equilibrium.saturation_curve import saturation_curve
from eosfill.model import cubic, idealgas
from eosfill.model import properties as kp

NATGAS = {"methane": 0.85, "ethane": 0.07, "propane": 0.04, "nitrogen": 0.02, "carbon dioxide": 0.02}
NAMES = ["methane", "ethane", "propane", "nitrogen", "carbon dioxide", "hydrogen", "n-butane"]


def _one_Tv(fluid, T, v_eos):
    row = kp.props_Tv_entry(T, v_eos, np.array(fluid.mole_fractions), fluid.params.kernel_model,
                            fluid.kernel_ideal_gas)
    return dict(zip(kp.TV_NAMES, row))


# T from 30 K reaches below some Cp° fits on purpose (held-constant extension); the
# RangeWarning itself is asserted in test_warnings.py
@pytest.mark.filterwarnings("ignore::eosfill.errors.RangeWarning")
@settings(max_examples=60, deadline=None)
@given(model=st.sampled_from(["PR", "PR78", "SRK"]), mix=st.booleans(),
       T=st.floats(30.0, 1500.0), vr=st.floats(1.2, 1e4), shift=st.booleans())
def test_props_Tv_matches_vectorised(model, mix, T, vr, shift):
    fluid = eosfill.Fluid(NATGAS if mix else "nitrogen", model=model,
                          volume_shift="peneloux" if shift else None)
    b = float(fluid.mole_fractions @ fluid.params.b)
    cbar = float(fluid.mole_fractions @ fluid.volume_shift)
    v = vr * b  # any volume above the co-volume
    k = _one_Tv(fluid, T, v + cbar)
    ref = props_Tv_oracle(fluid, np.array([T]), np.array([v + cbar]))
    for name in ("P", "u", "h", "s", "cv"):
        assert k[name] == pytest.approx(float(ref[name][0]), rel=1e-11, abs=1e-8), name
    P = k["P"]
    if P > 0:
        st_ = fluid.single_phase(T, P, which="vapour" if vr > 5 else "stable")
        if abs(st_.v - v) < 1e-9 * v:
            assert k["dPdT"] == pytest.approx(st_.dP_dT_v, rel=1e-10)
            assert k["dPdv"] == pytest.approx(st_.dP_dv_T, rel=1e-9)


@settings(max_examples=80, deadline=None)
@given(model=st.sampled_from(["PR", "PR78", "SRK"]), T=st.floats(60.0, 1200.0), logP=st.floats(3.0, 8.0),
       w=st.lists(st.floats(0.0, 1.0), min_size=5, max_size=5).filter(lambda v: sum(v) > 0.1),
       which=st.sampled_from(["stable", "liquid", "vapour"]), shift=st.booleans())
def test_props_TP_matches_vectorised(model, T, logP, w, which, shift):
    """The (T, P) kernel (root, departures, ideal gas, derivatives, Π) equals the numpy forms."""
    g = eosfill.Fluid(NATGAS, model=model, volume_shift="peneloux" if shift else None)
    x = np.array(w) / sum(w)
    P = 10.0**logP
    ref = single_phase_oracle(g, np.array([T]), np.array([P]), x[None, :], which)
    rows = kp.props_TP_rows(g.params.kernel_model, g.kernel_ideal_gas, np.array([T]), np.array([P]),
                            x[None, :], which)[0]
    assert rows[kp.TP_CHOICE] == ref["choice"][0]
    np.testing.assert_allclose(rows[kp.TP_R0:kp.TP_R2 + 1], ref["roots"][0], rtol=1e-11, atol=1e-14)
    for col, key in ((kp.TP_Z, "Z"), (kp.TP_V, "v"), (kp.TP_A, "a"), (kp.TP_A_T, "a_T"), (kp.TP_A_TT, "a_TT"),
                     (kp.TP_B, "b"), (kp.TP_CV, "cv"), (kp.TP_DPDT, "dPdT"), (kp.TP_PI, "Pi")):
        assert rows[col] == pytest.approx(float(ref[key][0]), rel=1e-10), key
    for col, key in ((kp.TP_H, "h"), (kp.TP_U, "u"), (kp.TP_S, "s"), (kp.TP_H_RES, "h_res"), (kp.TP_S_RES, "s_res")):
        assert rows[col] == pytest.approx(float(ref[key][0]), rel=1e-10, abs=1e-8), key
    # dP/dv and cp lose digits near the spinodal (dP/dv -> 0): relative to the terms of dP/dv
    scale = 8.314462618 * T / (rows[kp.TP_V_EOS] - rows[kp.TP_B]) ** 2
    assert abs(rows[kp.TP_DPDV] - ref["dPdv"][0]) <= 1e-10 * scale


@settings(max_examples=40, deadline=None)
@given(w=st.lists(st.floats(0.01, 1.0), min_size=7, max_size=7),
       model=st.sampled_from(["PR", "PR78", "SRK"]),
       T=st.floats(80.0, 900.0))
def test_mixing_kernel_equals_general_form(w, model, T):
    """(C4) and the partial sums of (C10), compiled, equal the numpy forms."""
    from eosfill.model import cubic_kernels as ck

    x = np.array(w) / np.sum(w)
    g = eosfill.Fluid(dict(zip(NAMES, x)), model=model, normalise=True)
    xf = np.array(g.mole_fractions)
    m = g.params.kernel_model
    q, dq, d2q, sx = (np.empty(7) for _ in range(4))
    fast = ck.mixing_sums(T, xf, m, q, dq, d2q)
    general = cubic.mixture_a(np.array([T]), xf[None, :], g.params)
    for f_, g_ in zip(fast, general):
        assert f_ == pytest.approx(float(g_[0]), rel=1e-12)
    assert fast[3] == pytest.approx(float(xf @ g.params.b), rel=1e-14)
    ck.partial_a_sums(xf, m, q, sx)
    np.testing.assert_allclose(sx, cubic.mixture_a_partial(np.array([T]), xf[None, :], g.params)[0], rtol=1e-12)


@settings(max_examples=40, deadline=None)
@given(w=st.lists(st.floats(0.0, 1.0), min_size=7, max_size=7).filter(lambda v: sum(v) > 0.1),
       T=st.floats(20.0, 3000.0))
def test_ideal_gas_kernel_equals_per_component(w, T):
    """(I1)-(I3) with the held-Cp° extension, compiled, equal the numpy forms (inside and outside the ranges)."""
    from eosfill.model.idealgas_kernels import mixture_ideal

    x = np.array(w) / np.sum(w)
    g = eosfill.Fluid(dict(zip(NAMES, x)), normalise=True)
    xf = np.array(g.mole_fractions)
    a, lo, hi = g.cp_coeffs, g.cp_Tmin, g.cp_Tmax
    Ts = np.array([T])
    cp0, h0, s0T = mixture_ideal(T, xf, g.kernel_ideal_gas)
    R = idealgas.R
    assert cp0 == pytest.approx(float(R * (xf * idealgas.cp0_R_ext(Ts, a, lo, hi)).sum(-1)[0]), rel=1e-12)
    assert h0 == pytest.approx(float(R * (xf * idealgas.h0_R_ext(Ts, a, lo, hi)).sum(-1)[0]), rel=1e-12, abs=1e-9)
    xlnx = sum(v * np.log(v) for v in xf if v > 0)
    s_ref = R * ((xf * idealgas.s0T_R_ext(Ts, a, lo, hi)).sum(-1)[0] - xlnx)
    assert s0T == pytest.approx(float(s_ref), rel=1e-12, abs=1e-10)


@pytest.mark.parametrize("key", ["u", "h", "s"])
def test_T_at_v_inverts_props(key):
    fluid = eosfill.Fluid(NATGAS)
    x = np.array(fluid.mole_fractions)
    m, ig = fluid.params.kernel_model, fluid.kernel_ideal_gas
    for T, v in ((320.0, 1e-4), (250.0, 5e-4), (600.0, 2e-3)):
        target = _one_Tv(fluid, T, v)[key]
        Tk, _, status, _ = kp.T_at_v_entry(kp.KEY_NAMES[key], target, v, 300.0, 50.0, 2000.0, x, m, ig, 1e-12, 100)
        assert status == eosfill.errors.CONVERGED
        assert Tk == pytest.approx(T, rel=1e-12)


def test_batches_run_the_one_state_code():
    """Serial and parallel batches give exactly the one-state numbers (the same compiled functions)."""
    g = eosfill.Fluid(NATGAS, volume_shift="peneloux")
    rng = np.random.default_rng(7)
    n = 2000  # above the parallel threshold
    T = rng.uniform(150.0, 600.0, n)
    P = 10.0 ** rng.uniform(4.0, 7.5, n)
    m, ig = g.params.kernel_model, g.kernel_ideal_gas
    rows = kp.props_TP_rows(m, ig, T, P, g.mole_fractions)
    for k in (0, 1, 999, n - 1):
        one = kp.props_TP_rows(m, ig, T[k], P[k], g.mole_fractions)
        np.testing.assert_array_equal(rows[k], one)
    tv = kp.props_Tv_rows(m, ig, T, rows[:, kp.TP_V_EOS], g.mole_fractions)
    np.testing.assert_allclose(tv[:, kp.TV_P], P, rtol=1e-9)
    np.testing.assert_array_equal(tv[5], kp.props_Tv_entry(T[5], rows[5, kp.TP_V_EOS], np.array(g.mole_fractions), m, ig))
    lp, Z = kp.ln_phi_TP(m, T, P, g.mole_fractions)
    # Z of the ln φ kernel and of the property row come from two compiled functions whose
    # inlining (and fused multiply-adds) may differ: equal to the last unit or two
    np.testing.assert_allclose(Z, rows[:, kp.TP_Z], rtol=4e-15, atol=0.0)
    np.testing.assert_array_equal(lp[3], kp.ln_phi_TP(m, T[3:4], P[3:4], g.mole_fractions)[0][0])
    lz = kp.ln_phi_at_Z(m, T, P, Z, g.mole_fractions)              # parallel
    np.testing.assert_array_equal(lz[7], kp.ln_phi_at_Z(m, T[7:8], P[7:8], Z[7:8], g.mole_fractions)[0])
    np.testing.assert_allclose(lz, lp, rtol=1e-13, atol=1e-13)      # same root, same (C10)


def test_soave_kind_code_is_alpha_modules():
    from eosfill.model import alpha

    assert cubic.ALPHA_SOAVE == alpha.SOAVE
    g = eosfill.Fluid(NATGAS)
    np.testing.assert_array_equal(g.params.alpha_params[:, 0], g.params.kappa)


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
    """ln φ of one state, compiled, equals the numpy (C10) with the same root."""
    g = eosfill.Fluid(NATGAS, model=model)
    x = np.array(w) / sum(w)
    P = 10.0**logP
    lp, sol1 = equilibrium.lnphi_root(np.array([T]), np.array([P]), x[None, :], g.params, which)
    sol = cubic.solve_volume_from_TP(np.array([T]), np.array([P]), x[None, :], g.params, which=which)
    ref = cubic.ln_phi(np.array([T]), np.array([P]), sol["Z"], x[None, :], g.params)
    assert float(sol1["Z"][0]) == pytest.approx(float(sol["Z"][0]), rel=1e-11)
    np.testing.assert_allclose(lp[0], ref[0], rtol=1e-9, atol=1e-10)


def test_unwritable_numba_cache_folder_falls_back_with_a_warning(tmp_path):
    """numba refuses cache=True when no cache folder is writable; the model layer
    then points it at a per-user temporary folder and says so (common practice, no source)."""
    import os
    import subprocess
    import sys

    code = ("import warnings, os\n"
            "with warnings.catch_warnings(record=True) as w:\n"
            "    warnings.simplefilter('always')\n"
            "    import eosfill.model\n"
            "print(os.environ['NUMBA_CACHE_DIR']); print(any('numba cache' in str(x.message) for x in w))\n"
            "import sys; print('numba' in sys.modules)\n")
    blocker = tmp_path / "a-file"
    blocker.write_text("")
    bad = str(blocker / "cache")   # under a file: no folder can be made there
    env = dict(os.environ, NUMBA_CACHE_DIR=bad)
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True).stdout.split()
    assert out[0] != bad and os.path.isdir(out[0])
    assert out[1] == "True" and out[2] == "False"   # warned; numba not imported by the check


def test_alpha_is_a_swappable_part_of_the_model():
    """Another α kind is data in MixtureParameters: the kernels' a(T), a_T, a_TT of a pure
    fluid are a_c times that α function's α, α', α'' (eosfill.model.alpha, itself checked
    against thermo in test_alpha.py), and the (T, P) state follows P(T, v) of (C1)."""
    from eosfill.model import alpha
    from eosfill.model import cubic_kernels as ck

    g = eosfill.Fluid("methane")
    p0 = g.params
    ap = alpha.TC_PR_ALPHA.parameters(p0.Tc, p0.Pc, p0.omega)
    p = cubic.MixtureParameters.build(p0.model, p0.Tc, p0.Pc, p0.omega, p0.kij,
                                      alpha_kind=alpha.TWU91, alpha_params=ap)
    m = p.kernel_model
    x = np.ones(1)
    for T in (120.0, 190.0, 400.0):
        a, a_T, a_TT, _ = ck.mixing_sums(T, x, m, np.empty(1), np.empty(1), np.empty(1))
        al, dal, d2al = alpha.alpha_T(alpha.TWU91, T, p.Tc[0], ap[0, 0], ap[0, 1], ap[0, 2])
        np.testing.assert_allclose([a, a_T, a_TT], p.ac[0] * np.array([al, dal, d2al]), rtol=1e-13)
        soave = ck.mixing_sums(T, x, p0.kernel_model, np.empty(1), np.empty(1), np.empty(1))[0]
        assert abs(a / soave - 1.0) > 1e-6   # a different α really is used
        row = kp.props_TP_rows(m, g.kernel_ideal_gas, T, 5e6, x)
        P = ck.pressure(T, row[kp.TP_V_EOS], a, row[kp.TP_B], p.delta1, p.delta2)
        assert P == pytest.approx(5e6, rel=1e-10)
