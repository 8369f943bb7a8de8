"""Two-phase state searches of a mixture on the compiled flash, one state per
call (numba); batches as prange loops over them.

* Overall properties at (T, P) (:func:`overall_one`): the two-phase flash
  (warm-started from the K-values of the previous iterate where there are
  any, :func:`eosfill.equilibrium.flash_kernels.flash_warm_one`; else the
  full flash with its stability test), then the phases' rows (C5)-(C11),
  (I1)-(I3) and the β-weighted sums u, h, s, v = β ψ^V + (1 - β) ψ^L.
* Fixed P (:func:`fixed_P_one`): T with ψ(T, P) = target, ψ = u, h, s or v.
  ψ rises with T at fixed P (Cp > 0, also through the phase split), so the
  search brackets by steps from the start T (2 % of T, growing ×1.6) and
  narrows the bracket by the Illinois variant of regula falsi (Dowell &
  Jarratt, BIT 11 (1971) 168-174).
* Fixed v (:func:`fixed_v_one`): (T, P) with ψ(T, P) = target and
  v(T, P) = v: at the start T, ln P with v(T, P) = v (v falls with P at
  fixed T: bracket and Illinois as above); then damped Newton on (T, ln P)
  with residuals ((ψ - target)/scale, ln(v(T, P)/v)) and a forward-difference
  Jacobian, each step scaled down (direction kept) to at most 10 % of T and
  1 in ln P, and halved while the residual norm does not fall.

Only two phases are considered; the callers verify every result with the
multiphase flash and fall back to their Python searches where it misses
its specification (a third phase, a failed flash, no bracket).  Status:
CONVERGED or NOT_CONVERGED (codes of :mod:`eosfill.errors`).
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from eosfill.equilibrium.flash_kernels import flash_TP_one, flash_warm_one
from eosfill.errors import CONVERGED, NOT_CONVERGED
from eosfill.model.cubic_kernels import KERNEL, STABLE
from eosfill.model.properties import TP_H, TP_NCOL, TP_S, TP_U, TP_V, props_TP_one

KEY_U, KEY_H, KEY_S, KEY_V = 0, 1, 2, 3
KEY_CODES = {"u": KEY_U, "h": KEY_H, "s": KEY_S, "v": KEY_V}
_COLS = (TP_U, TP_H, TP_S, TP_V)


@njit(**KERNEL)
def _scratch(nc):
    """Scratch of :func:`overall_one`: (work (9, nc), hist (2, nc), lnW (2, nc),
    x, y, lnK (nc,), row (TP_NCOL,), state [warm flag])."""
    return (np.empty((9, nc)), np.zeros((2, nc)), np.empty((2, nc)), np.empty(nc), np.empty(nc), np.zeros(nc),
            np.empty(TP_NCOL), np.zeros(1, dtype=np.bool_))


@njit(**KERNEL)
def overall_one(T, P, z, m, ig, Pc, omega, sc, out):
    """Overall u, h, s, v at (T, P) into out[0:4] (module docstring), β into
    out[4]; the scratch ``sc`` carries the K-values from call to call.
    Returns False where the flash did not converge."""
    work, hist, lnW, x, y, lnK, row, warm = sc
    ok = False
    beta = 1.0
    if warm[0]:
        ok, beta, _, _ = flash_warm_one(T, P, z, m, lnK, 1e-11, 400, x, y, work, hist)
    two = ok
    if not ok:
        beta, two, st, _, _ = flash_TP_one(T, P, z, m, Pc, omega, 1e-11, 400, True, x, y, lnK, work, hist, lnW)
        if st != CONVERGED:
            warm[0] = False
            return False
    warm[0] = two
    q, dq, d2q = work[0], work[1], work[2]
    if two:
        props_TP_one(T, P, y, m, ig, STABLE, q, dq, d2q, row)
        for j in range(4):
            out[j] = beta * row[_COLS[j]]
        props_TP_one(T, P, x, m, ig, STABLE, q, dq, d2q, row)
        for j in range(4):
            out[j] += (1.0 - beta) * row[_COLS[j]]
        out[4] = beta
    else:
        props_TP_one(T, P, z, m, ig, STABLE, q, dq, d2q, row)
        for j in range(4):
            out[j] = row[_COLS[j]]
        out[4] = np.nan
    return np.isfinite(out[0] + out[1] + out[2] + out[3])


@njit(**KERNEL)
def _g(key, target, scale, vals):
    """The search residual: (ψ - target)/scale, or ln(v/target) for v."""
    if key == KEY_V:
        return math.log(vals[3] / target)
    return (vals[key] - target) / scale


@njit(**KERNEL)
def fixed_P_one(P, key, target, scale, T0, Tmin, Tmax, z, m, ig, Pc, omega, xtol, ftol, maxiter):
    """T with ψ(T, P) = target (module docstring), bracketed by steps out from
    T0 inside [Tmin, Tmax].  Returns (T, status, evaluations).  (The single-phase
    search is :func:`eosfill.model.one_state.T_at_P_one`.)"""
    sc = _scratch(z.shape[0])
    vals = np.empty(5)
    nev = 1
    a = min(max(T0, Tmin), Tmax)
    if not overall_one(a, P, z, m, ig, Pc, omega, sc, vals):
        return a, NOT_CONVERGED, nev
    fa = _g(key, target, scale, vals)
    if fa == 0.0:
        return a, CONVERGED, nev
    step = 0.02 * a
    b, fb = a, fa
    found = False
    for _ in range(60):
        b = max(min(a - step if fa > 0.0 else a + step, Tmax), Tmin)
        nev += 1
        if not overall_one(b, P, z, m, ig, Pc, omega, sc, vals):
            return b, NOT_CONVERGED, nev
        fb = _g(key, target, scale, vals)
        if fb == 0.0:
            return b, CONVERGED, nev
        if (fb > 0.0) != (fa > 0.0):
            found = True
            break
        if b <= Tmin or b >= Tmax:
            break
        a, fa = b, fb
        step *= 1.6
    if not found:
        return b, NOT_CONVERGED, nev
    for _ in range(maxiter):
        c = b - fb * (b - a) / (fb - fa)
        nev += 1
        if not overall_one(c, P, z, m, ig, Pc, omega, sc, vals):
            return c, NOT_CONVERGED, nev
        fc = _g(key, target, scale, vals)
        if abs(fc) <= ftol:
            return c, CONVERGED, nev
        if (fc > 0.0) != (fb > 0.0):
            a, fa = b, fb
        else:
            fa *= 0.5
        b, fb = c, fc
        if abs(b - a) <= xtol * b:
            return c, CONVERGED, nev
    return b, NOT_CONVERGED, nev


@njit(**KERNEL)
def _lnP_at_Tv(T, lnP0, v, z, m, ig, Pc, omega, sc, vals):
    """ln P with v(T, P) = v at fixed T: bracket from lnP0 by steps of 0.5
    (then 1), Illinois on ln(v(T, P)/v) to 1e-10 (a start for Newton).
    Returns (ln P, ok)."""
    a = lnP0
    if not overall_one(T, math.exp(a), z, m, ig, Pc, omega, sc, vals):
        return a, False
    fa = math.log(vals[3] / v)
    step = 0.5
    b, fb = a, fa
    found = False
    for _ in range(40):
        b = a + step if fa > 0.0 else a - step
        if not overall_one(T, math.exp(b), z, m, ig, Pc, omega, sc, vals):
            return b, False
        fb = math.log(vals[3] / v)
        if (fb > 0.0) != (fa > 0.0) or fb == 0.0:
            found = True
            break
        a, fa = b, fb
        step = 1.0
    if not found:
        return b, False
    for _ in range(200):
        if fb == 0.0 or abs(b - a) <= 1e-12:
            return b, True
        c = b - fb * (b - a) / (fb - fa)
        if not overall_one(T, math.exp(c), z, m, ig, Pc, omega, sc, vals):
            return c, False
        fc = math.log(vals[3] / v)
        if abs(fc) <= 1e-10:   # a start for Newton: no tighter than the flash's own noise
            return c, True
        if (fc > 0.0) != (fb > 0.0):
            a, fa = b, fb
        else:
            fa *= 0.5
        b, fb = c, fc
    return b, False


@njit(**KERNEL)
def _resid_v(T, lnP, key, target, scale, v, z, m, ig, Pc, omega, sc, vals, r):
    """r = ((ψ - target)/scale, ln(v(T, P)/v)); False where the flash failed."""
    if not overall_one(T, math.exp(lnP), z, m, ig, Pc, omega, sc, vals):
        return False
    r[0] = (vals[key] - target) / scale
    r[1] = math.log(vals[3] / v)
    return np.isfinite(r[0]) and np.isfinite(r[1])


@njit(**KERNEL)
def fixed_v_one(v, key, target, scale, T0, P0, z, m, ig, Pc, omega, tol, maxiter):
    """(T, P) with ψ(T, P) = target and v(T, P) = v (module docstring).
    Returns (T, P, status)."""
    sc = _scratch(z.shape[0])
    vals = np.empty(5)
    T = T0
    lnP, ok = _lnP_at_Tv(T, math.log(P0), v, z, m, ig, Pc, omega, sc, vals)
    if not ok:
        return T, math.exp(lnP), NOT_CONVERGED
    r = np.empty(2)
    rT = np.empty(2)
    rP = np.empty(2)
    rn = np.empty(2)
    if not _resid_v(T, lnP, key, target, scale, v, z, m, ig, Pc, omega, sc, vals, r):
        return T, math.exp(lnP), NOT_CONVERGED
    for _ in range(maxiter):
        if max(abs(r[0]), abs(r[1])) < tol:
            return T, math.exp(lnP), CONVERGED
        hT = 1e-7 * T
        hP = 1e-7
        if not (_resid_v(T + hT, lnP, key, target, scale, v, z, m, ig, Pc, omega, sc, vals, rT)
                and _resid_v(T, lnP + hP, key, target, scale, v, z, m, ig, Pc, omega, sc, vals, rP)):
            break
        J00, J10 = (rT[0] - r[0]) / hT, (rT[1] - r[1]) / hT
        J01, J11 = (rP[0] - r[0]) / hP, (rP[1] - r[1]) / hP
        det = J00 * J11 - J01 * J10
        if det == 0.0 or not np.isfinite(det):
            break
        dT = (-r[0] * J11 + r[1] * J01) / det
        dlnP = (-r[1] * J00 + r[0] * J10) / det
        f = min(1.0, 0.1 * T / max(abs(dT), 1e-300), 1.0 / max(abs(dlnP), 1e-300))
        dT *= f
        dlnP *= f
        norm = math.hypot(r[0], r[1])
        lam = 1.0
        accepted = False
        for _ in range(12):
            Tn, lnPn = T + lam * dT, lnP + lam * dlnP
            if Tn > 0.0 and _resid_v(Tn, lnPn, key, target, scale, v, z, m, ig, Pc, omega, sc, vals, rn):
                if math.hypot(rn[0], rn[1]) < norm:
                    accepted = True
                    break
            lam *= 0.5
        if not accepted:
            break
        T, lnP = Tn, lnPn
        r[0], r[1] = rn[0], rn[1]
    return T, math.exp(lnP), NOT_CONVERGED


@njit(parallel=True, nogil=True, **KERNEL)
def fixed_P_batch(P, key, target, scale, T0, Tmin, Tmax, z, m, ig, Pc, omega, xtol, ftol, maxiter, T, status):
    """:func:`fixed_P_one` for states k in parallel."""
    for k in prange(P.shape[0]):
        T[k], status[k], _ = fixed_P_one(P[k], key, target[k], scale, T0[k], Tmin, Tmax, z, m, ig, Pc, omega,
                                         xtol, ftol, maxiter)


@njit(parallel=True, nogil=True, **KERNEL)
def fixed_v_batch(v, key, target, scale, T0, P0, z, m, ig, Pc, omega, tol, maxiter, T, P, status):
    """:func:`fixed_v_one` for states k in parallel."""
    for k in prange(v.shape[0]):
        T[k], P[k], status[k] = fixed_v_one(v[k], key, target[k], scale, T0[k], P0[k], z, m, ig, Pc, omega, tol,
                                            maxiter)
