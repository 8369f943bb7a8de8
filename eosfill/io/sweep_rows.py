"""The result table of a study: the output columns of one run (:func:`result_row`) and the
column names of swept inputs (``<key path> [<SI unit>]``).

Neighbours: :mod:`eosfill.io.sweep` (the map of this split: studies of a scenario file),
:mod:`eosfill.io.sweep_spec` (the ``[sweep]`` section), :mod:`eosfill.io.sweep_batch` (many
scenarios at once, whose rows equal :func:`result_row` of single runs).
"""
from __future__ import annotations


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
