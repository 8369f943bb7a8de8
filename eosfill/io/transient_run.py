"""A scenario of kind ``transient_fill`` or ``transient_vent`` mapped to
:func:`eosfill.transient.model.simulate`, and its outputs written.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import InputError
from eosfill.io.scenario import TRANSIENT_KINDS
from eosfill.io.units import STANDARD_ATMOSPHERE
from eosfill.transient import flow as _flow
from eosfill.transient.heat import LayeredWall, LumpedWall
from eosfill.transient.model import Bank, Reservoir, simulate


def run_scenario(scenario, progress=None):
    """Run a scenario of kind ``transient_fill`` or ``transient_vent``.

    ``progress``: callable(t) after each integration step (see :func:`simulate`).

    Returns a :class:`TransientResult` (data; :mod:`eosfill.io.summaries`
    renders it).  Writes nothing: :func:`eosfill.io.jobs.run_scenario` writes
    the outputs (and a partial result's on an :class:`IntegrationError`).
    """
    sc = scenario
    if sc.kind not in TRANSIENT_KINDS:
        raise InputError("kind", sc.kind, '"transient_fill" or "transient_vent"')
    fluid = sc.fluid()
    tr = sc.transient
    ini = sc.initial
    mode = "fill" if sc.kind == "transient_fill" else "vent"
    x0 = sc.mole_fractions(ini.composition)
    kw = {}
    if ini.empty:
        # an evacuated vessel starts at 100 Pa of the supplied gas at ambient
        # temperature (common practice, no source; its mass is negligible)
        src = sc.supply if sc.supply is not None else (sc.banks[0] if sc.banks else None)
        x0 = sc.mole_fractions(src.composition if src is not None else None)
        kw.update(initial_temperature=sc.ambient.temperature, initial_pressure=100.0)
    elif ini.pressure is not None:
        kw.update(initial_temperature=ini.temperature, initial_pressure=ini.pressure)
    else:
        kw.update(initial_temperature=ini.temperature, initial_mass=ini.mass)
    r = tr.restriction
    if r.type == "orifice":
        restriction = _flow.Orifice(r.diameter, r.discharge_coefficient)
    elif r.type == "valve":
        restriction = _flow.Valve(xT=r.xT, Kv=r.Kv, Cv=r.Cv, FL=r.FL)
    elif r.type == "mass_flow":
        restriction = _flow.MassFlow(r.mass_flow)
    else:
        restriction = _flow.PressureRamp(r.rate)
    supply = None
    if mode == "fill":
        if sc.supply is not None:
            T_sup = sc.supply.temperature if sc.supply.temperature_schedule is None \
                else [list(row) for row in sc.supply.temperature_schedule]  # precooling that changes with time
            supply = Reservoir(sc.supply.pressure, T_sup, sc.mole_fractions(sc.supply.composition))
        else:
            supply = [Bank(b.volume, b.temperature, b.pressure, sc.mole_fractions(b.composition), b.name)
                      for b in sc.banks]
    wall = None
    inner = None
    ht = tr.heat_transfer
    if ht.model == "wall":
        v = sc.vessel
        if v.wall_layers:
            wall = LayeredWall(v.inner_radius, v.internal_area, list(v.wall_layers))
        else:
            wall = LumpedWall(v.wall_mass, v.wall_specific_heat, v.internal_area, v.external_area or 0.0)
        inner = ht.inner_coefficient
    stop = sc.stop
    target_mass = stop.target_mass
    if stop.target_fill_density is not None:
        target_mass = stop.target_fill_density * sc.vessel.volume
    if stop.target_settled_pressure is not None:
        src = sc.supply if sc.supply is not None else sc.banks[0]
        xs = sc.mole_fractions(src.composition)
        v_eos, _, k = _flow.gas_state_TP(fluid, stop.settled_temperature, stop.target_settled_pressure, xs)
        target_mass = sc.vessel.volume / (v_eos - k.c_shift) * k.molar_mass
    if tr.output_times is not None:
        out_times = tr.output_times
    elif tr.output_interval is not None:
        out_times = np.arange(0.0, tr.duration + 0.5 * tr.output_interval, tr.output_interval)
    else:
        out_times = None
    lim = sc.limits
    limits = dict(max_gas_temperature=lim.max_gas_temperature, min_gas_temperature=lim.min_gas_temperature,
                  max_wall_temperature=lim.max_wall_temperature, min_wall_temperature=lim.min_wall_temperature,
                  max_pressure=lim.max_pressure)
    # the scenario's own summary is printed by the caller; add what the run adds
    desc = [f"restriction: {restriction.describe()}",
            f"heat transfer: {'adiabatic' if wall is None else wall.describe()}"]
    return simulate(fluid, sc.vessel.volume, mode=mode, initial_composition=x0, restriction=restriction,
                    supply=supply, back_pressure=tr.back_pressure if tr.back_pressure is not None
                    else (sc.ambient.pressure or STANDARD_ATMOSPHERE), wall=wall, inner_coefficient=inner,
                    outer_coefficient=ht.outer_coefficient if wall is not None else 0.0,
                    ambient_temperature=sc.ambient.temperature,
                    initial_wall_temperature=ini.wall_temperature, duration=tr.duration,
                    target_pressure=stop.target_pressure, target_mass=target_mass,
                    temperature_limit=stop.temperature_limit, output_times=out_times,
                    switch_pressure_difference=sc.cascade.switch_pressure_difference,
                    limits=limits, rtol=tr.rtol, description=desc, progress=progress, **kw)
