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

The loops run compiled, one state at a time
(:mod:`eosfill.equilibrium.flash_kernels`); the Gibbs-energy minimisation
(scipy L-BFGS-B) runs here for the few states that need it.

Every iteration has a bound; a batch reports a status per element, a
scalar call raises :class:`~eosfill.errors.ConvergenceError` with the last
iterate.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import ConvergenceError
from eosfill.equilibrium.kvalues import CONVERGED, MAXITER, rachford_rice, lnphi_root

_PARALLEL_MIN = 8    # below this many states a batch runs serially (thread start-up costs more)


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


def flash_TP(T, P, z, p, tol=1e-11, maxiter=400, raise_on_fail=True, lnK_start=None,
             second_order=True):
    """Isothermal two-phase flash of mixtures at (T, P), vectorised over states.

    Stability test first (Michelsen 1982); unstable feeds are flashed by
    accelerated successive substitution, Newton on ln K, and the
    Gibbs-energy minimisation where Newton falls short.  Every state runs
    the compiled one-state flash :func:`eosfill.equilibrium.flash_kernels.flash_TP_one`
    (serial, or in parallel for batches); the minimisation (scipy) runs in
    Python for the few states that need it, which then resume in the kernel.

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
    stability test is then skipped for a first try
    (:func:`eosfill.equilibrium.flash_kernels.flash_warm_one`) and the full
    flash runs only for the states where the warm-started flash does not
    end with two phases.
    """
    from eosfill.equilibrium import flash_kernels as fk

    T = np.array(np.ravel(T), dtype=np.float64)
    P = np.array(np.ravel(P), dtype=np.float64)
    n = T.shape[0]
    nc = p.Tc.shape[0]
    z = np.array(np.broadcast_to(np.asarray(z, dtype=float), (n, nc)), dtype=np.float64, order="C")
    m = p.kernel_model
    beta = np.ones(n)
    x = np.empty((n, nc))
    y = np.empty((n, nc))
    lnK = np.zeros((n, nc))
    two = np.zeros(n, dtype=np.bool_)
    status = np.zeros(n, dtype=np.int64)
    resid = np.zeros(n)
    iters = np.zeros(n, dtype=np.int64)
    todo = None
    if lnK_start is not None:
        lnK[:] = np.broadcast_to(np.asarray(lnK_start, dtype=float), (n, nc))
        ok = np.zeros(n, dtype=np.bool_)
        loop = fk.flash_warm_parallel if n >= _PARALLEL_MIN else fk.flash_warm_serial
        loop(T, P, z, m, lnK, float(tol), int(maxiter), ok, beta, x, y, resid, iters)
        two[:] = ok
        todo = np.flatnonzero(~ok)
        if todo.size == 0:
            return _flash_result(beta, x, y, two, status, resid, lnK, iters, T, P, raise_on_fail)
    _flash_rows(T, P, z, p, tol, maxiter, second_order, todo, beta, x, y, lnK, two, status, resid, iters)
    return _flash_result(beta, x, y, two, status, resid, lnK, iters, T, P, raise_on_fail)


def _flash_rows(T, P, z, p, tol, maxiter, second_order, rows, beta, x, y, lnK, two, status, resid, iters,
                tm=None):
    """The full compiled flash for ``rows`` (None: all) into the output arrays;
    the Gibbs-energy minimisation for the rows the kernel hands back.
    ``tm`` (n,) given: also the multi-trial stability test of each result
    (:func:`eosfill.equilibrium.flash_kernels.flash_tested_serial`), its
    lowest tm* into ``tm``."""
    from eosfill.equilibrium import flash_kernels as fk

    m = p.kernel_model
    Pc = np.array(p.Pc, dtype=np.float64)
    omega = np.array(p.omega, dtype=np.float64)
    if rows is None:
        sub = (T, P, z, beta, x, y, lnK, two, status, resid, iters)
    else:
        sub = tuple(a[rows] for a in (T, P, z, beta, x, y, lnK, two, status, resid, iters))
    Ts, Ps, zs, bs, xs, ys, ks, twos, sts, rs, its = sub
    par = Ts.shape[0] >= _PARALLEL_MIN
    if tm is None:
        loop = fk.flash_TP_parallel if par else fk.flash_TP_serial
        loop(Ts, Ps, zs, m, Pc, omega, float(tol), int(maxiter), bool(second_order), bs, xs, ys, ks, twos, sts, rs,
             its)
    else:
        loop = fk.flash_tested_parallel if par else fk.flash_tested_serial
        loop(Ts, Ps, zs, m, Pc, omega, float(tol), int(maxiter), bs, xs, ys, ks, twos, sts, rs, its, tm)
    g = np.flatnonzero(sts == fk.NEED_GIBBS)
    if g.size:
        # Newton at step 25 fell short: the Gibbs-energy minimisation, then
        # the substitution resumes from its result (compiled)
        for k in g:
            ks[k] = _flash_gibbs_min(float(Ts[k]), float(Ps[k]), zs[k], ks[k], p)
        gb, gx, gy, gk, gt, gs, gr, gi = (a[g] for a in (bs, xs, ys, ks, twos, sts, rs, its))
        fk.flash_resume_serial(Ts[g], Ps[g], zs[g], m, float(tol), int(maxiter), gb, gx, gy, gk, gt, gs, gr, gi)
        for a, v in zip((bs, xs, ys, ks, twos, sts, rs, its), (gb, gx, gy, gk, gt, gs, gr, gi)):
            a[g] = v
        if tm is not None:
            # the multi-trial test (M1) of these results, as in flash_tested_serial
            from eosfill.equilibrium import stability_kernels as sk

            ref = np.ascontiguousarray(np.where((gt & (gb < 0.5))[:, None], gx, gy))
            tg = np.empty(g.size)
            extra = np.ascontiguousarray(np.stack([gy, gx], axis=1))
            sk.stability_multi_serial(Ts[g], Ps[g], ref, m, Pc, omega, extra, 1e-10, 400, True, tg,
                                      np.empty_like(ref))
            tm[g] = tg
    if rows is not None:
        for a, v in zip((beta, x, y, lnK, two, status, resid, iters), (bs, xs, ys, ks, twos, sts, rs, its)):
            a[rows] = v


def _flash_result(beta, x, y, two, status, resid, lnK, iters, T, P, raise_on_fail):
    """The flash's result dict; raises for the first failed state if asked."""
    status = np.where(status == CONVERGED, CONVERGED, MAXITER).astype(np.int8)
    if raise_on_fail and np.any(status != CONVERGED):
        k = np.flatnonzero(status != CONVERGED)[0]
        raise ConvergenceError("flash_TP", "equal fugacity not reached",
                               dict(T=float(T[k]), P=float(P[k]), beta=float(beta[k]),
                                    x=x[k].tolist(), y=y[k].tolist()), float(resid[k]))
    return dict(beta=beta, x=x, y=y, two_phase=two, status=status, residual=resid, lnK=lnK,
                iterations=iters)
