"""The generalised cubic for one state, compiled (numba): the production kernels.

Every equation of :mod:`eosfill.model.cubic` (labels C1-C11 there, with
their sources) is written here once, as a function of one state in the
papers' symbols, ``@njit(**KERNEL)``.  Batches are compiled loops over
these functions (:mod:`eosfill.model.properties`), so a scalar call and a
batch call run the same code.  The numpy forms in :mod:`eosfill.model.cubic`
are the readable test oracles (``tests/test_kernels.py`` compares the two
to round-off, ``tests/test_cubic_reference.py`` compares the kernels with
thermo at 1e-8).

The model
---------
A kernel never knows which cubic it solves: it takes the model as the tuple
``m = MixtureParameters.kernel_model``::

    m = (delta1, delta2, Tc, sqrt_ac, b, one_minus_kij, alpha_kind, alpha_params, c)

(δ1, δ2 of (C1); Tc [K]; √a_c,i and b_i of (C2); 1 - k_ij of (C4); the α
function's kind code and (nc, 3) parameters, evaluated by
:func:`eosfill.model.alpha.alpha_T`; the volume translation c_i [m³/mol]).
PR, PR78 and SRK are the tuples their papers give; another α function,
mixing parameters or translation is another tuple, not another kernel.

Scratch arrays
--------------
Functions that need per-component intermediates take them as arguments
(``q``, ``dq``, ``d2q``, ``sx`` of length nc) so that a batch allocates them
once per chunk of states, not once per state.

Root of √(a_i a_j)
------------------
(C4) takes a_ij = (1 - k_ij) √(a_i a_j) with the positive root (as printed,
and as thermo computes it); q_i = √a_i = √a_c,i √α_i ≥ 0.
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit

from eosfill.constants import R
from eosfill.model.alpha import alpha_T

# compiled once per machine (on-disk cache); IEEE semantics (a division by
# zero gives inf, a log of a negative number NaN) instead of Python exceptions
KERNEL = dict(cache=True, error_model="numpy")

# which root (C5) a state takes: lowest Gibbs energy, smallest, largest
STABLE, LIQUID_ROOT, VAPOUR_ROOT = 0, 1, 2


# --------------------------------------------------------------------------
# pure-component a_i and the mixing rule (C2)-(C4)
# --------------------------------------------------------------------------
@njit(**KERNEL)
def sqrt_a_components(T, m, q, dq, d2q):
    """q_i = √a_i = √a_c,i √α_i(T) (C2, C3) and dq_i/dT, d²q_i/dT², into q, dq, d2q.

    With α, α', α'' from the model's α function:
    d√α/dT = α'/(2√α),  d²√α/dT² = α''/(2√α) - α'²/(4 α^(3/2)).

    Parameters
    ----------
    T : float
        Temperature [K].
    m : tuple
        The model (see the module docstring).
    q, dq, d2q : ndarray, shape (nc,)
        Filled with √a_i [Pa^½ m³/mol], its first [../K] and second [../K²] T-derivatives.
    """
    Tc, sac, kind, ap = m[2], m[3], m[6], m[7]
    for i in range(Tc.shape[0]):
        al, dal, d2al = alpha_T(kind, T, Tc[i], ap[i, 0], ap[i, 1], ap[i, 2])
        s = math.sqrt(al)
        inv_s = 1.0 / s                                   # one division per component
        q[i] = sac[i] * s
        dq[i] = 0.5 * sac[i] * dal * inv_s                # α'/(2√α)
        d2q[i] = sac[i] * inv_s * (0.5 * d2al - 0.25 * dal * dal * inv_s * inv_s)   # α''/(2√α) - α'²/(4α^(3/2))


@njit(**KERNEL)
def mixing_sums(T, x, m, q, dq, d2q):
    """a, a_T, a_TT and b of the van der Waals one-fluid rule (C4) at T.

        a    = Σ_ij x_i x_j (1 - k_ij) q_i q_j
        a_T  = 2 Σ_ij x_i x_j (1 - k_ij) q_i' q_j
        a_TT = 2 Σ_ij x_i x_j (1 - k_ij) (q_i'' q_j + q_i' q_j')
        b    = Σ_i x_i b_i

    Parameters
    ----------
    T : float
        Temperature [K].
    x : ndarray, shape (nc,)
        Mole fractions [-].
    m : tuple
        The model.
    q, dq, d2q : ndarray, shape (nc,)
        Scratch; left holding √a_i and its derivatives at T.

    Returns
    -------
    a [Pa m⁶/mol²], a_T [Pa m⁶/(mol² K)], a_TT [Pa m⁶/(mol² K²)], b [m³/mol]
    """
    bi, M = m[4], m[5]
    sqrt_a_components(T, m, q, dq, d2q)
    nc = x.shape[0]
    a = 0.0
    a_T = 0.0
    a_TT = 0.0
    b = 0.0
    for i in range(nc):
        if x[i] == 0.0:
            continue
        s0 = 0.0   # Σ_j M_ij x_j q_j
        s1 = 0.0   # Σ_j M_ij x_j q_j'
        for j in range(nc):
            s0 += M[i, j] * x[j] * q[j]
            s1 += M[i, j] * x[j] * dq[j]
        a += x[i] * q[i] * s0
        a_T += 2.0 * x[i] * dq[i] * s0
        a_TT += 2.0 * x[i] * (d2q[i] * s0 + dq[i] * s1)
        b += x[i] * bi[i]
    return a, a_T, a_TT, b


@njit(**KERNEL)
def partial_a_sums(x, m, q, sx):
    """Σ_j x_j a_ij = q_i Σ_j (1 - k_ij) x_j q_j for each i, into sx; used in (C10).

    ``q`` must hold √a_i at the state's T (from :func:`mixing_sums`).
    """
    M = m[5]
    nc = x.shape[0]
    for i in range(nc):
        s0 = 0.0
        for j in range(nc):
            s0 += M[i, j] * x[j] * q[j]
        sx[i] = q[i] * s0


# --------------------------------------------------------------------------
# the cubic in Z (C5), its roots and the root choice
# --------------------------------------------------------------------------
@njit(**KERNEL)
def cubic_coefficients(A, B, delta1, delta2):
    """c2, c1, c0 of (C5): Z³ + c2 Z² + c1 Z + c0 = 0."""
    s = delta1 + delta2
    p = delta1 * delta2
    c2 = (s - 1.0) * B - 1.0
    c1 = A + p * B * B - s * B * (B + 1.0)
    c0 = -(A * B + p * B * B * (B + 1.0))
    return c2, c1, c0


@njit(**KERNEL)
def _newton_polish(Z, c2, c1, c0, n):
    for _ in range(n):
        f = ((Z + c2) * Z + c1) * Z + c0
        df = (3.0 * Z + 2.0 * c2) * Z + c1
        step = f / df if df != 0.0 else np.inf
        if np.isfinite(step):
            Z -= step
    return Z


@njit(**KERNEL)
def cubic_roots(c2, c1, c0):
    """Real roots of Z³ + c2 Z² + c1 Z + c0 = 0, ascending, NaN for complex ones.

    Closed form (trigonometric when three real roots, Cardano when one;
    Press et al., *Numerical Recipes*, 3rd ed., 2007, §5.6), each root then
    polished by three Newton steps on the cubic.

    Returns
    -------
    n : int
        Number of real roots returned (1 or 3).
    r0, r1, r2 : float
        The roots, ascending; r1 = r2 = NaN when n = 1.
    """
    Q = (c2 * c2 - 3.0 * c1) / 9.0
    Rr = (2.0 * c2 * c2 * c2 - 9.0 * c2 * c1 + 27.0 * c0) / 54.0
    Q3 = Q * Q * Q
    if Rr * Rr < Q3:
        # Z_k = -2 √Q cos((θ + 2πk)/3) - c2/3, θ = acos(R/√Q³); k = 0, 2, 1 ascending
        theta = math.acos(min(1.0, max(-1.0, Rr / math.sqrt(Q3))))
        mq = -2.0 * math.sqrt(Q)
        r0 = _newton_polish(mq * math.cos(theta / 3.0) - c2 / 3.0, c2, c1, c0, 3)
        r1 = _newton_polish(mq * math.cos((theta + 4.0 * math.pi) / 3.0) - c2 / 3.0, c2, c1, c0, 3)
        r2 = _newton_polish(mq * math.cos((theta + 2.0 * math.pi) / 3.0) - c2 / 3.0, c2, c1, c0, 3)
        # sort three
        if r0 > r1:
            r0, r1 = r1, r0
        if r1 > r2:
            r1, r2 = r2, r1
        if r0 > r1:
            r0, r1 = r1, r0
        return 3, r0, r1, r2
    # Z = A + Q/A - c2/3, A = -sgn(R) (|R| + √(R² - Q³))^(1/3)
    sg = 1.0 if Rr > 0.0 else (-1.0 if Rr < 0.0 else 0.0)
    Aq = -sg * np.cbrt(abs(Rr) + math.sqrt(max(Rr * Rr - Q3, 0.0)))
    r0 = Aq + (Q / Aq if Aq != 0.0 else 0.0) - c2 / 3.0
    return 1, _newton_polish(r0, c2, c1, c0, 3), np.nan, np.nan


@njit(**KERNEL)
def log_term(Z, B, delta1, delta2):
    """L = ln[(Z + δ1 B)/(Z + δ2 B)] / (δ1 - δ2), the integral of (C6)-(C11)."""
    return math.log((Z + delta1 * B) / (Z + delta2 * B)) / (delta1 - delta2)


@njit(**KERNEL)
def residual_g_RT(Z, A, B, delta1, delta2):
    """G^R/(RT) of (C6) [-]."""
    return Z - 1.0 - math.log(Z - B) - A / B * log_term(Z, B, delta1, delta2)


@njit(**KERNEL)
def choose_root(n, r0, r1, r2, A, B, delta1, delta2, which):
    """The root a state takes, and why.

    ``which`` = :data:`STABLE`: of the smallest and largest admissible roots
    (Z > B) the one of lowest G^R/(RT) (C6) (at fixed T, P, x the roots'
    Gibbs energies differ only there; the middle root is never stable);
    :data:`LIQUID_ROOT` / :data:`VAPOUR_ROOT`: the smallest / largest
    admissible root regardless of its Gibbs energy (phases of a flash).

    Returns
    -------
    Z : float
        The root (NaN if none exceeds B).
    choice : int
        0 one admissible root; 1 / 2 smallest / largest of several had the
        lowest Gibbs energy; 3 / 4 smallest / largest taken on request
        (the codes of :data:`eosfill.model.cubic.ROOT_CHOICE_TEXT`).
    """
    three = n == 3
    if which != STABLE:
        Z = np.nan
        for r in (r0, r1, r2):
            if np.isfinite(r) and r > B:
                if not np.isfinite(Z) or (r < Z if which == LIQUID_ROOT else r > Z):
                    Z = r
        return Z, which + 2
    if r0 > B:
        lo = r0
    elif three and r1 > B:
        lo = r1
    elif three:
        lo = r2
    else:
        lo = np.nan
    hi = r2 if three else (r0 if r0 > B else np.nan)
    if three and lo < hi:
        if residual_g_RT(lo, A, B, delta1, delta2) < residual_g_RT(hi, A, B, delta1, delta2):
            return lo, 1
        return hi, 2
    return hi, 0


# --------------------------------------------------------------------------
# departures (C6)-(C11) and the derivatives of (C1)
# --------------------------------------------------------------------------
@njit(**KERNEL)
def residual_h(T, Z, a, a_T, b, B, delta1, delta2):
    """H^R of (C7) [J/mol]: R T (Z - 1) + (T a_T - a)/b · L."""
    return R * T * (Z - 1.0) + (T * a_T - a) / b * log_term(Z, B, delta1, delta2)


@njit(**KERNEL)
def residual_s(Z, a_T, b, B, delta1, delta2):
    """S^R of (C8) [J/(mol K)] at the same T and P: R ln(Z - B) + a_T/b · L."""
    return R * math.log(Z - B) + a_T / b * log_term(Z, B, delta1, delta2)


@njit(**KERNEL)
def residual_u(T, Z, a, a_T, b, B, delta1, delta2):
    """U^R of (C9) [J/mol]: (T a_T - a)/b · L."""
    return (T * a_T - a) / b * log_term(Z, B, delta1, delta2)


@njit(**KERNEL)
def residual_cv(T, Z, a_TT, b, B, delta1, delta2):
    """Cv^R of (C11) [J/(mol K)]: T a_TT/b · L."""
    return T * a_TT / b * log_term(Z, B, delta1, delta2)


@njit(**KERNEL)
def ln_phi(T, P, Z, x, m, a, b, q, sx, out):
    """ln φ_i of (C10) into ``out`` (shape (nc,)), with Z the state's root.

        ln φ_i = (b_i/b)(Z - 1) - ln(Z - B) - (A/B)(2 Σ_j x_j a_ij / a - b_i/b) L

    ``q`` must hold √a_i at T (from :func:`mixing_sums`); ``sx`` is scratch.
    """
    d1, d2, bi = m[0], m[1], m[4]
    RT = R * T
    A = a * P / (RT * RT)
    B = b * P / RT
    L = log_term(Z, B, d1, d2)
    lnZB = math.log(Z - B)
    partial_a_sums(x, m, q, sx)
    for i in range(x.shape[0]):
        bib = bi[i] / b
        out[i] = bib * (Z - 1.0) - lnZB - A / B * (2.0 * sx[i] / a - bib) * L


@njit(**KERNEL)
def pressure(T, v, a, b, delta1, delta2):
    """P of (C1) [Pa]: R T/(v - b) - a/((v + δ1 b)(v + δ2 b))."""
    return R * T / (v - b) - a / ((v + delta1 * b) * (v + delta2 * b))


@njit(**KERNEL)
def dP_dT_v(v, a_T, b, delta1, delta2):
    """(∂P/∂T)_v of (C1) [Pa/K]: R/(v - b) - a_T/((v + δ1 b)(v + δ2 b))."""
    return R / (v - b) - a_T / ((v + delta1 * b) * (v + delta2 * b))


@njit(**KERNEL)
def dP_dv_T(T, v, a, b, delta1, delta2):
    """(∂P/∂v)_T of (C1) [Pa mol/m³]: -R T/(v - b)² + a g/D², D = (v + δ1 b)(v + δ2 b), g = 2v + (δ1 + δ2) b."""
    D = (v + delta1 * b) * (v + delta2 * b)
    g = 2.0 * v + (delta1 + delta2) * b
    return -R * T / ((v - b) * (v - b)) + a * g / (D * D)


@njit(**KERNEL)
def phase_identification_parameter(T, v, a, a_T, b, delta1, delta2):
    """Π of Venkatarathnam & Oellrich, Fluid Phase Equilib. 301 (2011) 225-233, Eq. 6.

        Π = v [ (∂²P/∂T∂v)/(∂P/∂T)_v - (∂²P/∂v²)_T/(∂P/∂v)_T ]

    with ∂²P/∂v² = 2RT/(v - b)³ + 2a (D - g²)/D³ and ∂²P/∂T∂v = -R/(v - b)² + a_T g/D².
    Π > 1: liquid-like; Π ≤ 1: vapour-like.
    """
    D = (v + delta1 * b) * (v + delta2 * b)
    g = 2.0 * v + (delta1 + delta2) * b
    vb = v - b
    d2Pdv2 = 2.0 * R * T / (vb * vb * vb) + 2.0 * a * (D - g * g) / (D * D * D)
    d2PdTdv = -R / (vb * vb) + a_T * g / (D * D)
    return v * (d2PdTdv / dP_dT_v(v, a_T, b, delta1, delta2)
                - d2Pdv2 / dP_dv_T(T, v, a, b, delta1, delta2))
