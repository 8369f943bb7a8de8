"""Limit search: the value of one input at which one output of a whole run
reaches a stated limit.

For each case, g(x) = y(x) - y_lim, where y is an output of the whole
simulation run with input x; the search keeps a bracket [a, b] with
g(a) g(b) <= 0 and narrows it until b - a <= tolerance.  Steps: the
Illinois variant of regula falsi (Dowell & Jarratt 1971, BIT 11, 168-174:
the retained end's function value is halved when the same end is kept
twice), with a bisection whenever a step fails to halve the bracket, so the
bracket width shrinks at least as fast as bisection every two runs.

The answer is the end of the final bracket on the allowed side of the limit
(``keep="below"``: the output stays at or below the limit there), so that a
single run at the answer meets the limit, and a run one tolerance further
passes it.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from eosfill.errors import ConvergenceError, InputError


class LimitNotBracketed(ConvergenceError):
    """The output does not cross the limit between the two ends of the search range."""


@dataclass(frozen=True)
class LimitSearch:
    """What to search for.

    Attributes
    ----------
    input : str
        Name of the input varied (a case key).
    output : str
        Name of the output compared with the limit (a key of the run's outputs).
    limit : float
        The limit, in the output's unit.
    low, high : float
        The search range of the input (low < high).
    tolerance : float
        Width of the final bracket on the input, > 0, in the input's unit.
    keep : str
        ``"below"``: the output must stay at or below the limit (a highest
        temperature, a pressure); ``"above"``: at or above it (a lowest
        wall temperature).
    max_runs : int
        Runs allowed, the two ends included.
    """

    input: str
    output: str
    limit: float
    low: float
    high: float
    tolerance: float
    keep: str = "below"
    max_runs: int = 40

    def __post_init__(self):
        if not self.low < self.high:
            raise InputError("limit.high", self.high, f"above limit.low = {self.low!r}")
        if not self.tolerance > 0:
            raise InputError("limit.tolerance", self.tolerance, "a width > 0 in the input's unit")
        if self.keep not in ("below", "above"):
            raise InputError("limit.keep", self.keep, '"below" or "above"')
        if self.max_runs < 3:
            raise InputError("limit.max_runs", self.max_runs, "a whole number >= 3")

    def column(self, name, what="at limit"):
        """``"a.b [unit]"`` -> ``"a.b at limit [unit]"``."""
        head, sep, unit = name.partition(" [")
        return f"{head} {what}{sep}{unit}"


def search_limit(run_case, inputs: dict, spec: LimitSearch) -> dict:
    """Run the bracketing search for one case.

    Parameters
    ----------
    run_case : callable
        dict of inputs -> dict of outputs (one whole run).
    inputs : dict
        The case's other inputs; ``spec.input`` is set by the search.
    spec : LimitSearch

    Returns
    -------
    dict
        The outputs of the run at the answer, plus ``<input> at limit``,
        ``<output> at limit``, ``<input> bracket width`` and ``limit runs``.

    Raises
    ------
    LimitNotBracketed
        The output is on the same side of the limit at both ends.
    ConvergenceError
        ``max_runs`` used before the bracket is narrow enough.
    """
    runs = []

    def g(x):
        out = run_case({**inputs, spec.input: x})
        y = float(out[spec.output])
        if not math.isfinite(y):
            raise ConvergenceError("limit search", f"{spec.output} is not finite at {spec.input} = {x!r}",
                                   {spec.input: x}, None)
        runs.append(out)
        return y - spec.limit, out

    a, b = float(spec.low), float(spec.high)
    ga, out_a = g(a)
    gb, out_b = g(b)
    if ga * gb > 0:
        raise LimitNotBracketed("limit search", f"{spec.output} does not cross {spec.limit!r} for "
                                f"{spec.input} in [{a!r}, {b!r}]",
                                {spec.input + " low": a, spec.output + " low": ga + spec.limit,
                                 spec.input + " high": b, spec.output + " high": gb + spec.limit})
    kept = 0  # +1: a kept last time, -1: b kept
    fa, fb = ga, gb
    while b - a > spec.tolerance:
        if len(runs) >= spec.max_runs:
            raise ConvergenceError("limit search", f"bracket still {b - a!r} wide after {len(runs)} runs "
                                   f"(tolerance {spec.tolerance!r})", {"low": a, "high": b}, b - a)
        width = b - a
        x = b - fb * (b - a) / (fb - fa) if fb != fa else 0.5 * (a + b)
        # stay clear of the ends by a quarter tolerance, so each run narrows the bracket
        x = min(max(x, a + 0.25 * spec.tolerance), b - 0.25 * spec.tolerance)
        gx, out_x = g(x)
        if gx == 0.0:
            a = b = x
            ga = gb = 0.0
            out_a = out_b = out_x
            break
        if (gx < 0) == (ga < 0):  # the root is in [x, b]
            a, ga, fa, out_a = x, gx, gx, out_x
            if kept == -1:
                fb *= 0.5  # Illinois: b kept twice
            kept = -1
        else:
            b, gb, fb, out_b = x, gx, gx, out_x
            if kept == 1:
                fa *= 0.5
            kept = 1
        if b - a > 0.5 * width and b - a > spec.tolerance:  # a poor step: bisect once
            m = 0.5 * (a + b)
            gm, out_m = g(m)
            if (gm < 0) == (ga < 0):
                a, ga, fa, out_a = m, gm, gm, out_m
            else:
                b, gb, fb, out_b = m, gm, gm, out_m
            kept = 0
    # the allowed end: output <= limit (keep below) or >= limit (keep above)
    ok_a = ga <= 0 if spec.keep == "below" else ga >= 0
    x, gx, out = (a, ga, out_a) if ok_a else (b, gb, out_b)
    row = dict(out)
    row[spec.column(spec.input)] = x
    row[spec.column(spec.output)] = gx + spec.limit
    row[spec.column(spec.input, "bracket width")] = b - a
    row["limit runs"] = len(runs)
    return row
