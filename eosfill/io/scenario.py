"""Scenario files: a fill or a vent described in TOML, read into dataclasses.

A scenario says what is in the vessel, what is put in or let out, and when
to stop.  Values carry their units as people write them (``"50 L"``,
``"350 bar"``, ``"20 barg"``, ``"15 degC"``); they are converted to SI here,
once, by :mod:`eosfill.units`.  The full schema, key by key, is in
``docs/scenario.md``.

Minimal example::

    kind = "fill"

    [fluid]
    composition = { methane = 0.9, ethane = 0.1 }

    [vessel]
    volume = "50 L"

    [initial]
    temperature = "15 degC"
    pressure = "20 bar"

    [supply]
    temperature = "15 degC"
    pressure = "250 bar"

    [stop]
    target_pressure = "200 bar"

Every problem - an unknown key, a missing one, a wrong unit, a value out of
range - raises :class:`eosfill.errors.InputError` whose message starts with
the file name and names the key path (``vessel.volume``,
``banks[1].pressure``).  Reading a scenario writes nothing.

Where things are: the schema's constants and dataclasses (``Vessel``,
``Initial``, ``Supply``, ``Bank``, ``Stop``, ``Limits``, ``Transient``, ... and
the whole ``Scenario``) in :mod:`eosfill.io.scenario_schema` (importable from
here too); the key-checking reader (``_Reader``, ``_Context``) and the
cross-checks between sections (``_check_consistency``) in
:mod:`eosfill.io.scenario_checks`; the ``[transient]`` section in
:mod:`eosfill.io.scenario_transient`; here ``load_scenario`` and one
``_read_<section>`` function per other section.

Results computed from a scenario are estimates from an equation of state and
simplified models; local codes, the vessel's approval documents and licensed
practice govern.
"""
from __future__ import annotations

import sys
from pathlib import Path

from eosfill.errors import InputError
from eosfill.io.scenario_checks import _check_consistency, _Context, _Reader
from eosfill.io.scenario_transient import _read_transient
from eosfill.io.scenario_schema import (  # noqa: F401 - the schema's names, importable from here as before
    CAUTION, DEFAULT_AMBIENT_TEMPERATURE, DEFAULT_MAX_GAS_TEMPERATURE, DEFAULT_MIN_GAS_TEMPERATURE,
    DEFAULT_SETTLED_TEMPERATURE, FILL_KINDS, HEAT_MODELS, KINDS, MAX_OUTPUT_POINTS, MAX_SCENARIO_BYTES, MODELS,
    RESTRICTIONS, SCHEMA_VERSION, TRANSIENT_KINDS, VENT_KINDS, Ambient, Bank, Cascade, FluidSpec, HeatTransfer,
    Initial, KijOverride, Limits, Output, Restriction, Scenario, Stop, Supply, Transient, Vessel)
from eosfill.io.units import STANDARD_ATMOSPHERE, format_quantity

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib


_TOP = ("schema_version", "kind", "title", "description", "fluid", "vessel", "initial", "supply",
        "banks", "cascade", "stop", "ambient", "limits", "output", "transient",
        "sweep")  # [sweep]: read by eosfill.io.sweep (eosfill sweep); a single run ignores it


def load_scenario(path, allow_output_outside=False) -> Scenario:
    """Read and check a TOML scenario file.

    Parameters
    ----------
    path : str or Path
    allow_output_outside : bool
        Let ``[output]`` paths leave the scenario file's folder (refused by
        default: running a file someone sent must not overwrite files elsewhere).

    Returns
    -------
    Scenario
        Every value in SI.

    Raises
    ------
    InputError
        The message starts with the file name and names the key path.
    """
    path = Path(path)
    ctx = _Context(path)
    ctx.allow_output_outside = bool(allow_output_outside)
    try:
        with open(path, "rb") as fh:
            raw = fh.read(MAX_SCENARIO_BYTES + 1)
        if len(raw) > MAX_SCENARIO_BYTES:
            raise InputError("scenario", str(path), "a scenario file", message=f"{path}: larger than "
                             f"{MAX_SCENARIO_BYTES // 1_000_000} MB; not a scenario file")
        if raw.startswith(b"\xef\xbb\xbf"):  # a UTF-8 byte-order mark, as some Windows editors write
            raw = raw[3:]
        data = tomllib.loads(raw.decode("utf-8"))
    except RecursionError:
        raise InputError("scenario", str(path), "tables nested a few levels deep",
                         message=f"{path}: tables or arrays nested too deeply to be a scenario") from None
    except PermissionError:
        raise InputError("scenario", str(path), "a readable file",
                         message=f"{path}: cannot read the scenario file (permission denied)") from None
    except FileNotFoundError:
        raise InputError("scenario", str(path), "an existing file",
                         message=f"{path}: scenario file not found") from None
    except IsADirectoryError:
        raise InputError("scenario", str(path), "a file", message=f"{path}: is a folder, not a scenario file") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError("scenario", str(path), "valid TOML", message=f"{path}: not valid TOML: {exc}") from None
    except UnicodeDecodeError as exc:
        raise InputError("scenario", str(path), "UTF-8 text", message=f"{path}: not UTF-8 text: {exc}") from None
    return scenario_from_dict(data, ctx)


def scenario_from_dict(data: dict, ctx=None) -> Scenario:
    """Check a scenario already read into a dict (see :func:`load_scenario`)."""
    if ctx is None:
        ctx = _Context("<scenario>")
    top = _Reader(ctx, data, "")
    top.only(_TOP)
    version = top.number("schema_version", default=SCHEMA_VERSION, integer=True)
    if version != SCHEMA_VERSION:
        raise ctx.error("schema_version", version, f"this eosfill reads schema_version {SCHEMA_VERSION}")
    kind = top.string("kind", required=True, choices=KINDS)
    title = top.string("title", default="")
    description = top.string("description", default="")

    # [ambient] first: its pressure is the zero of gauge pressures
    ambient = Ambient()
    sec = top.table("ambient")
    if sec:
        sec.only(("temperature", "pressure"))
        ambient.pressure = sec.quantity("pressure", "pressure", default=STANDARD_ATMOSPHERE, minimum=0.0)
        if isinstance(sec.data.get("pressure"), str) and _gauge(sec.data["pressure"]):
            raise ctx.error("ambient.pressure", sec.data["pressure"], "must be absolute (it is the zero of gauge pressures)")
        ambient.temperature = sec.quantity("temperature", "temperature", default=DEFAULT_AMBIENT_TEMPERATURE,
                                           minimum=0.0)
    ctx.ambient_pressure = ambient.pressure

    fluid_spec = _read_fluid(top, ctx)
    vessel = _read_vessel(top, ctx)
    initial = _read_initial(top, ctx, kind, ambient)
    supply, banks = _read_sources(top, ctx, kind)
    cascade = Cascade()
    sec = top.table("cascade")
    if sec:
        if kind not in ("cascade_fill", "transient_fill"):
            raise ctx.error("cascade", None, f'only for kind "cascade_fill" or "transient_fill" with banks (kind is {kind!r})')
        sec.only(("switch_pressure_difference",))
        if _gauge(sec.data.get("switch_pressure_difference")):
            raise ctx.error("cascade.switch_pressure_difference", sec.data["switch_pressure_difference"],
                            'a pressure difference: give it without a gauge mark (e.g. "10 bar")')
        cascade.switch_pressure_difference = sec.quantity("switch_pressure_difference", "pressure",
                                                          default=0.0, minimum=0.0, strict=False)
    stop = _read_stop(top, ctx, kind)
    limits = _read_limits(top, ctx)
    output = _read_output(top, ctx)
    transient = _read_transient(top, ctx, kind, vessel)

    _check_consistency(ctx, kind, initial, supply, banks, stop, vessel, limits)

    sc = Scenario(kind=kind, fluid_spec=fluid_spec, vessel=vessel, initial=initial, stop=stop,
                  ambient=ambient, limits=limits, output=output, supply=supply, banks=banks,
                  cascade=cascade, transient=transient, title=title, description=description,
                  path=ctx.path if ctx.file != "<scenario>" else None, gauge_keys=set(ctx.gauge_keys))
    try:
        sc.fluid()  # checks kij pairs, the model and the data
    except InputError as exc:
        key = "fluid.kij" if "kij" in str(exc.name) else "fluid"
        raise InputError(key, exc.value, exc.allowed, message=f"{ctx.file}: {key}: {exc}") from None
    return sc


def _gauge(raw) -> bool:
    from eosfill.io.units import is_gauge

    return is_gauge(raw)


def _read_fluid(top, ctx) -> FluidSpec:
    sec = top.table("fluid", required=True, what="the fluid's composition and model")
    sec.only(("composition", "basis", "model", "normalise", "volume_shift", "kij"))
    basis = sec.string("basis", default="mole", choices=("mole", "mass"))
    ctx.mass_basis = basis == "mass"
    ctx.normalise = sec.boolean("normalise", default=False)
    model = sec.string("model", default="PR", choices=MODELS, fold=True)
    shift = sec.string("volume_shift", default="none", choices=("none", "peneloux"), fold=True)
    if shift != "none" and model not in ("PR", "PR78", "SRK"):
        raise ctx.error(sec.key("volume_shift"), shift, f'"none": model {model} carries its own volume translation')
    composition = ctx.composition(sec.require("composition", "the fluid's components and fractions, "
                                              "e.g. { methane = 0.9, ethane = 0.1 }"), "fluid.composition")
    kij = []
    raw = sec.data.get("kij", [])
    if not isinstance(raw, list):
        raise ctx.error("fluid.kij", raw, 'expected a list of tables [[fluid.kij]] with pair = ["a", "b"] and kij = 0.1')
    from eosfill.model.components import get_component

    for i, item in enumerate(raw):
        kp = f"fluid.kij[{i}]"
        if not isinstance(item, dict):
            raise ctx.error(kp, item, 'expected a table { pair = ["methane", "carbon dioxide"], kij = 0.09 }')
        r = _Reader(ctx, item, kp)
        r.only(("pair", "kij", "source"))
        pair = r.require("pair", 'pair = ["name1", "name2"]')
        if (not isinstance(pair, list) or len(pair) != 2 or not all(isinstance(p, str) for p in pair)):
            raise ctx.error(f"{kp}.pair", pair, 'expected two fluid names, e.g. ["methane", "carbon dioxide"]')
        names = []
        for p in pair:
            try:
                names.append(get_component(p).name)
            except InputError as exc:
                raise InputError(f"{kp}.pair", pair, exc.allowed, message=f"{ctx.file}: {kp}.pair: {exc}") from None
        if names[0] == names[1]:
            raise ctx.error(f"{kp}.pair", pair, "a pair of two different fluids")
        value = r.number("kij", required=True, minimum=-1.0, maximum=1.0, strict_min=True, strict_max=True)
        kij.append(KijOverride(tuple(names), value))
    return FluidSpec(composition=composition, model=model, basis=basis, normalise=ctx.normalise,
                     volume_shift=shift, kij=kij)


def _read_vessel(top, ctx) -> Vessel:
    sec = top.table("vessel", required=True, what="at least its volume")
    sec.only(("name", "volume", "wall_mass", "wall_specific_heat", "internal_area", "external_area",
              "working_pressure", "working_temperature", "inner_radius", "wall_layers"))
    layers = []
    raw = sec.data.get("wall_layers")
    if raw is not None:
        from eosfill.transient.heat import Layer

        if not isinstance(raw, list) or not raw or not all(isinstance(b, dict) for b in raw):
            raise ctx.error("vessel.wall_layers", raw, "expected one or more [[vessel.wall_layers]] tables")
        for i, item in enumerate(raw):
            r = _Reader(ctx, item, f"vessel.wall_layers[{i}]")
            r.only(("name", "thickness", "conductivity", "density", "specific_heat", "cells"))
            layers.append(Layer(
                thickness=r.quantity("thickness", "length", required=True, minimum=0.0),
                conductivity=r.quantity("conductivity", "thermal_conductivity", required=True, minimum=0.0),
                density=r.quantity("density", "density", required=True, minimum=0.0),
                specific_heat=r.quantity("specific_heat", "specific_heat", required=True, minimum=0.0),
                cells=int(r.number("cells", default=4, minimum=1, maximum=50, integer=True)),
                name=r.string("name", default=""),
            ))
        if not sec.has("inner_radius"):
            raise ctx.error("vessel.inner_radius", None, "missing required key: a layered wall "
                            "([[vessel.wall_layers]]) needs the vessel's inner radius")
    vessel = Vessel(
        volume=sec.quantity("volume", "volume", required=True, minimum=0.0, what='the internal volume, e.g. "50 L"'),
        name=sec.string("name", default=""),
        wall_mass=sec.quantity("wall_mass", "mass", minimum=0.0),
        wall_specific_heat=sec.quantity("wall_specific_heat", "specific_heat", minimum=0.0),
        internal_area=sec.quantity("internal_area", "area", minimum=0.0),
        external_area=sec.quantity("external_area", "area", minimum=0.0),
        working_pressure=sec.quantity("working_pressure", "pressure", minimum=0.0),
        working_temperature=sec.quantity("working_temperature", "temperature",
                                         default=DEFAULT_SETTLED_TEMPERATURE, minimum=0.0),
        inner_radius=sec.quantity("inner_radius", "length", minimum=0.0),
        wall_layers=layers,
    )
    return vessel


def _read_initial(top, ctx, kind, ambient) -> Initial:
    sec = top.table("initial", required=True,
                    what="empty = true, or temperature with pressure or mass")
    sec.only(("empty", "temperature", "pressure", "mass", "wall_temperature", "composition"))
    ini = Initial(empty=sec.boolean("empty", default=False))
    if ini.empty:
        if kind in VENT_KINDS:
            raise ctx.error("initial.empty", True, f"an empty vessel cannot be vented (kind {kind!r})")
        sec.forbid(("pressure", "mass", "composition"), "not allowed with empty = true")
    else:
        ini.temperature = sec.quantity("temperature", "temperature", required=True, minimum=0.0,
                                       what="the gas temperature (or empty = true)")
        if sec.has("pressure") == sec.has("mass"):
            if sec.has("pressure"):
                raise ctx.error("initial.mass", sec.data["mass"], "give initial.pressure or initial.mass, not both")
            sec.require("pressure", "initial.pressure or initial.mass (or empty = true)")
        ini.pressure = sec.quantity("pressure", "pressure", minimum=0.0)
        ini.mass = sec.quantity("mass", "mass", minimum=0.0)
        if sec.has("composition"):
            ini.composition = ctx.composition(sec.data["composition"], "initial.composition")
    ini.wall_temperature = sec.quantity("wall_temperature", "temperature", minimum=0.0)
    return ini


def _read_sources(top, ctx, kind):
    supply = None
    banks = []
    sec = top.table("supply")
    if sec is not None:
        if kind in VENT_KINDS or kind == "cascade_fill":
            why = "a vent has no supply" if kind in VENT_KINDS else "a cascade fill draws from [[banks]]"
            raise ctx.error("supply", None, f"not allowed for kind {kind!r}: {why}")
        sec.only(("temperature", "pressure", "composition", "temperature_schedule"))
        supply = Supply(
            temperature=sec.quantity("temperature", "temperature", required=True, minimum=0.0),
            pressure=sec.quantity("pressure", "pressure", required=True, minimum=0.0),
        )
        if sec.has("temperature_schedule"):
            supply.temperature_schedule = _read_schedule(ctx, sec.data["temperature_schedule"], kind)
        if sec.has("composition"):
            supply.composition = ctx.composition(sec.data["composition"], "supply.composition")
    raw = top.data.get("banks")
    if raw is not None:
        if kind not in ("cascade_fill", "transient_fill"):
            raise ctx.error("banks", None, f'only for kind "cascade_fill" or "transient_fill" (kind is {kind!r})')
        if supply is not None:
            raise ctx.error("banks", None, "give [supply] or [[banks]], not both")
        if not isinstance(raw, list) or not raw or not all(isinstance(b, dict) for b in raw):
            raise ctx.error("banks", raw, "expected one or more [[banks]] tables")
        for i, item in enumerate(raw):
            r = _Reader(ctx, item, f"banks[{i}]")
            r.only(("name", "volume", "temperature", "pressure", "composition"))
            bank = Bank(
                volume=r.quantity("volume", "volume", required=True, minimum=0.0),
                temperature=r.quantity("temperature", "temperature", required=True, minimum=0.0),
                pressure=r.quantity("pressure", "pressure", required=True, minimum=0.0),
                name=r.string("name", default=""),
            )
            if r.has("composition"):
                bank.composition = ctx.composition(item["composition"], f"banks[{i}].composition")
            banks.append(bank)
    if kind == "cascade_fill" and not banks:
        raise ctx.error("banks", None, 'missing required section: kind "cascade_fill" needs one or more [[banks]]')
    if kind in ("fill", "liquefied_fill") and supply is None:
        raise ctx.error("supply", None, f"missing required section [supply]: kind {kind!r} needs a supply "
                        "(temperature and pressure)")
    if kind == "transient_fill" and supply is None and not banks:
        raise ctx.error("supply", None, 'missing required section: kind "transient_fill" needs [supply] or [[banks]]')
    return supply, banks


def _read_schedule(ctx, raw, kind):
    """``supply.temperature_schedule``: the supply temperature changing with time
    (a precooled supply), rows [time, temperature] with increasing times;
    linear in between, held after the last row."""
    key = "supply.temperature_schedule"
    if kind != "transient_fill":
        raise ctx.error(key, raw, f'only for kind "transient_fill" (kind is {kind!r})')
    if not isinstance(raw, list) or not raw or not all(isinstance(r, list) and len(r) == 2 for r in raw):
        raise ctx.error(key, raw, 'expected rows [time, temperature], e.g. [["0 s", "-20 degC"], ["30 s", "-33 degC"]]')
    rows = []
    for i, (t, T) in enumerate(raw):
        ts = ctx.parse(t, "time", f"{key}[{i}][0]")
        Ts = ctx.parse(T, "temperature", f"{key}[{i}][1]")
        if ts < 0.0 or Ts <= 0.0:
            raise ctx.error(f"{key}[{i}]", [t, T], "out of range: time >= 0 s and temperature > 0 K")
        if rows and ts <= rows[-1][0]:
            raise ctx.error(f"{key}[{i}][0]", t, "times must increase from row to row")
        rows.append((ts, Ts))
    return rows


_STOP_PRIMARY = ("target_pressure", "target_mass", "target_settled_pressure", "target_fill_density",
                 "supply_pressure")


def _read_stop(top, ctx, kind) -> Stop:
    sec = top.table("stop", required=kind not in TRANSIENT_KINDS,
                    what=f"one of {', '.join(_STOP_PRIMARY)}")
    stop = Stop()
    if sec is None:
        return stop
    sec.only(_STOP_PRIMARY + ("settled_temperature", "temperature_limit"))
    if kind in VENT_KINDS:
        sec.forbid(("supply_pressure", "target_fill_density", "target_settled_pressure"),
                   f"not a stop criterion of a vent (kind {kind!r}); use target_pressure or target_mass")
    stop.target_pressure = sec.quantity("target_pressure", "pressure", minimum=0.0)
    stop.target_mass = sec.quantity("target_mass", "mass", minimum=0.0, strict=kind in FILL_KINDS)
    stop.target_settled_pressure = sec.quantity("target_settled_pressure", "pressure", minimum=0.0)
    stop.settled_temperature = sec.quantity("settled_temperature", "temperature",
                                            default=DEFAULT_SETTLED_TEMPERATURE, minimum=0.0)
    stop.target_fill_density = sec.quantity("target_fill_density", "density", minimum=0.0)
    stop.supply_pressure = sec.boolean("supply_pressure", default=False)
    if sec.has("supply_pressure") and not stop.supply_pressure:
        raise ctx.error("stop.supply_pressure", False, "only true is meaningful (leave it out otherwise)")
    stop.temperature_limit = sec.quantity("temperature_limit", "temperature", minimum=0.0)
    given = [k for k in _STOP_PRIMARY if sec.has(k)]
    if len(given) > 1:
        raise ctx.error(f"stop.{given[1]}", sec.data[given[1]],
                        f"give one stop criterion: stop.{given[0]} is already given")
    if not given and stop.temperature_limit is None and kind not in TRANSIENT_KINDS:
        allowed = ("target_pressure, target_mass" if kind in VENT_KINDS
                   else ", ".join(_STOP_PRIMARY))
        raise ctx.error("stop", None, f"missing stop criterion: one of {allowed}")
    if not given and kind not in TRANSIENT_KINDS:
        raise ctx.error("stop", None, "temperature_limit alone cannot end a steady fill or vent; "
                        "add target_pressure or target_mass")
    return stop


def _read_limits(top, ctx) -> Limits:
    lim = Limits()
    sec = top.table("limits")
    if sec is None:
        return lim
    sec.only(tuple(Limits.__dataclass_fields__))
    for k in ("max_gas_temperature", "min_gas_temperature", "max_wall_temperature", "min_wall_temperature"):
        setattr(lim, k, sec.quantity(k, "temperature", default=getattr(lim, k), minimum=0.0))
    lim.max_pressure = sec.quantity("max_pressure", "pressure", minimum=0.0)
    lim.max_fill_density = sec.quantity("max_fill_density", "density", minimum=0.0)
    lim.max_liquid_volume_fraction = sec.number("max_liquid_volume_fraction", minimum=0.0, maximum=1.0,
                                                strict_min=True)
    for lo, hi in (("min_gas_temperature", "max_gas_temperature"), ("min_wall_temperature", "max_wall_temperature")):
        a, b = getattr(lim, lo), getattr(lim, hi)
        if a is not None and b is not None and a >= b:
            raise ctx.error(f"limits.{lo}", sec.data.get(lo, format_quantity(a, "temperature")),
                            f"must be below limits.{hi} ({format_quantity(b, 'temperature')})")
    return lim


def _read_output(top, ctx) -> Output:
    out = Output()
    sec = top.table("output")
    if sec is None:
        return out
    sec.only(("json", "csv", "report", "units", "digits"))
    base = (ctx.path.parent if ctx.file != "<scenario>" else Path.cwd()).resolve()
    for k, ext in (("json", ".json"), ("csv", ".csv"), ("report", ".html")):
        raw = sec.string(k)
        if raw is None:
            continue
        if not raw.strip():
            raise ctx.error(f"output.{k}", raw, "an empty file name")
        p = Path(raw)
        p = (p if p.is_absolute() else base / p).resolve()
        # a scenario someone sent you must not write anywhere else than beside itself
        if not ctx.allow_output_outside and not p.is_relative_to(base):
            raise ctx.error(f"output.{k}", raw, f"outside the scenario's folder {base}; a scenario writes only "
                            "beside itself (eosfill run --allow-output-outside allows it, or give "
                            f"--{k} on the command line)")
        if ctx.path is not None and ctx.file != "<scenario>" and p == ctx.path.resolve():
            raise ctx.error(f"output.{k}", raw, "is the scenario file itself")
        if not p.parent.is_dir():
            raise ctx.error(f"output.{k}", raw, f"the folder {p.parent} does not exist")
        if p.is_dir():
            raise ctx.error(f"output.{k}", raw, "is a folder; give a file name")
        setattr(out, k, p)
    out.units = sec.string("units", default="engineering", choices=("engineering", "SI"), fold=True)
    out.digits = sec.number("digits", default=6, minimum=2, maximum=17, integer=True)
    return out


