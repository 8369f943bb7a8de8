"""Equilibrium inner loops for one state, compiled (numba); batches as
compiled loops over them.

* (E1) Wilson's K-values: Wilson, G. M., "A modified Redlich-Kwong equation
  of state, application to general physical data calculations", AIChE 65th
  National Meeting (1968), paper 15C:  ln K_i = ln(Pc,i/P) + 5.373 (1 + ω_i)(1 - Tc,i/T).
* (E2) Rachford & Rice, J. Pet. Technol. 4(10) (1952) 19-20:
  Σ z_i (K_i - 1)/(1 + β (K_i - 1)) = 0, solved by Newton steps kept inside
  the bracket of Whitson & Michelsen, Fluid Phase Equilib. 53 (1989) 51-71
  (1/(1 - K_max) < β < 1/(1 - K_min)), bisection where Newton leaves it.
* (E3) Michelsen, Fluid Phase Equilib. 9 (1982) 1-19: tangent-plane
  stability by successive substitution on ln W_i = d_i - ln φ_i(w),
  d_i = ln z_i + ln φ_i(z); tm* = 1 - Σ W_i at a stationary point.

The stopping tests are those of the numpy forms they replaced (kept as test
oracles in ``tests/_oracles.py``; ``tests/test_equilibrium_kernels.py``
compares the two).  Compiled loops return a status per element (codes of
:mod:`eosfill.errors`) instead of raising; the Python wrappers in
:mod:`eosfill.equilibrium.solvers` decide what to raise.
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from eosfill.errors import CONVERGED, NOT_CONVERGED
from eosfill.model.cubic_kernels import KERNEL, STABLE
from eosfill.model.properties import ln_phi_TP_one

_CHUNK = 64


@njit(**KERNEL)
def wilson_lnK(T, P, Tc, Pc, omega, out):
    """ln K_i of Wilson (E1) into ``out``."""
    for i in range(Tc.shape[0]):
        out[i] = math.log(Pc[i] / P) + 5.373 * (1.0 + omega[i]) * (1.0 - Tc[i] / T)


# --------------------------------------------------------------------------
# Rachford-Rice (E2)
# --------------------------------------------------------------------------
@njit(**KERNEL)
def rachford_rice_one(z, K, tol, maxiter):
    """Unclipped β solving (E2) for one state, and a status.

    Bracket (Whitson & Michelsen 1989), limited to [-1e3, 1e3] and opened by
    1e-12 of its width; start 0.5 (or the bracket's middle); Newton steps,
    bisection where a step leaves the bracket; stops when
    |Δβ| ≤ tol·max(1, |β|) or f = 0.  Every K ≥ 1 (or ≤ 1): (E2) has no root
    and the bracket's upper (lower) end is returned.
    """
    nc = z.shape[0]
    Kmax = K[0]
    Kmin = K[0]
    for i in range(1, nc):
        Kmax = max(Kmax, K[i])
        Kmin = min(Kmin, K[i])
    lo = max(1.0 / (1.0 - Kmax), -1e3) if Kmax > 1.0 else -1e3
    hi = min(1.0 / (1.0 - Kmin), 1e3) if Kmin < 1.0 else 1e3
    span = hi - lo
    lo, hi = lo + 1e-12 * span, hi - 1e-12 * span
    if Kmin >= 1.0:
        return hi, CONVERGED
    if Kmax <= 1.0:
        return lo, CONVERGED
    beta = 0.5 if lo < 0.5 < hi else 0.5 * (lo + hi)
    for _ in range(maxiter):
        f = 0.0
        df = 0.0
        for i in range(nc):
            if z[i] > 0.0:
                km1 = K[i] - 1.0
                d = 1.0 + beta * km1
                t = z[i] * km1 / d
                f += t
                df -= t * km1 / d
        if f == 0.0:
            return beta, CONVERGED
        if f > 0.0:
            lo = beta
        else:
            hi = beta
        new = beta - f / df if df != 0.0 else 0.5 * (lo + hi)
        if not (lo <= new <= hi) or new != new:
            new = 0.5 * (lo + hi)
        if abs(new - beta) <= tol * max(1.0, abs(beta)):
            return new, CONVERGED
        beta = new
    return beta, NOT_CONVERGED


@njit(**KERNEL)
def rachford_rice_serial(z, K, tol, maxiter, beta, status):
    """(E2) for states k (rows of z, K) into beta[k], status[k]."""
    for k in range(z.shape[0]):
        beta[k], status[k] = rachford_rice_one(z[k], K[k], tol, maxiter)


@njit(parallel=True, nogil=True, **KERNEL)
def rachford_rice_parallel(z, K, tol, maxiter, beta, status):
    """:func:`rachford_rice_serial` over chunks of states in parallel."""
    n = z.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        rachford_rice_serial(z[lo:hi], K[lo:hi], tol, maxiter, beta[lo:hi], status[lo:hi])


# --------------------------------------------------------------------------
# tangent-plane stability (E3)
# --------------------------------------------------------------------------
@njit(**KERNEL)
def _trial_step(T, P, z, d, lnW, m, q, dq, d2q, sx, w, lnphi):
    """One successive-substitution step of a trial: lnW ← d - ln φ(w).

    Returns (max |Δ ln W| over present components, tm* = 1 - Σ W_new,
    max |w - z|)."""
    nc = z.shape[0]
    Wsum = 0.0
    for i in range(nc):
        w[i] = math.exp(lnW[i]) if z[i] > 0.0 else 0.0
        Wsum += w[i]
    wz = 0.0
    for i in range(nc):
        w[i] /= Wsum
        wz = max(wz, abs(w[i] - z[i]))
    ln_phi_TP_one(T, P, w, m, STABLE, q, dq, d2q, sx, lnphi)
    diff = 0.0
    Wnew = 0.0
    for i in range(nc):
        if z[i] > 0.0:
            new = d[i] - lnphi[i]
            diff = max(diff, abs(new - lnW[i]))
            lnW[i] = new
            Wnew += math.exp(new)
        else:
            lnW[i] = -np.inf
    return diff, 1.0 - Wnew, wz


@njit(**KERNEL)
def stability_one(T, P, z, m, Pc, omega, lnW, use_start, tol, maxiter, lnK0, work):
    """Michelsen's (1982) test (E3) for one state with a vapour-like and a
    liquid-like trial run in lock-step.

    ``lnW`` (2, nc): on entry the warm-start trials if ``use_start`` (rows
    that are not finite or have collapsed onto z, max |w - z| ≤ 1e-4, start
    from Wilson instead); on exit the trials' final ln W.  ``lnK0`` (nc,):
    on exit ln K for a flash from the trial of lowest tm* (Wilson's where
    not finite).  ``work``: scratch, shape (8, nc).

    A trial stops when max |Δ ln W| < tol, when w → z (trivial, max |w - z|
    < 1e-8, tm* = 0) or when tm* < -1e-8 with max |Δ ln W| < 1e-4; once one
    trial has shown instability that way, its twin stops too.

    Returns
    -------
    unstable : bool (min tm* < -1e-10), tm : float (min tm*), status : int
    """
    nc = z.shape[0]
    Tc = m[2]
    q, dq, d2q, sx, w, lnphi, d, lnK = work[0], work[1], work[2], work[3], work[4], work[5], work[6], work[7]
    ln_phi_TP_one(T, P, z, m, STABLE, q, dq, d2q, sx, lnphi)
    for i in range(nc):
        d[i] = math.log(z[i]) + lnphi[i] if z[i] > 0.0 else -np.inf
    wilson_lnK(T, P, Tc, Pc, omega, lnK)
    for t in range(2):
        usable = use_start
        if usable:
            ok = True
            Wsum = 0.0
            for i in range(nc):
                if z[i] > 0.0:
                    if not np.isfinite(lnW[t, i]):
                        ok = False
                    else:
                        Wsum += math.exp(lnW[t, i])
            dev = 0.0
            if ok:
                for i in range(nc):
                    if z[i] > 0.0:
                        dev = max(dev, abs(math.exp(lnW[t, i]) / Wsum - z[i]))
                    else:
                        dev = max(dev, z[i])
            usable = ok and dev > 1e-4
        if not usable:
            sign = 1.0 if t == 0 else -1.0
            for i in range(nc):
                lnW[t, i] = math.log(z[i]) + sign * lnK[i] if z[i] > 0.0 else -np.inf
        for i in range(nc):
            if not z[i] > 0.0:
                lnW[t, i] = -np.inf
    active = np.ones(2, dtype=np.bool_)
    tms = np.zeros(2)
    trivial = np.zeros(2, dtype=np.bool_)
    for _ in range(maxiter):
        if not (active[0] or active[1]):
            break
        found = False
        for t in range(2):
            if active[t]:
                diff, tms[t], wz = _trial_step(T, P, z, d, lnW[t], m, q, dq, d2q, sx, w, lnphi)
                trivial[t] = wz < 1e-8
                neg_clear = tms[t] < -1e-8 and diff < 1e-4
                if diff < tol or trivial[t] or neg_clear:
                    active[t] = False
                found = found or neg_clear
        if found:
            active[:] = False
    status = NOT_CONVERGED if (active[0] or active[1]) else CONVERGED
    tm0 = 0.0 if trivial[0] else tms[0]
    tm1 = 0.0 if trivial[1] else tms[1]
    use_v = tm0 <= tm1
    t = 0 if use_v else 1
    Wsum = 0.0
    for i in range(nc):
        Wsum += math.exp(lnW[t, i])
    for i in range(nc):
        lw = lnW[t, i] - math.log(Wsum)
        v = lw - math.log(z[i]) if use_v else math.log(z[i]) - lw
        lnK0[i] = v if np.isfinite(v) else lnK[i]
    tm = min(tm0, tm1)
    return tm < -1e-10, tm, status


@njit(**KERNEL)
def stability_serial(T, P, z, m, Pc, omega, lnW, use_start, tol, maxiter, unstable, tm, lnK0, status):
    """(E3) for states k: lnW (n, 2, nc) in/out, unstable, tm, lnK0 (n, nc), status out."""
    nc = z.shape[1]
    work = np.empty((8, nc))
    for k in range(T.shape[0]):
        unstable[k], tm[k], status[k] = stability_one(T[k], P[k], z[k], m, Pc, omega, lnW[k], use_start,
                                                      tol, maxiter, lnK0[k], work)


@njit(parallel=True, nogil=True, **KERNEL)
def stability_parallel(T, P, z, m, Pc, omega, lnW, use_start, tol, maxiter, unstable, tm, lnK0, status):
    """:func:`stability_serial` over chunks of states in parallel."""
    n = T.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        stability_serial(T[lo:hi], P[lo:hi], z[lo:hi], m, Pc, omega, lnW[lo:hi], use_start, tol, maxiter,
                         unstable[lo:hi], tm[lo:hi], lnK0[lo:hi], status[lo:hi])
