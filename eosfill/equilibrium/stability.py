"""Tangent-plane stability test of a mixture (Michelsen 1982), vectorised.

Neighbours: Wilson K, Rachford-Rice and ln φ in :mod:`eosfill.equilibrium.kvalues`;
the TP flash that starts from this test's trials in :mod:`eosfill.equilibrium.flash`
(map: :mod:`eosfill.equilibrium.solvers`).

Method
------
* Tangent-plane stability test (Michelsen, Fluid Phase Equilib. 9 (1982)
  1-19, Eqs. 20-23): with d_i = ln z_i + ln φ_i(z), successive substitution

      ln W_i ← d_i - ln φ_i(w),  w = W/ΣW                                (E3)

  from a vapour-like (W = z K) and a liquid-like (W = z/K) trial; the
  modified tangent-plane distance at a stationary point is
  tm* = 1 - Σ W_i, and the feed is unstable if tm* < 0 for a non-trivial
"""
from __future__ import annotations

import numpy as np


# --------------------------------------------------------------------------
# stability (tangent-plane distance) for mixtures
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
