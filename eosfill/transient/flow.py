"""Flow through a restriction: orifice or nozzle, control valve, prescribed flow.

What limits the flow into or out of a vessel, as a mass flow [kg/s] from the
upstream state and the downstream pressure: the table of restrictions and their
models is in :mod:`eosfill.transient.restrictions`.

The pieces (this module is their map and re-exports their names):

==========================================  ==========================================
module                                      holds
==========================================  ==========================================
:mod:`~eosfill.transient.gas`               :class:`TVKernel`, :func:`gas_state_TP`
:mod:`~eosfill.transient.nozzle`            :class:`IsentropicNozzle` (F1-F3), the
                                            ideal-gas closed forms (F4),
                                            :func:`isentropic_mass_flux`
:mod:`~eosfill.transient.isentropes`        :class:`EquilibriumIsentropes`,
                                            :class:`Throat` (HEM)
:mod:`~eosfill.transient.valves`            IEC 60534-2-1 equations (F5-F9)
:mod:`~eosfill.transient.restrictions`      :class:`Orifice`, :class:`Valve`,
                                            :class:`MassFlow`, :class:`PressureRamp`
==========================================  ==========================================
"""
from __future__ import annotations

from eosfill.transient.gas import TVKernel, _positive, gas_state_TP  # noqa: F401
from eosfill.transient.isentropes import (  # noqa: F401
    EquilibriumIsentropes,
    Throat,
    _hermite,
    _IsentropeLevel,
)
from eosfill.transient.nozzle import (  # noqa: F401
    IsentropicNozzle,
    ideal_gas_critical_ratio,
    ideal_gas_mass_flux,
    isentropic_mass_flux,
)
from eosfill.transient.restrictions import MassFlow, Orifice, PressureRamp, Valve  # noqa: F401
from eosfill.transient.valves import (  # noqa: F401
    KV_PER_CV,
    N2_KV,
    N5_KV,
    N6_KV,
    iec_gas_mass_flow,
    iec_xTP,
    piping_geometry_factor,
)
