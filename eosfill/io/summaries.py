"""Results as text: the printed summary of ``eosfill run`` and the flags in words.

The vessel and time-resolved layers return data (:class:`eosfill.vessel.Result`,
:class:`eosfill.transient.TransientResult`, :class:`eosfill.vessel.LimitPassed`);
this module renders them in an engineer's units (:mod:`eosfill.io.units`).
``render(result)`` is what the command line prints.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.io.units import format_quantity


def quantity(value, kind, digits=6):
    """An SI value in an engineer's unit, ``"n/a"`` when absent."""
    if value is None:
        return "n/a"
    return format_quantity(value, kind, digits=digits)


def flag_text(flag) -> str:
    """A flag in words: a :class:`LimitPassed` in an engineer's units, other flags as they are."""
    from eosfill.vessel.balances import LimitPassed

    if not isinstance(flag, LimitPassed):
        return str(flag)
    if flag.kind == "density":
        shown = f"{flag.value / 1e3:.5g} kg/L", f"{flag.limit / 1e3:.5g} kg/L"
    elif flag.kind:
        shown = quantity(flag.value, flag.kind), quantity(flag.limit, flag.kind)
    else:
        shown = f"{flag.value:.4g}", f"{flag.limit:.4g}"
    if flag.note == "overfill":
        return f"{flag.quantity} {shown[0]} is above the nominal {shown[1]} ({flag.key}): overfill"
    return f"{flag.quantity} {shown[0]} passes the limit {flag.key} = {shown[1]}" + \
        (f" ({flag.note})" if flag.note else "")


def flag_texts(result) -> list:
    """Every flag of a result, in words."""
    return [flag_text(f) for f in getattr(result, "flags", [])]


def status_lines(r) -> list:
    """A warning line when a result was built on a state whose solver did not report success."""
    from eosfill.errors import CONVERGED, STATUS_TEXT

    status = getattr(r, "status", CONVERGED)
    if status == CONVERGED:
        return []
    return [f"WARNING: built on a state whose solver reported: {STATUS_TEXT.get(status, status)}"]


def end_state_lines(es, label):
    """Lines describing one :class:`eosfill.vessel.EndState`."""
    s = [f"{label}: {quantity(es.T, 'temperature')} ({es.T:.6g} K), {quantity(es.P, 'pressure')}, "
         f"{quantity(es.mass, 'mass')} ({es.n:.6g} mol), phase {es.phase}"]
    if getattr(es, "solid", None):
        s.append("  SOLID REGION: " + "; ".join(es.solid))
    if es.wall_temperature is not None:
        s.append(f"  wall temperature {quantity(es.wall_temperature, 'temperature')}")
    if len(es.composition) > 1:
        s.append("  composition (mole fractions): " + ", ".join(f"{k} {x:.6g}" for k, x in es.composition.items()))
    if es.phase == "two-phase":
        s.append(f"  liquid {quantity(es.liquid_mass, 'mass')}, vapour {quantity(es.vapour_mass, 'mass')}, "
                 f"liquid volume fraction {es.liquid_volume_fraction:.4g}")
    return s


def settled_lines(st):
    """Lines describing a :class:`eosfill.vessel.Settled` state (V7)."""
    s = [f"settled at {quantity(st.T, 'temperature')} (constant volume): {quantity(st.P, 'pressure')}, "
         f"phase {st.phase}"]
    if st.nominal_mass is not None:
        s.append(f"  a fill to the nominal {quantity(st.nominal_pressure, 'pressure')} at "
                 f"{quantity(st.T, 'temperature')} holds {quantity(st.nominal_mass, 'mass')}; "
                 f"short fill {quantity(st.short_fill, 'mass')}")
    if st.state_of_charge is not None:
        s.append(f"  state of charge {100 * st.state_of_charge:.4g} % (density relative to "
                 f"{quantity(st.nominal_pressure, 'pressure')} at {quantity(st.nominal_temperature, 'temperature')})")
    return s


def result_text(r) -> str:
    """The summary of an end-state result (fill, cascade, liquefied-gas fill, vent)."""
    from eosfill.vessel.balances import CAUTION

    out = [f"result: {r.kind}" + (f" - {r.title}" if r.title else ""),
           f"vessel volume {quantity(r.volume, 'volume')}"]
    if r.supply:
        out.append(f"supply: {quantity(r.supply['T'], 'temperature')}, {quantity(r.supply['P'], 'pressure')} "
                   f"(enters with its own enthalpy: a throttle is isenthalpic)")
    if r.initial is not None:
        out += end_state_lines(r.initial, "initial")
    else:
        out.append("initial: empty (evacuated)")
    met = "met" if r.stop_met else "NOT MET"
    out.append(f"stopped by: {r.stop}" + ("" if r.stop == r.stop_requested else
                                          f" (asked: {r.stop_requested}, {met})"))
    for st in r.stages:
        out.append(f"  bank {st['bank']}: {st['reason']}; bank ends at {quantity(st['bank_T'], 'temperature')}, "
                   f"{quantity(st['bank_P'], 'pressure')}, gave {quantity(st['mass_drawn'], 'mass')}; vessel then "
                   f"{quantity(st['vessel_T'], 'temperature')}, {quantity(st['vessel_P'], 'pressure')}, "
                   f"{quantity(st['vessel_mass'], 'mass')}")
    out += end_state_lines(r.final, "final")
    if r.vent:
        v = r.vent
        out.append(f"  let out {quantity(v['mass_out'], 'mass')}; lowest gas temperature "
                   f"{quantity(v['min_T'], 'temperature')} (a safety figure for the vessel's material)")
        if v.get("liquid_at_start"):
            out.append("  liquid present from the start (the content is two-phase)")
        else:
            out.append("  liquid formed: " + (f"yes (first seen on the path at {quantity(v['dew_P'], 'pressure')})"
                                              if v["liquid_formed"] else "no"))
    if r.liquefied:
        q = r.liquefied
        out.append(f"  filling density {q['fill_density'] / 1e3:.5g} kg/L of vessel volume")
        if q.get("liquid_full_T") is not None:
            out.append(f"  liquid-full (hydraulically full) on warming at {quantity(q['liquid_full_T'], 'temperature')}")
        elif q.get("dry_T") is not None:
            out.append(f"  never liquid-full on warming: the liquid is gone at {quantity(q['dry_T'], 'temperature')}")
        else:
            out.append(f"  {q.get('liquid_full_note', '')}")
        for line in q.get("defaults", []):
            out.append(f"  {line}")
    if r.settled is not None:
        out += settled_lines(r.settled)
    if r.comparison:
        c = r.comparison
        out.append(f"one bank instead ({c['description']}): vessel {quantity(c['T'], 'temperature')}, "
                   f"{quantity(c['P'], 'pressure')}, {quantity(c['mass'], 'mass')}; stopped by {c['stop']}; "
                   f"bank ends at {quantity(c['bank_P'], 'pressure')}")
    out.append(f"energy closure {r.energy_closure:.3e} (relative to n R T), mass closure "
               f"{r.mass_closure:.3e} (relative; checked against an independent recomputation)")
    out += status_lines(r)
    for n in r.notes:
        out.append(f"note: {n}")
    for fl in flag_texts(r):
        out.append(f"FLAG: {fl}")
    out.append(CAUTION)
    return "\n".join(out)


def transient_text(r) -> str:
    """The summary of a time-resolved result; peaks located on the dense output."""
    from eosfill.transient.model import CAUTION

    def C(T):
        return f"{T - 273.15:.2f} °C"

    lines = list(r.description)
    status = "complete" if r.complete else "INCOMPLETE (integration stopped early)"
    lines.append(f"time-resolved {r.kind}: {status}; stopped at {r.t[-1]:.6g} s: {r.stop_reason}")
    lines.append(f"pressure {r.P[0] / 1e5:.6g} -> {r.P[-1] / 1e5:.6g} bar; "
                 f"mass {r.mass[0]:.6g} -> {r.mass[-1]:.6g} kg")
    for name, label in (("T_gas", "gas temperature"), ("T_wall_inner", "inner wall temperature"),
                        ("T_wall_outer", "outer wall temperature")):
        hi, thi = r.peak(name, "max")
        lo, tlo = r.peak(name, "min")
        if math.isfinite(hi):
            lines.append(f"{label}: max {C(hi)} at {thi:.4g} s, min {C(lo)} at {tlo:.4g} s, "
                         f"end {C(float(np.asarray(getattr(r, name))[-1]))}")
    Pmax, tP = r.peak("P")
    lines.append(f"max pressure {Pmax / 1e5:.6g} bar at {tP:.4g} s")
    lines.append(f"mass in {r.mass_in:.6g} kg, out {r.mass_out:.6g} kg; heat from ambient "
                 f"{r.heat_from_ambient:.6g} J")
    lines.append(f"closure (relative): mass {r.mass_closure:.2e}, energy {r.energy_closure:.2e}")
    lines += status_lines(r)
    if r.liquid_appeared:
        lines.append("a liquid phase is present (homogeneous equilibrium assumed)")
    for f in flag_texts(r):
        lines.append(f"FLAG: {f}")
    lines.append(CAUTION)
    return "\n".join(lines)


def render(result) -> str:
    """The printed summary of any result of ``eosfill run``."""
    if hasattr(result, "t"):
        return transient_text(result)
    return result_text(result)
