"""Studies: many runs of one job - grids, Monte Carlo draws, limit searches.

This layer knows nothing of scenario files: it takes a callable that runs
one case from a flat dict of inputs and returns a flat dict of outputs, and
runs many cases of it, in this process, on a local process pool or on a
Dask cluster, writing rows to a kill-safe store that can be resumed.  The
binding to scenario files (``[sweep]``) is :mod:`eosfill.io.sweep`.

>>> from eosfill.study import Grid, make_cases, run_study
>>> cases = make_cases([Grid("x [-]", (1.0, 2.0, 3.0))])
>>> run_study(lambda c: {"y [-]": 2 * c["x [-]"]}, cases, workers=1)["y [-]"].tolist()
[2.0, 4.0, 6.0]
"""
from eosfill.study.cases import DISTRIBUTIONS, Draw, Grid, draw_samples, make_cases
from eosfill.study.execute import EXIT_CODES, STATUSES, exit_class, fingerprint, make_row, run_chunk, run_study
from eosfill.study.limit import LimitNotBracketed, LimitSearch, search_limit
from eosfill.study.stats import mean_and_standard_error, percentiles, rank_correlations
from eosfill.study.store import ResultStore

__all__ = ["DISTRIBUTIONS", "Draw", "Grid", "draw_samples", "make_cases", "EXIT_CODES", "STATUSES", "exit_class",
           "fingerprint", "make_row", "run_chunk", "run_study", "LimitNotBracketed", "LimitSearch", "search_limit",
           "mean_and_standard_error", "percentiles", "rank_correlations", "ResultStore"]
