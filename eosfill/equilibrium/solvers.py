"""Vapour-liquid equilibrium from the cubic: saturation, stability, flash.

Methods and sources
-------------------
* Wilson K-values (Wilson, G. M., "A modified Redlich-Kwong equation of
  state, application to general physical data calculations", AIChE 65th
  National Meeting, Cleveland, 1968, paper 15C):

      ln K_i = ln(Pc,i/P) + 5.373 (1 + ω_i)(1 - Tc,i/T)                   (E1)

* Rachford-Rice equation (Rachford & Rice, J. Pet. Technol. 4 (1952) 19),
  solved on the bracket of Whitson & Michelsen, Fluid Phase Equilib. 53
  (1989) 51-71, by safeguarded Newton (bisection when Newton leaves the
  bracket):

      Σ_i z_i (K_i - 1) / (1 + β (K_i - 1)) = 0                          (E2)

* Tangent-plane stability test (Michelsen, Fluid Phase Equilib. 9 (1982)
  1-19, Eqs. 20-23): with d_i = ln z_i + ln φ_i(z), successive substitution

      ln W_i ← d_i - ln φ_i(w),  w = W/ΣW                                (E3)

  from a vapour-like (W = z K) and a liquid-like (W = z/K) trial; the
  modified tangent-plane distance at a stationary point is
  tm* = 1 - Σ W_i, and the feed is unstable if tm* < 0 for a non-trivial
  stationary point.

* Two-phase TP flash (Michelsen, Fluid Phase Equilib. 9 (1982) 21-40):
  successive substitution K_i = φ_i^L(x)/φ_i^V(y) with the Rachford-Rice
  solution, accelerated by the dominant-eigenvalue method (DEM, ibid.
  Eq. 27) every fifth step, switched to a second-order method when
  successive substitution stalls (near a critical point): Newton's method
  on ln K (Jacobian by forward differences), and where that falls short,
  minimisation of the Gibbs energy G/RT = Σ n_i^V ln f_i^V + Σ n_i^L ln f_i^L
  over the vapour mole numbers with its analytic gradient
  ∂(G/RT)/∂n_i^V = ln f_i^V - ln f_i^L (Michelsen & Mollerup 2007, ch. 10),
  by scipy's L-BFGS-B quasi-Newton method.

* Pure-fluid saturation: equal fugacity of the two roots of the cubic,
  Newton on ln P with d(ln φ^L - ln φ^V)/d ln P = Z^L - Z^V (exact), inside a
  bracket kept from the roots' existence; saturation temperature by Newton
  on T with ∂ ln φ/∂T|_P = -H^R/(R T²).

Every iteration has a bound; a batch reports a status per element, a
scalar call raises :class:`~eosfill.errors.ConvergenceError` with the last
iterate.
"""
from __future__ import annotations

import numpy as np

from eosfill.model import cubic
from eosfill.constants import R
from eosfill.errors import ConvergenceError

# status codes per element
CONVERGED, MAXITER, NO_ROOT = 0, 1, 2


# --------------------------------------------------------------------------
# Wilson K-values and Rachford-Rice
# --------------------------------------------------------------------------
def wilson_lnK(T, P, Tc, Pc, omega):
    """ln K_i of Wilson (1968), (E1); shape (..., nc)."""
    T = np.asarray(T, dtype=float)[..., None]
    P = np.asarray(P, dtype=float)[..., None]
    return np.log(Pc / P) + 5.373 * (1.0 + omega) * (1.0 - Tc / T)


def rachford_rice(z, K, tol=1e-13, maxiter=100, full_output=False):
    """Vapour fraction β solving (E2); vectorised over leading dimensions.

    Returns β clipped to [0, 1] (0: RR(0) ≤ 0, all liquid; 1: RR(1) ≥ 0,
    all vapour) and the unclipped solution inside the Whitson-Michelsen
    bracket (may lie outside [0, 1], a negative flash).  Computed by the
    compiled kernel :func:`eosfill.equilibrium.kernels.rachford_rice_one`
    (stopping test there).
    """
    from eosfill.equilibrium import kernels as ek

    z = np.asarray(z, dtype=float)
    K = np.asarray(K, dtype=float)
    shape = np.broadcast_shapes(z.shape, K.shape)
    nc = shape[-1]
    zf = np.array(np.broadcast_to(z, shape).reshape(-1, nc), dtype=np.float64, order="C")
    Kf = np.array(np.broadcast_to(K, shape).reshape(-1, nc), dtype=np.float64, order="C")
    beta = np.empty(zf.shape[0])
    status = np.empty(zf.shape[0], dtype=np.int64)
    loop = ek.rachford_rice_parallel if zf.shape[0] >= 4096 else ek.rachford_rice_serial
    loop(zf, Kf, float(tol), int(maxiter), beta, status)
    beta = beta.reshape(shape[:-1])
    if full_output:
        return np.clip(beta, 0.0, 1.0), beta, _rachford_rice_status(np.broadcast_to(z, shape),
                                                                      np.broadcast_to(K, shape), beta)
    return np.clip(beta, 0.0, 1.0), beta



def _rachford_rice_status(z, K, beta):
    """Per-element outcome of (E2) (``full_output``): status CONVERGED where
    |f(β)| ≤ 1e-10 Σ z|K - 1| or (E2) has no root (every K on one side of 1:
    β is 0 or 1 by definition), else NOT_CONVERGED; residual |f(β)|."""
    from eosfill.errors import CONVERGED as OK, NOT_CONVERGED as BAD

    Km1 = K - 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        f = (z * Km1 / (1.0 + beta[..., None] * Km1)).sum(axis=-1)
    scale = (z * np.abs(Km1)).sum(axis=-1)
    no_root = (K.min(axis=-1) >= 1.0) | (K.max(axis=-1) <= 1.0)
    ok = no_root | (np.abs(f) <= 1e-10 * np.maximum(scale, 1e-300))
    return dict(status=np.where(ok, OK, BAD).astype(np.int8), residual=np.where(no_root, 0.0, np.abs(f)))


# --------------------------------------------------------------------------
# fugacity coefficients with a chosen root
# --------------------------------------------------------------------------
def lnphi_root(T, P, x, p, which="stable"):
    """ln φ_i (..., nc) at T, P, composition x with the root ``which``, and
    ``{"Z": Z}`` (the root taken).

    Computed by the compiled kernel :func:`eosfill.model.properties.ln_phi_TP_one`
    (one state or a batch: the same code)."""
    from eosfill.model import properties as kp

    lnphi, Z = kp.ln_phi_TP(p.kernel_model, T, P, x, which)
    return lnphi, {"Z": Z}


# --------------------------------------------------------------------------
# pure-fluid saturation
# --------------------------------------------------------------------------
def _pure_lnphi(Z, A, B, d1, d2):
    return cubic.residual_g_RT(Z, A, B, d1, d2)


def saturation_pressure(T, p, tol=1e-12, maxiter=100, raise_on_fail=True):
    """Vapour pressure of a pure fluid from its cubic, vectorised.

    Parameters
    ----------
    T : array_like
        Temperature [K]; must be below the model's critical temperature.
    p : MixtureParameters of one component.

    Returns
    -------
    dict with P [Pa], Z_L, Z_V, v_L, v_V [m³/mol], status.
    """
    T = np.asarray(T, dtype=float)
    Tc, Pc, omega = p.Tc[0], p.Pc[0], p.omega[0]
    d1, d2 = p.model.delta1, p.model.delta2
    x = np.ones(1)
    a, = cubic.mixture_a(T, x, p, derivatives=0)
    b = p.b[0]
    # start from Wilson's estimate of ln(Psat/Pc), (E1) with K = 1
    lnP = np.log(Pc) + 5.373 * (1.0 + omega) * (1.0 - Tc / T)
    lnP = np.minimum(lnP, np.log(Pc))
    lo = np.full(T.shape, -np.inf)
    hi = np.full(T.shape, np.log(Pc) + 1e-9)
    status = np.full(T.shape, MAXITER, dtype=np.int8)
    ZL = ZV = np.full(T.shape, np.nan)
    for _ in range(maxiter):
        P = np.exp(lnP)
        A, B = cubic.dimensionless_AB(a, b, T, P)
        roots = cubic.cubic_roots(*cubic.cubic_coefficients(A, B, d1, d2))
        valid = np.isfinite(roots) & (roots > B[..., None])
        nvalid = valid.sum(axis=-1)
        zl = np.where(valid, roots, np.inf).min(axis=-1)
        zv = np.where(valid, roots, -np.inf).max(axis=-1)
        two = (nvalid >= 2) & (zv - zl > 1e-10 * zv)
        with np.errstate(invalid="ignore", divide="ignore"):
            f = np.where(two, _pure_lnphi(np.where(two, zl, 1.0), A, B, d1, d2)
                         - _pure_lnphi(np.where(two, zv, 2.0), A, B, d1, d2), 0.0)
        # one root only: which side of the loop are we on?  Π > 1 liquid-like
        v1 = zv * R * T / P
        _, a_T = cubic.mixture_a(T, x, p, derivatives=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            Pi = cubic.phase_identification_parameter(T, v1, a, a_T, b, p.model)
        only_vap = (~two) & (Pi <= 1.0)
        only_liq = (~two) & (Pi > 1.0)
        # f < 0: liquid more stable, P above Psat
        lo = np.where(only_vap | (two & (f > 0.0)), lnP, lo)
        hi = np.where(only_liq | (two & (f < 0.0)), lnP, hi)
        with np.errstate(invalid="ignore", divide="ignore"):
            step = np.where(two, f / (zl - zv), 0.0)
        new = lnP - step
        conv = two & (np.abs(f) < tol)
        ZL = np.where(conv, zl, ZL)
        ZV = np.where(conv, zv, ZV)
        status = np.where(conv, CONVERGED, status)
        bad = (~two) | (new <= lo) | (new >= hi) | ~np.isfinite(new)
        mid = np.where(np.isfinite(lo), 0.5 * (lo + hi), hi - 2.0)
        new = np.where(bad, mid, new)
        lnP = np.where(conv, lnP, new)
        if np.all(status == CONVERGED):
            break
    P = np.exp(lnP)
    if raise_on_fail and np.any(status != CONVERGED):
        i = np.flatnonzero(np.atleast_1d(status) != CONVERGED)[0]
        raise ConvergenceError("saturation_pressure", "no equal-fugacity pressure found",
                               dict(T=float(np.atleast_1d(T)[i]), P=float(np.atleast_1d(P)[i])))
    return dict(P=P, Z_L=ZL, Z_V=ZV, v_L=ZL * R * T / P, v_V=ZV * R * T / P, status=status)


def saturation_temperature(P, p, tol=1e-12, maxiter=100, raise_on_fail=True):
    """Saturation temperature of a pure fluid at P < Pc, vectorised.

    Newton on T with d(ln φ^L - ln φ^V)/dT = (H^R_V - H^R_L)/(R T²),
    inside a bracket kept from the roots' existence.
    """
    P = np.asarray(P, dtype=float)
    Tc, Pc, omega = p.Tc[0], p.Pc[0], p.omega[0]
    d1, d2 = p.model.delta1, p.model.delta2
    x = np.ones(1)
    b = p.b[0]
    # Wilson estimate inverted
    T = Tc / (1.0 - np.log(P / Pc) / (5.373 * (1.0 + omega)))
    T = np.minimum(T, Tc * (1 - 1e-9))
    lo = np.full(P.shape, 0.0)
    hi = np.full(P.shape, Tc)
    status = np.full(P.shape, MAXITER, dtype=np.int8)
    for _ in range(maxiter):
        a, a_T = cubic.mixture_a(T, x, p, derivatives=1)
        A, B = cubic.dimensionless_AB(a, b, T, P)
        roots = cubic.cubic_roots(*cubic.cubic_coefficients(A, B, d1, d2))
        valid = np.isfinite(roots) & (roots > B[..., None])
        zl = np.where(valid, roots, np.inf).min(axis=-1)
        zv = np.where(valid, roots, -np.inf).max(axis=-1)
        two = (valid.sum(axis=-1) >= 2) & (zv - zl > 1e-10 * zv)
        with np.errstate(invalid="ignore", divide="ignore"):
            zl_ = np.where(two, zl, 1.0)
            zv_ = np.where(two, zv, 2.0)
            f = np.where(two, _pure_lnphi(zl_, A, B, d1, d2) - _pure_lnphi(zv_, A, B, d1, d2), 0.0)
            hl = cubic.residual_h(T, zl_, a, a_T, b, B, p.model)
            hv = cubic.residual_h(T, zv_, a, a_T, b, B, p.model)
            df = (hv - hl) / (R * T**2)
            Pi = cubic.phase_identification_parameter(T, zv * R * T / P, a, a_T, b, p.model)
        only_vap = (~two) & (Pi <= 1.0)
        only_liq = (~two) & (Pi > 1.0)
        # f > 0: vapour more stable, T above Tsat
        hi = np.where(only_vap | (two & (f > 0.0)), T, hi)
        lo = np.where(only_liq | (two & (f < 0.0)), T, lo)
        with np.errstate(invalid="ignore", divide="ignore"):
            new = T - np.where(two, f / df, 0.0)
        conv = two & (np.abs(f) < tol)
        status = np.where(conv, CONVERGED, status)
        bad = (~two) | (new <= lo) | (new >= hi) | ~np.isfinite(new)
        new = np.where(bad, 0.5 * (lo + hi), new)
        T = np.where(conv, T, new)
        if np.all(status == CONVERGED):
            break
    if raise_on_fail and np.any(status != CONVERGED):
        i = np.flatnonzero(np.atleast_1d(status) != CONVERGED)[0]
        raise ConvergenceError("saturation_temperature", "no equal-fugacity temperature found",
                               dict(P=float(np.atleast_1d(P)[i]), T=float(np.atleast_1d(T)[i])))
    return T, status


# --------------------------------------------------------------------------
# stability (tangent-plane distance) and two-phase flash for mixtures
# --------------------------------------------------------------------------
def stability_test(T, P, z, p, tol=1e-10, maxiter=300, lnW_start=None, return_trials=False,
                   return_status=False):
    """Michelsen (1982) tangent-plane stability test, vectorised over states
    (compiled: :func:`eosfill.equilibrium.kernels.stability_one`, where the
    trials and stopping tests are described).

    Parameters
    ----------
    T, P : ndarray, shape (n,)
    z : ndarray, shape (n, nc)

    Returns
    -------
    unstable : ndarray of bool, shape (n,)
    lnK0 : ndarray, shape (n, nc)
        Initial ln K for a flash from the most negative trial.
    tm : ndarray, shape (n,)
        Lowest modified tangent-plane distance found.
    status : ndarray of int8, shape (n,)
        (with ``return_status``, last item) CONVERGED or NOT_CONVERGED
        (eosfill.errors codes).
    lnW : ndarray, shape (2n, nc)
        (with ``return_trials``) the trials' final ln W, vapour-like first;
        pass them back as ``lnW_start`` for a nearby state (a warm start:
        a time step or a solver iteration away) instead of Wilson's guesses.
    """
    from eosfill.equilibrium import kernels as ek

    T = np.array(np.ravel(T), dtype=np.float64)
    P = np.array(np.ravel(P), dtype=np.float64)
    z = np.array(z, dtype=np.float64, order="C")
    n, nc = z.shape
    lnW = np.empty((n, 2, nc))
    if lnW_start is not None:
        start = np.asarray(lnW_start, dtype=float)
        lnW[:, 0], lnW[:, 1] = start[:n], start[n:]
    unstable = np.empty(n, dtype=np.bool_)
    tm = np.empty(n)
    lnK0 = np.empty((n, nc))
    status = np.empty(n, dtype=np.int64)
    loop = ek.stability_parallel if n >= 64 else ek.stability_serial
    loop(T, P, z, p.kernel_model, np.array(p.Pc, dtype=np.float64), np.array(p.omega, dtype=np.float64),
         lnW, lnW_start is not None, float(tol), int(maxiter), unstable, tm, lnK0, status)
    out = (unstable, lnK0, tm)
    if return_trials:
        out = out + (np.concatenate([lnW[:, 0], lnW[:, 1]]),)
    if return_status:
        # the compiled loop's per-state outcome (eosfill.errors codes): a state whose
        # trials stopped (converged, trivial, or instability shown) is decided
        out = out + (status.astype(np.int8),)
    return out


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


# --------------------------------------------------------------------------
# bubble and dew points of mixtures
# --------------------------------------------------------------------------
def _saturation_point(T, P, z, p, kind, solve_for, tol=1e-10, maxiter=200):
    """Bubble or dew point by Newton on the incipient-phase condition.

    Bubble: Σ z_i K_i = 1 with K_i = φ_i^L(z)/φ_i^V(y), y = zK/ΣzK.
    Dew:    Σ z_i / K_i = 1 with K_i = φ_i^L(x)/φ_i^V(z), x = (z/K)/Σ(z/K).
    The outer variable (ln P or T) is updated by a secant step on
    ln Σ z K (bubble) or ln Σ z/K (dew); the incipient phase by
    successive substitution at each step (Michelsen & Mollerup 2007, ch. 12).
    """
    z = np.asarray(z, dtype=float)
    T = float(T) if T is not None else None
    P = float(P) if P is not None else None
    if solve_for == "P":
        # Wilson estimate of the bubble/dew pressure
        K1 = np.exp(wilson_lnK(T, 1.0, p.Tc, p.Pc, p.omega))
        var = np.log((z * K1).sum()) if kind == "bubble" else -np.log((z / K1).sum())
    else:
        var = float(z @ p.Tc) * 0.7 if T is None else T
        from scipy.optimize import brentq

        def wil(Tt):
            K = np.exp(wilson_lnK(Tt, P, p.Tc, p.Pc, p.omega))
            return np.log((z * K).sum()) if kind == "bubble" else np.log((z / K).sum())
        try:
            var = brentq(wil, 10.0, 5000.0)
        except ValueError:
            var = float(z @ p.Tc)
    # starting points: Wilson's estimate, then lower pressures (or other
    # temperatures) when a start runs into the trivial solution K = 1
    if solve_for == "P":
        starts = [var - 0.7 * k for k in range(5)]
    else:
        starts = [var * f for f in (1.0, 0.92, 1.08, 0.85, 1.15)]
    last = None
    for var0 in starts:
        try:
            res = _saturation_point_from(var0, T, P, z, p, kind, solve_for, tol, maxiter)
        except ConvergenceError as exc:
            last = exc
            continue
        if _on_boundary(kind, res[0], res[1], z, p):
            return res
        last = ConvergenceError(f"{kind}_point", "converged to a point that is not on the "
                                f"{kind} line (flash check)", dict(T=res[0], P=res[1]))
    # near a critical point successive substitution falls into K = 1 from every
    # start: locate the phase boundary with the flash instead (the vapour
    # fraction reaches 0 at a bubble point, 1 at a dew point), then polish
    # from the flash's K-values
    try:
        var0, lnK0 = _boundary_by_flash(T, P, z, p, kind, solve_for)
        res = _saturation_point_from(var0, T, P, z, p, kind, solve_for, tol, maxiter, lnK0)
    except ConvergenceError:
        raise last from None
    if not _on_boundary(kind, res[0], res[1], z, p):
        raise last
    return res


def _on_boundary(kind, T, P, z, p, eps=1e-5):
    """A bubble point has the feed just two-phase with β → 0 when warmed a
    little; a dew point, just two-phase with β → 1 when cooled a little."""
    Tt = T * (1.0 + eps) if kind == "bubble" else T * (1.0 - eps)
    f = flash_TP(np.array([Tt]), np.array([P]), z, p, raise_on_fail=False)
    if not f["two_phase"][0]:
        return False
    beta = f["beta"][0]
    return beta < 0.05 if kind == "bubble" else beta > 0.95


def _boundary_by_flash(T, P, z, p, kind, solve_for, n=48):
    """Bracket the bubble (β → 0) or dew (β → 1) boundary on a grid of TP
    flashes and narrow it by bisection; returns the outer variable and ln K
    just inside the two-phase region."""
    if solve_for == "P":
        grid = np.linspace(np.log(1e3), np.log(5.0 * float(p.Pc.max())), n)
        TT, PP = np.full(n, T), np.exp(grid)
    else:
        grid = np.linspace(0.3 * float(p.Tc.min()), 1.6 * float(p.Tc.max()), n)
        TT, PP = grid, np.full(n, P)
    fl = flash_TP(TT, PP, z, p, raise_on_fail=False, maxiter=60, second_order=False)
    two = fl["two_phase"]
    target = 0.0 if kind == "bubble" else 1.0
    for k in range(n - 1):
        if two[k] != two[k + 1]:
            inside = k if two[k] else k + 1
            a, b = grid[inside], grid[k + 1 if two[k] else k]
            lnK, beta = fl["lnK"][inside], fl["beta"][inside]
            for _ in range(45):
                mid = 0.5 * (a + b)
                Tm, Pm = (T, np.exp(mid)) if solve_for == "P" else (mid, P)
                f = flash_TP(np.array([Tm]), np.array([Pm]), z, p, raise_on_fail=False)
                if f["two_phase"][0]:
                    a, lnK, beta = mid, f["lnK"][0], f["beta"][0]
                else:
                    b = mid
            if abs(beta - target) < 0.05:
                return a, lnK
    raise ConvergenceError(f"{kind}_point", "no phase boundary found on the flash grid",
                           dict(T=T, P=P))


def _saturation_point_from(var, T, P, z, p, kind, solve_for, tol, maxiter, lnK=None):
    """One run of the bubble/dew iteration from the outer variable ``var``."""
    if lnK is None:
        lnK = wilson_lnK(T if solve_for == "P" else var, np.exp(var) if solve_for == "P" else P,
                         p.Tc, p.Pc, p.omega)
    prev = None
    for it in range(maxiter):
        TT = np.array([T if solve_for == "P" else var])
        PP = np.array([np.exp(var) if solve_for == "P" else P])
        for _ in range(30):
            K = np.exp(lnK)
            if kind == "bubble":
                w = z * K
                w = w / w.sum()
                lpl, _ = lnphi_root(TT, PP, z[None], p, which="liquid")
                lpv, _ = lnphi_root(TT, PP, w[None], p, which="vapour")
            else:
                w = z / K
                w = w / w.sum()
                lpl, _ = lnphi_root(TT, PP, w[None], p, which="liquid")
                lpv, _ = lnphi_root(TT, PP, z[None], p, which="vapour")
            new = (lpl - lpv)[0]
            if np.max(np.abs(new - lnK)) < 1e-12:
                lnK = new
                break
            lnK = new
        K = np.exp(lnK)
        g = np.log((z * K).sum()) if kind == "bubble" else np.log((z / K).sum())
        if np.max(np.abs(lnK)) < 1e-3:
            raise ConvergenceError(f"{kind}_point", "trivial solution (K = 1): near or above the "
                                   "critical point, no saturation point here",
                                   dict(T=float(TT[0]), P=float(PP[0])), float(g))
        if abs(g) < tol:
            return float(TT[0]), float(PP[0]), w, lnK
        if prev is None:
            # first step: a small probe, then secant steps on g(var)
            step = 0.01 if solve_for == "P" else 0.5
        else:
            dvar = var - prev[0]
            dg = g - prev[1]
            step = -g * dvar / dg if dg != 0 else (0.01 if solve_for == "P" else 0.5)
        prev = (var, g)
        limit = 0.5 if solve_for == "P" else 0.1 * var
        step = float(np.clip(step, -limit, limit))
        var = var + step
    raise ConvergenceError(f"{kind}_point", "no convergence", dict(T=float(TT[0]), P=float(PP[0])))


def bubble_point(z, p, T=None, P=None):
    """Bubble point of a mixture: (T, P, incipient vapour composition y).

    Give T (solve for P) or P (solve for T).
    """
    if (T is None) == (P is None):
        from eosfill.errors import InputError

        raise InputError("bubble_point", (T, P), "exactly one of T or P")
    Tb, Pb, y, _ = _saturation_point(T, P, z, p, "bubble", "P" if T is not None else "T")
    return Tb, Pb, y


def dew_point(z, p, T=None, P=None):
    """Dew point of a mixture: (T, P, incipient liquid composition x)."""
    if (T is None) == (P is None):
        from eosfill.errors import InputError

        raise InputError("dew_point", (T, P), "exactly one of T or P")
    Td, Pd, x, _ = _saturation_point(T, P, z, p, "dew", "P" if T is not None else "T")
    return Td, Pd, x


# --------------------------------------------------------------------------
# phase envelope (mixtures) and saturation dome (pure fluids)
# --------------------------------------------------------------------------
def phase_envelope(z, p, n=24, P_min=1e5):
    """Bubble and dew curves of a mixture, point by point in pressure.

    At each pressure of a geometric grid from ``P_min`` upward the bubble
    and dew temperatures are solved (:func:`bubble_point`,
    :func:`dew_point`); the grid stops where neither exists any more (above
    the cricondenbar).  A tracer of the whole envelope through the critical
    point (Michelsen 1980) would be more complete; this one is enough to
    draw the dome on a diagram.

    Returns
    -------
    dict with ``bubble`` and ``dew``: each (P, T, incipient composition)
    arrays of the points that converged.
    """
    z = np.asarray(z, dtype=float)
    Pmax = 1.5 * float(p.Pc @ z) + 0.5 * float(p.Pc.max())
    grid = np.geomspace(P_min, Pmax, n)
    out = {"bubble": ([], [], []), "dew": ([], [], [])}
    for kind, fn in (("bubble", bubble_point), ("dew", dew_point)):
        misses = 0
        for P in grid:
            try:
                T, _, w = fn(z, p, P=float(P))
            except ConvergenceError:
                misses += 1
                if misses >= 3:
                    break
                continue
            out[kind][0].append(P)
            out[kind][1].append(T)
            out[kind][2].append(w)
    return {k: tuple(np.array(a) for a in v) for k, v in out.items()}
