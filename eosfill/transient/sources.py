"""Where a fill's gas comes from: an infinite supply (``Reservoir``) or a finite rigid
bank emptied adiabatically (``Bank``, used in order as a cascade).

Neighbours: the result in ``result.py``, the content's state in ``content.py``, the
right-hand side in ``rhs.py``, the driver in ``run.py`` (map in ``model.py``).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from eosfill.transient import flow as _flow
from eosfill.errors import InputError

# --------------------------------------------------------------------------
# sources
# --------------------------------------------------------------------------
@dataclass
class Reservoir:
    """An infinite supply at pressure ``pressure`` [Pa] and temperature ``temperature``:
    a number [K], a callable T(t), or a table ((t0, T0), (t1, T1), ...) interpolated
    linearly (precooling that changes with time).  ``composition``: mole fractions
    in the order of the fluid's names (None: the fluid's)."""

    pressure: float
    temperature: object
    composition: object = None

    def __post_init__(self):
        self.pressure = _flow._positive("supply pressure", self.pressure, "a pressure > 0 Pa")
        T = self.temperature
        if callable(T):
            self._T = T
            self.constant = False
        elif np.ndim(T) == 0:
            Tc = _flow._positive("supply temperature", T, "a temperature > 0 K")
            self._T = lambda t: Tc
            self.constant = True
        else:
            tab = np.asarray(T, dtype=float)
            if tab.ndim != 2 or tab.shape[1] != 2 or np.any(tab[:, 1] <= 0) or np.any(np.diff(tab[:, 0]) <= 0):
                raise InputError("supply temperature", T, "K, a callable T(t), or rows (t [s], T [K]) with "
                                 "increasing t and T > 0")
            self._T = lambda t: float(np.interp(t, tab[:, 0], tab[:, 1]))
            self.constant = False

    def T(self, t):
        return float(self._T(t))


@dataclass
class Bank:
    """A finite storage bank of a cascade: volume [m³], initial T [K] and P [Pa]."""

    volume: float
    temperature: float
    pressure: float
    composition: object = None
    name: str = ""

    def __post_init__(self):
        self.volume = _flow._positive("bank volume", self.volume, "a volume > 0 m3")
        self.temperature = _flow._positive("bank temperature", self.temperature, "a temperature > 0 K")
        self.pressure = _flow._positive("bank pressure", self.pressure, "a pressure > 0 Pa")
