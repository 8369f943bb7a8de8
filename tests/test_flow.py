"""Restrictions: real-gas isentropic nozzle, IEC 60534-2-1 valve, kernel, bad input.

Kinds of check (labelled on each test):
* published / outside: ideal-gas closed forms (Anderson, Modern Compressible
  Flow, 3rd ed., 2003, ch. 5; equation numbers from memory), IEC 60534-2-1 as
  implemented in ``fluids.control_valve.size_control_valve_g`` (fluids 1.3.1)
  and the standard's Example 3 as reproduced in its docstring, CoolProp 8.0.0
  reference equation (accuracy envelope, looser tolerance);
* consistency: kernel vs the numpy forms (tests/_oracles.py), throat vs brute-force maximum over
  the equilibrium (P, s) solver.
"""
import math

import numpy as np
import pytest

import eosfill
from eosfill.transient import flow
from _oracles import props_Tv_oracle
from eosfill.constants import R
from eosfill.errors import InputError

MIX = {"methane": 0.85, "ethane": 0.07, "propane": 0.03, "nitrogen": 0.03, "carbon dioxide": 0.02}


# --- consistency: the compiled kernel reproduces the numpy forms (tests/_oracles.py) --
@pytest.mark.parametrize("T", [120.0, 300.0, 900.0, 2500.0])  # 2500 K: outside Cp° ranges (held Cp°)
def test_kernel_matches_props_Tv(T):
    g = eosfill.Fluid(MIX, volume_shift="peneloux")
    k = flow.TVKernel(g)
    for v_eos in (1e-4, 1e-3, 1e-1):
        a = k(T, v_eos)
        b = props_Tv_oracle(g, T, v_eos)
        for key in ("P", "u", "h", "s", "cv"):
            assert a[key] == pytest.approx(float(b[key]), rel=1e-12, abs=1e-9)


# --- outside: ideal-gas limit of the real-gas nozzle --------------------------
@pytest.mark.parametrize("ratio", [0.95, 0.8, 0.6, 0.49, 0.3, 0.05])
def test_argon_nozzle_ideal_gas_limit(ratio):
    """Argon (Cp° = 5/2 R exactly, γ = 5/3) at 100 Pa: the real-gas isentropic
    flux equals the ideal-gas closed form (F4a/F4b; Anderson 2003 ch. 5) to the
    model's non-ideality at that pressure (B P/RT ~ 1e-6)."""
    ar = eosfill.Fluid("argon")
    P0, T0 = 100.0, 300.0
    G, noz = flow.isentropic_mass_flux(ar, T0, P0, ratio * P0)
    Gi = flow.ideal_gas_mass_flux(P0, T0, ratio * P0, 5.0 / 3.0, ar.molar_mass)
    assert G == pytest.approx(Gi, rel=3e-6)
    assert noz.P_star / P0 == pytest.approx((2.0 / (5.0 / 3.0 + 1.0)) ** 2.5, rel=3e-6)   # (F4c)
    assert noz.choked(ratio * P0) == (ratio < 0.4871)


def test_ideal_gas_choked_closed_form_value():
    """(F4b) for air-like γ = 1.4, M = 0.02897 kg/mol, 1 MPa, 300 K: G* = 0.6847 P0/sqrt(R T0/M)
    (critical flow factor 0.6847 for γ = 1.4, standard table value, from memory)."""
    G = flow.ideal_gas_mass_flux(1e6, 300.0, 1e5, 1.4, 0.02897)
    assert G == pytest.approx(0.6847 * 1e6 / math.sqrt(R * 300.0 / 0.02897), rel=2e-4)


# --- consistency: throat = maximum of G over equilibrium (P, s) states --------
def test_throat_is_maximum_over_equilibrium_states():
    g = eosfill.Fluid(MIX)
    G, noz = flow.isentropic_mass_flux(g, 300.0, 20e6, 1e5)
    P = np.linspace(0.35, 0.6, 61) * 20e6
    st = g.state(P=P, s=np.full(P.shape, noz.s0))
    Gg = np.sqrt(2 * noz.M * (noz.h0 - np.asarray(st.h))) / np.asarray(st.v)
    assert Gg.max() <= noz.G_star * (1 + 1e-9)
    assert Gg.max() == pytest.approx(noz.G_star, rel=1e-5)
    assert P[np.argmax(Gg)] == pytest.approx(noz.P_star, rel=0.01)


# --- outside: CoolProp reference equation (accuracy envelope) -----------------
def test_nitrogen_choked_flux_vs_coolprop():
    """Choked flux of nitrogen from 20 MPa, 300 K: maximum of ρ·sqrt(2(h0 - h)) along
    the isentrope of CoolProp's reference equation (Span et al. 2000); PR within 2 %
    (the model's density error at 20 MPa is about 1 %: docs/accuracy.md)."""
    CP = pytest.importorskip("CoolProp.CoolProp")
    n2 = eosfill.Fluid("nitrogen")
    G, noz = flow.isentropic_mass_flux(n2, 300.0, 20e6, 1e5)
    s0 = CP.PropsSI("Smass", "T", 300.0, "P", 20e6, "Nitrogen")
    h0 = CP.PropsSI("Hmass", "T", 300.0, "P", 20e6, "Nitrogen")
    P = np.linspace(0.4, 0.65, 101) * 20e6
    h = np.array([CP.PropsSI("Hmass", "P", p, "Smass", s0, "Nitrogen") for p in P])
    d = np.array([CP.PropsSI("Dmass", "P", p, "Smass", s0, "Nitrogen") for p in P])
    Gref = np.max(d * np.sqrt(2 * (h0 - h)))
    assert G == pytest.approx(Gref, rel=0.02)


# --- outside: IEC 60534-2-1 as implemented in fluids ---------------------------
@pytest.mark.parametrize("P2", [6.5e5, 5e5, 3.1e5, 1.5e5, 1e5])
def test_valve_flow_matches_fluids_iec60534(P2):
    """Our forward flow at the Kv that fluids.size_control_valve_g (IEC 60534-2-1,
    no fittings, turbulent) returns for a standard flow Q gives back Q."""
    cv = pytest.importorskip("fluids.control_valve")
    T, M, gamma, Z, P1, xT = 433.0, 44.01e-3, 1.30, 0.988, 680e3, 0.60
    Q = 38.0 / 36.0   # m3/s at 0 °C and 1 atm (the standard's Example 3 flow)
    Kv = cv.size_control_valve_g(T=T, MW=M * 1e3, mu=1.4665e-4, gamma=gamma, Z=Z, P1=P1, P2=P2, Q=Q, xT=xT)
    rho1 = P1 * M / (Z * R * T)
    W = flow.iec_gas_mass_flow(Kv, xT, P1, P2, rho1, gamma)[0]
    rho_n = 101325.0 * M / (R * 273.15)  # ideal-gas density at the standard's reference state
    assert W == pytest.approx(Q * rho_n, rel=2e-3)  # N6 and N9 forms differ by the rounding of N6, N9


def test_valve_iec_example3_with_fittings():
    """IEC 60534-2-1 Example 3 (inputs as reproduced in the fluids docstring):
    CO2 at 433 K, 680 kPa -> 310 kPa, Q = 3800 m3/h (0 °C, 1 atm), valve d = 50 mm
    between 80 and 100 mm pipes, xT = 0.60: Kv = 72.59.

    The sizing is iterative (Ci/C >= 0.99 stops it, as in fluids, which also
    keeps xT rather than xTP in Y), so the published Kv satisfies the forward
    equation only approximately: at Kv = 72.59 our forward flow with a
    self-consistent Fp and xTP is within 2 % of Q (it is 1.7 % above)."""
    T, M, gamma, Z, P1, P2, xT = 433.0, 44.01e-3, 1.30, 0.988, 680e3, 310e3, 0.60
    Kv = 72.5866454539105
    rho1 = P1 * M / (Z * R * T)
    rho_n = 101325.0 * M / (R * 273.15)
    v = flow.Valve(xT=xT, Kv=Kv, d=0.05, D1=0.08, D2=0.1)
    assert v.mass_flow(P1, P2, rho1, gamma) == pytest.approx(38.0 / 36.0 * rho_n, rel=0.02)
    assert v.Fp < 1.0


def test_valve_choked_limit():
    """(F7) beyond x = Fγ xT the flow no longer rises; Y = 2/3 there (IEC 60534-2-1)."""
    W1, ch1 = flow.iec_gas_mass_flow(10.0, 0.7, 1e6, 1e6 * (1 - 0.7 * 1.3 / 1.4), 10.0, 1.3)
    W2, ch2 = flow.iec_gas_mass_flow(10.0, 0.7, 1e6, 1e4, 10.0, 1.3)
    assert ch1 and ch2 and W1 == pytest.approx(W2, rel=1e-12)
    x = 0.7 * 1.3 / 1.4
    assert W2 == pytest.approx(3.16 / 3600 * 10.0 * (2 / 3) * math.sqrt(x * 1000.0 * 10.0), rel=1e-12)


# --- bad input -------------------------------------------------------------------
@pytest.mark.parametrize("make", [
    lambda: flow.Orifice(-0.001, 0.8),
    lambda: flow.Orifice(0.001, 1.2),
    lambda: flow.Orifice(0.001, 0.0),
    lambda: flow.Valve(xT=0.7, Kv=-1.0),
    lambda: flow.Valve(xT=0.7, Kv=1.0, Cv=1.0),
    lambda: flow.Valve(xT=1.5, Kv=1.0),
    lambda: flow.MassFlow(-0.1),
    lambda: flow.PressureRamp(0.0),
])
def test_bad_restriction_inputs(make):
    with pytest.raises(InputError) as e:
        make()
    assert "allowed" in str(e.value)


def _hem_maximum(fluid, T0, P0, lo, hi, n=801):
    """Brute-force homogeneous-equilibrium maximum of G = sqrt(2 M (h0 - h))/v over
    equilibrium states fluid.state(P, s0) on a fine grid of P in [lo, hi] (a lower bound
    of the true maximum, within the grid spacing)."""
    st = fluid.state(T=T0, P=P0)
    P = np.linspace(lo, hi, n)
    sp = fluid.state(P=P, s=np.full(P.shape, float(st.s)))
    M = float(fluid.mole_fractions @ fluid.molar_masses)
    G = np.sqrt(2 * M * np.maximum(float(st.h) - np.asarray(sp.h), 0.0)) / np.asarray(sp.v)
    return float(G.max()), float(P[np.argmax(G)])


NATURAL_GAS = {"methane": 0.85, "ethane": 0.07, "propane": 0.03, "nitrogen": 0.03, "carbon dioxide": 0.02}


# regression inputs of issue 10 item 6: dense or liquid contents whose single-phase sonic
# point lies on a metastable branch (P* = -6.4 MPa for CO2 at 20 °C, 6 MPa; flux 2.6x off)
@pytest.mark.parametrize("name, T0, P0, window", [
    ("carbon dioxide", 293.15, 6e6, (4.0e6, 4.6e6)),
    ("carbon dioxide", 288.15, 10e6, (4.0e6, 4.5e6)),
    ("propane", 293.15, 2e6, (0.78e6, 0.85e6)),
    (NATURAL_GAS, 200.0, 10e6, (4.0e6, 4.5e6)),
])
def test_dense_contents_choke_on_equilibrium_states(name, T0, P0, window):
    """Consistency: the choked flux of a liquid or dense upstream state is the maximum of
    G over stable (equilibrium) states along the isentrope (HEM, through the dome), to
    5e-4 of a fine brute-force maximum; the throat pressure is positive, in the window."""
    f = eosfill.Fluid(name)
    G, noz = flow.isentropic_mass_flux(f, T0, P0, 1e5)
    G_ref, P_ref = _hem_maximum(f, T0, P0, *window)
    assert noz.two_phase and window[0] < noz.P_star < window[1]
    assert G == pytest.approx(G_ref, rel=5e-4)
    assert noz.P_star == pytest.approx(P_ref, rel=0.01)


def test_mass_flux_does_not_depend_on_call_history():
    """Regression (issue 10 item 6): CO2 at 15 °C, 10 MPa gave 124,983 then 94,950 then
    124,983 kg/(m² s) for the same back pressure.  Now the flux at a back pressure is a
    function of the upstream state and that pressure only: the same from a fresh nozzle."""
    co2 = eosfill.Fluid("carbon dioxide")
    G1, noz = flow.isentropic_mass_flux(co2, 288.15, 10e6, 1e5)
    values = [noz.mass_flux(p) for p in (1e5, 9e6, 6e6, 1e5, 9e6)]
    assert values[0] == values[3] == G1 and values[1] == values[4]
    assert flow.isentropic_mass_flux(co2, 288.15, 10e6, 6e6)[0] == pytest.approx(values[2], rel=1e-12)
    assert 0.0 < values[1] < values[2] < G1


def _omega_method_flux(P0, rho0, rho9):
    """Omega method for a two-phase (here saturated-liquid) inlet, API 520 Part I (2014)
    Annex C / Leung, AIChE J. 32 (1986) 1743: ω = 9 (ρ0/ρ9 - 1) from the density at 90 %
    of the inlet pressure on the isentrope; the critical ratio η_c solves
    η² + (ω² - 2ω)(1 - η)² + 2ω² ln η + 2ω²(1 - η) = 0; G* = η_c sqrt(P0 ρ0 / ω)
    (equation forms as printed in Annex C, equation numbers not recalled)."""
    from scipy.optimize import brentq

    w = 9.0 * (rho0 / rho9 - 1.0)
    eta = brentq(lambda e: e**2 + (w**2 - 2 * w) * (1 - e) ** 2 + 2 * w**2 * math.log(e) + 2 * w**2 * (1 - e),
                 1e-6, 1 - 1e-9)
    return eta * math.sqrt(P0 * rho0 / w), eta


@pytest.mark.parametrize("name, T", [("propane", 293.15), ("carbon dioxide", 250.0), ("ammonia", 293.15)])
def test_flashing_saturated_liquid_vs_omega_method(name, T):
    """Outside: the HEM choked flux of a saturated liquid against the omega method
    (API 520 Part I Annex C; Leung 1986), both from this model's states.  The omega method
    is a two-parameter approximation of HEM for flashing flow; tolerance 2 % (ours,
    common practice, no source; measured 0.4-0.7 %), and η_c within 0.02."""
    from eosfill.equilibrium import solvers as equilibrium

    f = eosfill.Fluid(name)
    sat = equilibrium.saturation_pressure(np.array([T]), f.params)
    st = f.state(T=T, v=float(sat["v_L"][0]) * (1 + 1e-7) - float(f.volume_shift[0]))   # just inside the dome
    assert st.phase == "two-phase" and float(st.vapor_fraction) < 1e-6
    noz = flow.IsentropicNozzle.from_equilibrium(f, float(st.P), float(st.h), float(st.s))
    s9 = f.state(P=0.9 * float(st.P), s=float(st.s))
    G_w, eta_c = _omega_method_flux(float(st.P), float(st.rho_mass), float(s9.rho_mass))
    assert noz.G_star == pytest.approx(G_w, rel=0.02)
    assert noz.P_star / float(st.P) == pytest.approx(eta_c, abs=0.02)


def test_equilibrium_isentrope_ideal_gas_limit():
    """Exact limit: through the tabulated equilibrium path (the one a flashing throat
    uses), argon at 100 Pa chokes at the ideal-gas critical flux
    G* = P0 sqrt(γ M/(R T0)) (2/(γ+1))^((γ+1)/(2(γ-1))) and P*/P0 = (2/(γ+1))^(γ/(γ-1))
    with γ = 5/3 (F4b, F4c; Anderson 2003 ch. 5), to the interpolation error (2e-5)."""
    ar = eosfill.Fluid("argon")
    st = ar.state(T=300.0, P=100.0)
    noz = flow.IsentropicNozzle.from_equilibrium(ar, 100.0, float(st.h), float(st.s))
    g = 5.0 / 3.0
    G_ideal = 100.0 * math.sqrt(g * ar.molar_mass / (R * 300.0)) * (2 / (g + 1)) ** ((g + 1) / (2 * (g - 1)))
    assert noz.G_star == pytest.approx(G_ideal, rel=2e-5)
    assert noz.P_star / 100.0 == pytest.approx((2 / (g + 1)) ** (g / (g - 1)), rel=2e-4)
    assert noz.mass_flux(80.0) == pytest.approx(float(flow.ideal_gas_mass_flux(100.0, 300.0, 80.0, g,
                                                                               ar.molar_mass)), rel=2e-5)


def test_choked_flux_is_a_smooth_function_of_the_upstream_state():
    """Consistency (issue 10 item 7): along the isentrope of a nitrogen 0.2 / methane 0.8
    content (50 MPa, 230 K at the start) the choked flux G*(P0) has smoothly varying slopes,
    also where the throat moves from the single-phase sonic point onto the bubble point
    (about 30 MPa): consecutive slopes dG*/dP0 within 3 % (a throat maximum taken on a grid
    makes them jump)."""
    gas = eosfill.Fluid({"nitrogen": 0.2, "methane": 0.8})
    s0 = float(gas.state(T=230.0, P=50e6).s)
    P = np.linspace(32e6, 26e6, 13)
    st = gas.state(P=P, s=np.full(P.shape, s0))
    k = flow.TVKernel(gas)
    tables = flow.EquilibriumIsentropes(gas)
    nozzles = [flow.IsentropicNozzle(gas, T, v + k.c_shift, kernel=k, isentropes=tables)
               for T, v in zip(np.asarray(st.T), np.asarray(st.v))]
    assert not nozzles[0].two_phase and nozzles[-1].two_phase
    slopes = np.diff([n.G_star for n in nozzles]) / np.diff(P)
    assert np.all(slopes > 0)
    np.testing.assert_allclose(slopes[1:] / slopes[:-1], 1.0, atol=0.03)
