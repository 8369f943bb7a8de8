"""The scenario schema: its constants and the dataclasses a scenario file is
read into (every value SI: K, Pa, m³, kg, s).  The reader is
:mod:`eosfill.io.scenario`; the key-checking helpers are in
:mod:`eosfill.io.scenario_checks`; the format is documented key by key in
``docs/scenario.md``.

Results computed from a scenario are estimates from an equation of state and
simplified models; local codes, the vessel's approval documents and licensed
practice govern.
"""
from __future__ import annotations

import functools

from dataclasses import asdict, dataclass, field
from pathlib import Path

from eosfill.io.units import STANDARD_ATMOSPHERE, format_quantity

SCHEMA_VERSION = 1
MAX_SCENARIO_BYTES = 10_000_000  # a scenario is a few kB; anything this big is not one
# the most output times a time-resolved run reports: 1e6 rows is ~200 MB of JSON,
# beyond what any reader of a fill's time series needs (common practice, no source)
MAX_OUTPUT_POINTS = 1_000_000

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
    gauge_keys: set = field(default_factory=set)  # key paths given as gauge pressures ("20 barg")
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
            spec = self.fluid_spec
            comp = tuple((n, float(spec.composition.get(n, 0.0))) for n in self.component_names())
            kij = tuple((tuple(k.pair), float(k.kij)) for k in spec.kij)
            shift = None if spec.volume_shift == "none" else spec.volume_shift
            self._fluid = _fluid_of(comp, spec.model, kij, shift)
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

    def pressure_text(self, value, key, digits=6, si=False) -> str:
        """A pressure as the file gave it: gauge (``"100 barg"``) when ``key`` was
        written as gauge, absolute otherwise (``"101.3 bar"``)."""
        from eosfill.io.units import format_number

        if value is None:
            return "—"
        if key in self.gauge_keys:
            g = value - self.ambient.pressure
            return f"{format_number(g, digits)} Pa gauge" if si else f"{format_number(g / 1e5, digits)} barg"
        return format_quantity(value, "pressure", unit="Pa" if si else None, digits=digits)

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
            what = (self.pressure_text(ini.pressure, "initial.pressure") if ini.pressure is not None
                    else format_quantity(ini.mass, "mass"))
            lines.append(f"initial: {format_quantity(ini.temperature, 'temperature')}, {what}")
        if self.supply:
            lines.append(f"supply: {format_quantity(self.supply.temperature, 'temperature')}, "
                         f"{self.pressure_text(self.supply.pressure, 'supply.pressure')}")
        for i, b in enumerate(self.banks):
            lines.append(f"bank {b.name or i + 1}: {format_quantity(b.volume, 'volume')}, "
                         f"{format_quantity(b.temperature, 'temperature')}, "
                         f"{self.pressure_text(b.pressure, f'banks[{i}].pressure')}")
        return lines


@functools.lru_cache(maxsize=64)
def _fluid_of(comp, model, kij, volume_shift):
    """One :class:`eosfill.Fluid` per (composition, model, k_ij, translation): a study's
    scenarios of one fluid share it instead of building its parameters again for every
    case (a Fluid is not changed after it is made; its arrays are read-only)."""
    from eosfill.states.fluid import Fluid

    return Fluid(dict(comp), model=model, kij=dict(kij) or None, normalise=True, volume_shift=volume_shift)
