"""Fast forms of the ideal-gas oracle against its per-component form.

Consistency checks: for one fixed composition inside every range the
ideal-gas mixture is one polynomial; it must give the general per-component
result to round-off.  (The compiled kernels are checked against these forms
in test_kernels.py.)
"""
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

import eosfill
from eosfill.model import idealgas

NAMES = ["methane", "ethane", "propane", "nitrogen", "carbon dioxide", "hydrogen", "n-butane"]


@settings(max_examples=40, deadline=None)
@given(w=st.lists(st.floats(0.0, 1.0), min_size=7, max_size=7).filter(lambda v: sum(v) > 0.1),
       T=st.floats(210.0, 990.0), P=st.floats(1e3, 1e8))
def test_fixed_composition_ideal_gas_equals_per_component(w, T, P):
    x = np.array(w) / np.sum(w)
    g = eosfill.Fluid(dict(zip(NAMES, x)), normalise=True)
    xf = g.mole_fractions
    a, lo, hi = g.cp_coeffs, g.cp_Tmin, g.cp_Tmax
    Ts = np.array([T])
    np.testing.assert_allclose(idealgas.mixture_h0(Ts, xf, a, lo, hi),
                               idealgas.R * (xf * idealgas.h0_R_ext(Ts, a, lo, hi)).sum(-1),
                               rtol=1e-12, atol=1e-9)
    xlnx = sum(v * np.log(v) for v in xf if v > 0)
    s_ref = idealgas.R * ((xf * idealgas.s0T_R_ext(Ts, a, lo, hi)).sum(-1) - np.log(P / idealgas.P0) - xlnx)
    np.testing.assert_allclose(idealgas.mixture_s0(Ts, P, xf, a, lo, hi), s_ref, rtol=1e-12, atol=1e-10)
    np.testing.assert_allclose(idealgas.mixture_cp0(Ts, xf, a, lo, hi),
                               idealgas.R * (xf * idealgas.cp0_R_ext(Ts, a, lo, hi)).sum(-1), rtol=1e-12)


def test_cp0_extension_is_continuous_and_constant_outside():
    """Outside the fitted range Cp° is held at the end value (common practice,
    no source); H° and S° are continuous at the range ends."""
    g = eosfill.Fluid("n-butane")  # Poling range 200-1000 K
    a, lo, hi = g.cp_coeffs, g.cp_Tmin, g.cp_Tmax
    eps = 1e-7
    for Tend in (lo[0], hi[0]):
        T = np.array([Tend - eps, Tend + eps])
        h = idealgas.h0_R_ext(T, a, lo, hi)[:, 0]
        s_ = idealgas.s0T_R_ext(T, a, lo, hi)[:, 0]
        assert abs(h[1] - h[0]) < 1e-4 and abs(s_[1] - s_[0]) < 1e-8
    cp_far = idealgas.cp0_R_ext(np.array([100.0, 150.0, 1500.0, 3000.0]), a, lo, hi)[:, 0]
    cp_end = idealgas.cp0_R(np.array([lo[0], hi[0]]), a)[:, 0]
    np.testing.assert_allclose(cp_far, [cp_end[0], cp_end[0], cp_end[1], cp_end[1]], rtol=1e-14)
    # inside the range the extension is the polynomial itself
    T = np.linspace(lo[0], hi[0], 7)
    np.testing.assert_allclose(idealgas.h0_R_ext(T, a, lo, hi), idealgas.int_cp0_R(T, a), rtol=1e-12, atol=1e-9)
