"""Result types of the vessel balances: :class:`LimitPassed`, :class:`EndState`,
:class:`Settled`, :class:`Result`, and the closure tolerance they are checked against.

Neighbours in :mod:`eosfill.vessel`: inputs and helpers in ``inputs.py``, the
content's end state and the closures in ``closure.py``, result types in
``results.py``, the fill in ``fill.py``, liquefied-gas figures in ``liquefied.py``;
the map is :mod:`~eosfill.vessel.balances`.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from eosfill.errors import CONVERGED
from eosfill.vessel.inputs import CAUTION, _f, _molar_mass


# A result closes to ~1e-10 when its states are right; 1e-6 leaves room for the
# solvers' tolerances and refuses anything visibly wrong (our choice, common
# practice, no source).
CLOSURE_TOLERANCE = 1e-6


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class LimitPassed:
    """A computed value past a limit the user gave (or a default), as data; the
    outside-world layer (:mod:`eosfill.io.summaries`) renders it in an engineer's units.

    ``key``: the limit's name (``"max_gas_temperature"``); ``quantity``: what
    passed it, in words; ``value``, ``limit``: SI; ``kind``: the kind of
    quantity (``"temperature"``, ``"pressure"``, ``"density"``; None for a
    plain number); ``note``: what it means (``"overfill"``)."""

    key: str
    quantity: str
    value: float
    limit: float
    kind: str | None = None
    note: str = ""

    def __str__(self):  # plain SI, for logs and old callers that treat flags as text
        u = {"temperature": " K", "pressure": " Pa", "density": " kg/m3"}.get(self.kind, "")
        return (f"{self.quantity} {self.value:.6g}{u} passes the limit {self.key} = {self.limit:.6g}{u}"
                + (f" ({self.note})" if self.note else ""))

    def __contains__(self, text):  # flags were strings: `"overfill" in flag` keeps working
        return text in str(self)


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


@dataclass
class Result:
    """End state of a fill, cascade fill, liquefied-gas fill or vent.

    Every field SI; data only: :func:`eosfill.io.summaries.result_text` renders
    it as text (with the caution, the closures and the flags); ``to_dict()`` is JSON-ready.
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
