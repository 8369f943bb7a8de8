"""Time-resolved fills and vents: flow restrictions (:mod:`~eosfill.transient.flow`),
wall heat transfer (:mod:`~eosfill.transient.heat`) and the ODE model with
events (:mod:`~eosfill.transient.model`, whose public names are re-exported here).
"""
from eosfill.transient.model import (  # noqa: F401
    CAUTION,
    Bank,
    IntegrationError,
    Reservoir,
    TransientResult,
    simulate,
)
