"""Adapters that make each library do one benchmark case.

Every adapter is a class with ``name`` and ``version`` and one method per
case it can do, ``case_<id>(work)``, returning a callable that does the work
once and returns a dict of computed values (floats or arrays).  A method that
is missing, or that raises :class:`Unsupported`, shows as "—" in the table
with the reason in a footnote.  Library-specific set-up (constants, k_ij,
ideal-gas heat capacities) happens in the adapter's constructor and in the
case method, outside the timed callable.

The constants given to every library are eosfill's own (``Fluid.Tc``, ``.Pc``,
``.omega``, ``.kij``, and the ideal-gas Cp° polynomial ``.cp_coeffs``), so
that all of them solve the same equations; the runner checks that they did.
"""
from __future__ import annotations


class Unsupported(Exception):
    """This library cannot do this case (the message says why)."""


def load(names):
    """Instantiate the adapters named in ``names``; return (adapters, {name: reason})
    for those whose library failed to import."""
    import importlib

    modules = {"eosfill": "eosfill_adapter", "thermo": "thermo_adapter", "CoolProp": "coolprop_adapter",
               "teqp": "teqp_adapter", "FeOs": "feos_adapter", "NeqSim": "neqsim_adapter"}
    adapters, missing = [], {}
    for name in names:
        try:
            mod = importlib.import_module(f".{modules[name]}", __name__)
            adapters.append(mod.Adapter())
        except Exception as exc:  # noqa: BLE001 - a peer that cannot load is reported, not fatal
            missing[name] = f"not available: {type(exc).__name__}: {str(exc).splitlines()[0] if str(exc) else ''}"
    return adapters, missing


PEER_NAMES = ("thermo", "CoolProp", "teqp", "FeOs", "NeqSim")
