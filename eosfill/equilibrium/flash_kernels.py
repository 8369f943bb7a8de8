"""Two-phase TP flash for one state, compiled (numba); batches as compiled
loops over it.

The method is that of :mod:`eosfill.equilibrium.flash` (Michelsen, Fluid
Phase Equilib. 9 (1982) 1-19 and 21-40):

1. stability test (E3) with two trials (:func:`eosfill.equilibrium.kernels.stability_one`);
   a stable feed is one phase;
2. successive substitution K_i = φ_i^L(x)/φ_i^V(y) with the Rachford-Rice
   solution (E2), accelerated by the dominant-eigenvalue method every fifth
   step (Michelsen 1982b, Eq. 27):

       ln K ← ln K + Δ λ/(1 - λ),   λ = (Δ_k · Δ_{k-1})/(Δ_{k-1} · Δ_{k-1}),   0 < λ < 0.99

   stopped when max |Δ ln K| < tol (ln K then kept from before that step),
   or at the trivial solution (max |ln K| < 1e-6);
3. at step 25, if still running (slow near a critical point), Newton's
   method on r(ln K) = ln K - (ln φ^L(x) - ln φ^V(y)) with a forward-
   difference Jacobian (over the components present, nc + 1 residuals a
   step, the step halved while max |r| does not fall); where Newton does not
   reach max |r| ≤ 1e-9 the state is returned with status :data:`NEED_GIBBS`
   and its last ln K: the Python wrapper minimises the Gibbs energy there
   (scipy, not compiled) and resumes the substitution at step 26
   (:func:`flash_resume_one`);
4. states that did not converge: Newton steps on ln K; then the final
   residual max_i |ln f_i^V - ln f_i^L| on the compositions at the
   unclipped β: converged where < 1e-8 or where the result is one phase
   (trivial K or β outside (0, 1)).

The warm-started flash (:func:`flash_warm_one`) is step 2 alone from given
ln K, at most 60 steps, β unclipped and required inside (0, 1) throughout.

The numpy form these replaced is the test oracle ``tests/_oracles.py::flash_TP_oracle``
(``tests/test_flash_kernels.py`` compares the two).
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from eosfill.equilibrium.kernels import rachford_rice_one, stability_one
from eosfill.equilibrium.stability_kernels import stability_multi_one
from eosfill.errors import CONVERGED
from eosfill.model.cubic_kernels import KERNEL, STABLE
from eosfill.model.properties import ln_phi_TP_one

MAXITER = 1        # status: equal fugacity not reached (eosfill.equilibrium.kvalues.MAXITER)
NEED_GIBBS = 3     # status: stopped at step 25 for the Gibbs-energy minimisation (Python)
RESUME_AT = 26     # the step at which the substitution resumes after it
_CHUNK = 2         # states per parallel task (a state costs tens of µs)


@njit(**KERNEL)
def _maxabs(a, z):
    """max |a_i| over components present (z_i > 0); NaN if any is NaN."""
    out = 0.0
    for i in range(a.shape[0]):
        if z[i] > 0.0:
            v = abs(a[i])
            if v != v:
                return np.nan
            if v > out:
                out = v
    return out


@njit(**KERNEL)
def compositions(z, K, beta, x, y):
    """x = z/(1 + β(K - 1)), y = K x, both normalised, into x, y."""
    sxs = 0.0
    sys = 0.0
    for i in range(z.shape[0]):
        x[i] = z[i] / (1.0 + beta * (K[i] - 1.0))
        y[i] = K[i] * x[i]
        sxs += x[i]
        sys += y[i]
    for i in range(z.shape[0]):
        x[i] /= sxs
        y[i] /= sys


@njit(**KERNEL)
def phases_one(T, P, z, m, lnK, clip, x, y, new, work):
    """One successive-substitution step: β from (E2) at K = exp(ln K),
    x = z/(1 + β(K - 1)), y = K x (β clipped to [clip, 1 - clip], both
    normalised) and new ln K = ln φ^L(x) - ln φ^V(y) into ``new``.
    ``work``: scratch (7, nc).  Returns (β clipped to [0, 1], β unclipped)."""
    nc = z.shape[0]
    K, q, dq, d2q, sx, lpl, lpv = work[0], work[1], work[2], work[3], work[4], work[5], work[6]
    for i in range(nc):
        K[i] = math.exp(lnK[i])
    braw, _ = rachford_rice_one(z, K, 1e-13, 100)
    b = min(max(braw, 0.0), 1.0)
    bb = min(max(braw, clip), 1.0 - clip)
    compositions(z, K, bb, x, y)
    ln_phi_TP_one(T, P, x, m, STABLE, q, dq, d2q, sx, lpl)
    ln_phi_TP_one(T, P, y, m, STABLE, q, dq, d2q, sx, lpv)
    for i in range(nc):
        new[i] = lpl[i] - lpv[i]
    return b, braw


@njit(**KERNEL)
def dem_step(lnK, hist):
    """Dominant-eigenvalue extrapolation (Michelsen 1982b, Eq. 27) from the
    last two steps Δ_{k-1} = hist[0], Δ_k = hist[1], in place on ln K:
    ln K += Δ_k λ/(1 - λ), λ = Δ_k·Δ_{k-1}/Δ_{k-1}·Δ_{k-1}, only for 0 < λ < 0.99."""
    num = 0.0
    den = 0.0
    for i in range(lnK.shape[0]):
        num += hist[1, i] * hist[0, i]
        den += hist[0, i] * hist[0, i]
    lam = num / max(den, 1e-300)
    if 0.0 < lam < 0.99:
        for i in range(lnK.shape[0]):
            lnK[i] += hist[1, i] * (lam / (1.0 - lam))


@njit(**KERNEL)
def _residual(T, P, z, m, lnK, r, x, y, new, work):
    """r = ln K - (ln φ^L(x) - ln φ^V(y)) (0 for absent components); returns max |r|."""
    phases_one(T, P, z, m, lnK, 1e-12, x, y, new, work)
    for i in range(z.shape[0]):
        r[i] = lnK[i] - new[i] if z[i] > 0.0 else 0.0
    return _maxabs(r, z)


@njit(**KERNEL)
def _solve(J, rhs, out):
    """J out = rhs by Gaussian elimination with partial pivoting (J, rhs
    overwritten); False where a pivot is zero or not finite."""
    n = rhs.shape[0]
    for c in range(n):
        p = c
        for k in range(c + 1, n):
            if abs(J[k, c]) > abs(J[p, c]):
                p = k
        piv = J[p, c]
        if piv == 0.0 or not np.isfinite(piv):
            return False
        if p != c:
            for k in range(n):
                J[c, k], J[p, k] = J[p, k], J[c, k]
            rhs[c], rhs[p] = rhs[p], rhs[c]
        for k in range(c + 1, n):
            f = J[k, c] / J[c, c]
            for j in range(c, n):
                J[k, j] -= f * J[c, j]
            rhs[k] -= f * rhs[c]
    for c in range(n - 1, -1, -1):
        s = rhs[c]
        for j in range(c + 1, n):
            s -= J[c, j] * out[j]
        out[c] = s / J[c, c]
    return True


@njit(**KERNEL)
def newton_lnK(T, P, z, m, lnK, tol, maxiter, x, y, new, work):
    """Newton on r(ln K) = 0 (step 3 of the module docstring), in place on
    ``lnK``; returns the final max |r|."""
    nc = z.shape[0]
    idx = np.flatnonzero(z > 0.0)
    npos = idx.shape[0]
    r = np.empty(nc)
    rn = np.empty(nc)
    trial = np.empty(nc)
    J = np.empty((npos, npos))
    rhs = np.empty(npos)
    step = np.empty(npos)
    rmax = _residual(T, P, z, m, lnK, r, x, y, new, work)
    for _ in range(maxiter):
        if rmax < tol:
            break
        for jj in range(npos):
            j = idx[jj]
            h = 1e-7 * max(1.0, abs(lnK[j]))
            trial[:] = lnK
            trial[j] += h
            _residual(T, P, z, m, trial, rn, x, y, new, work)
            for ii in range(npos):
                J[ii, jj] = (rn[idx[ii]] - r[idx[ii]]) / h
        for ii in range(npos):
            rhs[ii] = -r[idx[ii]]
        if not _solve(J, rhs, step):
            break
        lam = 1.0
        accepted = False
        for _ in range(12):
            trial[:] = lnK
            for jj in range(npos):
                trial[idx[jj]] += lam * step[jj]
            rnmax = _residual(T, P, z, m, trial, rn, x, y, new, work)
            if np.isfinite(rnmax) and rnmax < rmax:
                lnK[:] = trial
                r[:] = rn
                rmax = rnmax
                accepted = True
                break
            lam *= 0.5
        if not accepted:
            break
    return rmax


@njit(**KERNEL)
def successive_substitution(T, P, z, m, lnK, it0, maxiter, tol, second_order, x, y, new, hist, work):
    """Step 2 (and the step-25 Newton of step 3) from step ``it0``, in place
    on ``lnK``.  Returns (status CONVERGED, MAXITER or NEED_GIBBS, steps taken)."""
    nc = z.shape[0]
    nh = 0
    steps = 0
    for it in range(it0, maxiter):
        phases_one(T, P, z, m, lnK, 1e-12, x, y, new, work)
        steps += 1
        for i in range(nc):
            hist[0, i] = hist[1, i]
            hist[1, i] = new[i] - lnK[i] if z[i] > 0.0 else 0.0
        nh += 1
        if _maxabs(hist[1], z) < tol:
            return CONVERGED, steps
        lnK[:] = new
        if it % 5 == 4 and nh >= 2:
            dem_step(lnK, hist)
        kmax = 0.0
        for i in range(nc):
            kmax = max(kmax, abs(lnK[i]))
        if kmax < 1e-6:
            return CONVERGED, steps
        if it == RESUME_AT - 1 and second_order:
            if newton_lnK(T, P, z, m, lnK, tol, 30, x, y, new, work) > 1e-9:
                return NEED_GIBBS, steps
    return MAXITER, steps


@njit(**KERNEL)
def finish_one(T, P, z, m, lnK, status, tol, x, y, new, work):
    """Step 4: Newton where not converged, then the final compositions (β
    unclipped) and residual.  Fills x, y (= z for one phase) and lnK (0 for
    one phase).  Returns (β, two_phase, status, residual)."""
    nc = z.shape[0]
    if status != CONVERGED:
        newton_lnK(T, P, z, m, lnK, tol, 30, x, y, new, work)
    b, _ = phases_one(T, P, z, m, lnK, 0.0, x, y, new, work)
    r = work[0]
    for i in range(nc):
        r[i] = math.log(y[i]) - math.log(x[i]) - new[i] if z[i] > 0.0 else 0.0
    res = _maxabs(r, z)
    kmax = 0.0
    for i in range(nc):
        kmax = max(kmax, abs(lnK[i]))
    single = kmax < 1e-6 or b <= 0.0 or b >= 1.0
    st = CONVERGED if (res < 1e-8 or single) else MAXITER
    if single:
        x[:] = z
        y[:] = z
        lnK[:] = 0.0
        return (1.0 if b >= 1.0 else 0.0), False, st, 0.0
    return b, True, st, res


@njit(**KERNEL)
def flash_TP_one(T, P, z, m, Pc, omega, tol, maxiter, second_order, x, y, lnK, work, hist, lnW):
    """Steps 1-4 for one state.  ``work`` (9, nc), ``hist`` (2, nc), ``lnW``
    (2, nc): scratch.  Fills x, y, lnK.  Returns (β, two_phase, status,
    residual, iterations); status NEED_GIBBS: lnK holds the step-25 iterate."""
    unstable, _, _ = stability_one(T, P, z, m, Pc, omega, lnW, False, 1e-10, 300 if second_order else 60,
                                   lnK, work[1:])
    if not unstable:
        x[:] = z
        y[:] = z
        lnK[:] = 0.0
        return 1.0, False, CONVERGED, 0.0, 0
    new = work[0]
    st, steps = successive_substitution(T, P, z, m, lnK, 0, maxiter, tol, second_order, x, y, new, hist, work[2:])
    if st == NEED_GIBBS:
        return 0.5, False, NEED_GIBBS, np.nan, steps
    b, two, st, res = finish_one(T, P, z, m, lnK, st, tol, x, y, new, work[2:])
    return b, two, st, res, steps


@njit(**KERNEL)
def flash_resume_one(T, P, z, m, tol, maxiter, x, y, lnK, work, hist):
    """Steps 2 (from step 26, after the Gibbs-energy minimisation) and 4."""
    new = work[0]
    st, steps = successive_substitution(T, P, z, m, lnK, RESUME_AT, maxiter, tol, True, x, y, new, hist, work[2:])
    b, two, st, res = finish_one(T, P, z, m, lnK, st, tol, x, y, new, work[2:])
    return b, two, st, res, steps


@njit(**KERNEL)
def flash_warm_one(T, P, z, m, lnK, tol, maxiter, x, y, work, hist):
    """Successive substitution with DEM from given ln K (in place), no
    stability test, at most min(maxiter, 60) steps, β unclipped and inside
    (0, 1) at every step.  Fills x, y.  Returns (ok, β, residual, steps);
    ok False: the caller runs the full flash."""
    nc = z.shape[0]
    new = work[0]
    w = work[2:]
    nh = 0
    for it in range(min(maxiter, 60)):
        _, braw = phases_one(T, P, z, m, lnK, 0.0, x, y, new, w)
        if braw <= 0.0 or braw >= 1.0 or braw != braw:
            return False, np.nan, np.nan, it + 1
        for i in range(nc):
            hist[0, i] = hist[1, i]
            hist[1, i] = new[i] - lnK[i] if z[i] > 0.0 else 0.0
        nh += 1
        lnK[:] = new
        err = _maxabs(hist[1], z)
        if err < tol:
            K = w[0]
            kmax = 0.0
            for i in range(nc):
                K[i] = math.exp(lnK[i])
                kmax = max(kmax, abs(lnK[i]))
            braw, _ = rachford_rice_one(z, K, 1e-13, 100)
            if braw <= 0.0 or braw >= 1.0 or kmax < 1e-6:
                return False, np.nan, np.nan, it + 1
            compositions(z, K, braw, x, y)
            return True, braw, err, it + 1
        if it % 5 == 4 and nh >= 2:
            dem_step(lnK, hist)
    return False, np.nan, np.nan, min(maxiter, 60)


# --------------------------------------------------------------------------
# batches
# --------------------------------------------------------------------------
@njit(**KERNEL)
def flash_TP_serial(T, P, z, m, Pc, omega, tol, maxiter, second_order, beta, x, y, lnK, two, status, resid,
                    iters):
    """Steps 1-4 for states k into the output rows."""
    nc = z.shape[1]
    work, hist, lnW = np.empty((9, nc)), np.zeros((2, nc)), np.empty((2, nc))
    for k in range(T.shape[0]):
        beta[k], two[k], status[k], resid[k], iters[k] = flash_TP_one(
            T[k], P[k], z[k], m, Pc, omega, tol, maxiter, second_order, x[k], y[k], lnK[k], work, hist, lnW)


@njit(parallel=True, nogil=True, **KERNEL)
def flash_TP_parallel(T, P, z, m, Pc, omega, tol, maxiter, second_order, beta, x, y, lnK, two, status, resid,
                      iters):
    """:func:`flash_TP_serial` over chunks of states in parallel."""
    n = T.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        flash_TP_serial(T[lo:hi], P[lo:hi], z[lo:hi], m, Pc, omega, tol, maxiter, second_order, beta[lo:hi],
                        x[lo:hi], y[lo:hi], lnK[lo:hi], two[lo:hi], status[lo:hi], resid[lo:hi], iters[lo:hi])


@njit(**KERNEL)
def flash_resume_serial(T, P, z, m, tol, maxiter, beta, x, y, lnK, two, status, resid, iters):
    """:func:`flash_resume_one` for states k (lnK in: the minimisation's result)."""
    nc = z.shape[1]
    work, hist = np.empty((9, nc)), np.zeros((2, nc))
    for k in range(T.shape[0]):
        beta[k], two[k], status[k], resid[k], it = flash_resume_one(T[k], P[k], z[k], m, tol, maxiter, x[k],
                                                                    y[k], lnK[k], work, hist)
        iters[k] += it


@njit(**KERNEL)
def flash_warm_serial(T, P, z, m, lnK, tol, maxiter, ok, beta, x, y, resid, iters):
    """:func:`flash_warm_one` for states k (lnK in/out)."""
    nc = z.shape[1]
    work, hist = np.empty((9, nc)), np.zeros((2, nc))
    for k in range(T.shape[0]):
        ok[k], beta[k], resid[k], iters[k] = flash_warm_one(T[k], P[k], z[k], m, lnK[k], tol, maxiter, x[k], y[k],
                                                            work, hist)


@njit(parallel=True, nogil=True, **KERNEL)
def flash_warm_parallel(T, P, z, m, lnK, tol, maxiter, ok, beta, x, y, resid, iters):
    """:func:`flash_warm_serial` over chunks of states in parallel."""
    n = T.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        flash_warm_serial(T[lo:hi], P[lo:hi], z[lo:hi], m, lnK[lo:hi], tol, maxiter, ok[lo:hi], beta[lo:hi],
                          x[lo:hi], y[lo:hi], resid[lo:hi], iters[lo:hi])


# --------------------------------------------------------------------------
# the flash and the multi-trial stability test of its result, in one pass
# --------------------------------------------------------------------------
@njit(**KERNEL)
def flash_tested_serial(T, P, z, m, Pc, omega, tol, maxiter, beta, x, y, lnK, two, status, resid, iters, tm):
    """Steps 1-4 for states k, then the multi-trial test (M1, detect_only)
    of the result's more abundant phase with the phases as extra trials:
    tm[k] < -1e-9 means a further phase (the multiphase flash takes over).
    States handed back for the Gibbs-energy minimisation get tm = NaN."""
    nc = z.shape[1]
    work, hist, lnW = np.empty((9, nc)), np.zeros((2, nc)), np.empty((2, nc))
    extra = np.empty((2, nc))
    w = np.empty(nc)
    for k in range(T.shape[0]):
        beta[k], two[k], status[k], resid[k], iters[k] = flash_TP_one(
            T[k], P[k], z[k], m, Pc, omega, tol, maxiter, True, x[k], y[k], lnK[k], work, hist, lnW)
        if status[k] == NEED_GIBBS:
            tm[k] = np.nan
            continue
        extra[0] = y[k]
        extra[1] = x[k]
        ref = x[k] if (two[k] and 1.0 - beta[k] > beta[k]) else y[k]
        tm[k] = stability_multi_one(T[k], P[k], ref, m, Pc, omega, extra, 1e-10, 400, True, w, work[1:])


@njit(parallel=True, nogil=True, **KERNEL)
def flash_tested_parallel(T, P, z, m, Pc, omega, tol, maxiter, beta, x, y, lnK, two, status, resid, iters, tm):
    """:func:`flash_tested_serial` over chunks of states in parallel."""
    n = T.shape[0]
    for c in prange((n + _CHUNK - 1) // _CHUNK):
        lo, hi = c * _CHUNK, min(n, (c + 1) * _CHUNK)
        flash_tested_serial(T[lo:hi], P[lo:hi], z[lo:hi], m, Pc, omega, tol, maxiter, beta[lo:hi], x[lo:hi],
                            y[lo:hi], lnK[lo:hi], two[lo:hi], status[lo:hi], resid[lo:hi], iters[lo:hi], tm[lo:hi])
