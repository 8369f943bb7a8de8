"""eosfill - fills and vents of rigid pressure vessels with real gases and
mixtures, from published cubic equations of state.

Public core (names kept stable)::

    gas = eosfill.Fluid({"methane": 0.9, "ethane": 0.06, "nitrogen": 0.04}, model="PR")
    st = gas.state(T=300.0, P=20e6)     # any pair of T, P, v, h, u, s

Results are estimates from an equation of state; local codes, the vessel's
approval documents and licensed practice govern.
"""
from __future__ import annotations

__version__ = "0.1.0"

from .errors import (  # noqa: F401  (light: no numpy)
    ConvergenceError,
    EosfillError,
    InputError,
    LimitWarning,
    RangeWarning,
)

_LAZY = {
    "Fluid": ("fluid", "Fluid"),
    "State": ("fluid", "State"),
    "fluid_names": ("components", "fluid_names"),
    "get_component": ("components", "get_component"),
    "R": ("constants", "R"),
}


_SUBMODULES = {"components", "constants", "cubic", "equilibrium", "fluid", "idealgas", "states",
               "vessel", "vent", "cascade", "transient", "scalar", "flow", "heat", "scenario", "report", "report_plots", "states_pure", "states_mixture", "cli", "units", "trace",
               "jobs"}


def __getattr__(name):
    # keep `import eosfill` fast: numpy/scipy load on first use
    if name in _LAZY:
        import importlib

        mod, attr = _LAZY[name]
        value = getattr(importlib.import_module(f".{mod}", __name__), attr)
        globals()[name] = value
        return value
    if name in _SUBMODULES:
        import importlib

        return importlib.import_module(f".{name}", __name__)
    raise AttributeError(f"module 'eosfill' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_LAZY))
