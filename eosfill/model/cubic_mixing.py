"""The α function (C3) and the van der Waals one-fluid mixing rule (C4) of
:mod:`eosfill.model.cubic`, in readable numpy form (test oracles and the
calculation trace; production runs the compiled kernels)."""
from __future__ import annotations

import numpy as np

from eosfill.model.cubic_parameters import ALPHA_SOAVE, MixtureParameters


# --------------------------------------------------------------------------
# alpha function and mixing rule
# --------------------------------------------------------------------------
def soave_sqrt_alpha(T, Tc, kappa):
    """√α of Soave's form (C3) and its first two temperature derivatives.

    s = 1 + κ (1 - √(T/Tc)),  α = s²
    ds/dT = -κ / (2 √(T Tc)),  d²s/dT² = κ / (4 T √(T Tc))

    Returns s, ds/dT [1/K], d²s/dT² [1/K²], each of shape (..., nc).
    """
    T = np.asarray(T, dtype=float)
    sqrtT = np.sqrt(T)[..., None]
    sqrtTc = np.sqrt(Tc)
    s = 1.0 + kappa * (1.0 - sqrtT / sqrtTc)
    ds = (-0.5 * kappa / sqrtTc) / sqrtT       # -κ / (2 √(T Tc))
    d2s = ds * (-0.5 / T[..., None])           # κ / (4 T √(T Tc))
    return s, ds, d2s


def _alpha_other(T, p: MixtureParameters):
    """α_i, α_i', α_i'' of a non-Soave α kind, shape (..., nc), from the compiled
    α functions of :mod:`eosfill.model.alpha` (each checked against thermo there)."""
    from eosfill.model import alpha

    T = np.asarray(T, dtype=float)
    al, dal, d2al = alpha.alpha_values(p.alpha_kind, T.ravel(), p.Tc, p.alpha_params)
    shape = T.shape + (p.Tc.shape[0],)
    return al.reshape(shape), dal.reshape(shape), d2al.reshape(shape)


def component_a(T, p: MixtureParameters):
    """a_i(T) = a_c,i α_i(T) per component [Pa m⁶/mol²], shape (..., nc), with the model's α."""
    if p.alpha_kind != ALPHA_SOAVE:
        return p.ac * _alpha_other(T, p)[0]
    s, _, _ = soave_sqrt_alpha(T, p.Tc, p.kappa)
    return p.ac * s**2


def _sqrt_a(T, p: MixtureParameters):
    """q_i = √a_i ≥ 0 and its first two T-derivatives, shape (..., nc).

    (C4) takes √(a_i a_j) with the positive root: q_i = √a_c,i |s_i|, s = √α of (C3)
    (s turns negative only far above Tc, past the minimum of Soave's α).  Another
    α kind: q = √(a_c α), q' = a_c α'/(2 q), q'' = (a_c α'' - 2 q'²)/(2 q)."""
    if p.alpha_kind != ALPHA_SOAVE:
        al, dal, d2al = _alpha_other(T, p)
        q = np.sqrt(p.ac * al)
        dq = p.ac * dal / (2.0 * q)
        return q, dq, (p.ac * d2al - 2.0 * dq * dq) / (2.0 * q)
    s, ds, d2s = soave_sqrt_alpha(T, p.Tc, p.kappa)
    sac = np.sqrt(p.ac)
    sg = np.where(s < 0.0, -1.0, 1.0)
    return sac * s * sg, sac * ds * sg, sac * d2s * sg


def mixture_a(T, x, p: MixtureParameters, derivatives=2):
    """Mixture a of (C4) and its temperature derivatives.

    With q_i = √a_i (so a_ij = (1 - k_ij) q_i q_j):

        a    = Σ_ij x_i x_j (1 - k_ij) q_i q_j
        a_T  = 2 Σ_ij x_i x_j (1 - k_ij) q_i' q_j
        a_TT = 2 Σ_ij x_i x_j (1 - k_ij) (q_i'' q_j + q_i' q_j')

    Parameters
    ----------
    T : array_like, shape (...)
        Temperature [K].
    x : array_like, shape (..., nc) or (nc,)
        Mole fractions [-].
    p : MixtureParameters
    derivatives : int
        0, 1 or 2: how many temperature derivatives to return.

    Returns
    -------
    a, a_T, a_TT : ndarray, shape (...)
        [Pa m⁶/mol²], [Pa m⁶/(mol² K)], [Pa m⁶/(mol² K²)] (those asked for).
    """
    q, dq, d2q = _sqrt_a(T, p)
    M = 1.0 - p.kij
    xq = x * q
    Mxq = xq @ M  # M symmetric
    a = np.einsum("...i,...i->...", xq, Mxq)
    if derivatives == 0:
        return (a,)
    xq1 = x * dq
    a_T = 2.0 * np.einsum("...i,...i->...", xq1, Mxq)
    if derivatives == 1:
        return a, a_T
    xq2 = x * d2q
    a_TT = 2.0 * (np.einsum("...i,...i->...", xq2, Mxq)
                  + np.einsum("...i,...i->...", xq1, xq1 @ M))
    return a, a_T, a_TT


def mixture_a_partial(T, x, p: MixtureParameters):
    """Σ_j x_j a_ij for each i [Pa m⁶/mol²], shape (..., nc); used in (C10)."""
    q, _, _ = _sqrt_a(T, p)
    return q * ((x * q) @ (1.0 - p.kij))


def mixture_b(x, p: MixtureParameters):
    """b = Σ x_i b_i of (C4) [m³/mol]."""
    return np.asarray(x, dtype=float) @ p.b
