"""Pure-fluid saturation from the cubic: vapour pressure P(T) and saturation
temperature T(P).

Neighbours: Wilson K, Rachford-Rice, ln φ and the status codes in
:mod:`eosfill.equilibrium.kvalues`; mixtures' stability, flash and boundaries
in :mod:`eosfill.equilibrium.stability`, :mod:`eosfill.equilibrium.flash`,
:mod:`eosfill.equilibrium.boundaries` (map: :mod:`eosfill.equilibrium.solvers`).

Method
------

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
from eosfill.equilibrium.kvalues import CONVERGED, MAXITER


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
