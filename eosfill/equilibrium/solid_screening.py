"""Screening check for solid formation (dry ice in CO2 vents, freeze-out of CO2
or heavy components from cold natural gas): says, for a state, whether it lies
where a solid forms.  The boundaries it uses (triple points, melting and
sublimation curves) are in :mod:`eosfill.equilibrium.solid_curves` (map:
:mod:`eosfill.equilibrium.solid`).  Importing this module registers
``State.solid_risk``.

The screening check
-------------------
*Pure fluid* at (T, P): in the solid region when T < T_t and P is above the
sublimation pressure p_sub(T), or T >= T_t and P is above the melting
pressure p_m(T) (water: ice Ih lies *between* the sublimation and the
ice-Ih melting curve below 273.16 K, the high-pressure ices above the
melting curves of ice III, V, VI and VII).  Without a bundled sublimation
curve, T < T_t alone is flagged.

*Mixture*: each component i below its own triple-point temperature is
flagged as a freeze-out risk when its fugacity in the fluid, f_i = x_i φ_i P
(equal in the vapour and the liquid at equilibrium; y_i P for an ideal
gas), is above its sublimation pressure p_sub,i(T), the fugacity of the pure
solid at its sublimation pressure - or above the vapour pressure of the
component's own subcooled liquid from the same cubic, where that is lower
(below T_t the solid is the stable phase, so it cannot be less stable than
the model's liquid; PR's water gives 69.9 Pa at 250 K against ice's 76.0 Pa,
and without this cap a liquid-water phase in a cold gas would never be
flagged).  This is the usual first test for the
freezing of one pure solid component out of a fluid (e.g. Prausnitz,
Lichtenthaler & de Azevedo, *Molecular Thermodynamics of Fluid-Phase
Equilibria*, 3rd ed. 1999, ch. 10, solid-fluid equilibrium with a pure
solid - from memory); the Poynting correction of the solid's fugacity is
left out, which makes the check err on the side of flagging.  It is a
**screening check, not a solid-fluid equilibrium calculation**: it says that
a solid may form, not how much, and it does not model solid solutions.
Components without a sublimation curve are flagged on T < T_t alone.  Solid
formation of a mixture *above* all its components' triple points (freezing
at very high pressure) is not screened.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from eosfill.errors import InputError
from eosfill.equilibrium.solid_curves import (
    MELTING,
    SUBLIMATION,
    _H2O_Tt,
    _WATER_MELTING_EQ,
    _name,
    _water_high_pressure_ice_melting,
    load_triple_points,
    water_melting_pressure_ice_Ih,
)


# --------------------------------------------------------------------------
# the screening check
# --------------------------------------------------------------------------
class SolidRisk:
    """Where a state (or each row of a batch) may hold a solid.

    ``flag`` is computed at once (array comparisons); the text is built on
    first access, for the flagged rows only, so large batches stay fast.

    Attributes
    ----------
    flag : bool or ndarray of bool
        True where a solid may form (the state's shape).
    reasons : list of (row index tuple, str)
        One entry per flagged row and component: the fluid, the temperature,
        the boundary passed and its source.
    label : str or ndarray of str
        A short phase label per row: "solid region (...)" where flagged, "" elsewhere.
    """

    def __init__(self, flag, text):
        self.flag = flag
        self._text = text  # () -> (reasons, label)
        self._built = None

    def _build(self):
        if self._built is None:
            self._built = self._text()
        return self._built

    @property
    def reasons(self) -> list:
        return self._build()[0]

    @property
    def label(self):
        return self._build()[1]

    @property
    def any(self) -> bool:
        return bool(np.any(self.flag))

    def __bool__(self):
        return self.any

    @property
    def messages(self) -> list:
        """The reasons as text (a batch's rows are named by their index)."""
        scalar = np.ndim(self.flag) == 0
        return [m if scalar else f"row {idx[0] if len(idx) == 1 else idx}: {m}" for idx, m in self.reasons]

    def __repr__(self):
        return f"SolidRisk(any={self.any}, {len(self.reasons)} reason(s))"


def _C(T):
    return f"{T:.6g} K ({T - 273.15:.2f} °C)"


def _pure_solid(name, T, P):
    """Pure-fluid test on (T, P) arrays of one shape: (flag, code, boundary pressure, extrapolated).

    code: 0 none, 1 above the sublimation curve, 2 below T_t (no sublimation curve bundled),
    3 above the melting curve, 4 water between its sublimation and ice-Ih melting curves."""
    tp = load_triple_points().get(name)
    flag = np.zeros(T.shape, dtype=bool)
    code = np.zeros(T.shape, dtype=np.int8)
    pb = np.full(T.shape, np.nan)
    extra = np.zeros(T.shape, dtype=bool)
    if tp is None or tp.T is None:
        return flag, code, pb, extra
    below = T < tp.T
    sub = SUBLIMATION.get(name)
    if sub is not None:
        ps = sub(np.where(below, T, tp.T), warn=False)
        hit = below & (P > ps)
        if name == "water":
            # ice Ih only up to its melting pressure (Eq. 1); liquid above it (251.165-273.16 K)
            window = below & (T >= 251.165)
            pIh = water_melting_pressure_ice_Ih(np.where(window, T, _H2O_Tt))
            hit = hit & ~(window & (P >= pIh))
            code = np.where(hit, 4, code)
        else:
            code = np.where(hit, 1, code)
        flag |= hit
        pb = np.where(hit, ps, pb)
        extra |= hit & (T < sub.T_min)
    else:
        flag |= below
        code = np.where(below, 2, code)
    if name == "water":
        pm = _water_high_pressure_ice_melting(T)
        hit = np.isfinite(pm) & (P > pm)
    elif name in MELTING:
        mel = MELTING[name]
        ok = ~below & (T <= mel.T_max)
        pm = np.where(ok, mel(np.where(ok, T, tp.T), warn=False), np.inf)
        hit = ok & (P > pm)
    else:
        hit = np.zeros(T.shape, dtype=bool)
        pm = pb
    flag |= hit
    code = np.where(hit, 3, code)
    pb = np.where(hit, pm, pb)
    return flag, code, pb, extra


def _pure_reason(name, T, P, code, pb, extra):
    tp = load_triple_points()[name]
    at = f"{name} at {_C(T)}, {P:.6g} Pa"
    if code == 2:
        return (f"{at}: below its triple-point temperature {tp.T:.6g} K ({tp.source}); a solid may form "
                "(no sublimation curve bundled)", "below the triple point")
    if code == 3:
        eq = _WATER_MELTING_EQ if name == "water" else MELTING[name].equation
        return (f"{at}: above the melting pressure {pb:.6g} Pa ({eq}): solid region",
                "above the melting curve")
    eq = SUBLIMATION[name].equation
    ext = " (curve extrapolated below its range)" if extra else ""
    what = "between the sublimation and the ice-Ih melting curves: ice" if code == 4 else "solid region"
    return (f"{at}: below its triple-point temperature {tp.T:.6g} K and above the sublimation pressure "
            f"{pb:.6g} Pa ({eq}){ext}: {what}", "below the triple point, above the sublimation curve")


def solid_risk(names, T, P, fugacity=None, liquid_vapour_pressure=None) -> SolidRisk:
    """Screen states for solid formation (see the module's notes: a screening check,
    not a solid-fluid equilibrium calculation).

    Parameters
    ----------
    names : str or sequence of str
        The fluid (pure) or the components (mixture), names as in ``fluids.csv``.
    T, P : array_like
        Temperature [K] and pressure [Pa]; broadcast together.
    fugacity : array_like, shape T.shape + (nc,), optional
        Mixtures: each component's fugacity f_i = x_i φ_i P in the fluid [Pa]
        (y_i P for an ideal gas); 0 for absent components.  Needed when there
        is more than one component.
    liquid_vapour_pressure : array_like, shape T.shape + (nc,), optional
        Mixtures: the vapour pressure of each component's own (subcooled)
        liquid *from the same equation of state* at T [Pa] (NaN where unknown).
        The solid's fugacity is then taken as min(p_sub, this): the solid is
        the stable phase below T_t, so it cannot be less stable than the
        model's own liquid.  Without it a cubic whose extrapolated liquid
        vapour pressure falls below the true sublimation pressure (water in
        PR: 69.9 Pa at 250 K against ice's 76.0 Pa) would never flag ice
        forming from its own condensed phase.

    Returns
    -------
    SolidRisk

    Examples
    --------
    >>> bool(solid_risk("carbon dioxide", 188.15, 1.2e5))   # dry ice at -85 °C and 1.2 bar
    True
    >>> bool(solid_risk("carbon dioxide", 230.0, 1.0e6))    # liquid above the triple point
    False
    """
    if isinstance(names, str):
        names = [names]
    names = [_name(n) for n in names]
    T, P = np.broadcast_arrays(np.asarray(T, dtype=float), np.asarray(P, dtype=float))
    shape = T.shape
    flag = np.zeros(shape, dtype=bool)
    hits = []  # (component, hit mask, text builder for one row)
    if len(names) == 1:
        name = names[0]
        f_, code, pb, extra = _pure_solid(name, T, P)
        flag |= f_

        def text(idx, name=name, code=code, pb=pb, extra=extra):
            return _pure_reason(name, float(T[idx]), float(P[idx]), int(code[idx]), float(pb[idx]), bool(extra[idx]))

        hits.append((f_, text))
    else:
        if fugacity is None:
            raise InputError("fugacity", None, "the components' fugacities [Pa] for a mixture")
        f = np.broadcast_to(np.asarray(fugacity, dtype=float), shape + (len(names),))
        p_liq = (np.full(shape + (len(names),), np.nan) if liquid_vapour_pressure is None else
                 np.broadcast_to(np.asarray(liquid_vapour_pressure, dtype=float), shape + (len(names),)))
        tps = load_triple_points()
        for i, name in enumerate(names):
            tp = tps.get(name)
            if tp is None or tp.T is None:
                continue
            fi = f[..., i]
            below = (T < tp.T) & (fi > 0.0)
            if not np.any(below):
                continue
            sub = SUBLIMATION.get(name)
            ps = sub(np.where(below, T, tp.T), warn=False) if sub is not None else np.zeros(shape)
            pl = p_liq[..., i]
            ps = np.where(np.isfinite(pl) & (pl < ps), pl, ps)  # never above the model's own liquid
            hit = below & (fi > ps)
            flag |= hit

            def text(idx, name=name, tp=tp, sub=sub, fi=fi, ps=ps):
                return _freeze_reason(name, tp, sub, float(T[idx]), float(P[idx]), float(fi[idx]), float(ps[idx]))

            hits.append((hit, text))

    def build():
        label = np.full(shape, "", dtype=object)
        reasons = []
        for hit, text in hits:
            for idx in (zip(*np.nonzero(hit)) if shape else ([()] if bool(hit) else [])):
                long, short = text(idx)
                reasons.append((idx, long))
                label[idx] = (label[idx] + ", " if label[idx] else "") + short
        label = np.array([f"solid region ({s})" if s else "" for s in label.ravel()], dtype=object).reshape(shape)
        return reasons, (str(label[()]) if not shape else label)

    return SolidRisk(bool(flag) if not shape else flag, build)


def _freeze_reason(name, tp, sub, T, P, f, p_sub):
    """(message, short label) of a mixture component's freeze-out risk at one state."""
    if sub is not None:
        ext = " (curve extrapolated below its range)" if T < sub.T_min else ""
        return (f"{name} freeze-out risk at {_C(T)}, {P:.6g} Pa: below its triple-point temperature "
                f"{tp.T:.6g} K, its fugacity {f:.4g} Pa is above the solid's fugacity {p_sub:.4g} Pa "
                f"(the lower of the sublimation pressure, {sub.equation}, and the model's own liquid vapour "
                f"pressure){ext} "
                "- screening check, not a solid-fluid equilibrium calculation", f"{name} may freeze out")
    return (f"{name} freeze-out risk at {_C(T)}: below its triple-point temperature {tp.T:.6g} K "
            f"({tp.source}; no sublimation curve bundled) - screening check", f"{name} may freeze out")


def _mixture_fugacity(fluid, T, P, z):
    """f_i = y_i φ_i P of the equilibrium fluid at (T, P, z) (the vapour where two phases
    exist, else the single phase), with the Péneloux shift's ln φ term; arrays (n,), (n, nc)."""
    from eosfill.constants import R
    from eosfill.equilibrium.solvers import flash_TP, lnphi_root

    p = fluid.params
    fl = flash_TP(T, P, z, p, raise_on_fail=False)
    two = np.asarray(fl["two_phase"], dtype=bool)
    comp = np.where(two[:, None], fl["y"], z)
    which = np.where(two, 2, 0)  # vapour root where two-phase, the stable root otherwise
    lnphi, _ = lnphi_root(T, P, comp, p, which=which)
    lnphi = lnphi - np.asarray(fluid.volume_shift) * (P / (R * T))[:, None]
    return comp * np.exp(lnphi) * P[:, None]


def path_solid_risk(fluid, T, P, z=None) -> SolidRisk:
    """:func:`solid_risk` of a path of (T, P) points of one fluid (a Mixture): rows (n,),
    compositions ``z`` (n, nc) or the fluid's own.  Mixtures: the fugacities come from a
    TP flash of only the rows below some component's triple-point temperature."""
    T = np.atleast_1d(np.asarray(T, dtype=float))
    P = np.atleast_1d(np.asarray(P, dtype=float))
    names = list(fluid.names)
    if len(names) == 1:
        return solid_risk(names, T, P)
    z = np.broadcast_to(np.asarray(fluid.mole_fractions if z is None else z, dtype=float), T.shape + (len(names),))
    tps = load_triple_points()
    Tt = np.array([tps[n].T if n in tps and tps[n].T is not None else -math.inf for n in names])
    cold = (T[:, None] < Tt[None, :]) & (z > 0.0)
    rows = np.flatnonzero(np.any(cold, axis=1))
    f = np.zeros(T.shape + (len(names),))
    p_liq = np.full(T.shape + (len(names),), np.nan)
    if rows.size:
        f[rows] = _mixture_fugacity(fluid, T[rows], P[rows], np.ascontiguousarray(z[rows]))
        for i, name in enumerate(names):
            if np.any(cold[:, i]) and name in SUBLIMATION:
                p_liq[cold[:, i], i] = _model_liquid_vapour_pressure(name, fluid.model.name, T[cold[:, i]])
    return solid_risk(names, T, P, fugacity=f, liquid_vapour_pressure=p_liq)


@lru_cache(maxsize=None)
def _pure_parameters(name, model_name):
    from eosfill.model.mixture import Mixture

    return Mixture(name, model=model_name).params


def _model_liquid_vapour_pressure(name, model_name, T):
    """Vapour pressure [Pa] of the pure component's (subcooled) liquid from the same cubic at T;
    NaN where the saturation solver does not converge (the threshold is then p_sub alone)."""
    from eosfill.equilibrium.solvers import saturation_pressure

    sat = saturation_pressure(np.asarray(T, dtype=float), _pure_parameters(name, model_name), raise_on_fail=False)
    return np.where(np.asarray(sat["status"]) == 0, sat["P"], np.nan)


def state_solid_risk(st) -> SolidRisk:
    """:func:`solid_risk` of an equilibrium State (pure: its T, P; mixture: its fugacities)."""
    fluid = st.fluid
    if fluid.nc == 1:
        return solid_risk(list(fluid.names), st._T, st._P)
    T = np.asarray(st._T, dtype=float)
    x = np.broadcast_to(np.asarray(st.x, dtype=float), T.shape + (fluid.nc,))
    risk = path_solid_risk(fluid, T.reshape(-1), np.broadcast_to(st._P, T.shape).reshape(-1),
                           x.reshape(-1, fluid.nc))
    if T.ndim == 0:
        return SolidRisk(bool(risk.flag[0]), lambda: ([((), m) for _, m in risk.reasons], str(risk.label[0])))
    return SolidRisk(risk.flag.reshape(T.shape),
                     lambda: ([(np.unravel_index(idx[0], T.shape), m) for idx, m in risk.reasons],
                              risk.label.reshape(T.shape)))


def _register():
    from eosfill.model.mixture import State

    State._solid_screen = staticmethod(state_solid_risk)


_register()
