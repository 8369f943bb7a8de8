"""One state at a time, compiled (numba): the labelled (T, P) row and ln φ of one state
for Python callers, and the single-phase 1-D searches in T at fixed P or fixed v
(one state per call, batches as serial / prange loops over the same function).

The searches are what the state solvers' single-phase step needs (the root of
prop(T) = target with the lowest-Gibbs root at fixed P, or the cubic at fixed v):
Newton steps with the analytic derivative, kept inside a bracket that shrinks
with every evaluation (bisection when Newton leaves it or stalls).  At fixed P

    dh/dT = Cp,  ds/dT = Cp/T,  du/dT = Cp - P (∂v/∂T)_P,  d ln v/dT = (∂v/∂T)_P / v,
    (∂v/∂T)_P = -(∂P/∂T)_v / (∂P/∂v)_T;

each is positive on a stable branch, and where the lowest-Gibbs root jumps from one
branch to the other the property jumps upward, so a bracket with f(lo) ≤ 0 ≤ f(hi)
always closes (on the jump itself when the target lies inside it: the phase-split
test then decides).  At fixed v, :func:`eosfill.model.properties.T_at_v_one`.

Imports numba: the layers above import this module inside functions.
"""
from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np
from numba import njit, prange

from eosfill.constants import R
from eosfill.errors import CONVERGED, NOT_CONVERGED
from eosfill.model import cubic_kernels as ck
from eosfill.model import properties as _kp
from eosfill.model.cubic_kernels import KERNEL
from eosfill.model.properties import (_CHUNK, _PARALLEL_MIN, KEY_H, KEY_S, KEY_U, TP_CP, TP_DPDT, TP_DPDV, TP_H,
                                      TP_NCOL, TP_S, TP_U, TP_V, TP_Z, TV_H, TV_NCOL, TV_P, TV_S, TV_U, T_at_v_one,
                                      phase_label_one, props_TP_one, props_Tv_one)
# TP_NCOL, TV_NCOL (the row widths) and TV_P: for this module's callers

# keys of the search at fixed P (u, h, s of properties.KEY_*, and v)
KEY_V = 3
KEYS_P = {"u": KEY_U, "h": KEY_H, "s": KEY_S, "v": KEY_V}
# a search's outcome besides CONVERGED / NOT_CONVERGED: the target lies outside
# [f(T_lo), f(T_hi)] (NO_SOLUTION) -- below at T_lo: BELOW, above at T_hi: ABOVE
BELOW, ABOVE = -1, -2
PARALLEL_MIN = _PARALLEL_MIN   # batches this large run in parallel
_STABLE = ck.STABLE


# --------------------------------------------------------------------------
# one state for a Python caller
# --------------------------------------------------------------------------
@njit(**KERNEL)
def props_TP_state(T, P, x, m, ig, which, Pc, out):
    """One labelled (T, P) row into ``out[:TP_NCOL]`` and ln φ_i (C10, with the volume
    translation's - c_i P/(R T)) into ``out[TP_NCOL:]`` (nc values); returns Z (NaN: no root)."""
    nc = x.shape[0]
    q = np.empty(nc)
    props_TP_one(T, P, x, m, ig, which, q, np.empty(nc), np.empty(nc), out)
    phase_label_one(T, P, x, m[2], Pc, out)
    Z = out[TP_Z]
    if np.isfinite(Z):
        lnphi = out[TP_NCOL:]
        ck.ln_phi(T, P, Z, x, m, out[_kp.TP_A], out[_kp.TP_B], q, np.empty(nc), lnphi)
        c = m[8]
        for i in range(nc):
            lnphi[i] -= c[i] * (P / (R * T))
    return Z


# --------------------------------------------------------------------------
# T at fixed P
# --------------------------------------------------------------------------
@njit(**KERNEL)
def _residual_P(key, target, scale, T, P, x, m, ig, q, dq, d2q, out):
    """(f, df/dT) of the fixed-P search at T; ``out`` gets the (T, P) row (stable root)."""
    props_TP_one(T, P, x, m, ig, _STABLE, q, dq, d2q, out)
    cp = out[TP_CP]
    dvdT = -out[TP_DPDT] / out[TP_DPDV]
    if key == KEY_H:
        return (out[TP_H] - target) / scale, cp / scale
    if key == KEY_S:
        return (out[TP_S] - target) / scale, cp / (T * scale)
    if key == KEY_U:
        return (out[TP_U] - target) / scale, (cp - P * dvdT) / scale
    v = out[TP_V]
    return math.log(v / target), dvdT / v


@njit(**KERNEL)
def T_at_P_one(key, target, P, T_lo, T_hi, T_guess, x, m, ig, scale, xtol, ftol, maxiter, q, dq, d2q, out):
    """Single-phase T at fixed P with prop(T, P) = target on the lowest-Gibbs root.

    f = (prop - target)/scale (ln(v/target) for v), increasing in T.  Stops when
    |f| ≤ ftol or the bracket is no wider than xtol [K].  ``out`` holds the
    (T, P) row of the returned T.

    Returns
    -------
    T [K], f, status: CONVERGED, NOT_CONVERGED, or BELOW / ABOVE when f(T_lo) > 0
    (or not finite) / f(T_hi) < 0.
    """
    lo, hi = T_lo, T_hi
    fhi, _ = _residual_P(key, target, scale, hi, P, x, m, ig, q, dq, d2q, out)
    if fhi < 0.0:
        return hi, fhi, ABOVE
    flo, _ = _residual_P(key, target, scale, lo, P, x, m, ig, q, dq, d2q, out)
    if not flo <= 0.0:
        return lo, flo, BELOW
    if -flo <= ftol:
        return lo, flo, CONVERGED
    T = min(max(T_guess, lo), hi)
    width = hi - lo
    stall = 0
    f = flo
    for _ in range(maxiter):
        f, df = _residual_P(key, target, scale, T, P, x, m, ig, q, dq, d2q, out)
        if abs(f) <= ftol:
            return T, f, CONVERGED
        if f > 0.0:
            hi = T
        else:
            lo = T
        if hi - lo <= xtol:
            return T, f, CONVERGED
        # bisect where Newton leaves the bracket, or has not halved it in three steps
        if hi - lo <= 0.5 * width:
            width = hi - lo
            stall = 0
        else:
            stall += 1
        Tn = T - f / df if df > 0.0 else 0.5 * (lo + hi)
        if stall >= 3 or not (lo < Tn < hi):
            Tn = 0.5 * (lo + hi)
            stall = 0
        T = Tn
    return T, f, NOT_CONVERGED


@njit(**KERNEL)
def T_at_P_serial(key, target, P, T_lo, T_hi, T_guess, x, m, ig, scale, xtol, ftol, maxiter, T, f, status, rows):
    """:func:`T_at_P_one` for states k (target[k], P[k], T_lo[k], T_hi[k]; composition x)."""
    nc = x.shape[0]
    q, dq, d2q = np.empty(nc), np.empty(nc), np.empty(nc)
    for k in range(P.shape[0]):
        T[k], f[k], status[k] = T_at_P_one(key, target[k], P[k], T_lo[k], T_hi[k], T_guess, x, m, ig, scale,
                                           xtol, ftol, maxiter, q, dq, d2q, rows[k])


@njit(parallel=True, nogil=True, **KERNEL)
def T_at_P_parallel(key, target, P, T_lo, T_hi, T_guess, x, m, ig, scale, xtol, ftol, maxiter, T, f, status, rows):
    """:func:`T_at_P_serial` over chunks of states in parallel."""
    n = P.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        T_at_P_serial(key, target[lo:hi], P[lo:hi], T_lo[lo:hi], T_hi[lo:hi], T_guess, x, m, ig, scale, xtol, ftol,
                      maxiter, T[lo:hi], f[lo:hi], status[lo:hi], rows[lo:hi])


# --------------------------------------------------------------------------
# T at fixed v
# --------------------------------------------------------------------------
@njit(**KERNEL)
def T_at_v_checked_one(key, target, v_eos, T_lo, T_hi, T_guess, x, m, ig, tol, maxiter, q, dq, d2q, out):
    """:func:`~eosfill.model.properties.T_at_v_one` after checking that the target is
    reached below T_hi (else status ABOVE, with f at T_hi)."""
    props_Tv_one(T_hi, v_eos, x, m, ig, q, dq, d2q, out)
    col = TV_U if key == KEY_U else (TV_H if key == KEY_H else TV_S)
    fhi = out[col] - target
    if fhi < 0.0:
        return T_hi, fhi, ABOVE
    return T_at_v_one(key, target, v_eos, T_guess, T_lo, T_hi, x, m, ig, tol, maxiter, q, dq, d2q, out)


@njit(**KERNEL)
def T_at_v_serial(key, target, v_eos, T_lo, T_hi, T_guess, x, m, ig, tol, maxiter, T, f, status, rows):
    """:func:`T_at_v_checked_one` for states k (target[k], v_eos[k]; composition x)."""
    nc = x.shape[0]
    q, dq, d2q = np.empty(nc), np.empty(nc), np.empty(nc)
    for k in range(v_eos.shape[0]):
        T[k], f[k], status[k] = T_at_v_checked_one(key, target[k], v_eos[k], T_lo, T_hi, T_guess, x, m, ig, tol,
                                                   maxiter, q, dq, d2q, rows[k])


@njit(parallel=True, nogil=True, **KERNEL)
def T_at_v_parallel(key, target, v_eos, T_lo, T_hi, T_guess, x, m, ig, tol, maxiter, T, f, status, rows):
    """:func:`T_at_v_serial` over chunks of states in parallel."""
    n = v_eos.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        T_at_v_serial(key, target[lo:hi], v_eos[lo:hi], T_lo, T_hi, T_guess, x, m, ig, tol, maxiter,
                      T[lo:hi], f[lo:hi], status[lo:hi], rows[lo:hi])



# --------------------------------------------------------------------------
# the solution entries of a State, read from its (T, P) rows when asked for
# --------------------------------------------------------------------------
_SOL_COLUMNS = dict(Z=_kp.TP_Z, v=_kp.TP_V_EOS, a=_kp.TP_A, a_T=_kp.TP_A_T, a_TT=_kp.TP_A_TT, b=_kp.TP_B,
                    A=_kp.TP_ADIM, B=_kp.TP_BDIM, dPdT=_kp.TP_DPDT, dPdv=_kp.TP_DPDV, cv=_kp.TP_CV, cp=_kp.TP_CP,
                    Pi=_kp.TP_PI)


class RowSol(Mapping):
    """The ``sol`` entries of a single-phase State (Z, v (the cubic's own), a, a_T,
    a_TT, b, A, B, roots, choice, dPdT, dPdv, cv, cp, Pi) as views of its (T, P)
    rows (..., TP_NCOL), each made on first use."""

    __slots__ = ("_rows", "_made")
    _KEYS = tuple(_SOL_COLUMNS) + ("roots", "choice")

    def __init__(self, rows):
        self._rows = rows
        self._made = {}

    def __getitem__(self, key):
        val = self._made.get(key)
        if val is None:
            rows = self._rows
            if key in _SOL_COLUMNS:
                val = rows[..., _SOL_COLUMNS[key]]
            elif key == "roots":
                val = rows[..., _kp.TP_R0:_kp.TP_R2 + 1]
            elif key == "choice":
                val = rows[..., _kp.TP_CHOICE].astype(np.int8)
            else:
                raise KeyError(key)
            self._made[key] = val
        return val

    @property
    def rows(self):
        """The (T, P) rows the entries are read from."""
        return self._rows

    def __contains__(self, key):
        return key in _SOL_COLUMNS or key == "roots" or key == "choice"

    def __iter__(self):
        return iter(self._KEYS)

    def __len__(self):
        return len(self._KEYS)
