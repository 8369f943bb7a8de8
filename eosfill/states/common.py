"""Pieces shared by the pure-fluid and mixture state solvers: explicit
single-phase properties at (T, v) and (T, P), the vectorised bracketing
search (Illinois regula falsi; Dowell & Jarratt, BIT 11 (1971) 168-174),
the temperature bounds of a search, and the assembly of a State from its
phases."""
from __future__ import annotations

import numpy as np

from eosfill.constants import R
from eosfill.errors import ConvergenceError, InputError
from eosfill.model.mixture import LIQUID, TWO_PHASE, Mixture, State, _one_state_data, _out

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
# the single-phase 1-D searches in T, compiled (eosfill.model.one_state)
# --------------------------------------------------------------------------
_SCALE = {"h": R * 300.0, "u": R * 300.0, "s": R, "v": 1.0}   # f = (prop - target)/scale (ln(v/target) for v)


def single_phase_T_at_P(fluid: Mixture, P, key, target, lo, hi):
    """T with prop(T, P) = target on the lowest-Gibbs root, prop in (h, s, u, v), per row of
    P, target (n,) inside [lo, hi] (arrays (n,) or floats): the compiled search
    :func:`eosfill.model.one_state.T_at_P_one`, one call for the batch.

    Returns T, f, converged (as :func:`illinois`: |f| ≤ 1e-13 or a bracket ≤ 1e-14 ×
    the search's upper T).  Raises :class:`InputError` for a row whose target the
    model does not reach between lo and hi."""
    from eosfill.model import one_state as os1

    d = _one_state_data(fluid)
    n = P.shape[0]
    lo = np.broadcast_to(np.asarray(lo, dtype=float), (n,)).astype(float)
    hi = np.broadcast_to(np.asarray(hi, dtype=float), (n,)).astype(float)
    T, f = np.empty(n), np.empty(n)
    status = np.empty(n, dtype=np.int64)
    rows = np.empty((n, os1.TP_NCOL))
    run = os1.T_at_P_parallel if n >= os1.PARALLEL_MIN else os1.T_at_P_serial
    run(os1.KEYS_P[key], np.array(target, dtype=float), np.array(P, dtype=float), lo, hi, 300.0, d.x, d.m, d.ig,
        _SCALE[key], 1e-14 * _T_SEARCH_MAX, 1e-13, _ILLINOIS_MAXITER, T, f, status, rows)
    bad = np.flatnonzero(status < 0)
    if bad.size:
        i = int(bad[0])
        raise InputError(key, float(target[i]), f"a value the model reaches at P = {P[i]:.6g} Pa between "
                         f"T = {lo[i]:.4g} and {hi[i]:.4g} K")
    return T, f, status == os1.CONVERGED


def single_phase_T_at_v(fluid: Mixture, v_eos, key, target):
    """T with prop(T, v_eos) = target from the cubic at fixed v (prop in u, h, s), per row of
    v_eos, target (n,), in the range of :func:`_T_bounds`: the compiled search
    :func:`eosfill.model.one_state.T_at_v_checked_one`, one call for the batch.

    Returns T, P (the cubic's at (T, v)), converged.  Raises :class:`InputError` for a
    row whose target lies above the model's value at the upper T."""
    from eosfill.model import one_state as os1

    d = _one_state_data(fluid)
    n = v_eos.shape[0]
    Tlo, Thi = _T_bounds(fluid)
    T, f = np.empty(n), np.empty(n)
    status = np.empty(n, dtype=np.int64)
    rows = np.empty((n, os1.TV_NCOL))
    run = os1.T_at_v_parallel if n >= os1.PARALLEL_MIN else os1.T_at_v_serial
    run(os1.KEYS_P[key], np.array(target, dtype=float), np.array(v_eos, dtype=float), Tlo, Thi, 300.0, d.x, d.m,
        d.ig, 1e-13, _ILLINOIS_MAXITER, T, f, status, rows)
    above = np.flatnonzero(status == os1.ABOVE)
    if above.size:
        i = int(above[0])
        raise InputError(key, float(target[i]), f"a value below the model's value at T = {Thi:.4g} K "
                         f"and v = {v_eos[i] - d.cbar:.6g} m3/mol")
    return T, rows[:, os1.TV_P], status == os1.CONVERGED


# --------------------------------------------------------------------------
# assembling a State; shared helpers of the solvers
# --------------------------------------------------------------------------
def _T_bounds(fluid: Mixture):
    """Search range in T [K] for 1-D solves: well below the lowest critical
    temperature up to ``_T_SEARCH_MAX``, the same range the (T, P) and (T, v)
    entries accept (above the Cp° correlation's range the ideal-gas part is
    extended with a RangeWarning, as there), so every state those return can be
    found again from any other pair."""
    lo = max(1.0, 0.4 * _one_state_data(fluid).Tc_min)
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
