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

import contextvars
import functools
import math
from dataclasses import dataclass, field

import numpy as np

from eosfill.constants import R
from eosfill.errors import CONVERGED, STATUS_TEXT, ConvergenceError, InputError, worst_status

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
    from eosfill.states.fluid import Fluid

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


# the worst solver status of the states a result is built on (codes of eosfill.errors):
# every state the balances use goes through _state, which records it here while a
# result is being computed (see _StatusRecord)
_STATUS = contextvars.ContextVar("eosfill_vessel_status", default=None)


class _StatusRecord:
    """Context: collects the worst status of the states solved inside it (nested records
    pass theirs on to the enclosing one)."""

    def __enter__(self):
        self.worst = [CONVERGED]
        self._token = _STATUS.set(self.worst)
        return self

    def __exit__(self, *exc):
        _STATUS.reset(self._token)
        _note_status(self.worst[0])
        return False

    @property
    def status(self):
        return int(self.worst[0])


def _note_status(code):
    rec = _STATUS.get()
    if rec is not None:
        rec[0] = worst_status(rec[0], code)


def _with_status(func):
    """Decorator of the vessel-layer entry points: the Result returned carries the worst
    solver status of every state solved while it was built (``Result.status``)."""
    @functools.wraps(func)
    def run(*args, **kwargs):
        with _StatusRecord() as rec:
            res = func(*args, **kwargs)
        res.status = worst_status(res.status, rec.status)
        return res

    return run


def _state(fluid, z, **spec):
    """State of composition z (silences the 0/0 of absent components); its solver status
    (``getattr(state, "status", CONVERGED)``) is recorded for the result being built."""
    f = fluid.with_composition(z) if z is not None else fluid
    with np.errstate(invalid="ignore", divide="ignore"):
        st = f.state(**spec)
    _note_status(getattr(st, "status", CONVERGED))
    return st


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
            T1 = _f(_state(self.fluid, z, u=(E - 0.0) / n, v=v).T)
        except InputError:
            # the gas alone would pass the inverse solver's range: bracket by g itself
            # (g rises with T: n c_v + C_w > 0), stepping from T_w0 outwards
            T1 = Tw0
            step = 2.0 if g(Tw0) < 0 else 0.5
            for _ in range(12):
                T1 *= step
                if (g(T1) >= 0) == (step > 1):
                    break
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
# closure verified against an independent recomputation
# --------------------------------------------------------------------------
# A result closes to ~1e-10 when its states are right; 1e-6 leaves room for the
# solvers' tolerances and refuses anything visibly wrong (our choice, common
# practice, no source).
CLOSURE_TOLERANCE = 1e-6


def _z_of(fluid, composition):
    """Mole-fraction vector (in the fluid's order) of a reported {name: x} composition."""
    return np.array([composition.get(n, 0.0) for n in fluid.names], dtype=float)


def _recomputed_content(fluid, es: "EndState", V):
    """(n, U, P residual) of a reported content in a volume V, recomputed by a separate
    evaluation from its reported T, P and composition: the (T, P) state for one phase
    (n = V/v), the (T, v = V/n) equilibrium state when two-phase (where T and P do not
    fix v; the pressure of that state is compared with the reported one instead)."""
    z = _z_of(fluid, es.composition)
    if es.phase == "two-phase":
        st = _state(fluid, z, T=es.T, v=V / es.n)
        return es.n, es.n * _f(st.u), (_f(st.P) - es.P) / es.P
    st = _state(fluid, z, T=es.T, P=es.P)
    n = V / _f(st.v)
    return n, n * _f(st.u), 0.0


def _refuse_unclosed(kind, energy_closure, mass_closure, state_residual, figures, tol=CLOSURE_TOLERANCE):
    """Raise ConvergenceError (with the figures) when a result misses its closure tolerance."""
    worst = max(abs(energy_closure), abs(mass_closure), abs(state_residual))
    if not worst <= tol:   # also refuses NaN
        raise ConvergenceError(
            f"{kind} balance check",
            f"the result does not close against an independent recomputation of its states: energy "
            f"{energy_closure:.3e}, mass {mass_closure:.3e}, end-state pressure {state_residual:.3e} "
            f"(relative; tolerance {tol:g}); the result is refused",
            dict(figures, energy_closure=float(energy_closure), mass_closure=float(mass_closure),
                 state_residual=float(state_residual)), worst)


def _fill_closure(fluid, V, final, initial, supply_T, supply_P, z_in, N, Cw, Tw0, Q):
    """(V1), (V2) of a fill from the reported end and initial states and the supply state,
    each recomputed by its own evaluation (not the solved states): relative energy and
    mass closures and the end state's pressure residual."""
    n_f, U_f, p_res = _recomputed_content(fluid, final, V)
    if initial is not None:
        n_0, U_0, p0 = _recomputed_content(fluid, initial, V)
        m_0 = n_0 * _molar_mass(fluid, _z_of(fluid, initial.composition))
    else:
        n_0 = U_0 = m_0 = p0 = 0.0
    h_in = _f(_state(fluid, z_in, T=supply_T, P=supply_P).h)
    M_f = _molar_mass(fluid, _z_of(fluid, final.composition))
    e = (U_f - U_0 + Cw * (final.T - (Tw0 or 0.0)) - N * h_in - Q) / _energy_scale(final.n, final.T)
    m = (n_f * M_f - m_0 - N * _molar_mass(fluid, z_in)) / (n_f * M_f)
    return float(e), float(m), float(max(abs(p_res), abs(p0)))


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------
def _qty(value, kind, digits=6):
    from eosfill.io.units import format_quantity

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
    solid: list = field(default_factory=list)  # solid region / freeze-out (eosfill.equilibrium.solid)

    @classmethod
    def of(cls, fluid, st, n, V, wall=None):
        z = np.asarray(st.x)
        M = _molar_mass(fluid, z)
        beta = _f(st.vapor_fraction)
        out = cls(T=_f(st.T), P=_f(st.P), n=float(n), mass=float(n * M),
                  composition={k: float(x) for k, x in zip(fluid.names, z) if x > 0},
                  phase=str(st.phase), vapor_fraction=beta, wall_temperature=wall,
                  solid=list(st.solid_risk.messages))
        if out.phase == "two-phase":
            L = st.liquid
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
        if self.solid:
            s.append("  SOLID REGION: " + "; ".join(self.solid))
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
    closure_tolerance: float = CLOSURE_TOLERANCE
    status: int = CONVERGED   # worst solver status of the states used (eosfill.errors codes)
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
        if self.status != CONVERGED:
            out.append(f"WARNING: built on a state whose solver reported: {STATUS_TEXT.get(self.status, self.status)}")
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
    flags.extend(m for m in final.solid if m not in flags)  # solid region, never silent
    if not limits:
        return
    from eosfill.io.units import format_quantity as fq

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
@_with_status
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
    flags = [f"supply: {m}" for m in st_in.solid_risk.messages]  # a solid in the supply line

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
    # closures (V1), (V2): the reported end and initial states and the supply recomputed
    # independently (not the solved states); a result that does not close is refused
    N = n_end - n0
    e_cl, m_cl, p_res = _fill_closure(fluid, V, final, initial_es, supply.T, supply.P, z_in, N, c.Cw, c.Tw0,
                                      c.Q)
    _refuse_unclosed("fill", e_cl, m_cl, p_res, dict(T=final.T, P=final.P, n=final.n, supply_T=supply.T,
                                                      supply_P=supply.P))
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
    from eosfill.equilibrium import solvers as equilibrium

    f = fluid.with_composition(z)
    try:
        with np.errstate(invalid="ignore", divide="ignore"):
            if f.is_pure or np.count_nonzero(z) == 1:
                i = int(np.flatnonzero(z)[0])
                if T >= fluid.Tc[i]:
                    return None
                sat = equilibrium.saturation_pressure(np.array([T]), _pure_params(fluid, i))
                _note_status(sat.get("status"))
                vL = float(np.asarray(sat["v_L"]).ravel()[0]) - float(fluid.volume_shift[i])
                return float(fluid.molar_masses[i]) / vL
            _, Pb, _ = equilibrium.bubble_point(np.asarray(z), f.params, T=T)
            st = f.single_phase(T, Pb, which="liquid")
            return _f(st.rho_mass)
    except (ConvergenceError, InputError):
        return None


def _pure_params(fluid, i):
    from eosfill.states.fluid import Fluid

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
