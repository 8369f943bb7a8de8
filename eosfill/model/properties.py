"""Single-phase properties at (T, v) and (T, P), and the one-state 1-D solves
on them, compiled (numba); batches as compiled loops over the same one-state
functions.

Layout
------
* ``*_one`` functions: one state, plain floats in, one output row filled
  (columns named by the ``TV_*`` / ``TP_*`` constants below).  They combine
  the equations of :mod:`eosfill.model.cubic_kernels` (C1-C11) and
  :mod:`eosfill.model.idealgas_kernels` (I1-I3); nothing is re-derived here.
* ``*_serial`` loops: a compiled ``for`` over states, scratch arrays
  allocated once per call.
* ``*_parallel``: ``prange`` over chunks of states, each chunk one call of
  the serial loop (nogil; threads from ``NUMBA_NUM_THREADS``).
* Python wrappers (:func:`props_TP`, :func:`props_Tv`, :func:`ln_phi_TP`,
  ...) shape the inputs, pick serial or parallel by batch size, and return
  dicts of arrays.

Every compiled function is cached on disk (``cache=True``); importing this
module imports numba, so the layers above import it inside functions
(``import eosfill`` stays light).

Volumes: ``v_eos`` is the cubic's own molar volume; the fluid's volume
translation c = Σ x_i c_i gives v = v_eos - c and h = u + P v (u and s
unchanged).
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from eosfill.constants import P0, R
from eosfill.errors import CONVERGED, NOT_CONVERGED
from eosfill.model import cubic_kernels as ck
from eosfill.model.cubic_kernels import KERNEL
from eosfill.model.idealgas_kernels import mixture_ideal
from eosfill.model.phases import GAS, LIQUID, SUPERCRITICAL

# columns of a (T, v) row
TV_P, TV_U, TV_H, TV_S, TV_CV, TV_DPDT, TV_DPDV, TV_V, TV_B = range(9)
TV_NCOL = 9
TV_NAMES = ("P", "u", "h", "s", "cv", "dPdT", "dPdv", "v", "b")

# columns of a (T, P) row
(TP_Z, TP_V_EOS, TP_V, TP_A, TP_A_T, TP_A_TT, TP_B, TP_ADIM, TP_BDIM, TP_R0, TP_R1, TP_R2, TP_CHOICE,
 TP_H, TP_U, TP_S, TP_H_RES, TP_S_RES, TP_CV, TP_CP, TP_DPDT, TP_DPDV, TP_PI, TP_SHIFT, TP_KIND) = range(25)
TP_NCOL = 25
# TP_KIND: phase_kind's label (codes of model.state) by phase_label_one; props_TP_rows
# labels its rows (SUPERCRITICAL only when given the components' Pc)

# keys of the 1-D solves at fixed v
KEY_U, KEY_H, KEY_S = 0, 1, 2
KEY_NAMES = {"u": KEY_U, "h": KEY_H, "s": KEY_S}

_PARALLEL_MIN = 512    # below this many states a batch runs serially (thread start-up costs more)
_CHUNK = 256           # states per parallel task


# --------------------------------------------------------------------------
# one state
# --------------------------------------------------------------------------
@njit(**KERNEL)
def props_Tv_one(T, v_eos, x, m, ig, q, dq, d2q, out):
    """Single-phase properties at (T [K], v_eos [m³/mol]) into ``out`` (TV_* columns).

        P = (C1);  u = H°(T) - R T + U^R(T, v)  (C9, with L at v)
        s = S°(T, P0) - R ln(R T/((v - b) P0)) + a_T/b · L   (C8 with P eliminated)
        cv = Cp°(T) - R + T a_TT/b · L  (C11);  h = u + P v (v translated)
    """
    d1, d2, c = m[0], m[1], m[8]
    a, a_T, a_TT, b = ck.mixing_sums(T, x, m, q, dq, d2q)
    P = ck.pressure(T, v_eos, a, b, d1, d2)
    Lv = math.log((v_eos + d1 * b) / (v_eos + d2 * b)) / (d1 - d2)
    cp0, h0, s0T = mixture_ideal(T, x, ig)
    cbar = 0.0
    for i in range(x.shape[0]):
        cbar += x[i] * c[i]
    u = h0 - R * T + (T * a_T - a) / b * Lv
    v = v_eos - cbar
    out[TV_P] = P
    out[TV_U] = u
    out[TV_H] = u + P * v
    out[TV_S] = s0T - R * math.log(R * T / ((v_eos - b) * P0)) + a_T / b * Lv
    out[TV_CV] = cp0 - R + T * a_TT / b * Lv
    out[TV_DPDT] = ck.dP_dT_v(v_eos, a_T, b, d1, d2)
    out[TV_DPDV] = ck.dP_dv_T(T, v_eos, a, b, d1, d2)
    out[TV_V] = v
    out[TV_B] = b


@njit(**KERNEL)
def props_TP_one(T, P, x, m, ig, which, q, dq, d2q, out):
    """Single-phase state at (T [K], P [Pa]) with the root ``which`` into ``out`` (TP_* columns).

    Mixing (C4), the cubic (C5) and its root (:func:`~eosfill.model.cubic_kernels.choose_root`),
    departures (C7), (C8), (C11), ideal gas (I1)-(I3), derivatives of (C1),
    Cp = Cv - T (∂P/∂T)_v²/(∂P/∂v)_T and the phase-identification parameter Π.
    """
    d1, d2, c = m[0], m[1], m[8]
    a, a_T, a_TT, b = ck.mixing_sums(T, x, m, q, dq, d2q)
    RT = R * T
    A = a * P / (RT * RT)
    B = b * P / RT
    c2, c1, c0 = ck.cubic_coefficients(A, B, d1, d2)
    n, r0, r1, r2 = ck.cubic_roots(c2, c1, c0)
    Z, choice = ck.choose_root(n, r0, r1, r2, A, B, d1, d2, which)
    v_eos = Z * R * T / P
    cbar = 0.0
    for i in range(x.shape[0]):
        cbar += x[i] * c[i]
    cp0, h0, s0T = mixture_ideal(T, x, ig)
    hR = ck.residual_h(T, Z, a, a_T, b, B, d1, d2)
    sR = ck.residual_s(Z, a_T, b, B, d1, d2)
    dPdT = ck.dP_dT_v(v_eos, a_T, b, d1, d2)
    dPdv = ck.dP_dv_T(T, v_eos, a, b, d1, d2)
    cv = cp0 - R + ck.residual_cv(T, Z, a_TT, b, B, d1, d2)
    out[TP_Z] = Z
    out[TP_V_EOS] = v_eos
    out[TP_V] = v_eos - cbar
    out[TP_A] = a
    out[TP_A_T] = a_T
    out[TP_A_TT] = a_TT
    out[TP_B] = b
    out[TP_ADIM] = A
    out[TP_BDIM] = B
    out[TP_R0] = r0
    out[TP_R1] = r1
    out[TP_R2] = r2
    out[TP_CHOICE] = choice
    out[TP_H] = h0 + hR - P * cbar
    out[TP_U] = h0 + hR - P * v_eos
    out[TP_S] = s0T - R * math.log(P / P0) + sR
    out[TP_H_RES] = hR
    out[TP_S_RES] = sR
    out[TP_CV] = cv
    out[TP_CP] = cv - T * dPdT * dPdT / dPdv
    out[TP_DPDT] = dPdT
    out[TP_DPDV] = dPdv
    out[TP_PI] = ck.phase_identification_parameter(T, v_eos, a, a_T, b, d1, d2)
    out[TP_SHIFT] = cbar


@njit(**KERNEL)
def phase_label_one(T, P, x, Tc, Pc, out):
    """The label rule of :func:`eosfill.model.phase_label.phase_kind` (Kay's-rule T_pc, P_pc;
    roots count, on-largest-root, Π) on a (T, P) row ``out`` into ``out[TP_KIND]``; returns it."""
    Tpc, Ppc = 0.0, 0.0
    for i in range(x.shape[0]):
        Tpc += x[i] * Tc[i]
        Ppc += x[i] * Pc[i]
    if T >= Tpc:
        kind = SUPERCRITICAL if P >= Ppc else GAS
    else:
        B, n, Zmax = out[TP_BDIM], 0, -np.inf
        for k in range(TP_R0, TP_R2 + 1):
            r = out[k]
            if np.isfinite(r) and r > B:
                n += 1
                Zmax = max(Zmax, r)
        if n >= 2:
            Z = P * out[TP_V_EOS] / (R * T)
            on_largest = abs(Z - Zmax) <= 1e-9 * max(abs(Zmax), 1e-300) + 1e-12
            kind = GAS if on_largest else LIQUID
        else:
            kind = LIQUID if out[TP_PI] > 1.0 else GAS
    out[TP_KIND] = kind
    return kind


@njit(**KERNEL)
def ln_phi_TP_one(T, P, x, m, which, q, dq, d2q, sx, out):
    """ln φ_i (C10) at (T, P, x) with the root ``which`` into ``out``; returns Z."""
    d1, d2 = m[0], m[1]
    a, a_T, a_TT, b = ck.mixing_sums(T, x, m, q, dq, d2q)
    RT = R * T
    A = a * P / (RT * RT)
    B = b * P / RT
    c2, c1, c0 = ck.cubic_coefficients(A, B, d1, d2)
    n, r0, r1, r2 = ck.cubic_roots(c2, c1, c0)
    Z, _ = ck.choose_root(n, r0, r1, r2, A, B, d1, d2, which)
    ck.ln_phi(T, P, Z, x, m, a, b, q, sx, out)
    return Z


@njit(**KERNEL)
def T_at_v_one(key, target, v_eos, T_guess, T_lo, T_hi, x, m, ig, tol, maxiter, q, dq, d2q, out):
    """Single-phase T at fixed v_eos with prop(T, v) = target, prop = u, h or s (KEY_*).

    Newton steps with the analytic derivative at fixed v (du/dT = cv,
    dh/dT = cv + v (∂P/∂T)_v, ds/dT = cv/T), kept inside a bracket
    [T_lo, T_hi] that shrinks with every evaluation (bisection when Newton
    leaves it).  Stops when |step| ≤ tol·T.  ``out`` holds the (T, v) row of
    the last evaluation.

    Returns
    -------
    T [K], residual f [property units], status (CONVERGED or NOT_CONVERGED)
    """
    lo, hi = T_lo, T_hi
    T = min(max(T_guess, lo), hi)
    f = np.nan
    for _ in range(maxiter):
        props_Tv_one(T, v_eos, x, m, ig, q, dq, d2q, out)
        cv = out[TV_CV]
        if key == KEY_U:
            f, df = out[TV_U] - target, cv
        elif key == KEY_H:
            f, df = out[TV_H] - target, cv + out[TV_V] * out[TV_DPDT]
        else:
            f, df = out[TV_S] - target, cv / T
        if f > 0.0:
            hi = T
        else:
            lo = T
        if df > 0.0:
            Tn = T - f / df
            if abs(Tn - T) <= tol * T:
                props_Tv_one(Tn, v_eos, x, m, ig, q, dq, d2q, out)
                return Tn, f, CONVERGED
        else:
            Tn = 0.5 * (lo + hi)
        if not (lo < Tn < hi):
            Tn = 0.5 * (lo + hi)
        T = Tn
    return T, f, NOT_CONVERGED


@njit(**KERNEL)
def T_from_uv_one(u, v_eos, T_guess, x, m, ig, tol, maxiter, q, dq, d2q, out):
    """Single-phase T with u(T, v) = u: Newton on T with (∂u/∂T)_v = cv, warm-started.

    Each step is clipped to ±T/2; stops when |ΔT| ≤ tol·T.  Gives up (status
    NOT_CONVERGED) where cv ≤ 0 or u is not finite (e.g. where the cubic's
    single-phase branch is mechanically unstable).  ``out`` holds the (T, v)
    row at the returned T.

    Returns
    -------
    T [K], status
    """
    T = T_guess
    for _ in range(maxiter):
        props_Tv_one(T, v_eos, x, m, ig, q, dq, d2q, out)
        cv = out[TV_CV]
        f = out[TV_U] - u
        if not (cv > 0.0 and np.isfinite(f)):
            break
        dT = f / cv
        dT = max(min(dT, 0.5 * T), -0.5 * T)
        T -= dT
        if abs(dT) <= tol * T:
            props_Tv_one(T, v_eos, x, m, ig, q, dq, d2q, out)
            return T, CONVERGED
    return T, NOT_CONVERGED


@njit(**KERNEL)
def v_from_TP_one(T, P, v_guess, x, m, ig, tol, maxiter, q, dq, d2q, out):
    """Single-phase v_eos with P(T, v) = P on the branch of v_guess: Newton in ln v.

    Steps in ln v clipped to ±0.5; stops when |Δ ln v| < tol.  ``out`` holds
    the (T, v) row at the returned volume.

    Returns
    -------
    v_eos [m³/mol], status
    """
    v = v_guess
    for _ in range(maxiter):
        props_Tv_one(T, v, x, m, ig, q, dq, d2q, out)
        dlnv = (out[TV_P] - P) / (out[TV_DPDV] * v)
        dlnv = max(min(dlnv, 0.5), -0.5)
        v *= math.exp(-dlnv)
        if abs(dlnv) < tol:
            props_Tv_one(T, v, x, m, ig, q, dq, d2q, out)
            return v, CONVERGED
    return v, NOT_CONVERGED


# --------------------------------------------------------------------------
# batches: compiled loops over the one-state functions
# --------------------------------------------------------------------------
@njit(**KERNEL)
def props_Tv_serial(T, v_eos, x, m, ig, out):
    """(T, v) rows for states k: T[k], v_eos[k], x[k] (or x[0] when x has one row)."""
    nc = x.shape[1]
    q, dq, d2q = np.empty(nc), np.empty(nc), np.empty(nc)
    one_x = x.shape[0] == 1
    for k in range(T.shape[0]):
        props_Tv_one(T[k], v_eos[k], x[0] if one_x else x[k], m, ig, q, dq, d2q, out[k])


@njit(**KERNEL)
def props_TP_serial(T, P, x, which, m, ig, out):
    """(T, P) rows for states k (x and which broadcast from one row / one value)."""
    nc = x.shape[1]
    q, dq, d2q = np.empty(nc), np.empty(nc), np.empty(nc)
    one_x = x.shape[0] == 1
    one_w = which.shape[0] == 1
    for k in range(T.shape[0]):
        props_TP_one(T[k], P[k], x[0] if one_x else x[k], m, ig, which[0] if one_w else which[k],
                     q, dq, d2q, out[k])


@njit(**KERNEL)
def phase_label_serial(T, P, x, Tc, Pc, out):
    """:func:`phase_label_one` on (T, P) rows out[k] (x broadcast from one row)."""
    one_x = x.shape[0] == 1
    for k in range(T.shape[0]):
        phase_label_one(T[k], P[k], x[0] if one_x else x[k], Tc, Pc, out[k])


@njit(**KERNEL)
def ln_phi_TP_serial(T, P, x, which, m, out, Z):
    """ln φ rows (out[k], shape (nc,)) and roots Z[k] for states k."""
    nc = x.shape[1]
    q, dq, d2q, sx = np.empty(nc), np.empty(nc), np.empty(nc), np.empty(nc)
    one_x = x.shape[0] == 1
    one_w = which.shape[0] == 1
    for k in range(T.shape[0]):
        Z[k] = ln_phi_TP_one(T[k], P[k], x[0] if one_x else x[k], m, which[0] if one_w else which[k],
                             q, dq, d2q, sx, out[k])


@njit(**KERNEL)
def ln_phi_Z_serial(T, P, Z, x, m, out):
    """ln φ rows (C10) at given roots Z[k] (a State's own root)."""
    nc = x.shape[1]
    q, dq, d2q, sx = np.empty(nc), np.empty(nc), np.empty(nc), np.empty(nc)
    one_x = x.shape[0] == 1
    for k in range(T.shape[0]):
        xk = x[0] if one_x else x[k]
        a, _, _, b = ck.mixing_sums(T[k], xk, m, q, dq, d2q)
        ck.ln_phi(T[k], P[k], Z[k], xk, m, a, b, q, sx, out[k])


@njit(parallel=True, nogil=True, **KERNEL)
def props_Tv_parallel(T, v_eos, x, m, ig, out):
    """:func:`props_Tv_serial` over chunks of states in parallel."""
    n = T.shape[0]
    one_x = x.shape[0] == 1
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        props_Tv_serial(T[lo:hi], v_eos[lo:hi], x if one_x else x[lo:hi], m, ig, out[lo:hi])


@njit(parallel=True, nogil=True, **KERNEL)
def props_TP_parallel(T, P, x, which, m, ig, out):
    """:func:`props_TP_serial` over chunks of states in parallel."""
    n = T.shape[0]
    one_x = x.shape[0] == 1
    one_w = which.shape[0] == 1
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        props_TP_serial(T[lo:hi], P[lo:hi], x if one_x else x[lo:hi], which if one_w else which[lo:hi],
                        m, ig, out[lo:hi])


@njit(parallel=True, nogil=True, **KERNEL)
def ln_phi_TP_parallel(T, P, x, which, m, out, Z):
    """:func:`ln_phi_TP_serial` over chunks of states in parallel."""
    n = T.shape[0]
    one_x = x.shape[0] == 1
    one_w = which.shape[0] == 1
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        ln_phi_TP_serial(T[lo:hi], P[lo:hi], x if one_x else x[lo:hi], which if one_w else which[lo:hi],
                         m, out[lo:hi], Z[lo:hi])


@njit(parallel=True, nogil=True, **KERNEL)
def ln_phi_Z_parallel(T, P, Z, x, m, out):
    """:func:`ln_phi_Z_serial` over chunks of states in parallel."""
    n = T.shape[0]
    one_x = x.shape[0] == 1
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        ln_phi_Z_serial(T[lo:hi], P[lo:hi], Z[lo:hi], x if one_x else x[lo:hi], m, out[lo:hi])


# --------------------------------------------------------------------------
# one-state entries (scratch allocated inside; for Python callers of one state)
# --------------------------------------------------------------------------
@njit(**KERNEL)
def props_Tv_entry(T, v_eos, x, m, ig):
    """The (T, v) row of one state (a new array of TV_NCOL values)."""
    nc = x.shape[0]
    out = np.empty(TV_NCOL)
    props_Tv_one(T, v_eos, x, m, ig, np.empty(nc), np.empty(nc), np.empty(nc), out)
    return out


@njit(**KERNEL)
def T_at_v_entry(key, target, v_eos, T_guess, T_lo, T_hi, x, m, ig, tol, maxiter):
    """:func:`T_at_v_one` for one state: (T, residual, status, (T, v) row)."""
    nc = x.shape[0]
    out = np.empty(TV_NCOL)
    T, f, status = T_at_v_one(key, target, v_eos, T_guess, T_lo, T_hi, x, m, ig, tol, maxiter,
                              np.empty(nc), np.empty(nc), np.empty(nc), out)
    return T, f, status, out


@njit(**KERNEL)
def T_from_uv_entry(u, v_eos, T_guess, x, m, ig, tol, maxiter):
    """:func:`T_from_uv_one` for one state: (T, status, (T, v) row)."""
    nc = x.shape[0]
    out = np.empty(TV_NCOL)
    T, status = T_from_uv_one(u, v_eos, T_guess, x, m, ig, tol, maxiter,
                              np.empty(nc), np.empty(nc), np.empty(nc), out)
    return T, status, out


@njit(**KERNEL)
def v_from_TP_entry(T, P, v_guess, x, m, ig, tol, maxiter):
    """:func:`v_from_TP_one` for one state: (v_eos, status, (T, v) row)."""
    nc = x.shape[0]
    out = np.empty(TV_NCOL)
    v, status = v_from_TP_one(T, P, v_guess, x, m, ig, tol, maxiter,
                              np.empty(nc), np.empty(nc), np.empty(nc), out)
    return v, status, out


# --------------------------------------------------------------------------
# Python wrappers: shapes in, dicts of arrays out
# --------------------------------------------------------------------------
WHICH_CODES = {"stable": ck.STABLE, "liquid": ck.LIQUID_ROOT, "vapour": ck.VAPOUR_ROOT}


def _f64(arr):
    """A fresh, writable, C-ordered float64 copy (one compiled signature for all callers)."""
    return np.array(arr, dtype=np.float64, order="C")


def _batch(T, second, x, nc, which=None):
    """Broadcast (T, second, x[, which]) to one shape; flat arrays for the loops."""
    T = np.asarray(T, dtype=float)
    second = np.asarray(second, dtype=float)
    x = np.asarray(x, dtype=float)
    w = None if which is None or isinstance(which, str) else np.asarray(which)
    if (T.ndim == 1 and second.shape == T.shape and (x.ndim == 1 or x.shape[:-1] == T.shape)
            and (w is None or w.shape == T.shape)):   # flat arrays of one length already: no broadcasting
        shape = T.shape
        Tf, sf = _f64(T), _f64(second)
        xf = _f64(x.reshape(1, nc) if x.ndim == 1 else x)
    else:
        shapes = [T.shape, second.shape] + ([x.shape[:-1]] if x.ndim > 1 else []) + ([w.shape] if w is not None else [])
        shape = np.broadcast_shapes(*shapes)
        Tf = _f64(np.broadcast_to(T, shape).reshape(-1))
        sf = _f64(np.broadcast_to(second, shape).reshape(-1))
        xf = _f64(x.reshape(1, nc) if x.ndim == 1 else np.broadcast_to(x, shape + (nc,)).reshape(-1, nc))
    if which is None:
        wf = None
    elif w is None:
        wf = np.array([WHICH_CODES[which]], dtype=np.int64)
    else:
        wf = np.array(np.broadcast_to(w, shape).reshape(-1), dtype=np.int64)
    return shape, Tf, sf, xf, wf


def props_Tv_rows(m, ig, T, v_eos, x):
    """(T, v) rows, shape (..., TV_NCOL), for T, v_eos broadcast with x (..., nc) or (nc,)."""
    nc = m[2].shape[0]
    shape, Tf, vf, xf, _ = _batch(T, v_eos, x, nc)
    out = np.empty((Tf.shape[0], TV_NCOL))
    (props_Tv_parallel if Tf.shape[0] >= _PARALLEL_MIN else props_Tv_serial)(Tf, vf, xf, m, ig, out)
    return out.reshape(shape + (TV_NCOL,))


def props_TP_rows(m, ig, T, P, x, which="stable", Pc=None):
    """(T, P) rows, shape (..., TP_NCOL); ``which`` "stable", "liquid", "vapour" or codes 0/1/2.

    ``Pc`` (nc,), the components' critical pressures [Pa], makes the TP_KIND column the
    phase label; without it the label never says SUPERCRITICAL (P_pc unknown)."""
    nc = m[2].shape[0]
    shape, Tf, Pf, xf, wf = _batch(T, P, x, nc, which)
    out = np.empty((Tf.shape[0], TP_NCOL))
    (props_TP_parallel if Tf.shape[0] >= _PARALLEL_MIN else props_TP_serial)(Tf, Pf, xf, wf, m, ig, out)
    phase_label_serial(Tf, Pf, xf, m[2], np.full(nc, np.nan) if Pc is None else Pc, out)
    return out.reshape(shape + (TP_NCOL,))


def ln_phi_TP(m, T, P, x, which="stable"):
    """ln φ_i (C10), shape (..., nc), and the root Z (...) taken at (T, P, x)."""
    nc = m[2].shape[0]
    shape, Tf, Pf, xf, wf = _batch(T, P, x, nc, which)
    out = np.empty((Tf.shape[0], nc))
    Z = np.empty(Tf.shape[0])
    (ln_phi_TP_parallel if Tf.shape[0] >= _PARALLEL_MIN else ln_phi_TP_serial)(Tf, Pf, xf, wf, m, out, Z)
    return out.reshape(shape + (nc,)), Z.reshape(shape)


def ln_phi_at_Z(m, T, P, Z, x):
    """ln φ_i (C10), shape (..., nc), at given roots Z (a state's own)."""
    nc = m[2].shape[0]
    shape, Tf, Pf, xf, _ = _batch(T, P, x, nc)
    Zf = _f64(np.broadcast_to(np.asarray(Z, dtype=float), shape).reshape(-1))
    out = np.empty((Tf.shape[0], nc))
    (ln_phi_Z_parallel if Tf.shape[0] >= _PARALLEL_MIN else ln_phi_Z_serial)(Tf, Pf, Zf, xf, m, out)
    return out.reshape(shape + (nc,))
