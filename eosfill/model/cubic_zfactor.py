"""The cubic in Z (C5), its real roots, and the choice of root by the residual
Gibbs energy (C6) of :mod:`eosfill.model.cubic`, in readable numpy form."""
from __future__ import annotations

import numpy as np

from eosfill.constants import R


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
