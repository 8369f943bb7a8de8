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


# --------------------------------------------------------------------------
# equilibrium inner loops: the vectorised numpy forms the kernels replaced
# (eosfill.equilibrium.kernels), as they were
# --------------------------------------------------------------------------
def rachford_rice_oracle(z, K, tol=1e-13, maxiter=100):
    """Vapour fraction β solving (E2); vectorised over leading dimensions.

    Returns β clipped to [0, 1] (0: RR(0) ≤ 0, all liquid; 1: RR(1) ≥ 0,
    all vapour) and the unclipped solution inside the Whitson-Michelsen
    bracket (may lie outside [0, 1], a negative flash).
    """
    z = np.asarray(z, dtype=float)
    K = np.asarray(K, dtype=float)
    Km1 = K - 1.0
    Kmax = K.max(axis=-1)
    Kmin = K.min(axis=-1)
    with np.errstate(divide="ignore"):
        lo = np.where(Kmax > 1.0, 1.0 / (1.0 - Kmax), -np.inf)
        hi = np.where(Kmin < 1.0, 1.0 / (1.0 - Kmin), np.inf)
    lo = np.maximum(lo, -1e3)
    hi = np.minimum(hi, 1e3)
    # open bracket: shrink by a hair so the poles are not touched
    span = hi - lo
    lo = lo + 1e-12 * span
    hi = hi - 1e-12 * span
    beta = np.where((lo < 0.5) & (hi > 0.5), 0.5, 0.5 * (lo + hi))
    # every K ≥ 1 (or ≤ 1): (E2) has no root, f keeps one sign; all vapour (liquid)
    none_up = Kmin >= 1.0
    none_down = Kmax <= 1.0
    beta = np.where(none_up, hi, np.where(none_down, lo, beta))
    done = none_up | none_down
    for _ in range(maxiter):
        den = 1.0 + beta[..., None] * Km1
        f = (z * Km1 / den).sum(axis=-1)
        df = -(z * Km1**2 / den**2).sum(axis=-1)
        # f is decreasing in β: keep the bracket
        lo = np.where(f > 0.0, beta, lo)
        hi = np.where(f < 0.0, beta, hi)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = f / df
        new = beta - step
        bad = ~np.isfinite(new) | (new < lo) | (new > hi)
        new = np.where(bad, 0.5 * (lo + hi), new)
        small = np.abs(new - beta) <= tol * np.maximum(1.0, np.abs(beta))
        beta = np.where(done | (f == 0.0), beta, new)
        done |= small | (f == 0.0)
        if np.all(done):
            break
    return np.clip(beta, 0.0, 1.0), beta


def stability_test_oracle(T, P, z, p, tol=1e-10, maxiter=300, lnW_start=None, return_trials=False):
    """Michelsen (1982) tangent-plane stability test, vectorised numpy form (trials stacked)."""
    from eosfill.equilibrium.solvers import lnphi_root, wilson_lnK

    T = np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    z = np.asarray(z, dtype=float)
    n, nc = z.shape
    lnphi_z, _ = lnphi_root(T, P, z, p)
    with np.errstate(divide="ignore"):
        d = np.where(z > 0, np.log(np.where(z > 0, z, 1.0)) + lnphi_z, -np.inf)
    lnK = wilson_lnK(T, P, p.Tc, p.Pc, p.omega)
    # trials stacked: [vapour-like, liquid-like]
    TT = np.concatenate([T, T])
    PP = np.concatenate([P, P])
    dd = np.concatenate([d, d])
    zz = np.concatenate([z, z])
    lnW = np.concatenate([np.log(np.where(z > 0, z, 1.0)) + lnK, np.log(np.where(z > 0, z, 1.0)) - lnK])
    if lnW_start is not None:
        # rows of NaN (or trials that had collapsed onto the feed, which would
        # stay there) start from Wilson's estimates instead
        start = np.array(lnW_start, dtype=float)
        with np.errstate(invalid="ignore", over="ignore"):
            W0 = np.exp(np.where(zz > 0, start, -np.inf))
            w0 = W0 / W0.sum(axis=-1, keepdims=True)
        usable = np.all(np.isfinite(np.where(zz > 0, start, 0.0)), axis=-1) & \
            (np.max(np.abs(w0 - zz), axis=-1) > 1e-4)
        lnW = np.where(usable[:, None], start, lnW)
    lnW = np.where(zz > 0, lnW, -np.inf)
    active = np.ones(2 * n, dtype=bool)
    tm = np.zeros(2 * n)
    trivial = np.zeros(2 * n, dtype=bool)
    for _ in range(maxiter):
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        W = np.exp(lnW[idx])
        w = W / W.sum(axis=-1, keepdims=True)
        lnphi_w, _ = lnphi_root(TT[idx], PP[idx], w, p)
        new = np.where(zz[idx] > 0, dd[idx] - lnphi_w, -np.inf)
        with np.errstate(invalid="ignore"):  # absent components: -inf - -inf, masked out
            diff = np.where(zz[idx] > 0, new - lnW[idx], 0.0)
        lnW[idx] = new
        conv = np.max(np.abs(diff), axis=-1) < tol
        # trivial solution: w → z
        wz = np.max(np.abs(w - zz[idx]), axis=-1) < 1e-8
        # tm* of a stationary point = 1 - ΣW; early exit once clearly negative
        Wsum = np.exp(new).sum(axis=-1)
        tm[idx] = 1.0 - Wsum
        neg = tm[idx] < -1e-8
        trivial[idx] = wz
        stop = conv | wz | (neg & (np.max(np.abs(diff), axis=-1) < 1e-4))
        active[idx[stop]] = False
        # once one trial of a state has shown instability, its twin can stop
        found = np.zeros(n, dtype=bool)
        clear = idx[neg & (np.max(np.abs(diff), axis=-1) < 1e-4)]
        found[clear % n] = True
        active &= ~np.concatenate([found, found])
    tm = np.where(trivial, 0.0, tm)
    tmv, tml = tm[:n], tm[n:]
    unstable = np.minimum(tmv, tml) < -1e-10
    use_v = tmv <= tml
    Wv = np.exp(lnW[:n])
    Wl = np.exp(lnW[n:])
    with np.errstate(divide="ignore", invalid="ignore"):
        lnK_v = np.log(Wv / Wv.sum(-1, keepdims=True)) - np.log(z)
        lnK_l = np.log(z) - np.log(Wl / Wl.sum(-1, keepdims=True))
    lnK0 = np.where(use_v[:, None], lnK_v, lnK_l)
    lnK0 = np.where(np.isfinite(lnK0), lnK0, lnK)
    if return_trials:
        return unstable, lnK0, np.minimum(tmv, tml), lnW
    return unstable, lnK0, np.minimum(tmv, tml)
