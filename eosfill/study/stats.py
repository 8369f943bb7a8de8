"""Statistics of a study's rows, for its report and for checks.

* mean and its standard error, s / sqrt(n) (s the sample standard
  deviation with n - 1 in the denominator);
* percentiles (``numpy.percentile``, linear interpolation between order
  statistics, Hyndman & Fan 1996 definition 7);
* Spearman's rank correlation of each input with an output
  (:func:`scipy.stats.spearmanr`; Spearman 1904), the inputs ranked by its
  absolute value: which inputs matter most, for monotone effects.
"""
from __future__ import annotations

import math

import numpy as np


def mean_and_standard_error(values):
    x = np.asarray(values, dtype=float)
    x = x[np.isfinite(x)]
    if x.size < 2:
        return (float(x[0]) if x.size else math.nan), math.nan
    return float(np.mean(x)), float(np.std(x, ddof=1) / math.sqrt(x.size))


def percentiles(values, qs=(5, 50, 95)):
    x = np.asarray(values, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {q: math.nan for q in qs}
    return {q: float(v) for q, v in zip(qs, np.percentile(x, qs))}


def rank_correlations(df, inputs, output):
    """[(input, rho, p-value)] sorted by |rho|, largest first; inputs that do not vary are left out."""
    from scipy.stats import spearmanr

    out = []
    y = np.asarray(df[output], dtype=float)
    for name in inputs:
        x = np.asarray(df[name], dtype=float)
        ok = np.isfinite(x) & np.isfinite(y)
        if ok.sum() < 3 or np.ptp(x[ok]) == 0 or np.ptp(y[ok]) == 0:
            continue
        res = spearmanr(x[ok], y[ok])
        out.append((name, float(res.statistic), float(res.pvalue)))
    return sorted(out, key=lambda t: -abs(t[1]))
