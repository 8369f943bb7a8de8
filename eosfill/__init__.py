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

from eosfill.errors import (  # noqa: F401  (light: no numpy)
    ConvergenceError,
    EosfillError,
    InputError,
    LimitWarning,
    RangeWarning,
)

_LAZY = {
    "Fluid": ("eosfill.states.fluid", "Fluid"),
    "State": ("eosfill.model.mixture", "State"),
    "fluid_names": ("eosfill.model.components", "fluid_names"),
    "get_component": ("eosfill.model.components", "get_component"),
    "R": ("eosfill.constants", "R"),
}

# the layers, from the ground up (each imports only those before it)
_SUBMODULES = ("constants", "errors", "model", "equilibrium", "states", "vessel", "transient", "study", "io")


def __getattr__(name):
    # keep `import eosfill` fast: numpy/scipy load on first use
    if name in _LAZY:
        import importlib

        mod, attr = _LAZY[name]
        value = getattr(importlib.import_module(mod), attr)
        globals()[name] = value
        return value
    if name in _SUBMODULES:
        import importlib

        return importlib.import_module(f".{name}", __name__)
    raise AttributeError(f"module 'eosfill' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_LAZY))
