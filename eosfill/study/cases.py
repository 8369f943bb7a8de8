"""Cases of a study: full-factorial grids crossed with seeded Monte Carlo draws.

A case is a flat dict {input name: value}; its id is its position in the
list :func:`make_cases` returns (stable for the same grids, draws, sample
count and seed, which is what lets a study resume).

Draws are made by inverse transform sampling: a point ``q`` of the unit cube
(from a seeded ``numpy.random.Generator``, or from a Latin hypercube,
McKay, Beckman & Conover 1979, via :class:`scipy.stats.qmc.LatinHypercube`)
is mapped through each input's inverse cumulative distribution function
(``scipy.stats`` ``ppf``).  The same seed gives the same cases on every
machine and executor, because the draws are made once, in the parent,
before any case runs.

Distributions (parameters in the input's own SI unit):

* ``normal``: ``mean``, ``sd`` (sd > 0);
* ``uniform``: ``low``, ``high`` (low < high);
* ``triangular``: ``low``, ``mode``, ``high`` (low <= mode <= high, low < high).
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from eosfill.errors import InputError

DISTRIBUTIONS = {"normal": ("mean", "sd"), "uniform": ("low", "high"), "triangular": ("low", "mode", "high")}


@dataclass(frozen=True)
class Grid:
    """One input taking each of ``values`` in turn (a full-factorial axis)."""

    name: str
    values: tuple

    def __post_init__(self):
        if len(self.values) == 0:
            raise InputError(self.name, self.values, "at least one value")


@dataclass(frozen=True)
class Draw:
    """One input drawn from a distribution (see the module docstring)."""

    name: str
    distribution: str
    params: dict = field(default_factory=dict)

    def __post_init__(self):
        need = DISTRIBUTIONS.get(self.distribution)
        if need is None:
            raise InputError(f"{self.name}.distribution", self.distribution, ", ".join(DISTRIBUTIONS))
        missing = [k for k in need if k not in self.params]
        extra = [k for k in self.params if k not in need]
        if missing or extra:
            raise InputError(self.name, dict(self.params),
                             f"{self.distribution} takes exactly {', '.join(need)}")
        p = self.params
        if self.distribution == "normal" and not p["sd"] > 0:
            raise InputError(f"{self.name}.sd", p["sd"], "a standard deviation > 0")
        if self.distribution != "normal" and not p["low"] < p["high"]:
            raise InputError(f"{self.name}.high", p["high"], f"above low = {p['low']!r}")
        if self.distribution == "triangular" and not p["low"] <= p["mode"] <= p["high"]:
            raise InputError(f"{self.name}.mode", p["mode"], f"within [{p['low']!r}, {p['high']!r}]")

    def ppf(self, q):
        """Inverse cumulative distribution function at ``q`` in (0, 1)."""
        from scipy import stats

        p = self.params
        if self.distribution == "normal":
            return stats.norm.ppf(q, loc=p["mean"], scale=p["sd"])
        if self.distribution == "uniform":
            return stats.uniform.ppf(q, loc=p["low"], scale=p["high"] - p["low"])
        width = p["high"] - p["low"]
        return stats.triang.ppf(q, (p["mode"] - p["low"]) / width, loc=p["low"], scale=width)

    @property
    def mean(self):
        """The distribution's mean (normal: mean; uniform: (a+b)/2; triangular: (a+c+b)/3)."""
        p = self.params
        if self.distribution == "normal":
            return p["mean"]
        if self.distribution == "uniform":
            return 0.5 * (p["low"] + p["high"])
        return (p["low"] + p["mode"] + p["high"]) / 3.0


def draw_samples(draws, samples: int, seed: int, latin_hypercube: bool = False) -> np.ndarray:
    """``samples`` x ``len(draws)`` values, reproducible from ``seed``."""
    if samples < 1:
        raise InputError("samples", samples, "a whole number >= 1")
    d = len(draws)
    if d == 0:
        return np.empty((samples, 0))
    if latin_hypercube:
        from scipy.stats import qmc

        q = qmc.LatinHypercube(d=d, seed=np.random.default_rng(seed)).random(samples)
    else:
        q = np.random.default_rng(seed).random((samples, d))
    # q is in [0, 1); 0 maps to -inf for the normal: nudge to the smallest positive double
    q = np.clip(q, np.finfo(float).tiny, 1.0 - np.finfo(float).eps)
    return np.column_stack([dr.ppf(q[:, j]) for j, dr in enumerate(draws)])


def make_cases(grids=(), draws=(), samples: int = 0, seed: int = 0, latin_hypercube: bool = False,
               base: dict | None = None) -> list:
    """Every combination of the grid values crossed with each Monte Carlo sample.

    Parameters
    ----------
    grids : sequence of Grid
        Full-factorial axes; the last one varies fastest.
    draws : sequence of Draw
        Inputs drawn ``samples`` times; the same samples are crossed with
        every grid point (so grid points differ only by the grid inputs).
    samples : int
        Number of Monte Carlo samples (needed when ``draws`` is given).
    seed : int
        Seed of ``numpy.random.default_rng``.
    base : dict, optional
        Inputs common to every case (added first).

    Returns
    -------
    list of dict
        One dict per case, case id = index.
    """
    names = [g.name for g in grids] + [d.name for d in draws]
    dup = {n for n in names if names.count(n) > 1}
    if dup:
        raise InputError(sorted(dup)[0], None, "each input swept or drawn once")
    if draws and samples < 1:
        raise InputError("samples", samples, "a whole number >= 1 when inputs are drawn")
    drawn = draw_samples(list(draws), samples, seed, latin_hypercube) if draws else np.empty((1, 0))
    cases = []
    for point in itertools.product(*(g.values for g in grids)):
        for row in drawn:
            case = dict(base or {})
            case.update({g.name: v for g, v in zip(grids, point)})
            case.update({d.name: float(x) for d, x in zip(draws, row)})
            cases.append(case)
    return cases
