"""Generalised two-parameter cubic equation of state and its departure functions.

The model (Michelsen & Mollerup, *Thermodynamic Models: Fundamentals and
Computational Aspects*, 2nd ed., 2007, ch. 3, Eq. 3.1 in their notation)

    P = R T / (v - b) - a(T) / ((v + δ1 b)(v + δ2 b))                  (C1)

with three named instances, never switched silently:

========  ==========  ==========  =========================================
name      δ1          δ2          source
========  ==========  ==========  =========================================
``PR``    1 + √2      1 - √2      Peng & Robinson, Ind. Eng. Chem. Fundam.
                                  15 (1976) 59-64, Eqs. 4, 9-12, 17-18
``PR78``  1 + √2      1 - √2      Robinson & Peng, GPA Research Report
                                  RR-28 (1978): κ cubic in ω for ω > 0.491
``SRK``   1           0           Soave, Chem. Eng. Sci. 27 (1972)
                                  1197-1203, Eqs. 10-15
========  ==========  ==========  =========================================

Pure-component parameters (critical conditions of (C1))

    a_c,i = Ωa R² Tc,i² / Pc,i ,   b_i = Ωb R Tc,i / Pc,i               (C2)
    α_i(T) = [1 + κ_i (1 - √(T/Tc,i))]²       (Soave 1972, Eq. 13)      (C3)
    a_i(T) = a_c,i α_i(T)

Ωa, Ωb are the exact roots of the critical conditions (PR: Ωb is the real
root of 64 Ωb³ + 6 Ωb² + 12 Ωb - 1 = 0, Ωa = 3 Zc² + 3 Ωb² + 2 Ωb with
Zc = (1 - Ωb)/3, printed as 0.45724 / 0.07780 in Peng & Robinson 1976
Eqs. 9-10; SRK: Ωa = 1/(9(2^(1/3) - 1)), Ωb = (2^(1/3) - 1)/3).

van der Waals one-fluid mixing with binary interaction parameters k_ij

    a = Σ_i Σ_j x_i x_j (1 - k_ij) √(a_i a_j) ,   b = Σ_i x_i b_i      (C4)

In dimensionless form A = a P/(R T)², B = b P/(R T), (C1) is the cubic

    Z³ + c2 Z² + c1 Z + c0 = 0                                         (C5)
    c2 = (δ1 + δ2 - 1) B - 1
    c1 = A + δ1 δ2 B² - (δ1 + δ2) B (B + 1)
    c0 = -(A B + δ1 δ2 B² (B + 1))

Departure functions at (T, P) follow from the residual Helmholtz energy
(Michelsen & Mollerup 2007, ch. 3) with
L = ln[(Z + δ1 B)/(Z + δ2 B)] / (δ1 - δ2):

    G^R/(RT) = Z - 1 - ln(Z - B) - (A/B) L                              (C6)
    H^R      = R T (Z - 1) + (T a_T - a)/b · L                          (C7)
    S^R      = R ln(Z - B) + a_T/b · L                                  (C8)
    U^R      = (T a_T - a)/b · L                                        (C9)
    ln φ_i   = (b_i/b)(Z - 1) - ln(Z - B)
               - (A/B) (2 Σ_j x_j a_ij / a - b_i/b) L                   (C10)
    Cv^R     = T a_TT / b · L                                           (C11)

All departures are "at the same T and P" (the ideal-gas state at T, P),
so H = H° + H^R and S = S°(T, P) + S^R.  a_T and a_TT are the first and
second temperature derivatives of the mixture a.

Every function broadcasts: state arrays of shape (...) and compositions of
shape (..., nc) or (nc,).

Role of this module: it holds the named models (:data:`MODELS`), the model
object :class:`MixtureParameters` and the readable numpy forms of (C1)-(C11).
The production code runs the compiled one-state kernels of
:mod:`eosfill.model.cubic_kernels` and :mod:`eosfill.model.properties`
(the same equations, written once); the numpy forms here are their test
oracles (``tests/test_kernels.py``) and feed the calculation trace
(:mod:`eosfill.io.trace`), where every intermediate value is shown.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Callable

import numpy as np

from eosfill.constants import R

SQRT2 = np.sqrt(2.0)


# κ(ω) correlations of the Soave-type alpha function (C3): eosfill.model.kappa
from eosfill.model.kappa import kappa_pr76, kappa_pr78, kappa_srk  # noqa: E402,F401


@dataclass(frozen=True)
class CubicModel:
    """One named instance of the generalised cubic (C1).

    Attributes
    ----------
    name : str
        ``"PR"``, ``"PR78"`` or ``"SRK"``.
    delta1, delta2 : float
        Constants of the attractive term of (C1) [-].
    Omega_a, Omega_b : float
        Critical-point constants of (C2) [-].
    kappa : callable
        κ(ω) of the Soave-type alpha function (C3).
    Zc : float
        Critical compressibility factor the model predicts for every pure fluid.
    citation : str
        Where the model is published.
    """

    name: str
    delta1: float
    delta2: float
    Omega_a: float
    Omega_b: float
    kappa: Callable = field(repr=False)
    Zc: float
    citation: str


# Exact Ωa, Ωb of PR: Ωb is the real root of 64 Ωb³ + 6 Ωb² + 12 Ωb - 1 = 0
# (triple root of (C5) at the critical point; Peng & Robinson 1976 Eqs. 9-10
# print 0.45724, 0.07780); full precision makes the critical point exact.
_PR_OMEGA_A = 0.4572355289213821893834601962251837888504
_PR_OMEGA_B = 0.0777960739038884559718447100373331839711
_SRK_OMEGA_A = 0.4274802335403414043909906940611707345513  # 1/(9(2^(1/3)-1))
_SRK_OMEGA_B = 0.08664034996495772158907020242607611685675  # (2^(1/3)-1)/3

PR = CubicModel(
    "PR", 1.0 + SQRT2, 1.0 - SQRT2, _PR_OMEGA_A, _PR_OMEGA_B, kappa_pr76,
    0.3074013086987039,
    "Peng, D.-Y.; Robinson, D. B. A New Two-Constant Equation of State. "
    "Ind. Eng. Chem. Fundam. 15 (1976) 59-64. doi:10.1021/i160057a011",
)
PR78 = CubicModel(
    "PR78", 1.0 + SQRT2, 1.0 - SQRT2, _PR_OMEGA_A, _PR_OMEGA_B, kappa_pr78,
    0.3074013086987039,
    "Robinson, D. B.; Peng, D.-Y. The Characterization of the Heptanes and "
    "Heavier Fractions for the GPA Peng-Robinson Programs. GPA Research "
    "Report RR-28 (1978)",
)
SRK = CubicModel(
    "SRK", 1.0, 0.0, _SRK_OMEGA_A, _SRK_OMEGA_B, kappa_srk, 1.0 / 3.0,
    "Soave, G. Equilibrium constants from a modified Redlich-Kwong equation "
    "of state. Chem. Eng. Sci. 27 (1972) 1197-1203. "
    "doi:10.1016/0009-2509(72)80096-4",
)

MODELS = {"PR": PR, "PR78": PR78, "SRK": SRK}
"""The cubic families (δ1, δ2, Ωa, Ωb, with the Soave κ(ω) of each plain model).
The named models a Fluid uses (family + α + mixing + translation parts) are
:data:`eosfill.model.models.MODELS`."""


# kind code of Soave's α in eosfill.model.alpha (SOAVE there; a test keeps them equal)
ALPHA_SOAVE = 0


@dataclass(frozen=True, eq=False)
class MixtureParameters:
    """The model every kernel computes with: a small frozen object of arrays.

    Solvers never know which cubic they solve: the family (δ1, δ2, Ωa, Ωb),
    the α function (kind code and per-component parameters), the mixing
    parameters (k_ij) and the volume translation (c_i) are all data here.
    The compiled kernels (:mod:`eosfill.model.cubic_kernels`) take the tuple
    :attr:`kernel_model`.

    Attributes
    ----------
    model : CubicModel
        The named instance (PR, PR78, SRK) the family constants come from.
    Tc, Pc, omega : ndarray, shape (nc,)
        Critical temperature [K], critical pressure [Pa], acentric factor [-].
    kij : ndarray, shape (nc, nc)
        Binary interaction parameters, symmetric, zero diagonal [-].
    ac : ndarray, shape (nc,)
        a_c,i of (C2) [Pa m⁶/mol²].
    b : ndarray, shape (nc,)
        b_i of (C2) [m³/mol].
    kappa : ndarray, shape (nc,)
        κ_i of (C3) [-] (the Soave α's parameter; p0 of ``alpha_params``);
        NaN when the model's α is not Soave's.
    delta1, delta2, Omega_a, Omega_b : float
        Family constants of (C1), (C2) [-].
    alpha_kind : int
        α function code of :mod:`eosfill.model.alpha` (0: Soave (C3)).
    alpha_params : ndarray, shape (nc, 3)
        The α function's per-component parameters (Soave: κ, 0, 0).
    c : ndarray, shape (nc,)
        Volume translation c_i [m³/mol] (v = v_eos - Σ x_i c_i).
    """

    model: CubicModel
    Tc: np.ndarray
    Pc: np.ndarray
    omega: np.ndarray
    kij: np.ndarray
    ac: np.ndarray
    b: np.ndarray
    kappa: np.ndarray
    delta1: float = 0.0
    delta2: float = 0.0
    Omega_a: float = 0.0
    Omega_b: float = 0.0
    alpha_kind: int = ALPHA_SOAVE
    alpha_params: np.ndarray = None
    c: np.ndarray = None

    @classmethod
    def build(cls, model: CubicModel, Tc, Pc, omega, kij, c=None, alpha_kind=None, alpha_params=None):
        """Parameters of ``model`` for components (Tc, Pc, ω, k_ij); Soave α (C3)
        with the model's κ(ω) unless another α kind and its (nc, 3) parameters
        are given; translation ``c`` [m³/mol] (default none)."""
        Tc = np.asarray(Tc, dtype=float)
        Pc = np.asarray(Pc, dtype=float)
        omega = np.asarray(omega, dtype=float)
        kij = np.asarray(kij, dtype=float)
        ac = model.Omega_a * R**2 * Tc**2 / Pc  # (C2)
        b = model.Omega_b * R * Tc / Pc  # (C2)
        kappa = np.asarray(model.kappa(omega), dtype=float)
        if alpha_kind is not None and int(alpha_kind) != ALPHA_SOAVE:
            kappa = np.full_like(kappa, np.nan)   # no Soave κ in this model: never used silently
        if alpha_kind is None:
            alpha_kind = ALPHA_SOAVE
            alpha_params = np.stack([kappa, np.zeros_like(kappa), np.zeros_like(kappa)], axis=-1)
        alpha_params = np.array(alpha_params, dtype=float).reshape(Tc.shape[0], 3)
        c = np.zeros(Tc.shape[0]) if c is None else np.array(c, dtype=float)
        for arr in (Tc, Pc, omega, kij, ac, b, kappa, alpha_params, c):
            arr.setflags(write=False)
        return cls(model, Tc, Pc, omega, kij, ac, b, kappa, model.delta1, model.delta2,
                   model.Omega_a, model.Omega_b, int(alpha_kind), alpha_params, c)

    @cached_property
    def kernel_model(self):
        """The model as the compiled kernels take it (private writable copies):
        (δ1, δ2, Tc, √a_c, b, 1 - k_ij, α kind, α parameters, c)."""
        def f(a):
            return np.array(a, dtype=np.float64, order="C")
        return (float(self.delta1), float(self.delta2), f(self.Tc), f(np.sqrt(self.ac)), f(self.b),
                f(1.0 - self.kij), int(self.alpha_kind), f(self.alpha_params), f(self.c))


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


# --------------------------------------------------------------------------
# the cubic in Z and its roots
# --------------------------------------------------------------------------
def dimensionless_AB(a, b, T, P):
    """A = a P/(R T)², B = b P/(R T)."""
    RT = R * np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    return a * P / RT**2, b * P / RT


def cubic_coefficients(A, B, delta1, delta2):
    """Coefficients c2, c1, c0 of (C5) Z³ + c2 Z² + c1 Z + c0 = 0."""
    s = delta1 + delta2
    p = delta1 * delta2
    c2 = (s - 1.0) * B - 1.0
    c1 = A + p * B**2 - s * B * (B + 1.0)
    c0 = -(A * B + p * B**2 * (B + 1.0))
    return c2, c1, c0


def cubic_roots(c2, c1, c0, polish=3):
    """All real roots of Z³ + c2 Z² + c1 Z + c0 = 0, vectorised.

    Closed form (trigonometric form when three real roots, Cardano's form
    when one; e.g. Press et al., *Numerical Recipes*, 3rd ed., 2007, §5.6),
    each root then polished by Newton steps on the cubic itself, which
    restores full precision where the closed form loses it (nearly equal
    roots, small B).

    Returns
    -------
    ndarray, shape (..., 3)
        Real roots in ascending order; NaN where a root is complex
        (the one-real-root case fills slot 0 and leaves 1, 2 NaN).
    """
    c2, c1, c0 = np.broadcast_arrays(*(np.asarray(c, dtype=float) for c in (c2, c1, c0)))
    Q = (c2 * c2 - 3.0 * c1) / 9.0
    Rr = (2.0 * c2**3 - 9.0 * c2 * c1 + 27.0 * c0) / 54.0
    Q3 = Q**3
    three = Rr * Rr < Q3
    roots = np.full(c2.shape + (3,), np.nan)
    # one real root (Cardano): Z = A + Q/A - c2/3, A = -sgn(R) (|R| + √(R² - Q³))^(1/3)
    with np.errstate(invalid="ignore", divide="ignore"):
        Aq = -np.sign(Rr) * np.cbrt(np.abs(Rr) + np.sqrt(np.maximum(Rr * Rr - Q3, 0.0)))
        roots[..., 0] = Aq + np.where(Aq != 0.0, Q / Aq, 0.0) - c2 / 3.0
    if np.any(three):
        # three real roots: Z_k = -2 √Q cos((θ + 2πk)/3) - c2/3, θ = acos(R/√Q³);
        # k = 0, 2, 1 give them in ascending order
        q, r, c = Q[three], Rr[three], c2[three]
        theta = np.arccos(np.clip(r / np.sqrt(q**3), -1.0, 1.0))
        m = -2.0 * np.sqrt(q)
        roots[three] = np.stack([m * np.cos(theta / 3.0) - c / 3.0,
                                 m * np.cos((theta + 4.0 * np.pi) / 3.0) - c / 3.0,
                                 m * np.cos((theta + 2.0 * np.pi) / 3.0) - c / 3.0], axis=-1)
    # Newton polish on f(Z) = Z³ + c2 Z² + c1 Z + c0 (only on real roots)
    roots[..., 0] = _newton_polish(roots[..., 0], c2, c1, c0, polish)
    if np.any(three):
        sub = roots[three]
        for k in (1, 2):
            sub[:, k] = _newton_polish(sub[:, k], c2[three], c1[three], c0[three], polish)
        roots[three] = np.sort(sub, axis=-1)
    return roots


def _newton_polish(Z, c2, c1, c0, n):
    with np.errstate(invalid="ignore", divide="ignore"):
        for _ in range(n):
            f = ((Z + c2) * Z + c1) * Z + c0
            df = (3.0 * Z + 2.0 * c2) * Z + c1
            step = f / df
            Z = np.where(np.isfinite(step), Z - step, Z)
    return Z


def log_term(Z, B, delta1, delta2):
    """L = ln[(Z + δ1 B)/(Z + δ2 B)] / (δ1 - δ2), the integral in (C6)-(C11)."""
    return np.log((Z + delta1 * B) / (Z + delta2 * B)) / (delta1 - delta2)


def residual_g_RT(Z, A, B, delta1, delta2):
    """G^R/(RT) of (C6) [-]; the mixture's ln φ."""
    return Z - 1.0 - np.log(Z - B) - A / B * log_term(Z, B, delta1, delta2)


def choose_root(roots, A, B, delta1, delta2):
    """Pick the root of lowest residual Gibbs energy among those with Z > B.

    At fixed T, P and composition the Gibbs energy differs between roots
    only through G^R, so the root of lowest G^R/(RT) (C6) is the stable one
    of the two (or only) candidates; the middle root of three is never
    stable.  ``roots`` must be ascending with NaN last (as from
    :func:`cubic_roots`).

    Returns
    -------
    Z : ndarray, shape (...)
        The chosen root (NaN if no root exceeds B).
    choice : ndarray of int8, shape (...)
        0: only one admissible root; 1: smallest (liquid-like) root of
        several had the lowest Gibbs energy; 2: largest (vapour-like) root
        of several had the lowest Gibbs energy.
    """
    A = np.asarray(A, dtype=float)
    B = np.asarray(B, dtype=float)
    r0, r1, r2 = roots[..., 0], roots[..., 1], roots[..., 2]
    three = np.isfinite(r2)
    # smallest admissible root and largest one
    lo = np.where(r0 > B, r0, np.where(three & (r1 > B), r1, np.where(three, r2, np.nan)))
    hi = np.where(three, r2, np.where(r0 > B, r0, np.nan))
    several = three & (lo < hi)
    Z = hi.copy()
    choice = np.zeros(np.shape(Z), dtype=np.int8)
    if np.any(several):
        Ab, Bb = np.broadcast_to(A, Z.shape)[several], np.broadcast_to(B, Z.shape)[several]
        g_lo = residual_g_RT(lo[several], Ab, Bb, delta1, delta2)
        g_hi = residual_g_RT(hi[several], Ab, Bb, delta1, delta2)
        pick_lo = g_lo < g_hi
        Z[several] = np.where(pick_lo, lo[several], hi[several])
        choice[several] = np.where(pick_lo, 1, 2)
    return Z, choice


ROOT_CHOICE_TEXT = {
    0: "one admissible root (Z > B)",
    1: "smallest of several roots: lowest Gibbs energy (liquid-like)",
    2: "largest of several roots: lowest Gibbs energy (vapour-like)",
    3: "smallest admissible root, taken as the liquid of a two-phase state",
    4: "largest admissible root, taken as the vapour of a two-phase state",
}


def select_root(roots, B, which):
    """Take the smallest ('liquid') or largest ('vapour') admissible root.

    Used by flash calculations that need a given phase's root regardless of
    its Gibbs energy.
    """
    B = np.asarray(B)[..., None]
    valid = np.isfinite(roots) & (roots > B)
    if which == "liquid":
        return np.where(valid, roots, np.inf).min(axis=-1)
    return np.where(valid, roots, -np.inf).max(axis=-1)


# --------------------------------------------------------------------------
# departure functions and derivatives at (T, P)
# --------------------------------------------------------------------------
def residual_h(T, Z, a, a_T, b, B, model: CubicModel):
    """H^R of (C7) [J/mol]."""
    T = np.asarray(T, dtype=float)
    return R * T * (Z - 1.0) + (T * a_T - a) / b * log_term(Z, B, model.delta1, model.delta2)


def residual_s(Z, a_T, b, B, model: CubicModel):
    """S^R of (C8) [J/(mol K)] at the same T and P."""
    return R * np.log(Z - B) + a_T / b * log_term(Z, B, model.delta1, model.delta2)


def residual_u(T, Z, a, a_T, b, B, model: CubicModel):
    """U^R of (C9) [J/mol]."""
    T = np.asarray(T, dtype=float)
    return (T * a_T - a) / b * log_term(Z, B, model.delta1, model.delta2)


def residual_cv(T, Z, a_TT, b, B, model: CubicModel):
    """Cv^R of (C11) [J/(mol K)]."""
    return np.asarray(T, dtype=float) * a_TT / b * log_term(Z, B, model.delta1, model.delta2)


def ln_phi(T, P, Z, x, p: MixtureParameters, a=None, b=None):
    """ln φ_i of (C10) per component, shape (..., nc)."""
    T = np.asarray(T, dtype=float)
    x = np.asarray(x, dtype=float)
    if a is None:
        (a,) = mixture_a(T, x, p, derivatives=0)
    if b is None:
        b = mixture_b(x, p)
    A, B = dimensionless_AB(a, b, T, P)
    d1, d2 = p.model.delta1, p.model.delta2
    L = log_term(Z, B, d1, d2)[..., None]
    bi_b = p.b / b[..., None]
    sum_xa = mixture_a_partial(T, x, p)
    Z_ = Z[..., None]
    return (bi_b * (Z_ - 1.0) - np.log(Z_ - B[..., None])
            - (A / B)[..., None] * (2.0 * sum_xa / a[..., None] - bi_b) * L)


def pressure(T, v, a, b, model: CubicModel):
    """P of (C1) [Pa] from T [K] and v [m³/mol]."""
    T = np.asarray(T, dtype=float)
    return R * T / (v - b) - a / ((v + model.delta1 * b) * (v + model.delta2 * b))


def dP_dT_v(v, a_T, b, model: CubicModel):
    """(∂P/∂T)_v of (C1) [Pa/K]: R/(v - b) - a_T/((v + δ1 b)(v + δ2 b))."""
    return R / (v - b) - a_T / ((v + model.delta1 * b) * (v + model.delta2 * b))


def dP_dv_T(T, v, a, b, model: CubicModel):
    """(∂P/∂v)_T of (C1) [Pa mol/m³]:
    -R T/(v - b)² + a (2v + (δ1 + δ2) b) / ((v + δ1 b)(v + δ2 b))²."""
    T = np.asarray(T, dtype=float)
    D = (v + model.delta1 * b) * (v + model.delta2 * b)
    g = 2.0 * v + (model.delta1 + model.delta2) * b
    return -R * T / (v - b) ** 2 + a * g / D**2


def d2P_dv2_T(T, v, a, b, model: CubicModel):
    """(∂²P/∂v²)_T of (C1): 2RT/(v - b)³ + 2a (D - g²)/D³ with
    D = (v + δ1 b)(v + δ2 b), g = 2v + (δ1 + δ2) b."""
    T = np.asarray(T, dtype=float)
    D = (v + model.delta1 * b) * (v + model.delta2 * b)
    g = 2.0 * v + (model.delta1 + model.delta2) * b
    return 2.0 * R * T / (v - b) ** 3 + 2.0 * a * (D - g**2) / D**3


def d2P_dTdv(v, a_T, b, model: CubicModel):
    """∂²P/∂T∂v of (C1): -R/(v - b)² + a_T g / D²."""
    D = (v + model.delta1 * b) * (v + model.delta2 * b)
    g = 2.0 * v + (model.delta1 + model.delta2) * b
    return -R / (v - b) ** 2 + a_T * g / D**2


def residual_helmholtz_RT(T, v, a, b, model: CubicModel):
    """A^R(T, v)/(RT) at the same T and v [-] (Michelsen & Mollerup 2007, ch. 3):

        A^R/(RT) = -ln(1 - b/v) - a/(R T b (δ1 - δ2)) ln[(v + δ1 b)/(v + δ2 b)]

    Used as the oracle of the derivative checks; not on the hot path.
    """
    T = np.asarray(T, dtype=float)
    d1, d2 = model.delta1, model.delta2
    return (-np.log(1.0 - b / v)
            - a / (R * T * b * (d1 - d2)) * np.log((v + d1 * b) / (v + d2 * b)))


def phase_identification_parameter(T, v, a, a_T, b, model: CubicModel):
    """Π of Venkatarathnam & Oellrich, Fluid Phase Equilib. 301 (2011) 225-233, Eq. 6:

        Π = v [ (∂²P/∂T∂v)/(∂P/∂T)_v - (∂²P/∂v²)_T/(∂P/∂v)_T ]

    Π > 1: liquid-like; Π ≤ 1: vapour-like (for a single-phase state).
    """
    return v * (d2P_dTdv(v, a_T, b, model) / dP_dT_v(v, a_T, b, model)
                - d2P_dv2_T(T, v, a, b, model) / dP_dv_T(T, v, a, b, model))


def solve_volume_from_TP(T, P, x, p: MixtureParameters, which="stable"):
    """Molar volume(s) of the cubic at T, P and composition x.

    Parameters
    ----------
    which : {"stable", "liquid", "vapour"} or int array
        "stable": root of lowest Gibbs energy (with the choice code of
        :func:`choose_root`); "liquid"/"vapour": smallest/largest
        admissible root.  An integer array (0 stable, 1 liquid, 2 vapour)
        chooses per state.

    Returns
    -------
    dict with Z, v, a, a_T, a_TT, b, A, B, roots, choice.
    """
    T = np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    a, a_T, a_TT = mixture_a(T, x, p)
    b = mixture_b(x, p)
    A, B = dimensionless_AB(a, b, T, P)
    c2, c1, c0 = cubic_coefficients(A, B, p.model.delta1, p.model.delta2)
    roots = cubic_roots(c2, c1, c0)
    Z, choice = choose_root(roots, A, B, p.model.delta1, p.model.delta2)
    if isinstance(which, str):
        code = {"stable": 0, "liquid": 1, "vapour": 2}[which]
    else:
        code = np.asarray(which)
    if np.any(code != 0):
        Zl = select_root(roots, B, "liquid")
        Zv = select_root(roots, B, "vapour")
        Z = np.where(code == 1, Zl, np.where(code == 2, Zv, Z))
        choice = np.where(code == 0, choice, code + 2).astype(np.int8)
    v = Z * R * T / P
    return dict(Z=Z, v=v, a=a, a_T=a_T, a_TT=a_TT, b=b, A=A, B=B, roots=roots, choice=choice)
