"""Inputs of the vessel balances (Vessel, Stream, their checks), the stop names, and the
helpers the balances share: a common fluid for all streams, states that record their
solver status, brackets.

Neighbours in :mod:`eosfill.vessel`: inputs and helpers in ``inputs.py``, the
content's end state and the closures in ``closure.py``, result types in
``results.py``, the fill in ``fill.py``, liquefied-gas figures in ``liquefied.py``;
the map is :mod:`~eosfill.vessel.balances`.
"""
from __future__ import annotations

import contextvars
import functools
import math
from dataclasses import dataclass

import numpy as np

from eosfill.errors import CONVERGED, ConvergenceError, EosfillError, InputError, worst_status


CAUTION = ("Caution: estimates from an equation of state and simplified models (adiabatic or "
           "lumped-wall balances); local codes, the vessel's approval documents and licensed "
           "practice govern.")
T_NOMINAL = 288.15  # K, 15 °C: reference temperature of a nominal working pressure (common practice, no source)

FILL_STOPS = ("target_pressure", "target_mass", "target_settled_pressure", "target_fill_density",
              "supply_pressure")
VENT_STOPS = ("target_pressure", "target_mass")


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
    (``getattr(state, "status", CONVERGED)``) is recorded for the result being built.

    One state of a pure fluid at fixed v and u, h or s is solved by the batch path of the
    state solver (a batch of two equal rows; the state returned is the (T, v) state at its
    temperature), so that it equals the same state solved in a batch
    (:func:`_rows_state`) bit for bit; the solvers' one-state shortcut for that pair
    reaches the same state by other arithmetic."""
    f = fluid.with_composition(z) if z is not None else fluid
    with np.errstate(invalid="ignore", divide="ignore"):
        if _batch_only(f, spec) and all(np.size(v) == 1 for v in spec.values()):
            two = f.state(**{k: np.full(2, float(np.asarray(v).reshape(-1)[0])) for k, v in spec.items()})
            _note_status(int(np.max(two.status)))
            st = f.state(T=float(two.T[0]), v=float(np.asarray(spec["v"]).reshape(-1)[0]))
        else:
            st = f.state(**spec)
    _note_status(getattr(st, "status", CONVERGED))
    return st


def _batch_only(f, spec):
    """A pair whose one-state solve takes another path than its batch solve (pure fluid, v with u/h/s)."""
    return f.is_pure and "v" in spec and "T" not in spec and "P" not in spec


ROW_KEYS = ("T", "P", "v", "u", "h", "beta")


def _rows_state(fluid, z, **spec):
    """Many states of composition z (arrays of one value per row), each equal to
    :func:`_state` of its row alone, bit for bit.

    Returns ``(values, errors)``: ``values`` a dict of arrays ``T, P, v, u, h, beta``,
    ``phase`` (NaN and "" where a row failed) and ``solid`` (a solid may form: the
    state's ``solid_risk`` flag), ``errors`` {row: exception} of the
    rows whose state cannot be solved, with the exception :func:`_state` raises for that
    row alone.  One call of the solver for all rows; if it refuses the batch, row by row."""
    spec = {k: np.asarray(v, dtype=float).reshape(-1) for k, v in spec.items()}
    n = max(v.size for v in spec.values())
    spec = {k: np.broadcast_to(v, (n,)) for k, v in spec.items()}
    out = {k: np.full(n, np.nan) for k in ROW_KEYS}
    out["phase"] = np.full(n, "", dtype=object)
    out["solid"] = np.zeros(n, dtype=bool)
    errors = {}
    if n == 0:
        return out, errors
    f = fluid.with_composition(z) if z is not None else fluid
    st = None
    if n > 1 or not _batch_only(f, spec):
        try:
            with np.errstate(invalid="ignore", divide="ignore"):
                st = f.state(**spec)
            _note_status(int(np.max(st.status)))
        except EosfillError:
            st = None
    if st is not None:
        for k in ROW_KEYS[:-1]:
            out[k] = np.asarray(getattr(st, k), dtype=float).reshape(n)
        out["beta"] = np.asarray(st.vapor_fraction, dtype=float).reshape(n)
        out["phase"] = np.asarray(st.phase, dtype=object).reshape(n)
        out["solid"] = np.asarray(st.solid_risk.flag, dtype=bool).reshape(n)
        return out, errors
    for i in range(n):  # the batch was refused: each row alone, as _state solves it
        try:
            one = _state(fluid, z, **{k: float(v[i]) for k, v in spec.items()})
        except EosfillError as exc:
            errors[i] = exc
            continue
        for k in ROW_KEYS[:-1]:
            out[k][i] = _f(getattr(one, k))
        out["beta"][i] = _f(one.vapor_fraction)
        out["phase"][i] = str(one.phase)
        out["solid"][i] = bool(one.solid_risk.messages)
    return out, errors


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
