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

The module is split by concept; this file holds the cases of a study
(:class:`ScenarioCase`, :class:`Study`, :func:`load_study`,
:func:`sweep_scenario`, :func:`study_summary`) and re-exports the names of
its neighbours:

- :mod:`eosfill.io.sweep_spec` -- the ``[sweep]`` section: values with units,
  key paths (:func:`split_key_path`, :func:`set_key_path`),
  :class:`SweepSpec`, :func:`read_sweep`;
- :mod:`eosfill.io.sweep_rows` -- the output columns, :func:`result_row`,
  :func:`column_name`, :func:`unit_label`;
- :mod:`eosfill.io.sweep_batch` -- :func:`run_scenarios`, the vectorised
  batches of fills and vents.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import copy
import sys
from dataclasses import dataclass
from pathlib import Path

from eosfill.errors import InputError
from eosfill.study import LimitSearch, run_study, search_limit
from eosfill.io.sweep_spec import SweepSpec, read_sweep, set_key_path, override_text
from eosfill.io.sweep_rows import result_row
from eosfill.io.sweep_batch import run_scenarios
from eosfill.io.sweep_spec import (  # noqa: F401  (re-exported)
    LIMIT_KEYS, SWEEP_KEYS, _as_kind, _err, _kind_and_value, _read_limit, _STEP, _TRIAL_KINDS, split_key_path)
from eosfill.io.sweep_rows import (  # noqa: F401  (re-exported)
    END_STATE_COLUMNS, NAN, OUTPUT_COLUMNS, TRANSIENT_COLUMNS, _num, column_name, unit_label)
from eosfill.io.sweep_batch import (  # noqa: F401  (re-exported)
    _batch_row, _batch_vent_row, _batchable, _batchable_vent, _mixture_key)

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib


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


def study_summary(df):
    """Lines saying how many cases ran and how many failed, by exit class."""
    counts = df["status"].value_counts().to_dict() if len(df) else {}
    failed = sum(v for k, v in counts.items() if k != "ok")
    lines = [f"{len(df)} cases: {counts.get('ok', 0)} ok, {failed} failed"
             + (" (" + ", ".join(f"{k} {counts[k]}" for k in ("input", "solver", "internal") if counts.get(k))
                + "; see the status and message columns)" if failed else "")]
    return lines
