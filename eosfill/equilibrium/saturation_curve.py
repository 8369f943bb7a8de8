"""A pure fluid's saturation curve tabulated once, to classify (T, v) quickly."""
from __future__ import annotations

import math

import numpy as np

from eosfill.equilibrium.solvers import saturation_pressure
from eosfill.errors import InputError


class SaturationCurve:
    """A pure fluid's saturation curve tabulated once (vectorised equal-fugacity
    solve of :func:`eosfill.equilibrium.saturation_pressure`) on a grid in
    τ = √(1 - T/Tc), used to classify (T, v) quickly: clearly outside the dome
    (by a 2 % margin on ln v) is single phase; otherwise the caller solves the
    saturation exactly at T."""

    def __init__(self, fluid, n=240):
        if not fluid.is_pure:
            raise InputError("fluid", fluid.names, "a pure fluid")
        Tc = float(fluid.Tc[0])
        tau = np.linspace(1e-3, np.sqrt(1.0 - 0.4), n)
        T = Tc * (1.0 - tau**2)
        sat = saturation_pressure(T, fluid.params, raise_on_fail=False)
        ok = sat["status"] == 0
        c = fluid.volume_shift[0]
        self.Tc = Tc
        self.Tmin = float(T[ok].min())
        self.tau = tau[ok]
        self.lnvL = np.log(sat["v_L"][ok] - c)
        self.lnvV = np.log(sat["v_V"][ok] - c)

    def classify(self, T, v, margin=0.02):
        """'gas-side', 'liquid-side' (clearly single phase) or 'near' the dome."""
        if T >= self.Tc or T < self.Tmin:
            return "outside"
        tau = math.sqrt(1.0 - T / self.Tc)
        lv = math.log(v)
        lvL = float(np.interp(tau, self.tau, self.lnvL))
        lvV = float(np.interp(tau, self.tau, self.lnvV))
        if lv > lvV + margin:
            return "gas-side"
        if lv < lvL - margin:
            return "liquid-side"
        return "near"


_SAT_CACHE: dict = {}


def saturation_curve(fluid) -> SaturationCurve:
    """The cached :class:`SaturationCurve` of a pure fluid (one per Fluid object)."""
    key = (id(fluid.params), float(fluid.volume_shift[0]))
    hit = _SAT_CACHE.get(key)
    if hit is None or hit[0] is not fluid.params:
        if len(_SAT_CACHE) > 64:
            _SAT_CACHE.clear()
        hit = (fluid.params, SaturationCurve(fluid))  # params held: its id is not reused
        _SAT_CACHE[key] = hit
    return hit[1]
