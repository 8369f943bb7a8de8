"""A scenario's inputs as the vessel layer's objects (vessel, initial content,
stop criterion, limits), shared by the runner and the report."""
from __future__ import annotations

from eosfill.errors import InputError


_STOP_KEYS = ("target_pressure", "target_mass", "target_settled_pressure", "target_fill_density",
              "supply_pressure")


def _stop_of(scenario):
    s = scenario.stop
    for key in _STOP_KEYS:
        val = getattr(s, key)
        if val is not None and val is not False:
            return key, (None if key == "supply_pressure" else val)
    raise InputError("stop", None, "one of " + ", ".join(_STOP_KEYS))


def _limits(scenario):
    from dataclasses import asdict

    return {k: v for k, v in asdict(scenario.limits).items() if v is not None}


def _fluid_of(scenario, composition):
    return scenario.fluid().with_composition(scenario.mole_fractions(composition))


def _vessel_of(scenario):
    from eosfill.vessel.balances import Vessel

    v = scenario.vessel
    Cw = 0.0
    if v.wall_mass is not None and v.wall_specific_heat is not None:
        Cw = v.wall_mass * v.wall_specific_heat
    elif (v.wall_mass is None) != (v.wall_specific_heat is None):
        missing = "vessel.wall_specific_heat" if v.wall_specific_heat is None else "vessel.wall_mass"
        raise InputError(missing, None, "both vessel.wall_mass and vessel.wall_specific_heat, or neither")
    ini = scenario.initial
    Tw = ini.wall_temperature
    if Tw is None:
        Tw = ini.temperature if ini.temperature is not None else scenario.ambient.temperature
    return Vessel(v.volume, wall_heat_capacity=Cw, wall_temperature=Tw if Cw > 0 else None)


def _initial_of(scenario):
    from eosfill.vessel.balances import Stream

    ini = scenario.initial
    if ini.empty:
        return None
    return Stream(_fluid_of(scenario, ini.composition), ini.temperature, P=ini.pressure, mass=ini.mass)
