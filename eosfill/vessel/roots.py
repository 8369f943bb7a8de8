"""A bracketed root search on many rows at once, each row on its own: the amount admitted
at which a fill's stop criterion is met, for one fill (one row) or a batch of them.

:func:`increasing_roots` finds x in each row with f(x) = 0 for a residual that rises
with x (the end pressure, or the settled pressure, rises with the amount in a rigid
vessel): first a bracket grown upwards from a guess, then the Illinois variant of
regula falsi (Dowell & Jarratt, BIT 11 (1971) 168-174), with bisection where the secant
point falls outside the bracket.  Every step is elementwise and each row has its own
stopping test, so the iterates of a row depend on that row alone: a row solved in a
batch equals the same row solved alone, bit for bit.  The residual is evaluated only
on the rows still running.

A row that cannot be solved keeps its exception (the residual's own, or a
:class:`~eosfill.errors.ConvergenceError` with the last bracket); the other rows are
unaffected.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import ConvergenceError

#: stopping test of a row: |f| <= FTOL (f is a relative residual) or bracket width <= XTOL_REL x
FTOL = 1e-13
XTOL_REL = 1e-14
GROW = 1.6  # bracket growth factor (the upper end moves to lo0 + GROW (hi - lo0))


def increasing_roots(f, lo, hi, cap, what, *, maxgrow=60, maxiter=200, flo=None):
    """Roots of an increasing residual, row by row.

    Parameters
    ----------
    f : callable(rows, x) -> (values, errors)
        Residual of the rows ``rows`` (int array) at ``x`` (same length);
        ``errors``: {position in rows: exception} for rows it cannot evaluate.
    lo, hi, cap : arrays (n,)
        Lower end (f(lo) < 0 expected), first upper end tried, largest x allowed.
    what : str
        What is solved, for the error messages.
    flo : array (n,), optional
        f(lo) when the caller has it already.

    Returns
    -------
    x : array (n,)
        The root of each row (NaN where it failed).
    fx : array (n,)
        The residual at x.
    errors : dict
        {row: exception} of the rows that failed; ``f(lo) >= 0`` gives a
        ConvergenceError saying so (the caller may name the input instead).
    """
    lo = np.array(lo, dtype=float)
    hi = np.minimum(np.array(hi, dtype=float), cap)
    cap = np.asarray(cap, dtype=float)
    n = lo.size
    errors = {}
    x = np.full(n, np.nan)
    fx = np.full(n, np.nan)
    alive = np.ones(n, dtype=bool)

    def evaluate(rows, at):
        vals, errs = f(rows, at)
        vals = np.array(vals, dtype=float)
        for k, exc in errs.items():
            errors[int(rows[k])] = exc
            alive[rows[k]] = False
        return vals

    rows = np.arange(n)
    if flo is None:
        flo = np.full(n, np.nan)
        flo[rows] = evaluate(rows, lo)
    else:
        flo = np.array(flo, dtype=float)
    for i in np.flatnonzero(alive & ~(flo < 0)):
        x[i], fx[i] = lo[i], flo[i]
        if flo[i] != 0:
            errors[int(i)] = ConvergenceError(what, "the end condition is already met or passed at the start",
                                              dict(n_lo=float(lo[i]), f_lo=float(flo[i])))
        alive[i] = False
    # a bracket [lo, hi] with f(hi) >= 0, hi growing from the guess up to the cap
    lo0 = lo.copy()
    fhi = np.full(n, np.nan)
    todo = np.flatnonzero(alive)
    for _ in range(maxgrow):
        if todo.size == 0:
            break
        fhi[todo] = evaluate(todo, hi[todo])
        todo = todo[alive[todo]]
        short = todo[fhi[todo] < 0]
        at_cap = short[hi[short] >= cap[short]]
        for i in at_cap:
            errors[int(i)] = ConvergenceError(what, "the end condition is not reached below the model's "
                                              "densest content", dict(n_lo=float(lo[i]), n_hi=float(hi[i])))
            alive[i] = False
        short = short[hi[short] < cap[short]]
        lo[short], flo[short] = hi[short], fhi[short]
        hi[short] = np.minimum(cap[short], lo0[short] + GROW * (hi[short] - lo0[short]))
        todo = short
    for i in todo:  # still short after maxgrow steps
        errors[int(i)] = ConvergenceError(what, f"no bracket after {maxgrow} steps",
                                          dict(n_lo=float(lo[i]), n_hi=float(hi[i])))
        alive[i] = False
    # Illinois regula falsi on [lo, hi]: f(lo) < 0 <= f(hi)
    act = np.flatnonzero(alive)
    done0 = act[np.abs(fhi[act]) <= FTOL]
    x[done0], fx[done0] = hi[done0], fhi[done0]
    act = act[np.abs(fhi[act]) > FTOL]
    side = np.zeros(n, dtype=np.int8)
    for _ in range(maxiter):
        if act.size == 0:
            break
        a, b, fa, fb = lo[act], hi[act], flo[act], fhi[act]
        with np.errstate(invalid="ignore", divide="ignore"):
            new = (a * fb - b * fa) / (fb - fa)
        bad = ~np.isfinite(new) | (new <= a) | (new >= b)
        new = np.where(bad, 0.5 * (a + b), new)
        fnew = evaluate(act, new)
        ok = alive[act]
        act, new, fnew, fa, fb = act[ok], new[ok], fnew[ok], fa[ok], fb[ok]
        x[act], fx[act] = new, fnew
        neg = fnew < 0
        s = side[act]
        # Illinois: halve the retained end's f when the same end is kept twice
        flo[act] = np.where(neg, fnew, np.where(s == 1, 0.5 * fa, fa))
        fhi[act] = np.where(~neg, fnew, np.where(s == -1, 0.5 * fb, fb))
        lo[act] = np.where(neg, new, lo[act])
        hi[act] = np.where(~neg, new, hi[act])
        side[act] = np.where(neg, -1, 1)
        fin = (np.abs(fnew) <= FTOL) | (hi[act] - lo[act] <= XTOL_REL * hi[act])
        act = act[~fin]
    for i in act:
        errors[int(i)] = ConvergenceError(what, f"not converged in {maxiter} steps",
                                          dict(n=float(x[i]), n_lo=float(lo[i]), n_hi=float(hi[i])), float(fx[i]))
        alive[i] = False
    x[list(errors)] = np.nan
    return x, fx, errors
