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

Role of this module: it states the equations and re-exports, by concept,
the named models (:data:`MODELS`) and the model object
:class:`MixtureParameters` (:mod:`eosfill.model.cubic_parameters`), and the
readable numpy forms of (C1)-(C11): α and mixing rule
(:mod:`eosfill.model.cubic_mixing`), the cubic in Z and its roots
(:mod:`eosfill.model.cubic_zfactor`), departures and derivatives
(:mod:`eosfill.model.cubic_departures`).
The production code runs the compiled one-state kernels of
:mod:`eosfill.model.cubic_kernels` and :mod:`eosfill.model.properties`
(the same equations, written once); the numpy forms here are their test
oracles (``tests/test_kernels.py``) and feed the calculation trace
(:mod:`eosfill.io.trace`), where every intermediate value is shown."""
# ruff: noqa: F401
from eosfill.model.cubic_departures import (d2P_dTdv, d2P_dv2_T, dP_dT_v, dP_dv_T, ln_phi,
                                            phase_identification_parameter, pressure,
                                            residual_cv, residual_h, residual_helmholtz_RT,
                                            residual_s, residual_u, solve_volume_from_TP)
from eosfill.model.cubic_mixing import (_alpha_other, _sqrt_a, component_a, mixture_a,
                                        mixture_a_partial, mixture_b, soave_sqrt_alpha)
from eosfill.model.cubic_parameters import (ALPHA_SOAVE, MODELS, PR, PR78, SQRT2, SRK, CubicModel,
                                            MixtureParameters, kappa_pr76, kappa_pr78, kappa_srk)
from eosfill.model.cubic_zfactor import (ROOT_CHOICE_TEXT, _newton_polish, choose_root,
                                         cubic_coefficients, cubic_roots, dimensionless_AB,
                                         log_term, residual_g_RT, select_root)
