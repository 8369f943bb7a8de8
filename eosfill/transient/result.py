"""What a time-resolved run returns: the result (``TransientResult``), the error raised
when the integration stops early (``IntegrationError``, carrying the partial result) and
the caution printed with every result.

Neighbours in :mod:`eosfill.transient`: the sources in ``sources.py``, the content's
state in ``content.py``, the right-hand side in ``rhs.py``, the integration driver in
``run.py``, closures, phase labels and limit flags in ``checks.py``; the map and the
balances (T1)-(T3) are in ``model.py``.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from eosfill.errors import CONVERGED, ConvergenceError

CAUTION = ("Caution: estimates from an equation of state and simplified heat-transfer models; local "
           "codes, the vessel's approval documents and licensed practice govern.")


class IntegrationError(ConvergenceError):
    """The time integration stopped before its end.

    Attributes
    ----------
    t_reached : float
        Last time reached [s].
    last_state : dict
        T, P, n, ... at ``t_reached``.
    partial : TransientResult
        Everything computed up to ``t_reached``.
    """

    def __init__(self, message, t_reached, last_state, partial):
        self.t_reached = t_reached
        self.partial = partial
        super().__init__("transient integration", f"{message} at t = {t_reached:.6g} s", last_state)


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------
@dataclass
class TransientResult:
    """Time series and summary of a time-resolved fill or vent (SI units).

    Arrays (one value per output time): ``t`` [s], ``P`` [Pa], ``T_gas`` [K],
    ``T_wall_inner``, ``T_wall_outer`` [K] (wall surfaces; NaN when adiabatic),
    ``mass`` [kg], ``mdot_in``, ``mdot_out`` [kg/s], ``Q_wall`` [W] (heat from
    the wall into the gas), ``phase`` (str), ``vapour_fraction`` [-],
    ``bank`` (index of the bank in use, -1 without banks).
    """

    kind: str
    t: np.ndarray
    P: np.ndarray
    T_gas: np.ndarray
    T_wall_inner: np.ndarray
    T_wall_outer: np.ndarray
    mass: np.ndarray
    mdot_in: np.ndarray
    mdot_out: np.ndarray
    Q_wall: np.ndarray
    phase: np.ndarray
    vapour_fraction: np.ndarray
    bank: np.ndarray
    stop_reason: str = ""
    complete: bool = True
    mass_closure: float = float("nan")
    energy_closure: float = float("nan")
    state_residual: float = 0.0
    closure_tolerance: float = float("nan")
    mass_in: float = 0.0
    mass_out: float = 0.0
    heat_from_ambient: float = 0.0
    flags: list = field(default_factory=list)
    description: list = field(default_factory=list)
    n_rhs: int = 0
    status: int = CONVERGED   # worst solver status of the states used (eosfill.errors codes)
    solid: np.ndarray = None  # per row: True where the content may hold a solid (eosfill.equilibrium.solid)
    # the solution at every step of the integrator (its own points, denser than
    # the output grid where the state changes fast): t, P, T_gas, T_wall_inner, T_wall_outer
    dense: dict = field(default_factory=dict)
    # {"max_T_gas": (value, t), ...}: extrema located on the integrator's dense output
    extrema: dict = field(default_factory=dict)

    # peaks
    def peak(self, name, which="max"):
        """(value, time) of the largest (or smallest) value of a series, located on
        the integrator's dense output (not the output grid) when the run kept it."""
        located = self.extrema.get(f"{which}_{name}")
        if located is not None:
            return located
        arr = np.asarray(getattr(self, name), dtype=float)
        if arr.size == 0 or np.all(np.isnan(arr)):
            return float("nan"), float("nan")
        i = int(np.nanargmax(arr) if which == "max" else np.nanargmin(arr))
        return float(arr[i]), float(self.t[i])

    @property
    def peaks(self):
        out = {}
        for name in ("P", "T_gas", "T_wall_inner", "T_wall_outer"):
            out[f"max_{name}"] = self.peak(name, "max")
            out[f"min_{name}"] = self.peak(name, "min")
        return out

    @property
    def liquid_appeared(self):
        return bool(np.any(np.asarray(self.vapour_fraction) < 1.0 - 1e-12))

    def to_dict(self):
        d = {k: (v.tolist() if isinstance(v, np.ndarray) else v) for k, v in self.__dict__.items()}
        d["peaks"] = self.peaks
        d["units"] = "SI: s, Pa, K, kg, kg/s, W"
        d["caution"] = CAUTION
        return d

    def to_dataframe(self):
        """The time series as a pandas DataFrame (needs pandas)."""
        import pandas as pd

        cols = ("t", "P", "T_gas", "T_wall_inner", "T_wall_outer", "mass", "mdot_in", "mdot_out",
                "Q_wall", "phase", "vapour_fraction", "bank", "solid")
        return pd.DataFrame({c: getattr(self, c) for c in cols})
