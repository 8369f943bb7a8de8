"""Run the cases of a study: in this process, on a local process pool, or on Dask.

The study layer knows nothing of scenario files.  It is given

* ``run_case(inputs: dict) -> dict``: one case from a flat dict of inputs
  to a flat dict of outputs, raising an eosfill error when the case fails;
* optionally ``run_batch(list of input dicts) -> list``: many cases at once
  (vectorised where the model allows), each element the outputs dict of
  that case or the exception it raised; its rows must equal ``run_case``'s.

Each case becomes one row: ``case`` (its id), the inputs, the outputs,
``status`` and ``message``.  ``status`` is ``ok`` or the exit class of the
failure: ``input`` (:class:`eosfill.errors.InputError`, exit code 2),
``solver`` (any other :class:`eosfill.errors.EosfillError`, 3) or
``internal`` (anything else, a worker process that died included, 4).
A failed case never stops the study and never vanishes.

Executors (``concurrent.futures`` and ``dask.distributed``; no scheduler of
our own): cases go out in chunks; each finished chunk is written to the
:class:`~eosfill.study.store.ResultStore` at once, so a study killed at any
point resumes from the chunks written.
"""
from __future__ import annotations

import hashlib
import json
import math
import os
import sys
import warnings

from eosfill.errors import EosfillError, InputError

STATUSES = ("ok", "input", "solver", "internal")
EXIT_CODES = {"ok": 0, "input": 2, "solver": 3, "internal": 4}
WORKER_DIED = "the worker process running this case died"
MAX_POOL_RESTARTS = 3  # a chunk whose worker died this many times is recorded as failed


def exit_class(exc: BaseException) -> str:
    """``input``, ``solver`` or ``internal`` for an exception raised by a case."""
    if isinstance(exc, InputError):
        return "input"
    if isinstance(exc, EosfillError):
        return "solver"
    return "internal"


def make_row(case_id: int, inputs: dict, outcome) -> dict:
    """One row: id, inputs, outputs (or nothing), status and message."""
    row = {"case": int(case_id), **inputs}
    if isinstance(outcome, BaseException):
        row["status"] = exit_class(outcome)
        row["message"] = f"{type(outcome).__name__}: {outcome}"
    else:
        for k, v in outcome.items():
            if k in row and k != "case":
                raise EosfillError(f"output {k!r} has the name of an input")
            row[k] = v
        row["status"] = "ok"
        row["message"] = ""
    return row


def _outcome(run_case, inputs):
    try:
        return run_case(inputs)
    except Exception as exc:  # noqa: BLE001 - every failure becomes a row
        return exc


def run_chunk(run_case, run_batch, items):
    """Rows of a chunk of (case id, inputs); the function each worker runs."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # limit flags are in the outputs; a worker has no one to tell
        inputs = [inp for _, inp in items]
        if run_batch is not None:
            try:
                outs = list(run_batch(inputs))
                if len(outs) != len(inputs):
                    raise EosfillError(f"run_batch returned {len(outs)} results for {len(inputs)} cases")
            except Exception as exc:  # noqa: BLE001 - the batch as a whole failed: one by one
                outs = [_outcome(run_case, i) for i in inputs]
                if not any(isinstance(o, dict) for o in outs):
                    outs = [o if isinstance(o, BaseException) else exc for o in outs]
        else:
            outs = [_outcome(run_case, i) for i in inputs]
    return [make_row(cid, inp, out) for (cid, inp), out in zip(items, outs)]


def fingerprint(cases, extra="") -> str:
    """A short hash of the cases (and ``extra``: what runs them), for resuming."""
    h = hashlib.sha256(extra.encode("utf-8"))
    h.update(json.dumps(cases, sort_keys=True, default=repr).encode("utf-8"))
    return h.hexdigest()[:20]


def _chunks(items, size):
    return [items[i:i + size] for i in range(0, len(items), size)]


def default_workers():
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not Linux
        return os.cpu_count() or 1


class _Progress:
    def __init__(self, progress, total, initial, desc="cases"):
        self.bar = None
        self.call = None
        if callable(progress):
            self.call = progress
        elif progress and sys.stderr.isatty():
            try:
                from tqdm import tqdm

                self.bar = tqdm(total=total, initial=initial, unit="case", desc=desc, file=sys.stderr,
                                smoothing=0.1)
            except ImportError:  # pragma: no cover - tqdm is a dependency; the bar is a convenience
                pass

    def update(self, n, failed=0):
        if self.bar is not None:
            self.bar.update(n)
        if self.call is not None:
            self.call(n)

    def close(self):
        if self.bar is not None:
            self.bar.close()


def _run_serial(run_case, run_batch, chunks, on_rows):
    for items in chunks:
        on_rows(run_chunk(run_case, run_batch, items))


def _worker_init():
    """A pool worker: default signal handling (a forked worker would inherit the
    parent's SIGTERM handler; a worker told to stop must simply stop), and the
    parent's progress bar is not the worker's."""
    import signal

    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C: the parent stops the pool


def _terminate_pool(pool):
    terminate = getattr(pool, "terminate_workers", None)  # Python >= 3.14
    if terminate is not None:
        terminate()
        return
    procs = list(getattr(pool, "_processes", {}).values())  # earlier Pythons: the pool's own processes
    pool.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        if p.is_alive():
            p.terminate()
    for p in procs:
        p.join(5)


def _run_pool(run_case, run_batch, chunks, on_rows, workers):
    import multiprocessing
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    from concurrent.futures.process import BrokenProcessPool

    # not "fork": numba's OpenMP threading layer, once a parallel kernel has run in
    # this process, makes a forked child terminate ("fork() called from a process
    # already using GNU OpenMP"); a fork server starts workers from a clean process
    ctx = multiprocessing.get_context("forkserver" if sys.platform.startswith("linux") else "spawn")
    if ctx.get_start_method() == "forkserver":
        # the server imports the engine once (importing starts no OpenMP threads); each
        # worker forked from it then skips those imports
        ctx.set_forkserver_preload(["eosfill.states.fluid", "eosfill.model.properties",
                                    "eosfill.equilibrium.solvers", "eosfill.vessel.balances"])
    pending = {i: items for i, items in enumerate(chunks)}
    deaths = dict.fromkeys(pending, 0)
    while pending:
        pool = ProcessPoolExecutor(max_workers=workers, mp_context=ctx, initializer=_worker_init)
        try:
            futures = {pool.submit(run_chunk, run_case, run_batch, items): i for i, items in pending.items()}
            broken = False
            while futures:
                done, _ = wait(futures, return_when=FIRST_COMPLETED)
                for fut in done:
                    i = futures.pop(fut)
                    try:
                        rows = fut.result()
                    except BrokenProcessPool:
                        broken = True
                        deaths[i] += 1
                        continue
                    except Exception as exc:  # noqa: BLE001 - e.g. an unpicklable result
                        rows = [make_row(cid, inp, exc) for cid, inp in pending[i]]
                    del pending[i]
                    on_rows(rows)
                if broken:
                    break
            if broken:  # a worker died: record chunks that killed it too often, rerun the rest
                for i in [i for i, n in deaths.items() if n >= MAX_POOL_RESTARTS and i in pending]:
                    on_rows([make_row(cid, inp, EosfillError(WORKER_DIED)) | {"status": "internal"}
                             for cid, inp in pending.pop(i)])
        finally:
            _terminate_pool(pool)


def _run_dask(run_case, run_batch, chunks, on_rows, client):
    from dask.distributed import as_completed

    futures = {}
    for items in chunks:
        fut = client.submit(run_chunk, run_case, run_batch, items, pure=False)
        futures[fut] = items
    try:
        for fut in as_completed(list(futures)):
            items = futures[fut]
            try:
                rows = fut.result()
            except Exception as exc:  # noqa: BLE001 - e.g. KilledWorker after dask's own retries
                rows = [make_row(cid, inp, exc) | {"status": "internal"} for cid, inp in items]
            on_rows(rows)
    finally:
        client.cancel([f for f in futures if not f.done()])


def run_study(run_case, cases, *, run_batch=None, output=None, resume=False, workers=None, client=None,
              scheduler=None, chunk_size=None, progress=False, what=""):
    """Run every case and return one row per case as a pandas DataFrame.

    Parameters
    ----------
    run_case : callable
        dict of inputs -> dict of outputs; picklable for the pool and Dask
        (a module-level function or an instance of a module-level class).
    cases : list of dict
        The cases (see :func:`eosfill.study.make_cases`); case id = index.
    run_batch : callable, optional
        list of input dicts -> list of outputs dicts or exceptions.
    output : str or Path, optional
        ``.parquet`` or ``.csv`` file; rows are written in chunks beside it
        while the study runs (see :mod:`eosfill.study.store`).  Without it
        nothing is written.
    resume : bool
        Continue an interrupted study with the same cases (only the missing
        case ids run).
    workers : int, optional
        Processes of the local pool (default: the cores this process may
        use); 1 runs in this process.
    client : dask.distributed.Client, optional
        Run on this Dask cluster instead of the local pool.
    scheduler : str, optional
        Address of a Dask scheduler (``tcp://host:8786``); a client is made.
    chunk_size : int, optional
        Cases per task (default: about four tasks per worker, at most 500).
    progress : bool or callable
        True: a tqdm bar with ETA on stderr when it is a terminal;
        a callable(n) is called with the number of cases each time a
        chunk is done.
    what : str
        Text identifying what runs the cases (e.g. the scenario file's
        text), part of the resume fingerprint.

    Returns
    -------
    pandas.DataFrame
        Columns ``case``, the inputs, the outputs, ``status``, ``message``;
        in case order.
    """
    import pandas as pd

    from eosfill.study.store import ResultStore, order_columns

    cases = list(cases)
    n = len(cases)
    input_names = list(dict.fromkeys(k for c in cases for k in c))
    if workers is not None and (isinstance(workers, bool) or int(workers) != workers or workers < 1):
        raise InputError("workers", workers, "a whole number >= 1")
    if chunk_size is not None and (int(chunk_size) != chunk_size or chunk_size < 1):
        raise InputError("chunk_size", chunk_size, "a whole number >= 1")
    own_client = None
    if scheduler is not None and client is None:
        try:
            from dask.distributed import Client
        except ImportError as exc:
            raise InputError("scheduler", scheduler, message=f"--scheduler needs dask.distributed ({exc}); "
                             "install it with \"pip install eosfill[dask]\"") from None
        try:
            own_client = client = Client(scheduler, timeout="20s")
        except OSError as exc:
            raise InputError("scheduler", scheduler, message=f"no Dask scheduler answers at {scheduler}: {exc}") from None
    # every check above comes before anything is written (a bad option leaves no parts folder)
    store = None
    done = set()
    try:
        if output is not None:
            store = ResultStore(output, fingerprint(cases, what), n, resume=resume)
            done = store.done_ids()
    except BaseException:
        if own_client is not None:
            own_client.close()
        raise
    items = [(i, c) for i, c in enumerate(cases) if i not in done]
    if client is not None:
        workers = max(1, len(client.scheduler_info().get("workers", {})))
    workers = int(workers or default_workers())
    size = chunk_size or max(1, min(500, math.ceil(len(items) / (4 * workers)) if items else 1))
    chunks = _chunks(items, int(size))
    rows_mem = []
    bar = _Progress(progress, n, len(done))

    def on_rows(rows):
        if store is not None:
            store.write_chunk(rows)
        else:
            rows_mem.extend(rows)
        bar.update(len(rows))

    try:
        if not chunks:
            pass
        elif client is not None:
            _run_dask(run_case, run_batch, chunks, on_rows, client)
        elif workers == 1:
            _run_serial(run_case, run_batch, chunks, on_rows)
        else:
            _run_pool(run_case, run_batch, chunks, on_rows, workers)
    finally:
        bar.close()
        if own_client is not None:
            own_client.close()
    first = ["case", *input_names]
    if store is not None:
        return store.assemble(columns_first=first)
    df = pd.DataFrame(rows_mem) if rows_mem else pd.DataFrame({"case": []})
    df = df.sort_values("case", kind="stable").reset_index(drop=True)
    return order_columns(df, first)
