"""Pieces shared by the pure-fluid and mixture state solvers: explicit
single-phase properties at (T, v) and (T, P), the vectorised bracketing
search (Illinois regula falsi; Dowell & Jarratt, BIT 11 (1971) 168-174),
the temperature bounds of a search, and the assembly of a State from its
phases."""
from __future__ import annotations

import numpy as np

from eosfill.errors import ConvergenceError, InputError
from eosfill.model.mixture import LIQUID, TWO_PHASE, Mixture, State, _out

_ILLINOIS_MAXITER = 200
# upper end of every 1-D search in T [K]: the ideal-gas Cp° polynomials are
# held constant beyond their fitted range (RangeWarning), so higher T only
# extrapolates further; 1e4 K covers combustion-like temperatures with margin
_T_SEARCH_MAX = 1.0e4


# --------------------------------------------------------------------------
# explicit single-phase properties at (T, v)
# --------------------------------------------------------------------------
def props_Tv(fluid: Mixture, T, v_eos, x=None):
    """Single-phase P, u, h, s, cv at (T, v) with the cubic; no root needed.

    u(T, v) = H°(T) - R T + U^R(T, v)                       (C9)
    s(T, v) = S°(T, P0) - R ln(R T/((v - b) P0)) - R Σ x ln x
              + a_T/b · L                                    (C8, with P eliminated)
    h = u + P v ;  values with the fluid's volume shift applied to v and h.
    Computed by the compiled kernel :func:`eosfill.model.properties.props_Tv_one`.
    """
    from eosfill.model import properties as kp

    x = fluid.mole_fractions if x is None else x
    rows = kp.props_Tv_rows(fluid.params.kernel_model, fluid.kernel_ideal_gas, T, v_eos, x)
    return {k: rows[..., kp.TV_NAMES.index(k)] for k in ("P", "u", "h", "s", "v", "cv", "b")}


def props_TP(fluid: Mixture, T, P, x=None, which="stable"):
    """Single-phase v, u, h, s at (T, P) with the chosen root of the cubic
    (compiled kernel :func:`eosfill.model.properties.props_TP_one`)."""
    from eosfill.model import properties as kp

    x = fluid.mole_fractions if x is None else x
    v_eos = kp.props_TP_rows(fluid.params.kernel_model, fluid.kernel_ideal_gas, T, P, x, which)[..., kp.TP_V_EOS]
    out = props_Tv(fluid, T, v_eos, x)   # u, h, s, cv in their (T, v) form, as every (T, v) solve sees them
    out["P"] = np.asarray(P, dtype=float) * np.ones_like(out["u"])
    out["h"] = out["u"] + out["P"] * out["v"]
    out["v_eos"] = v_eos
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
def _T_bounds(fluid: Mixture):
    """Search range in T [K] for 1-D solves: well below the lowest critical
    temperature up to ``_T_SEARCH_MAX``, the same range the (T, P) and (T, v)
    entries accept (above the Cp° correlation's range the ideal-gas part is
    extended with a RangeWarning, as there), so every state those return can be
    found again from any other pair."""
    lo = max(1.0, 0.4 * float(np.min(fluid.Tc)))
    return lo, _T_SEARCH_MAX

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
