"""Liquefied gases: the temperature at which the vessel runs liquid-full, the liquid
density, and the filling-density figures against the P200 defaults.

Neighbours in :mod:`eosfill.vessel`: inputs and helpers in ``inputs.py``, the
content's end state and the closures in ``closure.py``, result types in
``results.py``, the fill in ``fill.py``, liquefied-gas figures in ``liquefied.py``;
the map is :mod:`~eosfill.vessel.balances`.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import ConvergenceError, InputError
from eosfill.vessel.inputs import _f, _note_status, _state
from eosfill.vessel.results import EndState


# Defaults of the UN Model Regulations, packing instruction P200 (5)(b), for
# low-pressure liquefied gases (critical temperature above 65 °C): filling
# ratio at most 0.95 x the liquid density at 50 °C, and the vessel not
# liquid-full at any temperature up to 60 °C.  From memory (edition not
# verified; the same two rules are worded for P206 at
# https://portofrotterdam.dgcampus.com/instructions/P206/?provision=PP89).
# Defaults the user must confirm against the rules that apply to them.
P200_LIQUID_DENSITY_TEMPERATURE = 323.15  # K, 50 °C
P200_FACTOR = 0.95
P200_LIQUID_FULL_TEMPERATURE = 333.15  # K, 60 °C
P200_LOW_PRESSURE_TC = 338.15  # K, 65 °C: above it a "low pressure liquefied gas"


# --------------------------------------------------------------------------
# liquefied gases
# --------------------------------------------------------------------------
def liquid_full_temperature(fluid, z, v, T_start, T_max=None):
    """Warming at constant mass (v fixed): where the two-phase content ends.

    Returns ``(T, kind)``: kind ``"liquid-full"`` (the liquid fills the
    vessel: hydraulically full) or ``"dry"`` (the liquid is gone), or
    ``(None, "single-phase")`` if the content is not two-phase at T_start,
    ``(None, "two-phase")`` if still two-phase at T_max.
    """
    T_max = T_max or 1.2 * float(np.max(fluid.Tc))

    def two(T):
        return str(_state(fluid, z, T=T, v=v).phase) == "two-phase"

    if not two(T_start):
        return None, "single-phase"
    grid = np.linspace(T_start, max(T_max, T_start + 1.0), 25)
    prev = T_start
    for T in grid[1:]:
        if not two(T):
            lo, hi = prev, T
            for _ in range(40):  # bisection to ~1e-9 of the bracket
                mid = 0.5 * (lo + hi)
                if two(mid):
                    lo = mid
                else:
                    hi = mid
                if hi - lo < 1e-4:
                    break
            beta = _f(_state(fluid, z, T=lo, v=v).vapor_fraction)
            return 0.5 * (lo + hi), ("liquid-full" if beta < 0.5 else "dry")
        prev = T
    return None, "two-phase"


def _liquid_density_at(fluid, z, T):
    """Saturated (bubble-point) liquid density at T [kg/m³], or None above the critical point."""
    from eosfill.equilibrium import solvers as equilibrium

    f = fluid.with_composition(z)
    try:
        with np.errstate(invalid="ignore", divide="ignore"):
            if f.is_pure or np.count_nonzero(z) == 1:
                i = int(np.flatnonzero(z)[0])
                if T >= fluid.Tc[i]:
                    return None
                sat = equilibrium.saturation_pressure(np.array([T]), _pure_params(fluid, i))
                _note_status(sat.get("status"))
                vL = float(np.asarray(sat["v_L"]).ravel()[0]) - float(fluid.volume_shift[i])
                return float(fluid.molar_masses[i]) / vL
            _, Pb, _ = equilibrium.bubble_point(np.asarray(z), f.params, T=T)
            st = f.single_phase(T, Pb, which="liquid")
            return _f(st.rho_mass)
    except (ConvergenceError, InputError):
        return None


def _pure_params(fluid, i):
    from eosfill.states.fluid import Fluid

    return Fluid(fluid.names[i], model=fluid.model.name).params


def _liquefied_figures(fluid, z, n, V, final: EndState, lim, flags, defaults=True):
    v = V / n
    out = dict(fill_density=final.mass / V, liquid_mass=final.liquid_mass, vapour_mass=final.vapour_mass,
               liquid_volume_fraction=final.liquid_volume_fraction, liquid_full_T=None, dry_T=None, defaults=[])
    T, kind = liquid_full_temperature(fluid, z, v, final.T)
    if kind == "liquid-full":
        out["liquid_full_T"] = T
    elif kind == "dry":
        out["dry_T"] = T
    elif kind == "single-phase":
        out["liquid_full_note"] = f"the content is single-phase ({final.phase}) at the end of the fill"
        if final.phase == "liquid":
            flags.append("the vessel is LIQUID-FULL at the end of the fill (hydraulically full)")
    else:
        out["liquid_full_note"] = "still two-phase at the highest temperature searched"
    if not defaults:
        return out
    Tc_mix = float(np.asarray(z) @ fluid.Tc)
    lines = out["defaults"]
    if Tc_mix <= P200_LOW_PRESSURE_TC:
        lines.append(f"default P200 rules for low-pressure liquefied gases not applied: critical temperature "
                     f"{Tc_mix - 273.15:.4g} °C is not above 65 °C (a high-pressure liquefied gas); give "
                     "limits.max_fill_density from the rules that apply to you")
        return out
    rhoL50 = _liquid_density_at(fluid, z, P200_LIQUID_DENSITY_TEMPERATURE)
    if rhoL50 is not None:
        lim_fd = P200_FACTOR * rhoL50
        out["default_max_fill_density"] = lim_fd
        lines.append(f"default limit (to confirm against your rules; UN Model Regulations P200, from memory): "
                     f"filling density <= 0.95 x liquid density at 50 °C = {lim_fd / 1e3:.5g} kg/L")
        if final.mass / V > lim_fd:
            flags.append(f"filling density {final.mass / V / 1e3:.5g} kg/L passes the default "
                         f"0.95 x liquid density at 50 °C = {lim_fd / 1e3:.5g} kg/L (P200 default, to confirm)")
    if out["liquid_full_T"] is not None:
        lines.append("default rule (to confirm): not liquid-full at any temperature up to 60 °C")
        if out["liquid_full_T"] <= P200_LIQUID_FULL_TEMPERATURE:
            flags.append(f"the vessel becomes liquid-full at {out['liquid_full_T'] - 273.15:.4g} °C, at or below "
                         "60 °C (P200 default, to confirm)")
    return out
