"""The readable numpy forms composed into whole single-phase states (test-only).

The production code runs the compiled kernels (eosfill.model.properties);
these compositions of eosfill.model.cubic and eosfill.model.idealgas (the
numpy forms of C1-C11 and the Poling polynomial) are what the kernels are
checked against, to round-off.  They are the code the kernels replaced
(states.props_Tv and mixture._single_phase_state as they were), kept here.
"""
import numpy as np

from eosfill.constants import P0, R
from eosfill.model import cubic, idealgas


def props_Tv_oracle(fluid, T, v_eos, x=None):
    """P, u, h, s, v, cv, b at (T, v_eos) from the numpy forms."""
    p = fluid.params
    x = fluid.mole_fractions if x is None else x
    T = np.asarray(T, dtype=float)
    a, a_T, a_TT = cubic.mixture_a(T, x, p)
    b = cubic.mixture_b(x, p)
    d1, d2 = p.model.delta1, p.model.delta2
    with np.errstate(invalid="ignore", divide="ignore"):
        P = cubic.pressure(T, v_eos, a, b, p.model)
        Lv = np.log((v_eos + d1 * b) / (v_eos + d2 * b)) / (d1 - d2)
        uR = (T * a_T - a) / b * Lv
        h0 = idealgas.mixture_h0(T, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax)
        u = h0 - R * T + uR
        s0T = idealgas.mixture_s0(T, P0, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax)
        s = s0T - R * np.log(R * T / ((v_eos - b) * P0)) + a_T / b * Lv
        cv = idealgas.mixture_cp0(T, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax) - R + T * a_TT / b * Lv
        dPdT = cubic.dP_dT_v(v_eos, a_T, b, p.model)
        dPdv = cubic.dP_dv_T(T, v_eos, a, b, p.model)
    c = np.asarray(x) @ fluid.volume_shift
    v = v_eos - c
    return dict(P=P, u=u, h=u + P * v, s=s, v=v, cv=cv, b=b, dPdT=dPdT, dPdv=dPdv)


def single_phase_oracle(fluid, T, P, x=None, which="stable"):
    """Single-phase state at (T, P) from the numpy forms: Z, v, h, u, s, cv, cp, Π, roots, choice."""
    p = fluid.params
    model = p.model
    x = fluid.mole_fractions if x is None else np.asarray(x, dtype=float)
    T = np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    sol = cubic.solve_volume_from_TP(T, P, x, p, which=which)
    Z, a, a_T, a_TT, b, B, v_eos = sol["Z"], sol["a"], sol["a_T"], sol["a_TT"], sol["b"], sol["B"], sol["v"]
    h0 = idealgas.mixture_h0(T, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax)
    s0 = idealgas.mixture_s0(T, P, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax)
    hR = cubic.residual_h(T, Z, a, a_T, b, B, model)
    sR = cubic.residual_s(Z, a_T, b, B, model)
    c = x @ fluid.volume_shift
    dPdT = cubic.dP_dT_v(v_eos, a_T, b, model)
    dPdv = cubic.dP_dv_T(T, v_eos, a, b, model)
    cv = (idealgas.mixture_cp0(T, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax) - R
          + cubic.residual_cv(T, Z, a_TT, b, B, model))
    return dict(Z=Z, v=v_eos - c, v_eos=v_eos, h=h0 + hR - P * c, u=h0 + hR - P * v_eos, s=s0 + sR,
                h_res=hR, s_res=sR, cv=cv, cp=cv - T * dPdT**2 / dPdv, dPdT=dPdT, dPdv=dPdv,
                Pi=cubic.phase_identification_parameter(T, v_eos, a, a_T, b, model),
                roots=sol["roots"], choice=sol["choice"], a=a, a_T=a_T, a_TT=a_TT, b=b)
