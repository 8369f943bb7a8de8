"""Quantities as people write them, converted to SI at the outside edge.

Scenario files and the command line give values with their units, as an
engineer would write them: ``"350 bar"``, ``"5000 psi"``, ``"20 barg"``,
``"15 degC"``, ``"60 degF"``, ``"50 L"``, ``"2.5 m3"``, ``"3 MPa/min"``,
``"500 W/m2/K"``.  The conversion itself is done by the units library
`pint <https://pint.readthedocs.io>`_ (its definitions follow the SI Brochure
and NIST SP 811); this module only

* splits the number from the unit and tidies the unit the way people type it
  (``m2`` -> ``m**2``, ``°C``/``C`` -> ``degC`` for temperatures),
* handles gauge pressure: a pressure unit followed by ``g``, ``(g)`` or
  ``gauge`` (``barg``, ``psig``, ``kPag``, ``bar(g)``, ``bar gauge``) is
  relative to the ambient pressure, which is added (default 101 325 Pa, the
  standard atmosphere; a scenario may state its own).  ``bara``, ``psia``,
  ``bar(a)`` and ``bar abs`` are absolute, like a bare ``bar``,
* checks the dimension against the kind of quantity expected, and raises
  :class:`eosfill.errors.InputError` naming the key path, the value and the
  expected dimension.

pint is imported on first use so that ``import eosfill`` stays fast.

>>> parse_quantity("20 barg", "pressure", "supply.pressure")
2101325.0
>>> parse_quantity("15 degC", "temperature", "ambient.temperature")
288.15
>>> format_quantity(35e6, "pressure")
'350 bar'
"""
from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass

from eosfill.errors import InputError

STANDARD_ATMOSPHERE = 101325.0  # Pa, exact (BIPM SI Brochure 9th ed. 2019, Table 8: 1 atm = 101 325 Pa)


@dataclass(frozen=True)
class Kind:
    """One kind of quantity: its SI unit, its words and its engineer's unit.

    Attributes
    ----------
    si : str
        pint spelling of the SI unit values are returned in.
    words : str
        The dimension in words, for messages.
    examples : str
        How a user may write it, for messages.
    display : str
        pint spelling of the unit values are printed in by default.
    label : str
        How the display unit is printed.
    mass_si : str or None
        For molar kinds: the per-kilogram SI unit also accepted (converted with
        the molar mass).
    """

    si: str
    words: str
    examples: str
    display: str
    label: str
    mass_si: str | None = None


KINDS = {
    "pressure": Kind("Pa", "a pressure", '"350 bar", "5000 psi", "20 barg", "3 MPa"', "bar", "bar"),
    "temperature": Kind("K", "a temperature", '"15 degC", "60 degF", "300 K"', "degC", "°C"),
    "temperature_difference": Kind("K", "a temperature difference", '"5 K", "5 delta_degC"', "K", "K"),
    "volume": Kind("m**3", "a volume", '"50 L", "2.5 m3"', "L", "L"),
    "mass": Kind("kg", "a mass", '"12 kg", "500 g"', "kg", "kg"),
    "length": Kind("m", "a length", '"2 mm", "0.5 in"', "mm", "mm"),
    "area": Kind("m**2", "an area", '"1.2 m2", "300 cm2"', "m**2", "m²"),
    "time": Kind("s", "a time", '"30 s", "5 min", "2 h"', "s", "s"),
    "mass_flow": Kind("kg/s", "a mass flow", '"0.01 kg/s", "2 kg/min"', "g/s", "g/s"),
    "pressure_rate": Kind("Pa/s", "a pressure change rate", '"3 MPa/min", "0.5 bar/s"', "MPa/min", "MPa/min"),
    "heat_transfer_coefficient": Kind("W/(m**2*K)", "a heat-transfer coefficient",
                                      '"500 W/m2/K"', "W/(m**2*K)", "W/(m² K)"),
    "specific_heat": Kind("J/(kg*K)", "a specific heat capacity", '"480 J/kg/K", "0.9 kJ/kg/K"',
                          "J/(kg*K)", "J/(kg K)"),
    "density": Kind("kg/m**3", "a density", '"0.75 kg/L", "180 kg/m3"', "kg/m**3", "kg/m³"),
    "thermal_conductivity": Kind("W/(m*K)", "a thermal conductivity", '"16 W/m/K", "0.5 W/(m K)"',
                                 "W/(m*K)", "W/(m K)"),
    "molar_volume": Kind("m**3/mol", "a molar or specific volume", '"1e-4 m3/mol", "0.005 m3/kg"',
                         "L/mol", "L/mol", mass_si="m**3/kg"),
    "molar_energy": Kind("J/mol", "a molar or specific energy (enthalpy, internal energy)",
                         '"-1200 J/mol", "350 kJ/kg"', "J/mol", "J/mol", mass_si="J/kg"),
    "molar_entropy": Kind("J/(mol*K)", "a molar or specific entropy", '"-20 J/mol/K", "4.5 kJ/kg/K"',
                          "J/(mol*K)", "J/(mol K)", mass_si="J/(kg*K)"),
    "dimensionless": Kind("", "a plain number", '"0.62"', "", ""),
}

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
# a unit name directly followed by an exponent digit, as people write m2, m3, cm3
_EXPONENT = re.compile(r"(?<![\w*^.])([A-Za-zµμ]+)([23])(?![\w.])")
_GAUGE = re.compile(r"^(.*?)(?:\s*\(g\)|\s+gauge|\s*\(gauge\)|g)$", re.IGNORECASE)
_ABSOLUTE = re.compile(r"^(.*?)(?:\s*\(a\)|\s+abs|\s+absolute|\s*\(abs\)|a)$", re.IGNORECASE)
_TEMPERATURE_WORDS = {
    "c": "degC", "°c": "degC", "ºc": "degC", "degc": "degC", "deg c": "degC", "celsius": "degC",
    "f": "degF", "°f": "degF", "ºf": "degF", "degf": "degF", "deg f": "degF", "fahrenheit": "degF",
    "k": "K", "kelvin": "K", "r": "degR", "°r": "degR", "degr": "degR", "rankine": "degR",
}

_REGISTRY = None


def registry():
    """The shared pint UnitRegistry (created on first use)."""
    global _REGISTRY
    if _REGISTRY is None:
        import pint  # lazy: keeps `import eosfill` fast

        _REGISTRY = pint.UnitRegistry()
    return _REGISTRY


def _tidy_unit(text: str) -> str:
    """Unit text as people type it -> pint spelling (m2 -> m**2, ² -> **2)."""
    text = text.strip().replace("²", "**2").replace("³", "**3").replace("·", "*")
    return _EXPONENT.sub(r"\1**\2", text)


# Upper bounds of what eosfill accepts, each with its physical reason: beyond them
# the question is not a vessel fill or vent, and the models do not apply.  The
# reasons are order-of-magnitude facts of the trade (common practice, no source).
UPPER_LIMITS = {
    "pressure": (1e9, "1000 MPa is far above the pressure of any gas vessel, and beyond what a cubic "
                      "equation of state represents"),
    "temperature": (2000.0, "the ideal-gas heat-capacity fits end at 1000-1500 K and no vessel is filled "
                            "or vented this hot"),
    "volume": (1e5, "100 000 m³ is larger than the largest gas-storage vessels built"),
    "mass": (1e8, "100 000 t is more than any single pressure vessel holds"),
    "length": (100.0, "100 m is longer than any vessel dimension, wall or bore"),
    "area": (1e5, "100 000 m² is larger than the surface of any pressure vessel"),
    "time": (3.2e7, "about one year: far longer than any fill or vent"),
    "mass_flow": (1e4, "10 t/s is more than any fill or vent line carries"),
    "pressure_rate": (1e8, "1000 bar/s is faster than any controlled fill or vent"),
    "heat_transfer_coefficient": (1e6, "1e6 W/(m² K) is above condensing or boiling heat transfer"),
    "specific_heat": (1e5, "100 kJ/(kg K) is above the specific heat of any solid or liquid"),
    "density": (3e4, "30 000 kg/m³ is denser than any element (osmium: 22 590 kg/m³)"),
    "thermal_conductivity": (1e4, "10 000 W/(m K) is above the conductivity of diamond"),
}


def range_error(key_path, raw, value, kind, why):
    """The InputError of a value out of its range, in one wording for files and the command line."""
    shown = "" if raw is None else f" = {raw!r}"
    return InputError(key_path, raw, why, message=f"{key_path}{shown}: {why}")


def check_range(key_path, raw, value, kind, minimum=None, strict=True, maximum=None):
    """Check an SI ``value`` of ``kind`` against ``minimum`` / ``maximum`` and the
    kind's physical upper bound (:data:`UPPER_LIMITS`); raise :class:`InputError`
    naming ``key_path`` (a scenario key path or a command-line option)."""
    if minimum is not None and (value <= minimum if strict else value < minimum):
        bound = "absolute zero (0 K)" if kind == "temperature" and minimum == 0.0 else \
            format_quantity(minimum, kind) if kind != "dimensionless" else f"{minimum:g}"
        if kind == "pressure" and minimum == 0.0:
            bound = "0 Pa absolute (a gauge value below -1 atm, or a negative pressure?)"
        raise range_error(key_path, raw, value, kind, f"out of range: must be {'above' if strict else 'at least'} "
                          f"{bound} (got {format_quantity(value, kind)})")
    if maximum is not None and value > maximum:
        raise range_error(key_path, raw, value, kind, f"out of range: must be at most "
                          f"{format_quantity(maximum, kind)} (got {format_quantity(value, kind)})")
    top = UPPER_LIMITS.get(kind)
    if top is not None and value > top[0]:
        bound = format_quantity(top[0], kind) + (f" ({top[0]:g} K)" if kind == "temperature" else "")
        raise range_error(key_path, raw, value, kind, f"out of range: must be at most {bound}: {top[1]} "
                          f"(got {format_quantity(value, kind)})")


def _fail(key_path, value, kind, why=""):
    k = KINDS[kind]
    message = f"{key_path} = {value!r}: expected {k.words} (e.g. {k.examples})"
    if why:
        message += f"; {why}"
    return InputError(key_path, value, f"{k.words} (e.g. {k.examples})", message=message)


def _units_or_none(ureg, text):
    """pint Unit for ``text``, or None when pint does not know it."""
    try:
        return ureg.parse_units(text)
    except Exception:  # pint raises several kinds (undefined unit, syntax)
        return None


def _dim_matches(ureg, unit, si):
    return unit is not None and unit.dimensionality == ureg.parse_units(si).dimensionality


class _UnitProblem(ValueError):
    """Why a unit text cannot be used for a kind of quantity (worded into an InputError)."""


@functools.lru_cache(maxsize=1024)
def _conversion(unit_text, kind, have_molar_mass):
    """(scale, offset, per_mass, gauge) with SI value = offset + scale · number for a
    value written in ``unit_text`` (pint's own conversion of 0 and 1, so affine units such
    as degC keep pint's offsets).  Cached: a study parses the same units many times."""
    k = KINDS[kind]
    ureg = registry()
    gauge = False
    if kind == "temperature":
        unit_text = _TEMPERATURE_WORDS.get(" ".join(unit_text.lower().split()), unit_text)
    tidy = _tidy_unit(unit_text)
    unit = _units_or_none(ureg, tidy)
    if kind == "pressure" and not _dim_matches(ureg, unit, k.si):
        for pattern, is_gauge in ((_GAUGE, True), (_ABSOLUTE, False)):
            m = pattern.match(unit_text.strip())
            if m and m.group(1).strip():
                base = _units_or_none(ureg, _tidy_unit(m.group(1)))
                if _dim_matches(ureg, base, k.si):
                    unit, gauge = base, is_gauge
                    break
    if unit is None:
        raise _UnitProblem(f"unknown unit {unit_text!r}")
    target = k.si
    per_mass = False
    if not _dim_matches(ureg, unit, k.si):
        if k.mass_si and _dim_matches(ureg, unit, k.mass_si):
            if not have_molar_mass:
                raise _UnitProblem("a per-kilogram value needs the fluid's molar mass")
            target, per_mass = k.mass_si, True
        else:
            raise _UnitProblem(f"{unit_text!r} is {_dimension_words(unit)}")
    try:
        offset = float(ureg.Quantity(0.0, unit).to(target).magnitude)
        # the size of one unit (a temperature difference for degC, degF): pint's own factor
        one = ureg.Quantity(1.0, unit) - ureg.Quantity(0.0, unit) if offset else ureg.Quantity(1.0, unit)
        scale = float(one.to(target).magnitude)
    except Exception as exc:  # offset-unit arithmetic and the like
        raise _UnitProblem(str(exc)) from None
    return scale, offset, per_mass, gauge


def parse_quantity(text, kind, key_path, ambient_pressure=STANDARD_ATMOSPHERE, default_unit=None,
                   molar_mass=None):
    """Convert a value as written by a user to a float in SI units.

    Parameters
    ----------
    text : str or int or float
        The value with its unit (``"350 bar"``), or a bare number when
        ``default_unit`` is given.
    kind : str
        One of :data:`KINDS` (``"pressure"``, ``"temperature"``, ``"volume"``...).
    key_path : str
        Where the value came from (``"vessel.volume"``, ``"--P"``); named in
        the error message.
    ambient_pressure : float
        Pressure added to gauge pressures [Pa].
    default_unit : str, optional
        Unit of a bare number; without it a bare number is an error (except
        for ``kind="dimensionless"``).
    molar_mass : float, optional
        [kg/mol]; lets the molar kinds also accept per-kilogram values.

    Returns
    -------
    float
        The value in the SI unit of ``kind`` (K, Pa, m³, kg, s, ...).

    Raises
    ------
    InputError
        Wrong dimension, unknown unit, missing unit, not a number.
    """
    if kind not in KINDS:
        raise ValueError(f"unknown kind of quantity {kind!r}")
    k = KINDS[kind]
    if isinstance(text, bool):
        raise _fail(key_path, text, kind, "a true/false value is not a quantity")
    if isinstance(text, (int, float)):
        number, unit_text = float(text), ""
    elif isinstance(text, str):
        m = _NUMBER.match(text)
        if not m:
            raise _fail(key_path, text, kind, "it does not start with a number")
        number, unit_text = float(m.group(1)), m.group(2)
    else:
        raise _fail(key_path, text, kind, f"got a {type(text).__name__}")
    if not math.isfinite(number):
        raise _fail(key_path, text, kind, "not a finite number")
    if kind == "dimensionless":
        if unit_text:
            raise _fail(key_path, text, kind, "no unit expected")
        return number
    if not unit_text:
        if default_unit is None:
            raise _fail(key_path, text, kind, "the unit is missing")
        unit_text = default_unit

    try:
        scale, offset, per_mass, gauge = _conversion(unit_text, kind, molar_mass is not None)
    except _UnitProblem as exc:
        raise _fail(key_path, text, kind, str(exc)) from None
    # an affine map to SI (offset only for temperatures in degC, degF), set up once per unit
    value = number * scale + offset
    if per_mass:
        value *= molar_mass
    if gauge:
        value += float(ambient_pressure)
    if not math.isfinite(value):
        raise _fail(key_path, text, kind, "not a finite number in SI units")
    # the bounds every value of this kind must meet, wherever it comes from
    check_range(key_path, text, value, kind, minimum=0.0 if kind in ("temperature", "pressure") else None,
                strict=kind == "temperature")
    return value


def _dimension_words(unit) -> str:
    dims = str(unit.dimensionality)
    for name, kind in KINDS.items():
        if kind.si and registry().parse_units(kind.si).dimensionality == unit.dimensionality:
            return kind.words
    return f"of dimension {dims}"


def is_gauge(text) -> bool:
    """True when a pressure is written as gauge (``barg``, ``psig``, ``bar(g)``...)."""
    if not isinstance(text, str):
        return False
    m = _NUMBER.match(text)
    if not m or not m.group(2):
        return False
    return _is_gauge_unit(m.group(2))


@functools.lru_cache(maxsize=256)
def _is_gauge_unit(unit_text) -> bool:
    """True when a pressure unit text is a gauge unit (cached per unit text)."""
    ureg = registry()
    if _dim_matches(ureg, _units_or_none(ureg, _tidy_unit(unit_text)), "Pa"):
        return False
    g = _GAUGE.match(unit_text)
    return bool(g and g.group(1).strip()
                and _dim_matches(ureg, _units_or_none(ureg, _tidy_unit(g.group(1))), "Pa"))


# --------------------------------------------------------------------------
# printing SI values in an engineer's units
# --------------------------------------------------------------------------
def convert(value, kind, unit=None):
    """An SI value of ``kind`` expressed in ``unit`` (default: the engineer's unit)."""
    k = KINDS[kind]
    unit = k.display if unit is None else _tidy_unit(unit)
    if kind == "dimensionless" or unit == k.si:
        return float(value)
    ureg = registry()
    return float(ureg.Quantity(float(value), k.si).to(unit).magnitude)


def unit_label(kind, unit=None) -> str:
    """How the unit is printed (``°C``, ``bar``, ``L``...)."""
    k = KINDS[kind]
    if unit is None:
        return k.label
    return {"degC": "°C", "degF": "°F", "m**3": "m³", "m**2": "m²"}.get(unit, unit)


def format_number(value, digits=6) -> str:
    """``value`` with ``digits`` significant digits, no trailing zeros."""
    value = float(value)
    if not math.isfinite(value):
        return str(value)
    if value == 0.0:
        return "0"
    text = f"{value:.{digits}g}"
    if "e" in text:
        mant, exp = text.split("e")
        return f"{mant}e{int(exp)}"
    return text


def format_quantity(value, kind, unit=None, digits=6) -> str:
    """An SI value printed in an engineer's unit: ``format_quantity(35e6, "pressure")`` -> ``'350 bar'``.

    Default units: pressure bar, temperature °C, volume L, mass kg, length mm,
    time s, mass flow g/s, pressure rate MPa/min.
    """
    label = unit_label(kind, unit)
    number = format_number(convert(value, kind, unit), digits)
    return f"{number} {label}".rstrip()
