"""Multiphase isothermal flash: as many phases as the tangent-plane test asks for.

Method (Michelsen, "The isothermal flash problem. Part I. Stability" and
"Part II. Phase-split calculation", Fluid Phase Equilib. 9 (1982) 1-19 and
21-40; the multiphase phase-fraction problem of Michelsen, "Calculation of
multiphase equilibrium", Comput. Chem. Eng. 18 (1994) 545-550):

1. Stability of the feed (or of one phase of a converged split: in
   equilibrium every phase has the same fugacities, so testing one tests the
   result).  Trials: Wilson's vapour-like and liquid-like estimates and one
   near-pure trial per component (needed for liquid-liquid splits; Michelsen
   & Mollerup 2007, ch. 9).  Successive substitution on

       ln W_i ← d_i - ln φ_i(w),   d_i = ln x_i + ln φ_i(x),   w = W/ΣW     (M1)

   and tm* = 1 - Σ W_i at a stationary point; tm* < 0 means unstable.
2. While unstable: add the trial's stationary point w as a new phase and
   solve the np-phase split by successive substitution on ln φ_ik, with the
   phase fractions at fixed φ from the convex minimisation (Michelsen 1994,
   Eqs. 4-8)

       Q(β) = Σ_k β_k - Σ_i z_i ln E_i,   E_i = Σ_k β_k / φ_ik,   β_k ≥ 0  (M2)
       x_ik = z_i / (φ_ik E_i)                                            (M3)

   by Newton's method with the bound β_k ≥ 0 (a phase whose β reaches 0 is
   removed).  At the solution Σ_i x_ik = 1 in every present phase and
   x_ik φ_ik equal across phases (equal fugacities).
3. Stop when the result is stable or the phase count reaches ``max_phases``.

Every phase is evaluated on the root of lowest Gibbs energy at its own
composition.  A result is returned with its status (codes of
:mod:`eosfill.errors`), iterations and residual (max over components and
phases of |ln f_ik - ln f_i,ref| and of the material balance).
"""
from __future__ import annotations

import numpy as np

from eosfill.equilibrium.solvers import lnphi_root
from eosfill.errors import CONVERGED, NOT_CONVERGED

#: tm* below this is instability (dimensionless, per mole of trial phase)
TM_TOL = -1e-9
_RESID_TOL = 1e-9    # equal-fugacity and material-balance tolerance of a converged split


def stability_multi(T, P, x, p, extra_trials=None, tol=1e-10, maxiter=400):
    """Tangent-plane test of one composition x at (T, P) with many trials (M1).

    Returns (tm_min, w_min): the lowest tm* found and its stationary point
    (trial composition); tm_min ≥ TM_TOL means stable.  One row of
    :func:`stability_multi_batch`.
    """
    extra = None if extra_trials is None else np.asarray(extra_trials, dtype=float)[None, :, :]
    tm, w = stability_multi_batch(np.array([T], dtype=float), np.array([P], dtype=float),
                                  np.asarray(x, dtype=float)[None, :], p, extra, tol, maxiter)
    return float(tm[0]), w[0]


def stability_multi_batch(T, P, X, p, extra=None, tol=1e-10, maxiter=400, detect_only=False):
    """(M1) for n compositions X (n, nc) at (T, P) (n,), every row by the
    compiled one-state test :func:`eosfill.equilibrium.stability_kernels.stability_multi_one`
    (trials and stopping tests described there).  Trials per row: Wilson
    vapour- and liquid-like, one near-pure trial per component (mole
    fraction 0.999, the rest shared), and ``extra`` (n, m, nc) if given.
    Returns tm_min (n,) and its stationary point (n, nc).  ``detect_only``:
    a row stops as soon as one trial shows tm* < -1e-6 on its way (enough to
    know it is unstable; the point is then not a converged stationary point)."""
    from eosfill.equilibrium import stability_kernels as sk

    T = np.array(np.ravel(T), dtype=np.float64)
    P = np.array(np.ravel(P), dtype=np.float64)
    X = np.array(X, dtype=np.float64, order="C")
    n, nc = X.shape
    ex = np.zeros((n, 0, nc)) if extra is None else np.array(np.broadcast_to(extra, (n,) + np.shape(extra)[-2:]),
                                                              dtype=np.float64, order="C")
    tm = np.empty(n)
    w = np.empty((n, nc))
    loop = sk.stability_multi_parallel if n >= 16 else sk.stability_multi_serial
    loop(T, P, X, p.kernel_model, np.array(p.Pc, dtype=np.float64), np.array(p.omega, dtype=np.float64),
         ex, float(tol), int(maxiter), bool(detect_only), tm, w)
    return tm, w


def _solve_beta(z, phi_inv, beta, maxiter=100):
    """Phase fractions minimising Q of (M2) at fixed φ (Newton, β ≥ 0).

    phi_inv: (np, nc) 1/φ_ik; returns β (np,)."""
    npn = beta.size
    beta = np.maximum(beta, 0.0)
    present = z > 0
    z, phi_inv = z[present], phi_inv[:, present]   # absent components take no part in (M2)
    for _ in range(maxiter):
        E = beta @ phi_inv
        g = 1.0 - phi_inv @ (z / E)
        H = (phi_inv * (z / E**2)) @ phi_inv.T
        free = (beta > 0.0) | (g < 0.0)
        step = np.zeros(npn)
        Hf = H[np.ix_(free, free)] + 1e-14 * np.eye(free.sum())
        try:
            step[free] = np.linalg.solve(Hf, -g[free])
        except np.linalg.LinAlgError:
            step[free] = -g[free]
        # longest step keeping β ≥ 0 (a phase reaching 0 leaves)
        with np.errstate(divide="ignore", invalid="ignore"):
            lim = np.where(step < 0.0, -beta / step, np.inf)
        t = min(1.0, float(np.min(lim)))
        Q0 = beta.sum() - z @ np.log(E)
        for _ in range(30):
            nb = np.maximum(beta + t * step, 0.0)
            En = nb @ phi_inv
            if np.all(En > 0):
                Q1 = nb.sum() - z @ np.log(En)
                if Q1 <= Q0 + 1e-15 * abs(Q0):
                    break
            t *= 0.5
        beta = nb
        if np.max(np.abs(t * step)) < 1e-15 and np.max(np.abs(np.where(beta > 0, g, 0.0))) < 1e-13:
            break
    return beta


def _split(T, P, z, p, X, beta, tol, maxiter):
    """Successive substitution of the np-phase split (M2)-(M3) from phase
    compositions X (np, nc) and fractions β.  Returns X, β, iterations, residual."""
    pos = z > 0
    npn = X.shape[0]
    it = 0
    lnphi = None
    for it in range(1, maxiter + 1):
        lnphi, _ = lnphi_root(np.full(npn, T), np.full(npn, P), X, p)
        lnphi = np.where(pos, lnphi, 0.0)
        phi_inv = np.where(pos, np.exp(-lnphi), 0.0)
        beta = _solve_beta(z, phi_inv, beta)
        keep = beta > 1e-14
        if not np.all(keep):
            X, beta, phi_inv, lnphi = X[keep], beta[keep], phi_inv[keep], lnphi[keep]
            npn = X.shape[0]
            if npn == 1:
                return X, np.ones(1), it, 0.0
        E = beta @ phi_inv
        Xn = np.where(pos, z * phi_inv / np.where(pos, E, 1.0), 0.0)
        Xn = Xn / Xn.sum(axis=-1, keepdims=True)
        change = np.max(np.abs(Xn - X))
        X = Xn
        if change < tol:
            break
    return X, beta, it, _residual(T, P, z, p, X, beta)


def _residual(T, P, z, p, X, beta):
    pos = z > 0
    npn = X.shape[0]
    lnphi, _ = lnphi_root(np.full(npn, T), np.full(npn, P), X, p)
    with np.errstate(divide="ignore", invalid="ignore"):
        lnf = np.where(pos, np.log(np.where(pos, X, 1.0)) + lnphi, 0.0)
    r_f = np.max(np.abs(lnf - lnf[0])) if npn > 1 else 0.0
    r_m = np.max(np.abs(beta @ X - z))
    return float(max(r_f, r_m))


def _merge_duplicates(X, beta):
    """Phases that converged onto the same composition are one phase."""
    keepX, keepb = [], []
    for xk, bk in zip(X, beta):
        for j, xj in enumerate(keepX):
            if np.max(np.abs(xj - xk)) < 1e-7:
                keepb[j] += bk
                break
        else:
            keepX.append(xk.copy())
            keepb.append(bk)
    return np.array(keepX), np.array(keepb)


def flash_multiphase_one(T, P, z, p, max_phases=3, tol=1e-12, maxiter=3000, start=None):
    """Multiphase flash of one state (steps 1-3 of the module docstring).

    ``start``: optional (X, β) of a two-phase result to begin from.
    Returns dict: X (np, nc), beta (np,), status, iterations, residual, tm
    (the final stability test's lowest tm*).
    """
    z = np.asarray(z, dtype=float)
    if start is None:
        tm, w = stability_multi(T, P, z, p)
        if tm >= TM_TOL:
            return dict(X=z[None, :].copy(), beta=np.ones(1), status=CONVERGED, iterations=0, residual=0.0, tm=tm)
        X = np.array([z, w])
        beta = np.array([1.0 - 1e-3, 1e-3])
    else:
        X, beta = (np.array(a, dtype=float) for a in start)
    iterations = 0
    tm = 0.0
    for _ in range(max_phases + 2):
        X, beta, it, res = _split(T, P, z, p, X, beta, tol, maxiter)
        X, beta = _merge_duplicates(X, beta)
        iterations += it
        ref = int(np.argmax(beta))
        tm, w = stability_multi(T, P, X[ref], p, extra_trials=list(X))
        # a stationary point onto an existing phase is not a new phase
        if tm >= TM_TOL or np.min(np.max(np.abs(X - w), axis=-1)) < 1e-5:
            tm = max(tm, 0.0) if tm >= TM_TOL else tm
            break
        if X.shape[0] >= max_phases:
            break
        X = np.vstack([X, w])
        beta = np.append(beta * (1.0 - 1e-3), 1e-3)
    res = _residual(T, P, z, p, X, beta) if X.shape[0] > 1 else float(np.max(np.abs(X[0] - z)))
    status = CONVERGED if (res < _RESID_TOL and (tm >= TM_TOL or X.shape[0] >= max_phases)) else NOT_CONVERGED
    order = np.argsort([-_volume(T, P, xk, p) for xk in X])  # least dense first
    return dict(X=X[order], beta=beta[order], status=status, iterations=iterations, residual=res, tm=tm)


def _volume(T, P, x, p):
    from eosfill.model import cubic

    return float(cubic.solve_volume_from_TP(np.array([T]), np.array([P]), x[None, :], p)["v"][0])


def flash_multiphase_TP(T, P, z, p, max_phases=3):
    """Multiphase flash of a batch: the two-phase flash of
    :func:`eosfill.equilibrium.flash_TP` for every row, then each row's result
    tested for stability (multi-trial, (M1)); rows where it is unstable, or
    where the feed was unstable but the two-phase flash collapsed to one
    phase, are solved by :func:`flash_multiphase_one`.

    Returns
    -------
    dict: n_phases (n,), beta (n, max_phases) (0 for absent phases), X (n,
    max_phases, nc) (feed for absent phases), status (n,), iterations (n,),
    residual (n,).  Phases are ordered least dense first.
    """
    T = np.atleast_1d(np.asarray(T, dtype=float))
    P = np.atleast_1d(np.asarray(P, dtype=float))
    n = T.size
    nc = p.Tc.shape[0]
    z = np.broadcast_to(np.asarray(z, dtype=float), (n, nc))
    # the compiled two-phase flash and the multi-trial test (M1) of its
    # result's more abundant phase (any phase of a converged split would
    # do), the phases as extra trials, in one pass
    from eosfill.equilibrium.flash import _flash_result, _flash_rows

    zc = np.array(z, dtype=np.float64, order="C")
    out = dict(beta=np.ones(n), x=np.empty((n, nc)), y=np.empty((n, nc)), lnK=np.zeros((n, nc)),
               two=np.zeros(n, dtype=np.bool_), status=np.zeros(n, dtype=np.int64), resid=np.zeros(n),
               iters=np.zeros(n, dtype=np.int64))
    tm_all = np.empty(n)
    _flash_rows(T, P, zc, p, 1e-11, 400, True, None, *out.values(), tm=tm_all)
    fl = _flash_result(out["beta"], out["x"], out["y"], out["two"], out["status"], out["resid"], out["lnK"],
                       out["iters"], T, P, False)
    nph = np.where(fl["two_phase"], 2, 1)
    beta = np.zeros((n, max_phases))
    X = np.repeat(z[:, None, :], max_phases, axis=1).copy()
    beta[:, 0] = np.where(fl["two_phase"], fl["beta"], 1.0)
    beta[:, 1] = np.where(fl["two_phase"], 1.0 - fl["beta"], 0.0)
    X[:, 0] = np.where(fl["two_phase"][:, None], fl["y"], z)
    X[:, 1] = np.where(fl["two_phase"][:, None], fl["x"], z)
    status = np.asarray(fl["status"]).astype(np.int8).copy()
    status = np.where(status == 0, CONVERGED, NOT_CONVERGED).astype(np.int8)
    iters = np.asarray(fl.get("iterations", np.zeros(n)), dtype=np.int64).copy()
    resid = np.asarray(fl["residual"], dtype=float).copy()
    for i in np.flatnonzero((tm_all < TM_TOL) | (status != CONVERGED)):
        start = (X[i, :2], beta[i, :2]) if nph[i] == 2 else None
        r = flash_multiphase_one(T[i], P[i], z[i], p, max_phases=max_phases, start=start)
        k = r["X"].shape[0]
        nph[i] = k
        X[i] = z[i]
        beta[i] = 0.0
        X[i, :k] = r["X"]
        beta[i, :k] = r["beta"]
        status[i] = r["status"]
        iters[i] += r["iterations"]
        resid[i] = r["residual"]
    return dict(n_phases=nph, beta=beta, X=X, status=status, iterations=iters, residual=resid)


def unstable(T, P, z, p):
    """Per row: is the single phase of composition z at (T, P) unstable
    (multi-trial tangent-plane test (M1), tm* < TM_TOL)?"""
    T = np.atleast_1d(np.asarray(T, dtype=float))
    P = np.atleast_1d(np.asarray(P, dtype=float))
    z = np.broadcast_to(np.asarray(z, dtype=float), (T.size, p.Tc.shape[0]))
    return stability_multi_batch(T, P, np.ascontiguousarray(z), p, detect_only=True)[0] < TM_TOL
