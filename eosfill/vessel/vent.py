"""Vents of a rigid vessel to an end state: (V4) isentropic, (V5) with a wall.

The balances are written out in :mod:`eosfill.vessel` (V1)-(V7); this module
holds the vent: the content left in the vessel follows its own isentrope
(homogeneous outflow), or, with a wall in equilibrium with the gas, the
energy E = n u + C_w T is integrated in ln n.
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.errors import ConvergenceError, InputError
from eosfill.vessel.balances import VENT_STOPS, EndState, Result, Stream, Vessel, _brentq, _energy_scale, _f, _initial_content, _limit_flags, _molar_mass, _positive, _recomputed_content, _refuse_unclosed, _state, _with_status, common_fluid

def _gauss_legendre(a, b, m=24, panels=4):
    x, w = np.polynomial.legendre.leggauss(m)
    edges = np.linspace(a, b, panels + 1)
    xs, ws = [], []
    for lo, hi in zip(edges[:-1], edges[1:]):
        xs.append(0.5 * (hi - lo) * x + 0.5 * (hi + lo))
        ws.append(0.5 * (hi - lo) * w)
    return np.concatenate(xs), np.concatenate(ws)


def _isentrope_enthalpy_integral(fluid, z, s0, V, n_a, n_b):
    """∫_{n_b}^{n_a} h dn along the isentrope s = s0 at v = V/n (Gauss-Legendre in ln n)."""
    # h(n) has a kink where the content turns two-phase (dew point): integrate each side apart
    def two(x):
        return np.atleast_1d(_state(fluid, z, s=np.full(np.shape(x), s0), v=V / np.exp(x)).phase) == "two-phase"

    xa, xb = math.log(n_a), math.log(n_b)
    grid = np.linspace(xa, xb, 17)
    ph = two(grid)
    cuts = [xa]
    for i in np.flatnonzero(ph[1:] != ph[:-1]):
        lo, hi, plo = grid[i], grid[i + 1], ph[i]
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            if two(np.array([mid]))[0] == plo:
                lo = mid
            else:
                hi = mid
            if abs(hi - lo) < 1e-14 * max(1.0, abs(mid)):
                break
        cuts.append(0.5 * (lo + hi))
    cuts.append(xb)
    total = 0.0
    for a, b in zip(cuts[:-1], cuts[1:]):
        x, w = _gauss_legendre(b, a)
        n = np.exp(x)
        st = _state(fluid, z, s=np.full(n.shape, s0), v=V / n)
        total += float(np.sum(w * n * np.asarray(st.h)))
    return total


@_with_status
def vent(vessel: Vessel, initial: Stream, *, stop="target_pressure", target=None, temperature_limit=None,
         limits=None):
    """End state of an adiabatic vent of a rigid vessel.

    Without a wall (C_w = 0) the content left follows its own isentrope
    (V4): s_f = s_0 at v_f = V/n_f; the outflow leaves at the vessel's
    state (homogeneous, also when two-phase).  With a wall in equilibrium
    with the gas, (V5) is integrated in ln n.

    Parameters
    ----------
    vessel : Vessel
    initial : Stream
        Content before the vent (T with P or mass).
    stop : {"target_pressure", "target_mass"}
    target : float
        End pressure [Pa] or mass left [kg].
    temperature_limit : float, optional
        Stop earlier if the gas would cool to this temperature [K].
    limits : dict, optional
        As for :func:`fill`.
    """
    if not isinstance(vessel, Vessel):
        raise InputError("vessel", vessel, "an eosfill.vessel.Vessel")
    if stop not in VENT_STOPS:
        raise InputError("stop", stop, ", ".join(VENT_STOPS))
    target = _positive(stop, target, "a positive value (SI) for the stop criterion")
    V = vessel.volume
    fluid, (z,) = common_fluid(initial.fluid)
    n0, st0 = _initial_content(fluid, z, initial, V)
    M = _molar_mass(fluid, z)
    P0, T0, s0, U0 = _f(st0.P), _f(st0.T), _f(st0.s), n0 * _f(st0.u)
    if stop == "target_pressure" and target >= P0:
        raise InputError("target_pressure", target, f"below the initial pressure {P0:.6g} Pa")
    if stop == "target_mass" and target >= n0 * M:
        raise InputError("target_mass", target, f"below the initial mass {n0 * M:.6g} kg")
    if temperature_limit is not None:
        temperature_limit = _positive("temperature_limit", temperature_limit, "a temperature > 0 K")
    Cw = vessel.wall_heat_capacity
    Tw0 = vessel.wall_temperature if vessel.wall_temperature is not None else T0
    notes = ["the vessel is rigid and adiabatic; the gas leaves at the vessel's own state (homogeneous "
             "outflow, also when two-phase)"]
    flags = []
    if Cw == 0.0:
        notes.append("the content left in the vessel follows its own isentrope")
        res = _vent_isentropic(fluid, z, V, n0, s0, stop, target, temperature_limit)
    else:
        if abs(Tw0 - T0) > 1e-9 * T0:
            raise InputError("wall_temperature", Tw0, f"equal to the gas temperature {T0:.6g} K at the start of a "
                             "vent with the wall in equilibrium")
        notes.append("the wall stays at the gas temperature (thermal equilibrium, lumped heat capacity)")
        res = _vent_wall(fluid, z, V, n0, T0, Cw, stop, target, temperature_limit)
    n_f, st_f, E_out, reached, path = res
    met = reached == stop
    if reached == "temperature_limit":
        notes.append(f"the temperature limit ended the vent before {stop} was reached")
    final = EndState.of(fluid, st_f, n_f, V, wall=_f(st_f.T) if Cw > 0 else None)
    initial_es = EndState.of(fluid, st0, n0, V, wall=T0 if Cw > 0 else None)
    # closures (V4)/(V5) and (V1): the reported end and initial states recomputed by their
    # own evaluations (not the solved states); homogeneous outflow: the composition stays z
    nf_r, Uf_r, p_res = _recomputed_content(fluid, final, V)
    n0_r, U0_r, p0_res = _recomputed_content(fluid, initial_es, V)
    e_cl = (Uf_r + Cw * final.T - U0_r - Cw * T0 + E_out) / _energy_scale(n_f, final.T)
    m_cl = (nf_r * M - (n0_r * M - (n0 - n_f) * M)) / (nf_r * M)
    _refuse_unclosed("vent", e_cl, m_cl, max(abs(p_res), abs(p0_res)), dict(T=final.T, P=final.P, n=n_f))
    # liquid formation along the path (dew point crossed)
    phases = [(p["n"], p["phase"], p["P"]) for p in path]
    liquid = [p for p in phases if p[1] in ("two-phase", "liquid")]
    lowest = min([p["T"] for p in path] + [final.T])
    vent_info = dict(mass_out=(n0 - n_f) * M, min_T=lowest, liquid_formed=bool(liquid) or final.phase == "two-phase",
                     dew_P=(liquid[0][2] if liquid else (final.P if final.phase == "two-phase" else None)),
                     E_out=E_out)
    if vent_info["liquid_formed"]:
        flags.append("a liquid phase forms during the vent (dew point crossed)")
    lim = dict(limits or {})
    lim["_volume"] = V
    _limit_flags(final, lim, flags, lowest_T=lowest)
    return Result(kind="vent", volume=V, stop=reached, stop_requested=stop, stop_met=met, initial=initial_es,
                  final=final, energy_closure=float(e_cl), mass_closure=float(m_cl), vent=vent_info,
                  curve=[dict(mass=p["n"] * M, T=p["T"], P=p["P"]) for p in path],
                  energy=dict(U0=U0, Uf=n_f * _f(st_f.u), H_out=E_out, wall=Cw * (_f(st_f.T) - T0)),
                  flags=flags, notes=notes)


def _path_points(fluid, z, V, s0, n0, n_f, k=9):
    n = np.geomspace(n0, n_f, k)
    st = _state(fluid, z, s=np.full(n.shape, s0), v=V / n)
    ph = np.atleast_1d(st.phase)
    return [dict(n=float(a), T=float(b), P=float(c), phase=str(d))
            for a, b, c, d in zip(n, np.atleast_1d(st.T), np.atleast_1d(st.P), ph)]


def _vent_isentropic(fluid, z, V, n0, s0, stop, target, T_lim):
    M = _molar_mass(fluid, z)
    reached = stop
    if stop == "target_pressure":
        st = _state(fluid, z, P=target, s=s0)
        n_f = V / _f(st.v)
    else:
        n_f = target / M
        st = _state(fluid, z, s=s0, v=V / n_f)
    if T_lim is not None and _f(st.T) < T_lim:
        # the gas cools monotonically along the isentrope of an expansion
        g = lambda n: _f(_state(fluid, z, s=s0, v=V / n).T) - T_lim  # noqa: E731
        if g(n0) <= 0:
            n_f, reached = n0 * (1 - 1e-12), "temperature_limit"
        else:
            n_f = _brentq(g, n_f, n0, xtol=1e-14 * n0, what="vent to temperature limit")
            reached = "temperature_limit"
        st = _state(fluid, z, s=s0, v=V / n_f)
    E_out = _isentrope_enthalpy_integral(fluid, z, s0, V, n0, n_f)
    return n_f, st, E_out, reached, _path_points(fluid, z, V, s0, n0, n_f)


def _T_of_energy(fluid, z, V, n, E, Cw, T_guess, maxiter=60):
    """T with n u(T, V/n) + C_w T = E (V5): Newton on T, derivative n c_v + C_w
    (single phase: analytic c_v; two phase: backward difference of the
    equilibrium u(T, v), which stays inside the two-phase region at fixed v)."""
    v = V / n
    T = T_guess
    st = None
    for _ in range(maxiter):
        st = _state(fluid, z, T=T, v=v)
        f = n * _f(st.u) + Cw * T - E
        if str(st.phase) != "two-phase":
            cv = _f(st.cv)
        else:
            dT = 1e-6 * T
            cv = (_f(st.u) - _f(_state(fluid, z, T=T - dT, v=v).u)) / dT
        step = -f / (n * cv + Cw)
        step = max(min(step, 0.2 * T), -0.2 * T)
        T += step
        if abs(step) <= 1e-13 * T:
            return T, _state(fluid, z, T=T, v=v)
    raise ConvergenceError("vent with wall (V5)", "wall-and-gas temperature not found from the energy",
                           dict(n=n, T=T, E=E))


def _vent_wall(fluid, z, V, n0, T0, Cw, stop, target, T_lim):
    """(V5) in energy form: E = n u + C_w T_w with T_w = T, x = ln n,

        dE/dx = n h(T, V/n)          (the gas leaves with its own enthalpy)

    integrated by ``solve_ivp`` (DOP853, rtol 1e-11); T at each x from E by
    Newton (:func:`_T_of_energy`).  Carrying E rather than T keeps the
    balance exact across the dew point, where c_v jumps."""
    from scipy.integrate import solve_ivp

    M = _molar_mass(fluid, z)
    x0 = math.log(n0)
    if stop == "target_mass":
        x_end = math.log(target / M)
    else:
        x_end = math.log(n0 * 1e-6)
    st0 = _state(fluid, z, T=T0, v=V / n0)
    E0 = n0 * _f(st0.u) + Cw * T0
    memo = {"T": T0}

    def T_at(x, E):
        T, st = _T_of_energy(fluid, z, V, math.exp(x), E, Cw, memo["T"])
        memo["T"] = T
        return T, st

    def rhs(x, y):
        n = math.exp(x)
        _, st = T_at(x, y[0])
        return [n * _f(st.h)]

    events = []
    if stop == "target_pressure":
        def ev_P(x, y):
            return _f(T_at(x, y[0])[1].P) - target
        ev_P.terminal, ev_P.direction = True, 0
        events.append(ev_P)
    if T_lim is not None:
        def ev_T(x, y):
            return T_at(x, y[0])[0] - T_lim
        ev_T.terminal, ev_T.direction = True, 0
        events.append(ev_T)
    sol = solve_ivp(rhs, (x0, x_end), [E0], method="DOP853", rtol=1e-11, atol=1e-9 * abs(E0) + 1e-6,
                    events=events or None, dense_output=False)
    if sol.status < 0:
        raise ConvergenceError("vent with wall (V5)", sol.message, dict(n=math.exp(sol.t[-1]), T=memo["T"]))
    reached = stop
    x_f, E_f = sol.t[-1], sol.y[0, -1]
    if sol.status == 1:
        k = [i for i, e in enumerate(sol.t_events) if len(e)][0]
        reached = "target_pressure" if (stop == "target_pressure" and k == 0) else "temperature_limit"
        x_f = sol.t_events[k][0]
        E_f = sol.y_events[k][0][0]
    elif stop == "target_pressure":
        raise ConvergenceError("vent with wall (V5)", "target pressure not reached", dict(T=memo["T"]))
    n_f = math.exp(x_f)
    T_f, st = T_at(x_f, E_f)
    path = []
    for x, E in zip(sol.t, sol.y[0]):
        T, s_ = T_at(x, E)
        path.append(dict(n=math.exp(x), T=float(T), P=_f(s_.P), phase=str(s_.phase)))
    # energy that left: E0 - E_f (= -∫ h dn along the integration)
    return n_f, st, float(E0 - E_f), reached, path
