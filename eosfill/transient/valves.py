"""IEC 60534-2-1 (2011) gas sizing, turbulent flow (F5-F9):

    x = (P1 - P2)/P1,  Fγ = γ/1.40                              (F5)
    Y = 1 - x/(3 Fγ xT)   (≥ 2/3)                               (F6)
    choked when x ≥ Fγ xT: x and Y are held at Fγ xT and 2/3     (F7)
    W = N6 Fp C Y sqrt(x P1 ρ1),  N6 = 3.16 for Kv [m³/h],
        W [kg/h], P1 [kPa], ρ1 [kg/m³]                          (F8)
    Kv = 0.865 Cv                                                (F9)

with the piping geometry factor Fp and xTP of attached reducers
(:func:`piping_geometry_factor`).  The Reynolds-number factor of laminar
flow (small valves at low flow) is not modelled: turbulent flow is assumed.

Neighbours: the restrictions that use these equations in
:mod:`~eosfill.transient.restrictions`; the map is :mod:`~eosfill.transient.flow`.
"""
from __future__ import annotations

import numpy as np


# IEC 60534-2-1 numerical constants (Table 1 of the standard; values as
# reproduced in ISA-75.01.01-2007 Table 1, from memory; checked in the tests
# against fluids.control_valve, which implements the same standard)
N6_KV = 3.16  # W [kg/h], P1 [kPa], rho1 [kg/m3], Kv [m3/h] (2.73 is the Cv value)
N2_KV = 1.60e-3  # d [mm], Kv
N5_KV = 1.80e-3  # d [mm], Kv
KV_PER_CV = 0.865  # Kv = 0.865 Cv (F9)


# --------------------------------------------------------------------------
# IEC 60534-2-1 (F5-F9)
# --------------------------------------------------------------------------
def piping_geometry_factor(C, d, D1=None, D2=None):
    """Fp and the loss coefficient ζ1 + ζB1 of reducers around a valve (IEC 60534-2-1).

        ζ1 = 0.5 (1 - (d/D1)²)²,  ζ2 = 1.0 (1 - (d/D2)²)²
        ζB = 1 - (d/D)⁴,  Σζ = ζ1 + ζ2 + ζB1 - ζB2
        Fp = [1 + Σζ/N2 (C/d²)²]^(-1/2)        (d in mm, C = Kv)

    Parameters
    ----------
    C : Kv [m³/h];  d : valve size [m];  D1, D2 : upstream and downstream pipe [m]
        (None: no reducer on that side).

    Returns
    -------
    Fp [-], zeta_i = ζ1 + ζB1 [-]
    """
    dmm = d * 1000.0
    z1 = zB1 = z2 = zB2 = 0.0
    if D1 is not None:
        z1 = 0.5 * (1.0 - (d / D1) ** 2) ** 2
        zB1 = 1.0 - (d / D1) ** 4
    if D2 is not None:
        z2 = 1.0 * (1.0 - (d / D2) ** 2) ** 2
        zB2 = 1.0 - (d / D2) ** 4
    zsum = z1 + z2 + zB1 - zB2
    Fp = (1.0 + zsum / N2_KV * (C / dmm**2) ** 2) ** -0.5
    return Fp, z1 + zB1


def iec_gas_mass_flow(Kv, xT, P1, P2, rho1, gamma, Fp=1.0, xTP=None):
    """Mass flow [kg/s] through a control valve, IEC 60534-2-1 turbulent gas flow (F5-F8).

    Parameters
    ----------
    Kv : flow coefficient [m³/h]
    xT : pressure-differential ratio factor at choked flow [-]
    P1, P2 : upstream and downstream absolute pressure [Pa]
    rho1 : upstream density [kg/m³]
    gamma : specific-heat ratio of the gas at the inlet [-]
    Fp : piping geometry factor [-] (1 without reducers)
    xTP : xT with attached fittings (default xT)

    Returns
    -------
    W [kg/s] (0 when P2 ≥ P1), choked flag
    """
    xt = xT if xTP is None else xTP
    P1 = np.asarray(P1, dtype=float)
    x = np.clip((P1 - np.asarray(P2, dtype=float)) / P1, 0.0, None)   # (F5)
    Fg = np.asarray(gamma, dtype=float) / 1.40
    x_ch = Fg * xt
    choked = x >= x_ch                                              # (F7)
    xe = np.minimum(x, x_ch)
    Y = 1.0 - xe / (3.0 * x_ch)                                     # (F6)
    W_kg_h = N6_KV * Fp * Kv * Y * np.sqrt(xe * (P1 / 1000.0) * rho1)  # (F8)
    W = W_kg_h / 3600.0
    return (W.item() if np.ndim(W) == 0 else W), (bool(choked) if np.ndim(choked) == 0 else choked)


def iec_xTP(xT, Fp, C, d, zeta_i):
    """xTP of a valve with reducers: (xT/Fp²) / (1 + xT ζi/N5 (C/d²)²) (IEC 60534-2-1; d in mm)."""
    dmm = d * 1000.0
    return (xT / Fp**2) / (1.0 + xT * zeta_i / N5_KV * (C / dmm**2) ** 2)

