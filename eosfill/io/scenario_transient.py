"""The ``[transient]`` section of a scenario file (time-resolved kinds): duration,
output times, the flow restriction and the heat transfer, every key checked."""
from __future__ import annotations

from eosfill.io.scenario_schema import (HEAT_MODELS, MAX_OUTPUT_POINTS, RESTRICTIONS, TRANSIENT_KINDS,
                                        HeatTransfer, Restriction, Transient)


_RESTRICTION_KEYS = {
    "orifice": ("diameter", "discharge_coefficient"),
    "valve": ("Kv", "Cv", "xT", "FL"),
    "mass_flow": ("mass_flow",),
    "pressure_ramp": ("rate",),
}


def _read_transient(top, ctx, kind, vessel):
    sec = top.table("transient", required=kind in TRANSIENT_KINDS,
                    what=f"kind {kind!r} needs duration and [transient.restriction]")
    if sec is None:
        return None
    if kind not in TRANSIENT_KINDS:
        raise ctx.error("transient", None, f'only for kind "transient_fill" or "transient_vent" (kind is {kind!r})')
    sec.only(("duration", "restriction", "heat_transfer", "output_interval", "output_times",
              "back_pressure", "rtol"))
    duration = sec.quantity("duration", "time", required=True, minimum=0.0,
                            what='the longest time simulated, e.g. "10 min"')
    r = sec.table("restriction", required=True, what="type = orifice, valve, mass_flow or pressure_ramp")
    rtype = r.string("type", required=True, choices=RESTRICTIONS)
    own = _RESTRICTION_KEYS[rtype]
    r.only(("type",) + own, why=None)
    rest = Restriction(type=rtype)
    if rtype == "orifice":
        rest.diameter = r.quantity("diameter", "length", required=True, minimum=0.0)
        rest.discharge_coefficient = r.number("discharge_coefficient", required=True, minimum=0.0,
                                              maximum=1.0, strict_min=True)
    elif rtype == "valve":
        if r.has("Kv") == r.has("Cv"):
            if r.has("Kv"):
                raise ctx.error("transient.restriction.Cv", r.data["Cv"], "give Kv or Cv, not both")
            r.require("Kv", "the valve's flow coefficient Kv [m3/h] or Cv [US gal/min]")
        rest.Kv = r.number("Kv", minimum=0.0, strict_min=True)
        rest.Cv = r.number("Cv", minimum=0.0, strict_min=True)
        rest.xT = r.number("xT", required=True, minimum=0.0, maximum=1.0, strict_min=True)
        rest.FL = r.number("FL", minimum=0.0, maximum=1.0, strict_min=True)
    elif rtype == "mass_flow":
        rest.mass_flow = r.quantity("mass_flow", "mass_flow", required=True, minimum=0.0)
    else:
        rest.rate = r.quantity("rate", "pressure_rate", required=True, minimum=0.0)
    ht = HeatTransfer()
    h = sec.table("heat_transfer")
    if h is not None:
        h.only(("model", "inner_coefficient", "outer_coefficient"))
        ht.model = h.string("model", default="adiabatic", choices=HEAT_MODELS)
        if ht.model == "adiabatic":
            h.forbid(("inner_coefficient", "outer_coefficient"), 'not used with model = "adiabatic"')
        else:
            ht.inner_coefficient = h.quantity("inner_coefficient", "heat_transfer_coefficient", required=True,
                                              minimum=0.0, strict=False)
            ht.outer_coefficient = h.quantity("outer_coefficient", "heat_transfer_coefficient", default=0.0,
                                              minimum=0.0, strict=False)
            # a lumped wall needs its mass and specific heat; a layered wall its layers
            need = ["internal_area"] if vessel.wall_layers else ["wall_mass", "wall_specific_heat", "internal_area"]
            if ht.outer_coefficient > 0.0 and not vessel.wall_layers:
                need.append("external_area")  # a layered wall's outer area follows from its geometry
            for k in need:
                if getattr(vessel, k) is None:
                    raise ctx.error(f"vessel.{k}", None, 'missing required key: needed by '
                                    'transient.heat_transfer.model = "wall"')
    tr = Transient(duration=duration, restriction=rest, heat_transfer=ht)
    if sec.has("output_interval") and sec.has("output_times"):
        raise ctx.error("transient.output_times", sec.data["output_times"], "give output_interval or output_times, not both")
    tr.output_interval = sec.quantity("output_interval", "time", minimum=0.0)
    if tr.output_interval is not None and tr.output_interval > duration:
        raise ctx.error("transient.output_interval", sec.data["output_interval"], "longer than transient.duration")
    if tr.output_interval is not None and duration / tr.output_interval + 1 > MAX_OUTPUT_POINTS:
        raise ctx.error("transient.output_interval", sec.data["output_interval"],
                        f"out of range: gives {duration / tr.output_interval + 1:.3g} output times over "
                        f"transient.duration; at most {MAX_OUTPUT_POINTS:.0e} (a longer interval, or output_times)")
    if sec.has("output_times"):
        raw = sec.data["output_times"]
        if not isinstance(raw, list) or not raw:
            raise ctx.error("transient.output_times", raw, 'expected a list of times, e.g. [0, 30, "2 min"]')
        if len(raw) > MAX_OUTPUT_POINTS:
            raise ctx.error("transient.output_times", f"[{len(raw)} times]",
                            f"out of range: at most {MAX_OUTPUT_POINTS:.0e} output times")
        times = [ctx.parse(t, "time", f"transient.output_times[{i}]", default_unit="s") for i, t in enumerate(raw)]
        for i, t in enumerate(times):
            if t < 0.0 or t > duration:
                raise ctx.error(f"transient.output_times[{i}]", raw[i], "out of range: must be within 0 and transient.duration")
            if i and t <= times[i - 1]:
                raise ctx.error(f"transient.output_times[{i}]", raw[i], "times must increase")
        tr.output_times = times
    if sec.has("back_pressure") and kind != "transient_vent":
        raise ctx.error("transient.back_pressure", sec.data["back_pressure"], 'only for kind "transient_vent"')
    tr.back_pressure = sec.quantity("back_pressure", "pressure", minimum=0.0)
    tr.rtol = sec.number("rtol", default=1e-6, minimum=0.0, maximum=0.01, strict_min=True)
    return tr
