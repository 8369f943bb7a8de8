"""Departure functions (C7)-(C11), pressure derivatives of (C1), the phase
identification parameter and the volume at (T, P) of :mod:`eosfill.model.cubic`,
in readable numpy form."""
from __future__ import annotations

import numpy as np

from eosfill.constants import R
from eosfill.model.cubic_mixing import mixture_a, mixture_a_partial, mixture_b
from eosfill.model.cubic_parameters import CubicModel, MixtureParameters
from eosfill.model.cubic_zfactor import (choose_root, cubic_coefficients, cubic_roots,
                                        dimensionless_AB, log_term, select_root)


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
