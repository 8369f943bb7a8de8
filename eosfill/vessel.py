"""Vessel balances: end states of fills and vents of a rigid vessel.

No time is needed: each result follows from the mass and energy balances of
an open system, solved with the state solvers of :mod:`eosfill.states`.
Pure fluids and mixtures alike.  Molar SI inside (K, Pa, m³, mol, J).

Balances (rigid vessel of volume V; content n [mol], composition z,
molar internal energy u; wall of heat capacity C_w = m_w c_w [J/K] that ends
at the gas temperature; heat Q [J] added to the content):

(V1) mass, fill from a supply of composition z_in:
         n_f z_f = n_0 z_0 + (n_f - n_0) z_in
(V2) energy, fill from a supply at constant state (T_in, P_in):
         n_f u_f - n_0 u_0 + C_w (T_f - T_w0) = (n_f - n_0) h_in + Q
     h_in is the supply's own molar enthalpy: a throttle or regulator
     between supply and vessel is isenthalpic, so what enters carries h_in
     whatever the pressure drop (steady adiabatic flow, no shaft work,
     kinetic energy neglected).
(V3) volume: v_f = V / n_f; the end state is the (u, v) state of z_f (or,
     with a wall, the T with (V2) satisfied at v_f).
(V4) vent, outflow at the vessel's own state, rigid, adiabatic:
         d(n u) = h dn   =>   n du = -P dv n   =>   ds = 0 per mole
     the content left in the vessel follows its own isentrope
     (s_f = s_0 at v_f = V / n_f).  With the outflow at the vessel's state
     the mixture leaves as a whole ("homogeneous outflow"), also when
     two-phase; a vapour-only draw is not modelled here.
(V5) vent with a wall in equilibrium with the gas:
         d(n u + C_w T) = h dn   (equivalently (n c_v + C_w) dT = v T (dP/dT)_v dn)
     integrated for E = n u + C_w T in x = ln n (scipy ``solve_ivp``),
     T recovered from E at each step; the enthalpy that left is E_0 - E_f.
(V6) cascade bank k (adiabatic, homogeneous outflow): the bank vents along
     its own isentrope, s_b = s_b0 at v_b = V_b/(n_b0 - N); the vessel
     receives H_k(N) = ∫_0^N h_b(N') dN' (Gauss-Legendre quadrature in N).
     The vessel is then (V1)-(V3) with (N, H_k) in place of
     (n_f - n_0, (n_f - n_0) h_in).
(V7) settled state: the same content at constant volume brought to
     T_settle: (T_settle, v_f); settled pressure is its P.  The short fill
     is m(P_nominal, T_settle) - m_f; the state of charge is
     ρ_f / ρ(P_nominal, T_nominal) (definition as used for hydrogen vehicle
     fills, SAE J2601, from memory; T_nominal 15 °C by default).

Every result carries the energy and mass closure as relative numbers
(residual of (V2), (V4)-(V6) divided by n_f R T_f, and of (V1) divided by
m_f), the stop criterion that ended the fill or vent (and whether the one
asked for was met), and flags for limits passed.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .constants import R
from .errors import ConvergenceError, EosfillError, InputError

CAUTION = ("Caution: estimates from an equation of state and simplified models (adiabatic or "
           "lumped-wall balances); local codes, the vessel's approval documents and licensed "
           "practice govern.")
T_NOMINAL = 288.15  # K, 15 °C: reference temperature of a nominal working pressure (common practice, no source)

FILL_STOPS = ("target_pressure", "target_mass", "target_settled_pressure", "target_fill_density",
              "supply_pressure")
VENT_STOPS = ("target_pressure", "target_mass")

# Defaults of the UN Model Regulations, packing instruction P200 (5)(b), for
# low-pressure liquefied gases (critical temperature above 65 °C): filling
# ratio at most 0.95 x the liquid density at 50 °C, and the vessel not
# liquid-full at any temperature up to 60 °C.  From memory (edition not
# verified; the same two rules are worded for P206 at
# https://portofrotterdam.dgcampus.com/instructions/P206/?provision=PP89).
# Defaults the user must confirm against the rules that apply to them.
P200_LIQUID_DENSITY_TEMPERATURE = 323.15  # K, 50 °C
P200_FACTOR = 0.95
P200_LIQUID_FULL_TEMPERATURE = 333.15  # K, 60 °C
P200_LOW_PRESSURE_TC = 338.15  # K, 65 °C: above it a "low pressure liquefied gas"


# --------------------------------------------------------------------------
# inputs
# --------------------------------------------------------------------------
def _positive(name, value, allowed="a number > 0"):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(name, value, allowed) from None
    if not math.isfinite(x) or x <= 0.0:
        raise InputError(name, value, allowed)
    return x


def _nonneg(name, value, allowed="a number >= 0"):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(name, value, allowed) from None
    if not math.isfinite(x) or x < 0.0:
        raise InputError(name, value, allowed)
    return x


@dataclass
class Vessel:
    """A rigid vessel.

    Parameters
    ----------
    volume : float
        Internal volume [m³], > 0.
    wall_heat_capacity : float
        m_w c_w of the wall taking part [J/K], >= 0 (0: adiabatic gas).
    wall_temperature : float or None
        Initial wall temperature [K]; None: the initial gas temperature
        (for an empty vessel it must then be given when the wall counts).
    """

    volume: float
    wall_heat_capacity: float = 0.0
    wall_temperature: float | None = None

    def __post_init__(self):
        self.volume = _positive("volume", self.volume, "a volume > 0 m3")
        self.wall_heat_capacity = _nonneg("wall_heat_capacity", self.wall_heat_capacity,
                                          "a heat capacity >= 0 J/K (wall mass x specific heat)")
        if self.wall_temperature is not None:
            self.wall_temperature = _positive("wall_temperature", self.wall_temperature, "a temperature > 0 K")


@dataclass
class Stream:
    """A gas at a given state: a supply, a bank's or a vessel's initial content.

    ``fluid`` carries the composition.  Give ``T`` with ``P`` (a supply, a
    bank) or, for a vessel's content, ``T`` with ``P`` or with ``mass`` [kg].
    """

    fluid: object
    T: float
    P: float | None = None
    mass: float | None = None

    def __post_init__(self):
        self.T = _positive("T", self.T, "a temperature > 0 K")
        if (self.P is None) == (self.mass is None):
            raise InputError("P, mass", (self.P, self.mass), "exactly one of P or mass")
        if self.P is not None:
            self.P = _positive("P", self.P, "a pressure > 0 Pa")
        if self.mass is not None:
            self.mass = _positive("mass", self.mass, "a mass > 0 kg")


# --------------------------------------------------------------------------
# helpers: a common fluid for all streams, states, brackets
# --------------------------------------------------------------------------
def common_fluid(*fluids):
    """One :class:`Fluid` holding every component of ``fluids`` and the
    mole fractions of each in its order.

    Returns ``(fluid, [z_1, z_2, ...])``.  Fluids with the same components
    (in the same order) share the first one; otherwise the union is built
    with every k_ij carried over (a pair in two fluids must have one value).
    """
    from .fluid import Fluid

    first = fluids[0]
    if all(f.names == first.names and f.model is first.model for f in fluids):
        return first, [np.array(f.mole_fractions, dtype=float) for f in fluids]
    if any(f.model is not first.model for f in fluids):
        raise InputError("fluid", [f.model.name for f in fluids], "the same model for every stream")
    names = []
    for f in fluids:
        for n in f.names:
            if n not in names:
                names.append(n)
    kij, shift = {}, {}
    for f in fluids:
        for i, a in enumerate(f.names):
            shift.setdefault(a, float(f.volume_shift[i]))
            for j in range(i + 1, f.nc):
                pair = tuple(sorted((a, f.names[j])))
                val = float(f.kij[i, j])
                if pair in kij and abs(kij[pair] - val) > 0.0:
                    raise InputError("kij", pair, "one k_ij value per pair across the streams")
                kij[pair] = val
    comp = {n: (first.mole_fractions[first.names.index(n)] if n in first.names else 0.0) for n in names}
    fl = Fluid(comp, model=first.model.name, kij=kij or None, normalise=True,
               volume_shift=np.array([shift[n] for n in names]))
    zs = []
    for f in fluids:
        z = np.zeros(len(names))
        for i, n in enumerate(f.names):
            z[names.index(n)] = f.mole_fractions[i]
        zs.append(z)
    return fl, zs


def _state(fluid, z, **spec):
    """State of composition z (silences the 0/0 of absent components)."""
    f = fluid.with_composition(z) if z is not None else fluid
    with np.errstate(invalid="ignore", divide="ignore"):
        return f.state(**spec)


def _comp_dict(fluid, z):
    """{name: mole fraction} of the components present in z."""
    return {k: float(x) for k, x in zip(fluid.names, np.asarray(z)) if x > 0}


def _molar_mass(fluid, z):
    return float(np.asarray(z) @ fluid.molar_masses)


def _f(x):
    return float(np.asarray(x))


def _brentq(func, a, b, fa=None, fb=None, xtol=1e-13, what="solve", rtol=4e-16):
    from scipy.optimize import brentq

    try:
        return brentq(func, a, b, xtol=xtol, rtol=max(rtol, 1e-15), maxiter=200)
    except ValueError as exc:
        raise ConvergenceError(what, f"no sign change in [{a!r}, {b!r}] ({exc})",
                               dict(a=a, b=b, fa=fa, fb=fb)) from None
    except RuntimeError as exc:
        raise ConvergenceError(what, str(exc), dict(a=a, b=b)) from None


# --------------------------------------------------------------------------
# the vessel's end state for a given amount and energy
# --------------------------------------------------------------------------
class _Content:
    """The vessel's content as a function of the amount admitted or let out."""

    def __init__(self, fluid, vessel: Vessel, n0, z0, U0, T0, heat):
        self.fluid = fluid
        self.V = vessel.volume
        self.Cw = vessel.wall_heat_capacity
        self.Tw0 = vessel.wall_temperature if vessel.wall_temperature is not None else T0
        if self.Cw > 0.0 and self.Tw0 is None:
            raise InputError("wall_temperature", None,
                             "an initial wall temperature [K] (the vessel is empty, so there is no gas temperature to take)")
        self.n0, self.z0, self.U0, self.T0 = n0, z0, U0, T0
        self.Q = float(heat)
        self._cache = {}

    def composition(self, N, z_in):
        """(V1) z after N mol of composition z_in entered."""
        n = self.n0 + N
        return (self.n0 * self.z0 + N * z_in) / n if self.n0 > 0 else np.array(z_in, dtype=float)

    def end_state(self, n, z, E):
        """The state with n u(T, V/n) + C_w (T - T_w0) = E  (V2)-(V3)."""
        key = (n, tuple(z), E)
        if key in self._cache:
            return self._cache[key]
        v = self.V / n
        if self.Cw == 0.0:
            st = _state(self.fluid, z, u=E / n, v=v)
        else:
            st = self._with_wall(n, z, E, v)
        self._cache[key] = st
        return st

    def _with_wall(self, n, z, E, v):
        Cw, Tw0 = self.Cw, self.Tw0

        def g(T):
            return (n * _state(self.fluid, z, T=T, v=v).u + Cw * (T - Tw0) - E) / (n * R * 300.0)

        # gas alone at the target energy, T1; the answer lies between T1 and T_w0
        try:
            T1 = _state(self.fluid, z, u=(E - 0.0) / n, v=v).T
        except InputError:
            T1 = Tw0
        lo, hi = sorted((T1, Tw0))
        if hi - lo < 1e-12 * hi:
            T = 0.5 * (lo + hi)
        else:
            glo, ghi = g(lo), g(hi)
            if glo > 0 or ghi < 0:
                raise ConvergenceError("wall balance", "no bracket between the gas-only and wall temperatures",
                                       dict(n=n, T_lo=lo, T_hi=hi), min(abs(glo), abs(ghi)))
            T = _brentq(g, lo, hi, xtol=1e-12 * hi, what="wall balance (V2)")
        return _state(self.fluid, z, T=T, v=v)


def _energy_scale(n, T):
    return max(n, 1e-300) * R * T


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------
def _qty(value, kind, digits=6):
    from .units import format_quantity

    if value is None:
        return "n/a"
    return format_quantity(value, kind, digits=digits)


@dataclass
class EndState:
    """The vessel's content at one point: SI values (K, Pa, mol, kg)."""

    T: float
    P: float
    n: float
    mass: float
    composition: dict
    phase: str
    vapor_fraction: float
    wall_temperature: float | None = None
    liquid_mass: float | None = None
    vapour_mass: float | None = None
    liquid_volume_fraction: float | None = None

    @classmethod
    def of(cls, fluid, st, n, V, wall=None):
        z = np.asarray(st.x)
        M = _molar_mass(fluid, z)
        beta = _f(st.vapor_fraction)
        out = cls(T=_f(st.T), P=_f(st.P), n=float(n), mass=float(n * M),
                  composition={k: float(x) for k, x in zip(fluid.names, z) if x > 0},
                  phase=str(st.phase), vapor_fraction=beta, wall_temperature=wall)
        if out.phase == "two-phase":
            L, Vp = st.liquid, st.vapour
            nL = (1.0 - beta) * n
            out.liquid_mass = float(nL * _molar_mass(fluid, np.asarray(L.x)))
            out.vapour_mass = out.mass - out.liquid_mass
            out.liquid_volume_fraction = float(nL * _f(L.v) / V)
        elif out.phase == "liquid":
            out.liquid_mass, out.vapour_mass, out.liquid_volume_fraction = out.mass, 0.0, 1.0
        else:
            out.liquid_mass, out.vapour_mass, out.liquid_volume_fraction = 0.0, out.mass, 0.0
        return out

    def lines(self, label, V=None):
        s = [f"{label}: {_qty(self.T, 'temperature')} ({self.T:.6g} K), {_qty(self.P, 'pressure')}, "
             f"{_qty(self.mass, 'mass')} ({self.n:.6g} mol), phase {self.phase}"]
        if self.wall_temperature is not None:
            s.append(f"  wall temperature {_qty(self.wall_temperature, 'temperature')}")
        if len(self.composition) > 1:
            s.append("  composition (mole fractions): " + ", ".join(f"{k} {x:.6g}" for k, x in self.composition.items()))
        if self.phase == "two-phase":
            s.append(f"  liquid {_qty(self.liquid_mass, 'mass')}, vapour {_qty(self.vapour_mass, 'mass')}, "
                     f"liquid volume fraction {self.liquid_volume_fraction:.4g}")
        return s


@dataclass
class Settled:
    """(V7) The content at constant volume at ``T`` and what a nominal fill would hold."""

    T: float
    P: float
    phase: str
    nominal_pressure: float | None = None
    nominal_temperature: float | None = None
    nominal_mass: float | None = None
    short_fill: float | None = None
    state_of_charge: float | None = None

    def lines(self):
        s = [f"settled at {_qty(self.T, 'temperature')} (constant volume): {_qty(self.P, 'pressure')}, "
             f"phase {self.phase}"]
        if self.nominal_mass is not None:
            s.append(f"  a fill to the nominal {_qty(self.nominal_pressure, 'pressure')} at "
                     f"{_qty(self.T, 'temperature')} holds {_qty(self.nominal_mass, 'mass')}; "
                     f"short fill {_qty(self.short_fill, 'mass')}")
        if self.state_of_charge is not None:
            s.append(f"  state of charge {100 * self.state_of_charge:.4g} % (density relative to "
                     f"{_qty(self.nominal_pressure, 'pressure')} at {_qty(self.nominal_temperature, 'temperature')})")
        return s


@dataclass
class Result:
    """End state of a fill, cascade fill, liquefied-gas fill or vent.

    Every field SI.  ``str(result)`` is a readable summary with the caution,
    the closures and the flags; ``to_dict()`` is JSON-ready.
    """

    kind: str
    volume: float
    stop: str
    stop_requested: str
    stop_met: bool
    initial: EndState | None
    final: EndState
    energy_closure: float
    mass_closure: float
    settled: Settled | None = None
    supply: dict | None = None
    stages: list = field(default_factory=list)
    comparison: dict | None = None
    liquefied: dict | None = None
    vent: dict | None = None
    curve: list = field(default_factory=list)
    energy: dict = field(default_factory=dict)
    flags: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    title: str = ""

    def to_dict(self) -> dict:
        from dataclasses import asdict

        d = asdict(self)
        d["units"] = "SI: K, Pa, m3, mol, kg, J; closures relative"
        d["caution"] = CAUTION
        return d

    def summary(self) -> str:
        out = [f"result: {self.kind}" + (f" - {self.title}" if self.title else ""),
               f"vessel volume {_qty(self.volume, 'volume')}"]
        if self.supply:
            out.append(f"supply: {_qty(self.supply['T'], 'temperature')}, {_qty(self.supply['P'], 'pressure')} "
                       f"(enters with its own enthalpy: a throttle is isenthalpic)")
        if self.initial is not None:
            out += self.initial.lines("initial")
        else:
            out.append("initial: empty (evacuated)")
        met = "met" if self.stop_met else "NOT MET"
        out.append(f"stopped by: {self.stop}" + ("" if self.stop == self.stop_requested else
                                                 f" (asked: {self.stop_requested}, {met})"))
        for st in self.stages:
            out.append(f"  bank {st['bank']}: {st['reason']}; bank ends at {_qty(st['bank_T'], 'temperature')}, "
                       f"{_qty(st['bank_P'], 'pressure')}, gave {_qty(st['mass_drawn'], 'mass')}; vessel then "
                       f"{_qty(st['vessel_T'], 'temperature')}, {_qty(st['vessel_P'], 'pressure')}, "
                       f"{_qty(st['vessel_mass'], 'mass')}")
        out += self.final.lines("final")
        if self.vent:
            v = self.vent
            out.append(f"  let out {_qty(v['mass_out'], 'mass')}; lowest gas temperature "
                       f"{_qty(v['min_T'], 'temperature')} (a safety figure for the vessel's material)")
            out.append("  liquid formed: " + (f"yes (first seen on the path at {_qty(v['dew_P'], 'pressure')})"
                                              if v["liquid_formed"] else "no"))
        if self.liquefied:
            q = self.liquefied
            out.append(f"  filling density {q['fill_density'] / 1e3:.5g} kg/L of vessel volume")
            if q.get("liquid_full_T") is not None:
                out.append(f"  liquid-full (hydraulically full) on warming at {_qty(q['liquid_full_T'], 'temperature')}")
            elif q.get("dry_T") is not None:
                out.append(f"  never liquid-full on warming: the liquid is gone at {_qty(q['dry_T'], 'temperature')}")
            else:
                out.append(f"  {q.get('liquid_full_note', '')}")
            for line in q.get("defaults", []):
                out.append(f"  {line}")
        if self.settled is not None:
            out += self.settled.lines()
        if self.comparison:
            c = self.comparison
            out.append(f"one bank instead ({c['description']}): vessel {_qty(c['T'], 'temperature')}, "
                       f"{_qty(c['P'], 'pressure')}, {_qty(c['mass'], 'mass')}; stopped by {c['stop']}; "
                       f"bank ends at {_qty(c['bank_P'], 'pressure')}")
        out.append(f"energy closure {self.energy_closure:.3e} (relative to n R T), mass closure "
                   f"{self.mass_closure:.3e} (relative)")
        for n in self.notes:
            out.append(f"note: {n}")
        for fl in self.flags:
            out.append(f"FLAG: {fl}")
        out.append(CAUTION)
        return "\n".join(out)

    __str__ = summary


# --------------------------------------------------------------------------
# shared pieces
# --------------------------------------------------------------------------
def _initial_content(fluid, z0, stream, V):
    """(n0, state) of the initial content; InputError names the inconsistent input."""
    if stream is None:
        return 0.0, None
    if stream.P is not None:
        st = _state(fluid, z0, T=stream.T, P=stream.P)
        return V / _f(st.v), st
    M = _molar_mass(fluid, z0)
    n0 = stream.mass / M
    try:
        st = _state(fluid, z0, T=stream.T, v=V / n0)
    except InputError as exc:
        raise InputError("initial.mass", stream.mass,
                         f"a mass the vessel can hold at {stream.T:.6g} K ({exc})") from None
    return n0, st


def _settle(fluid, z, n, V, T_settle, nominal_pressure=None, nominal_temperature=T_NOMINAL,
            state_of_charge=False):
    st = _state(fluid, z, T=T_settle, v=V / n)
    out = Settled(T=T_settle, P=_f(st.P), phase=str(st.phase))
    if nominal_pressure is not None:
        M = _molar_mass(fluid, z)
        nom = _state(fluid, z, T=T_settle, P=nominal_pressure)
        out.nominal_pressure = nominal_pressure
        out.nominal_temperature = nominal_temperature
        out.nominal_mass = V / _f(nom.v) * M
        out.short_fill = out.nominal_mass - n * M
        if state_of_charge:
            ref = _state(fluid, z, T=nominal_temperature, P=nominal_pressure)
            out.state_of_charge = (n / V) * _f(ref.v)
    return out


def _overfill_flag(settled, flags):
    if settled is not None and settled.nominal_pressure is not None and settled.P > settled.nominal_pressure:
        flags.append(f"settled pressure {settled.P / 1e5:.6g} bar at {settled.T - 273.15:.4g} °C is above the nominal "
                     f"{settled.nominal_pressure / 1e5:.6g} bar (overfill)")


def _limit_flags(final: EndState, limits, flags, lowest_T=None, highest_T=None):
    if not limits:
        return
    from .units import format_quantity as fq

    hiT = final.T if highest_T is None else highest_T
    loT = final.T if lowest_T is None else lowest_T
    tw = final.wall_temperature
    checks = [("max_gas_temperature", hiT, ">", "gas temperature", "temperature"),
              ("min_gas_temperature", loT, "<", "gas temperature", "temperature"),
              ("max_pressure", final.P, ">", "pressure", "pressure")]
    if tw is not None:
        checks += [("max_wall_temperature", tw if highest_T is None else max(tw, hiT), ">", "wall temperature", "temperature"),
                   ("min_wall_temperature", tw if lowest_T is None else min(tw, loT), "<", "wall temperature", "temperature")]
    checks.append(("max_fill_density", final.mass, ">", "filling density", "density"))
    if final.liquid_volume_fraction is not None:
        checks.append(("max_liquid_volume_fraction", final.liquid_volume_fraction, ">", "liquid volume fraction", None))
    for key, value, op, words, kind in checks:
        lim = limits.get(key)
        if lim is None or value is None:
            continue
        if key == "max_fill_density":
            value = final.mass / limits["_volume"]
        passed = value > lim if op == ">" else value < lim
        if passed:
            shown = (fq(value, kind), fq(lim, kind)) if kind else (f"{value:.4g}", f"{lim:.4g}")
            flags.append(f"{words} {shown[0]} passes the limit {key} = {shown[1]}")


def _scan_first(func, a, b, npts=12):
    """First x in (a, b] where func(x) >= 0 on a grid, refined; None if none.

    Returns (x, crossed_at_start)."""
    xs = np.linspace(a, b, npts + 1)
    vals = []
    for i, x in enumerate(xs):
        val = func(x)
        vals.append(val)
        if val >= 0:
            if i == 0:
                return x, True
            return _brentq(func, xs[i - 1], x, xtol=1e-12 * abs(x), what="temperature limit"), False
    return None, False


def _expand_up(func, lo, guess, cap, what):
    """Smallest bracket [lo, hi] with func(hi) >= 0, hi growing from guess up to cap."""
    hi = min(guess, cap)
    for _ in range(60):
        if func(hi) >= 0:
            return hi
        if hi >= cap:
            break
        hi = min(cap, lo + 1.6 * (hi - lo))
    raise ConvergenceError(what, "the end condition is not reached below the model's densest content",
                           dict(n_lo=lo, n_hi=hi))


# --------------------------------------------------------------------------
# fill from a supply at constant state
# --------------------------------------------------------------------------
def fill(vessel: Vessel, supply: Stream, initial: Stream | None = None, *, stop="target_pressure",
         target=None, temperature_limit=None, heat=0.0, settled_temperature=None,
         nominal_pressure=None, nominal_temperature=T_NOMINAL, state_of_charge=False,
         limits=None, liquefied=False, liquefied_defaults=True, _content=None):
    """End state of a fill of a rigid vessel from a supply at constant (T, P).

    Balances (V1)-(V3) of the module docstring; the supply's own enthalpy
    enters (isenthalpic throttle).  The amount admitted n_f - n_0 is found
    so that the stop criterion holds at the end.

    Parameters
    ----------
    vessel : Vessel
    supply : Stream
        Composition (its ``fluid``), ``T`` [K] and ``P`` [Pa].
    initial : Stream or None
        What the vessel holds (``T`` with ``P`` or ``mass``); None: empty.
    stop : str
        One of ``"target_pressure"`` [Pa], ``"target_mass"`` [kg],
        ``"target_settled_pressure"`` [Pa, at ``settled_temperature``],
        ``"target_fill_density"`` [kg/m³], ``"supply_pressure"`` (no target).
    target : float
        The value of the stop criterion, SI.
    temperature_limit : float, optional
        Stop earlier if the gas would reach this temperature [K].
    heat : float
        Heat added to the content over the fill [J] (negative: removed);
        each candidate end point is taken to have received all of it.
    settled_temperature : float, optional
        Temperature of the settled state [K] (default 15 °C).
    nominal_pressure, nominal_temperature : float, optional
        Nominal working pressure [Pa] (for the short fill) and the
        temperature it refers to [K] (for the state of charge).
    state_of_charge : bool
        Report ρ_f / ρ(nominal_pressure, nominal_temperature).
    limits : dict, optional
        Flag values passed: ``max_gas_temperature``, ``min_gas_temperature``,
        ``max_wall_temperature``, ``min_wall_temperature``, ``max_pressure``,
        ``max_fill_density``, ``max_liquid_volume_fraction`` (SI).
    liquefied : bool
        Also report the liquefied-gas figures (liquid-full temperature,
        filling density and the P200 defaults).

    Returns
    -------
    Result

    Raises
    ------
    InputError
        A target the supply cannot reach by its nature (pressure above the
        supply's, an end below the start), an unknown stop criterion.
    """
    if not isinstance(vessel, Vessel):
        raise InputError("vessel", vessel, "an eosfill.vessel.Vessel")
    if stop not in FILL_STOPS:
        raise InputError("stop", stop, ", ".join(FILL_STOPS))
    if stop != "supply_pressure":
        target = _positive(stop, target, "a positive value (SI) for the stop criterion")
    if supply.P is None:
        raise InputError("supply.P", None, "the supply pressure [Pa]")
    V = vessel.volume
    fluids = [supply.fluid] + ([initial.fluid] if initial is not None else [])
    fluid, zs = common_fluid(*fluids)
    z_in = zs[0]
    z0 = zs[1] if initial is not None else z_in
    T_settle = T_NOMINAL if settled_temperature is None else _positive("settled_temperature", settled_temperature)
    st_in = _state(fluid, z_in, T=supply.T, P=supply.P)
    h_in = _f(st_in.h)
    M_in = _molar_mass(fluid, z_in)
    n0, st0 = _initial_content(fluid, z0, initial, V)
    P0 = _f(st0.P) if st0 is not None else 0.0
    if P0 >= supply.P:
        raise InputError("supply.P", supply.P, f"a supply pressure above the vessel's initial {P0:.6g} Pa")
    if stop in ("target_pressure", "target_settled_pressure") and target > supply.P and stop == "target_pressure":
        raise InputError("target_pressure", target,
                         f"at most the supply pressure {supply.P:.6g} Pa (a fill cannot end above it)")
    if stop == "target_pressure" and target <= P0:
        raise InputError("target_pressure", target, f"above the initial pressure {P0:.6g} Pa")
    M0 = _molar_mass(fluid, z0)
    m0 = n0 * M0
    if stop == "target_mass" and target <= m0:
        raise InputError("target_mass", target, f"above the initial mass {m0:.6g} kg")
    if stop == "target_fill_density" and target * V <= m0:
        raise InputError("target_fill_density", target, f"above the initial {m0 / V:.6g} kg/m3")
    if temperature_limit is not None:
        temperature_limit = _positive("temperature_limit", temperature_limit, "a temperature > 0 K")
    U0 = n0 * _f(st0.u) if st0 is not None else 0.0
    T0 = initial.T if initial is not None else None
    c = _Content(fluid, vessel, n0, z0, U0, T0, heat)

    def at(n):
        N = n - n0
        z = c.composition(N, z_in)
        return c.end_state(n, z, U0 + N * h_in + c.Q), z

    def mass(n):
        return m0 + (n - n0) * M_in

    def crit(name, n):
        if name == "target_mass":
            return mass(n) - target
        if name == "target_fill_density":
            return mass(n) / V - target
        if name == "target_settled_pressure":
            z = c.composition(n - n0, z_in)
            return _f(_state(fluid, z, T=T_settle, v=V / n).P) - target
        P_goal = supply.P if name == "supply_pressure" else target
        return (_f(at(n)[0].P) - P_goal) / P_goal

    # the densest content the model allows, and a first guess from the supply's density
    b_max = float(np.max(fluid.params.b - fluid.volume_shift))
    cap = V / (1.0005 * b_max)
    n_guess = max(n0 * 1.05, V / _f(st_in.v)) if st_in.phase != "liquid" else 0.9 * V / _f(st_in.v)
    n_lo = n0 if n0 > 0 else 1e-9 * n_guess
    if n0 == 0.0:
        # an empty vessel: the first gas admitted expands into vacuum; a liquid supply may then fall
        # below the model's temperature range, so start where the end state exists
        for _ in range(9):
            try:
                at(n_lo)
                break
            except InputError:
                n_lo *= 10.0
    notes = ["the supply enters with its own enthalpy (a throttle or regulator between supply and vessel "
             "is isenthalpic); the vessel is rigid and, apart from the heat given, adiabatic"]
    if vessel.wall_heat_capacity > 0:
        notes.append("the wall ends at the gas temperature (thermal equilibrium, lumped heat capacity)")
    flags = []

    def solve_for(name):
        """n_f with the criterion met (V1)-(V3); brackets grow from the supply's density."""
        if name == "target_mass":
            return n0 + (target - m0) / M_in
        if name == "target_fill_density":
            return n0 + (target * V - m0) / M_in
        g = lambda n: crit(name, n)  # noqa: E731
        hi = _expand_up(g, n_lo, n_guess, cap, f"fill to {name}")
        return _brentq(g, n_lo, hi, xtol=1e-14 * hi, what=f"fill to {name}")

    met, reached = True, stop
    n_end = solve_for(stop)
    if stop != "supply_pressure" and _f(at(n_end)[0].P) > supply.P * (1.0 + 1e-12):
        # the flow stops at the supply pressure before the criterion is met
        n_end = solve_for("supply_pressure")
        met, reached = False, "supply_pressure"
        flags.append(f"stop criterion {stop} = {target:.6g} (SI) cannot be met: the flow stops at the supply "
                     f"pressure with {mass(n_end):.6g} kg in the vessel")

    curve_n = np.linspace(n_lo, n_end, 7)
    curve = []
    if temperature_limit is not None:
        n_T, at_start = _scan_first(lambda n: at(n)[0].T - temperature_limit, n_lo, n_end)
        if n_T is not None:
            reached, met = "temperature_limit", stop == "temperature_limit"
            n_end = n_T
            if at_start:
                flags.append(f"the gas is at or above the temperature limit {temperature_limit:.6g} K from the "
                             "first gas admitted: the fill cannot proceed under this limit")
            else:
                notes.append(f"the temperature limit ended the fill before {stop} was reached")
    for n in curve_n:
        if n <= n_end * (1 + 1e-12):
            st_n = at(n)[0]
            curve.append(dict(mass=mass(n), T=_f(st_n.T), P=_f(st_n.P)))

    st_f, z_f = at(n_end)
    Tw = _f(st_f.T) if vessel.wall_heat_capacity > 0 else None
    final = EndState.of(fluid, st_f, n_end, V, wall=Tw)
    initial_es = EndState.of(fluid, st0, n0, V, wall=c.Tw0 if vessel.wall_heat_capacity > 0 else None) if st0 is not None else None
    # closures (V1), (V2) from the solved state
    N = n_end - n0
    lhs = n_end * _f(st_f.u) - U0 + c.Cw * (_f(st_f.T) - (c.Tw0 or 0.0))
    rhs = N * h_in + c.Q
    e_cl = (lhs - rhs) / _energy_scale(n_end, _f(st_f.T))
    m_cl = (final.mass - (m0 + N * M_in)) / final.mass
    settled = _settle(fluid, z_f, n_end, V, T_settle, nominal_pressure, nominal_temperature, state_of_charge)
    lim = dict(limits or {})
    lim["_volume"] = V
    _limit_flags(final, lim, flags)
    _overfill_flag(settled, flags)
    res = Result(kind="liquefied_fill" if liquefied else "fill", volume=V, stop=reached, stop_requested=stop,
                 stop_met=met, initial=initial_es, final=final, energy_closure=float(e_cl),
                 mass_closure=float(m_cl), settled=settled,
                 supply=dict(T=supply.T, P=supply.P, h=h_in, phase=str(st_in.phase),
                             composition={k: float(x) for k, x in zip(fluid.names, z_in) if x > 0}),
                 curve=curve, energy=dict(U0=U0, Uf=n_end * _f(st_f.u), H_in=N * h_in, Q=c.Q,
                                          wall=c.Cw * (_f(st_f.T) - (c.Tw0 or 0.0))),
                 flags=flags, notes=notes)
    if liquefied:
        res.liquefied = _liquefied_figures(fluid, z_f, n_end, V, final, lim, flags, liquefied_defaults)
    return res


# --------------------------------------------------------------------------
# liquefied gases
# --------------------------------------------------------------------------
def liquid_full_temperature(fluid, z, v, T_start, T_max=None):
    """Warming at constant mass (v fixed): where the two-phase content ends.

    Returns ``(T, kind)``: kind ``"liquid-full"`` (the liquid fills the
    vessel: hydraulically full) or ``"dry"`` (the liquid is gone), or
    ``(None, "single-phase")`` if the content is not two-phase at T_start,
    ``(None, "two-phase")`` if still two-phase at T_max.
    """
    T_max = T_max or 1.2 * float(np.max(fluid.Tc))

    def two(T):
        return str(_state(fluid, z, T=T, v=v).phase) == "two-phase"

    if not two(T_start):
        return None, "single-phase"
    grid = np.linspace(T_start, max(T_max, T_start + 1.0), 25)
    prev = T_start
    for T in grid[1:]:
        if not two(T):
            lo, hi = prev, T
            for _ in range(40):  # bisection to ~1e-9 of the bracket
                mid = 0.5 * (lo + hi)
                if two(mid):
                    lo = mid
                else:
                    hi = mid
                if hi - lo < 1e-4:
                    break
            beta = _f(_state(fluid, z, T=lo, v=v).vapor_fraction)
            return 0.5 * (lo + hi), ("liquid-full" if beta < 0.5 else "dry")
        prev = T
    return None, "two-phase"


def _liquid_density_at(fluid, z, T):
    """Saturated (bubble-point) liquid density at T [kg/m³], or None above the critical point."""
    from . import equilibrium

    f = fluid.with_composition(z)
    try:
        with np.errstate(invalid="ignore", divide="ignore"):
            if f.is_pure or np.count_nonzero(z) == 1:
                i = int(np.flatnonzero(z)[0])
                if T >= fluid.Tc[i]:
                    return None
                sat = equilibrium.saturation_pressure(np.array([T]), _pure_params(fluid, i))
                vL = float(np.asarray(sat["v_L"]).ravel()[0]) - float(fluid.volume_shift[i])
                return float(fluid.molar_masses[i]) / vL
            _, Pb, _ = equilibrium.bubble_point(np.asarray(z), f.params, T=T)
            st = f.single_phase(T, Pb, which="liquid")
            return _f(st.rho_mass)
    except (ConvergenceError, InputError):
        return None


def _pure_params(fluid, i):
    from .fluid import Fluid

    return Fluid(fluid.names[i], model=fluid.model.name).params


def _liquefied_figures(fluid, z, n, V, final: EndState, lim, flags, defaults=True):
    v = V / n
    out = dict(fill_density=final.mass / V, liquid_mass=final.liquid_mass, vapour_mass=final.vapour_mass,
               liquid_volume_fraction=final.liquid_volume_fraction, liquid_full_T=None, dry_T=None, defaults=[])
    T, kind = liquid_full_temperature(fluid, z, v, final.T)
    if kind == "liquid-full":
        out["liquid_full_T"] = T
    elif kind == "dry":
        out["dry_T"] = T
    elif kind == "single-phase":
        out["liquid_full_note"] = f"the content is single-phase ({final.phase}) at the end of the fill"
        if final.phase == "liquid":
            flags.append("the vessel is LIQUID-FULL at the end of the fill (hydraulically full)")
    else:
        out["liquid_full_note"] = "still two-phase at the highest temperature searched"
    if not defaults:
        return out
    Tc_mix = float(np.asarray(z) @ fluid.Tc)
    lines = out["defaults"]
    if Tc_mix <= P200_LOW_PRESSURE_TC:
        lines.append(f"default P200 rules for low-pressure liquefied gases not applied: critical temperature "
                     f"{Tc_mix - 273.15:.4g} °C is not above 65 °C (a high-pressure liquefied gas); give "
                     "limits.max_fill_density from the rules that apply to you")
        return out
    rhoL50 = _liquid_density_at(fluid, z, P200_LIQUID_DENSITY_TEMPERATURE)
    if rhoL50 is not None:
        lim_fd = P200_FACTOR * rhoL50
        out["default_max_fill_density"] = lim_fd
        lines.append(f"default limit (to confirm against your rules; UN Model Regulations P200, from memory): "
                     f"filling density <= 0.95 x liquid density at 50 °C = {lim_fd / 1e3:.5g} kg/L")
        if final.mass / V > lim_fd:
            flags.append(f"filling density {final.mass / V / 1e3:.5g} kg/L passes the default "
                         f"0.95 x liquid density at 50 °C = {lim_fd / 1e3:.5g} kg/L (P200 default, to confirm)")
    if out["liquid_full_T"] is not None:
        lines.append("default rule (to confirm): not liquid-full at any temperature up to 60 °C")
        if out["liquid_full_T"] <= P200_LIQUID_FULL_TEMPERATURE:
            flags.append(f"the vessel becomes liquid-full at {out['liquid_full_T'] - 273.15:.4g} °C, at or below "
                         "60 °C (P200 default, to confirm)")
    return out


# --------------------------------------------------------------------------
# vents
# --------------------------------------------------------------------------
def _gauss_legendre(a, b, m=24, panels=4):
    x, w = np.polynomial.legendre.leggauss(m)
    edges = np.linspace(a, b, panels + 1)
    xs, ws = [], []
    for lo, hi in zip(edges[:-1], edges[1:]):
        xs.append(0.5 * (hi - lo) * x + 0.5 * (hi + lo))
        ws.append(0.5 * (hi - lo) * w)
    return np.concatenate(xs), np.concatenate(ws)


def _isentrope_enthalpy_integral(fluid, z, s0, V, n_a, n_b):
    """∫_{n_b}^{n_a} h dn along the isentrope s = s0 at v = V/n (Gauss-Legendre in ln n)."""
    # h(n) has a kink where the content turns two-phase (dew point): integrate each side apart
    def two(x):
        return np.atleast_1d(_state(fluid, z, s=np.full(np.shape(x), s0), v=V / np.exp(x)).phase) == "two-phase"

    xa, xb = math.log(n_a), math.log(n_b)
    grid = np.linspace(xa, xb, 17)
    ph = two(grid)
    cuts = [xa]
    for i in np.flatnonzero(ph[1:] != ph[:-1]):
        lo, hi, plo = grid[i], grid[i + 1], ph[i]
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            if two(np.array([mid]))[0] == plo:
                lo = mid
            else:
                hi = mid
            if abs(hi - lo) < 1e-14 * max(1.0, abs(mid)):
                break
        cuts.append(0.5 * (lo + hi))
    cuts.append(xb)
    total = 0.0
    for a, b in zip(cuts[:-1], cuts[1:]):
        x, w = _gauss_legendre(b, a)
        n = np.exp(x)
        st = _state(fluid, z, s=np.full(n.shape, s0), v=V / n)
        total += float(np.sum(w * n * np.asarray(st.h)))
    return total


def vent(vessel: Vessel, initial: Stream, *, stop="target_pressure", target=None, temperature_limit=None,
         limits=None):
    """End state of an adiabatic vent of a rigid vessel.

    Without a wall (C_w = 0) the content left follows its own isentrope
    (V4): s_f = s_0 at v_f = V/n_f; the outflow leaves at the vessel's
    state (homogeneous, also when two-phase).  With a wall in equilibrium
    with the gas, (V5) is integrated in ln n.

    Parameters
    ----------
    vessel : Vessel
    initial : Stream
        Content before the vent (T with P or mass).
    stop : {"target_pressure", "target_mass"}
    target : float
        End pressure [Pa] or mass left [kg].
    temperature_limit : float, optional
        Stop earlier if the gas would cool to this temperature [K].
    limits : dict, optional
        As for :func:`fill`.
    """
    if not isinstance(vessel, Vessel):
        raise InputError("vessel", vessel, "an eosfill.vessel.Vessel")
    if stop not in VENT_STOPS:
        raise InputError("stop", stop, ", ".join(VENT_STOPS))
    target = _positive(stop, target, "a positive value (SI) for the stop criterion")
    V = vessel.volume
    fluid, (z,) = common_fluid(initial.fluid)
    n0, st0 = _initial_content(fluid, z, initial, V)
    M = _molar_mass(fluid, z)
    P0, T0, s0, U0 = _f(st0.P), _f(st0.T), _f(st0.s), n0 * _f(st0.u)
    if stop == "target_pressure" and target >= P0:
        raise InputError("target_pressure", target, f"below the initial pressure {P0:.6g} Pa")
    if stop == "target_mass" and target >= n0 * M:
        raise InputError("target_mass", target, f"below the initial mass {n0 * M:.6g} kg")
    if temperature_limit is not None:
        temperature_limit = _positive("temperature_limit", temperature_limit, "a temperature > 0 K")
    Cw = vessel.wall_heat_capacity
    Tw0 = vessel.wall_temperature if vessel.wall_temperature is not None else T0
    notes = ["the vessel is rigid and adiabatic; the gas leaves at the vessel's own state (homogeneous "
             "outflow, also when two-phase)"]
    flags = []
    if Cw == 0.0:
        notes.append("the content left in the vessel follows its own isentrope")
        res = _vent_isentropic(fluid, z, V, n0, s0, stop, target, temperature_limit)
    else:
        if abs(Tw0 - T0) > 1e-9 * T0:
            raise InputError("wall_temperature", Tw0, f"equal to the gas temperature {T0:.6g} K at the start of a "
                             "vent with the wall in equilibrium")
        notes.append("the wall stays at the gas temperature (thermal equilibrium, lumped heat capacity)")
        res = _vent_wall(fluid, z, V, n0, T0, Cw, stop, target, temperature_limit)
    n_f, st_f, E_out, reached, path = res
    met = reached == stop
    if reached == "temperature_limit":
        notes.append(f"the temperature limit ended the vent before {stop} was reached")
    final = EndState.of(fluid, st_f, n_f, V, wall=_f(st_f.T) if Cw > 0 else None)
    e_cl = (n_f * _f(st_f.u) + Cw * _f(st_f.T) - U0 - Cw * T0 + E_out) / _energy_scale(n_f, _f(st_f.T))
    # homogeneous outflow: the composition stays z, so mass closes by (V1) with z_out = z
    m_cl = (final.mass - n_f * M) / final.mass
    # liquid formation along the path (dew point crossed)
    phases = [(p["n"], p["phase"], p["P"]) for p in path]
    liquid = [p for p in phases if p[1] in ("two-phase", "liquid")]
    lowest = min([p["T"] for p in path] + [final.T])
    vent_info = dict(mass_out=(n0 - n_f) * M, min_T=lowest, liquid_formed=bool(liquid) or final.phase == "two-phase",
                     dew_P=(liquid[0][2] if liquid else (final.P if final.phase == "two-phase" else None)),
                     E_out=E_out)
    if vent_info["liquid_formed"]:
        flags.append("a liquid phase forms during the vent (dew point crossed)")
    lim = dict(limits or {})
    lim["_volume"] = V
    _limit_flags(final, lim, flags, lowest_T=lowest)
    initial_es = EndState.of(fluid, st0, n0, V, wall=T0 if Cw > 0 else None)
    return Result(kind="vent", volume=V, stop=reached, stop_requested=stop, stop_met=met, initial=initial_es,
                  final=final, energy_closure=float(e_cl), mass_closure=float(m_cl), vent=vent_info,
                  curve=[dict(mass=p["n"] * M, T=p["T"], P=p["P"]) for p in path],
                  energy=dict(U0=U0, Uf=n_f * _f(st_f.u), H_out=E_out, wall=Cw * (_f(st_f.T) - T0)),
                  flags=flags, notes=notes)


def _path_points(fluid, z, V, s0, n0, n_f, k=9):
    n = np.geomspace(n0, n_f, k)
    st = _state(fluid, z, s=np.full(n.shape, s0), v=V / n)
    ph = np.atleast_1d(st.phase)
    return [dict(n=float(a), T=float(b), P=float(c), phase=str(d))
            for a, b, c, d in zip(n, np.atleast_1d(st.T), np.atleast_1d(st.P), ph)]


def _vent_isentropic(fluid, z, V, n0, s0, stop, target, T_lim):
    M = _molar_mass(fluid, z)
    reached = stop
    if stop == "target_pressure":
        st = _state(fluid, z, P=target, s=s0)
        n_f = V / _f(st.v)
    else:
        n_f = target / M
        st = _state(fluid, z, s=s0, v=V / n_f)
    if T_lim is not None and _f(st.T) < T_lim:
        # the gas cools monotonically along the isentrope of an expansion
        g = lambda n: _f(_state(fluid, z, s=s0, v=V / n).T) - T_lim  # noqa: E731
        if g(n0) <= 0:
            n_f, reached = n0 * (1 - 1e-12), "temperature_limit"
        else:
            n_f = _brentq(g, n_f, n0, xtol=1e-14 * n0, what="vent to temperature limit")
            reached = "temperature_limit"
        st = _state(fluid, z, s=s0, v=V / n_f)
    E_out = _isentrope_enthalpy_integral(fluid, z, s0, V, n0, n_f)
    return n_f, st, E_out, reached, _path_points(fluid, z, V, s0, n0, n_f)


def _T_of_energy(fluid, z, V, n, E, Cw, T_guess, maxiter=60):
    """T with n u(T, V/n) + C_w T = E (V5): Newton on T, derivative n c_v + C_w
    (single phase: analytic c_v; two phase: backward difference of the
    equilibrium u(T, v), which stays inside the two-phase region at fixed v)."""
    v = V / n
    T = T_guess
    st = None
    for _ in range(maxiter):
        st = _state(fluid, z, T=T, v=v)
        f = n * _f(st.u) + Cw * T - E
        if str(st.phase) != "two-phase":
            cv = _f(st.cv)
        else:
            dT = 1e-6 * T
            cv = (_f(st.u) - _f(_state(fluid, z, T=T - dT, v=v).u)) / dT
        step = -f / (n * cv + Cw)
        step = max(min(step, 0.2 * T), -0.2 * T)
        T += step
        if abs(step) <= 1e-13 * T:
            return T, _state(fluid, z, T=T, v=v)
    raise ConvergenceError("vent with wall (V5)", "wall-and-gas temperature not found from the energy",
                           dict(n=n, T=T, E=E))


def _vent_wall(fluid, z, V, n0, T0, Cw, stop, target, T_lim):
    """(V5) in energy form: E = n u + C_w T_w with T_w = T, x = ln n,

        dE/dx = n h(T, V/n)          (the gas leaves with its own enthalpy)

    integrated by ``solve_ivp`` (DOP853, rtol 1e-11); T at each x from E by
    Newton (:func:`_T_of_energy`).  Carrying E rather than T keeps the
    balance exact across the dew point, where c_v jumps."""
    from scipy.integrate import solve_ivp

    M = _molar_mass(fluid, z)
    x0 = math.log(n0)
    if stop == "target_mass":
        x_end = math.log(target / M)
    else:
        x_end = math.log(n0 * 1e-6)
    st0 = _state(fluid, z, T=T0, v=V / n0)
    E0 = n0 * _f(st0.u) + Cw * T0
    memo = {"T": T0}

    def T_at(x, E):
        T, st = _T_of_energy(fluid, z, V, math.exp(x), E, Cw, memo["T"])
        memo["T"] = T
        return T, st

    def rhs(x, y):
        n = math.exp(x)
        _, st = T_at(x, y[0])
        return [n * _f(st.h)]

    events = []
    if stop == "target_pressure":
        def ev_P(x, y):
            return _f(T_at(x, y[0])[1].P) - target
        ev_P.terminal, ev_P.direction = True, 0
        events.append(ev_P)
    if T_lim is not None:
        def ev_T(x, y):
            return T_at(x, y[0])[0] - T_lim
        ev_T.terminal, ev_T.direction = True, 0
        events.append(ev_T)
    sol = solve_ivp(rhs, (x0, x_end), [E0], method="DOP853", rtol=1e-11, atol=1e-9 * abs(E0) + 1e-6,
                    events=events or None, dense_output=False)
    if sol.status < 0:
        raise ConvergenceError("vent with wall (V5)", sol.message, dict(n=math.exp(sol.t[-1]), T=memo["T"]))
    reached = stop
    x_f, E_f = sol.t[-1], sol.y[0, -1]
    if sol.status == 1:
        k = [i for i, e in enumerate(sol.t_events) if len(e)][0]
        reached = "target_pressure" if (stop == "target_pressure" and k == 0) else "temperature_limit"
        x_f = sol.t_events[k][0]
        E_f = sol.y_events[k][0][0]
    elif stop == "target_pressure":
        raise ConvergenceError("vent with wall (V5)", "target pressure not reached", dict(T=memo["T"]))
    n_f = math.exp(x_f)
    T_f, st = T_at(x_f, E_f)
    path = []
    for x, E in zip(sol.t, sol.y[0]):
        T, s_ = T_at(x, E)
        path.append(dict(n=math.exp(x), T=float(T), P=_f(s_.P), phase=str(s_.phase)))
    # energy that left: E0 - E_f (= -∫ h dn along the integration)
    return n_f, st, float(E0 - E_f), reached, path


# --------------------------------------------------------------------------
# cascade fills
# --------------------------------------------------------------------------
@dataclass
class Bank:
    """A storage bank of a cascade: ``volume`` [m³] and its gas (a :class:`Stream` with T, P)."""

    volume: float
    gas: Stream
    name: str = ""

    def __post_init__(self):
        self.volume = _positive("bank.volume", self.volume, "a volume > 0 m3")
        if self.gas.P is None:
            raise InputError("bank.P", None, "the bank's initial pressure [Pa]")


class _BankDraw:
    """(V6): a bank venting along its own isentrope; H(N) = ∫_0^N h_b dN."""

    def __init__(self, fluid, z, bank: Bank):
        self.fluid, self.z, self.V = fluid, z, bank.volume
        st = _state(fluid, z, T=bank.gas.T, P=bank.gas.P)
        self.n0, self.s0, self.U0, self.st0 = bank.volume / _f(st.v), _f(st.s), bank.volume / _f(st.v) * _f(st.u), st

    def state(self, N):
        return _state(self.fluid, self.z, s=self.s0, v=self.V / (self.n0 - N))

    def H(self, N):
        if N <= 0:
            return 0.0
        x, w = _gauss_legendre(0.0, N, m=20, panels=3)
        st = _state(self.fluid, self.z, s=np.full(x.shape, self.s0), v=self.V / (self.n0 - x))
        return float(np.sum(w * np.asarray(st.h)))


def cascade_fill(vessel: Vessel, banks, initial: Stream | None = None, *, switch_pressure_difference=0.0,
                 stop="target_pressure", target=None, temperature_limit=None, heat=0.0,
                 settled_temperature=None, nominal_pressure=None, nominal_temperature=T_NOMINAL,
                 state_of_charge=False, limits=None, compare=True):
    """End state of a fill from several storage banks used in order.

    Each bank vents adiabatically along its own isentrope (V6) into the
    vessel; the next bank is taken when the bank-vessel pressure difference
    falls to ``switch_pressure_difference`` [Pa].  The integration is in the
    amount drawn (no time).  ``stop`` and ``target`` as for :func:`fill`
    (``"supply_pressure"``: use every bank to its switch point).  With
    ``compare`` the same fill from one bank of the banks' total volume at the
    highest bank's state is reported beside it.
    """
    if not isinstance(vessel, Vessel):
        raise InputError("vessel", vessel, "an eosfill.vessel.Vessel")
    banks = list(banks)
    if not banks:
        raise InputError("banks", banks, "one or more Bank")
    if stop not in FILL_STOPS:
        raise InputError("stop", stop, ", ".join(FILL_STOPS))
    if stop != "supply_pressure":
        target = _positive(stop, target, "a positive value (SI) for the stop criterion")
    dP_sw = _nonneg("switch_pressure_difference", switch_pressure_difference, "a pressure difference >= 0 Pa")
    V = vessel.volume
    fl = [b.gas.fluid for b in banks] + ([initial.fluid] if initial is not None else [])
    fluid, zs = common_fluid(*fl)
    zb = zs[:len(banks)]
    z0 = zs[len(banks)] if initial is not None else zb[0]
    n0, st0 = _initial_content(fluid, z0, initial, V)
    P0 = _f(st0.P) if st0 is not None else 0.0
    top = max(b.gas.P for b in banks)
    if stop == "target_pressure" and target > top:
        raise InputError("target_pressure", target, f"at most the highest bank pressure {top:.6g} Pa")
    if stop == "target_pressure" and target <= P0:
        raise InputError("target_pressure", target, f"above the initial pressure {P0:.6g} Pa")
    if temperature_limit is not None:
        temperature_limit = _positive("temperature_limit", temperature_limit, "a temperature > 0 K")
    T_settle = T_NOMINAL if settled_temperature is None else _positive("settled_temperature", settled_temperature)
    U0 = n0 * _f(st0.u) if st0 is not None else 0.0
    c = _Content(fluid, vessel, n0, z0, U0, initial.T if initial is not None else None, heat)
    draws = [_BankDraw(fluid, z, b) for z, b in zip(zb, banks)]
    cap = V / (1.0005 * float(np.max(fluid.params.b - fluid.volume_shift)))
    Mb = [_molar_mass(fluid, z) for z in zb]
    m0 = n0 * _molar_mass(fluid, z0)

    # running totals before the current bank
    n_v, nz_v, H_tot, m_v = n0, n0 * z0, 0.0, m0
    stages, flags = [], []
    notes = ["each bank vents adiabatically along its own isentrope (homogeneous outflow); the gas enters "
             "the vessel with the bank's enthalpy (isenthalpic throttle); the vessel is rigid and, apart "
             "from the heat given, adiabatic"]
    reached, met, done = "supply_pressure", True, False
    final_st = final_n = final_z = None
    bank_end = []
    for k, (d, bank) in enumerate(zip(draws, banks)):
        zk = zb[k]

        def vessel_at(N, d=d, zk=zk, n_v=n_v, nz_v=nz_v, H_tot=H_tot):
            n = n_v + N
            z = (nz_v + N * zk) / n
            return c.end_state(n, z, U0 + H_tot + d.H(N) + c.Q), n, z

        def crit(name, N, d=d, Mk=Mb[k], m_v=m_v, vessel_at=vessel_at):
            if name == "target_mass":
                return m_v + N * Mk - target
            if name == "target_fill_density":
                return (m_v + N * Mk) / V - target
            st, n, z = vessel_at(N)
            if name == "target_settled_pressure":
                return _f(_state(fluid, z, T=T_settle, v=V / n).P) - target
            if name == "temperature_limit":
                return _f(st.T) - temperature_limit
            return (_f(st.P) - target) / target

        def gap(N, d=d, vessel_at=vessel_at):
            return _f(d.state(N).P) - _f(vessel_at(N)[0].P) - dP_sw if N > 0 else \
                _f(d.st0.P) - (_f(vessel_at(0.0)[0].P) if n_v > 0 else 0.0) - dP_sw

        if gap(0.0) <= 0:
            stages.append(dict(bank=bank.name or str(k + 1), reason="skipped: not above the vessel pressure by the "
                               "switch difference", bank_T=_f(d.st0.T), bank_P=_f(d.st0.P), mass_drawn=0.0,
                               moles_drawn=0.0, energy_drawn=0.0, bank_composition=_comp_dict(fluid, zk),
                               vessel_T=_f(final_st.T) if final_st is not None else (initial.T if initial else float("nan")),
                               vessel_P=_f(final_st.P) if final_st is not None else P0, vessel_mass=m_v))
            bank_end.append(d.st0)
            continue
        # bracket the switch point: the bank cannot give all it holds
        N_cap = min(d.n0, cap - n_v)  # the bank empties, or the vessel reaches the model's densest content
        hi = 0.5 * N_cap
        for _ in range(60):
            if gap(hi) < 0:
                break
            hi = N_cap - 0.5 * (N_cap - hi)
        N_sw = _brentq(gap, 0.0, hi, xtol=1e-14 * d.n0, what=f"cascade bank {k + 1} switch")
        N_end, reason = N_sw, "switched (pressure difference reached)" if k < len(banks) - 1 else "equalised"
        if stop != "supply_pressure" and crit(stop, N_sw) >= 0:
            N_end = _brentq(lambda N: crit(stop, N), 0.0, N_sw, xtol=1e-14 * N_sw, what=f"cascade to {stop}")
            reached, reason, done = stop, f"stop criterion {stop} met", True
        if temperature_limit is not None:
            N_T, _ = _scan_first(lambda N: crit("temperature_limit", N), 0.0, N_end, npts=6)
            if N_T is not None:
                N_end, reached, reason, done = N_T, "temperature_limit", "temperature limit reached", True
        final_st, final_n, final_z = vessel_at(N_end)
        b_st = d.state(N_end) if N_end > 0 else d.st0
        bank_end.append(b_st)
        H_k = d.H(N_end)
        stages.append(dict(bank=bank.name or str(k + 1), reason=reason, bank_T=_f(b_st.T), bank_P=_f(b_st.P),
                           bank_mass_left=(d.n0 - N_end) * Mb[k], mass_drawn=N_end * Mb[k], energy_drawn=H_k,
                           moles_drawn=N_end, bank_composition=_comp_dict(fluid, zk),
                           vessel_T=_f(final_st.T), vessel_P=_f(final_st.P), vessel_mass=m_v + N_end * Mb[k]))
        n_v, nz_v, H_tot, m_v = final_n, nz_v + N_end * zk, H_tot + H_k, m_v + N_end * Mb[k]
        if done:
            break
    if final_st is None:
        raise InputError("banks", [b.gas.P for b in banks],
                         "at least one bank above the vessel pressure by the switch difference")
    if stop != "supply_pressure" and reached == "supply_pressure":
        met = False
        flags.append(f"stop criterion {stop} = {target:.6g} (SI) cannot be met: the banks are used up "
                     f"with {m_v:.6g} kg in the vessel")
        reached = "banks_used"
    elif stop == "supply_pressure":
        reached = "banks_used" if reached == "supply_pressure" else reached
        met = reached == "banks_used"
    else:
        met = reached == stop
    Tw = _f(final_st.T) if vessel.wall_heat_capacity > 0 else None
    final = EndState.of(fluid, final_st, final_n, V, wall=Tw)
    # closures: vessel + banks together (V1), (V6)
    U_banks0 = sum(d.U0 for d in draws)
    U_banks = 0.0
    for d, b_st, st in zip(draws, bank_end, stages):
        U_banks += (d.n0 - st["mass_drawn"] / _molar_mass(fluid, d.z)) * _f(b_st.u)
    U_banks += sum(d.U0 for d in draws[len(bank_end):])
    lhs = final_n * _f(final_st.u) + c.Cw * (_f(final_st.T) - (c.Tw0 or 0.0)) + U_banks
    # relative to the whole system's n R T (vessel and banks: a huge bank has a huge energy)
    n_sys = final_n + sum(d.n0 for d in draws) - (final_n - n0)
    e_cl = (lhs - U0 - U_banks0 - c.Q) / _energy_scale(n_sys, _f(final_st.T))
    e_vessel = (final_n * _f(final_st.u) + c.Cw * (_f(final_st.T) - (c.Tw0 or 0.0)) - U0 - H_tot - c.Q)
    m_cl = (final.mass - m_v) / final.mass
    settled = _settle(fluid, final_z, final_n, V, T_settle, nominal_pressure, nominal_temperature, state_of_charge)
    lim = dict(limits or {})
    lim["_volume"] = V
    _limit_flags(final, lim, flags)
    _overfill_flag(settled, flags)
    res = Result(kind="cascade_fill", volume=V, stop=reached, stop_requested=stop, stop_met=met,
                 initial=EndState.of(fluid, st0, n0, V) if st0 is not None else None, final=final,
                 energy_closure=float(e_cl), mass_closure=float(m_cl), settled=settled, stages=stages,
                 energy=dict(U0=U0, Uf=final_n * _f(final_st.u), H_in=H_tot, Q=c.Q,
                             vessel_closure=e_vessel / _energy_scale(final_n, _f(final_st.T))),
                 flags=flags, notes=notes)
    if compare and len(banks) > 1:
        kbest = int(np.argmax([b.gas.P for b in banks]))
        one = Bank(sum(b.volume for b in banks), banks[kbest].gas, name="single")
        alt = cascade_fill(vessel, [one], initial, switch_pressure_difference=dP_sw, stop=stop, target=target,
                           temperature_limit=temperature_limit, heat=heat, settled_temperature=settled_temperature,
                           compare=False)
        res.comparison = dict(description=f"total volume {sum(b.volume for b in banks):.6g} m3 at the highest "
                              f"bank's state", T=alt.final.T, P=alt.final.P, mass=alt.final.mass, stop=alt.stop,
                              bank_P=alt.stages[-1]["bank_P"], bank_mass_drawn=alt.stages[-1]["mass_drawn"])
    return res
