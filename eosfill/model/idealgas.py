"""Ideal-gas heat capacity, enthalpy and entropy.

One correlation form, in three functions as its integrals are analytic:

    Cp°/R = a0 + a1 T + a2 T^2 + a3 T^3 + a4 T^4

the polynomial of Poling, Prausnitz & O'Connell, *The Properties of Gases and
Liquids*, 5th ed., McGraw-Hill (2001), Appendix A, Section C (coefficients
stored unscaled, SI, T in K).

Reference state (per component): ideal gas, H° = 0 and S° = 0 at
T0 = 298.15 K, P0 = 101325 Pa.  Then

    H°(T)/R   = ∫_{T0}^{T} Cp°/R dT
              = Σ_k a_k (T^{k+1} - T0^{k+1}) / (k+1)
    S°(T,P)/R = ∫_{T0}^{T} Cp°/(R T) dT - ln(P/P0)
              = a0 ln(T/T0) + Σ_{k≥1} a_k (T^k - T0^k)/k - ln(P/P0)

For an ideal-gas mixture of mole fractions x_i (Gibbs' theorem):

    H°mix = Σ x_i H°_i ,   S°mix = Σ x_i S°_i(T, P) - R Σ x_i ln x_i

Outside a correlation's valid range [Tmin, Tmax] a polynomial can turn
over (even to negative Cp°), which would break the monotone energy-
temperature relation every solver relies on.  The *extended* functions
(:func:`cp0_R_ext`, :func:`h0_R_ext`, :func:`s0T_R_ext`) therefore hold Cp°
at its value at the nearer end of the range outside it (the integrals stay
analytic and continuous), and a :class:`~eosfill.errors.RangeWarning` is
issued for results that lie outside (common practice, no source).

All functions broadcast: ``T`` of shape (...), coefficients of shape (nc, 5),
results per component of shape (..., nc).

Role of this module: the readable numpy forms, kept as the test oracles of
the compiled one-state kernels in :mod:`eosfill.model.idealgas_kernels`
(which the production code runs), and for the calculation trace;
:func:`check_range` (the RangeWarning) is used by the production code.
"""
from __future__ import annotations

import warnings

import numpy as np

from eosfill.constants import P0, R, T0
from eosfill.errors import RangeWarning

_K = np.arange(5.0)


def cp0_R(T, a):
    """Cp°/R of each component, Poling et al. (2001) Appendix A polynomial.

    Parameters
    ----------
    T : array_like
        Temperature [K], shape (...).
    a : ndarray
        Coefficients a0..a4 per component, shape (nc, 5) [1/K^k].

    Returns
    -------
    ndarray, shape (..., nc)
        Dimensionless Cp°/R.
    """
    T = np.asarray(T, dtype=float)[..., None]
    # Horner form of a0 + a1 T + a2 T^2 + a3 T^3 + a4 T^4
    return a[:, 0] + T * (a[:, 1] + T * (a[:, 2] + T * (a[:, 3] + T * a[:, 4])))


def int_cp0_R(T, a, Tref=T0):
    """∫_{Tref}^{T} Cp°/R dT  [K] per component (= H°(T)/R with H°(Tref) = 0)."""
    T = np.asarray(T, dtype=float)[..., None]
    powers = np.arange(1.0, 6.0)  # k+1
    return (a * ((T[..., None] ** powers - Tref ** powers) / powers)).sum(axis=-1)


def int_cp0_R_over_T(T, a, Tref=T0):
    """∫_{Tref}^{T} Cp°/(R T) dT  [-] per component."""
    T = np.asarray(T, dtype=float)[..., None]
    k = np.arange(1.0, 5.0)
    poly = (a[:, 1:] * ((T[..., None] ** k - Tref ** k) / k)).sum(axis=-1)
    return a[:, 0] * np.log(T / Tref) + poly


def _inside(T, Tmin, Tmax):
    """True if every T lies inside every component's range (no clipping needed)."""
    if T.size == 0:
        return True
    return bool(np.min(T) >= np.max(Tmin) and np.max(T) <= np.min(Tmax))


def cp0_R_ext(T, a, Tmin, Tmax):
    """Cp°/R per component, held constant outside [Tmin, Tmax]."""
    T = np.asarray(T, dtype=float)
    Tc = T[..., None] if _inside(T, Tmin, Tmax) else np.clip(T[..., None], Tmin, Tmax)
    return a[:, 0] + Tc * (a[:, 1] + Tc * (a[:, 2] + Tc * (a[:, 3] + Tc * a[:, 4])))


def h0_R_ext(T, a, Tmin, Tmax, Tref=T0):
    """H°/R [K] per component, ∫_{Tref}^{T} Cp°/R dT with Cp° held outside the range.

    H°(T) = H°(Tc) + Cp°(Tc) (T - Tc),  Tc = clip(T, Tmin, Tmax).
    (Tref = 298.15 K lies inside every range of the data.)
    """
    T = np.asarray(T, dtype=float)
    if _inside(T, Tmin, Tmax):
        return _int_cp0_R_pc(T[..., None], a, Tref)
    Tcl = np.clip(T[..., None], Tmin, Tmax)
    inner = _int_cp0_R_pc(Tcl, a, Tref)
    return inner + cp0_R_ext(T, a, Tmin, Tmax) * (T[..., None] - Tcl)


def s0T_R_ext(T, a, Tmin, Tmax, Tref=T0):
    """∫_{Tref}^{T} Cp°/(R T) dT per component with Cp° held outside the range.

    = S(Tc) + Cp°(Tc)/R · ln(T/Tc),  Tc = clip(T, Tmin, Tmax).
    """
    T = np.asarray(T, dtype=float)
    if _inside(T, Tmin, Tmax):
        return _int_cp0_R_over_T_pc(T[..., None], a, Tref)
    Tcl = np.clip(T[..., None], Tmin, Tmax)
    inner = _int_cp0_R_over_T_pc(Tcl, a, Tref)
    return inner + cp0_R_ext(T, a, Tmin, Tmax) * np.log(T[..., None] / Tcl)


def _int_cp0_R_pc(Tpc, a, Tref):
    """∫ Cp°/R dT from Tref to a per-component temperature Tpc (..., nc).

    Horner form of Σ_k a_k T^(k+1)/(k+1) minus its value at Tref."""
    c = a / np.arange(1.0, 6.0)

    def F(T):
        return T * (c[:, 0] + T * (c[:, 1] + T * (c[:, 2] + T * (c[:, 3] + T * c[:, 4]))))

    return F(Tpc) - F(Tref)


def _int_cp0_R_over_T_pc(Tpc, a, Tref):
    """∫ Cp°/(R T) dT from Tref to Tpc: a0 ln(T/Tref) + Σ_{k≥1} a_k (T^k - Tref^k)/k (Horner)."""
    c = a[:, 1:] / np.arange(1.0, 5.0)

    def F(T):
        return T * (c[:, 0] + T * (c[:, 1] + T * (c[:, 2] + T * c[:, 3])))

    return a[:, 0] * np.log(Tpc / Tref) + F(Tpc) - F(Tref)


def check_range(T, Tmin, Tmax, names, present=None):
    """Warn (:class:`RangeWarning`) if T leaves a component's fitted range.

    Parameters
    ----------
    T : array_like
        Temperatures [K].
    Tmin, Tmax : ndarray, shape (nc,)
        Validity range of each component's correlation [K].
    names : sequence of str
        Component names, for the message.
    present : ndarray of bool, shape (nc,), optional
        Only components present are checked.
    """
    T = np.asarray(T, dtype=float)
    if T.size == 0:
        return
    lo, hi = float(np.min(T)), float(np.max(T))
    for i, name in enumerate(names):
        if present is not None and not present[i]:
            continue
        if lo < Tmin[i] or hi > Tmax[i]:
            warnings.warn(
                f"ideal-gas Cp of {name} evaluated at T in [{lo:.6g}, {hi:.6g}] K, "
                f"outside its correlation's range {Tmin[i]:g}-{Tmax[i]:g} K",
                RangeWarning,
                stacklevel=4,
            )


def _fixed_x_inside(T, x, Tmin, Tmax):
    """One composition and every T inside every present component's range:
    the mixture is then one polynomial with coefficients Σ x_i a_i,k."""
    if np.ndim(x) != 1:
        return False
    present = np.asarray(x) > 0.0
    T = np.asarray(T, dtype=float)
    lo = np.max(np.broadcast_to(Tmin, present.shape)[present])
    hi = np.min(np.broadcast_to(Tmax, present.shape)[present])
    return T.size == 0 or bool(np.min(T) >= lo and np.max(T) <= hi)


def mixture_h0(T, x, a, Tmin=-np.inf, Tmax=np.inf):
    """Ideal-gas molar enthalpy of a mixture [J/mol]: Σ x_i H°_i(T)."""
    if _fixed_x_inside(T, x, Tmin, Tmax):
        am = np.asarray(x) @ a
        return R * _int_cp0_R_pc(np.asarray(T, dtype=float)[..., None], am[None, :], T0)[..., 0]
    return R * np.einsum("...i,...i->...", x, h0_R_ext(T, a, Tmin, Tmax))


def mixture_s0(T, P, x, a, Tmin=-np.inf, Tmax=np.inf):
    """Ideal-gas molar entropy of a mixture [J/(mol K)].

    S° = Σ x_i [S°_i(T) - R ln(P/P0)] - R Σ x_i ln x_i   (x ln x = 0 at x = 0)
    """
    x = np.asarray(x, dtype=float)
    xlnx = np.where(x > 0.0, x * np.log(np.where(x > 0.0, x, 1.0)), 0.0).sum(axis=-1)
    if _fixed_x_inside(T, x, Tmin, Tmax):
        am = x @ a
        s_T = _int_cp0_R_over_T_pc(np.asarray(T, dtype=float)[..., None], am[None, :], T0)[..., 0]
    else:
        s_T = np.einsum("...i,...i->...", x, s0T_R_ext(T, a, Tmin, Tmax))
    return R * (s_T - np.log(np.asarray(P, dtype=float) / P0) - xlnx)


def mixture_cp0(T, x, a, Tmin=-np.inf, Tmax=np.inf):
    """Ideal-gas molar isobaric heat capacity of a mixture [J/(mol K)]."""
    if _fixed_x_inside(T, x, Tmin, Tmax):
        am = np.asarray(x) @ a
        T = np.asarray(T, dtype=float)
        return R * (am[0] + T * (am[1] + T * (am[2] + T * (am[3] + T * am[4]))))
    return R * np.einsum("...i,...i->...", x, cp0_R_ext(T, a, Tmin, Tmax))
