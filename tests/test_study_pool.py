"""The local pool after the parent process has run a compiled parallel kernel.

numba's parallel loops run on an OpenMP thread pool (GNU libgomp when no TBB
is installed); a child forked from a process whose OpenMP pool is running is
terminated by libgomp ("fork() called from a process already using GNU
OpenMP, this is unsafe"), so a process pool started by ``fork`` loses every
worker once the parent has evaluated a batch.  The pool must survive that:
every case comes back computed, none as a dead worker.
"""
import numpy as np
import pytest

from eosfill import Fluid
from eosfill.study import Grid, make_cases, run_study

pd = pytest.importorskip("pandas")

_GAS = {"methane": 0.9, "ethane": 0.1}   # demo composition


def _batch_Z(c):
    """A case that runs a parallel kernel in the worker (2,000 states, above the serial limit)."""
    T = np.linspace(250.0, 400.0, 2000)
    Z = Fluid(_GAS).single_phase(T, np.full(T.shape, c["P [Pa]"])).Z
    return {"Zmean [-]": float(np.mean(Z))}


def test_pool_survives_a_parent_that_ran_a_parallel_kernel():
    _batch_Z({"P [Pa]": 1e6})                       # the parent's OpenMP pool is now running
    cases = make_cases([Grid("P [Pa]", (1e6, 2e6, 3e6, 4e6))])
    df = run_study(_batch_Z, cases, workers=2, chunk_size=1)
    assert df["status"].tolist() == ["ok"] * 4
    serial = run_study(_batch_Z, cases, workers=1)
    pd.testing.assert_frame_equal(df, serial)
