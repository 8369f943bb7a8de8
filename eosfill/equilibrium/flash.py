"""Two-phase TP flash of a mixture: successive substitution with DEM
acceleration, Newton on ln K, Gibbs-energy minimisation; the warm-started
flash.

Neighbours: Wilson K, Rachford-Rice and ln φ in :mod:`eosfill.equilibrium.kvalues`;
the stability test in :mod:`eosfill.equilibrium.stability`; bubble/dew points in
:mod:`eosfill.equilibrium.boundaries` (map: :mod:`eosfill.equilibrium.solvers`).

Method
------

* Two-phase TP flash (Michelsen, Fluid Phase Equilib. 9 (1982) 21-40):
  successive substitution K_i = φ_i^L(x)/φ_i^V(y) with the Rachford-Rice
  solution, accelerated by the dominant-eigenvalue method (DEM, ibid.
  Eq. 27) every fifth step, switched to a second-order method when
  successive substitution stalls (near a critical point): Newton's method
  on ln K (Jacobian by forward differences), and where that falls short,
  minimisation of the Gibbs energy G/RT = Σ n_i^V ln f_i^V + Σ n_i^L ln f_i^L
  over the vapour mole numbers with its analytic gradient
  ∂(G/RT)/∂n_i^V = ln f_i^V - ln f_i^L (Michelsen & Mollerup 2007, ch. 10),

Every iteration has a bound; a batch reports a status per element, a
scalar call raises :class:`~eosfill.errors.ConvergenceError` with the last
iterate.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import ConvergenceError
from eosfill.equilibrium.kvalues import CONVERGED, MAXITER, rachford_rice, lnphi_root
from eosfill.equilibrium.stability import stability_test


# --------------------------------------------------------------------------
# two-phase flash for mixtures
# --------------------------------------------------------------------------
def _flash_gibbs_min(T, P, z, lnK, p):
    """Second-order fallback: minimise G/RT over vapour moles (L-BFGS-B)."""
    from scipy.optimize import minimize

    Tn = np.array([T])
    Pn = np.array([P])
    K = np.exp(lnK)
    beta, _ = rachford_rice(z, K)
    beta = float(np.clip(beta, 1e-6, 1 - 1e-6))
    x = z / (1.0 + beta * (K - 1.0))
    y = K * x
    nv0 = beta * y / y.sum()
    pos = z > 0

    def gibbs(nv_pos):
        nv = np.zeros_like(z)
        nv[pos] = nv_pos
        nl = z - nv
        Vn, Ln = nv.sum(), nl.sum()
        yv = nv / Vn
        xl = nl / Ln
        lpv, _ = lnphi_root(Tn, Pn, yv[None, :], p, which="stable")
        lpl, _ = lnphi_root(Tn, Pn, xl[None, :], p, which="stable")
        with np.errstate(divide="ignore", invalid="ignore"):
            lfv = np.where(nv > 0, np.log(np.where(nv > 0, yv, 1.0)) + lpv[0], 0.0)
            lfl = np.where(nl > 0, np.log(np.where(nl > 0, xl, 1.0)) + lpl[0], 0.0)
        G = float((nv * lfv).sum() + (nl * lfl).sum())
        return G, (lfv - lfl)[pos]

    eps = 1e-14
    bounds = [(eps * zi, zi * (1 - eps)) for zi in z[pos]]
    res = minimize(gibbs, np.clip(nv0[pos], [b[0] for b in bounds], [b[1] for b in bounds]),
                   jac=True, method="L-BFGS-B", bounds=bounds,
                   options=dict(maxiter=500, ftol=1e-16, gtol=1e-12))
    nv = np.zeros_like(z)
    nv[pos] = res.x
    nl = z - nv
    b = nv.sum()
    y = nv / b
    x = nl / nl.sum()
    with np.errstate(divide="ignore"):
        lnK_new = np.where(pos, np.log(np.where(pos, y, 1.0)) - np.log(np.where(pos, x, 1.0)), 0.0)
    if res.success:
        return lnK_new
    # L-BFGS-B stopped short (res.success False: line search or iteration
    # limit): keep whichever of its point and the start has the smaller
    # equal-fugacity residual; the flash's final residual test sets the status
    r_new = np.max(np.abs(_flash_residual(T, P, z, lnK_new, p)))
    r_old = np.max(np.abs(_flash_residual(T, P, z, np.asarray(lnK, dtype=float), p)))
    return lnK_new if r_new <= r_old else np.asarray(lnK, dtype=float)


def _phases_from_K(z, lnK, p, T, P, clip=1e-12):
    """One successive-substitution step of the flash (Michelsen 1982b):
    Rachford-Rice for β at these K, the phase compositions
    x = z/(1 + β(K - 1)), y = K x (normalised), and the new
    ln K = ln φ^L(x) - ln φ^V(y).  Returns (β clipped to [0, 1], β unclipped,
    x, y, new ln K); shapes (n,), (n,), (n, nc), (n, nc), (n, nc)."""
    K = np.exp(lnK)
    b, braw = rachford_rice(z, K)
    bb = np.clip(braw, clip, 1.0 - clip)[..., None]
    x = z / (1.0 + bb * (K - 1.0))
    y = K * x
    x = x / x.sum(-1, keepdims=True)
    y = y / y.sum(-1, keepdims=True)
    lpl, _ = lnphi_root(T, P, x, p, which="stable")
    lpv, _ = lnphi_root(T, P, y, p, which="stable")
    return b, braw, x, y, lpl - lpv


def _flash_residual(T, P, z, lnK, p):
    """r(ln K) = ln K - (ln φ^L(x) - ln φ^V(y)) with x, y from Rachford-Rice."""
    *_, new = _phases_from_K(z[None, :], lnK[None, :], p, np.array([T]), np.array([P]))
    return np.where(z > 0, lnK - new[0], 0.0)


def _flash_newton(T, P, z, lnK, p, tol, maxiter=30):
    """Newton on r(ln K) = 0 with a forward-difference Jacobian (nc + 1
    fugacity evaluations a step), halving the step while |r| does not fall.
    Returns the best ln K found."""
    lnK = np.array(lnK, dtype=float)
    r = _flash_residual(T, P, z, lnK, p)
    nc = lnK.size
    for _ in range(maxiter):
        if np.max(np.abs(r)) < tol:
            break
        J = np.empty((nc, nc))
        for j in range(nc):
            h = 1e-7 * max(1.0, abs(lnK[j]))
            d = lnK.copy()
            d[j] += h
            J[:, j] = (_flash_residual(T, P, z, d, p) - r) / h
        try:
            step = np.linalg.solve(J, -r)
        except np.linalg.LinAlgError:
            break
        lam = 1.0
        for _ in range(12):
            new = lnK + lam * step
            rn = _flash_residual(T, P, z, new, p)
            if np.all(np.isfinite(rn)) and np.max(np.abs(rn)) < np.max(np.abs(r)):
                lnK, r = new, rn
                break
            lam *= 0.5
        else:
            break
    return lnK


def flash_TP(T, P, z, p, tol=1e-11, maxiter=400, raise_on_fail=True, lnK_start=None,
             second_order=True):
    """Isothermal two-phase flash of mixtures at (T, P), vectorised over states.

    Stability test first (Michelsen 1982); unstable feeds are flashed by
    accelerated successive substitution with a Gibbs-minimisation fallback.

    Parameters
    ----------
    T, P : ndarray, shape (n,)
    z : ndarray, shape (n, nc) or (nc,)

    Returns
    -------
    dict: beta (n,) vapour fraction (1 or 0 single phase), x, y (n, nc)
    liquid and vapour compositions (both = z when single phase),
    two_phase (n,) bool, status (n,), residual (n,) max |ln f^V - ln f^L|,
    lnK (n, nc) the converged ln K (for warm starts), iterations (n,) the
    successive-substitution steps taken (0 for stable feeds).

    ``lnK_start`` (n, nc): K-values of a nearby two-phase solution; the
    stability test is then skipped for a first try and run only where the
    warm-started flash does not end with two phases.
    """
    if lnK_start is not None:
        res = _flash_warm(T, P, z, p, lnK_start, tol, maxiter)
        if res is not None:
            return res
    T = np.atleast_1d(np.asarray(T, dtype=float))
    P = np.atleast_1d(np.asarray(P, dtype=float))
    n = T.shape[0]
    z = np.broadcast_to(np.asarray(z, dtype=float), (n, p.Tc.shape[0])).copy()
    beta = np.ones(n)
    x = z.copy()
    y = z.copy()
    two = np.zeros(n, dtype=bool)
    status = np.zeros(n, dtype=np.int8)
    resid = np.zeros(n)
    unstable, lnK0, _ = stability_test(T, P, z, p, maxiter=300 if second_order else 60)
    idx = np.flatnonzero(unstable)
    lnK_out = np.zeros_like(z)
    if idx.size == 0:
        return dict(beta=beta, x=x, y=y, two_phase=two, status=status, residual=resid, lnK=lnK_out,
                    iterations=np.zeros(n, dtype=np.int64))
    Ti, Pi, zi = T[idx], P[idx], z[idx]
    lnK = lnK0[idx]
    active = np.ones(idx.size, dtype=bool)
    hist = []
    n_iter = np.zeros(idx.size, dtype=np.int64)
    st = np.full(idx.size, MAXITER, dtype=np.int8)
    b_i = np.full(idx.size, 0.5)
    for it in range(maxiter):
        b_i, braw, xi, yi, new = _phases_from_K(zi, lnK, p, Ti, Pi)
        n_iter += active
        delta = np.where(zi > 0, new - lnK, 0.0)
        hist.append(delta)
        err = np.max(np.abs(delta), axis=-1)
        conv = err < tol
        st = np.where(conv & active, CONVERGED, st)
        active &= ~conv
        lnK = np.where(active[:, None], new, lnK)
        # DEM acceleration every fifth step (Michelsen 1982b Eq. 27)
        if it % 5 == 4 and len(hist) >= 2:
            d1_, d0_ = hist[-1], hist[-2]
            lam = (d1_ * d0_).sum(-1) / np.maximum((d0_ * d0_).sum(-1), 1e-300)
            ok = active & (lam > 0.0) & (lam < 0.99)
            lam = np.where(ok, lam, 0.0)
            lnK = np.where(ok[:, None], lnK + d1_ * (lam / (1.0 - lam))[:, None], lnK)
        if not active.any():
            break
        # trivial solution (K → 1) or collapse to one phase: stop
        triv = active & (np.max(np.abs(lnK), axis=-1) < 1e-6)
        active &= ~triv
        st = np.where(triv, CONVERGED, st)
        if it == 25 and active.any() and second_order:
            # successive substitution is slow here (near-critical): go second
            # order - Newton on ln K; the Gibbs-energy minimisation where Newton
            # does not reach the tolerance
            for k in np.flatnonzero(active):
                lnK[k] = _flash_newton(Ti[k], Pi[k], zi[k], lnK[k], p, tol)
                if np.max(np.abs(_flash_residual(Ti[k], Pi[k], zi[k], lnK[k], p))) > 1e-9:
                    lnK[k] = _flash_gibbs_min(Ti[k], Pi[k], zi[k], lnK[k], p)
    # near a critical point successive substitution (and the quasi-Newton
    # fallback) can stall short of the tolerance: finish with Newton steps
    # on ln K (second order; Michelsen & Mollerup 2007, ch. 10)
    for k in np.flatnonzero(st != CONVERGED):
        lnK[k] = _flash_newton(Ti[k], Pi[k], zi[k], lnK[k], p, tol)
    # final compositions and residuals
    b_i, braw, xi, yi, new = _phases_from_K(zi, lnK, p, Ti, Pi, clip=0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(zi > 0, np.log(yi) - np.log(xi) - new, 0.0)  # ln f^V - ln f^L
    res = np.max(np.abs(r), axis=-1)
    trivial = np.max(np.abs(lnK), axis=-1) < 1e-6
    single = trivial | (b_i <= 0.0) | (b_i >= 1.0)
    ok = (res < 1e-8) | single
    st = np.where(ok, CONVERGED, MAXITER)
    is2 = ~single
    beta[idx] = np.where(is2, b_i, np.where(b_i >= 1.0, 1.0, 0.0))
    # a single-phase outcome after an unstable test is unusual: keep feed
    x[idx] = np.where(is2[:, None], xi, zi)
    y[idx] = np.where(is2[:, None], yi, zi)
    two[idx] = is2
    status[idx] = st
    resid[idx] = np.where(is2, res, 0.0)
    lnK_out[idx] = np.where(is2[:, None], lnK, 0.0)
    if raise_on_fail and np.any(status != CONVERGED):
        k = np.flatnonzero(status != CONVERGED)[0]
        raise ConvergenceError("flash_TP", "equal fugacity not reached",
                               dict(T=float(T[k]), P=float(P[k]), beta=float(beta[k]),
                                    x=x[k].tolist(), y=y[k].tolist()), float(resid[k]))
    iterations = np.zeros(n, dtype=np.int64)
    iterations[idx] = n_iter
    return dict(beta=beta, x=x, y=y, two_phase=two, status=status, residual=resid, lnK=lnK_out,
                iterations=iterations)


def _flash_warm(T, P, z, p, lnK, tol, maxiter):
    """Successive substitution from given ln K (no stability test).

    Returns the flash result if every state ends two-phase with equal
    fugacities, else None (the caller then runs the full flash)."""
    T = np.atleast_1d(np.asarray(T, dtype=float))
    P = np.atleast_1d(np.asarray(P, dtype=float))
    n = T.shape[0]
    z = np.broadcast_to(np.asarray(z, dtype=float), (n, p.Tc.shape[0]))
    lnK = np.array(np.broadcast_to(lnK, z.shape), dtype=float)
    hist = []
    for it in range(min(maxiter, 60)):
        b, braw, x, y, new = _phases_from_K(z, lnK, p, T, P, clip=0.0)
        if np.any((braw <= 0.0) | (braw >= 1.0)):
            return None
        delta = np.where(z > 0, new - lnK, 0.0)
        lnK = new
        hist.append(delta)
        if np.max(np.abs(delta)) < tol:
            K = np.exp(lnK)
            b, braw = rachford_rice(z, K)
            if np.any((braw <= 0.0) | (braw >= 1.0)) or np.max(np.abs(lnK)) < 1e-6:
                return None
            bb = braw[:, None]
            x = z / (1.0 + bb * (K - 1.0))
            y = K * x
            x = x / x.sum(-1, keepdims=True)
            y = y / y.sum(-1, keepdims=True)
            return dict(beta=braw, x=x, y=y, two_phase=np.ones(n, dtype=bool),
                        status=np.zeros(n, dtype=np.int8), residual=np.max(np.abs(delta), axis=-1),
                        lnK=lnK, iterations=np.full(n, it + 1, dtype=np.int64))
        if it % 5 == 4 and len(hist) >= 2:
            d1_, d0_ = hist[-1], hist[-2]
            lam = (d1_ * d0_).sum(-1) / np.maximum((d0_ * d0_).sum(-1), 1e-300)
            ok = (lam > 0.0) & (lam < 0.99)
            with np.errstate(invalid="ignore", over="ignore"):
                lnK = np.where(ok[:, None], lnK + d1_ * (np.where(ok, lam, 0.0) / (1.0 - np.where(ok, lam, 0.0)))[:, None], lnK)
    return None
