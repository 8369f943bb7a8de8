"""Run a scenario: map a :class:`eosfill.scenario.Scenario` to the vessel
balances of :mod:`eosfill.vessel` and write the files it asks for.

``eosfill run FILE`` calls :func:`run_scenario`; it prints ``eosfill.io.summaries.render(result)``.
Kinds: ``fill``, ``cascade_fill``, ``liquefied_fill`` and ``vent`` here;
``transient_fill`` and ``transient_vent`` are handed to
``eosfill.io.transient_run.run_scenario``.

Each flag raised in a result is also issued as a
:class:`eosfill.errors.LimitWarning`.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import warnings

from eosfill.errors import InputError, LimitWarning
from eosfill.io.inputs import _fluid_of, _initial_of, _limits, _stop_of, _vessel_of  # noqa: F401
from eosfill.io.scenario import TRANSIENT_KINDS

def run_scenario(scenario, write=True, progress=None, force=False):
    """Compute a scenario's result and write its json/csv/report files.

    ``write=False`` computes only (nothing is written).  ``progress``: a
    callable(t [s]) called after each step of a time-resolved run (the
    command line passes a progress bar).  ``force``: overwrite existing
    output files (never the scenario file).  The outputs are written all or
    nothing (:mod:`eosfill.io.files`); a time-resolved run that fails part-way
    writes the JSON and CSV of what it computed, marked incomplete, then raises.

    Returns
    -------
    eosfill.vessel.Result (or the transient module's result)
    """
    from eosfill.io import files
    from eosfill.vessel import balances as vs
    from eosfill.vessel.cascade import Bank, cascade_fill
    from eosfill.vessel.vent import vent

    if write:
        files.check_outputs(scenario, force)
        if scenario.output.report is not None:  # fail before computing when the report cannot be made
            from eosfill.io.plots import require_matplotlib

            require_matplotlib()
    kind = scenario.kind
    if kind in TRANSIENT_KINDS:
        from eosfill.io import transient_run
        from eosfill.transient.model import IntegrationError

        try:
            result = transient_run.run_scenario(scenario, progress=progress)
        except IntegrationError as exc:
            if write:
                write_outputs(scenario, exc.partial, force=force, partial=True)
            raise
        if write:
            write_outputs(scenario, result, force=force)
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
    from eosfill.io.summaries import flag_text

    for flag in result.flags:
        warnings.warn(flag_text(flag), LimitWarning, stacklevel=2)
    if write:
        write_outputs(scenario, result, force=force)
    return result


def render_outputs(scenario, result, partial=False) -> dict:
    """{path: bytes} of every output ``scenario.output`` asks for (nothing written).

    ``partial``: the result of a run that stopped early; its JSON and CSV are
    rendered (marked incomplete in the JSON), not the report."""
    from pathlib import Path

    from eosfill.io import tables

    out = scenario.output
    files = {}
    if out.json is not None:
        files[Path(out.json)] = tables.result_json(scenario, result).encode("utf-8")
    if out.csv is not None:
        files[Path(out.csv)] = tables.result_csv(result, units=out.units, digits=out.digits).encode("utf-8")
    if out.report is not None and not partial:
        from eosfill.io.report import render_report

        files.update(render_report(scenario, result, Path(out.report)))
    return files


def write_outputs(scenario, result, force=False, partial=False) -> list:
    """Render and write every output of ``scenario.output``, all or nothing."""
    from eosfill.io.files import commit

    out = render_outputs(scenario, result, partial=partial)
    return commit(out, force=force, scenario_path=scenario.path) if out else []


def write_report(scenario, result, force=False):
    """Write the HTML report at ``scenario.output.report`` and its Markdown twin (:mod:`eosfill.io.report`).

    Raises EosfillError (with an install hint) when matplotlib is missing."""
    from eosfill.io import report

    return report.write_report(scenario, result, scenario.output.report, force=force)
