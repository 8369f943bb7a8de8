"""Reading one table of a scenario file with every key checked: unknown keys
(with the closest allowed one), types, units, ranges, compositions - each
error names the file and the key path.  Used by :mod:`eosfill.io.scenario`."""
from __future__ import annotations

import difflib
import math
from pathlib import Path

from eosfill.errors import InputError
from eosfill.io.scenario_schema import FILL_KINDS, VENT_KINDS
from eosfill.io.units import STANDARD_ATMOSPHERE, check_range, format_quantity, is_gauge, parse_quantity

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
        self.allow_output_outside = False
        self.gauge_keys = set()

    def error(self, key_path, value, why, allowed=""):
        shown = "" if value is None else f" = {value!r}"
        return InputError(key_path, value, allowed or why, message=f"{self.file}: {key_path}{shown}: {why}")

    def parse(self, raw, kind, key_path, default_unit=None):
        if kind == "pressure" and is_gauge(raw):
            self.gauge_keys.add(key_path)
        try:
            return parse_quantity(raw, kind, key_path, ambient_pressure=self.ambient_pressure,
                                  default_unit=default_unit)
        except InputError as exc:
            raise InputError(exc.name, exc.value, exc.allowed, message=f"{self.file}: {exc}") from None

    def check_range(self, key_path, raw, value, kind, minimum, strict, maximum):
        try:
            check_range(key_path, raw, value, kind, minimum, strict, maximum)
        except InputError as exc:
            raise InputError(exc.name, exc.value, exc.allowed, message=f"{self.file}: {exc}") from None

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
