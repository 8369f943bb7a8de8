"""Results as JSON and CSV text (the outside-world layer renders; results stay data).

JSON is strict JSON (RFC 8259): no ``NaN`` or ``Infinity`` tokens; a value
that is absent (a wall temperature of an adiabatic run, a figure that does
not apply) is ``null``.  Its shape is described by the JSON Schema shipped
beside this module, ``result.schema.json`` (:func:`result_schema`).

CSV: one header convention for end-state and time-resolved files,
``name [unit]`` (``P [bar]``, ``T_gas [°C]`` in engineering units; ``P [Pa]``,
``T_gas [K]`` with ``units = "SI"``), values with ``digits`` significant
digits, and a column left out when it does not apply to the run (no wall,
no banks) rather than filled with ``nan``.
"""
from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np

SCHEMA_FILE = Path(__file__).with_name("result.schema.json")
JSON_FORMAT = "eosfill-result/1"


def jsonable(obj):
    """Plain JSON values of ``obj``: non-finite floats become None, arrays lists."""
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return jsonable({f.name: getattr(obj, f.name) for f in dataclasses.fields(obj)
                         if not f.name.startswith("_")})
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, (set, frozenset)):
        return sorted(jsonable(v) for v in obj)
    if isinstance(obj, np.ndarray):
        return jsonable(obj.tolist())
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        x = float(obj)
        return x if math.isfinite(x) else None
    if obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, Path):
        return str(obj)
    return str(obj)


def result_dict(scenario, result) -> dict:
    """The document written as JSON: format, version, scenario, result, units, caution."""
    from eosfill import __version__
    from eosfill.io.scenario import CAUTION

    from eosfill.io.summaries import flag_texts

    res = jsonable(result.to_dict())
    res["flags"] = flag_texts(result)  # in words; each limit passed is also in the figures above
    res.pop("caution", None)
    units = res.pop("units", "SI")
    return {"format": JSON_FORMAT, "eosfill_version": __version__, "kind": scenario.kind if scenario else
            res.get("kind"), "complete": bool(getattr(result, "complete", True)),
            "units": units, "scenario": None if scenario is None else jsonable(scenario.to_dict()),
            "result": res, "caution": CAUTION}


def result_json(scenario, result) -> str:
    """Strict JSON text of :func:`result_dict` (raises ValueError on a non-finite number)."""
    return json.dumps(result_dict(scenario, result), indent=1, allow_nan=False, ensure_ascii=False) + "\n"


def result_schema() -> dict:
    """The JSON Schema (draft 2020-12) of :func:`result_json`'s output."""
    return json.loads(SCHEMA_FILE.read_text(encoding="utf-8"))


# --------------------------------------------------------------------------
# CSV
# --------------------------------------------------------------------------
_ENGINEERING = {"temperature": ("°C", lambda T: T - 273.15), "pressure": ("bar", lambda P: P / 1e5)}
_SI = {"temperature": ("K", lambda T: T), "pressure": ("Pa", lambda P: P)}


def _column(name, kind, values, units):
    """(header, converted values) of one column; kind None: unit given in ``kind`` text."""
    table = _ENGINEERING if units != "SI" else _SI
    if kind in table:
        unit, conv = table[kind]
        return f"{name} [{unit}]", [None if v is None else conv(v) for v in values]
    return f"{name} [{kind}]" if kind else name, list(values)


def _cell(x, digits):
    if x is None:
        return ""
    if isinstance(x, (bool, np.bool_)):
        return "true" if x else "false"
    if isinstance(x, (int, np.integer)):
        return str(int(x))
    if isinstance(x, (float, np.floating)):
        x = float(x)
        if not math.isfinite(x):
            return ""
        return f"{x:.{digits}g}"
    text = str(x)
    return f'"{text}"' if any(c in text for c in ',"\n') else text


def _csv_text(columns, digits):
    lines = [",".join(h for h, _ in columns)]
    n = len(columns[0][1]) if columns else 0
    for i in range(n):
        lines.append(",".join(_cell(vals[i], digits) for _, vals in columns))
    return "\n".join(lines) + "\n"


def _present(values) -> bool:
    arr = np.asarray(values, dtype=float)
    return arr.size > 0 and bool(np.any(np.isfinite(arr)))


def result_csv(result, units="engineering", digits=6) -> str:
    """CSV text of a result: the stages of a cascade, the states along a fill or
    vent, or the time series of a time-resolved run."""
    if hasattr(result, "t"):
        return _transient_csv(result, units, digits)
    if result.stages:
        st = result.stages
        cols = [("bank", None, [s["bank"] for s in st]), ("reason", None, [s["reason"] for s in st]),
                ("bank_T", "temperature", [s["bank_T"] for s in st]),
                ("bank_P", "pressure", [s["bank_P"] for s in st]),
                ("mass_drawn", "kg", [s["mass_drawn"] for s in st]),
                ("vessel_T", "temperature", [s["vessel_T"] for s in st]),
                ("vessel_P", "pressure", [s["vessel_P"] for s in st]),
                ("vessel_mass", "kg", [s["vessel_mass"] for s in st])]
    else:
        c = result.curve
        cols = [("vessel_mass", "kg", [p["mass"] for p in c]), ("T", "temperature", [p["T"] for p in c]),
                ("P", "pressure", [p["P"] for p in c])]
    return _csv_text([_column(n, k, v, units) for n, k, v in cols], digits)


def _transient_csv(r, units, digits):
    cols = [("t", "s", r.t), ("P", "pressure", r.P), ("T_gas", "temperature", r.T_gas)]
    if _present(r.T_wall_inner):
        cols += [("T_wall_inner", "temperature", r.T_wall_inner), ("T_wall_outer", "temperature", r.T_wall_outer)]
    cols.append(("mass", "kg", r.mass))
    if r.kind == "fill" or np.any(np.asarray(r.mdot_in) != 0):
        cols.append(("mdot_in", "kg/s", r.mdot_in))
    if r.kind == "vent" or np.any(np.asarray(r.mdot_out) != 0):
        cols.append(("mdot_out", "kg/s", r.mdot_out))
    if _present(r.T_wall_inner):
        cols.append(("Q_wall", "W", r.Q_wall))
    cols.append(("vapour_fraction", "mol/mol", r.vapour_fraction))
    if np.any(np.asarray(r.bank) >= 0):
        cols.append(("bank", None, [int(b) for b in r.bank]))
    cols.append(("phase", None, list(r.phase)))
    if getattr(r, "solid", None) is not None:
        cols.append(("solid_region", None, [bool(s) for s in r.solid]))
    conv = []
    for n, k, v in cols:
        vals = [None if isinstance(x, (float, np.floating)) and not math.isfinite(x) else x
                for x in (v.tolist() if isinstance(v, np.ndarray) else list(v))]
        conv.append(_column(n, k, vals, units))
    return _csv_text(conv, digits)
