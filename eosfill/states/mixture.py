"""Mixture state solvers (see :mod:`eosfill.states`): a single-phase solve,
the tangent-plane stability test, then searches on top of the TP flash
(fixed P: one grid flash and a vectorised bracket search for all rows that
split; fixed v: damped 2-D Newton in (T, ln P) from a grid start, nested
1-D searches as fallback; (T, v): a 1-D search in ln P).
"""
from __future__ import annotations

import numpy as np

from eosfill.equilibrium import solvers as equilibrium
from eosfill.constants import R
from eosfill.errors import ConvergenceError, InputError
from eosfill.model.mixture import Mixture
from eosfill.model.mixture import _out
from eosfill.equilibrium import multiphase
from eosfill.model.mixture import GAS, SUPERCRITICAL, THREE_PHASE, TWO_PHASE, State
from eosfill.states.common import (_T_bounds, _compose, _merge, _raise_if, illinois, props_TP, props_Tv,
                                   single_phase_T_at_P, single_phase_T_at_v)

def _mixture_from_flash(fluid: Mixture, T, P, fl=None):
    """State of a mixture at (T, P) (arrays of shape (n,)) from the multiphase
    flash (:func:`eosfill.equilibrium.multiphase.flash_multiphase_TP`).

    ``fl`` (a two-phase flash result) is accepted for the callers' sake and
    ignored: the multiphase flash starts from its own two-phase flash and
    tests the result's stability."""
    mf = multiphase.flash_multiphase_TP(T, P, fluid.mole_fractions, fluid.params)
    return _state_from_multiflash(fluid, T, P, mf)


def _state_from_multiflash(fluid, T, P, mf):
    """Overall State from a multiphase flash result: β-weighted v, h, u, s;
    ``phases`` (least dense first), ``phase_fractions``; ``vapour``/``liquid``
    the least dense and the next phase of split rows; vapour fraction = the
    summed β of the phases labelled gas (or supercritical)."""
    stable = fluid.single_phase(T, P)
    nph = mf["n_phases"]
    split = nph > 1
    stable.iterations_array = mf["iterations"]
    if not np.any(split):
        stable.solver_status, stable.solver_residual = mf["status"], mf["residual"]
        return stable
    kmax = int(nph.max())
    phases = [fluid.single_phase(T, P, x=mf["X"][:, k]) for k in range(kmax)]
    beta = mf["beta"][:, :kmax]
    st = State(fluid)
    vals = {}
    for key in ("_v", "_h", "_u", "_s"):
        tot = sum(beta[:, k] * getattr(phases[k], key) for k in range(kmax))
        vals[key] = np.where(split, tot, getattr(stable, key))
    gas_like = np.stack([(ph._phase_code == GAS) | (ph._phase_code == SUPERCRITICAL) for ph in phases], axis=-1)
    bV = np.where(split, (beta * gas_like).sum(axis=-1), stable._beta)
    st._set(T=stable._T, P=stable._P, v=vals["_v"], h=vals["_h"], u=vals["_u"], s=vals["_s"],
            beta=bV, x=np.broadcast_to(fluid.mole_fractions, np.shape(stable._T) + (fluid.nc,)),
            sol=stable._sol, h_res=stable._h_res, s_res=stable._s_res)
    st._phase_code = np.where(nph >= 3, THREE_PHASE, np.where(split, TWO_PHASE, stable._phase_code)).astype(np.int8)
    st.vapour = _merge(fluid, stable, phases[0], split)
    st.liquid = _merge(fluid, stable, phases[1], split)
    st.phases = [_merge(fluid, stable, ph, nph > k) for k, ph in enumerate(phases)]
    st._phase_fractions = np.where(split[:, None], beta, np.eye(kmax)[0][None, :])
    st.iterations_array = mf["iterations"]
    st.solver_status, st.solver_residual = mf["status"], mf["residual"]
    return st


class _MixtureEvaluator:
    """Overall u, h, s, v of a mixture at scalar (T, P) from TP flashes,
    warm-started from the last two-phase K-values."""

    def __init__(self, fluid):
        self.fluid = fluid
        self.lnK = None
        self.calls = 0

    def __call__(self, T, P):
        self.calls += 1
        q, _ = _flash_props(self.fluid, np.array([T]), np.array([P]))
        return {k: float(q[k][0]) for k in ("u", "h", "s", "v")}


def _mixture_fixed_P(fluid, P, key, target):
    """Mixture: T at fixed P with prop = target; single phase first, then flash."""
    Tlo, Thi = _T_bounds(fluid)
    scale = {"h": R * 300.0, "u": R * 300.0, "s": R, "v": 1.0}[key]
    # single phase first (the compiled search on the lowest-Gibbs root in [Tlo, Thi])
    T, fx, ok = single_phase_T_at_P(fluid, P, key, target, Tlo, Thi)
    _raise_if(ok, f"P-{key} single-phase solve", dict(P=P, T=T), fx)
    unstable = multiphase.unstable(T, P, fluid.mole_fractions, fluid.params)
    idx = np.flatnonzero(unstable)
    if idx.size == 0:
        return _mixture_from_flash(fluid, T, P)
    # the compiled two-phase search from the single-phase T, verified below
    Tc_, ok = _compiled_fixed_P(fluid, P[idx], key, target[idx], scale, T[idx], Tlo, Thi)
    T0 = T.copy()
    T[idx] = np.where(ok, Tc_, T[idx])   # rows not settled keep their start for the fallback
    st = _mixture_from_flash(fluid, T, P)
    miss = idx[~(ok & _meets_spec(st, idx, key, target[idx]))]
    if miss.size == 0:
        return st
    # the Python searches for the rows the compiled search did not settle
    T[miss] = T0[miss]
    Tb, done = _mixture_fixed_P_two_phase_batch(fluid, P[miss], key, target[miss], scale)
    T[miss] = Tb
    for i in miss[~done]:  # rows the batch could not bracket: one at a time
        T[i] = _mixture_fixed_P_two_phase(fluid, float(P[i]), key, float(target[i]), float(T0[i]), scale)
    return _mixture_from_flash(fluid, T, P)


def _kernel_args(fluid):
    p = fluid.params
    return (np.ascontiguousarray(fluid.mole_fractions, dtype=np.float64), p.kernel_model, fluid.kernel_ideal_gas,
            np.array(p.Pc, dtype=np.float64), np.array(p.omega, dtype=np.float64))


def _compiled_fixed_P(fluid, P, key, target, scale, T0, Tlo, Thi, tol=(1e-12, 1e-12)):
    """T at fixed P, two phases, by
    :func:`eosfill.equilibrium.two_phase_search.fixed_P_one` (one state) or
    its parallel batch.  Returns T and a converged flag per row."""
    from eosfill.equilibrium import two_phase_search as ts

    z, m, ig, Pc, omega = _kernel_args(fluid)
    kc = ts.KEY_CODES[key]
    n = P.size
    if n == 1:
        T, status, _ = ts.fixed_P_one(float(P[0]), kc, float(target[0]), float(scale), float(T0[0]), float(Tlo),
                                      float(Thi), z, m, ig, Pc, omega, tol[0], tol[1], 200)
        return np.array([T]), np.array([status == 0])
    T = np.empty(n)
    status = np.empty(n, dtype=np.int64)
    ts.fixed_P_batch(np.array(P, dtype=np.float64), kc, np.array(target, dtype=np.float64), float(scale),
                     np.array(T0, dtype=np.float64), float(Tlo), float(Thi), z, m, ig, Pc, omega, tol[0], tol[1], 200,
                     T, status)
    return T, status == 0


def _meets_spec(st, idx, key, target, rtol=1e-9):
    """Rows idx of the state meet ψ = target (u, h: to rtol of max(|target|,
    R T); s: of max(|target|, R); v: relative) with a converged phase split."""
    val = np.asarray(getattr(st, "_" + key))[idx]
    T = np.asarray(st._T)[idx]
    floor = {"u": R * T, "h": R * T, "s": R, "v": 0.0}[key]
    good = np.abs(val - target) <= rtol * np.maximum(np.abs(target), floor)
    status = getattr(st, "solver_status", None)
    if status is not None:
        good &= np.asarray(status).reshape(-1)[idx] == 0
    return good & np.isfinite(val)


def _flash_props(fluid, T, P, quick=False):
    """Overall u, h, s, v on a batch of (T, P): the multiphase flash
    (``quick``: bounded two-phase successive substitution only, for the
    bracketing grids; the searches then refine with the full flash)."""
    if quick:
        fl = equilibrium.flash_TP(T, P, fluid.mole_fractions, fluid.params, raise_on_fail=False,
                                  maxiter=60, second_order=False)
        b = fl["beta"]
        L = props_TP(fluid, T, P, x=fl["x"])
        V = props_TP(fluid, T, P, x=fl["y"])
        return {k: b * V[k] + (1 - b) * L[k] for k in ("u", "h", "s", "v")}, fl
    mf = multiphase.flash_multiphase_TP(T, P, fluid.mole_fractions, fluid.params)
    out = {k: 0.0 for k in ("u", "h", "s", "v")}
    for k in range(int(mf["n_phases"].max())):
        pr = props_TP(fluid, T, P, x=mf["X"][:, k])
        for q in out:
            out[q] = out[q] + mf["beta"][:, k] * pr[q]
    return out, mf


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
    wrong_root = np.abs(props_TP(fluid, T, P, z)["v_eos"] - v_eos) > 1e-7 * v_eos
    us = multiphase.unstable(T, P, z, fluid.params)
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
    # single phase first (the compiled search at fixed v); below the single-phase T range
    # the content may be two-phase: such rows end unconverged and the two-phase search
    # below takes them
    T, P, ok = single_phase_T_at_v(fluid, v_eos, key, target)
    check = ok & (P > 0)
    z = np.broadcast_to(x, (n, fluid.nc))
    unstable = ~check
    if np.any(check):
        idx = np.flatnonzero(check)
        us = _unstable_at_Tv(fluid, T[idx], P[idx], v_eos[idx] if np.ndim(v_eos) else v_eos, z[idx])
        unstable[idx[us]] = True
    idx = np.flatnonzero(unstable)
    if idx.size == 0:
        return _mixture_from_flash(fluid, T, P)
    # the compiled two-phase search from the single-phase T, verified below
    T0, P0 = T.copy(), P.copy()
    Pn = P.copy()
    Tc_, Pc_, ok = _compiled_fixed_v(fluid, v[idx], key, target[idx], scale, T[idx], P[idx])
    ok &= (Tc_ >= Tlo) & (Tc_ <= Thi) & (Pc_ > 0)
    sub = idx[ok]   # verified by the multiphase flash of these rows alone
    miss = idx[~ok]
    if sub.size:
        T[sub], Pn[sub] = Tc_[ok], Pc_[ok]
        stv = _mixture_from_flash(fluid, T[sub], Pn[sub])
        rows = np.arange(sub.size)
        good = _meets_spec(stv, rows, key, target[sub]) & _meets_spec(stv, rows, "v", v[sub])
        miss = np.concatenate([miss, sub[~good]])
        if miss.size == 0 and sub.size == n:
            return stv
    for i in miss:  # the Python search for the rows the compiled search did not settle
        T[i], Pn[i] = _mixture_fixed_v_two_phase(fluid, float(v[i]), key, float(target[i]),
                                                  float(T0[i]), float(P0[i]), scale)
    return _mixture_from_flash(fluid, T, Pn)


def _compiled_fixed_v(fluid, v, key, target, scale, T0, P0):
    """(T, P) at fixed v, two phases, by :func:`eosfill.equilibrium.two_phase_search.fixed_v_one`
    (one state) or its parallel batch.  Returns T, P and a converged flag per row."""
    from eosfill.equilibrium import two_phase_search as ts

    z, m, ig, Pc, omega = _kernel_args(fluid)
    kc = ts.KEY_CODES[key]
    P0 = np.where((P0 > 1e2) & (P0 < 1e9), P0, 1e6)
    n = v.size
    if n == 1:
        T, P, status = ts.fixed_v_one(float(v[0]), kc, float(target[0]), float(scale), float(T0[0]), float(P0[0]),
                                      z, m, ig, Pc, omega, 1e-11, 40)
        return np.array([T]), np.array([P]), np.array([status == 0])
    T = np.empty(n)
    P = np.empty(n)
    status = np.empty(n, dtype=np.int64)
    ts.fixed_v_batch(np.array(v, dtype=np.float64), kc, np.array(target, dtype=np.float64), float(scale),
                     np.array(T0, dtype=np.float64), np.array(P0, dtype=np.float64), z, m, ig, Pc, omega, 1e-11, 40,
                     T, P, status)
    return T, P, status == 0


def _mixture_TV(fluid, T, v):
    """Mixture at (T, v): explicit P, stability test, TV flash (1-D in ln P)."""
    from scipy.optimize import brentq

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
    return _mixture_from_flash(fluid, T, P)


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
