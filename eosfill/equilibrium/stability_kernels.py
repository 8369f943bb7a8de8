"""Multi-trial tangent-plane stability test for one state, compiled (numba);
batches as compiled loops over it.

Method (M1) of :mod:`eosfill.equilibrium.multiphase` (Michelsen, Fluid Phase
Equilib. 9 (1982) 1-19; trials as in Michelsen & Mollerup 2007, ch. 9):
successive substitution

    ln W_i ← d_i - ln φ_i(w),   d_i = ln x_i + ln φ_i(x),   w = W/ΣW      (M1)

from Wilson's vapour-like (W = x K) and liquid-like (W = x/K) trials, one
near-pure trial per component (mole fraction 0.999, the rest shared over
the other present components) and any extra trials given; tm* = 1 - Σ W_i
at a stationary point.

The trials of one state run in lock-step (one substitution step of every
active trial per sweep), with the stopping tests of the numpy form it
replaced (kept as the test oracle ``tests/_oracles.py::stability_multi_oracle``;
``tests/test_flash_kernels.py`` compares the two):

* a trial stops when max |Δ ln W| < tol, when it has collapsed onto x
  (max |w - x| < 1e-6 before the step) or when the step is not finite;
* ``detect_only``: all trials of the state stop after the sweep in which
  one of them shows tm* < -1e-6 with max |Δ ln W| < 1e-3;
* a trial's tm* counts as 0 where its final w is within 1e-4 of x
  (trivial) or tm* is not finite; the lowest tm* and its w are returned.
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from eosfill.equilibrium.kernels import wilson_lnK
from eosfill.model.cubic_kernels import KERNEL, STABLE
from eosfill.model.properties import ln_phi_TP_one

_TRIVIAL = 1e-6      # max |w - x| at which a trial has collapsed onto x (stops it)
_TRIVIAL_TM = 1e-4   # max |w - x| within which a final trial counts as x (tm* = 0)
_CHUNK = 4           # states per parallel task (a state costs tens of µs)


@njit(**KERNEL)
def max_abs_diff(a, b):
    """max_i |a_i - b_i|, NaN if any difference is NaN (as numpy's max)."""
    out = 0.0
    for i in range(a.shape[0]):
        dv = abs(a[i] - b[i])
        if dv != dv:
            return np.nan
        if dv > out:
            out = dv
    return out


@njit(**KERNEL)
def _initial_trials(T, P, x, m, Pc, omega, extra, lnK, lnW):
    """The trials' starting ln W (rows of ``lnW``): Wilson vapour- and
    liquid-like, one near-pure trial per component, then ``extra``; each
    normalised over the components present in x."""
    nc = x.shape[0]
    npos = 0
    for i in range(nc):
        if x[i] > 0.0:
            npos += 1
    share = 1e-3 / max(npos - 1, 1)
    wilson_lnK(T, P, m[2], Pc, omega, lnK)
    for t in range(lnW.shape[0]):
        s = 0.0
        for i in range(nc):
            if t == 0:
                v = x[i] * math.exp(lnK[i])
            elif t == 1:
                v = x[i] * math.exp(-lnK[i])
            elif t < nc + 2:
                if npos > 1:
                    v = (1.0 - 1e-3 if i == t - 2 else share) if x[i] > 0.0 else 0.0
                else:
                    v = x[i]
            else:
                v = extra[t - nc - 2, i]
            if not x[i] > 0.0:
                v = 0.0
            lnW[t, i] = v
            s += v
        for i in range(nc):
            if x[i] > 0.0:
                v = lnW[t, i] / s
                lnW[t, i] = math.log(v) if v > 0.0 else math.log(1e-300)
            else:
                lnW[t, i] = -np.inf


@njit(**KERNEL)
def stability_multi_one(T, P, x, m, Pc, omega, extra, tol, maxiter, detect_only, w_out, work):
    """(M1) for one composition x at (T, P) with all trials (module docstring).

    ``extra`` (n_extra, nc): extra trial compositions (n_extra may be 0).
    ``w_out`` (nc,): on exit the stationary point of lowest tm*.  ``work``:
    scratch, shape (8, nc).  Returns tm_min (≥ -1e-9 means stable)."""
    nc = x.shape[0]
    ntr = nc + 2 + extra.shape[0]
    q, dq, d2q, sx, lnphi, d, lnK, w = work[0], work[1], work[2], work[3], work[4], work[5], work[6], work[7]
    ln_phi_TP_one(T, P, x, m, STABLE, q, dq, d2q, sx, lnphi)
    for i in range(nc):
        d[i] = math.log(x[i]) + lnphi[i] if x[i] > 0.0 else -np.inf
    lnW = np.empty((ntr, nc))
    _initial_trials(T, P, x, m, Pc, omega, extra, lnK, lnW)
    active = np.ones(ntr, dtype=np.bool_)
    for _ in range(maxiter):
        any_active = False
        stop_all = False
        for t in range(ntr):
            if not active[t]:
                continue
            any_active = True
            s = 0.0
            for i in range(nc):
                w[i] = math.exp(lnW[t, i])
                s += w[i]
            for i in range(nc):
                w[i] /= s
            wz = max_abs_diff(w, x)
            ln_phi_TP_one(T, P, w, m, STABLE, q, dq, d2q, sx, lnphi)
            diff = 0.0
            bad = False
            Wnew = 0.0
            for i in range(nc):
                if x[i] > 0.0:
                    new = d[i] - lnphi[i]
                    dv = abs(new - lnW[t, i])
                    if dv != dv:
                        bad = True
                    elif dv > diff:
                        diff = dv
                    lnW[t, i] = new
                    Wnew += math.exp(new)
                else:
                    lnW[t, i] = -np.inf
            if bad:
                diff = np.nan
            if diff < tol or wz < _TRIVIAL or not np.isfinite(diff):
                active[t] = False
            if detect_only and 1.0 - Wnew < -1e-6 and diff < 1e-3:
                stop_all = True
        if not any_active:
            break
        if stop_all:
            active[:] = False
    best = np.inf
    kbest = 0
    sbest = 1.0
    for t in range(ntr):
        s = 0.0
        for i in range(nc):
            s += math.exp(lnW[t, i])
        for i in range(nc):
            w[i] = math.exp(lnW[t, i]) / s
        wz = max_abs_diff(w, x)
        tm = 1.0 - s
        if wz < _TRIVIAL_TM or not np.isfinite(tm):
            tm = 0.0
        if tm < best:
            best, kbest, sbest = tm, t, s
    for i in range(nc):
        w_out[i] = math.exp(lnW[kbest, i]) / sbest
    return best


@njit(**KERNEL)
def stability_multi_serial(T, P, X, m, Pc, omega, extra, tol, maxiter, detect_only, tm, w):
    """(M1) for states k: X (n, nc), extra (n, n_extra, nc); tm (n,), w (n, nc) out."""
    work = np.empty((8, X.shape[1]))
    for k in range(T.shape[0]):
        tm[k] = stability_multi_one(T[k], P[k], X[k], m, Pc, omega, extra[k], tol, maxiter, detect_only,
                                    w[k], work)


@njit(parallel=True, nogil=True, **KERNEL)
def stability_multi_parallel(T, P, X, m, Pc, omega, extra, tol, maxiter, detect_only, tm, w):
    """:func:`stability_multi_serial` over chunks of states in parallel."""
    n = T.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        stability_multi_serial(T[lo:hi], P[lo:hi], X[lo:hi], m, Pc, omega, extra[lo:hi], tol, maxiter,
                               detect_only, tm[lo:hi], w[lo:hi])
