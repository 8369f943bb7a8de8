"""One state in one kernel call: the compiled phase label, the one-state State, the
compiled single-phase T searches and the scalar path of ``Fluid.state``.

Each fast form is checked against the general form it replaces (the numpy label
rule :func:`phase_kind`, the batch State, the state the search started from); the
physics of those forms is checked against outside references in test_states.py,
test_cubic_reference.py and test_kernels.py.
"""
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import eosfill
from eosfill.errors import InputError, RangeWarning
from eosfill.model import properties as kp
from eosfill.model.phase_label import phase_kind
from eosfill.model.state import GAS, LIQUID, SUPERCRITICAL

LEAN = {"methane": 0.85, "ethane": 0.07, "propane": 0.03, "nitrogen": 0.03, "carbon dioxide": 0.02}
RICH = {"methane": 0.70, "ethane": 0.12, "propane": 0.10, "n-butane": 0.08}
FLUIDS = {f"{name}-{model}": eosfill.Fluid(comp, model=model)
          for name, comp in (("N2", "nitrogen"), ("CO2", "carbon dioxide"), ("propane", "propane"),
                             ("lean", LEAN), ("rich", RICH))
          for model in ("PR", "SRK")}
WHICH = ("stable", "liquid", "vapour")


@settings(max_examples=150, deadline=None)
@given(name=st.sampled_from(sorted(FLUIDS)), Tr=st.floats(0.45, 3.0), lnP=st.floats(np.log(1e3), np.log(4e7)),
       which=st.sampled_from(WHICH))
def test_compiled_label_is_phase_kind(name, Tr, lnP, which):
    """The TP_KIND column is the label rule of phase_kind (numpy, its own roots and Π)."""
    f = FLUIDS[name]
    Tpc, _ = f.pseudo_critical
    T, P = Tr * Tpc, float(np.exp(lnP))
    row = kp.props_TP_rows(f.params.kernel_model, f.kernel_ideal_gas, T, P, f.mole_fractions, which, f.Pc)
    code = int(row[kp.TP_KIND])
    assert code == int(phase_kind(f, T, P, row[kp.TP_V_EOS]))   # sol=None: phase_kind solves the cubic itself
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RangeWarning)   # Cp° beyond its correlation at the far ends
        one = f.single_phase(T, P, which=which)
    assert one.phase_code == code


@pytest.mark.parametrize("comp, T, P, code", [
    ("propane", 250.0, 5e6, LIQUID),      # compressed liquid: propane boils at 231 K at 1 atm (from memory)
    ("nitrogen", 300.0, 1e5, GAS),        # far above N2's critical point at a low pressure
    ("methane", 250.0, 10e6, SUPERCRITICAL),   # methane Tc 190.6 K, Pc 4.60 MPa (from memory)
])
def test_label_cases(comp, T, P, code):
    for model in ("PR", "SRK"):
        f = eosfill.Fluid(comp, model=model)
        assert f.single_phase(T, P).phase_code == code
        assert f.single_phase(np.array([T]), np.array([P])).phase_code[0] == code


ATTRS = ("T", "P", "v", "h", "u", "s", "Z", "g", "rho", "rho_mass", "h_mass", "cp", "cv", "gamma", "speed_of_sound",
         "joule_thomson", "kappa_T", "h_res", "s_res", "u_res", "g_res", "a_res", "vapor_fraction", "molar_mass")


@pytest.mark.parametrize("name, T, P, which", [
    ("lean-PR", 300.0, 5e6, "stable"), ("N2-SRK", 300.0, 20e6, "stable"), ("propane-PR", 250.0, 5e6, "stable"),
    ("rich-SRK", 220.0, 4e6, "liquid"), ("rich-SRK", 220.0, 4e6, "vapour"), ("CO2-PR", 280.0, 3e6, "stable"),
])
@pytest.mark.parametrize("shift", [None, "peneloux"])
def test_one_state_equals_the_batch_state(name, T, P, which, shift):
    """single_phase on floats (one kernel row) and on arrays (the batch path) give the same State."""
    base = FLUIDS[name]
    comp = dict(zip(base.names, base.mole_fractions))
    f = eosfill.Fluid(comp, model=base.model.name, volume_shift=shift)
    one = f.single_phase(T, P, which=which)
    many = f.single_phase(np.array([T, T]), np.array([P, P]), which=which)
    for a in ATTRS:
        assert isinstance(getattr(one, a), float), a
        np.testing.assert_allclose(getattr(one, a), getattr(many, a)[0], rtol=1e-13, atol=1e-12, err_msg=a)
    np.testing.assert_allclose(one.ln_phi, many.ln_phi[0], rtol=1e-12, atol=1e-13)
    np.testing.assert_allclose(one.fugacity, many.fugacity[0], rtol=1e-12)
    np.testing.assert_allclose(one.roots, many.roots[0], rtol=1e-13)
    assert one.phase == many.phase[0] and one.root_choice == many.root_choice[0]
    assert one.status == 0 and one.n_phases == 1 and one.shape == ()
    assert one.x.shape == (f.nc,)
    # the same state through the numpy oracle of the ln φ rule at the state's own root
    np.testing.assert_allclose(one.ln_phi, kp.ln_phi_at_Z(f.params.kernel_model, T, P, one._sol["Z"],
                                                          f.mole_fractions) - f.volume_shift * P / (8.314462618 * T),
                               rtol=1e-12, atol=1e-13)


def test_one_state_inputs_and_warnings():
    f = FLUIDS["N2-PR"]
    for bad in (-1.0, 0.0, float("nan"), float("inf")):
        with pytest.raises(InputError, match="T"):
            f.single_phase(bad, 1e5)
        with pytest.raises(InputError, match="P"):
            f.single_phase(300.0, bad)
    # Cp° of nitrogen is fitted up to some 1000-1500 K (Poling et al. 2001): 5000 K is outside
    with pytest.warns(RangeWarning):
        f.single_phase(5000.0, 1e5)
    with pytest.warns(RangeWarning):
        f.single_phase(np.array([5000.0]), np.array([1e5]))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        f.single_phase(300.0, 1e5)
    # numpy scalars and 0-d arrays take the one-state path too, with the same numbers
    a = f.single_phase(np.float64(300.0), np.array(1e6))
    b = f.single_phase(300, 1e6)
    assert a.h == b.h and a.phase == b.phase


@settings(max_examples=60, deadline=None)
@given(T=st.floats(260.0, 800.0), lnP=st.floats(np.log(1e4), np.log(3e7)), key=st.sampled_from("hsuv"))
def test_T_at_P_search_finds_the_state_again(T, lnP, key):
    """The compiled fixed-P search returns the T a single-phase lean-gas state was made at."""
    from eosfill.states.common import _T_bounds, single_phase_T_at_P

    f = FLUIDS["lean-PR"]
    P = float(np.exp(lnP))
    target = getattr(f.single_phase(T, P), key)
    lo, hi = _T_bounds(f)
    Tx, _, ok = single_phase_T_at_P(f, np.array([P, P]), key, np.array([target, target]), lo, hi)
    assert ok.all()
    np.testing.assert_allclose(Tx, T, rtol=1e-9)


@settings(max_examples=60, deadline=None)
@given(T=st.floats(200.0, 800.0), lnP=st.floats(np.log(1e4), np.log(3e7)), key=st.sampled_from("hsu"))
def test_T_at_v_search_finds_the_state_again(T, lnP, key):
    """The compiled fixed-v search returns the T (and P) a single-phase state was made at."""
    from eosfill.states.common import single_phase_T_at_v

    f = FLUIDS["lean-SRK"]
    P = float(np.exp(lnP))
    s = f.single_phase(T, P)
    # the (T, v) form of u, h, s (the fixed-v search's own) at the state's volume
    tv = kp.props_Tv_rows(f.params.kernel_model, f.kernel_ideal_gas, T, s._v_eos, f.mole_fractions)
    target = tv[kp.TV_NAMES.index(key)]
    Tx, Px, ok = single_phase_T_at_v(f, np.array([s._v_eos]), key, np.array([target]))
    assert ok.all()
    np.testing.assert_allclose(Tx, T, rtol=1e-9)
    np.testing.assert_allclose(Px, P, rtol=1e-8)


def test_searches_say_when_the_target_is_out_of_reach():
    from eosfill.states.common import _T_bounds, single_phase_T_at_P, single_phase_T_at_v

    f = FLUIDS["lean-PR"]
    lo, hi = _T_bounds(f)
    with pytest.raises(InputError, match="h"):
        single_phase_T_at_P(f, np.array([5e6]), "h", np.array([1e9]), lo, hi)
    with pytest.raises(InputError, match="u"):
        single_phase_T_at_v(f, np.array([1e-3]), "u", np.array([1e9]))


@pytest.mark.parametrize("spec", [dict(T=300.0, P=20e6), dict(T=100.0, P=1e5), dict(T=90.0, P=5e6)])
def test_state_of_one_pure_state_equals_the_batch(spec):
    """Fluid.state on floats (the one-state path) and on one-element arrays agree, verified."""
    f = FLUIDS["N2-PR"]
    one = f.state(**spec)
    many = f.state(**{k: np.array([v]) for k, v in spec.items()})
    for k in ("T", "P", "v", "h", "u", "s", "residual", "status", "vapor_fraction"):
        np.testing.assert_allclose(getattr(one, k), getattr(many, k)[0], rtol=1e-12, atol=1e-300, err_msg=k)
    assert one.phase == many.phase[0] and one.status_text == "converged" and one.residual <= 1e-8
    # and back from (u, v), (h, v), (s, v) of that state: the same (T, P)
    for key in "uhs":
        back = f.state(v=one.v, **{key: getattr(one, key)})
        assert back.status == 0 and back.residual <= 1e-8
        np.testing.assert_allclose([back.T, back.P], [one.T, one.P], rtol=1e-7)


def test_state_of_one_state_inside_the_dome_is_two_phase():
    """(u, v) inside the CO2 saturation dome: the one-state path hands over, the split is found.
    CO2 at 280 K: saturated liquid about 883 kg/m3, vapour about 115 kg/m3 (NIST webbook, from memory)."""
    f = FLUIDS["CO2-PR"]
    v = 0.0440098 / 400.0
    st0 = f.state(T=280.0, v=v)
    back = f.state(u=st0.u, v=v)
    assert back.phase == "two-phase" and back.status == 0
    np.testing.assert_allclose(back.T, 280.0, rtol=1e-8)
