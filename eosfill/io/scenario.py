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

Where things are: the dataclasses of each section (``Vessel``, ``Initial``,
``Supply``, ``Bank``, ``Stop``, ``Limits``, ``Transient``, ... and the whole
``Scenario``); the key-checking reader (``_Reader``, ``_Context``);
``load_scenario``; one ``_read_<section>`` function per section; and the
cross-checks between sections (``_check_consistency``).

Results computed from a scenario are estimates from an equation of state and
simplified models; local codes, the vessel's approval documents and licensed
practice govern.
"""
from __future__ import annotations

import difflib
import math
import sys
from dataclasses import asdict, dataclass, field
from pathlib import Path

from eosfill.errors import InputError
from eosfill.io.units import STANDARD_ATMOSPHERE, format_quantity, parse_quantity

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

SCHEMA_VERSION = 1

KINDS = ("fill", "cascade_fill", "vent", "liquefied_fill", "transient_fill", "transient_vent")
FILL_KINDS = ("fill", "cascade_fill", "liquefied_fill", "transient_fill")
VENT_KINDS = ("vent", "transient_vent")
TRANSIENT_KINDS = ("transient_fill", "transient_vent")
MODELS = ("PR", "PR78", "SRK", "tc-PR", "tc-RK", "PR-fitted")   # eosfill.model.models.MODELS (a test keeps them equal)
RESTRICTIONS = ("orifice", "valve", "mass_flow", "pressure_ramp")
HEAT_MODELS = ("adiabatic", "wall")

# Defaults that are facts of the trade, not of physics (documented in docs/scenario.md)
DEFAULT_AMBIENT_TEMPERATURE = 288.15  # K, 15 °C; common practice, no source
DEFAULT_SETTLED_TEMPERATURE = 288.15  # K, 15 °C; common practice, no source
# 85 °C and -40 °C are the gas-temperature bounds of several cylinder standards
# (from memory); here only defaults that raise flags, common practice, no source.
DEFAULT_MAX_GAS_TEMPERATURE = 358.15  # K, 85 °C
DEFAULT_MIN_GAS_TEMPERATURE = 233.15  # K, -40 °C

CAUTION = ("Results are estimates from an equation of state and simplified models; local codes, "
           "the vessel's approval documents and licensed practice govern.")


# --------------------------------------------------------------------------
# the schema as dataclasses (all values SI: K, Pa, m3, kg, s, W/(m2 K) ...)
# --------------------------------------------------------------------------
@dataclass
class KijOverride:
    """One binary interaction parameter set by the user."""

    pair: tuple
    kij: float


@dataclass
class FluidSpec:
    """``[fluid]``: the components, the model and the default composition.

    ``composition`` holds mole fractions by canonical fluid name (mass
    fractions in the file are converted on reading).
    """

    composition: dict
    model: str = "PR"
    basis: str = "mole"
    normalise: bool = False
    volume_shift: str = "none"
    kij: list = field(default_factory=list)


@dataclass
class Vessel:
    """``[vessel]``: the rigid vessel."""

    volume: float
    name: str = ""
    wall_mass: float | None = None
    wall_specific_heat: float | None = None
    internal_area: float | None = None
    external_area: float | None = None
    working_pressure: float | None = None
    working_temperature: float = DEFAULT_SETTLED_TEMPERATURE
    inner_radius: float | None = None
    wall_layers: list = field(default_factory=list)  # eosfill.heat.Layer, from the inside out


@dataclass
class Initial:
    """``[initial]``: what the vessel holds before the fill or the vent.

    Either ``empty`` (evacuated), or ``temperature`` with one of ``pressure``
    or ``mass``.  ``composition`` None means the fluid's composition.
    """

    empty: bool = False
    temperature: float | None = None
    pressure: float | None = None
    mass: float | None = None
    wall_temperature: float | None = None
    composition: dict | None = None


@dataclass
class Supply:
    """``[supply]``: a source at constant temperature and pressure."""

    temperature: float
    pressure: float
    composition: dict | None = None
    temperature_schedule: list | None = None  # [(t [s], T [K]), ...] for time-resolved fills


@dataclass
class Bank:
    """One ``[[banks]]`` entry: a storage vessel of a cascade, used in the order listed."""

    volume: float
    temperature: float
    pressure: float
    name: str = ""
    composition: dict | None = None


@dataclass
class Stop:
    """``[stop]``: when the fill or the vent ends (the first criterion met)."""

    target_pressure: float | None = None
    target_mass: float | None = None
    target_settled_pressure: float | None = None
    settled_temperature: float = DEFAULT_SETTLED_TEMPERATURE
    target_fill_density: float | None = None
    supply_pressure: bool = False
    temperature_limit: float | None = None


@dataclass
class Ambient:
    """``[ambient]``: surroundings; the pressure is also the zero of gauge pressures."""

    temperature: float = DEFAULT_AMBIENT_TEMPERATURE
    pressure: float = STANDARD_ATMOSPHERE


@dataclass
class Limits:
    """``[limits]``: values that raise a flag in the results when passed."""

    max_gas_temperature: float | None = DEFAULT_MAX_GAS_TEMPERATURE
    min_gas_temperature: float | None = DEFAULT_MIN_GAS_TEMPERATURE
    max_wall_temperature: float | None = None
    min_wall_temperature: float | None = None
    max_pressure: float | None = None
    max_fill_density: float | None = None
    max_liquid_volume_fraction: float | None = None


@dataclass
class Output:
    """``[output]``: files written after a run (paths relative to the scenario file)."""

    json: Path | None = None
    csv: Path | None = None
    report: Path | None = None
    units: str = "engineering"
    digits: int = 6


@dataclass
class Cascade:
    """``[cascade]``: how banks are switched."""

    switch_pressure_difference: float = 0.0


@dataclass
class Restriction:
    """``[transient.restriction]``: what limits the flow."""

    type: str
    diameter: float | None = None
    discharge_coefficient: float | None = None
    Kv: float | None = None
    Cv: float | None = None
    xT: float | None = None
    FL: float | None = None
    mass_flow: float | None = None
    rate: float | None = None


@dataclass
class HeatTransfer:
    """``[transient.heat_transfer]``: gas-wall and wall-ambient heat transfer."""

    model: str = "adiabatic"
    inner_coefficient: float | None = None
    outer_coefficient: float = 0.0


@dataclass
class Transient:
    """``[transient]``: time-resolved runs."""

    duration: float
    restriction: Restriction
    heat_transfer: HeatTransfer = field(default_factory=HeatTransfer)
    output_interval: float | None = None
    output_times: list | None = None
    back_pressure: float | None = None
    rtol: float = 1e-6


@dataclass
class Scenario:
    """A whole scenario, SI throughout.  Build with :func:`load_scenario`."""

    kind: str
    fluid_spec: FluidSpec
    vessel: Vessel
    initial: Initial
    stop: Stop
    ambient: Ambient = field(default_factory=Ambient)
    limits: Limits = field(default_factory=Limits)
    output: Output = field(default_factory=Output)
    supply: Supply | None = None
    banks: list = field(default_factory=list)
    cascade: Cascade = field(default_factory=Cascade)
    transient: Transient | None = None
    title: str = ""
    description: str = ""
    path: Path | None = None
    _fluid: object = field(default=None, init=False, repr=False, compare=False)

    # ------------------------------------------------------------------
    def component_names(self) -> list:
        """All components named anywhere in the scenario, [fluid] ones first."""
        names = list(self.fluid_spec.composition)
        comps = [self.initial.composition, self.supply.composition if self.supply else None,
                 *(b.composition for b in self.banks)]
        for comp in comps:
            for name in comp or {}:
                if name not in names:
                    names.append(name)
        return names

    def fluid(self):
        """The :class:`eosfill.Fluid` of the scenario.

        Its components are those of ``[fluid]`` plus any other named in
        ``[initial]``, ``[supply]`` or ``[[banks]]`` (at zero mole fraction),
        so that every stream is a composition of the same fluid; take one
        with ``scenario.fluid().with_composition(scenario.mole_fractions(...))``.
        """
        if self._fluid is None:
            from eosfill.states.fluid import Fluid

            spec = self.fluid_spec
            comp = {n: spec.composition.get(n, 0.0) for n in self.component_names()}
            kij = {tuple(k.pair): k.kij for k in spec.kij}
            self._fluid = Fluid(comp, model=spec.model, kij=kij or None, normalise=True,
                                volume_shift=None if spec.volume_shift == "none" else spec.volume_shift)
        return self._fluid

    def mole_fractions(self, composition=None):
        """Mole fractions of ``composition`` (a section's, or None for the
        fluid's) in the order of ``self.fluid().names``."""
        import numpy as np

        comp = self.fluid_spec.composition if composition is None else composition
        return np.array([comp.get(n, 0.0) for n in self.fluid().names])

    def to_dict(self) -> dict:
        """Plain dict of the scenario (SI values), for JSON output."""
        d = asdict(self)
        d.pop("_fluid", None)
        d["path"] = str(self.path) if self.path else None
        for key in ("json", "csv", "report"):
            if d["output"][key] is not None:
                d["output"][key] = str(d["output"][key])
        d["units"] = "SI: K, Pa, m3, kg, s, W/(m2 K), J/(kg K), kg/m3"
        return d

    def summary(self) -> list:
        """A few lines describing the scenario in an engineer's units."""
        f = self.fluid_spec
        comp = ", ".join(f"{n} {x:.6g}" for n, x in f.composition.items())
        lines = [f"scenario: {self.title or (self.path.name if self.path else '')} (kind {self.kind})",
                 f"fluid: {comp} (mole fractions), model {f.model}",
                 f"vessel: {format_quantity(self.vessel.volume, 'volume')}"]
        ini = self.initial
        if ini.empty:
            lines.append("initial: empty (evacuated)")
        else:
            what = (format_quantity(ini.pressure, "pressure") if ini.pressure is not None
                    else format_quantity(ini.mass, "mass"))
            lines.append(f"initial: {format_quantity(ini.temperature, 'temperature')}, {what}")
        if self.supply:
            lines.append(f"supply: {format_quantity(self.supply.temperature, 'temperature')}, "
                         f"{format_quantity(self.supply.pressure, 'pressure')}")
        for i, b in enumerate(self.banks):
            lines.append(f"bank {b.name or i + 1}: {format_quantity(b.volume, 'volume')}, "
                         f"{format_quantity(b.temperature, 'temperature')}, "
                         f"{format_quantity(b.pressure, 'pressure')}")
        return lines


# --------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------
class _Reader:
    """Reads one table of the file, remembering its key path for messages."""

    def __init__(self, ctx, data, path):
        self.ctx = ctx
        self.data = data
        self.path = path

    def key(self, k):
        return f"{self.path}.{k}" if self.path else k

    def has(self, k):
        return k in self.data

    def only(self, allowed, why=None):
        """Every key of the table must be one of ``allowed``."""
        for k in self.data:
            if k not in allowed:
                close = difflib.get_close_matches(k, list(allowed), n=1, cutoff=0.6)
                hint = f"; did you mean {close[0]!r}?" if close else ""
                where = f"[{self.path}]" if self.path else "the top level"
                allowed_text = ", ".join(allowed)
                raise self.ctx.error(self.key(k), self.data[k],
                                     why or f"unknown key in {where}{hint} (allowed: {allowed_text})")

    def forbid(self, keys, why):
        for k in keys:
            if k in self.data:
                raise self.ctx.error(self.key(k), self.data[k], why)

    def require(self, k, why="is required"):
        if k not in self.data:
            raise self.ctx.error(self.key(k), None, f"missing required key: {why}")
        return self.data[k]

    def quantity(self, k, kind, required=False, default=None, minimum=None, strict=True,
                 maximum=None, default_unit=None, what="is required"):
        if k not in self.data:
            if required:
                self.require(k, what)
            return default
        raw = self.data[k]
        value = self.ctx.parse(raw, kind, self.key(k), default_unit)
        self.ctx.check_range(self.key(k), raw, value, kind, minimum, strict, maximum)
        return value

    def number(self, k, default=None, minimum=None, maximum=None, strict_min=False, strict_max=False,
               required=False, integer=False):
        if k not in self.data:
            if required:
                self.require(k)
            return default
        raw = self.data[k]
        if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw):
            raise self.ctx.error(self.key(k), raw, "expected a plain number (no unit)")
        if integer and not isinstance(raw, int):
            raise self.ctx.error(self.key(k), raw, "expected a whole number")
        bad_lo = minimum is not None and (raw <= minimum if strict_min else raw < minimum)
        bad_hi = maximum is not None and (raw >= maximum if strict_max else raw > maximum)
        if bad_lo or bad_hi:
            lo = "" if minimum is None else f"{'>' if strict_min else '>='} {minimum:g}"
            hi = "" if maximum is None else f"{'<' if strict_max else '<='} {maximum:g}"
            raise self.ctx.error(self.key(k), raw, f"out of range: must be {' and '.join(t for t in (lo, hi) if t)}")
        return int(raw) if integer else float(raw)

    def boolean(self, k, default=False):
        if k not in self.data:
            return default
        raw = self.data[k]
        if not isinstance(raw, bool):
            raise self.ctx.error(self.key(k), raw, "expected true or false")
        return raw

    def string(self, k, default=None, choices=None, required=False, fold=None):
        if k not in self.data:
            if required:
                self.require(k, f"one of {', '.join(map(repr, choices))}" if choices else "is required")
            return default
        raw = self.data[k]
        if not isinstance(raw, str):
            raise self.ctx.error(self.key(k), raw, "expected a string in quotes")
        value = raw
        if choices is not None:
            canon = {(c.lower() if fold else c): c for c in choices}
            value = canon.get(raw.lower() if fold else raw)
            if value is None:
                raise self.ctx.error(self.key(k), raw, f"expected one of {', '.join(map(repr, choices))}")
        return value

    def table(self, k, required=False, what="section is required"):
        if k not in self.data:
            if required:
                raise self.ctx.error(self.key(k), None, f"missing required section [{self.key(k)}]: {what}")
            return None
        raw = self.data[k]
        if not isinstance(raw, dict):
            raise self.ctx.error(self.key(k), raw, f"expected a table [{self.key(k)}]")
        return _Reader(self.ctx, raw, self.key(k))


class _Context:
    def __init__(self, path):
        self.path = Path(path)
        self.file = str(path)
        self.ambient_pressure = STANDARD_ATMOSPHERE
        self.normalise = False
        self.mass_basis = False

    def error(self, key_path, value, why, allowed=""):
        shown = "" if value is None else f" = {value!r}"
        return InputError(key_path, value, allowed or why, message=f"{self.file}: {key_path}{shown}: {why}")

    def parse(self, raw, kind, key_path, default_unit=None):
        try:
            return parse_quantity(raw, kind, key_path, ambient_pressure=self.ambient_pressure,
                                  default_unit=default_unit)
        except InputError as exc:
            raise InputError(exc.name, exc.value, exc.allowed, message=f"{self.file}: {exc}") from None

    def check_range(self, key_path, raw, value, kind, minimum, strict, maximum):
        if minimum is not None and (value <= minimum if strict else value < minimum):
            bound = "absolute zero (0 K)" if kind == "temperature" and minimum == 0.0 else \
                format_quantity(minimum, kind) if kind != "dimensionless" else f"{minimum:g}"
            if kind == "pressure" and minimum == 0.0:
                bound = "0 Pa absolute (a gauge value below -1 atm, or a negative pressure?)"
            raise self.error(key_path, raw, f"out of range: must be {'above' if strict else 'at least'} {bound} "
                             f"(got {format_quantity(value, kind)})")
        if maximum is not None and value > maximum:
            raise self.error(key_path, raw, f"out of range: must be at most {format_quantity(maximum, kind)} "
                             f"(got {format_quantity(value, kind)})")

    def composition(self, raw, key_path):
        """{name: fraction} or a name -> {canonical name: mole fraction}."""
        from eosfill.model.components import get_component

        if isinstance(raw, str):
            raw = {raw: 1.0}
        if not isinstance(raw, dict) or not raw:
            raise self.error(key_path, raw, 'expected a fluid name or a table of fractions, '
                             'e.g. { methane = 0.9, ethane = 0.1 }')
        fracs = {}
        masses = {}
        for name, frac in raw.items():
            kp = f"{key_path}.{name}" if name.replace("_", "").isalnum() else f'{key_path}."{name}"'
            try:
                comp = get_component(name)
            except InputError as exc:
                raise InputError(kp, name, exc.allowed, message=f"{self.file}: {kp}: {exc}") from None
            if comp.name in fracs:
                raise self.error(kp, frac, f"{comp.name} appears twice in {key_path}")
            if isinstance(frac, bool) or not isinstance(frac, (int, float)) or not math.isfinite(frac):
                raise self.error(kp, frac, "expected a fraction (plain number in [0, 1])")
            if frac < 0.0 or frac > 1.0:
                raise self.error(kp, frac, "out of range: a fraction must be in [0, 1]")
            fracs[comp.name] = float(frac)
            masses[comp.name] = comp.M
        total = sum(fracs.values())
        if total <= 0.0:
            raise self.error(key_path, raw, "the fractions sum to zero")
        if abs(total - 1.0) > 1e-9 and not self.normalise:
            raise self.error(key_path, raw, f"the fractions sum to {total!r}, not 1 (within 1e-9); "
                             "correct them or set fluid.normalise = true")
        if self.mass_basis:
            moles = {n: w / masses[n] for n, w in fracs.items()}
            total = sum(moles.values())
            return {n: m / total for n, m in moles.items()}
        return {n: w / total for n, w in fracs.items()}


_TOP = ("schema_version", "kind", "title", "description", "fluid", "vessel", "initial", "supply",
        "banks", "cascade", "stop", "ambient", "limits", "output", "transient",
        "sweep")  # [sweep]: read by eosfill.io.sweep (eosfill sweep); a single run ignores it


def load_scenario(path) -> Scenario:
    """Read and check a TOML scenario file.

    Parameters
    ----------
    path : str or Path

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
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
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
                  path=ctx.path if ctx.file != "<scenario>" else None)
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
    base = ctx.path.parent if ctx.file != "<scenario>" else Path.cwd()
    for k, ext in (("json", ".json"), ("csv", ".csv"), ("report", ".html")):
        raw = sec.string(k)
        if raw is None:
            continue
        if not raw.strip():
            raise ctx.error(f"output.{k}", raw, "an empty file name")
        p = Path(raw)
        p = p if p.is_absolute() else base / p
        if not p.parent.is_dir():
            raise ctx.error(f"output.{k}", raw, f"the folder {p.parent} does not exist")
        if p.is_dir():
            raise ctx.error(f"output.{k}", raw, "is a folder; give a file name")
        setattr(out, k, p)
    out.units = sec.string("units", default="engineering", choices=("engineering", "SI"), fold=True)
    out.digits = sec.number("digits", default=6, minimum=2, maximum=17, integer=True)
    return out


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
    if sec.has("output_times"):
        raw = sec.data["output_times"]
        if not isinstance(raw, list) or not raw:
            raise ctx.error("transient.output_times", raw, 'expected a list of times, e.g. [0, 30, "2 min"]')
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


def _check_consistency(ctx, kind, initial, supply, banks, stop, vessel, limits):
    fp = format_quantity
    p0 = initial.pressure
    if kind in FILL_KINDS and supply is not None and p0 is not None and supply.pressure <= p0:
        raise ctx.error("supply.pressure", fp(supply.pressure, "pressure"),
                        f"must be above initial.pressure ({fp(p0, 'pressure')}) for gas to flow in")
    if kind in ("cascade_fill", "transient_fill") and banks and p0 is not None:
        if max(b.pressure for b in banks) <= p0:
            raise ctx.error("banks", None, f"no bank pressure is above initial.pressure ({fp(p0, 'pressure')})")
    if stop.target_pressure is not None and p0 is not None:
        if kind in FILL_KINDS and stop.target_pressure <= p0:
            raise ctx.error("stop.target_pressure", fp(stop.target_pressure, "pressure"),
                            f"a fill must end above initial.pressure ({fp(p0, 'pressure')})")
        if kind in VENT_KINDS and stop.target_pressure >= p0:
            raise ctx.error("stop.target_pressure", fp(stop.target_pressure, "pressure"),
                            f"a vent must end below initial.pressure ({fp(p0, 'pressure')})")
    if kind in VENT_KINDS and stop.target_mass is not None and initial.mass is not None \
            and stop.target_mass >= initial.mass:
        raise ctx.error("stop.target_mass", fp(stop.target_mass, "mass"),
                        f"a vent must end below initial.mass ({fp(initial.mass, 'mass')})")
    if kind in FILL_KINDS and stop.target_mass is not None and initial.mass is not None \
            and stop.target_mass <= initial.mass:
        raise ctx.error("stop.target_mass", fp(stop.target_mass, "mass"),
                        f"a fill must end above initial.mass ({fp(initial.mass, 'mass')})")
    if kind in ("fill", "liquefied_fill") and supply is not None:
        if stop.target_pressure is not None and stop.target_pressure > supply.pressure:
            raise ctx.error("stop.target_pressure", fp(stop.target_pressure, "pressure"),
                            f"above supply.pressure ({fp(supply.pressure, 'pressure')}): a fill from a supply "
                            "cannot end above the supply pressure")
    if kind == "cascade_fill" and stop.target_pressure is not None:
        top = max(b.pressure for b in banks)
        if stop.target_pressure > top:
            raise ctx.error("stop.target_pressure", fp(stop.target_pressure, "pressure"),
                            f"above the highest bank pressure ({fp(top, 'pressure')})")
