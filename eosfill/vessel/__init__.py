"""Vessel balances: end states of fills (stop criteria, settled state, short
fill, liquefied-gas fills), vents and cascade fills.

``eosfill.vessel.fill``, ``.vent``, ``.cascade_fill`` and the input and result
types are re-exported here from :mod:`~eosfill.vessel.balances`,
:mod:`~eosfill.vessel.vent` and :mod:`~eosfill.vessel.cascade`.
"""
from eosfill.vessel.balances import (  # noqa: F401
    CAUTION,
    FILL_STOPS,
    T_NOMINAL,
    VENT_STOPS,
    EndState,
    Result,
    Settled,
    Stream,
    Vessel,
    common_fluid,
    fill,
    liquid_full_temperature,
)
from eosfill.vessel.cascade import Bank, cascade_fill  # noqa: F401
from eosfill.vessel.vent import vent  # noqa: F401
