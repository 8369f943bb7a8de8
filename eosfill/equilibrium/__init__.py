"""Phase equilibrium on the model layer: Wilson K, Rachford-Rice, pure-fluid
saturation, tangent-plane stability, the TP flash, bubble and dew points,
phase envelopes (see :mod:`eosfill.equilibrium.solvers`); solid boundaries and the
solid-formation screening (:mod:`eosfill.equilibrium.solid`).
"""
from eosfill.equilibrium.solvers import (  # noqa: F401
    bubble_point,
    dew_point,
    flash_TP,
    lnphi_root,
    phase_envelope,
    rachford_rice,
    saturation_pressure,
    saturation_temperature,
    stability_test,
    wilson_lnK,
)
from eosfill.equilibrium import solid  # noqa: F401,E402  (registers State.solid_risk)
