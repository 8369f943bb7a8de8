"""Many scenarios at once: end-state fills and vents that share a mixture run as vectorised
batches (:func:`eosfill.vessel.batch.fill_to_amount`, :func:`eosfill.vessel.batch.vent_isentropic`),
with rows equal to :func:`eosfill.io.sweep_rows.result_row` of single runs; the rest one at a time.

Neighbours: :mod:`eosfill.io.sweep` (the map of this split: studies of a scenario file, whose
cases call :func:`run_scenarios`), :mod:`eosfill.io.sweep_rows` (the output columns).
"""
from __future__ import annotations

import numpy as np

from eosfill.io.sweep_rows import NAN, result_row


# --------------------------------------------------------------------------
# many scenarios at once: vectorised end-state fills where possible
# --------------------------------------------------------------------------
def _batchable(sc):
    """A fill the vector path computes exactly as ``fill`` does (see eosfill.vessel.batch)."""
    st, v = sc.stop, sc.vessel
    return (sc.kind == "fill" and v.wall_mass is None and v.wall_specific_heat is None
            and st.temperature_limit is None and _fill_stop(sc) is not None
            and sc.supply.temperature_schedule is None)


def _fill_stop(sc):
    """(stop of eosfill.vessel.batch.fill_to_stop, target) of a fill scenario, or None."""
    st = sc.stop
    if st.target_mass is not None:
        return "target_mass", st.target_mass
    if st.target_fill_density is not None:
        return "target_mass", st.target_fill_density * sc.vessel.volume
    for key in ("target_pressure", "target_settled_pressure"):
        if getattr(st, key) is not None:
            return key, getattr(st, key)
    if st.supply_pressure:
        return "supply_pressure", NAN
    return None


def _batchable_vent(sc):
    """An adiabatic vent (no wall, no temperature limit) of the fluid's own composition."""
    st, v = sc.stop, sc.vessel
    return (sc.kind == "vent" and v.wall_mass is None and v.wall_specific_heat is None
            and st.temperature_limit is None and sc.initial.composition is None
            and (st.target_pressure is not None or st.target_mass is not None))


def _mixture_key(sc):
    f = sc.fluid_spec
    streams = (sc.supply.composition if sc.supply is not None else None, sc.initial.composition)
    return (tuple(sc.component_names()), tuple(sc.mole_fractions()), f.model, f.volume_shift,
            tuple((tuple(k.pair), k.kij) for k in f.kij),
            tuple(None if c is None else tuple(sc.mole_fractions(c)) for c in streams))


def run_scenarios(scenarios):
    """Outputs (dict, :func:`result_row`) or the exception of each scenario.

    Batchable fills sharing a mixture go through
    :func:`eosfill.vessel.batch.fill_to_amount` in one call; every other
    scenario, and any case the batch leaves, through
    :func:`eosfill.io.jobs.run_scenario` one at a time."""
    from eosfill.io import jobs
    from eosfill.vessel.batch import fill_to_stop

    from eosfill.vessel.batch import vent_isentropic

    outs = [None] * len(scenarios)
    groups, vents = {}, {}
    for i, sc in enumerate(scenarios):
        if _batchable(sc):
            groups.setdefault((_mixture_key(sc), _fill_stop(sc)[0]), []).append(i)
        elif _batchable_vent(sc):
            vents.setdefault(_mixture_key(sc), []).append(i)
    for rows in vents.values():
        if len(rows) < 2:
            continue
        scs = [scenarios[i] for i in rows]

        def vals(get):
            return np.array([np.nan if get(s) is None else get(s) for s in scs], dtype=float)

        try:
            res = vent_isentropic(scs[0].fluid(), scs[0].mole_fractions(), vals(lambda s: s.vessel.volume),
                                  vals(lambda s: s.initial.temperature),
                                  target_pressure=vals(lambda s: s.stop.target_pressure),
                                  target_mass=vals(lambda s: s.stop.target_mass),
                                  P0=vals(lambda s: s.initial.pressure), mass0=vals(lambda s: s.initial.mass))
        except Exception:  # noqa: BLE001 - the single path says what is wrong, case by case
            continue
        for k, i in enumerate(rows):
            if res["ok"][k]:
                outs[i] = _batch_vent_row(scenarios[i], res, k)
    for (_, stop), rows in groups.items():
        if len(rows) < 2:
            continue
        scs = [scenarios[i] for i in rows]
        first = scs[0]

        def arr(get):
            return np.array([np.nan if get(s) is None else get(s) for s in scs], dtype=float)

        try:
            res = fill_to_stop(
                first.fluid(), first.mole_fractions(first.supply.composition), arr(lambda s: s.vessel.volume),
                arr(lambda s: s.supply.temperature), arr(lambda s: s.supply.pressure), stop,
                np.array([_fill_stop(s)[1] for s in scs], dtype=float), arr(lambda s: s.stop.settled_temperature),
                T0=arr(lambda s: None if s.initial.empty else s.initial.temperature),
                P0=arr(lambda s: s.initial.pressure), mass0=arr(lambda s: s.initial.mass),
                nominal_pressure=arr(lambda s: s.vessel.working_pressure),
                nominal_temperature=arr(lambda s: s.vessel.working_temperature),
                z0=first.mole_fractions(first.initial.composition))
        except Exception:  # noqa: BLE001 - the single path says what is wrong, case by case
            continue
        for k, i in enumerate(rows):
            if res["error"][k] is not None:
                outs[i] = res["error"][k]  # the exception the single run raises
            elif res["ok"][k]:
                outs[i] = _batch_row(scenarios[i], res, k)
    for i, sc in enumerate(scenarios):
        if outs[i] is None:
            try:
                outs[i] = result_row(jobs.run_scenario(sc, write=False))
            except Exception as exc:  # noqa: BLE001 - a failure row
                outs[i] = exc
    return outs


def _batch_row(sc, res, k):
    """:func:`result_row` of a fill computed by the batch (same numbers, same flags)."""
    from eosfill.io import jobs
    from eosfill.vessel.balances import EndState, Settled, _limit_flags, _overfill_flag

    mass = float(res["mass"][k])
    final = EndState(T=float(res["T"][k]), P=float(res["P"][k]), n=float(res["n"][k]), mass=mass,
                     composition={}, phase=str(res["phase"][k]), vapor_fraction=float(res["vapor_fraction"][k]))
    if final.phase == "liquid":
        final.liquid_volume_fraction = 1.0
    else:
        final.liquid_volume_fraction = 0.0
    P_nom = sc.vessel.working_pressure
    settled = Settled(T=sc.stop.settled_temperature, P=float(res["P_settled"][k]), phase=str(res["phase_settled"][k]),
                      nominal_pressure=P_nom)
    flags = []
    lim = jobs._limits(sc)
    lim["_volume"] = sc.vessel.volume
    _limit_flags(final, lim, flags)
    _overfill_flag(settled, flags)
    from eosfill.io.inputs import _stop_of

    stop = _stop_of(sc)[0] if res["stop_met"][k] else str(res["stop"][k])
    if not res["stop_met"][k]:
        flags.append(res["unmet_flag"][k])
    nominal = P_nom is not None
    return {"T_end [K]": final.T, "P_end [Pa]": final.P, "mass_end [kg]": mass,
            "mass_change [kg]": mass - float(res["m0"][k]), "phase_end": final.phase,
            "vapor_fraction_end [-]": final.vapor_fraction, "T_wall_end [K]": NAN, "T_min [K]": NAN,
            "P_settled [Pa]": settled.P, "short_fill [kg]": float(res["short_fill"][k]) if nominal else NAN,
            "state_of_charge [-]": float(res["state_of_charge"][k]) if nominal else NAN,
            "stop": stop, "stop_met": bool(res["stop_met"][k]), "energy_closure [-]": float(res["energy_closure"][k]),
            "mass_closure [-]": float(res["mass_closure"][k]), "flags": len(flags)}


def _batch_vent_row(sc, res, k):
    """:func:`result_row` of a vent computed by the batch (same numbers, same flags)."""
    from eosfill.io import jobs
    from eosfill.vessel.balances import EndState, _limit_flags

    phase = str(res["phase"][k])
    final = EndState(T=float(res["T"][k]), P=float(res["P"][k]), n=float(res["n"][k]), mass=float(res["mass"][k]),
                     composition={}, phase=phase, vapor_fraction=float(res["vapor_fraction"][k]),
                     liquid_volume_fraction=1.0 if phase == "liquid" else 0.0)
    flags = ["a liquid phase forms during the vent"] if res["liquid"][k] else []
    lim = jobs._limits(sc)
    lim["_volume"] = sc.vessel.volume
    _limit_flags(final, lim, flags, lowest_T=float(res["T_min"][k]))
    stop = "target_pressure" if sc.stop.target_pressure is not None else "target_mass"
    return {"T_end [K]": final.T, "P_end [Pa]": final.P, "mass_end [kg]": final.mass,
            "mass_change [kg]": final.mass - float(res["m0"][k]), "phase_end": phase,
            "vapor_fraction_end [-]": final.vapor_fraction, "T_wall_end [K]": NAN,
            "T_min [K]": float(res["T_min"][k]), "P_settled [Pa]": NAN, "short_fill [kg]": NAN,
            "state_of_charge [-]": NAN, "stop": stop, "stop_met": True,
            "energy_closure [-]": float(res["energy_closure"][k]), "mass_closure [-]": float(res["mass_closure"][k]),
            "flags": len(flags)}
