"""Pure-fluid state solvers, vectorised over a batch (see :mod:`eosfill.states`).

Every pure-fluid state is fixed by (T, v) once the saturation curve is
known: fixed-v pairs are a 1-D search in T where each trial (T, v) is
single phase or split on the saturation curve; fixed-P pairs compare the
specification with its saturated-liquid and -vapour values at T_sat(P)
(lever rule in between), else search T on the liquid or vapour side.
"""
from __future__ import annotations

import numpy as np

from eosfill.equilibrium import solvers as equilibrium
from eosfill.constants import R
from eosfill.errors import CONVERGED, NOT_CONVERGED, ConvergenceError, InputError
from eosfill.model.mixture import Mixture
from eosfill.model.mixture import _one_state_data, _out
from eosfill.model.state import _kernel_modules
from eosfill.states.common import (_T_bounds, _compose, _negative_pressure, _raise_if, illinois, props_TP, props_Tv,
                                   single_phase_T_at_P)

def _pure_Tv(fluid: Mixture, T, v):
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
    sat_failed = np.zeros(T.shape, dtype=bool)
    if np.any(sub):
        sat = equilibrium.saturation_pressure(T[sub], p, raise_on_fail=False)
        ok = sat["status"] == equilibrium.CONVERGED
        sat_failed[sub] = ~ok  # the split cannot be decided there: say so
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
    out.update(two=two, beta=beta, Psat=Psat, vL=vL, vV=vV, sat_failed=sat_failed)
    return out


def _solve_fixed_v(fluid: Mixture, v, key, target):
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


def _pure_fixed_v_scalar(fluid: Mixture, v, key, target, flat=True):
    """One pure-fluid state at fixed v by the compiled one-state solve
    (:func:`eosfill.model.properties.T_at_v_one`): a State of shape (1,)
    (``flat``) or of shape () (a one-state State, floats).

    Valid when the single-phase solution lies clearly outside the
    saturation dome (then it is the stable state: for a pure fluid every
    (T, v) outside the dome is stable); otherwise returns None and the
    vectorised path decides."""
    from eosfill.equilibrium.saturation_curve import saturation_curve

    d = _one_state_data(fluid)
    kp = _kernel_modules()[1]
    if not v > d.b - d.cbar:
        return None
    Tlo, Thi = _T_bounds(fluid)
    T, _, status, row = kp.T_at_v_entry(kp.KEY_NAMES[key], float(target), v + d.cbar, max(d.Tc_min, 300.0),
                                        Tlo, Thi, d.x, d.m, d.ig, 1e-12, 100)
    if status != CONVERGED:
        return None
    if T <= Tlo * (1 + 1e-9) or T >= Thi * (1 - 1e-9):
        return None
    P = row[kp.TV_P]
    if not P > 0.0:
        return None
    if T < d.Tc_min and saturation_curve(fluid).classify(T, v) not in ("gas-side", "liquid-side"):
        return None
    st = fluid.single_phase(np.array([T]), np.array([P])) if flat else fluid.single_phase(float(T), float(P))
    if abs(float(st._v if not flat else st._v[0]) - v) > 1e-9 * v:
        return None   # the lowest-Gibbs root is not this volume: let the general path decide
    return st


def _assemble_pure(fluid: Mixture, T, st):
    """Build the State of a pure fluid from (T, P, split) arrays; rows whose
    saturation pressure did not converge carry NOT_CONVERGED."""
    out = _assemble_pure_state(fluid, T, st)
    if "sat_failed" in st:
        out.solver_status = np.where(st["sat_failed"], NOT_CONVERGED, CONVERGED).astype(np.int8)
    return out


def _assemble_pure_state(fluid: Mixture, T, st):
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


def _pure_fixed_P(fluid: Mixture, P, key, target):
    """Pure fluid: state at P with prop = target, prop in (h, s, u, v)."""
    p = fluid.params
    Pc = p.Pc[0]
    Tlo, Thi = _T_bounds(fluid)
    n = P.shape
    T = np.full(n, np.nan)
    beta = np.ones(n)
    two = np.zeros(n, dtype=bool)
    side_hi = np.full(n, Thi)
    side_lo = np.full(n, Tlo)
    sat_failed = np.zeros(n, dtype=bool)
    sub = P < Pc * (1.0 - 1e-9)
    if np.any(sub):
        Ts, st_ok = equilibrium.saturation_temperature(P[sub], p, raise_on_fail=False)
        L = props_TP(fluid, Ts, P[sub], which="liquid")
        V = props_TP(fluid, Ts, P[sub], which="vapour")
        tg = target[sub]
        lo_k, hi_k = L[key], V[key]
        inside = (st_ok == equilibrium.CONVERGED) & (tg >= lo_k) & (tg <= hi_k)
        idx = np.flatnonzero(sub)
        sat_failed[idx[st_ok != equilibrium.CONVERGED]] = True
        two[idx[inside]] = True
        T[idx[inside]] = Ts[inside]
        with np.errstate(invalid="ignore", divide="ignore"):
            beta[idx[inside]] = ((tg - lo_k) / (hi_k - lo_k))[inside]
        liquid_side = tg < lo_k
        side_hi[idx[liquid_side]] = Ts[liquid_side]
        side_lo[idx[~liquid_side & ~inside]] = Ts[~liquid_side & ~inside]
    rest = ~two
    if np.any(rest):
        Pr = P[rest]
        Tr, fx, ok = single_phase_T_at_P(fluid, Pr, key, target[rest], side_lo[rest], side_hi[rest])
        _raise_if(ok, f"P-{key} solve", dict(P=Pr, T=Tr), fx)
        T[rest] = Tr
    out = _pure_split_state(fluid, T, P, two, beta)
    out.solver_status = np.where(sat_failed, NOT_CONVERGED, CONVERGED).astype(np.int8)
    return out


def _pure_split_state(fluid: Mixture, T, P, two, beta):
    """State of a pure fluid at (T, P): single phase where ``two`` is False,
    saturated liquid and vapour (smallest and largest roots) mixed by β where True."""
    stable = fluid.single_phase(T, P)
    if not np.any(two):
        return stable
    liq = fluid.single_phase(T, P, which=np.where(two, 1, 0))
    vap = fluid.single_phase(T, P, which=np.where(two, 2, 0))
    return _compose(fluid, stable, liq, vap, two, beta)


def _pure_TP(fluid: Mixture, T, P):
    return fluid.single_phase(T, P)


def _pure_fixed_T(fluid: Mixture, T, key, target):
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
