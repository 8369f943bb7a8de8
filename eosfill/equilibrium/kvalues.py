"""Wilson K-values, the Rachford-Rice equation, ln φ with a chosen root, and
the per-element status codes shared by the equilibrium solvers.

Neighbours: pure-fluid saturation in :mod:`eosfill.equilibrium.saturation`,
the stability test in :mod:`eosfill.equilibrium.stability`, the TP flash in
:mod:`eosfill.equilibrium.flash`, bubble/dew points and the phase envelope
in :mod:`eosfill.equilibrium.boundaries` (map: :mod:`eosfill.equilibrium.solvers`).

Methods and sources
-------------------
-------------------
* Wilson K-values (Wilson, G. M., "A modified Redlich-Kwong equation of
  state, application to general physical data calculations", AIChE 65th
  National Meeting, Cleveland, 1968, paper 15C):

      ln K_i = ln(Pc,i/P) + 5.373 (1 + ω_i)(1 - Tc,i/T)                   (E1)

* Rachford-Rice equation (Rachford & Rice, J. Pet. Technol. 4 (1952) 19),
  solved on the bracket of Whitson & Michelsen, Fluid Phase Equilib. 53
  (1989) 51-71, by safeguarded Newton (bisection when Newton leaves the
  bracket):

"""
from __future__ import annotations

import numpy as np

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
