"""Restrictions used by the time integration: what limits the flow into or out of a
vessel, as a mass flow [kg/s] from the upstream state and the downstream pressure.

========================  ====================================================
restriction               model
========================  ====================================================
:class:`Orifice`          real-gas isentropic nozzle times a discharge
                          coefficient, ṁ = C_d A G (F1-F4)
:class:`Valve`            IEC 60534-2-1 gas sizing equation solved for the
                          flow, with expansion factor and choked limit (F5-F9)
:class:`MassFlow`         a prescribed mass flow
:class:`PressureRamp`     the flow that makes the vessel pressure change at
                          a prescribed rate (solved in :mod:`eosfill.transient`)
========================  ====================================================

Neighbours: the nozzle in :mod:`~eosfill.transient.nozzle`, the equilibrium
isentropes in :mod:`~eosfill.transient.isentropes`, the valve equations in
:mod:`~eosfill.transient.valves`; the map is :mod:`~eosfill.transient.flow`.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from eosfill.errors import InputError
from eosfill.transient.gas import _positive
from eosfill.transient.nozzle import IsentropicNozzle
from eosfill.transient.valves import KV_PER_CV, iec_gas_mass_flow, iec_xTP, piping_geometry_factor


# --------------------------------------------------------------------------
# restrictions used by the time integration
# --------------------------------------------------------------------------
@dataclass
class Orifice:
    """An orifice or nozzle: ṁ = C_d · (π d²/4) · G (F1-F3).

    Parameters
    ----------
    diameter : bore [m], > 0
    discharge_coefficient : C_d in (0, 1]
    """

    diameter: float
    discharge_coefficient: float

    def __post_init__(self):
        self.diameter = _positive("orifice diameter", self.diameter, "a bore > 0 m")
        cd = self.discharge_coefficient
        try:
            cd = float(cd)
        except (TypeError, ValueError):
            raise InputError("discharge_coefficient", cd, "a number in (0, 1]") from None
        if not (0.0 < cd <= 1.0):
            raise InputError("discharge_coefficient", cd, "a number in (0, 1]")
        self.discharge_coefficient = cd

    @property
    def area(self):
        return np.pi * self.diameter**2 / 4.0

    def mass_flow(self, nozzle: IsentropicNozzle, P_down):
        """[kg/s] from an :class:`IsentropicNozzle` built on the upstream state."""
        return self.discharge_coefficient * self.area * nozzle.mass_flux(P_down)

    def describe(self):
        return f"orifice d = {self.diameter * 1e3:.4g} mm, Cd = {self.discharge_coefficient:.4g}"


@dataclass
class Valve:
    """A control valve sized by IEC 60534-2-1 (F5-F9).

    Give ``Kv`` [m³/h] or ``Cv`` [US gal/min]; ``xT``; optionally the valve
    size ``d`` and pipe sizes ``D1``, ``D2`` [m] for the piping geometry
    factor.  ``FL`` is kept for the record (liquid flow only).
    """

    xT: float
    Kv: float | None = None
    Cv: float | None = None
    FL: float | None = None
    d: float | None = None
    D1: float | None = None
    D2: float | None = None

    def __post_init__(self):
        if (self.Kv is None) == (self.Cv is None):
            raise InputError("Kv/Cv", (self.Kv, self.Cv), "exactly one of Kv [m3/h] or Cv [US gal/min], > 0")
        if self.Kv is None:
            self.Kv = KV_PER_CV * _positive("Cv", self.Cv)
        else:
            self.Kv = _positive("Kv", self.Kv)
        try:
            xT = float(self.xT)
        except (TypeError, ValueError):
            raise InputError("xT", self.xT, "a number in (0, 1]") from None
        if not (0.0 < xT <= 1.0):
            raise InputError("xT", self.xT, "a number in (0, 1]")
        self.xT = xT
        self.Fp, self.xTP = 1.0, xT
        if self.d is not None:
            d = _positive("valve size d", self.d, "a size > 0 m")
            Fp, zi = piping_geometry_factor(self.Kv, d, self.D1, self.D2)
            self.Fp, self.xTP = Fp, iec_xTP(xT, Fp, self.Kv, d, zi)

    def mass_flow(self, P1, P2, rho1, gamma):
        W, _ = iec_gas_mass_flow(self.Kv, self.xT, P1, P2, rho1, gamma, Fp=self.Fp, xTP=self.xTP)
        return W

    def describe(self):
        return f"valve Kv = {self.Kv:.4g} m3/h, xT = {self.xT:.4g}"


@dataclass
class MassFlow:
    """A prescribed mass flow [kg/s], ≥ 0 (into the vessel in a fill, out in a vent)."""

    mass_flow: float

    def __post_init__(self):
        try:
            m = float(self.mass_flow)
        except (TypeError, ValueError):
            raise InputError("mass_flow", self.mass_flow, "a mass flow ≥ 0 kg/s") from None
        if not np.isfinite(m) or m < 0.0:
            raise InputError("mass_flow", self.mass_flow, "a mass flow ≥ 0 kg/s")
        self.mass_flow = m

    def describe(self):
        return f"prescribed mass flow {self.mass_flow:.4g} kg/s"


@dataclass
class PressureRamp:
    """A prescribed rate of vessel pressure change [Pa/s], > 0 (rise in a fill, fall in a vent)."""

    rate: float

    def __post_init__(self):
        self.rate = _positive("pressure ramp rate", self.rate, "a rate > 0 Pa/s")

    def describe(self):
        return f"pressure ramp {self.rate * 60 / 1e6:.4g} MPa/min"
