"""Solid boundaries of the bundled fluids: triple points, and the melting and
sublimation pressures of each fluid from its reference equation's paper.

The cubic equations of state know nothing of solids: below a fluid's
triple-point temperature they happily return a (metastable) liquid or a
vapour-liquid split.  This module brings the published solid-fluid
boundaries of the fluids' reference equations of state.  The screening check
that uses them is in :mod:`eosfill.equilibrium.solid_screening` (map:
:mod:`eosfill.equilibrium.solid`).

Data
----
* Triple points of every bundled fluid: ``data/fluids/triple_points.csv``
  (a source key on every row; citations in ``data/SOURCES.md``).
* Melting and sublimation curves, written below in each paper's symbols:

  ============== ========================================= =======================================
  fluid          melting pressure                          sublimation pressure
  ============== ========================================= =======================================
  carbon dioxide Span & Wagner 1996, Eq. (3.10)            Span & Wagner 1996, Eq. (3.12)
  water          IAPWS R14-08(2011), Eqs. (1)-(5)          IAPWS R14-08(2011), Eq. (6)
  nitrogen       Span et al. 2000 (melting equation)       Span et al. 2000 (sublimation equation)
  argon          Tegeler et al. 1999 (melting equation)    Tegeler et al. 1999 (sublimation eq.)
  methane        Setzmann & Wagner 1991 (melting eq.)      Setzmann & Wagner 1991 (sublimation eq.)
  ethane         Buecker & Wagner 2006 (melting equation)  none bundled
  ============== ========================================= =======================================

  Equation numbers are given where they were checked against the paper
  (CO2, water); for the others the coefficients were checked against
  independent transcriptions (CoolProp 8.0.0's fluid files for the melting
  curves, pychemqt's and other public transcriptions for the sublimation
  curves; the tests compare with CoolProp's melting line and check each
  sublimation slope against the enthalpy of fusion), and the paper's
  equation number was not at hand.  Any other fluid has its triple point
  only: a state below its triple-point temperature is flagged.  Above a
  melting curve's upper temperature nothing is screened (the melting
  pressures there lie beyond the reference equations' own range).
"""
from __future__ import annotations

import csv
import warnings
from dataclasses import dataclass
from functools import lru_cache
from typing import Callable

import numpy as np

from eosfill.errors import InputError, RangeWarning
from eosfill.model.components import data_dir, get_component


# --------------------------------------------------------------------------
# triple points (data/fluids/triple_points.csv)
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class TriplePoint:
    """A fluid's gas-liquid-solid triple point and its source.

    ``T`` [K] and ``P`` [Pa] are None where the fluid has none (helium-4)."""

    name: str
    T: float | None
    P: float | None
    source: str
    note: str


@lru_cache(maxsize=None)
def load_triple_points() -> dict:
    """All bundled triple points, keyed by the fluid name used in ``fluids.csv``."""
    path = data_dir() / "fluids" / "triple_points.csv"
    out = {}
    with open(path, newline="", encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            T = float(row["T_triple_K"]) if row["T_triple_K"].strip() else None
            P = float(row["P_triple_Pa"]) if row["P_triple_Pa"].strip() else None
            out[row["name"]] = TriplePoint(row["name"], T, P, row["source"], row["note"])
    return out


def triple_point(fluid: str) -> TriplePoint:
    """The triple point of one fluid (name, alias, formula or CAS number)."""
    name = get_component(fluid).name
    tp = load_triple_points().get(name)
    if tp is None:
        raise InputError("fluid", fluid, "a fluid with a row in data/fluids/triple_points.csv")
    return tp


# --------------------------------------------------------------------------
# the published curves, one function each, in the papers' symbols
# --------------------------------------------------------------------------
# Carbon dioxide: Span & Wagner (1996), J. Phys. Chem. Ref. Data 25, 1509, Sec. 3.2
_CO2_Tt, _CO2_pt = 216.592, 0.51795e6   # triple point [K], [Pa] (Sec. 3.2.1)


def co2_melting_pressure(T):
    """Span & Wagner (1996), Eq. (3.10):
    p_m / p_t = 1 + a1 (T/T_t - 1) + a2 (T/T_t - 1)^2,  a1 = 1955.5390, a2 = 2055.4593."""
    a1, a2 = 1955.5390, 2055.4593
    d = np.asarray(T, dtype=float) / _CO2_Tt - 1.0
    return _CO2_pt * (1.0 + a1 * d + a2 * d * d)


def co2_sublimation_pressure(T):
    """Span & Wagner (1996), Eq. (3.12):
    ln(p_sub / p_t) = (T_t/T) [a1 (1 - T/T_t) + a2 (1 - T/T_t)^1.9 + a3 (1 - T/T_t)^2.9],
    a1 = -14.740846, a2 = 2.4327015, a3 = -5.3061778."""
    a1, a2, a3 = -14.740846, 2.4327015, -5.3061778
    T = np.asarray(T, dtype=float)
    w = np.maximum(1.0 - T / _CO2_Tt, 0.0)
    return _CO2_pt * np.exp(_CO2_Tt / T * (a1 * w + a2 * w ** 1.9 + a3 * w ** 2.9))


# Water: IAPWS R14-08(2011), Revised Release on the Pressure along the Melting and
# Sublimation Curves of Ordinary Water Substance (Wagner, Riethmann, Feistel & Harvey 2011)
_H2O_Tt, _H2O_pt = 273.16, 611.657   # [K], [Pa] (Sec. 2 of the release)


def water_melting_pressure_ice_Ih(T):
    """IAPWS R14-08(2011), Eq. (1), ice Ih, 251.165 K <= T <= 273.16 K:
    p / p_t = 1 + sum_i a_i (1 - θ^b_i),  θ = T / T_t."""
    a = (0.119539337e7, 0.808183159e5, 0.333826860e4)
    b = (0.300000e1, 0.257500e2, 0.103750e3)
    th = np.asarray(T, dtype=float) / _H2O_Tt
    return _H2O_pt * (1.0 + sum(ai * (1.0 - th ** bi) for ai, bi in zip(a, b)))


def water_melting_pressure_ice_III(T):
    """IAPWS R14-08(2011), Eq. (2), ice III, 251.165 K <= T <= 256.164 K:
    p / p* = 1 - 0.299948 (1 - θ^60),  θ = T / 251.165 K, p* = 208.566 MPa."""
    th = np.asarray(T, dtype=float) / 251.165
    return 208.566e6 * (1.0 - 0.299948 * (1.0 - th ** 60))


def water_melting_pressure_ice_V(T):
    """IAPWS R14-08(2011), Eq. (3), ice V, 256.164 K <= T <= 273.31 K:
    p / p* = 1 - 1.18721 (1 - θ^8),  θ = T / 256.164 K, p* = 350.100 MPa."""
    th = np.asarray(T, dtype=float) / 256.164
    return 350.100e6 * (1.0 - 1.18721 * (1.0 - th ** 8))


def water_melting_pressure_ice_VI(T):
    """IAPWS R14-08(2011), Eq. (4), ice VI, 273.31 K <= T <= 355 K:
    p / p* = 1 - 1.07476 (1 - θ^4.6),  θ = T / 273.31 K, p* = 632.400 MPa."""
    th = np.asarray(T, dtype=float) / 273.31
    return 632.400e6 * (1.0 - 1.07476 * (1.0 - th ** 4.6))


def water_melting_pressure_ice_VII(T):
    """IAPWS R14-08(2011), Eq. (5), ice VII, 355 K <= T <= 715 K:
    ln(p / p*) = 1.73683 (1 - θ^-1) - 0.0544606 (1 - θ^5) + 0.806106e-7 (1 - θ^22),
    θ = T / 355 K, p* = 2216 MPa."""
    th = np.asarray(T, dtype=float) / 355.0
    return 2216e6 * np.exp(0.173683e1 * (1.0 - 1.0 / th) - 0.544606e-1 * (1.0 - th ** 5)
                           + 0.806106e-7 * (1.0 - th ** 22))


def water_sublimation_pressure(T):
    """IAPWS R14-08(2011), Eq. (6), 50 K <= T <= 273.16 K:
    ln(p_subl / p_t) = θ^-1 sum_i a_i θ^b_i,  θ = T / T_t."""
    a = (-0.212144006e2, 0.273203819e2, -0.610598130e1)
    b = (0.333333333e-2, 0.120666667e1, 0.170333333e1)
    th = np.asarray(T, dtype=float) / _H2O_Tt
    return _H2O_pt * np.exp(sum(ai * th ** bi for ai, bi in zip(a, b)) / th)


# ice phase -> (function, T_min, T_max) [K]
ICE_MELTING = {
    "Ih": (water_melting_pressure_ice_Ih, 251.165, 273.16),
    "III": (water_melting_pressure_ice_III, 251.165, 256.164),
    "V": (water_melting_pressure_ice_V, 256.164, 273.31),
    "VI": (water_melting_pressure_ice_VI, 273.31, 355.0),
    "VII": (water_melting_pressure_ice_VII, 355.0, 715.0),
}


def _water_high_pressure_ice_melting(T):
    """Melting pressure of the high-pressure ice (III, V, VI, VII) that borders the
    liquid at T (251.165-715 K), NaN outside; the piecewise union of Eqs. (2)-(5)."""
    T = np.asarray(T, dtype=float)
    out = np.full(T.shape, np.nan)
    for ice in ("III", "V", "VI", "VII"):
        f, lo, hi = ICE_MELTING[ice]
        m = (T >= lo) & (T <= hi)
        out = np.where(m, f(np.where(m, T, lo)), out)
    return out


# Nitrogen: Span, Lemmon, Jacobsen, Wagner & Yokozeki (2000), J. Phys. Chem. Ref. Data 29, 1361
_N2_Tt, _N2_pt = 63.151, 12.523e3


def n2_melting_pressure(T):
    """Span et al. (2000), melting pressure: p_m / p_t = 1 + a1 [(T/T_t)^1.78963 - 1], a1 = 12798.61."""
    return _N2_pt * (1.0 + 12798.61 * ((np.asarray(T, dtype=float) / _N2_Tt) ** 1.78963 - 1.0))


def n2_sublimation_pressure(T):
    """Span et al. (2000), sublimation pressure: ln(p_sub / p_t) = (T_t/T) a1 (1 - T/T_t), a1 = -13.088692."""
    T = np.asarray(T, dtype=float)
    return _N2_pt * np.exp(_N2_Tt / T * (-13.088692) * (1.0 - T / _N2_Tt))


# Argon: Tegeler, Span & Wagner (1999), J. Phys. Chem. Ref. Data 28, 779
_AR_Tt, _AR_pt = 83.8058, 68.891e3


def ar_melting_pressure(T):
    """Tegeler et al. (1999), melting pressure:
    p_m / p_t = 1 + a1 [(T/T_t)^1.05 - 1] + a2 [(T/T_t)^1.275 - 1], a1 = -7476.2665, a2 = 9959.0613."""
    th = np.asarray(T, dtype=float) / _AR_Tt
    return _AR_pt * (1.0 - 7476.2665 * (th ** 1.05 - 1.0) + 9959.0613 * (th ** 1.275 - 1.0))


def ar_sublimation_pressure(T):
    """Tegeler et al. (1999), sublimation pressure:
    ln(p_sub / p_t) = (T_t/T) [a1 (1 - T/T_t) + a2 (1 - T/T_t)^2.7], a1 = -11.391604, a2 = -0.39513."""
    T = np.asarray(T, dtype=float)
    w = np.maximum(1.0 - T / _AR_Tt, 0.0)
    return _AR_pt * np.exp(_AR_Tt / T * (-11.391604 * w - 0.39513 * w ** 2.7))


# Methane: Setzmann & Wagner (1991), J. Phys. Chem. Ref. Data 20, 1061
_CH4_Tt, _CH4_pt = 90.6941, 11.696e3


def ch4_melting_pressure(T):
    """Setzmann & Wagner (1991), melting pressure:
    p_m / p_t = 1 + a1 [(T/T_t)^1.85 - 1] + a2 [(T/T_t)^2.1 - 1], a1 = 0.247568e5, a2 = -0.736602e4."""
    th = np.asarray(T, dtype=float) / _CH4_Tt
    return _CH4_pt * (1.0 + 0.247568e5 * (th ** 1.85 - 1.0) - 0.736602e4 * (th ** 2.1 - 1.0))


def ch4_sublimation_pressure(T):
    """Setzmann & Wagner (1991), sublimation pressure: ln(p_sub / p_t) = (T_t/T) a1 (1 - T/T_t), a1 = -12.84."""
    T = np.asarray(T, dtype=float)
    return _CH4_pt * np.exp(_CH4_Tt / T * (-12.84) * (1.0 - T / _CH4_Tt))


# Ethane: Buecker & Wagner (2006), J. Phys. Chem. Ref. Data 35, 205
_C2H6_Tt, _C2H6_pt = 90.368, 1.14


def c2h6_melting_pressure(T):
    """Buecker & Wagner (2006), melting pressure:
    p_m / p_t = 1 + a1 (T/T_t - 1) + a2 [(T/T_t)^2.55 - 1], a1 = 0.223626315e9, a2 = 0.105262374e9."""
    th = np.asarray(T, dtype=float) / _C2H6_Tt
    return _C2H6_pt * (1.0 + 0.223626315e9 * (th - 1.0) + 0.105262374e9 * (th ** 2.55 - 1.0))


@dataclass(frozen=True)
class Curve:
    """One published solid-fluid boundary p(T) of one fluid, with its range [K] and source."""

    fluid: str
    kind: str            # "melting" or "sublimation"
    p: Callable
    T_min: float
    T_max: float
    source: str          # key in data/SOURCES.md
    equation: str        # where the formula is printed

    def __call__(self, T, warn=True):
        T = np.asarray(T, dtype=float)
        if warn and T.size and (np.min(T) < self.T_min or np.max(T) > self.T_max):
            warnings.warn(f"{self.kind} pressure of {self.fluid} evaluated at T in [{np.min(T):.6g}, "
                          f"{np.max(T):.6g}] K, outside the range {self.T_min:g}-{self.T_max:g} K of "
                          f"{self.equation}", RangeWarning, stacklevel=3)
        return self.p(T)


# Ranges: melting curves from the triple point to the upper limit stated with the
# equation (CO2, water: the paper; the others as in CoolProp 8.0.0's copy of the same
# equation); sublimation curves down to the lowest temperature stated for them
# (water: 50 K, IAPWS; CO2: 154 K, the lowest sublimation data the fit rests on -
# from memory; N2, Ar, CH4: not at hand, taken as 0.6 T_t, a placeholder marked as such).
MELTING = {
    "carbon dioxide": Curve("carbon dioxide", "melting", co2_melting_pressure, _CO2_Tt, 327.0,
                            "SpanWagner1996", "Span & Wagner 1996, Eq. (3.10)"),
    "nitrogen": Curve("nitrogen", "melting", n2_melting_pressure, _N2_Tt, 287.0,
                      "Span2000", "Span et al. 2000, melting-pressure equation"),
    "argon": Curve("argon", "melting", ar_melting_pressure, _AR_Tt, 260.0,
                   "Tegeler1999", "Tegeler et al. 1999, melting-pressure equation"),
    "methane": Curve("methane", "melting", ch4_melting_pressure, _CH4_Tt, 625.0,
                     "SetzmannWagner1991", "Setzmann & Wagner 1991, melting-pressure equation"),
    "ethane": Curve("ethane", "melting", c2h6_melting_pressure, _C2H6_Tt, 190.0,
                    "BueckerWagner2006a", "Buecker & Wagner 2006, melting-pressure equation"),
}
SUBLIMATION = {
    "carbon dioxide": Curve("carbon dioxide", "sublimation", co2_sublimation_pressure, 154.0, _CO2_Tt,
                            "SpanWagner1996", "Span & Wagner 1996, Eq. (3.12)"),
    "water": Curve("water", "sublimation", water_sublimation_pressure, 50.0, _H2O_Tt,
                   "IAPWS2011Melt", "IAPWS R14-08(2011), Eq. (6)"),
    "nitrogen": Curve("nitrogen", "sublimation", n2_sublimation_pressure, 0.6 * _N2_Tt, _N2_Tt,
                      "Span2000", "Span et al. 2000, sublimation-pressure equation"),
    "argon": Curve("argon", "sublimation", ar_sublimation_pressure, 0.6 * _AR_Tt, _AR_Tt,
                   "Tegeler1999", "Tegeler et al. 1999, sublimation-pressure equation"),
    "methane": Curve("methane", "sublimation", ch4_sublimation_pressure, 0.6 * _CH4_Tt, _CH4_Tt,
                     "SetzmannWagner1991", "Setzmann & Wagner 1991, sublimation-pressure equation"),
}
_WATER_MELTING_EQ = "IAPWS R14-08(2011), Eqs. (1)-(5)"


def _name(fluid: str) -> str:
    return get_component(fluid).name


def sublimation_pressure(fluid: str, T):
    """Sublimation pressure p_sub(T) [Pa] of a pure fluid from its reference equation's paper.

    Parameters
    ----------
    fluid : str
        Fluid name, alias, formula or CAS number (one with a bundled curve:
        carbon dioxide, water, nitrogen, argon, methane).
    T : array_like
        Temperature [K], at or below the triple-point temperature.

    Warns :class:`RangeWarning` outside the curve's range; raises
    :class:`InputError` above the triple point or for a fluid without a curve.

    Examples
    --------
    >>> round(float(sublimation_pressure("carbon dioxide", 194.686)) / 1e3, 2)  # normal sublimation point
    101.33
    """
    name = _name(fluid)
    curve = SUBLIMATION.get(name)
    if curve is None:
        raise InputError("fluid", fluid, f"one with a bundled sublimation curve: {', '.join(SUBLIMATION)}")
    T = np.asarray(T, dtype=float)
    if np.any(~(T > 0.0)) or np.any(T > curve.T_max):
        raise InputError("T", T, f"0 < T <= {curve.T_max} K (the triple-point temperature of {name})")
    return curve(T)


def melting_pressure(fluid: str, T):
    """Melting pressure p_m(T) [Pa] of a pure fluid from its reference equation's paper.

    For water above 273.16 K the melting pressure of the ice that borders the
    liquid (V, VI, VII; IAPWS R14-08(2011) Eqs. (3)-(5)); from 251.165 K to
    273.16 K the ice-Ih melting pressure, Eq. (1), above which the *liquid*
    is stable (water's anomaly); the high-pressure ices separately with
    :func:`ice_melting_pressure`.

    Parameters
    ----------
    fluid : str
        Fluid with a bundled melting curve: carbon dioxide, water, nitrogen,
        argon, methane, ethane.
    T : array_like
        Temperature [K], at or above the triple-point temperature (water: 251.165-715 K).
    """
    name = _name(fluid)
    T = np.asarray(T, dtype=float)
    if name == "water":
        if np.any(~(T >= 251.165)) or np.any(T > 715.0):
            raise InputError("T", T, "251.165 K <= T <= 715 K for the melting curves of water")
        return np.where(T < _H2O_Tt, water_melting_pressure_ice_Ih(np.minimum(T, _H2O_Tt)),
                        _water_high_pressure_ice_melting(np.maximum(T, _H2O_Tt)))
    curve = MELTING.get(name)
    if curve is None:
        raise InputError("fluid", fluid, f"one with a bundled melting curve: water, {', '.join(MELTING)}")
    if np.any(~(T >= curve.T_min)):
        raise InputError("T", T, f"T >= {curve.T_min} K (the triple-point temperature of {name})")
    return curve(T)


def ice_melting_pressure(T, ice: str):
    """Melting pressure [Pa] of one ice phase of water ("Ih", "III", "V", "VI", "VII"),
    IAPWS R14-08(2011) Eqs. (1)-(5); RangeWarning outside the phase's range."""
    if ice not in ICE_MELTING:
        raise InputError("ice", ice, f"one of {', '.join(ICE_MELTING)}")
    f, lo, hi = ICE_MELTING[ice]
    T = np.asarray(T, dtype=float)
    if T.size and (np.min(T) < lo or np.max(T) > hi):
        warnings.warn(f"ice {ice} melting pressure evaluated outside its range {lo}-{hi} K (IAPWS R14-08(2011))",
                      RangeWarning, stacklevel=2)
    return f(T)
