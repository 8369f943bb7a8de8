"""κ(ω) correlations of the Soave-type α function (label C3 of :mod:`eosfill.model.cubic`).

Held apart so that :mod:`eosfill.model.cubic` (numpy forms) and
:mod:`eosfill.model.alpha` (compiled α parts) both use them with no import
cycle.  numpy only.
"""
from __future__ import annotations

import numpy as np


# --------------------------------------------------------------------------
def kappa_pr76(omega):
    """κ of Peng & Robinson (1976), Eq. 18: 0.37464 + 1.54226 ω - 0.26992 ω²."""
    omega = np.asarray(omega, dtype=float)
    return 0.37464 + 1.54226 * omega - 0.26992 * omega**2


def kappa_pr78(omega):
    """κ of Robinson & Peng (1978), GPA RR-28.

    κ = 0.37464 + 1.54226 ω - 0.26992 ω²                         for ω ≤ 0.491
    κ = 0.379642 + 1.48503 ω - 0.164423 ω² + 0.016666 ω³         for ω > 0.491
    """
    omega = np.asarray(omega, dtype=float)
    high = 0.379642 + omega * (1.48503 + omega * (-0.164423 + omega * 0.016666))
    return np.where(omega > 0.491, high, kappa_pr76(omega))


def kappa_srk(omega):
    """κ of Soave (1972), Eq. 15: 0.480 + 1.574 ω - 0.176 ω²."""
    omega = np.asarray(omega, dtype=float)
    return 0.480 + 1.574 * omega - 0.176 * omega**2


