"""The ideal gas for one state, compiled (numba): the production kernels.

The Poling, Prausnitz & O'Connell polynomial (*The Properties of Gases and
Liquids*, 5th ed., 2001, Appendix A, Section C) as in
:mod:`eosfill.model.idealgas` (the readable numpy forms there are the test
oracles), in its three functions

    Cp°/R = a0 + a1 T + a2 T² + a3 T³ + a4 T⁴                          (I1)
    ∫_{Tref}^{T} Cp°/R dT = Σ_k a_k (T^(k+1) - Tref^(k+1))/(k+1)         (I2)
    ∫_{Tref}^{T} Cp°/(R T) dT = a0 ln(T/Tref) + Σ_{k≥1} a_k (T^k - Tref^k)/k   (I3)

each held at its range end outside [Tmin, Tmax] (Cp° constant there; the
integrals stay continuous; common practice, no source), and the mixture
sums (Gibbs' theorem) H° = Σ x_i H°_i, S°(T, P0) = Σ x_i S°_i - R Σ x_i ln x_i.

The ideal-gas data go to the kernels as the tuple
``ig = (coeffs (nc, 5), Tmin (nc,), Tmax (nc,))``.
"""
from __future__ import annotations

import math

from numba import njit

from eosfill.constants import R, T0
from eosfill.model.cubic_kernels import KERNEL


@njit(**KERNEL)
def cp0_R(T, a):
    """Cp°/R (I1) of one component, Horner form; ``a`` its five coefficients [1/K^k]."""
    return a[0] + T * (a[1] + T * (a[2] + T * (a[3] + T * a[4])))


@njit(**KERNEL)
def int_cp0_R(T, a, Tref):
    """∫_{Tref}^{T} Cp°/R dT (I2) [K] of one component, Horner form."""
    def F(t):
        return t * (a[0] + t * (a[1] / 2.0 + t * (a[2] / 3.0 + t * (a[3] / 4.0 + t * a[4] / 5.0))))
    return F(T) - F(Tref)


@njit(**KERNEL)
def int_cp0_R_over_T(T, a, Tref, ln_T_Tref):
    """∫_{Tref}^{T} Cp°/(R T) dT (I3) [-] of one component, Horner form;
    ``ln_T_Tref`` = ln(T/Tref) is passed in (one logarithm per mixture state)."""
    def F(t):
        return t * (a[1] + t * (a[2] / 2.0 + t * (a[3] / 3.0 + t * a[4] / 4.0)))
    return a[0] * ln_T_Tref + F(T) - F(Tref)


@njit(**KERNEL)
def component_ideal(T, ln_T_T0, a, Tmin, Tmax):
    """(I1)-(I3) of one component at T (ln_T_T0 = ln(T/T0)) with Cp° held
    constant outside [Tmin, Tmax].

    Returns
    -------
    cp0/R [-], H°/R [K] (from T0 = 298.15 K), ∫_{T0}^{T} Cp°/(R T) dT [-]
    """
    if Tmin <= T <= Tmax:
        return cp0_R(T, a), int_cp0_R(T, a, T0), int_cp0_R_over_T(T, a, T0, ln_T_T0)
    Tcl = min(max(T, Tmin), Tmax)
    cp = cp0_R(Tcl, a)
    h = int_cp0_R(Tcl, a, T0) + cp * (T - Tcl)
    s = int_cp0_R_over_T(Tcl, a, T0, math.log(Tcl / T0)) + cp * math.log(T / Tcl)
    return cp, h, s


@njit(**KERNEL)
def mixture_ideal(T, x, ig):
    """Ideal-gas mixture at T: Cp° [J/(mol K)], H° [J/mol], S°(T, P0) [J/(mol K)].

    S°(T, P0) includes the mixing term -R Σ x_i ln x_i (x ln x = 0 at x = 0);
    S°(T, P) = S°(T, P0) - R ln(P/P0).
    """
    coeffs, Tmin, Tmax = ig
    cp = 0.0
    h = 0.0
    s = 0.0
    xlnx = 0.0
    ln_T_T0 = math.log(T / T0)
    for i in range(x.shape[0]):
        xi = x[i]
        if xi == 0.0:
            continue
        c, hi, si = component_ideal(T, ln_T_T0, coeffs[i], Tmin[i], Tmax[i])
        cp += xi * c
        h += xi * hi
        s += xi * si
        if xi > 0.0:
            xlnx += xi * math.log(xi)
    return R * cp, R * h, R * (s - xlnx)
