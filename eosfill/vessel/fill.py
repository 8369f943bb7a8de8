"""The fill from a supply at constant state, its stop criteria, and the pieces the
fill, vent and cascade share (initial content, settled state (V7), limit flags,
bracket scans).

Neighbours in :mod:`eosfill.vessel`: inputs and helpers in ``inputs.py``, the
content's end state and the closures in ``closure.py``, result types in
``results.py``, the fill in ``fill.py``, liquefied-gas figures in ``liquefied.py``;
the map is :mod:`~eosfill.vessel.balances`.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import InputError
from eosfill.vessel.closure import _Content, _fill_closure, _refuse_unclosed
from eosfill.vessel.fill_rows import SUPPLY_SLACK, FillRows, densest, first_guess, target_error, unmet_flag
from eosfill.vessel.inputs import (
    FILL_STOPS,
    T_NOMINAL,
    Stream,
    Vessel,
    _brentq,
    _f,
    _molar_mass,
    _positive,
    _state,
    _with_status,
    common_fluid,
)
from eosfill.vessel.liquefied import _liquefied_figures
from eosfill.vessel.results import EndState, LimitPassed, Result, Settled



# --------------------------------------------------------------------------
# shared pieces
# --------------------------------------------------------------------------
def _initial_content(fluid, z0, stream, V):
    """(n0, state) of the initial content; InputError names the inconsistent input."""
    if stream is None:
        return 0.0, None
    if stream.P is not None:
        st = _state(fluid, z0, T=stream.T, P=stream.P)
        return V / _f(st.v), st
    M = _molar_mass(fluid, z0)
    n0 = stream.mass / M
    try:
        st = _state(fluid, z0, T=stream.T, v=V / n0)
    except InputError as exc:
        raise InputError("initial.mass", stream.mass,
                         f"a mass the vessel can hold at {stream.T:.6g} K ({exc})") from None
    return n0, st


def _settle(fluid, z, n, V, T_settle, nominal_pressure=None, nominal_temperature=T_NOMINAL,
            state_of_charge=False):
    st = _state(fluid, z, T=T_settle, v=V / n)
    out = Settled(T=T_settle, P=_f(st.P), phase=str(st.phase))
    if nominal_pressure is not None:
        M = _molar_mass(fluid, z)
        nom = _state(fluid, z, T=T_settle, P=nominal_pressure)
        out.nominal_pressure = nominal_pressure
        out.nominal_temperature = nominal_temperature
        out.nominal_mass = V / _f(nom.v) * M
        out.short_fill = out.nominal_mass - n * M
        if state_of_charge:
            ref = _state(fluid, z, T=nominal_temperature, P=nominal_pressure)
            out.state_of_charge = (n / V) * _f(ref.v)
    return out


def _overfill_flag(settled, flags):
    if settled is not None and settled.nominal_pressure is not None and settled.P > settled.nominal_pressure:
        flags.append(LimitPassed("vessel.working_pressure", "settled pressure", settled.P, settled.nominal_pressure,
                                 "pressure", "overfill"))


def _limit_flags(final: EndState, limits, flags, lowest_T=None, highest_T=None):
    flags.extend(m for m in final.solid if m not in flags)  # solid region, never silent
    if not limits:
        return
    hiT = final.T if highest_T is None else highest_T
    loT = final.T if lowest_T is None else lowest_T
    tw = final.wall_temperature
    checks = [("max_gas_temperature", hiT, ">", "gas temperature", "temperature"),
              ("min_gas_temperature", loT, "<", "gas temperature", "temperature"),
              ("max_pressure", final.P, ">", "pressure", "pressure")]
    if tw is not None:
        checks += [("max_wall_temperature", tw if highest_T is None else max(tw, hiT), ">", "wall temperature", "temperature"),
                   ("min_wall_temperature", tw if lowest_T is None else min(tw, loT), "<", "wall temperature", "temperature")]
    checks.append(("max_fill_density", final.mass, ">", "filling density", "density"))
    if final.liquid_volume_fraction is not None:
        checks.append(("max_liquid_volume_fraction", final.liquid_volume_fraction, ">", "liquid volume fraction", None))
    for key, value, op, words, kind in checks:
        lim = limits.get(key)
        if lim is None or value is None:
            continue
        if key == "max_fill_density":
            value = final.mass / limits["_volume"]
        passed = value > lim if op == ">" else value < lim
        if passed:
            flags.append(LimitPassed(key, words, float(value), float(lim), kind))


def _scan_first(func, a, b, npts=12):
    """First x in (a, b] where func(x) >= 0 on a grid, refined; None if none.

    Returns (x, crossed_at_start)."""
    xs = np.linspace(a, b, npts + 1)
    vals = []
    for i, x in enumerate(xs):
        val = func(x)
        vals.append(val)
        if val >= 0:
            if i == 0:
                return x, True
            return _brentq(func, xs[i - 1], x, xtol=1e-12 * abs(x), what="temperature limit"), False
    return None, False


# --------------------------------------------------------------------------
# fill from a supply at constant state
# --------------------------------------------------------------------------
@_with_status
def fill(vessel: Vessel, supply: Stream, initial: Stream | None = None, *, stop="target_pressure",
         target=None, temperature_limit=None, heat=0.0, settled_temperature=None,
         nominal_pressure=None, nominal_temperature=T_NOMINAL, state_of_charge=False,
         limits=None, liquefied=False, liquefied_defaults=True, _content=None):
    """End state of a fill of a rigid vessel from a supply at constant (T, P).

    Balances (V1)-(V3) of the module docstring; the supply's own enthalpy
    enters (isenthalpic throttle).  The amount admitted n_f - n_0 is found
    so that the stop criterion holds at the end.

    Parameters
    ----------
    vessel : Vessel
    supply : Stream
        Composition (its ``fluid``), ``T`` [K] and ``P`` [Pa].
    initial : Stream or None
        What the vessel holds (``T`` with ``P`` or ``mass``); None: empty.
    stop : str
        One of ``"target_pressure"`` [Pa], ``"target_mass"`` [kg],
        ``"target_settled_pressure"`` [Pa, at ``settled_temperature``],
        ``"target_fill_density"`` [kg/m³], ``"supply_pressure"`` (no target).
    target : float
        The value of the stop criterion, SI.
    temperature_limit : float, optional
        Stop earlier if the gas would reach this temperature [K].
    heat : float
        Heat added to the content over the fill [J] (negative: removed);
        each candidate end point is taken to have received all of it.
    settled_temperature : float, optional
        Temperature of the settled state [K] (default 15 °C).
    nominal_pressure, nominal_temperature : float, optional
        Nominal working pressure [Pa] (for the short fill) and the
        temperature it refers to [K] (for the state of charge).
    state_of_charge : bool
        Report ρ_f / ρ(nominal_pressure, nominal_temperature).
    limits : dict, optional
        Flag values passed: ``max_gas_temperature``, ``min_gas_temperature``,
        ``max_wall_temperature``, ``min_wall_temperature``, ``max_pressure``,
        ``max_fill_density``, ``max_liquid_volume_fraction`` (SI).
    liquefied : bool
        Also report the liquefied-gas figures (liquid-full temperature,
        filling density and the P200 defaults).

    Returns
    -------
    Result

    Raises
    ------
    InputError
        A target the supply cannot reach by its nature (pressure above the
        supply's, an end below the start), an unknown stop criterion.
    """
    if not isinstance(vessel, Vessel):
        raise InputError("vessel", vessel, "an eosfill.vessel.Vessel")
    if stop not in FILL_STOPS:
        raise InputError("stop", stop, ", ".join(FILL_STOPS))
    if stop != "supply_pressure":
        target = _positive(stop, target, "a positive value (SI) for the stop criterion")
    if supply.P is None:
        raise InputError("supply.P", None, "the supply pressure [Pa]")
    V = vessel.volume
    fluids = [supply.fluid] + ([initial.fluid] if initial is not None else [])
    fluid, zs = common_fluid(*fluids)
    z_in = zs[0]
    z0 = zs[1] if initial is not None else z_in
    T_settle = T_NOMINAL if settled_temperature is None else _positive("settled_temperature", settled_temperature)
    st_in = _state(fluid, z_in, T=supply.T, P=supply.P)
    h_in = _f(st_in.h)
    M_in = _molar_mass(fluid, z_in)
    n0, st0 = _initial_content(fluid, z0, initial, V)
    P0 = _f(st0.P) if st0 is not None else 0.0
    M0 = _molar_mass(fluid, z0)
    m0 = n0 * M0
    err = target_error(stop, target, supply.P, P0, m0, V)
    if err is not None:
        raise err
    if temperature_limit is not None:
        temperature_limit = _positive("temperature_limit", temperature_limit, "a temperature > 0 K")
    U0 = n0 * _f(st0.u) if st0 is not None else 0.0
    T0 = initial.T if initial is not None else None
    c = _Content(fluid, vessel, n0, z0, U0, T0, heat)

    def at(n):
        N = n - n0
        z = c.composition(N, z_in)
        return c.end_state(n, z, U0 + N * h_in + c.Q), z

    def mass(n):
        return m0 + (n - n0) * M_in

    n_guess = first_guess(n0, V, _f(st_in.v), str(st_in.phase))
    notes = ["the supply enters with its own enthalpy (a throttle or regulator between supply and vessel "
             "is isenthalpic); the vessel is rigid and, apart from the heat given, adiabatic"]
    if vessel.wall_heat_capacity > 0:
        notes.append("the wall ends at the gas temperature (thermal equilibrium, lumped heat capacity)")
    flags = [f"supply: {m}" for m in st_in.solid_risk.messages]  # a solid in the supply line
    # the fill as one row of FillRows: the code of the batch (eosfill.vessel.batch.fill_to_stop)
    rows = FillRows(fluid, z_in, z0, V, n0, U0, h_in, c.Q, T_settle, supply.P,
                    np.nan if target is None else target, n_guess, densest(fluid, V),
                    content=c if vessel.wall_heat_capacity > 0 else None)
    start = rows.start()
    if start[1]:
        raise start[1][0]
    n_lo = float(start[0][0])

    met, reached = True, stop
    if stop == "target_mass":
        n_end = n0 + (target - m0) / M_in
    elif stop == "target_fill_density":
        n_end = n0 + (target * V - m0) / M_in
    else:
        ns, reach, errors = rows.solve(stop, start)
        if errors:
            raise errors[0]
        n_end, reached = float(ns[0]), str(reach[0])
        if reached != stop:
            met = False
            flags.append(unmet_flag(stop, target, mass(n_end)))
    if stop in ("target_mass", "target_fill_density") and _f(at(n_end)[0].P) > supply.P * (1.0 + SUPPLY_SLACK):
        # the flow stops at the supply pressure before the criterion is met
        ns, _, errors = rows.solve("supply_pressure", start)
        if errors:
            raise errors[0]
        n_end, met, reached = float(ns[0]), False, "supply_pressure"
        flags.append(unmet_flag(stop, target, mass(n_end)))

    curve_n = np.linspace(n_lo, n_end, 7)
    curve = []
    if temperature_limit is not None:
        n_T, at_start = _scan_first(lambda n: at(n)[0].T - temperature_limit, n_lo, n_end)
        if n_T is not None:
            reached, met = "temperature_limit", stop == "temperature_limit"
            n_end = n_T
            if at_start:
                flags.append(f"the gas is at or above the temperature limit {temperature_limit:.6g} K from the "
                             "first gas admitted: the fill cannot proceed under this limit")
            else:
                notes.append(f"the temperature limit ended the fill before {stop} was reached")
    for n in curve_n:
        if n <= n_end * (1 + 1e-12):
            st_n = at(n)[0]
            curve.append(dict(mass=mass(n), T=_f(st_n.T), P=_f(st_n.P)))

    st_f, z_f = at(n_end)
    Tw = _f(st_f.T) if vessel.wall_heat_capacity > 0 else None
    final = EndState.of(fluid, st_f, n_end, V, wall=Tw)
    initial_es = EndState.of(fluid, st0, n0, V, wall=c.Tw0 if vessel.wall_heat_capacity > 0 else None) if st0 is not None else None
    # closures (V1), (V2): the reported end and initial states and the supply recomputed
    # independently (not the solved states); a result that does not close is refused
    N = n_end - n0
    e_cl, m_cl, p_res = _fill_closure(fluid, V, final, initial_es, supply.T, supply.P, z_in, N, c.Cw, c.Tw0,
                                      c.Q)
    _refuse_unclosed("fill", e_cl, m_cl, p_res, dict(T=final.T, P=final.P, n=final.n, supply_T=supply.T,
                                                      supply_P=supply.P))
    settled = _settle(fluid, z_f, n_end, V, T_settle, nominal_pressure, nominal_temperature, state_of_charge)
    lim = dict(limits or {})
    lim["_volume"] = V
    _limit_flags(final, lim, flags)
    _overfill_flag(settled, flags)
    res = Result(kind="liquefied_fill" if liquefied else "fill", volume=V, stop=reached, stop_requested=stop,
                 stop_met=met, initial=initial_es, final=final, energy_closure=float(e_cl),
                 mass_closure=float(m_cl), settled=settled,
                 supply=dict(T=supply.T, P=supply.P, h=h_in, phase=str(st_in.phase),
                             composition={k: float(x) for k, x in zip(fluid.names, z_in) if x > 0}),
                 curve=curve, energy=dict(U0=U0, Uf=n_end * _f(st_f.u), H_in=N * h_in, Q=c.Q,
                                          wall=c.Cw * (_f(st_f.T) - (c.Tw0 or 0.0))),
                 flags=flags, notes=notes)
    if liquefied:
        res.liquefied = _liquefied_figures(fluid, z_f, n_end, V, final, lim, flags, liquefied_defaults)
    return res
