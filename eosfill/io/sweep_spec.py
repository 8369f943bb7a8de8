"""The ``[sweep]`` section of a scenario file: values with units, key paths in the raw scenario
table (:func:`split_key_path`, :func:`set_key_path`), and :func:`read_sweep` into a :class:`SweepSpec`.

The syntax is shown in :mod:`eosfill.io.sweep` (the map of this split); the output columns a
``[sweep.limit]`` may name are in :mod:`eosfill.io.sweep_rows`.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np

from eosfill.errors import InputError
from eosfill.io.sweep_rows import OUTPUT_COLUMNS, column_name, unit_label
from eosfill.study import Draw, Grid, LimitSearch, make_cases

SWEEP_KEYS = ("seed", "samples", "latin_hypercube", "chunk_size", "grid", "draw", "limit")
LIMIT_KEYS = ("input", "output", "limit", "keep", "low", "high", "tolerance", "max_runs")
# kinds of quantity a swept value may be, tried in this order (eosfill.units.KINDS)
_TRIAL_KINDS = ("pressure", "temperature", "volume", "mass", "length", "area", "time", "mass_flow",
                "pressure_rate", "heat_transfer_coefficient", "specific_heat", "density", "thermal_conductivity")


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
