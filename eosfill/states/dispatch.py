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
:class:`InputError`.

Where things are: this module holds the dispatch (:func:`solve_state`),
the explicit single-phase properties (:func:`props_Tv`, :func:`props_TP`),
the vectorised bracketing search (:func:`illinois`) and the assembly of a
State from its phases are in :mod:`eosfill.states.common`; :mod:`eosfill.states.pure` holds the pure-fluid
solvers, :mod:`eosfill.states.mixture` the mixture solvers.
"""
from __future__ import annotations

import numpy as np

from eosfill.equilibrium import solvers as equilibrium
from eosfill.errors import InputError
from eosfill.model.mixture import Mixture, State, _as_float_array, _out
from eosfill.states.mixture import _mixture_fixed_P, _mixture_fixed_v, _mixture_from_flash, _mixture_TV
from eosfill.states.pure import (_assemble_pure, _pure_fixed_P, _pure_fixed_T, _pure_fixed_v_scalar, _pure_Tv,
                                 _pure_TP, _solve_fixed_v)

_KEYS = ("T", "P", "v", "h", "u", "s")


# --------------------------------------------------------------------------
# dispatch
# --------------------------------------------------------------------------
def solve_state(fluid: Mixture, **spec):
    """Solve for the state at one pair of (T, P, v, h, u, s)."""
    given = {k: v for k, v in spec.items() if v is not None}
    unknown = set(given) - set(_KEYS)
    if unknown:
        raise InputError("state()", sorted(unknown), "two of T, P, v, h, u, s")
    if len(given) != 2:
        raise InputError("state()", sorted(given), "exactly two of T, P, v, h, u, s")
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
    st = _dispatch(fluid, keys, arrs)
    return _reshape(st, shape)


def _dispatch(fluid, keys, a):
    pure = fluid.is_pure
    if keys == {"T", "P"}:
        if pure:
            return _pure_TP(fluid, a["T"], a["P"])
        fl = equilibrium.flash_TP(a["T"], a["P"], fluid.mole_fractions, fluid.params)
        return _mixture_from_flash(fluid, a["T"], a["P"], fl)
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
    for obj in (st, st.liquid, st.vapour):
        if obj is None:
            continue
        for k in ("_T", "_P", "_v", "_h", "_u", "_s", "_beta", "_phase_code", "_h_res", "_s_res", "_v_eos"):
            val = getattr(obj, k, None)
            if isinstance(val, np.ndarray) and val.ndim == 1:
                setattr(obj, k, val.reshape(shape))
        if isinstance(obj._shift, np.ndarray) and obj._shift.ndim == 1:
            obj._shift = obj._shift.reshape(shape)
        obj._x = np.asarray(obj._x).reshape(shape + (obj.fluid.nc,))
        if obj._sol is not None:
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
