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

Where things are: this module holds the dispatch (:func:`solve_state`),
the explicit single-phase properties (:func:`props_Tv`, :func:`props_TP`),
the vectorised bracketing search (:func:`illinois`) and the assembly of a
State from its phases; :mod:`eosfill.states_pure` holds the pure-fluid
solvers, :mod:`eosfill.states_mixture` the mixture solvers.
"""
from __future__ import annotations

import numpy as np

from . import cubic, equilibrium, idealgas
from .constants import P0, R
from .errors import ConvergenceError, InputError
from .fluid import LIQUID, TWO_PHASE, Fluid, State, _as_float_array, _out

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
# assembling a State; shared helpers of the solvers
# --------------------------------------------------------------------------
def _T_bounds(fluid: Fluid):
    """Search range in T [K] for 1-D solves: well below the lowest critical
    temperature to twice the highest Cp° validity limit."""
    lo = max(1.0, 0.4 * float(np.min(fluid.Tc)))
    hi = max(2.0 * float(np.max(fluid.cp_Tmax)), 3.0 * float(np.max(fluid.Tc)))
    hi = min(hi, 5.0e3)
    return lo, hi

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

def _raise_if(ok, solver, last, resid):
    if np.all(ok):
        return
    i = np.flatnonzero(np.atleast_1d(~ok))[0]
    it = {k: float(np.atleast_1d(v)[i]) for k, v in last.items()}
    raise ConvergenceError(solver, f"not converged (element {i})", it, float(np.atleast_1d(resid)[i]))


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
    # the solvers import this module's helpers, so they are imported here
    from .states_mixture import _mixture_fixed_P, _mixture_fixed_v, _mixture_from_flash, _mixture_TV
    from .states_pure import (_assemble_pure, _pure_fixed_P, _pure_fixed_T, _pure_fixed_v_scalar,
                              _pure_Tv, _pure_TP, _solve_fixed_v)

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
