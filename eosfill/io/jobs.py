"""Run a scenario: map a :class:`eosfill.scenario.Scenario` to the vessel
balances of :mod:`eosfill.vessel` and write the files it asks for.

``eosfill run FILE`` calls :func:`run_scenario`; it prints ``str(result)``.
Kinds: ``fill``, ``cascade_fill``, ``liquefied_fill`` and ``vent`` here;
``transient_fill`` and ``transient_vent`` are handed to
``eosfill.io.transient_run.run_scenario``.

Each flag raised in a result is also issued as a
:class:`eosfill.errors.LimitWarning`.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import csv
import json
import warnings

from eosfill.errors import InputError, LimitWarning
from eosfill.io.inputs import _fluid_of, _initial_of, _limits, _stop_of, _vessel_of  # noqa: F401
from eosfill.io.scenario import TRANSIENT_KINDS

def run_scenario(scenario, write=True, progress=None):
    """Compute a scenario's result and write its json/csv/report files.

    ``write=False`` computes only (nothing is written).  ``progress``: a
    callable(t [s]) called after each step of a time-resolved run (the
    command line passes a progress bar).

    Returns
    -------
    eosfill.vessel.Result (or the transient module's result)
    """
    from eosfill.vessel import balances as vs
    from eosfill.vessel.cascade import Bank, cascade_fill
    from eosfill.vessel.vent import vent

    kind = scenario.kind
    if kind in TRANSIENT_KINDS:
        from eosfill.io import transient_run

        if not write:
            from dataclasses import replace

            scenario = replace(scenario, output=replace(scenario.output, json=None, csv=None, report=None))
        result = transient_run.run_scenario(scenario, progress=progress)  # writes its own json/csv
        if write and scenario.output.report is not None:
            write_report(scenario, result)
        return result
    vessel = _vessel_of(scenario)
    initial = _initial_of(scenario)
    limits = _limits(scenario)
    stop, target = _stop_of(scenario)
    common = dict(stop=stop, target=target, temperature_limit=scenario.stop.temperature_limit, limits=limits)
    fills = dict(settled_temperature=scenario.stop.settled_temperature,
                 nominal_pressure=scenario.vessel.working_pressure,
                 nominal_temperature=scenario.vessel.working_temperature,
                 state_of_charge=scenario.vessel.working_pressure is not None)
    if kind in ("fill", "liquefied_fill"):
        sup = scenario.supply
        supply = vs.Stream(_fluid_of(scenario, sup.composition), sup.temperature, P=sup.pressure)
        result = vs.fill(vessel, supply, initial, liquefied=kind == "liquefied_fill", **common, **fills)
    elif kind == "cascade_fill":
        banks = [Bank(b.volume, vs.Stream(_fluid_of(scenario, b.composition), b.temperature, P=b.pressure),
                         name=b.name or str(i + 1)) for i, b in enumerate(scenario.banks)]
        result = cascade_fill(vessel, banks, initial,
                                 switch_pressure_difference=scenario.cascade.switch_pressure_difference,
                                 **common, **fills)
    elif kind == "vent":
        result = vent(vessel, initial, **common)
    else:  # pragma: no cover - the scenario reader allows no other kind
        raise InputError("kind", kind, "fill, cascade_fill, liquefied_fill, vent")
    result.title = scenario.title
    for flag in result.flags:
        warnings.warn(flag, LimitWarning, stacklevel=2)
    if write:
        write_outputs(scenario, result)
    return result


# --------------------------------------------------------------------------
# files
# --------------------------------------------------------------------------
def _table(result, engineering=True):
    """Rows for the CSV: cascade stages, or the end state along the fill/vent."""
    if engineering:
        head_T, head_P = "T_degC", "P_bar"
        cT, cP = (lambda T: T - 273.15), (lambda P: P / 1e5)
    else:
        head_T, head_P = "T_K", "P_Pa"
        cT, cP = (lambda T: T), (lambda P: P)
    if result.stages:
        header = ["bank", "reason", "bank_" + head_T, "bank_" + head_P, "mass_drawn_kg",
                  "vessel_" + head_T, "vessel_" + head_P, "vessel_mass_kg"]
        rows = [[s["bank"], s["reason"], cT(s["bank_T"]), cP(s["bank_P"]), s["mass_drawn"],
                 cT(s["vessel_T"]), cP(s["vessel_P"]), s["vessel_mass"]] for s in result.stages]
        return header, rows
    header = ["vessel_mass_kg", head_T, head_P]
    rows = [[p["mass"], cT(p["T"]), cP(p["P"])] for p in result.curve]
    return header, rows


def write_outputs(scenario, result):
    """Write ``scenario.output.json`` / ``.csv`` / ``.report`` if set."""
    out = scenario.output
    if out.report is not None:  # fail before anything is written when the report cannot be made
        from eosfill.io.plots import require_matplotlib

        require_matplotlib()
    if out.json is not None:
        data = {"scenario": scenario.to_dict(), "result": result.to_dict()}
        with open(out.json, "w", encoding="utf-8") as fh:
            json.dump(data, fh, indent=2, default=str)
    if out.csv is not None:
        header, rows = _table(result, engineering=out.units != "SI")
        with open(out.csv, "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(header)
            for r in rows:
                w.writerow([f"{x:.{out.digits}g}" if isinstance(x, float) else x for x in r])
    if out.report is not None:
        write_report(scenario, result)


def write_report(scenario, result):
    """Write the HTML report at ``scenario.output.report`` and its Markdown twin (:mod:`eosfill.report`).

    Raises EosfillError (with an install hint) when matplotlib is missing."""
    from eosfill.io import report

    return report.write_report(scenario, result, scenario.output.report)
