"""State solvers: one entry per specification pair, single or two phase.

``Fluid.state(**pair)`` dispatches here.  Supported pairs:

======  ==========================================================
pair    method
======  ==========================================================
T, P    pure: lowest-Gibbs root; mixture: stability test + flash
T, v    pure: saturation at T decides the split; mixture: explicit
        P(T, v), stability test, then a TV flash (1-D in ln P)
P, h    1-D in T at fixed P (below; also P-s, P-u, P-v)
u, v    1-D in T at fixed v (below; also h-v, s-v)
T, s    1-D in ln P at fixed T
======  ==========================================================

Pure fluids (vectorised over a batch): every state is fixed by (T, v)
once the saturation curve is known, because a pure two-phase state at T
holds liquid and vapour at P_sat(T) and splits v by the lever rule.  So
*fixed-v* pairs are a 1-D search in T where each trial (T, v) is single
phase or split on the saturation curve, and *fixed-P* pairs compare the
specification with its saturated-liquid and saturated-vapour values at
T_sat(P) (lever rule in between), else search T on the liquid or vapour
side.  Each property used (u, h, s at fixed v; h, s, u, v at fixed P) is
monotone in T, so a bracketing search (Illinois regula falsi; Dowell &
Jarratt, BIT 11 (1971) 168-174) converges wherever the phase count
changes.

Mixtures ("nested T-P search on top of the TP flash"; Michelsen &
Mollerup 2007, ch. 11): a single-phase solution is found first (1-D in T,
explicit in (T, v) or with the lowest-Gibbs root at fixed P); the
tangent-plane stability test (Michelsen 1982) is applied at that state;
if it is unstable, the two-phase state is found by a 1-D bracketing
search on T (fixed P) or a 2-D damped Newton on (T, ln P) with TP flashes
inside (fixed v), falling back to nested 1-D searches.

Every loop is bounded; a failure raises :class:`ConvergenceError` with
the last iterate.  Specifications with no physical solution raise
:class:`InputError`.
"""
from __future__ import annotations

import numpy as np

from . import cubic, equilibrium, idealgas
from .constants import P0, R
from .errors import ConvergenceError, InputError
from .fluid import GAS, LIQUID, SUPERCRITICAL, TWO_PHASE, Fluid, State, _as_float_array, _out

_KEYS = ("T", "P", "v", "h", "u", "s")
_ILLINOIS_MAXITER = 200


# --------------------------------------------------------------------------
# explicit single-phase properties at (T, v)
# --------------------------------------------------------------------------
def props_Tv(fluid: Fluid, T, v_eos, x=None):
    """Single-phase P, u, h, s, cv at (T, v) with the cubic; no root needed.

    u(T, v) = H°(T) - R T + U^R(T, v)                       (C9)
    s(T, v) = S°(T, P0) - R ln(R T/((v - b) P0)) - R Σ x ln x
              + a_T/b · L                                    (C8, with P eliminated)
    h = u + P v ;  values with the fluid's volume shift applied to v and h.
    """
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
        # S°(T, P0) includes -R Σ x ln x
        s0T = idealgas.mixture_s0(T, P0, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax)
        s = s0T - R * np.log(R * T / ((v_eos - b) * P0)) + a_T / b * Lv
        cv = idealgas.mixture_cp0(T, x, fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax) - R + T * a_TT / b * Lv
    c = np.asarray(x) @ fluid.volume_shift
    v = v_eos - c
    h = u + P * v
    return dict(P=P, u=u, h=h, s=s, v=v, cv=cv, b=b)


def props_TP(fluid: Fluid, T, P, x=None, which="stable"):
    """Single-phase v, u, h, s at (T, P) with the chosen root of the cubic."""
    p = fluid.params
    x = fluid.mole_fractions if x is None else x
    sol = cubic.solve_volume_from_TP(T, P, x, p, which=which)
    out = props_Tv(fluid, T, sol["v"], x)
    out["P"] = np.asarray(P, dtype=float) * np.ones_like(out["u"])
    c = np.asarray(x) @ fluid.volume_shift
    out["h"] = out["u"] + out["P"] * out["v"]
    out["v_eos"] = sol["v"]
    del c
    return out


# --------------------------------------------------------------------------
# vectorised bracketing search
# --------------------------------------------------------------------------
def illinois(f, lo, hi, flo, fhi, xtol, ftol, maxiter=_ILLINOIS_MAXITER):
    """Vectorised Illinois regula falsi for increasing f with f(lo) ≤ 0 ≤ f(hi).

    Returns x, f(x) and a converged flag per element.  Stopping test:
    |f| ≤ ftol or bracket width ≤ xtol (each per element).
    """
    x = np.where(np.abs(flo) < np.abs(fhi), lo, hi)
    fx = np.where(np.abs(flo) < np.abs(fhi), flo, fhi)
    side = np.zeros(lo.shape, dtype=np.int8)
    done = (np.abs(flo) <= ftol) | (np.abs(fhi) <= ftol)
    for _ in range(maxiter):
        with np.errstate(invalid="ignore", divide="ignore"):
            new = (lo * fhi - hi * flo) / (fhi - flo)
        bad = ~np.isfinite(new) | (new <= np.minimum(lo, hi)) | (new >= np.maximum(lo, hi))
        new = np.where(bad, 0.5 * (lo + hi), new)
        new = np.where(done, x, new)
        fnew = f(new)
        fnew = np.where(done, fx, fnew)
        x, fx = new, fnew
        neg = fnew < 0
        # Illinois: halve the retained end's f when the same end is kept twice
        flo_n = np.where(neg, fnew, np.where(side == 1, flo * 0.5, flo))
        fhi_n = np.where(~neg, fnew, np.where(side == -1, fhi * 0.5, fhi))
        lo = np.where(neg, new, lo)
        hi = np.where(~neg, new, hi)
        side = np.where(neg, -1, 1).astype(np.int8)
        flo, fhi = np.where(done, flo, flo_n), np.where(done, fhi, fhi_n)
        done = done | (np.abs(fnew) <= ftol) | (np.abs(hi - lo) <= xtol)
        if np.all(done):
            break
    return x, fx, done


# --------------------------------------------------------------------------
# pure fluids
# --------------------------------------------------------------------------
def _pure_Tv(fluid: Fluid, T, v):
    """Pure-fluid state at (T, v): single phase or split on the saturation curve."""
    p = fluid.params
    c = fluid.volume_shift[0]
    v_eos = v + c
    Tc = p.Tc[0]
    out = props_Tv(fluid, T, v_eos)
    beta = np.ones_like(T)
    two = np.zeros(T.shape, dtype=bool)
    sub = T < Tc * (1.0 - 1e-9)
    vL = np.full(T.shape, np.nan)
    vV = np.full(T.shape, np.nan)
    Psat = np.full(T.shape, np.nan)
    if np.any(sub):
        sat = equilibrium.saturation_pressure(T[sub], p, raise_on_fail=False)
        ok = sat["status"] == equilibrium.CONVERGED
        vL[sub] = np.where(ok, sat["v_L"], np.nan)
        vV[sub] = np.where(ok, sat["v_V"], np.nan)
        Psat[sub] = sat["P"]
        two = sub & (v_eos > vL) & (v_eos < vV)
    if np.any(two):
        Tt = T[two]
        L = props_Tv(fluid, Tt, vL[two])
        V = props_Tv(fluid, Tt, vV[two])
        bt = (v_eos[two] - vL[two]) / (vV[two] - vL[two])
        beta[two] = bt
        for k in ("u", "h", "s"):
            out[k][two] = bt * V[k] + (1.0 - bt) * L[k]
        out["P"][two] = Psat[two]
        out["h"][two] = out["u"][two] + Psat[two] * v[two]
    out.update(two=two, beta=beta, Psat=Psat, vL=vL, vV=vV)
    return out


def _T_bounds(fluid: Fluid):
    """Search range in T [K] for 1-D solves: well below the lowest critical
    temperature to twice the highest Cp° validity limit."""
    lo = max(1.0, 0.4 * float(np.min(fluid.Tc)))
    hi = max(2.0 * float(np.max(fluid.cp_Tmax)), 3.0 * float(np.max(fluid.Tc)))
    hi = min(hi, 5.0e3)
    return lo, hi


def _solve_fixed_v(fluid: Fluid, v, key, target):
    """Pure fluid: find T with prop(T, v) = target, prop in (u, h, s)."""
    Tlo, Thi = _T_bounds(fluid)
    b = float(fluid.params.b[0]) - fluid.volume_shift[0]
    if np.any(v <= b):
        raise InputError("v", _out(v), f"v > b = {b:.6g} m3/mol (the model's co-volume)")
    lo = np.full(v.shape, Tlo)
    hi = np.full(v.shape, Thi)
    scale = R * 300.0 if key != "s" else R

    def f(T):
        return (_pure_Tv(fluid, T, v)[key] - target) / scale

    flo, fhi = f(lo), f(hi)
    below = flo > 0
    above = fhi < 0
    if np.any(below | above):
        i = np.flatnonzero(np.atleast_1d(below | above))[0]
        which = "below the lowest" if np.atleast_1d(below)[i] else "above the highest"
        raise InputError(key, _out(np.atleast_1d(target)[i]),
                         f"a value the model reaches at v = {np.atleast_1d(v)[i]:.6g} m3/mol "
                         f"between T = {Tlo:.4g} and {Thi:.4g} K ({which})")
    T, fx, ok = illinois(f, lo, hi, flo, fhi, xtol=1e-14 * Thi, ftol=1e-13)
    _raise_if(ok, f"{key}-v solve", dict(T=T, v=v), fx)
    st = _pure_Tv(fluid, T, v)
    return _assemble_pure(fluid, T, st)


def _pure_fixed_v_scalar(fluid: Fluid, v, key, target):
    """One pure-fluid state at fixed v by the scalar kernel (:mod:`eosfill.scalar`).

    Valid when the single-phase solution lies clearly outside the
    saturation dome (then it is the stable state: for a pure fluid every
    (T, v) outside the dome is stable); otherwise returns None and the
    vectorised path decides."""
    from . import scalar

    b = float(fluid.params.b[0]) - fluid.volume_shift[0]
    if not v > b:
        return None
    k = scalar.fixed_composition(fluid)
    Tlo, Thi = _T_bounds(fluid)
    try:
        T = k.T_at_v(key, target, v, T_guess=max(float(fluid.Tc[0]), 300.0), T_lo=Tlo, T_hi=Thi)
    except ConvergenceError:
        return None
    if T <= Tlo * (1 + 1e-9) or T >= Thi * (1 - 1e-9):
        return None
    P = k.props_Tv(T, v)[0]
    if not P > 0.0:
        return None
    if T < float(fluid.Tc[0]) and scalar.saturation_curve(fluid).classify(T, v) not in ("gas-side", "liquid-side"):
        return None
    st = fluid.single_phase(np.array([T]), np.array([P]))
    if abs(st._v[0] - v) > 1e-9 * v:  # lowest-Gibbs root is not this volume: let the general path decide
        return None
    return st


def _assemble_pure(fluid: Fluid, T, st):
    """Build the State of a pure fluid from (T, P, split) arrays."""
    P = st["P"]
    two = st["two"]
    if not np.any(two):
        out = fluid.single_phase(T, np.where(P > 0, P, 1.0))
        # use (T, v) values directly when P came from the cubic at that v
        return out if np.all(P > 0) else _negative_pressure(P)
    Psafe = np.where(P > 0, P, np.nan)
    if np.any(~np.isfinite(Psafe)):
        return _negative_pressure(P)
    which_l = np.where(two, 1, 0)
    which_v = np.where(two, 2, 0)
    stable = fluid.single_phase(T, P)
    liq = fluid.single_phase(T, P, which=which_l)
    vap = fluid.single_phase(T, P, which=which_v)
    return _compose(fluid, stable, liq, vap, two, st["beta"])


def _negative_pressure(P):
    i = np.flatnonzero(np.atleast_1d(P) <= 0)[0]
    raise InputError("state", _out(np.atleast_1d(P)[i]),
                     "a specification whose single-phase solution has P > 0 "
                     "(the cubic gives a negative pressure there)")


def _compose(fluid, stable: State, liq: State, vap: State, two, beta):
    """Overall state from its phases; single-phase rows keep ``stable``."""
    st = State(fluid)
    b = np.where(two, beta, stable._beta)
    vals = {}
    for k in ("_v", "_h", "_u", "_s"):
        mix = b * getattr(vap, k) + (1.0 - b) * getattr(liq, k)
        vals[k] = np.where(two, mix, getattr(stable, k))
    st._set(T=stable._T, P=stable._P, v=vals["_v"], h=vals["_h"], u=vals["_u"], s=vals["_s"],
            beta=b, x=np.broadcast_to(fluid.mole_fractions, np.shape(stable._T) + (fluid.nc,)),
            sol=stable._sol, h_res=stable._h_res, s_res=stable._s_res)
    st._phase_code = np.where(two, TWO_PHASE, stable._phase_code).astype(np.int8)
    if np.any(two):
        # single-phase rows: both sub-states hold that phase
        liq_rows = _merge(fluid, stable, liq, two)
        vap_rows = _merge(fluid, stable, vap, two)
        st.liquid, st.vapour = liq_rows, vap_rows
    return st


def _merge(fluid, stable: State, phase: State, two):
    out = State(fluid)
    sol = {k: np.where(two[..., None] if np.ndim(val) > np.ndim(two) else two, val, stable._sol[k])
           for k, val in phase._sol.items()}
    x = np.where(two[..., None], phase._x, stable._x)
    out._set(T=stable._T, P=stable._P,
             v=np.where(two, phase._v, stable._v), h=np.where(two, phase._h, stable._h),
             u=np.where(two, phase._u, stable._u), s=np.where(two, phase._s, stable._s),
             beta=None, x=x, sol=sol, h_res=np.where(two, phase._h_res, stable._h_res),
             s_res=np.where(two, phase._s_res, stable._s_res))
    out._phase_code = np.where(two, phase._phase_code, stable._phase_code).astype(np.int8)
    out._beta = np.where(out._phase_code == LIQUID, 0.0, 1.0)
    return out


def _pure_fixed_P(fluid: Fluid, P, key, target):
    """Pure fluid: state at P with prop = target, prop in (h, s, u, v)."""
    p = fluid.params
    Tc, Pc = p.Tc[0], p.Pc[0]
    Tlo, Thi = _T_bounds(fluid)
    n = P.shape
    T = np.full(n, np.nan)
    beta = np.ones(n)
    two = np.zeros(n, dtype=bool)
    side_hi = np.full(n, Thi)
    side_lo = np.full(n, Tlo)
    sub = P < Pc * (1.0 - 1e-9)
    if np.any(sub):
        Ts, st_ok = equilibrium.saturation_temperature(P[sub], p, raise_on_fail=False)
        L = props_TP(fluid, Ts, P[sub], which="liquid")
        V = props_TP(fluid, Ts, P[sub], which="vapour")
        tg = target[sub]
        lo_k, hi_k = L[key], V[key]
        inside = (st_ok == equilibrium.CONVERGED) & (tg >= lo_k) & (tg <= hi_k)
        idx = np.flatnonzero(sub)
        two[idx[inside]] = True
        T[idx[inside]] = Ts[inside]
        with np.errstate(invalid="ignore", divide="ignore"):
            beta[idx[inside]] = ((tg - lo_k) / (hi_k - lo_k))[inside]
        liquid_side = tg < lo_k
        side_hi[idx[liquid_side]] = Ts[liquid_side]
        side_lo[idx[~liquid_side & ~inside]] = Ts[~liquid_side & ~inside]
    rest = ~two
    if np.any(rest):
        Pr, tr = P[rest], target[rest]
        scale = {"h": R * 300.0, "u": R * 300.0, "s": R, "v": 1.0}[key]

        def f(Tt):
            val = props_TP(fluid, Tt, Pr)[key]
            return (np.log(val / tr) if key == "v" else (val - tr) / scale)

        lo, hi = side_lo[rest], side_hi[rest]
        flo, fhi = f(lo), f(hi)
        bad = (flo > 0) | (fhi < 0)
        if np.any(bad):
            i = np.flatnonzero(bad)[0]
            raise InputError(key, float(tr[i]),
                             f"a value the model reaches at P = {Pr[i]:.6g} Pa between "
                             f"T = {lo[i]:.4g} and {hi[i]:.4g} K")
        Tr, fx, ok = illinois(f, lo, hi, flo, fhi, xtol=1e-14 * Thi, ftol=1e-13)
        _raise_if(ok, f"P-{key} solve", dict(P=Pr, T=Tr), fx)
        T[rest] = Tr
    return _pure_split_state(fluid, T, P, two, beta)


def _pure_split_state(fluid: Fluid, T, P, two, beta):
    """State of a pure fluid at (T, P): single phase where ``two`` is False,
    saturated liquid and vapour (smallest and largest roots) mixed by β where True."""
    stable = fluid.single_phase(T, P)
    if not np.any(two):
        return stable
    liq = fluid.single_phase(T, P, which=np.where(two, 1, 0))
    vap = fluid.single_phase(T, P, which=np.where(two, 2, 0))
    return _compose(fluid, stable, liq, vap, two, beta)


def _pure_TP(fluid: Fluid, T, P):
    return fluid.single_phase(T, P)


def _pure_fixed_T(fluid: Fluid, T, key, target):
    """Pure fluid: state at T with s = target (1-D in ln P; s falls with P)."""
    if key != "s":
        raise InputError("state()", ("T", key), "T with P, v or s")
    p = fluid.params
    Tc = p.Tc[0]
    n = T.shape
    sub = T < Tc * (1.0 - 1e-9)
    two = np.zeros(n, dtype=bool)
    beta = np.ones(n)
    Pout = np.full(n, np.nan)
    lnPlo = np.full(n, np.log(1e-3))
    lnPhi = np.full(n, np.log(1e10))
    if np.any(sub):
        sat = equilibrium.saturation_pressure(T[sub], p, raise_on_fail=False)
        L = props_Tv(fluid, T[sub], sat["v_L"])
        V = props_Tv(fluid, T[sub], sat["v_V"])
        tg = target[sub]
        inside = (tg <= V["s"]) & (tg >= L["s"])
        idx = np.flatnonzero(sub)
        two[idx[inside]] = True
        Pout[idx[inside]] = sat["P"][inside]
        beta[idx[inside]] = ((tg - L["s"]) / (V["s"] - L["s"]))[inside]
        gas_side = tg > V["s"]
        lnPhi[idx[gas_side]] = np.log(sat["P"][gas_side])
        lnPlo[idx[~gas_side & ~inside]] = np.log(sat["P"][~gas_side & ~inside])
    rest = ~two
    if np.any(rest):
        Tr, tr = T[rest], target[rest]

        def f(lnP):  # increasing in ln P
            return -(props_TP(fluid, Tr, np.exp(lnP))["s"] - tr) / R

        lo, hi = lnPlo[rest], lnPhi[rest]
        flo, fhi = f(lo), f(hi)
        if np.any((flo > 0) | (fhi < 0)):
            i = np.flatnonzero((flo > 0) | (fhi < 0))[0]
            raise InputError("s", float(tr[i]), f"a value the model reaches at T = {Tr[i]:.6g} K "
                             "between 1e-3 and 1e10 Pa")
        x, fx, ok = illinois(f, lo, hi, flo, fhi, xtol=1e-13, ftol=1e-13)
        _raise_if(ok, "T-s solve", dict(T=Tr, P=np.exp(x)), fx)
        Pout[rest] = np.exp(x)
    return _pure_split_state(fluid, T, Pout, two, beta)


def _raise_if(ok, solver, last, resid):
    if np.all(ok):
        return
    i = np.flatnonzero(np.atleast_1d(~ok))[0]
    it = {k: float(np.atleast_1d(v)[i]) for k, v in last.items()}
    raise ConvergenceError(solver, f"not converged (element {i})", it, float(np.atleast_1d(resid)[i]))


# --------------------------------------------------------------------------
# mixtures
# --------------------------------------------------------------------------
def _mixture_from_flash(fluid: Fluid, T, P, fl):
    """State of a mixture from a TP flash result (arrays of shape (n,))."""
    two = fl["two_phase"]
    stable = fluid.single_phase(T, P)
    if not np.any(two):
        return stable
    z = np.broadcast_to(fluid.mole_fractions, fl["x"].shape)
    x = np.where(two[:, None], fl["x"], z)
    y = np.where(two[:, None], fl["y"], z)
    liq = fluid.single_phase(T, P, x=x)
    vap = fluid.single_phase(T, P, x=y)
    return _compose(fluid, stable, liq, vap, two, fl["beta"])


class _MixtureEvaluator:
    """Overall u, h, s, v of a mixture at scalar (T, P) from TP flashes,
    warm-started from the last two-phase K-values."""

    def __init__(self, fluid):
        self.fluid = fluid
        self.lnK = None
        self.calls = 0

    def __call__(self, T, P):
        f = self.fluid
        self.calls += 1
        Ta, Pa = np.array([T]), np.array([P])
        fl = equilibrium.flash_TP(Ta, Pa, f.mole_fractions, f.params,
                                  lnK_start=None if self.lnK is None else self.lnK[None, :])
        if not fl["two_phase"][0]:
            pr = props_TP(f, Ta, Pa)
            return {k: float(pr[k][0]) for k in ("u", "h", "s", "v")}
        self.lnK = fl["lnK"][0]
        b = fl["beta"][0]
        L = props_TP(f, Ta, Pa, x=fl["x"])
        V = props_TP(f, Ta, Pa, x=fl["y"])
        return {k: float(b * V[k][0] + (1 - b) * L[k][0]) for k in ("u", "h", "s", "v")}


def _mixture_fixed_P(fluid, P, key, target):
    """Mixture: T at fixed P with prop = target; single phase first, then flash."""
    Tlo, Thi = _T_bounds(fluid)
    n = P.shape[0]
    scale = {"h": R * 300.0, "u": R * 300.0, "s": R, "v": 1.0}[key]

    def f1(Tt):
        val = props_TP(fluid, Tt, P)[key]
        return np.log(val / target) if key == "v" else (val - target) / scale

    lo = np.full(n, Tlo)
    hi = np.full(n, Thi)
    flo, fhi = f1(lo), f1(hi)
    bad = (flo > 0) | (fhi < 0)
    if np.any(bad):
        i = np.flatnonzero(bad)[0]
        raise InputError(key, float(target[i]), f"a value the model reaches at P = {P[i]:.6g} Pa "
                         f"between T = {Tlo:.4g} and {Thi:.4g} K")
    T, fx, ok = illinois(f1, lo, hi, flo, fhi, xtol=1e-14 * Thi, ftol=1e-13)
    _raise_if(ok, f"P-{key} single-phase solve", dict(P=P, T=T), fx)
    unstable, _, _ = equilibrium.stability_test(T, P, np.broadcast_to(fluid.mole_fractions, (n, fluid.nc)),
                                                fluid.params)
    idx = np.flatnonzero(unstable)
    if idx.size:
        Tb, done = _mixture_fixed_P_two_phase_batch(fluid, P[idx], key, target[idx], scale)
        T[idx] = Tb
        for i in idx[~done]:  # rows the batch could not bracket: one at a time
            T[i] = _mixture_fixed_P_two_phase(fluid, float(P[i]), key, float(target[i]), float(T[i]), scale)
    fl = equilibrium.flash_TP(T, P, fluid.mole_fractions, fluid.params)
    return _mixture_from_flash(fluid, T, P, fl)


def _flash_props(fluid, T, P, quick=False):
    """Overall u, h, s, v on a batch of (T, P) from one vectorised flash
    (``quick``: bounded successive substitution only, for grids)."""
    kw = dict(maxiter=60, second_order=False) if quick else {}
    fl = equilibrium.flash_TP(T, P, fluid.mole_fractions, fluid.params, raise_on_fail=False, **kw)
    b = fl["beta"]
    L = props_TP(fluid, T, P, x=fl["x"])
    V = props_TP(fluid, T, P, x=fl["y"])
    return {k: b * V[k] + (1 - b) * L[k] for k in ("u", "h", "s", "v")}, fl


def _mixture_fixed_P_two_phase_batch(fluid, P, key, target, scale, n_grid=40):
    """T at fixed P for many rows at once, inside or across the two-phase region.

    prop(T) at fixed P is continuous and increasing (Cp > 0, also through
    the phase split), so a T grid flashed in one vectorised call brackets
    every row, and the vectorised Illinois search of :func:`illinois`
    narrows all brackets together, each step one batched flash.
    Returns T and a flag per row (False: no bracket found on the grid)."""
    m = P.size
    grid = np.linspace(0.4 * float(np.min(fluid.Tc)), 1.3 * float(np.max(fluid.Tc)), n_grid)
    TT = np.tile(grid, m)
    PP = np.repeat(P, n_grid)
    pr, _ = _flash_props(fluid, TT, PP, quick=True)
    tg = np.repeat(target, n_grid)
    vals = (np.log(pr["v"] / tg) if key == "v" else (pr[key] - tg) / scale).reshape(m, n_grid)
    ok = np.isfinite(vals)
    cross = ok[:, :-1] & ok[:, 1:] & (vals[:, :-1] <= 0) & (vals[:, 1:] >= 0)
    found = cross.any(axis=1)
    k = np.argmax(cross, axis=1)
    lo = np.where(found, grid[k], grid[0])
    hi = np.where(found, grid[np.minimum(k + 1, n_grid - 1)], grid[-1])

    def f(Ts):
        q, _ = _flash_props(fluid, Ts, P)
        return np.log(q["v"] / target) if key == "v" else (q[key] - target) / scale

    T = np.full(m, np.nan)
    if found.any():
        flo, fhi = f(lo), f(hi)
        good = found & (flo <= 0) & (fhi >= 0)
        Tx, _, conv = illinois(f, lo, hi, np.where(good, flo, -1.0), np.where(good, fhi, 1.0),
                               xtol=1e-12 * float(grid[-1]), ftol=1e-12)
        found = good & conv
        T = np.where(found, Tx, np.nan)
    return T, found


def _grid_bracket(values, grid):
    """First interval of an increasing-on-average sampled function that
    brackets zero: (lo, hi) or None."""
    sgn = np.sign(values)
    k = np.flatnonzero((sgn[:-1] <= 0) & (sgn[1:] >= 0) & np.isfinite(values[:-1]) & np.isfinite(values[1:]))
    if k.size == 0:
        return None
    return float(grid[k[0]]), float(grid[k[0] + 1])


def _mixture_fixed_P_two_phase(fluid, P, key, target, T0, scale):
    """T at fixed P inside the two-phase region: bracket on a T grid (one
    vectorised flash), then Brent's method with warm-started flashes.
    prop(T) at fixed P is continuous and increasing (Cp > 0)."""
    from scipy.optimize import brentq

    ev = _MixtureEvaluator(fluid)

    def g(T):
        val = ev(T, P)[key]
        return np.log(val / target) if key == "v" else (val - target) / scale

    Tlo, Thi = _T_bounds(fluid)
    grid = np.linspace(0.4 * float(np.min(fluid.Tc)), 1.3 * float(np.max(fluid.Tc)), 40)
    pr, _ = _grid_props(fluid, grid, np.full(grid.shape, P))
    vals = np.log(pr["v"] / target) if key == "v" else (pr[key] - target) / scale
    br = _grid_bracket(vals, grid)
    if br is None:
        lo, hi = Tlo, Thi
    else:
        lo, hi = br
    glo, ghi = g(lo), g(hi)
    if np.sign(glo) == np.sign(ghi):
        lo, hi = Tlo, Thi
    try:
        return brentq(g, lo, hi, xtol=1e-10, rtol=1e-13, maxiter=200)
    except ValueError:
        raise ConvergenceError(f"P-{key} two-phase solve", "no bracket found",
                               dict(P=P, T=T0), None) from None


def _unstable_at_Tv(fluid, T, P, v_eos, z):
    """A single-phase (T, v) state is the equilibrium state only if its volume
    is the lowest-Gibbs root at its own (T, P) and the tangent-plane test
    finds no phase of lower Gibbs energy (Michelsen 1982)."""
    sol = cubic.solve_volume_from_TP(T, P, z, fluid.params, which="stable")
    wrong_root = np.abs(sol["v"] - v_eos) > 1e-7 * v_eos
    us, _, _ = equilibrium.stability_test(T, P, z, fluid.params)
    return us | wrong_root


def _mixture_fixed_v(fluid, v, key, target):
    """Mixture: T at fixed v with prop = target (u, h or s)."""
    Tlo, Thi = _T_bounds(fluid)
    n = v.shape[0]
    x = fluid.mole_fractions
    b = float(x @ fluid.params.b) - float(x @ fluid.volume_shift)
    if np.any(v <= b):
        raise InputError("v", _out(v), f"v > b = {b:.6g} m3/mol (the model's co-volume)")
    v_eos = v + float(x @ fluid.volume_shift)
    scale = R * 300.0 if key != "s" else R

    def f1(Tt):
        return (props_Tv(fluid, Tt, v_eos)[key] - target) / scale

    lo = np.full(n, Tlo)
    hi = np.full(n, Thi)
    flo, fhi = f1(lo), f1(hi)
    bad = (flo > 0) | (fhi < 0) | ~np.isfinite(flo) | ~np.isfinite(fhi)
    if np.any(fhi < 0):
        i = np.flatnonzero(fhi < 0)[0]
        raise InputError(key, float(target[i]), f"a value below the model's value at T = {Thi:.4g} K "
                         f"and v = {v[i]:.6g} m3/mol")
    # below the single-phase T range the content may be two-phase: start
    # from the lowest T and let the two-phase search below handle it
    flo = np.where(bad, -1.0, flo)
    T, fx, ok = illinois(f1, lo, hi, flo, fhi, xtol=1e-14 * Thi, ftol=1e-13)
    P = props_Tv(fluid, T, v_eos)["P"]
    check = ok & (P > 0)
    z = np.broadcast_to(x, (n, fluid.nc))
    unstable = ~check
    if np.any(check):
        idx = np.flatnonzero(check)
        us = _unstable_at_Tv(fluid, T[idx], P[idx], v_eos[idx] if np.ndim(v_eos) else v_eos, z[idx])
        unstable[idx[us]] = True
    Pn = P.copy()
    for i in np.flatnonzero(unstable):
        T[i], Pn[i] = _mixture_fixed_v_two_phase(fluid, float(v[i]), key, float(target[i]),
                                                  float(T[i]), float(P[i]), scale)
    fl = equilibrium.flash_TP(T, Pn, x, fluid.params)
    st = _mixture_from_flash(fluid, T, Pn, fl)
    return st


def _mixture_TV(fluid, T, v):
    """Mixture at (T, v): explicit P, stability test, TV flash (1-D in ln P)."""
    from scipy.optimize import brentq

    n = T.shape[0]
    x = fluid.mole_fractions
    cbar = float(x @ fluid.volume_shift)
    b = float(x @ fluid.params.b) - cbar
    if np.any(v <= b):
        raise InputError("v", _out(v), f"v > b = {b:.6g} m3/mol (the model's co-volume)")
    P = props_Tv(fluid, T, v + cbar)["P"]
    unstable = P <= 0
    ok = ~unstable
    if np.any(ok):
        idx = np.flatnonzero(ok)
        us = _unstable_at_Tv(fluid, T[idx], P[idx], v[idx] + cbar, np.broadcast_to(x, (idx.size, fluid.nc)))
        unstable[idx[us]] = True
    for i in np.flatnonzero(unstable):
        Ti, vi = float(T[i]), float(v[i])
        ev = _MixtureEvaluator(fluid)

        def g(lnP):
            return np.log(ev(Ti, np.exp(lnP))["v"] / vi)

        lngrid = np.linspace(np.log(1e2), np.log(3.0 * float(np.max(fluid.Pc))), 40)
        pr, _ = _grid_props(fluid, np.full(lngrid.shape, Ti), np.exp(lngrid))
        br = _grid_bracket(-np.log(pr["v"] / vi), lngrid)
        lo, hi = br if br is not None else (np.log(1e2), np.log(1e9))
        if np.sign(g(lo)) == np.sign(g(hi)):
            lo, hi = np.log(1e2), np.log(1e9)
        P[i] = np.exp(brentq(g, lo, hi, xtol=1e-14, rtol=1e-14, maxiter=300))
    fl = equilibrium.flash_TP(T, P, x, fluid.params)
    return _mixture_from_flash(fluid, T, P, fl)


def _grid_props(fluid, T, P):
    """Overall u, h, s, v on a batch of (T, P) from one quick vectorised flash."""
    return _flash_props(fluid, T, P, quick=True)


def _grid_start(fluid, v, key, target, scale):
    """Starting point for the two-phase fixed-v search: the best node of a
    coarse (T, ln P) grid, refined once around it (two vectorised flashes)."""
    Tlo = 0.4 * float(np.min(fluid.Tc))
    Thi = 1.2 * float(np.max(fluid.Tc))
    lnlo, lnhi = np.log(1e3), np.log(2.0 * float(np.max(fluid.Pc)))
    best = None
    for _ in range(2):
        Tg, lnPg = np.meshgrid(np.linspace(Tlo, Thi, 14), np.linspace(lnlo, lnhi, 14), indexing="ij")
        pr, _ = _grid_props(fluid, Tg.ravel(), np.exp(lnPg.ravel()))
        r1 = (pr[key] - target) / scale
        r2 = np.log(pr["v"] / v)
        norm = r1**2 + r2**2
        k = int(np.nanargmin(norm))
        best = (float(Tg.ravel()[k]), float(lnPg.ravel()[k]))
        dT = (Thi - Tlo) / 13.0
        dP = (lnhi - lnlo) / 13.0
        Tlo, Thi = best[0] - dT, best[0] + dT
        lnlo, lnhi = best[1] - dP, best[1] + dP
        Tlo = max(Tlo, 1.0)
    return best


def _mixture_fixed_v_two_phase(fluid, v, key, target, T0, P0_, scale):
    """Two-phase (T, P) for a fixed-v spec.

    Damped Newton on (T, ln P) with residuals (prop - target)/scale and
    ln(v(T, P)/v), Jacobian by forward differences of warm-started TP
    flashes; if it does not converge in 40 steps, nested 1-D searches
    (always convergent: prop rises with T at fixed v, v falls with P at
    fixed T) take over from the best point found.
    """
    ev = _MixtureEvaluator(fluid)

    def resid(T, lnP):
        pr = ev(T, np.exp(lnP))
        return np.array([(pr[key] - target) / scale, np.log(pr["v"] / v)])

    T, lnP = _grid_start(fluid, v, key, target, scale)
    try:
        r = resid(T, lnP)
        for _ in range(40):
            if np.max(np.abs(r)) < 1e-11:
                return T, float(np.exp(lnP))
            hT, hP = 1e-7 * T, 1e-7
            J = np.column_stack([(resid(T + hT, lnP) - r) / hT, (resid(T, lnP + hP) - r) / hP])
            step = np.linalg.solve(J, -r)
            step[0] = np.clip(step[0], -0.1 * T, 0.1 * T)
            step[1] = np.clip(step[1], -1.0, 1.0)
            lam = 1.0
            for _ in range(12):
                Tn, lnPn = T + lam * step[0], lnP + lam * step[1]
                if Tn > 0:
                    rn = resid(Tn, lnPn)
                    if np.linalg.norm(rn) < np.linalg.norm(r):
                        break
                lam *= 0.5
            else:
                break
            T, lnP, r = Tn, lnPn, rn
    except (np.linalg.LinAlgError, ConvergenceError, FloatingPointError):
        pass
    return _mixture_fixed_v_nested(fluid, v, key, target, T, float(np.exp(lnP)), scale)


def _mixture_fixed_v_nested(fluid, v, key, target, T0, P0_, scale):
    """Two-phase (T, P) for a fixed-v spec: nested 1-D searches.

    Outer: prop(T) at fixed v is increasing in T (Cv > 0); inner: at each T
    the TV flash finds P with v(T, P) = v (v falls with P).
    """
    from scipy.optimize import brentq

    cache = {}
    ev = _MixtureEvaluator(fluid)

    def P_of_T(T):
        def g(lnP):
            return np.log(ev(T, np.exp(lnP))["v"] / v)

        guess = cache.get("lnP", np.log(max(P0_, 1e3)))
        lo, hi = guess - 0.5, guess + 0.5
        glo, ghi = g(lo), g(hi)
        k = 0
        while glo < 0 and k < 40:
            lo -= 1.0
            glo = g(lo)
            k += 1
        while ghi > 0 and k < 80:
            hi += 1.0
            ghi = g(hi)
            k += 1
        lnP = brentq(g, lo, hi, xtol=1e-13, rtol=1e-14, maxiter=200)
        cache["lnP"] = lnP
        return np.exp(lnP)

    def h(T):
        P = P_of_T(T)
        return (ev(T, P)[key] - target) / scale

    h0 = h(T0)
    step = 0.02 * T0
    a = T0
    for _ in range(60):
        b_ = a - step if h0 > 0 else a + step
        b_ = max(b_, 1.0)
        hb = h(b_)
        if np.sign(hb) != np.sign(h0):
            lo, hi = sorted((a, b_))
            T = brentq(h, lo, hi, xtol=1e-10, rtol=1e-13, maxiter=200)
            return T, P_of_T(T)
        a = b_
        step *= 1.6
    raise ConvergenceError(f"{key}-v two-phase solve", "no bracket found", dict(v=v, T=a), None)


# --------------------------------------------------------------------------
# dispatch
# --------------------------------------------------------------------------
def solve_state(fluid: Fluid, **spec):
    """Solve for the state at one pair of (T, P, v, h, u, s)."""
    given = {k: v for k, v in spec.items() if v is not None}
    unknown = set(given) - set(_KEYS)
    if unknown:
        raise InputError("state()", sorted(unknown), "two of T, P, v, h, u, s")
    if len(given) != 2:
        raise InputError("state()", sorted(given), "exactly two of T, P, v, h, u, s")
    arrs = {k: _as_float_array(k, v) for k, v in given.items()}
    for k in ("T", "P", "v"):
        if k in arrs and np.any(arrs[k] <= 0):
            raise InputError(k, _out(arrs[k]), f"{k} > 0")
    try:
        bc = np.broadcast_arrays(*arrs.values())
    except ValueError:
        raise InputError(", ".join(arrs), {k: np.shape(v) for k, v in arrs.items()},
                         "shapes that broadcast together") from None
    shape = bc[0].shape
    arrs = {k: np.ascontiguousarray(v).reshape(-1).astype(float) for k, v in zip(arrs, bc)}
    keys = frozenset(arrs)
    st = _dispatch(fluid, keys, arrs)
    return _reshape(st, shape)


def _dispatch(fluid, keys, a):
    pure = fluid.is_pure
    if keys == {"T", "P"}:
        if pure:
            return _pure_TP(fluid, a["T"], a["P"])
        fl = equilibrium.flash_TP(a["T"], a["P"], fluid.mole_fractions, fluid.params)
        return _mixture_from_flash(fluid, a["T"], a["P"], fl)
    if keys == {"T", "v"}:
        if pure:
            b = float(fluid.params.b[0]) - fluid.volume_shift[0]
            if np.any(a["v"] <= b):
                raise InputError("v", _out(a["v"]), f"v > b = {b:.6g} m3/mol (the model's co-volume)")
            st = _pure_Tv(fluid, a["T"], a["v"])
            return _assemble_pure(fluid, a["T"], st)
        return _mixture_TV(fluid, a["T"], a["v"])
    if "P" in keys:
        (key,) = keys - {"P"}
        return (_pure_fixed_P if pure else _mixture_fixed_P)(fluid, a["P"], key, a[key])
    if "v" in keys:
        (key,) = keys - {"v"}
        if pure:
            if a["v"].size == 1:
                st = _pure_fixed_v_scalar(fluid, float(a["v"][0]), key, float(a[key][0]))
                if st is not None:
                    return st
            return _solve_fixed_v(fluid, a["v"], key, a[key])
        return _mixture_fixed_v(fluid, a["v"], key, a[key])
    if keys == {"T", "s"}:
        if pure:
            return _pure_fixed_T(fluid, a["T"], "s", a["s"])
    raise InputError("state()", sorted(keys),
                     "one of the pairs (T,P), (T,v), (T,s: pure fluids), (P,h), (P,s), (P,u), "
                     "(P,v), (u,v), (h,v), (s,v)")


def _reshape(st: State, shape):
    """Give every array of a flat state (and its phases) the batch shape."""
    if shape == (st._T.shape if hasattr(st._T, "shape") else ()):
        return st
    for obj in (st, st.liquid, st.vapour):
        if obj is None:
            continue
        for k in ("_T", "_P", "_v", "_h", "_u", "_s", "_beta", "_phase_code", "_h_res", "_s_res", "_v_eos"):
            val = getattr(obj, k, None)
            if isinstance(val, np.ndarray) and val.ndim == 1:
                setattr(obj, k, val.reshape(shape))
        if isinstance(obj._shift, np.ndarray) and obj._shift.ndim == 1:
            obj._shift = obj._shift.reshape(shape)
        obj._x = np.asarray(obj._x).reshape(shape + (obj.fluid.nc,))
        if obj._sol is not None:
            new = {}
            for k, val in obj._sol.items():
                val = np.asarray(val)
                if val.ndim == 2 and k == "roots":
                    new[k] = val.reshape(shape + (3,))
                elif val.ndim == 1:
                    new[k] = val.reshape(shape)
                else:
                    new[k] = val
            obj._sol = new
    return st
