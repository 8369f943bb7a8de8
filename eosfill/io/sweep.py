"""Studies of a scenario file: the ``[sweep]`` section and ``eosfill sweep``.

This module binds the generic study machinery of :mod:`eosfill.study` to
scenario files.  A case is the scenario with some keys overridden; every
override is written into the raw TOML table *before* the scenario is read,
so it is checked exactly like the same key typed in the file (unit, range,
cross-checks), and the case runs through the same code as ``eosfill run``
(:func:`eosfill.io.jobs.run_scenario` with ``write=False``).

Syntax (values with units as elsewhere in a scenario; keys are key paths of
the scenario, quoted, e.g. ``"initial.pressure"``, ``"banks[1].pressure"``,
``"transient.heat_transfer.inner_coefficient"``, ``"fluid.kij[0].kij"``)::

    [sweep]
    seed = 2026               # Monte Carlo draws are reproducible from it
    samples = 200             # draws per grid point
    latin_hypercube = false   # stratified draws (scipy.stats.qmc)
    chunk_size = 50           # cases per task (optional)

    [sweep.grid]              # full factorial, the last key varies fastest
    "ambient.temperature" = ["0 degC", "20 degC", "40 degC"]
    "initial.pressure" = { from = "10 bar", to = "50 bar", steps = 5 }

    [sweep.draw]
    "supply.temperature" = { distribution = "normal", mean = "15 degC", sd = "2 K" }
    "vessel.volume" = { distribution = "triangular", low = "49 L", mode = "50 L", high = "51 L" }
    "transient.heat_transfer.inner_coefficient" = { distribution = "uniform", low = "200 W/m2/K", high = "600 W/m2/K" }

    [sweep.limit]             # for each case: the input value at which an output reaches a limit
    input = "transient.restriction.rate"
    output = "T_gas_max [K]"
    limit = "85 degC"
    keep = "below"            # the output stays below the limit ("above" for a lowest temperature)
    low = "2 MPa/min"
    high = "40 MPa/min"
    tolerance = "0.1 MPa/min"
    max_runs = 30

Columns of the result table (one row per case): ``case``; each swept input
as ``<key path> [<SI unit>]`` (``initial.pressure [Pa]``; a plain number
``[-]``; a word without unit, e.g. ``fluid.model``); the outputs of
:func:`result_row`, SI with the unit in brackets (``T_end [K]``,
``P_settled [Pa]``); with a limit search also ``<input> at limit [unit]``,
``<output> at limit [unit]``, ``<input> bracket width [unit]`` and
``limit runs``; ``status`` (ok / input / solver / internal) and ``message``.

End-state fills and vents that share a mixture run as vectorised batches
where the vessel layer allows it (:func:`eosfill.vessel.batch.fill_to_amount`,
:func:`eosfill.vessel.batch.vent_isentropic`); the
rest run one at a time through :func:`eosfill.io.jobs.run_scenario`.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import copy
import math
import re
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from eosfill.errors import InputError
from eosfill.study import Draw, Grid, LimitSearch, make_cases, run_study, search_limit

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

SWEEP_KEYS = ("seed", "samples", "latin_hypercube", "chunk_size", "grid", "draw", "limit")
LIMIT_KEYS = ("input", "output", "limit", "keep", "low", "high", "tolerance", "max_runs")
# kinds of quantity a swept value may be, tried in this order (eosfill.units.KINDS)
_TRIAL_KINDS = ("pressure", "temperature", "volume", "mass", "length", "area", "time", "mass_flow",
                "pressure_rate", "heat_transfer_coefficient", "specific_heat", "density", "thermal_conductivity")


def unit_label(kind):
    """The SI unit of a kind as written in column names: ``m3``, ``W/(m2 K)``, ``-``."""
    from eosfill.io.units import KINDS

    if kind is None:
        return None
    si = KINDS[kind].si
    return si.replace("**", "").replace("*", " ") if si else "-"


def column_name(key_path, kind):
    label = unit_label(kind)
    return key_path if label is None else f"{key_path} [{label}]"


# --------------------------------------------------------------------------
# values with units
# --------------------------------------------------------------------------
def _kind_and_value(raw, key, ambient_pressure):
    """(kind, SI value) of a value as written; (None, raw) for a word such as "SRK"."""
    from eosfill.io.units import parse_quantity

    if isinstance(raw, bool):
        raise InputError(key, raw, "a number, a quantity with its unit or a word")
    if isinstance(raw, (int, float)):
        if not math.isfinite(raw):
            raise InputError(key, raw, "a finite number")
        return "dimensionless", float(raw)
    if not isinstance(raw, str):
        raise InputError(key, raw, 'a number or a quantity with its unit, e.g. "350 bar"')
    if not re.match(r"^\s*[+-]?(\d|\.\d)", raw):
        return None, raw
    for kind in _TRIAL_KINDS:
        try:
            return kind, parse_quantity(raw, kind, key, ambient_pressure=ambient_pressure)
        except InputError:
            continue
    raise InputError(key, raw, "a quantity with a unit eosfill knows (pressure, temperature, volume, mass, "
                     "length, area, time, mass flow, pressure rate, heat-transfer coefficient, ...)")


def _as_kind(raw, kind, key, ambient_pressure, difference=False):
    from eosfill.io.units import parse_quantity

    if kind == "temperature" and difference:
        kind = "temperature_difference"
    if kind == "dimensionless" and isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return float(raw)
    return parse_quantity(raw, kind, key, ambient_pressure=ambient_pressure)


def override_text(value, kind):
    """How an SI value is written back into the scenario table: ``"2900000.0 Pa"``."""
    from eosfill.io.units import KINDS

    if kind is None:
        return value
    if kind == "dimensionless":
        return float(value)
    return f"{float(value)!r} {KINDS[kind].si}"


# --------------------------------------------------------------------------
# key paths in the raw scenario table
# --------------------------------------------------------------------------
_STEP = re.compile(r"([^.\[\]]+)|\[(\d+)\]")


def split_key_path(path):
    """``"banks[1].pressure"`` -> ``["banks", 1, "pressure"]``."""
    if not isinstance(path, str) or not path.strip():
        raise InputError("sweep", path, "a key path such as \"initial.pressure\"")
    steps, pos = [], 0
    text = path.strip()
    while pos < len(text):
        if text[pos] == ".":
            pos += 1
            continue
        m = _STEP.match(text, pos)
        if not m:
            raise InputError(path, None, message=f"sweep: {path!r} is not a key path (e.g. \"banks[1].pressure\")")
        steps.append(int(m.group(2)) if m.group(2) is not None else m.group(1).strip())
        pos = m.end()
    if not steps or steps[0] == "sweep":
        raise InputError(path, None, message=f"sweep: {path!r} is not a scenario key")
    return steps


def set_key_path(data, path, value):
    """Set ``value`` at ``path`` in the raw table (tables made when missing; list items must exist)."""
    steps = split_key_path(path)
    node = data
    for i, step in enumerate(steps):
        last = i == len(steps) - 1
        where = path if last else ".".join(str(s) for s in steps[:i + 1])
        if isinstance(step, int):
            if not isinstance(node, list) or step >= len(node):
                raise InputError(path, None, message=f"sweep: {path}: there is no item {step} at {where!r}")
            if last:
                node[step] = value
            else:
                node = node[step]
            continue
        if not isinstance(node, dict):
            raise InputError(path, None, message=f"sweep: {path}: {where!r} is not inside a table")
        if last:
            node[step] = value
        else:
            if step not in node:
                node[step] = {}
            node = node[step]


# --------------------------------------------------------------------------
# the [sweep] section
# --------------------------------------------------------------------------
@dataclass
class SweepSpec:
    """The ``[sweep]`` section, values SI; inputs named by their column names."""

    grids: list = field(default_factory=list)
    draws: list = field(default_factory=list)
    samples: int = 0
    seed: int = 0
    latin_hypercube: bool = False
    chunk_size: int | None = None
    limit: LimitSearch | None = None
    keys: dict = field(default_factory=dict)  # column name -> (key path, kind)

    def cases(self):
        return make_cases(self.grids, self.draws, self.samples, self.seed, self.latin_hypercube)


def _err(file, key, value, why):
    shown = "" if value is None else f" = {value!r}"
    return InputError(key, value, why, message=f"{file}: {key}{shown}: {why}")


def read_sweep(raw, file="<scenario>", ambient_pressure=101325.0) -> SweepSpec:
    """Check the ``[sweep]`` table (already read from TOML) into a :class:`SweepSpec`."""
    if not isinstance(raw, dict):
        raise _err(file, "sweep", raw, "expected a table [sweep]")
    for k in raw:
        if k not in SWEEP_KEYS:
            raise _err(file, f"sweep.{k}", raw[k], f"unknown key in [sweep] (allowed: {', '.join(SWEEP_KEYS)})")
    spec = SweepSpec()

    def whole(k, minimum, default):
        v = raw.get(k, default)
        if v is default:
            return v
        if isinstance(v, bool) or not isinstance(v, int) or v < minimum:
            raise _err(file, f"sweep.{k}", v, f"a whole number >= {minimum}")
        return v

    spec.seed = whole("seed", 0, 0)
    spec.samples = whole("samples", 1, 0)
    spec.chunk_size = whole("chunk_size", 1, None)
    lhs = raw.get("latin_hypercube", False)
    if not isinstance(lhs, bool):
        raise _err(file, "sweep.latin_hypercube", lhs, "true or false")
    spec.latin_hypercube = lhs

    def add_key(key, kind):
        split_key_path(key)
        col = column_name(key, kind)
        if col in spec.keys or any(p == key for p, _ in spec.keys.values()):
            raise _err(file, f"sweep: {key}", None, "each key swept, drawn or searched once")
        spec.keys[col] = (key, kind)
        return col

    grid = raw.get("grid", {})
    if not isinstance(grid, dict):
        raise _err(file, "sweep.grid", grid, 'expected a table of key paths, e.g. "initial.pressure" = ["10 bar", "20 bar"]')
    for key, val in grid.items():
        where = f'sweep.grid."{key}"'
        if isinstance(val, dict):
            unknown = set(val) - {"from", "to", "steps"}
            if unknown or not {"from", "to", "steps"} <= set(val):
                raise _err(file, where, val, 'a list of values or { from = ..., to = ..., steps = N }')
            kind, lo = _kind_and_value(val["from"], f"{where}.from", ambient_pressure)
            if kind is None:
                raise _err(file, f"{where}.from", val["from"], "a number or a quantity with its unit")
            hi = _as_kind(val["to"], kind, f"{where}.to", ambient_pressure)
            steps = val["steps"]
            if isinstance(steps, bool) or not isinstance(steps, int) or steps < 2:
                raise _err(file, f"{where}.steps", steps, "a whole number >= 2")
            values = tuple(float(x) for x in np.linspace(lo, hi, steps))
        elif isinstance(val, list) and val:
            parsed = [_kind_and_value(v, f"{where}[{i}]", ambient_pressure) for i, v in enumerate(val)]
            kinds = {k for k, _ in parsed}
            if len(kinds) > 1:
                raise _err(file, where, val, "all values of one key must be of one kind (same dimension)")
            kind = kinds.pop()
            values = tuple(v for _, v in parsed)
        else:
            raise _err(file, where, val, 'a non-empty list of values or { from = ..., to = ..., steps = N }')
        spec.grids.append(Grid(add_key(key, kind), values))

    draw = raw.get("draw", {})
    if not isinstance(draw, dict):
        raise _err(file, "sweep.draw", draw, "expected a table of key paths with a distribution each")
    for key, val in draw.items():
        where = f'sweep.draw."{key}"'
        if not isinstance(val, dict) or "distribution" not in val:
            raise _err(file, where, val, '{ distribution = "normal", mean = ..., sd = ... } (or uniform: low, high; '
                       "triangular: low, mode, high)")
        from eosfill.study.cases import DISTRIBUTIONS

        dist = val["distribution"]
        if dist not in DISTRIBUTIONS:
            raise _err(file, f"{where}.distribution", dist, "one of " + ", ".join(DISTRIBUTIONS))
        need = DISTRIBUTIONS[dist]
        given = [k for k in val if k != "distribution"]
        if sorted(given) != sorted(need):
            raise _err(file, where, val, f"{dist} takes {', '.join(need)}")
        kind, first = _kind_and_value(val[need[0]], f"{where}.{need[0]}", ambient_pressure)
        if kind is None:
            raise _err(file, f"{where}.{need[0]}", val[need[0]], "a number or a quantity with its unit")
        params = {need[0]: first}
        for p in need[1:]:
            params[p] = _as_kind(val[p], kind, f"{where}.{p}", ambient_pressure, difference=p == "sd")
        try:
            spec.draws.append(Draw(add_key(key, kind), dist, params))
        except InputError as exc:
            raise _err(file, where, val, str(exc)) from None
    if spec.draws and not spec.samples:
        raise _err(file, "sweep.samples", None, "missing: the number of Monte Carlo draws (with [sweep.draw])")
    if spec.samples and not spec.draws:
        raise _err(file, "sweep.samples", spec.samples, "only with [sweep.draw]")

    lim = raw.get("limit")
    if lim is not None:
        spec.limit = _read_limit(lim, file, ambient_pressure, add_key)
    if not spec.grids and not spec.draws and spec.limit is None:
        raise _err(file, "sweep", None, "nothing to sweep: give [sweep.grid], [sweep.draw] or [sweep.limit]")
    return spec


def _read_limit(lim, file, ambient_pressure, add_key):
    where = "sweep.limit"
    if not isinstance(lim, dict):
        raise _err(file, where, lim, "expected a table [sweep.limit]")
    for k in lim:
        if k not in LIMIT_KEYS:
            raise _err(file, f"{where}.{k}", lim[k], f"unknown key (allowed: {', '.join(LIMIT_KEYS)})")
    for k in ("input", "output", "limit", "low", "high", "tolerance"):
        if k not in lim:
            raise _err(file, f"{where}.{k}", None, "missing required key")
    key, output = lim["input"], lim["output"]
    if not isinstance(output, str) or output not in OUTPUT_COLUMNS:
        raise _err(file, f"{where}.output", output, "one of the output columns: " + ", ".join(
            c for c in OUTPUT_COLUMNS if c.endswith("]")))
    kind, low = _kind_and_value(lim["low"], f"{where}.low", ambient_pressure)
    if kind is None:
        raise _err(file, f"{where}.low", lim["low"], "a number or a quantity with its unit")
    high = _as_kind(lim["high"], kind, f"{where}.high", ambient_pressure)
    tol = _as_kind(lim["tolerance"], kind, f"{where}.tolerance", ambient_pressure, difference=True)
    out_kind, limit = _kind_and_value(lim["limit"], f"{where}.limit", ambient_pressure)
    out_unit = output.rpartition("[")[2].rstrip("]")
    if unit_label(out_kind) != out_unit:
        raise _err(file, f"{where}.limit", lim["limit"], f"a value in the unit of {output} ({out_unit})")
    keep = lim.get("keep", "below")
    max_runs = lim.get("max_runs", 40)
    if isinstance(max_runs, bool) or not isinstance(max_runs, int):
        raise _err(file, f"{where}.max_runs", max_runs, "a whole number >= 3")
    try:
        return LimitSearch(add_key(key, kind), output, limit, low, high, tol, keep=keep, max_runs=max_runs)
    except InputError as exc:
        raise _err(file, where, lim, str(exc)) from None


# --------------------------------------------------------------------------
# outputs of one run
# --------------------------------------------------------------------------
END_STATE_COLUMNS = ("T_end [K]", "P_end [Pa]", "mass_end [kg]", "mass_change [kg]", "phase_end",
                     "vapor_fraction_end [-]", "T_wall_end [K]", "T_min [K]", "P_settled [Pa]",
                     "short_fill [kg]", "state_of_charge [-]", "stop", "stop_met", "energy_closure [-]",
                     "mass_closure [-]", "flags")
TRANSIENT_COLUMNS = ("T_gas_max [K]", "T_gas_min [K]", "T_end [K]", "P_max [Pa]", "P_end [Pa]", "mass_end [kg]",
                     "mass_change [kg]", "T_wall_inner_min [K]", "T_wall_inner_max [K]", "duration [s]",
                     "stop", "complete", "energy_closure [-]", "mass_closure [-]", "flags")
OUTPUT_COLUMNS = tuple(dict.fromkeys(END_STATE_COLUMNS + TRANSIENT_COLUMNS))
NAN = float("nan")


def _num(x):
    return NAN if x is None else float(x)


def result_row(result) -> dict:
    """The outputs of one run as a flat dict (SI, unit in each name).

    End-state kinds (:class:`eosfill.vessel.Result`) give END_STATE_COLUMNS,
    time-resolved kinds TRANSIENT_COLUMNS; ``flags`` is the number of limit
    flags raised (their text is in the run's own report)."""
    from eosfill.vessel import Result

    if isinstance(result, Result):
        f, s = result.final, result.settled
        m0 = result.initial.mass if result.initial is not None else 0.0
        return {"T_end [K]": f.T, "P_end [Pa]": f.P, "mass_end [kg]": f.mass, "mass_change [kg]": f.mass - m0,
                "phase_end": f.phase, "vapor_fraction_end [-]": f.vapor_fraction,
                "T_wall_end [K]": _num(f.wall_temperature),
                "T_min [K]": _num(result.vent["min_T"]) if result.vent else NAN,
                "P_settled [Pa]": _num(s.P) if s is not None else NAN,
                "short_fill [kg]": _num(s.short_fill) if s is not None else NAN,
                "state_of_charge [-]": _num(s.state_of_charge) if s is not None else NAN,
                "stop": result.stop, "stop_met": bool(result.stop_met),
                "energy_closure [-]": result.energy_closure, "mass_closure [-]": result.mass_closure,
                "flags": len(result.flags)}
    r = result
    return {"T_gas_max [K]": r.peak("T_gas")[0], "T_gas_min [K]": r.peak("T_gas", "min")[0],
            "T_end [K]": float(r.T_gas[-1]), "P_max [Pa]": r.peak("P")[0], "P_end [Pa]": float(r.P[-1]),
            "mass_end [kg]": float(r.mass[-1]), "mass_change [kg]": float(r.mass[-1] - r.mass[0]),
            "T_wall_inner_min [K]": r.peak("T_wall_inner", "min")[0],
            "T_wall_inner_max [K]": r.peak("T_wall_inner")[0], "duration [s]": float(r.t[-1]),
            "stop": r.stop_reason, "complete": bool(r.complete), "energy_closure [-]": float(r.energy_closure),
            "mass_closure [-]": float(r.mass_closure), "flags": len(r.flags)}


# --------------------------------------------------------------------------
# one case of a scenario
# --------------------------------------------------------------------------
class ScenarioCase:
    """Runs cases of one scenario file (picklable: it holds the raw table).

    ``case(inputs)`` -> outputs dict: the scenario with ``inputs`` (column
    name -> SI value) written over its keys, read and checked like a file,
    run by :func:`eosfill.io.jobs.run_scenario` (``write=False``); with a limit
    search, the search over the whole run.
    """

    def __init__(self, data: dict, file: str, keys: dict, limit: LimitSearch | None = None):
        self.data = data
        self.file = file
        self.keys = keys
        self.limit = limit

    def scenario(self, inputs):
        """The :class:`eosfill.io.scenario.Scenario` of a case (checked like a scenario file)."""
        from eosfill.io.scenario import _Context, scenario_from_dict

        data = copy.deepcopy(self.data)
        for col, value in inputs.items():
            key, kind = self.keys[col]
            set_key_path(data, key, override_text(value, kind))
        data.pop("output", None)  # a case writes nothing
        return scenario_from_dict(data, _Context(self.file))

    def run_one(self, inputs):
        from eosfill.io import jobs

        return result_row(jobs.run_scenario(self.scenario(inputs), write=False))

    def __call__(self, inputs):
        if self.limit is not None:
            return search_limit(self.run_one, inputs, self.limit)
        return self.run_one(inputs)

    def run_batch(self, inputs_list):
        """Outputs (or exceptions) of many cases; vectorised fills where possible."""
        if self.limit is not None:
            return [_outcome(self, i) for i in inputs_list]
        scenarios = []
        for inputs in inputs_list:
            try:
                scenarios.append(self.scenario(inputs))
            except Exception as exc:  # noqa: BLE001 - a failure row
                scenarios.append(exc)
        todo = [i for i, s in enumerate(scenarios) if not isinstance(s, Exception)]
        results = run_scenarios([scenarios[i] for i in todo])
        outs = list(scenarios)
        for i, res in zip(todo, results):
            outs[i] = res if isinstance(res, Exception) else (res if isinstance(res, dict) else result_row(res))
        return outs


def _outcome(func, inputs):
    try:
        return func(inputs)
    except Exception as exc:  # noqa: BLE001
        return exc


@dataclass
class Study:
    """A scenario file with a ``[sweep]``: its cases and how one runs."""

    path: Path
    spec: SweepSpec
    case: ScenarioCase
    cases: list
    text: str


def load_study(path) -> Study:
    """Read a scenario file with a ``[sweep]`` section; check the nominal scenario and the sweep."""
    from eosfill.io.scenario import _Context, scenario_from_dict
    from eosfill.io.units import STANDARD_ATMOSPHERE, parse_quantity

    path = Path(path)
    try:
        raw_bytes = path.read_bytes()
        data = tomllib.loads(raw_bytes.decode("utf-8"))
    except FileNotFoundError:
        raise InputError("scenario", str(path), "an existing file", message=f"{path}: scenario file not found") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise InputError("scenario", str(path), "valid TOML", message=f"{path}: not valid TOML: {exc}") from None
    raw_sweep = data.pop("sweep", None)
    if raw_sweep is None:
        raise InputError("sweep", None, message=f"{path}: no [sweep] section: nothing to sweep "
                         "(see docs/study.md; eosfill run runs one case)")
    amb = data.get("ambient", {}).get("pressure", STANDARD_ATMOSPHERE) if isinstance(data.get("ambient"), dict) \
        else STANDARD_ATMOSPHERE
    if isinstance(amb, str):
        amb = parse_quantity(amb, "pressure", "ambient.pressure")
    scenario_from_dict(copy.deepcopy(data), _Context(str(path)))  # the nominal case must be a valid scenario
    spec = read_sweep(raw_sweep, str(path), float(amb))
    case = ScenarioCase(data, str(path), spec.keys, spec.limit)
    cases = spec.cases()
    _check_keys_known(case, cases[0] if cases else {}, spec)
    return Study(path=path, spec=spec, case=case, cases=cases, text=raw_bytes.decode("utf-8"))


def _check_keys_known(case, first, spec):
    """A key path the scenario reader does not know is an error of the file, not of a case."""
    values = dict(first)
    if spec.limit is not None:
        values[spec.limit.input] = spec.limit.low
    for col, value in values.items():
        try:
            case.scenario({col: value})
        except InputError as exc:
            if "unknown key" in str(exc) or "is not inside a table" in str(exc) or "there is no item" in str(exc):
                raise InputError(case.keys[col][0], None, message=f"[sweep] {case.keys[col][0]!r}: {exc}") from None


def sweep_scenario(path, output=None, *, resume=False, workers=None, client=None, scheduler=None,
                   progress=False, batch=True, chunk_size=None):
    """Run the study of a scenario file; return its rows as a pandas DataFrame.

    Parameters
    ----------
    path : str or Path
        Scenario file with a ``[sweep]`` section.
    output : str or Path, optional
        ``.parquet`` or ``.csv``; written in kill-safe chunks while running.
    resume : bool
        Continue an interrupted sweep from the chunks written.
    workers : int, optional
        Local pool size (default all cores; 1: this process).
    client : dask.distributed.Client, optional; scheduler : str, optional
        Run on Dask instead (an existing client or a scheduler address).
    progress : bool or callable
        Progress bar with ETA on a terminal, or a callable(n).
    batch : bool
        Vectorised end-state fills where possible (rows equal single runs).

    Example
    -------
    >>> df = sweep_scenario("data/scenarios/sweep_ngv_fill.toml", workers=1)  # doctest: +SKIP
    >>> df.groupby("ambient.temperature [K]")["T_end [K]"].max()            # doctest: +SKIP
    """
    study = load_study(path)
    return run_study(study.case, study.cases, run_batch=study.case.run_batch if batch else None,
                     output=output, resume=resume, workers=workers, client=client, scheduler=scheduler,
                     chunk_size=chunk_size or study.spec.chunk_size, progress=progress, what=study.text)


# --------------------------------------------------------------------------
# many scenarios at once: vectorised end-state fills where possible
# --------------------------------------------------------------------------
def _batchable(sc):
    """A fill the vector path computes exactly as ``fill`` does (see eosfill.vessel.batch)."""
    st, v, ini = sc.stop, sc.vessel, sc.initial
    return (sc.kind == "fill" and v.wall_mass is None and v.wall_specific_heat is None
            and st.temperature_limit is None
            and (st.target_mass is not None or st.target_fill_density is not None)
            and sc.supply.composition is None and ini.composition is None
            and sc.supply.temperature_schedule is None)


def _batchable_vent(sc):
    """An adiabatic vent (no wall, no temperature limit) of the fluid's own composition."""
    st, v = sc.stop, sc.vessel
    return (sc.kind == "vent" and v.wall_mass is None and v.wall_specific_heat is None
            and st.temperature_limit is None and sc.initial.composition is None
            and (st.target_pressure is not None or st.target_mass is not None))


def _mixture_key(sc):
    f = sc.fluid_spec
    return (tuple(sc.component_names()), tuple(sc.mole_fractions()), f.model, f.volume_shift,
            tuple((tuple(k.pair), k.kij) for k in f.kij))


def run_scenarios(scenarios):
    """Outputs (dict, :func:`result_row`) or the exception of each scenario.

    Batchable fills sharing a mixture go through
    :func:`eosfill.vessel.batch.fill_to_amount` in one call; every other
    scenario, and any case the batch leaves, through
    :func:`eosfill.io.jobs.run_scenario` one at a time."""
    from eosfill.io import jobs
    from eosfill.vessel.batch import fill_to_amount

    from eosfill.vessel.batch import vent_isentropic

    outs = [None] * len(scenarios)
    groups, vents = {}, {}
    for i, sc in enumerate(scenarios):
        if _batchable(sc):
            groups.setdefault(_mixture_key(sc), []).append(i)
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
    for rows in groups.values():
        if len(rows) < 2:
            continue
        scs = [scenarios[i] for i in rows]
        first = scs[0]
        fluid = first.fluid()
        z = first.mole_fractions()

        def arr(get):
            return np.array([np.nan if get(s) is None else get(s) for s in scs], dtype=float)

        V = arr(lambda s: s.vessel.volume)
        target = np.array([s.stop.target_mass if s.stop.target_mass is not None
                           else s.stop.target_fill_density * s.vessel.volume for s in scs])
        try:
            res = fill_to_amount(
                fluid, z, V, arr(lambda s: s.supply.temperature), arr(lambda s: s.supply.pressure), target,
                arr(lambda s: s.stop.settled_temperature),
                T0=arr(lambda s: None if s.initial.empty else s.initial.temperature),
                P0=arr(lambda s: s.initial.pressure), mass0=arr(lambda s: s.initial.mass),
                nominal_pressure=arr(lambda s: s.vessel.working_pressure),
                nominal_temperature=arr(lambda s: s.vessel.working_temperature))
        except Exception:  # noqa: BLE001 - the single path says what is wrong, case by case
            continue
        for k, i in enumerate(rows):
            if res["ok"][k]:
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
    stop = "target_mass" if sc.stop.target_mass is not None else "target_fill_density"
    nominal = P_nom is not None
    return {"T_end [K]": final.T, "P_end [Pa]": final.P, "mass_end [kg]": mass,
            "mass_change [kg]": mass - float(res["m0"][k]), "phase_end": final.phase,
            "vapor_fraction_end [-]": final.vapor_fraction, "T_wall_end [K]": NAN, "T_min [K]": NAN,
            "P_settled [Pa]": settled.P, "short_fill [kg]": float(res["short_fill"][k]) if nominal else NAN,
            "state_of_charge [-]": float(res["state_of_charge"][k]) if nominal else NAN,
            "stop": stop, "stop_met": True, "energy_closure [-]": float(res["energy_closure"][k]),
            "mass_closure [-]": float(res["mass_closure"][k]), "flags": len(flags)}


def study_summary(df):
    """Lines saying how many cases ran and how many failed, by exit class."""
    counts = df["status"].value_counts().to_dict() if len(df) else {}
    failed = sum(v for k, v in counts.items() if k != "ok")
    lines = [f"{len(df)} cases: {counts.get('ok', 0)} ok, {failed} failed"
             + (" (" + ", ".join(f"{k} {counts[k]}" for k in ("input", "solver", "internal") if counts.get(k))
                + "; see the status and message columns)" if failed else "")]
    return lines


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
