"""Solid boundaries: triple points, melting and sublimation pressures, and a
screening check for solid formation (dry ice in CO2 vents, freeze-out of CO2
or heavy components from cold natural gas).

The cubic equations of state know nothing of solids: below a fluid's
triple-point temperature they happily return a (metastable) liquid or a
vapour-liquid split.  This module brings the published solid-fluid
boundaries of the fluids' reference equations of state and says, for a
state, whether it lies where a solid forms.

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

The screening check
-------------------
*Pure fluid* at (T, P): in the solid region when T < T_t and P is above the
sublimation pressure p_sub(T), or T >= T_t and P is above the melting
pressure p_m(T) (water: ice Ih lies *between* the sublimation and the
ice-Ih melting curve below 273.16 K, the high-pressure ices above the
melting curves of ice III, V, VI and VII).  Without a bundled sublimation
curve, T < T_t alone is flagged.

*Mixture*: each component i below its own triple-point temperature is
flagged as a freeze-out risk when its fugacity in the fluid, f_i = x_i φ_i P
(equal in the vapour and the liquid at equilibrium; y_i P for an ideal
gas), is above its sublimation pressure p_sub,i(T), the fugacity of the pure
solid at its sublimation pressure - or above the vapour pressure of the
component's own subcooled liquid from the same cubic, where that is lower
(below T_t the solid is the stable phase, so it cannot be less stable than
the model's liquid; PR's water gives 69.9 Pa at 250 K against ice's 76.0 Pa,
and without this cap a liquid-water phase in a cold gas would never be
flagged).  This is the usual first test for the
freezing of one pure solid component out of a fluid (e.g. Prausnitz,
Lichtenthaler & de Azevedo, *Molecular Thermodynamics of Fluid-Phase
Equilibria*, 3rd ed. 1999, ch. 10, solid-fluid equilibrium with a pure
solid - from memory); the Poynting correction of the solid's fugacity is
left out, which makes the check err on the side of flagging.  It is a
**screening check, not a solid-fluid equilibrium calculation**: it says that
a solid may form, not how much, and it does not model solid solutions.
Components without a sublimation curve are flagged on T < T_t alone.  Solid
formation of a mixture *above* all its components' triple points (freezing
at very high pressure) is not screened.
"""
from __future__ import annotations

import csv
import math
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


# --------------------------------------------------------------------------
# the screening check
# --------------------------------------------------------------------------
class SolidRisk:
    """Where a state (or each row of a batch) may hold a solid.

    ``flag`` is computed at once (array comparisons); the text is built on
    first access, for the flagged rows only, so large batches stay fast.

    Attributes
    ----------
    flag : bool or ndarray of bool
        True where a solid may form (the state's shape).
    reasons : list of (row index tuple, str)
        One entry per flagged row and component: the fluid, the temperature,
        the boundary passed and its source.
    label : str or ndarray of str
        A short phase label per row: "solid region (...)" where flagged, "" elsewhere.
    """

    def __init__(self, flag, text):
        self.flag = flag
        self._text = text  # () -> (reasons, label)
        self._built = None

    def _build(self):
        if self._built is None:
            self._built = self._text()
        return self._built

    @property
    def reasons(self) -> list:
        return self._build()[0]

    @property
    def label(self):
        return self._build()[1]

    @property
    def any(self) -> bool:
        return bool(np.any(self.flag))

    def __bool__(self):
        return self.any

    @property
    def messages(self) -> list:
        """The reasons as text (a batch's rows are named by their index)."""
        scalar = np.ndim(self.flag) == 0
        return [m if scalar else f"row {idx[0] if len(idx) == 1 else idx}: {m}" for idx, m in self.reasons]

    def __repr__(self):
        return f"SolidRisk(any={self.any}, {len(self.reasons)} reason(s))"


def _C(T):
    return f"{T:.6g} K ({T - 273.15:.2f} °C)"


def _pure_solid(name, T, P):
    """Pure-fluid test on (T, P) arrays of one shape: (flag, code, boundary pressure, extrapolated).

    code: 0 none, 1 above the sublimation curve, 2 below T_t (no sublimation curve bundled),
    3 above the melting curve, 4 water between its sublimation and ice-Ih melting curves."""
    tp = load_triple_points().get(name)
    flag = np.zeros(T.shape, dtype=bool)
    code = np.zeros(T.shape, dtype=np.int8)
    pb = np.full(T.shape, np.nan)
    extra = np.zeros(T.shape, dtype=bool)
    if tp is None or tp.T is None:
        return flag, code, pb, extra
    below = T < tp.T
    sub = SUBLIMATION.get(name)
    if sub is not None:
        ps = sub(np.where(below, T, tp.T), warn=False)
        hit = below & (P > ps)
        if name == "water":
            # ice Ih only up to its melting pressure (Eq. 1); liquid above it (251.165-273.16 K)
            window = below & (T >= 251.165)
            pIh = water_melting_pressure_ice_Ih(np.where(window, T, _H2O_Tt))
            hit = hit & ~(window & (P >= pIh))
            code = np.where(hit, 4, code)
        else:
            code = np.where(hit, 1, code)
        flag |= hit
        pb = np.where(hit, ps, pb)
        extra |= hit & (T < sub.T_min)
    else:
        flag |= below
        code = np.where(below, 2, code)
    if name == "water":
        pm = _water_high_pressure_ice_melting(T)
        hit = np.isfinite(pm) & (P > pm)
    elif name in MELTING:
        mel = MELTING[name]
        ok = ~below & (T <= mel.T_max)
        pm = np.where(ok, mel(np.where(ok, T, tp.T), warn=False), np.inf)
        hit = ok & (P > pm)
    else:
        hit = np.zeros(T.shape, dtype=bool)
        pm = pb
    flag |= hit
    code = np.where(hit, 3, code)
    pb = np.where(hit, pm, pb)
    return flag, code, pb, extra


def _pure_reason(name, T, P, code, pb, extra):
    tp = load_triple_points()[name]
    at = f"{name} at {_C(T)}, {P:.6g} Pa"
    if code == 2:
        return (f"{at}: below its triple-point temperature {tp.T:.6g} K ({tp.source}); a solid may form "
                "(no sublimation curve bundled)", "below the triple point")
    if code == 3:
        eq = _WATER_MELTING_EQ if name == "water" else MELTING[name].equation
        return (f"{at}: above the melting pressure {pb:.6g} Pa ({eq}): solid region",
                "above the melting curve")
    eq = SUBLIMATION[name].equation
    ext = " (curve extrapolated below its range)" if extra else ""
    what = "between the sublimation and the ice-Ih melting curves: ice" if code == 4 else "solid region"
    return (f"{at}: below its triple-point temperature {tp.T:.6g} K and above the sublimation pressure "
            f"{pb:.6g} Pa ({eq}){ext}: {what}", "below the triple point, above the sublimation curve")


def solid_risk(names, T, P, fugacity=None, liquid_vapour_pressure=None) -> SolidRisk:
    """Screen states for solid formation (see the module's notes: a screening check,
    not a solid-fluid equilibrium calculation).

    Parameters
    ----------
    names : str or sequence of str
        The fluid (pure) or the components (mixture), names as in ``fluids.csv``.
    T, P : array_like
        Temperature [K] and pressure [Pa]; broadcast together.
    fugacity : array_like, shape T.shape + (nc,), optional
        Mixtures: each component's fugacity f_i = x_i φ_i P in the fluid [Pa]
        (y_i P for an ideal gas); 0 for absent components.  Needed when there
        is more than one component.
    liquid_vapour_pressure : array_like, shape T.shape + (nc,), optional
        Mixtures: the vapour pressure of each component's own (subcooled)
        liquid *from the same equation of state* at T [Pa] (NaN where unknown).
        The solid's fugacity is then taken as min(p_sub, this): the solid is
        the stable phase below T_t, so it cannot be less stable than the
        model's own liquid.  Without it a cubic whose extrapolated liquid
        vapour pressure falls below the true sublimation pressure (water in
        PR: 69.9 Pa at 250 K against ice's 76.0 Pa) would never flag ice
        forming from its own condensed phase.

    Returns
    -------
    SolidRisk

    Examples
    --------
    >>> bool(solid_risk("carbon dioxide", 188.15, 1.2e5))   # dry ice at -85 °C and 1.2 bar
    True
    >>> bool(solid_risk("carbon dioxide", 230.0, 1.0e6))    # liquid above the triple point
    False
    """
    if isinstance(names, str):
        names = [names]
    names = [_name(n) for n in names]
    T, P = np.broadcast_arrays(np.asarray(T, dtype=float), np.asarray(P, dtype=float))
    shape = T.shape
    flag = np.zeros(shape, dtype=bool)
    hits = []  # (component, hit mask, text builder for one row)
    if len(names) == 1:
        name = names[0]
        f_, code, pb, extra = _pure_solid(name, T, P)
        flag |= f_

        def text(idx, name=name, code=code, pb=pb, extra=extra):
            return _pure_reason(name, float(T[idx]), float(P[idx]), int(code[idx]), float(pb[idx]), bool(extra[idx]))

        hits.append((f_, text))
    else:
        if fugacity is None:
            raise InputError("fugacity", None, "the components' fugacities [Pa] for a mixture")
        f = np.broadcast_to(np.asarray(fugacity, dtype=float), shape + (len(names),))
        p_liq = (np.full(shape + (len(names),), np.nan) if liquid_vapour_pressure is None else
                 np.broadcast_to(np.asarray(liquid_vapour_pressure, dtype=float), shape + (len(names),)))
        tps = load_triple_points()
        for i, name in enumerate(names):
            tp = tps.get(name)
            if tp is None or tp.T is None:
                continue
            fi = f[..., i]
            below = (T < tp.T) & (fi > 0.0)
            if not np.any(below):
                continue
            sub = SUBLIMATION.get(name)
            ps = sub(np.where(below, T, tp.T), warn=False) if sub is not None else np.zeros(shape)
            pl = p_liq[..., i]
            ps = np.where(np.isfinite(pl) & (pl < ps), pl, ps)  # never above the model's own liquid
            hit = below & (fi > ps)
            flag |= hit

            def text(idx, name=name, tp=tp, sub=sub, fi=fi, ps=ps):
                return _freeze_reason(name, tp, sub, float(T[idx]), float(P[idx]), float(fi[idx]), float(ps[idx]))

            hits.append((hit, text))

    def build():
        label = np.full(shape, "", dtype=object)
        reasons = []
        for hit, text in hits:
            for idx in (zip(*np.nonzero(hit)) if shape else ([()] if bool(hit) else [])):
                long, short = text(idx)
                reasons.append((idx, long))
                label[idx] = (label[idx] + ", " if label[idx] else "") + short
        label = np.array([f"solid region ({s})" if s else "" for s in label.ravel()], dtype=object).reshape(shape)
        return reasons, (str(label[()]) if not shape else label)

    return SolidRisk(bool(flag) if not shape else flag, build)


def _freeze_reason(name, tp, sub, T, P, f, p_sub):
    """(message, short label) of a mixture component's freeze-out risk at one state."""
    if sub is not None:
        ext = " (curve extrapolated below its range)" if T < sub.T_min else ""
        return (f"{name} freeze-out risk at {_C(T)}, {P:.6g} Pa: below its triple-point temperature "
                f"{tp.T:.6g} K, its fugacity {f:.4g} Pa is above the solid's fugacity {p_sub:.4g} Pa "
                f"(the lower of the sublimation pressure, {sub.equation}, and the model's own liquid vapour "
                f"pressure){ext} "
                "- screening check, not a solid-fluid equilibrium calculation", f"{name} may freeze out")
    return (f"{name} freeze-out risk at {_C(T)}: below its triple-point temperature {tp.T:.6g} K "
            f"({tp.source}; no sublimation curve bundled) - screening check", f"{name} may freeze out")


def _mixture_fugacity(fluid, T, P, z):
    """f_i = y_i φ_i P of the equilibrium fluid at (T, P, z) (the vapour where two phases
    exist, else the single phase), with the Péneloux shift's ln φ term; arrays (n,), (n, nc)."""
    from eosfill.constants import R
    from eosfill.equilibrium.solvers import flash_TP, lnphi_root

    p = fluid.params
    fl = flash_TP(T, P, z, p, raise_on_fail=False)
    two = np.asarray(fl["two_phase"], dtype=bool)
    comp = np.where(two[:, None], fl["y"], z)
    which = np.where(two, 2, 0)  # vapour root where two-phase, the stable root otherwise
    lnphi, _ = lnphi_root(T, P, comp, p, which=which)
    lnphi = lnphi - np.asarray(fluid.volume_shift) * (P / (R * T))[:, None]
    return comp * np.exp(lnphi) * P[:, None]


def path_solid_risk(fluid, T, P, z=None) -> SolidRisk:
    """:func:`solid_risk` of a path of (T, P) points of one fluid (a Mixture): rows (n,),
    compositions ``z`` (n, nc) or the fluid's own.  Mixtures: the fugacities come from a
    TP flash of only the rows below some component's triple-point temperature."""
    T = np.atleast_1d(np.asarray(T, dtype=float))
    P = np.atleast_1d(np.asarray(P, dtype=float))
    names = list(fluid.names)
    if len(names) == 1:
        return solid_risk(names, T, P)
    z = np.broadcast_to(np.asarray(fluid.mole_fractions if z is None else z, dtype=float), T.shape + (len(names),))
    tps = load_triple_points()
    Tt = np.array([tps[n].T if n in tps and tps[n].T is not None else -math.inf for n in names])
    cold = (T[:, None] < Tt[None, :]) & (z > 0.0)
    rows = np.flatnonzero(np.any(cold, axis=1))
    f = np.zeros(T.shape + (len(names),))
    p_liq = np.full(T.shape + (len(names),), np.nan)
    if rows.size:
        f[rows] = _mixture_fugacity(fluid, T[rows], P[rows], np.ascontiguousarray(z[rows]))
        for i, name in enumerate(names):
            if np.any(cold[:, i]) and name in SUBLIMATION:
                p_liq[cold[:, i], i] = _model_liquid_vapour_pressure(name, fluid.model.name, T[cold[:, i]])
    return solid_risk(names, T, P, fugacity=f, liquid_vapour_pressure=p_liq)


@lru_cache(maxsize=None)
def _pure_parameters(name, model_name):
    from eosfill.model.mixture import Mixture

    return Mixture(name, model=model_name).params


def _model_liquid_vapour_pressure(name, model_name, T):
    """Vapour pressure [Pa] of the pure component's (subcooled) liquid from the same cubic at T;
    NaN where the saturation solver does not converge (the threshold is then p_sub alone)."""
    from eosfill.equilibrium.solvers import saturation_pressure

    sat = saturation_pressure(np.asarray(T, dtype=float), _pure_parameters(name, model_name), raise_on_fail=False)
    return np.where(np.asarray(sat["status"]) == 0, sat["P"], np.nan)


def state_solid_risk(st) -> SolidRisk:
    """:func:`solid_risk` of an equilibrium State (pure: its T, P; mixture: its fugacities)."""
    fluid = st.fluid
    if fluid.nc == 1:
        return solid_risk(list(fluid.names), st._T, st._P)
    T = np.asarray(st._T, dtype=float)
    x = np.broadcast_to(np.asarray(st.x, dtype=float), T.shape + (fluid.nc,))
    risk = path_solid_risk(fluid, T.reshape(-1), np.broadcast_to(st._P, T.shape).reshape(-1),
                           x.reshape(-1, fluid.nc))
    if T.ndim == 0:
        return SolidRisk(bool(risk.flag[0]), lambda: ([((), m) for _, m in risk.reasons], str(risk.label[0])))
    return SolidRisk(risk.flag.reshape(T.shape),
                     lambda: ([(np.unravel_index(idx[0], T.shape), m) for idx, m in risk.reasons],
                              risk.label.reshape(T.shape)))


def _register():
    from eosfill.model.mixture import State

    State._solid_screen = staticmethod(state_solid_risk)


_register()
