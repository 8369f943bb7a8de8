"""State solvers: one entry per specification pair, single or two phase.

``Fluid.state(**pair)`` dispatches here.  Supported pairs:

======  ==========================================================
pair    method
======  ==========================================================
T, P    pure: lowest-Gibbs root; mixture: stability test + flash
T, v    pure: saturation at T decides the split; mixture: explicit
        P(T, v), stability test, then a TV flash (1-D in ln P)
P, h    1-D in T at fixed P (below; also P-s, P-u, P-v)
u, v    1-D in T at fixed v (below; also h-v, s-v)
T, s    1-D in ln P at fixed T
======  ==========================================================

Pure fluids (vectorised over a batch): every state is fixed by (T, v)
once the saturation curve is known, because a pure two-phase state at T
holds liquid and vapour at P_sat(T) and splits v by the lever rule.  So
*fixed-v* pairs are a 1-D search in T where each trial (T, v) is single
phase or split on the saturation curve, and *fixed-P* pairs compare the
specification with its saturated-liquid and saturated-vapour values at
T_sat(P) (lever rule in between), else search T on the liquid or vapour
side.  Each property used (u, h, s at fixed v; h, s, u, v at fixed P) is
monotone in T, so a bracketing search (Illinois regula falsi; Dowell &
Jarratt, BIT 11 (1971) 168-174) converges wherever the phase count
changes.

Mixtures ("nested T-P search on top of the TP flash"; Michelsen &
Mollerup 2007, ch. 11): a single-phase solution is found first (1-D in T,
explicit in (T, v) or with the lowest-Gibbs root at fixed P); the
tangent-plane stability test (Michelsen 1982) is applied at that state;
if it is unstable, the two-phase state is found by a 1-D bracketing
search on T (fixed P) or a 2-D damped Newton on (T, ln P) with TP flashes
inside (fixed v), falling back to nested 1-D searches.

Every loop is bounded; a failure raises :class:`ConvergenceError` with
the last iterate.  Specifications with no physical solution raise
:class:`InputError`.  Every returned row is verified against its
specification (:func:`spec_residual`) and carries a status
(``on_failure="flag"`` keeps the other rows of a batch).

Several solutions?  For the equilibrium (stable) state each search runs on
a property that is monotone in the searched variable: at fixed P, h, s, u
and v rise with T (Cp > 0; du/dT|_P = Cv + (∂v/∂T)_P (∂u/∂v)_T > 0;
(∂v/∂T)_P > 0), also across phase splits; at fixed v, u, h and s rise with T
(Cv > 0, dh/dT|_v = Cv + v (∂P/∂T)_v); at fixed T, s falls with P.  So a
specification has at most one equilibrium solution in the searched range
(0.4 min Tc to 1e4 K) and the solvers return it; metastable and unstable
states (the other roots of the cubic, unstable splits) are never returned.
Where a model breaks such monotonicity (none found for PR/PR78/SRK with the
bundled data) the bracketing search converges to one of the solutions (which
one is not guaranteed) and the verification still holds for it.

Where things are: this module holds the dispatch (:func:`solve_state`),
the explicit single-phase properties (:func:`props_Tv`, :func:`props_TP`),
the vectorised bracketing search (:func:`illinois`) and the assembly of a
State from its phases are in :mod:`eosfill.states.common`; :mod:`eosfill.states.pure` holds the pure-fluid
solvers, :mod:`eosfill.states.mixture` the mixture solvers.
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.equilibrium import solvers as equilibrium
from eosfill.constants import R
from eosfill.errors import (CONVERGED, NO_SOLUTION, NOT_CONVERGED, STATUS_TEXT, ConvergenceError, EosfillError,
                            InputError)
from eosfill.model.mixture import Mixture, State, _as_float_array, _out, _scalar
from eosfill.states.mixture import _mixture_fixed_P, _mixture_fixed_v, _mixture_from_flash, _mixture_TV
from eosfill.states.pure import (_assemble_pure, _pure_fixed_P, _pure_fixed_T, _pure_fixed_v_scalar, _pure_Tv,
                                 _pure_TP, _solve_fixed_v)

_KEYS = ("T", "P", "v", "h", "u", "s")


# --------------------------------------------------------------------------
# dispatch
# --------------------------------------------------------------------------
#: relative tolerance every returned state meets on each of its two specifications
SPEC_RTOL = 1e-8
# absolute floors of that test (a relative test is meaningless near zero):
# u and h are measured from the ideal-gas reference state and pass through 0,
# so their scale is R T (J/mol; the thermal energy per mole at the state's T);
# s likewise passes through 0, scale R (J/(mol K)).  T, P, v are positive.
_SPEC_FLOOR = {"u": lambda T: R * T, "h": lambda T: R * T, "s": lambda T: R + 0.0 * T}

ON_FAILURE = ("raise", "flag")
_ONE_CONVERGED, _ONE_NO_ITERATIONS = np.int8(CONVERGED), np.int64(0)   # a one-state result's status, iterations


def solve_state(fluid: Mixture, on_failure="raise", **spec):
    """Solve for the state at one pair of (T, P, v, h, u, s).

    Every row is verified against its specification before it is returned
    (:func:`spec_residual`: relative ``SPEC_RTOL`` on each of the two
    specified quantities, with the floors of ``_SPEC_FLOOR``).  A row that
    fails to solve or to verify either raises (``on_failure="raise"``, the
    default for scalars and batches: :class:`ConvergenceError` naming the
    row, its inputs and the residual) or is flagged (``on_failure="flag"``:
    its values are NaN, its ``status`` is NOT_CONVERGED or NO_SOLUTION, the
    other rows are kept).
    """
    if on_failure not in ON_FAILURE:
        raise InputError("on_failure", on_failure, '"raise" or "flag"')
    given = {k: v for k, v in spec.items() if v is not None}
    unknown = set(given) - set(_KEYS)
    if unknown:
        raise InputError("state()", sorted(unknown), "two of T, P, v, h, u, s")
    if len(given) != 2:
        raise InputError("state()", sorted(given), "exactly two of T, P, v, h, u, s")
    one = _solve_one(fluid, given)
    if one is not None:
        return one
    arrs = {k: _as_float_array(k, v) for k, v in given.items()}
    for k in ("T", "P", "v"):
        if k in arrs and np.any(arrs[k] <= 0):
            raise InputError(k, _out(arrs[k]), f"{k} > 0")
    try:
        bc = np.broadcast_arrays(*arrs.values())
    except ValueError:
        raise InputError(", ".join(arrs), {k: np.shape(v) for k, v in arrs.items()},
                         "shapes that broadcast together") from None
    shape = bc[0].shape
    arrs = {k: np.ascontiguousarray(v).reshape(-1).astype(float) for k, v in zip(arrs, bc)}
    keys = frozenset(arrs)
    st = _solve_rows(fluid, keys, arrs, on_failure)
    return _reshape(st, shape)


def _solve_one(fluid, given):
    """One state given as two finite numbers, on plain floats, where a one-state solver
    answers: a pure fluid at (T, P) (its lowest-Gibbs root) or at fixed v clearly off
    the saturation dome (:func:`_pure_fixed_v_scalar`).  Verified like every row
    (:func:`spec_residual`, here on floats); None where the general path must decide
    (other pairs, mixtures, inputs it rejects, a result that does not verify)."""
    vals = {}
    for k, value in given.items():
        f = _scalar(value)
        if f is None or not math.isfinite(f) or (k in ("T", "P", "v") and f <= 0.0):
            return None
        vals[k] = f
    if not fluid.is_pure:
        return None
    keys = frozenset(vals)
    if keys == {"T", "P"}:
        st = fluid.single_phase(vals["T"], vals["P"])
    elif "v" in keys and not keys & {"T", "P"}:
        (key,) = keys - {"v"}
        st = _pure_fixed_v_scalar(fluid, vals["v"], key, vals[key], flat=False)
        if st is None:
            return None
    else:
        return None
    T = float(st._T)
    res = 0.0
    for k, target in vals.items():
        scale = abs(target)
        if k in _SPEC_FLOOR:
            scale = max(scale, _SPEC_FLOOR[k](T))
        r = abs(float(getattr(st, "_" + k)) - target) / scale
        res = max(res, r if math.isfinite(r) else math.inf)
    if not res <= SPEC_RTOL:
        return None
    st.status_array, st.residual_array, st.iterations_array = _ONE_CONVERGED, res, _ONE_NO_ITERATIONS
    return st


def spec_residual(st: State, spec: dict):
    """Largest relative miss of a flat state on its specification, per row:
    max over the two keys of |value - spec| / max(|spec|, floor)."""
    res = np.zeros(np.shape(st._T))
    for k, target in spec.items():
        val = np.asarray(getattr(st, "_" + k), dtype=float)
        scale = np.abs(target)
        if k in _SPEC_FLOOR:
            scale = np.maximum(scale, _SPEC_FLOOR[k](np.asarray(st._T, dtype=float)))
        with np.errstate(invalid="ignore", divide="ignore"):
            r = np.abs(val - target) / scale
        res = np.maximum(res, np.where(np.isfinite(r), r, np.inf))
    return res


def _spec_text(spec, i):
    return ", ".join(f"{k}={float(v[i])!r}" for k, v in spec.items())


def _solve_rows(fluid, keys, a, on_failure):
    """Dispatch a flat batch; isolate failing rows; verify; set the status."""
    n = next(iter(a.values())).size
    try:
        st = _dispatch(fluid, keys, a)
        failure = None
    except InputError as exc:
        if n == 1 and on_failure == "raise":
            raise
        st, failure = None, exc
    except EosfillError as exc:
        st, failure = None, exc
    except (ArithmeticError, ValueError, np.linalg.LinAlgError, RuntimeError, IndexError) as exc:
        # a failure inside a numerical library: eosfill's own error, with the inputs
        st, failure = None, exc
    if st is None:
        if n == 1:
            status = NO_SOLUTION if isinstance(failure, InputError) else NOT_CONVERGED
            if on_failure == "raise":
                raise ConvergenceError(f"state({', '.join(sorted(keys))})",
                                       f"{type(failure).__name__}: {failure}",
                                       {k: float(v[0]) for k, v in a.items()}) from failure
            return _failed_state(fluid, a, status, str(failure))
        # one bad row must not discard the others: solve row by row
        rows = [_solve_rows(fluid, keys, {k: v[i:i + 1] for k, v in a.items()}, on_failure) for i in range(n)]
        return _stack(fluid, rows)
    res = spec_residual(st, a)
    status = np.where(res <= SPEC_RTOL, CONVERGED, NOT_CONVERGED).astype(np.int8)
    # the phase-equilibrium solve under the final state (multiphase flash:
    # equal fugacities to 1e-9 and a stable result) counts too
    inner = getattr(st, "solver_status", None)
    if inner is not None:
        status = np.maximum(status, np.asarray(inner, dtype=np.int8).reshape(-1))
        res = np.maximum(res, np.asarray(getattr(st, "solver_residual", np.zeros(n)), dtype=float).reshape(-1))
    st.status_array = status
    st.residual_array = res
    if np.ndim(getattr(st, "iterations_array", None)) == 0:
        st.iterations_array = np.zeros(n, dtype=np.int64)
    bad = np.flatnonzero(status != CONVERGED)
    if bad.size:
        i = int(bad[0])
        if on_failure == "raise":
            raise ConvergenceError(
                f"state({', '.join(sorted(keys))})",
                f"row {i} ({_spec_text(a, i)}) does not meet its specification or its phase "
                f"equilibrium is not converged: residual {res[i]:.3g} (allowed {SPEC_RTOL:g})",
                dict(T=float(st._T[i]), P=float(st._P[i]), v=float(st._v[i]), u=float(st._u[i]),
                     h=float(st._h[i]), s=float(st._s[i])), float(res[i]))
        _blank_rows(st, status != CONVERGED)
    return st


def _failed_state(fluid, a, status, message):
    """A one-row State whose values are NaN, with its status (flag mode)."""
    st = fluid.single_phase(np.array([300.0]), np.array([1e5]))
    _blank_rows(st, np.array([True]))
    st.status_array = np.array([status], dtype=np.int8)
    st.residual_array = np.array([np.inf])
    st.iterations_array = np.zeros(1, dtype=np.int64)
    st.solver_info = {"message": message}
    return st


def _blank_rows(st, rows):
    """NaN in every value of the rows flagged as failed (status says why)."""
    for obj in [st] + list(getattr(st, "phases", None) or []) + [st.liquid, st.vapour]:
        if obj is None:
            continue
        for k in ("_T", "_P", "_v", "_h", "_u", "_s", "_h_res", "_s_res", "_v_eos", "_beta"):
            val = getattr(obj, k, None)
            if isinstance(val, np.ndarray) and val.shape[:1] == rows.shape and val.dtype.kind == "f":
                val = val.copy()
                val[rows] = np.nan
                setattr(obj, k, val)
        if isinstance(getattr(obj, "_x", None), np.ndarray) and obj._x.shape[:1] == rows.shape:
            x = np.array(obj._x, dtype=float)
            x[rows] = np.nan
            obj._x = x
        if obj._sol is not None:
            obj._sol = {k: (np.where(rows.reshape(rows.shape + (1,) * (np.ndim(v) - 1)), np.nan, v)
                            if isinstance(v, np.ndarray) and v.dtype.kind == "f" and v.shape[:1] == rows.shape
                            else v) for k, v in obj._sol.items()}


def _stack(fluid, rows):
    """One flat State from one-row States (row by row after a batch failure)."""
    out = State(fluid)
    two = any(r.liquid is not None for r in rows)

    def cat(objs, k):
        return np.concatenate([np.atleast_1d(np.asarray(getattr(o, k))) for o in objs])

    def fill(dst, objs):
        for k in ("_T", "_P", "_v", "_h", "_u", "_s", "_beta", "_phase_code", "_h_res", "_s_res", "_v_eos"):
            setattr(dst, k, cat(objs, k))
        dst._shift = np.concatenate([np.broadcast_to(np.atleast_1d(o._shift), (1,)) for o in objs])
        dst._x = np.concatenate([np.reshape(o._x, (1, fluid.nc)) for o in objs])
        keys = set.intersection(*[set(o._sol) for o in objs])
        dst._sol = {}
        for k in keys:
            vals = [np.asarray(o._sol[k]) for o in objs]
            if all(v.ndim >= 1 and v.shape[1:] == vals[0].shape[1:] for v in vals):
                dst._sol[k] = np.concatenate(vals)

    fill(out, rows)
    if two:
        out.liquid, out.vapour = State(fluid), State(fluid)
        fill(out.liquid, [r.liquid if r.liquid is not None else r for r in rows])
        fill(out.vapour, [r.vapour if r.vapour is not None else r for r in rows])
    kmax = max([len(r.phases) if r.phases else 1 for r in rows])
    if kmax > 1:
        out.phases = []
        for k in range(kmax):
            ph = State(fluid)
            fill(ph, [r.phases[k] if r.phases and k < len(r.phases) else r for r in rows])
            out.phases.append(ph)
        frac = np.zeros((len(rows), kmax))
        for i, r in enumerate(rows):
            f = np.reshape(r.phase_fractions, (-1,))
            frac[i, :f.size] = f
        out._phase_fractions = frac
    out.status_array = cat(rows, "status_array").astype(np.int8)
    out.residual_array = cat(rows, "residual_array")
    out.iterations_array = cat(rows, "iterations_array")
    out.solver_info = {"messages": [getattr(r, "solver_info", {}).get("message") for r in rows]}
    return out


def _dispatch(fluid, keys, a):
    pure = fluid.is_pure
    if keys == {"T", "P"}:
        if pure:
            return _pure_TP(fluid, a["T"], a["P"])
        return _mixture_from_flash(fluid, a["T"], a["P"])
    if keys == {"T", "v"}:
        if pure:
            b = float(fluid.params.b[0]) - fluid.volume_shift[0]
            if np.any(a["v"] <= b):
                raise InputError("v", _out(a["v"]), f"v > b = {b:.6g} m3/mol (the model's co-volume)")
            st = _pure_Tv(fluid, a["T"], a["v"])
            return _assemble_pure(fluid, a["T"], st)
        return _mixture_TV(fluid, a["T"], a["v"])
    if "P" in keys:
        (key,) = keys - {"P"}
        return (_pure_fixed_P if pure else _mixture_fixed_P)(fluid, a["P"], key, a[key])
    if "v" in keys:
        (key,) = keys - {"v"}
        if pure:
            if a["v"].size == 1:
                st = _pure_fixed_v_scalar(fluid, float(a["v"][0]), key, float(a[key][0]))
                if st is not None:
                    return st
            return _solve_fixed_v(fluid, a["v"], key, a[key])
        return _mixture_fixed_v(fluid, a["v"], key, a[key])
    if keys == {"T", "s"}:
        if pure:
            return _pure_fixed_T(fluid, a["T"], "s", a["s"])
    raise InputError("state()", sorted(keys),
                     "one of the pairs (T,P), (T,v), (T,s: pure fluids), (P,h), (P,s), (P,u), "
                     "(P,v), (u,v), (h,v), (s,v)")


def _reshape(st: State, shape):
    """Give every array of a flat state (and its phases) the batch shape."""
    if shape == (st._T.shape if hasattr(st._T, "shape") else ()):
        return st
    if isinstance(st._phase_fractions, np.ndarray) and st._phase_fractions.ndim == 2:
        st._phase_fractions = st._phase_fractions.reshape(shape + st._phase_fractions.shape[1:])
    seen = set()
    for obj in [st, st.liquid, st.vapour] + list(st.phases or []):
        if obj is None or id(obj) in seen:
            continue
        seen.add(id(obj))
        for k in ("_T", "_P", "_v", "_h", "_u", "_s", "_beta", "_phase_code", "_h_res", "_s_res", "_v_eos",
                  "status_array", "residual_array", "iterations_array"):
            val = getattr(obj, k, None)
            if isinstance(val, np.ndarray) and val.ndim == 1:
                setattr(obj, k, val.reshape(shape))
        if isinstance(obj._shift, np.ndarray) and obj._shift.ndim == 1:
            obj._shift = obj._shift.reshape(shape)
        obj._x = np.asarray(obj._x).reshape(shape + (obj.fluid.nc,))
        rows = getattr(obj._sol, "rows", None)
        if rows is not None and rows.ndim == 2:   # entries read from kernel rows: reshape the rows
            obj._sol = type(obj._sol)(rows.reshape(shape + rows.shape[1:]))
        elif obj._sol is not None:
            new = {}
            for k, val in obj._sol.items():
                val = np.asarray(val)
                if val.ndim == 2 and k == "roots":
                    new[k] = val.reshape(shape + (3,))
                elif val.ndim == 1:
                    new[k] = val.reshape(shape)
                else:
                    new[k] = val
            obj._sol = new
    return st
