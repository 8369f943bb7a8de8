"""Vapour-liquid equilibrium from the cubic: a map of the pieces.

* :mod:`eosfill.equilibrium.kvalues` — Wilson K-values (E1), Rachford-Rice
  (E2), ln φ with a chosen root, the status codes CONVERGED/MAXITER/NO_ROOT;
* :mod:`eosfill.equilibrium.saturation` — pure-fluid saturation P(T), T(P);
* :mod:`eosfill.equilibrium.stability` — Michelsen's tangent-plane stability
  test (E3);
* :mod:`eosfill.equilibrium.flash` — the two-phase TP flash (successive
  substitution with DEM, Newton on ln K, Gibbs minimisation, warm start);
* :mod:`eosfill.equilibrium.boundaries` — bubble and dew points, the phase
  envelope.

The names are re-exported here so that ``eosfill.equilibrium.solvers.X``
keeps working for every caller.
"""
from __future__ import annotations

from eosfill.equilibrium.kvalues import (
    CONVERGED,
    MAXITER,
    NO_ROOT,
    _rachford_rice_status,
    lnphi_root,
    rachford_rice,
    wilson_lnK,
)
from eosfill.equilibrium.saturation import (
    _pure_lnphi,
    saturation_pressure,
    saturation_temperature,
)
from eosfill.equilibrium.stability import stability_test
from eosfill.equilibrium.flash import (
    _flash_gibbs_min,
    _flash_residual,
    _phases_from_K,
    flash_TP,
)
from eosfill.equilibrium.boundaries import (
    _boundary_by_flash,
    _on_boundary,
    _saturation_point,
    _saturation_point_from,
    bubble_point,
    dew_point,
    phase_envelope,
)

__all__ = [
    "CONVERGED",
    "MAXITER",
    "NO_ROOT",
    "_rachford_rice_status",
    "lnphi_root",
    "rachford_rice",
    "wilson_lnK",
    "_pure_lnphi",
    "saturation_pressure",
    "saturation_temperature",
    "_flash_gibbs_min",
    "_flash_residual",
    "_phases_from_K",
    "flash_TP",
    "_boundary_by_flash",
    "_on_boundary",
    "_saturation_point",
    "_saturation_point_from",
    "bubble_point",
    "dew_point",
    "phase_envelope",
    "stability_test",
]
