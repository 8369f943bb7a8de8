"""The report's words: numbers in the scenario's units (``_Fmt``), the job in one
paragraph (with what happened), the inputs as rows and small tables, and the
limits box.  Used by :mod:`eosfill.io.report` (the page shell and assembly).

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import math


# --------------------------------------------------------------------------
# formatting
# --------------------------------------------------------------------------
class _Fmt:
    """Numbers in the scenario's units and digits (engineering: bar, °C, L, kg)."""

    def __init__(self, scenario):
        out = scenario.output
        self.digits = int(out.digits) if out is not None else 6
        self.si = out is not None and out.units == "SI"
        self.scenario = scenario

    def p(self, value, key):
        """A pressure input as the file gave it: gauge when given as gauge (``barg``)."""
        if value is None:
            return "—"
        return self.scenario.pressure_text(value, key, self.digits, self.si)

    def q(self, value, kind):
        from eosfill.io.units import format_quantity

        if value is None:
            return "—"
        if isinstance(value, float) and not math.isfinite(value):
            return "n/a"
        if self.si:
            unit = {"pressure": "Pa", "temperature": "K", "volume": "m**3", "mass": "kg", "time": "s",
                    "density": "kg/m**3", "length": "m", "mass_flow": "kg/s", "pressure_rate": "Pa/s"}.get(kind)
            return format_quantity(value, kind, unit=unit, digits=self.digits)
        return format_quantity(value, kind, digits=self.digits)

    def T(self, value):
        """Temperature with both °C and K (engineering) or K (SI)."""
        if value is None:
            return "—"
        if self.si:
            return self.q(value, "temperature")
        return f"{self.q(value, 'temperature')} ({self.n(value)} K)"

    def n(self, value, digits=None):
        from eosfill.io.units import format_number

        if value is None:
            return "—"
        return format_number(value, digits or self.digits)

    def energy(self, value):
        return f"{self.n(value / 1e3)} kJ"


def _comp_text(comp):
    if not comp:
        return "—"
    if len(comp) == 1:
        return next(iter(comp))
    return ", ".join(f"{k} {v:.6g}" for k, v in comp.items())


# --------------------------------------------------------------------------
# the report's sections
# --------------------------------------------------------------------------
_STOP_WORDS = {
    "target_pressure": ("the pressure reaches {}", "pressure"),
    "target_mass": ("the vessel holds {}", "mass"),
    "target_settled_pressure": ("the content, cooled to the settled temperature, would be at {}", "pressure"),
    "target_fill_density": ("the filling density (mass/volume) reaches {}", "density"),
}


def _stop_words(scenario, fmt):
    s = scenario.stop
    parts = []
    for key, (words, kind) in _STOP_WORDS.items():
        val = getattr(s, key)
        if val is not None:
            if kind == "density":
                parts.append(words.format(f"{fmt.n(val / 1e3)} kg/L"))
            elif kind == "pressure":
                parts.append(words.format(fmt.p(val, f"stop.{key}")))
            else:
                parts.append(words.format(fmt.q(val, kind)))
    if s.supply_pressure:
        parts.append("the vessel reaches the supply (or last bank) pressure")
    if s.temperature_limit is not None:
        word = "falls to" if scenario.kind in ("vent", "transient_vent") else "rises to"
        parts.append(f"the gas temperature {word} {fmt.q(s.temperature_limit, 'temperature')}")
    return " or ".join(parts)


def _restriction_words(r, fmt):
    """What sets the flow, in words with its figures ("through an orifice of 12 mm bore ...")."""
    if r.type == "orifice":
        return f"through an orifice of {fmt.q(r.diameter, 'length')} bore (discharge coefficient {fmt.n(r.discharge_coefficient)})"
    if r.type == "valve":
        cv = f"Kv {fmt.n(r.Kv)} m³/h" if r.Kv is not None else f"Cv {fmt.n(r.Cv)} US gal/min"
        return f"through a valve ({cv}, xT {fmt.n(r.xT)})"
    if r.type == "mass_flow":
        return f"at a set mass flow of {fmt.q(r.mass_flow, 'mass_flow')}"
    return f"at a set pressure ramp of {fmt.q(r.rate, 'pressure_rate')}"


def _outcome_words(scenario, result, fmt):
    """What happened, from the result: when and why the run stopped."""
    if result is None:
        return ""
    if hasattr(result, "t"):
        t_end = float(result.t[-1])
        why = result.stop_reason or "the end of the simulated time"
        if not result.complete:
            return f" The integration failed at {fmt.q(t_end, 'time')} ({why}); the results below are partial."
        return f" It stopped at {fmt.q(t_end, 'time')}: {why}."
    met = "" if result.stop_met else " (the stop criterion asked for was not met)"
    return f" It stopped on its {result.stop.replace('_', ' ')}{met}."


def job_paragraph(scenario, fmt=None, result=None):
    """The job stated in one paragraph of plain words (with what happened, given the result)."""
    fmt = fmt or _Fmt(scenario)
    sc = scenario
    v = sc.vessel
    fs = sc.fluid_spec
    vessel = f"a rigid vessel{' (' + v.name + ')' if v.name else ''} of {fmt.q(v.volume, 'volume')}"
    if v.wall_mass is not None and v.wall_specific_heat is not None:
        vessel += (f" whose wall ({fmt.q(v.wall_mass, 'mass')}, {fmt.n(v.wall_specific_heat)} J/(kg K)) "
                   "exchanges heat with the gas")
    ini = sc.initial
    if ini.empty:
        holds = "is empty (evacuated)"
    else:
        comp = _comp_text(ini.composition or fs.composition)
        amount = fmt.p(ini.pressure, "initial.pressure") if ini.pressure is not None else fmt.q(ini.mass, "mass")
        holds = f"holds {comp} at {fmt.q(ini.temperature, 'temperature')} and {amount}"
    kind = sc.kind
    time_resolved = kind.startswith("transient")
    if kind in ("vent", "transient_vent"):
        what = "is vented"
        if sc.transient is not None:
            what += (f" {_restriction_words(sc.transient.restriction, fmt)} to "
                     + (fmt.p(sc.transient.back_pressure, "transient.back_pressure")
                        if sc.transient.back_pressure is not None else fmt.q(sc.ambient.pressure, "pressure")))
    elif sc.supply is not None:
        what = (f"is filled from a supply of {_comp_text(sc.supply.composition or fs.composition)} at "
                f"{fmt.q(sc.supply.temperature, 'temperature')} and {fmt.p(sc.supply.pressure, 'supply.pressure')}")
        if kind == "liquefied_fill":
            what += " (a liquefied gas: the content may be two-phase)"
    else:
        banks = "; ".join(f"{b.name or i + 1}: {fmt.q(b.volume, 'volume')} at "
                          f"{fmt.p(b.pressure, f'banks[{i}].pressure')}, "
                          f"{fmt.q(b.temperature, 'temperature')}" for i, b in enumerate(sc.banks))
        what = (f"is filled from {len(sc.banks)} storage bank{'s' if len(sc.banks) > 1 else ''} used in turn "
                f"({banks}), switching when a bank leads the vessel by "
                f"{fmt.q(sc.cascade.switch_pressure_difference, 'pressure')}")
    if time_resolved and kind == "transient_fill" and sc.transient is not None:
        what += f" {_restriction_words(sc.transient.restriction, fmt)}"
    model = {"PR": "Peng–Robinson (1976)", "PR78": "Peng–Robinson (1978 κ)", "SRK": "Soave–Redlich–Kwong (1972)"}
    how = ("followed in time" if time_resolved else "computed as an end state from the mass and energy balances "
           "(no time involved)")
    until = _stop_words(sc, fmt)
    if not until and sc.transient is not None:
        until = f"at most {fmt.q(sc.transient.duration, 'time')} have passed"
    return (f"{vessel[0].upper() + vessel[1:]} {holds}. It {what}, until {until}."
            f"{_outcome_words(sc, result, fmt)} The run is {how}, with the {model.get(fs.model, fs.model)} equation of state"
            + (f" (title: {sc.title})." if sc.title else "."))


_INPUT_KINDS = {
    "volume": "volume", "wall_mass": "mass", "mass": "mass", "wall_specific_heat": "specific_heat",
    "internal_area": "area", "external_area": "area", "working_pressure": "pressure",
    "working_temperature": "temperature", "temperature": "temperature", "pressure": "pressure",
    "wall_temperature": "temperature", "target_pressure": "pressure", "target_mass": "mass",
    "target_settled_pressure": "pressure", "settled_temperature": "temperature",
    "target_fill_density": "density", "temperature_limit": "temperature",
    "max_gas_temperature": "temperature", "min_gas_temperature": "temperature",
    "max_wall_temperature": "temperature", "min_wall_temperature": "temperature", "max_pressure": "pressure",
    "max_fill_density": "density", "switch_pressure_difference": "pressure", "duration": "time",
    "output_interval": "time", "back_pressure": "pressure", "diameter": "length", "mass_flow": "mass_flow",
    "rate": "pressure_rate", "inner_coefficient": "heat_transfer_coefficient",
    "outer_coefficient": "heat_transfer_coefficient", "inner_radius": "length",
}


def _input_value(fmt, key, value, path=None):
    if value is None:
        return None
    if path is not None and path in fmt.scenario.gauge_keys:
        return fmt.p(value, path)
    if key in ("composition",) and isinstance(value, dict):
        return _comp_text(value) + (" (mole fractions)" if len(value) > 1 else "")
    kind = _INPUT_KINDS.get(key)
    if kind == "temperature":
        return fmt.T(value)
    if kind == "switch_pressure_difference" or key == "switch_pressure_difference":
        return fmt.q(value, "pressure")
    if kind == "density":
        return f"{fmt.n(value)} kg/m³ ({fmt.n(value / 1e3)} kg/L)"
    if kind is not None:
        return fmt.q(value, kind)
    if isinstance(value, float):
        return fmt.n(value)
    return str(value)


def input_rows(scenario, fmt=None):
    """(key path, value with unit) for every input given or defaulted, from the Scenario (SI inside)."""
    from dataclasses import fields

    fmt = fmt or _Fmt(scenario)
    sc = scenario
    rows = [("kind", sc.kind)]
    if sc.title:
        rows.append(("title", sc.title))
    fs = sc.fluid_spec
    rows += [("fluid.composition", _input_value(fmt, "composition", fs.composition)), ("fluid.model", fs.model),
             ("fluid.volume_shift", fs.volume_shift)]
    for k in fs.kij:
        rows.append((f"fluid.kij[{k.pair[0]}, {k.pair[1]}]", fmt.n(k.kij)))

    def section(name, obj, skip=(), file_name=None):
        if obj is None:
            return
        file_name = file_name or name
        for f in fields(obj):
            if f.name in skip or f.name.startswith("_"):
                continue
            val = getattr(obj, f.name)
            if val is None or val == "" or val is False:
                continue
            if isinstance(val, (list, tuple)) and not val:
                continue
            shown = _input_value(fmt, f.name, val, f"{file_name}.{f.name}")
            if shown is not None:
                rows.append((f"{name}.{f.name}", shown))

    section("vessel", sc.vessel, skip=("wall_layers",))  # a table of its own (input_tables)
    section("initial", sc.initial)
    section("supply", sc.supply, skip=("temperature_schedule",))
    for i, b in enumerate(sc.banks):
        section(f"banks[{i + 1}]", b, file_name=f"banks[{i}]")
    if sc.kind == "cascade_fill" or sc.banks:
        section("cascade", sc.cascade)
    section("stop", sc.stop, skip=("settled_temperature",) if sc.kind in ("vent", "transient_vent") else ())
    section("ambient", sc.ambient)
    section("limits", sc.limits)
    if sc.transient is not None:
        section("transient", sc.transient, skip=("restriction", "heat_transfer", "output_times"))
        times = sc.transient.output_times
        if times:
            rows.append(("transient.output_times", f"{len(times)} times, {fmt.q(times[0], 'time')} to "
                         f"{fmt.q(times[-1], 'time')}"))
        section("transient.restriction", sc.transient.restriction)
        section("transient.heat_transfer", sc.transient.heat_transfer)
    return rows


def input_tables(rep, scenario, fmt):
    """The inputs that are lists - a layered wall, a supply temperature schedule - as small tables with units."""
    sc = scenario
    layers = sc.vessel.wall_layers
    if layers:
        rows = [[i + 1, ly.name or "—", fmt.q(ly.thickness, "length"), f"{fmt.n(ly.conductivity)}",
                 f"{fmt.n(ly.density)}", f"{fmt.n(ly.specific_heat)}", ly.cells] for i, ly in enumerate(layers)]
        rep.table(["layer (inside out)", "name", "thickness", "conductivity [W/(m K)]", "density [kg/m³]",
                   "specific heat [J/(kg K)]", "cells"], rows,
                  f"vessel.wall_layers: layered cylindrical wall, inner radius {fmt.q(sc.vessel.inner_radius, 'length')}")
    sched = sc.supply.temperature_schedule if sc.supply is not None else None
    if sched:
        rows = [[fmt.q(t, "time"), fmt.T(T)] for t, T in sched]
        rep.table(["time", "supply temperature"], rows,
                  "supply.temperature_schedule: linear between rows, the last value held")


def _limits_checked(scenario):
    from dataclasses import asdict

    return {k: v for k, v in asdict(scenario.limits).items() if v is not None}


def limit_blocks(rep, scenario, result, fmt):
    rep.heading("Limits")
    lim = _limits_checked(scenario)
    checked = []
    for k, v in lim.items():
        kind = _INPUT_KINDS.get(k)
        checked.append(f"{k} = {_input_value(fmt, k, v) if kind else fmt.n(v)}")
    from eosfill.io.summaries import flag_text
    from eosfill.vessel.balances import LimitPassed

    passed, other = [], []
    for f in result.flags:  # limits passed, and other flags (liquid forming, a stop not met ...)
        (passed if isinstance(f, LimitPassed) or "the limit" in str(f) else other).append(flag_text(f))
    if passed:
        title = f"Limit exceeded: {passed[0]}" if len(passed) == 1 else f"{len(passed)} limits exceeded"
        rep.caution(title, passed, tone="limits")
    else:
        rep.caution("No limit reached", ["none of the limits checked below was reached by the computed figures"],
                    tone="neutral")
    if other:
        rep.caution("Also flagged", other, tone="note")
    rep.para("Limits checked: " + ("; ".join(checked) if checked else "none given") + ". The −40 °C / 85 °C gas "
             "temperature defaults are common values (from memory), not what any vessel is approved for; give "
             "the vessel's own limits.")
