"""Time-resolved fills and vents of a rigid vessel: 0-D gas, lumped or layered wall.

Balances of the vessel's content (open system, rigid volume V; homogeneous
equilibrium inside):

    dN_i/dt = ṅ_in y_in,i − ṅ_out x_i                                   (T1)
    dU/dt   = ṅ_in h_in − ṅ_out h + Q_wall                               (T2)

with U = n u the content's internal energy; the state follows from
(u = U/n, v = V/n, x = N/n) by Newton on T at fixed v (warm-started from
the previous call; :meth:`eosfill.flow.TVKernel.T_from_uv`) and, where the
content may split into two phases, by the equilibrium solver
``fluid.state(u=, v=)``.  The wall (H1 or H2 of :mod:`eosfill.heat`)
exchanges Q_wall with the gas and Q_amb with the surroundings.  A finite
bank (cascade) is a second rigid vessel emptied adiabatically by the same
balances, ṅ_in leaving it.

Integrated with an implicit (stiff) method of :mod:`scipy.integrate` step by
step; stop events are located on the dense output.  Accumulators of the
mass and energy that crossed each boundary are integrated alongside, so
that the closure

    m(t) − m0 − m_in + m_out,
    E_gas(t) + E_wall(t) − E_gas,0 − E_wall,0 − H_in + H_out − Q_amb   (T3)

with E_gas recomputed from the reported (T, v) by the equation of state,
measures the whole run's consistency.

Where things are, in order: sources (``Reservoir``, ``Bank``); the result
(``TransientResult``); the model (``_Content``: the vessel's state from
(n, U); ``_Model``: the right-hand side, flows and wall); the integration
driver (``simulate``, ``_Run``: steps, events, dense output, closures);
(scenario files are mapped to :func:`simulate` by
:mod:`eosfill.io.transient_run`).  Restrictions are in
:mod:`eosfill.flow`, walls in :mod:`eosfill.heat`.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import json
import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from eosfill.transient import flow as _flow
from eosfill.constants import R
from eosfill.equilibrium.solid import path_solid_risk
from eosfill.errors import CONVERGED, STATUS_TEXT, ConvergenceError, EosfillError, InputError, LimitWarning, worst_status
from eosfill.transient.heat import ConstantCoefficient, LayeredWall, LumpedWall, isobaric_expansion, surface_exchange

CAUTION = ("Caution: estimates from an equation of state and simplified heat-transfer models; local "
           "codes, the vessel's approval documents and licensed practice govern.")


class IntegrationError(ConvergenceError):
    """The time integration stopped before its end.

    Attributes
    ----------
    t_reached : float
        Last time reached [s].
    last_state : dict
        T, P, n, ... at ``t_reached``.
    partial : TransientResult
        Everything computed up to ``t_reached``.
    """

    def __init__(self, message, t_reached, last_state, partial):
        self.t_reached = t_reached
        self.partial = partial
        super().__init__("transient integration", f"{message} at t = {t_reached:.6g} s", last_state)


# --------------------------------------------------------------------------
# sources
# --------------------------------------------------------------------------
@dataclass
class Reservoir:
    """An infinite supply at pressure ``pressure`` [Pa] and temperature ``temperature``:
    a number [K], a callable T(t), or a table ((t0, T0), (t1, T1), ...) interpolated
    linearly (precooling that changes with time).  ``composition``: mole fractions
    in the order of the fluid's names (None: the fluid's)."""

    pressure: float
    temperature: object
    composition: object = None

    def __post_init__(self):
        self.pressure = _flow._positive("supply pressure", self.pressure, "a pressure > 0 Pa")
        T = self.temperature
        if callable(T):
            self._T = T
            self.constant = False
        elif np.ndim(T) == 0:
            Tc = _flow._positive("supply temperature", T, "a temperature > 0 K")
            self._T = lambda t: Tc
            self.constant = True
        else:
            tab = np.asarray(T, dtype=float)
            if tab.ndim != 2 or tab.shape[1] != 2 or np.any(tab[:, 1] <= 0) or np.any(np.diff(tab[:, 0]) <= 0):
                raise InputError("supply temperature", T, "K, a callable T(t), or rows (t [s], T [K]) with "
                                 "increasing t and T > 0")
            self._T = lambda t: float(np.interp(t, tab[:, 0], tab[:, 1]))
            self.constant = False

    def T(self, t):
        return float(self._T(t))


@dataclass
class Bank:
    """A finite storage bank of a cascade: volume [m³], initial T [K] and P [Pa]."""

    volume: float
    temperature: float
    pressure: float
    composition: object = None
    name: str = ""

    def __post_init__(self):
        self.volume = _flow._positive("bank volume", self.volume, "a volume > 0 m3")
        self.temperature = _flow._positive("bank temperature", self.temperature, "a temperature > 0 K")
        self.pressure = _flow._positive("bank pressure", self.pressure, "a pressure > 0 Pa")


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------
@dataclass
class TransientResult:
    """Time series and summary of a time-resolved fill or vent (SI units).

    Arrays (one value per output time): ``t`` [s], ``P`` [Pa], ``T_gas`` [K],
    ``T_wall_inner``, ``T_wall_outer`` [K] (wall surfaces; NaN when adiabatic),
    ``mass`` [kg], ``mdot_in``, ``mdot_out`` [kg/s], ``Q_wall`` [W] (heat from
    the wall into the gas), ``phase`` (str), ``vapour_fraction`` [-],
    ``bank`` (index of the bank in use, -1 without banks).
    """

    kind: str
    t: np.ndarray
    P: np.ndarray
    T_gas: np.ndarray
    T_wall_inner: np.ndarray
    T_wall_outer: np.ndarray
    mass: np.ndarray
    mdot_in: np.ndarray
    mdot_out: np.ndarray
    Q_wall: np.ndarray
    phase: np.ndarray
    vapour_fraction: np.ndarray
    bank: np.ndarray
    stop_reason: str = ""
    complete: bool = True
    mass_closure: float = float("nan")
    energy_closure: float = float("nan")
    state_residual: float = 0.0
    closure_tolerance: float = float("nan")
    mass_in: float = 0.0
    mass_out: float = 0.0
    heat_from_ambient: float = 0.0
    flags: list = field(default_factory=list)
    description: list = field(default_factory=list)
    n_rhs: int = 0
    status: int = CONVERGED   # worst solver status of the states used (eosfill.errors codes)
    solid: np.ndarray = None  # per row: True where the content may hold a solid (eosfill.equilibrium.solid)

    # peaks
    def peak(self, name, which="max"):
        """(value, time) of the largest (or smallest) value of a series."""
        arr = np.asarray(getattr(self, name), dtype=float)
        if arr.size == 0 or np.all(np.isnan(arr)):
            return float("nan"), float("nan")
        i = int(np.nanargmax(arr) if which == "max" else np.nanargmin(arr))
        return float(arr[i]), float(self.t[i])

    @property
    def peaks(self):
        out = {}
        for name in ("P", "T_gas", "T_wall_inner", "T_wall_outer"):
            out[f"max_{name}"] = self.peak(name, "max")
            out[f"min_{name}"] = self.peak(name, "min")
        return out

    @property
    def liquid_appeared(self):
        return bool(np.any(np.asarray(self.vapour_fraction) < 1.0 - 1e-12))

    def summary(self):
        def C(T):
            return f"{T - 273.15:.2f} °C"

        lines = list(self.description)
        status = "complete" if self.complete else "INCOMPLETE (integration stopped early)"
        lines.append(f"time-resolved {self.kind}: {status}; stop: {self.stop_reason}")
        lines.append(f"duration {self.t[-1]:.6g} s; pressure {self.P[0] / 1e5:.6g} -> {self.P[-1] / 1e5:.6g} bar; "
                     f"mass {self.mass[0]:.6g} -> {self.mass[-1]:.6g} kg")
        for name, label in (("T_gas", "gas temperature"), ("T_wall_inner", "inner wall temperature"),
                            ("T_wall_outer", "outer wall temperature")):
            hi, thi = self.peak(name, "max")
            lo, tlo = self.peak(name, "min")
            if math.isfinite(hi):
                lines.append(f"{label}: max {C(hi)} at {thi:.4g} s, min {C(lo)} at {tlo:.4g} s, "
                             f"end {C(float(getattr(self, name)[-1]))}")
        Pmax, tP = self.peak("P")
        lines.append(f"max pressure {Pmax / 1e5:.6g} bar at {tP:.4g} s")
        lines.append(f"mass in {self.mass_in:.6g} kg, out {self.mass_out:.6g} kg; heat from ambient "
                     f"{self.heat_from_ambient:.6g} J")
        lines.append(f"closure (relative): mass {self.mass_closure:.2e}, energy {self.energy_closure:.2e}")
        if self.liquid_appeared:
            lines.append("a liquid phase appears (homogeneous equilibrium assumed)")
        if self.status != CONVERGED:
            lines.append(f"WARNING: built on a state whose solver reported: {STATUS_TEXT.get(self.status, self.status)}")
        for f in self.flags:
            lines.append(f"FLAG: {f}")
        lines.append(CAUTION)
        return "\n".join(lines)

    __str__ = summary

    def to_dict(self):
        d = {k: (v.tolist() if isinstance(v, np.ndarray) else v) for k, v in self.__dict__.items()}
        d["peaks"] = self.peaks
        d["units"] = "SI: s, Pa, K, kg, kg/s, W"
        d["caution"] = CAUTION
        return d

    def to_dataframe(self):
        """The time series as a pandas DataFrame (needs pandas)."""
        import pandas as pd

        cols = ("t", "P", "T_gas", "T_wall_inner", "T_wall_outer", "mass", "mdot_in", "mdot_out",
                "Q_wall", "phase", "vapour_fraction", "bank", "solid")
        return pd.DataFrame({c: getattr(self, c) for c in cols})

    def write(self, json_path=None, csv_path=None):
        """Write the result as JSON and/or the time series as CSV (SI)."""
        if json_path is not None:
            with open(json_path, "w") as fh:
                json.dump(self.to_dict(), fh, indent=1, default=float)
        if csv_path is not None:
            cols = ("t", "P", "T_gas", "T_wall_inner", "T_wall_outer", "mass", "mdot_in", "mdot_out",
                    "Q_wall", "vapour_fraction", "bank", "phase", "solid")
            with open(csv_path, "w") as fh:
                fh.write(",".join(f"{c}" for c in cols) + "\n")
                for i in range(self.t.size):
                    fh.write(",".join(repr(float(getattr(self, c)[i])) if c != "phase" else str(self.phase[i])
                                      for c in cols) + "\n")


# --------------------------------------------------------------------------
# the model
# --------------------------------------------------------------------------
class _Content:
    """A rigid volume of gas tracked by (N_i, U): its state with a warm-started UV solve."""

    def __init__(self, fluid, volume, x_fixed=None):
        self.fluid = fluid
        self.V = volume
        self.T_last = 300.0
        self.fixed = x_fixed is not None
        self._kernel = _flow.TVKernel(fluid, x_fixed) if self.fixed else None
        self._kx = None
        self._stable_cache = None
        self.T_range_warned = False

    def kernel(self, x):
        if self.fixed:
            return self._kernel
        if self._kx is None or not np.array_equal(self._kx.x, x):
            self._kx = _flow.TVKernel(self.fluid, x)
        return self._kx

    def state(self, N, U):
        N = np.maximum(N, 0.0)
        n = float(N.sum())
        if not n > 0.0:
            raise EosfillError("the vessel holds no gas (n = 0)")
        x = self._kernel.x if self.fixed else N / n
        k = self.kernel(x)
        v = self.V / n
        u = U / n
        v_eos = v + k.c_shift
        if v_eos <= k.b:
            raise EosfillError(f"molar volume {v:.6g} m3/mol at or below the co-volume (over-full vessel)")
        try:
            T, pr = k.T_from_uv(u, v_eos, self.T_last)
            ok = pr["P"] > 0.0 and pr["dPdv"] < 0.0
        except ConvergenceError:
            ok, T, pr = False, self.T_last, None
        if ok and not self._maybe_two_phase(T, float(pr["P"]), v_eos, x):
            self.T_last = T
            return dict(T=T, P=float(pr["P"]), h=float(pr["h"]), u=u, v=v, v_eos=v_eos, x=x, n=n,
                        beta=1.0, kernel=k, pr=pr, single=True)
        f = self.fluid if self.fixed and np.array_equal(x, self.fluid.mole_fractions) \
            else self.fluid.with_composition(x)
        st = f.state(u=u, v=v)
        T, P = float(st.T), float(st.P)
        self.T_last = T
        return dict(T=T, P=P, h=u + P * v, u=u, v=v, v_eos=v_eos, x=x, n=n, beta=float(st.vapor_fraction),
                    kernel=k, pr=None, single=st.phase != "two-phase", phase=st.phase, fluid_x=f, s=float(st.s),
                    status=int(worst_status(getattr(st, "status", CONVERGED))))

    def _maybe_two_phase(self, T, P, v_eos, x):
        """Phase check of a single-phase (T, v) solution (pure: saturation curve;
        mixture: tangent-plane test, re-used while T and ln P move by < 2 K and
        0.05 from the last stable check; the guard T < 1.1 max Tc is common
        practice, no source)."""
        fl = self.fluid
        present = x > 0
        if T >= 1.1 * float(np.max(fl.Tc[present])):
            return False
        from eosfill.equilibrium import solvers as equilibrium

        if fl.is_pure:
            if T >= fl.Tc[0]:
                return False
            from eosfill.equilibrium.saturation_curve import saturation_curve

            side = saturation_curve(fl).classify(T, v_eos - float(fl.volume_shift[0]))
            if side in ("gas-side", "liquid-side"):
                return False
            sat = equilibrium.saturation_pressure(np.array([T]), fl.params, raise_on_fail=False)
            if sat["status"][0] != equilibrium.CONVERGED:
                return False
            return bool(sat["v_L"][0] < v_eos < sat["v_V"][0])
        c = self._stable_cache
        if c is not None and abs(c[0] - T) < 2.0 and abs(c[1] - math.log(P)) < 0.05 \
                and np.max(np.abs(c[2] - x)) < 1e-6:
            return False
        # warm start from the last test's trial phases (a few steps away)
        lnW0 = None if c is None or np.max(np.abs(c[2] - x)) > 1e-3 else c[3]
        unstable, _, _, lnW = equilibrium.stability_test(np.array([T]), np.array([P]), x[None, :], fl.params,
                                                         lnW_start=lnW0, return_trials=True)
        if not unstable[0]:
            self._stable_cache = (T, math.log(P), np.array(x), lnW)
            return False
        return True


class _Model:
    def __init__(self, fluid, volume, mode, restriction, N0, U0, sources, back_pressure, wall,
                 inner_h, outer_h, ambient_T, Tw0, switch_dp):
        self.fluid = fluid
        self.V = volume
        self.mode = mode
        self.r = restriction
        self.nc = fluid.nc
        self.sources = sources  # list: Reservoir or (Bank, _Content)
        self.back_pressure = back_pressure
        self.wall = wall
        self.inner_h = inner_h
        self.outer_h = outer_h
        self.T_amb = ambient_T
        self.switch_dp = switch_dp
        self.active = 0
        fixed = None
        if mode == "vent":
            fixed = N0 / N0.sum()
        else:
            xs = [self._source_x(s) for s in sources]
            x0 = N0 / N0.sum()
            if all(np.allclose(xx, x0, rtol=0, atol=1e-14) for xx in xs):
                fixed = x0
        self.content = _Content(fluid, volume, fixed)
        nw = wall.n_nodes if wall is not None else 0
        self.nw = nw
        self.nb = sum(1 for s in sources if isinstance(s, Bank))
        # layout: N (nc), U, Tw (nw), banks (n, U each), accumulators (6)
        self.iU = self.nc
        self.iw = self.nc + 1
        self.ib = self.iw + nw
        self.ia = self.ib + 2 * self.nb
        self.size = self.ia + 6
        self.bank_contents = []
        for s in sources:
            if isinstance(s, Bank):
                c = _Content(fluid, s.volume, self._source_x(s))
                c.T_last = s.temperature
                self.bank_contents.append(c)
        self._nozzle_cache = {}
        self._isentrope_tables = {}
        self.status = CONVERGED   # worst solver status of the states used (eosfill.errors codes)
        self.n_rhs = 0
        self.range_warning = False

    def _source_x(self, s):
        return self.fluid.mole_fractions if s.composition is None else np.asarray(s.composition, dtype=float)

    # -- upstream / downstream -------------------------------------------------
    def _upstream_fill(self, t, y):
        """(P, T, h, kernel, v_eos, x) of the gas feeding the vessel, or None when no source."""
        if self.active >= len(self.sources):
            return None
        s = self.sources[self.active]
        if isinstance(s, Reservoir):
            T = s.T(t)
            key = ("res", self.active, T)
            hit = self._nozzle_cache.get("res_state")
            if hit is not None and hit[0] == key:
                return hit[1]
            x = self._source_x(s)
            v_eos, pr, k = _flow.gas_state_TP(self.fluid, T, s.pressure, x)
            up = dict(P=s.pressure, T=T, h=float(pr["h"]), kernel=k, v_eos=v_eos, x=x, pr=pr, key=key)
            self._nozzle_cache["res_state"] = (key, up)
            return up
        j = sum(1 for q in self.sources[: self.active] if isinstance(q, Bank))
        c = self.bank_contents[j]
        nb, Ub = y[self.ib + 2 * j], y[self.ib + 2 * j + 1]
        st = c.state(nb * c._kernel.x, Ub)
        self.status = worst_status(self.status, st.get("status"))
        return dict(P=st["P"], T=st["T"], h=st["h"], kernel=st["kernel"], v_eos=st["v_eos"], x=st["x"],
                    pr=st["pr"], key=None, bank=j, st=st)

    def _mass_flow(self, up, P_down, gas_for_ramp=None):
        """Mass flow [kg/s] from the upstream state through the restriction to P_down."""
        r = self.r
        if up["P"] <= P_down:
            return 0.0
        if isinstance(r, _flow.Orifice):
            noz = self._nozzle(up)
            return r.mass_flow(noz, P_down)
        if isinstance(r, _flow.Valve):
            pr = up["pr"]
            k = up["kernel"]
            if pr is not None:
                cv = pr["cv"]
                cp = cv - up["T"] * pr["dPdT"] ** 2 / pr["dPdv"]
                gamma = cp / cv
            else:
                gamma = 1.0  # two-phase upstream: no single γ; Fγ = 1/1.4 (common practice, no source)
            v = up.get("v") or (up["v_eos"] - k.c_shift)
            rho = k.molar_mass / v
            return r.mass_flow(up["P"], P_down, rho, gamma)
        if isinstance(r, _flow.MassFlow):
            return r.mass_flow
        raise InputError("restriction", r, "Orifice, Valve, MassFlow or PressureRamp")

    def _nozzle(self, up):
        key = up.get("key")
        if key is not None:
            hit = self._nozzle_cache.get("noz")
            if hit is not None and hit[0] == key:
                return hit[1]
        tables = self._isentropes(up["x"])
        if up.get("pr") is None:
            st = up["st"]
            f = st.get("fluid_x") or self.fluid
            s0 = st["s"] if "s" in st else float(f.state(T=st["T"], v=st["v"]).s)
            noz = _flow.IsentropicNozzle.from_equilibrium(f, st["P"], st["h"], s0, isentropes=tables)
        else:
            known = self._throat_known_single(up)
            two = self._throat_known_two_phase(up)
            noz = _flow.IsentropicNozzle(self.fluid, up["T"], up["v_eos"], kernel=up["kernel"],
                                         check_phase=not known, isentropes=tables, equilibrium=two)
            if not (known or two):
                self._last_throat = (noz.T_star, math.log(noz.P_star), np.array(up["x"]), noz.two_phase,
                                     up["T"], math.log(up["P"]))
        if key is not None:
            noz.tabulate()
            self._nozzle_cache["noz"] = (key, noz)
        return noz

    def _isentropes(self, x):
        """The equilibrium isentrope tables of composition x (one set per run and composition,
        shared by every nozzle of the run: built once, interpolated at each right-hand side)."""
        x = np.asarray(x, dtype=float)
        key = x.tobytes()
        tab = self._isentrope_tables.get(key)
        if tab is None:
            f = self.fluid if np.array_equal(x, self.fluid.mole_fractions) else self.fluid.with_composition(x)
            tab = self._isentrope_tables[key] = _flow.EquilibriumIsentropes(f)
        return tab

    def _throat_known_two_phase(self, up):
        """Go straight to the equilibrium throat while the upstream state stays within 0.5 K
        and 0.01 in ln P of one whose throat was two-phase (common practice, no source; the
        two paths give the same G* where the throat meets the phase boundary)."""
        c = getattr(self, "_last_throat", None)
        if c is None or not c[3]:
            return False
        return (abs(c[4] - up["T"]) < 0.5 and abs(c[5] - math.log(up["P"])) < 0.01
                and np.max(np.abs(c[2] - up["x"])) < 1e-6)

    def _throat_known_single(self, up):
        """Skip the throat's phase test while the upstream state stays within 0.5 K and
        0.01 in ln P of one whose throat was single phase (common practice, no source)."""
        c = getattr(self, "_last_throat", None)
        if c is None or c[3]:
            return False
        return (abs(c[4] - up["T"]) < 0.5 and abs(c[5] - math.log(up["P"])) < 0.01
                and np.max(np.abs(c[2] - up["x"])) < 1e-6)

    # -- the right-hand side -----------------------------------------------------
    def evaluate(self, t, y):
        """Every rate and diagnostic at (t, y)."""
        self.n_rhs += 1
        nc = self.nc
        N = y[:nc]
        U = y[self.iU]
        g = self.content.state(N, U)
        self.status = worst_status(self.status, g.get("status"))
        T, P, h = g["T"], g["P"], g["h"]
        M_x = float(g["x"] @ self.fluid.molar_masses)
        ndot_in = ndot_out = 0.0
        mdot_in = mdot_out = 0.0
        h_in = 0.0
        x_in = g["x"]
        up = None
        if self.mode == "fill":
            up = self._upstream_fill(t, y)
            if up is not None:
                x_in = up["x"]
                h_in = up["h"]
                M_in = up["kernel"].molar_mass
                if isinstance(self.r, _flow.PressureRamp):
                    mdot_in = self._ramp_flow(g, h_in, M_in, x_in, +1.0, 0.0) if up["P"] > P else 0.0
                else:
                    mdot_in = self._mass_flow(up, P)
                ndot_in = mdot_in / M_in
        else:
            if isinstance(self.r, _flow.PressureRamp):
                mdot_out = self._ramp_flow(g, h, M_x, g["x"], -1.0, 0.0) if P > self.back_pressure else 0.0
            else:
                upv = dict(P=P, T=T, h=h, kernel=g["kernel"], v_eos=g["v_eos"], x=g["x"], pr=g["pr"],
                           key=None, st=g, v=g["v"])
                mdot_out = self._mass_flow(upv, self.back_pressure)
            ndot_out = mdot_out / M_x
        flowing = (mdot_in + mdot_out) > 0.0
        # wall
        Q_wall = 0.0
        Q_amb = 0.0
        dTw = None
        Tw_in = Tw_out = float("nan")
        if self.wall is not None:
            w = self.wall
            Tw = y[self.iw:self.iw + self.nw]
            cp_mass, beta = _cp_and_expansion(self.fluid, g, M_x)
            hin = self.inner_h(flowing, mdot=mdot_in + mdot_out, T_gas=T, T_wall=float(Tw[0]),
                               rho=M_x / g["v"], cp_mass=cp_mass, beta=beta)
            Q_wall = surface_exchange(hin, w.inner_area, float(Tw[0]), T, w.inner_resistance())
            Q_amb = surface_exchange(self.outer_h, w.outer_area, self.T_amb, float(Tw[-1]), w.outer_resistance())
            net = w.conduction(Tw)
            net[0] -= Q_wall
            net[-1] += Q_amb
            dTw = net / w.heat_capacity
            Tw_in = float(Tw[0]) - Q_wall * w.inner_resistance()
            Tw_out = float(Tw[-1]) + Q_amb * w.outer_resistance()
        # the PressureRamp needs the heat flow: solve again with Q
        if isinstance(self.r, _flow.PressureRamp) and Q_wall != 0.0:
            if self.mode == "fill" and up is not None and up["P"] > P:
                mdot_in = self._ramp_flow(g, h_in, up["kernel"].molar_mass, x_in, +1.0, Q_wall)
                ndot_in = mdot_in / up["kernel"].molar_mass
            elif self.mode == "vent" and P > self.back_pressure:
                mdot_out = self._ramp_flow(g, h, M_x, g["x"], -1.0, Q_wall)
                ndot_out = mdot_out / M_x
        dy = np.zeros(self.size)
        dy[:nc] = ndot_in * np.asarray(x_in) - ndot_out * np.asarray(g["x"])       # (T1)
        dy[self.iU] = ndot_in * h_in - ndot_out * h + Q_wall                        # (T2)
        if dTw is not None:
            dy[self.iw:self.iw + self.nw] = dTw
        if up is not None and "bank" in up:
            j = up["bank"]
            dy[self.ib + 2 * j] = -ndot_in
            dy[self.ib + 2 * j + 1] = -ndot_in * h_in
        a = self.ia
        dy[a:a + 6] = (mdot_in, mdot_out, ndot_in * h_in, ndot_out * h, Q_wall, Q_amb)
        return dict(dy=dy, T=T, P=P, gas=g, mdot_in=mdot_in, mdot_out=mdot_out, Q_wall=Q_wall, Q_amb=Q_amb,
                    Tw_in=Tw_in, Tw_out=Tw_out, up=up, M=M_x)

    def _ramp_flow(self, g, h_flow, M_flow, x_flow, sign, Q):
        """Mass flow giving dP/dt = sign·rate (F-ramp): P(T, v) with
        du = (dU − u dn)/n, dv = −v dn/n, dT = (du − (T P_T − P) dv)/cv,
        dP = P_T dT + P_v dv; dn = sign·ṅ, dU = sign·ṅ h_flow + Q.  The change
        of composition by the inflow is neglected in dP (exact for one
        composition).

        v is the content's molar volume V/n (what the amount changes); with a
        volume shift c the model's own volume is v_eos = v + c, so
        dv_eos = dv and the derivatives P_T, P_v at v_eos apply unchanged."""
        pr = g["pr"]
        if pr is None:
            raise EosfillError("a pressure ramp needs single-phase content")
        T, P, n, u, v = g["T"], g["P"], g["n"], g["u"], g["v"]
        PT, Pv, cv = pr["dPdT"], pr["dPdv"], pr["cv"]

        def dP(ndot, Qh):
            dn = sign * ndot
            du = (sign * ndot * h_flow + Qh - u * dn) / n
            dv = -v * dn / n
            dT = (du - (T * PT - P) * dv) / cv
            return PT * dT + Pv * dv

        B = dP(0.0, Q)
        A = dP(1.0, 0.0)
        ndot = (sign * self.r.rate - B) / A
        return max(ndot, 0.0) * M_flow

    def sparsity(self):
        """Which rates depend on which variables (rows: rates, columns: variables);
        lets the finite-difference Jacobian group columns."""
        S = np.zeros((self.size, self.size), dtype=bool)
        g = slice(0, self.iU + 1)
        S[g, g] = True
        S[self.ia:, g] = True
        if self.nw:
            w0 = self.iw
            S[g, w0] = True
            S[w0, g] = True
            S[self.ia:, w0] = True
            S[self.ia:, self.ib - 1] = True
            for j in range(self.nw):
                for k in (j - 1, j, j + 1):
                    if 0 <= k < self.nw:
                        S[self.iw + j, self.iw + k] = True
        for j in range(self.nb):
            b = slice(self.ib + 2 * j, self.ib + 2 * j + 2)
            S[b, b] = True
            S[g, b] = True
            S[b, g] = True
            S[self.ia:, b] = True
        return S

    def fun(self, t, y):
        return self.evaluate(t, y)["dy"]


# --------------------------------------------------------------------------
# integration driver
# --------------------------------------------------------------------------
def _initial_moles(fluid, V, T, P, x):
    v_eos, pr, k = _flow.gas_state_TP(fluid, T, P, x)
    v = v_eos - k.c_shift
    n = V / v
    return n * np.asarray(x, dtype=float), n * float(pr["u"])


def simulate(fluid, volume, *, mode="fill", initial_temperature, initial_pressure=None, initial_mass=None,
             initial_composition=None, restriction, supply=None, back_pressure=101325.0, wall=None,
             inner_coefficient=None, outer_coefficient=0.0, ambient_temperature=288.15,
             initial_wall_temperature=None, duration, target_pressure=None, target_mass=None,
             temperature_limit=None, output_times=None, n_output=201, switch_pressure_difference=0.0,
             limits=None, rtol=1e-6, method="BDF", max_step=None, description=None, progress=None):
    """Integrate a fill or a vent of a rigid vessel in time.

    Parameters
    ----------
    fluid : Fluid
        Components and model (compositions are its mole-fraction vectors).
    volume : float
        Vessel volume [m³], > 0.
    mode : {"fill", "vent"}
    initial_temperature : [K];  initial_pressure [Pa] or initial_mass [kg]
    initial_composition : mole fractions (default the fluid's)
    restriction : flow.Orifice, flow.Valve, flow.MassFlow or flow.PressureRamp
    supply : Reservoir, Bank or a list of Banks (fills; banks used in order)
    back_pressure : [Pa] downstream of a vent
    wall : heat.LumpedWall or heat.LayeredWall, or None (adiabatic)
    inner_coefficient : number [W/(m² K)] or callable(flowing, **state) -> h
    outer_coefficient : [W/(m² K)] wall to ambient
    ambient_temperature, initial_wall_temperature : [K]
    duration : longest time [s]
    target_pressure [Pa], target_mass [kg], temperature_limit [K] : stop events
        (pressure equalisation with the supply or the back pressure always stops)
    output_times : times [s] to report (default n_output evenly spaced over the run)
    progress : callable(t [s]) called after each integration step, or None
    switch_pressure_difference : bank-to-vessel pressure difference [Pa] at which
        the next bank is used
    limits : dict with any of max_gas_temperature, min_gas_temperature,
        max_wall_temperature, min_wall_temperature, max_pressure [K, Pa]
    rtol : relative tolerance of the integration;  method : "BDF", "LSODA" or "Radau"

    Returns
    -------
    TransientResult

    Raises
    ------
    InputError on bad input; IntegrationError (with ``.partial``) when the
    integration stops early.
    """
    V = _flow._positive("volume", volume, "a volume > 0 m3")
    if mode not in ("fill", "vent"):
        raise InputError("mode", mode, '"fill" or "vent"')
    duration = _flow._positive("duration", duration, "a time > 0 s")
    T0 = _flow._positive("initial_temperature", initial_temperature, "a temperature > 0 K")
    x0 = fluid.mole_fractions if initial_composition is None else np.asarray(initial_composition, dtype=float)
    if (initial_pressure is None) == (initial_mass is None):
        raise InputError("initial_pressure/initial_mass", (initial_pressure, initial_mass), "exactly one of them")
    if initial_pressure is not None:
        P0 = _flow._positive("initial_pressure", initial_pressure, "a pressure > 0 Pa")
        N0, U0 = _initial_moles(fluid, V, T0, P0, x0)
    else:
        m0 = _flow._positive("initial_mass", initial_mass, "a mass > 0 kg")
        M0 = float(x0 @ fluid.molar_masses)
        n0 = m0 / M0
        k = _flow.TVKernel(fluid, x0)
        pr = k(T0, V / n0 + k.c_shift)
        N0, U0 = n0 * x0, n0 * float(pr["u"])
        P0 = float(pr["P"])
    if not isinstance(restriction, (_flow.Orifice, _flow.Valve, _flow.MassFlow, _flow.PressureRamp)):
        raise InputError("restriction", restriction, "flow.Orifice, flow.Valve, flow.MassFlow or flow.PressureRamp")
    sources = []
    if mode == "fill":
        if supply is None:
            raise InputError("supply", None, "a Reservoir, a Bank or a list of Banks for a fill")
        sources = list(supply) if isinstance(supply, (list, tuple)) else [supply]
        for i, s in enumerate(sources):
            if not isinstance(s, (Reservoir, Bank)):
                raise InputError(f"supply[{i}]", s, "a Reservoir or a Bank")
        top = max(s.pressure for s in sources)
        if top <= P0:
            raise InputError("supply pressure", top, f"above the vessel's initial pressure {P0:.6g} Pa "
                             "(gas cannot flow in otherwise)")
    else:
        back_pressure = float(back_pressure)
        if not (back_pressure >= 0.0):
            raise InputError("back_pressure", back_pressure, "a pressure ≥ 0 Pa")
        if back_pressure >= P0:
            raise InputError("back_pressure", back_pressure, f"below the vessel's initial pressure {P0:.6g} Pa "
                             "(gas cannot flow out otherwise)")
    if wall is not None:
        if not isinstance(wall, (LumpedWall, LayeredWall)):
            raise InputError("wall", wall, "heat.LumpedWall, heat.LayeredWall or None")
        if inner_coefficient is None:
            raise InputError("inner_coefficient", None, "a coefficient ≥ 0 W/(m2 K) or a callable, with a wall")
        if not callable(inner_coefficient):
            inner_coefficient = ConstantCoefficient(inner_coefficient)
        outer_coefficient = float(outer_coefficient)
        if not (outer_coefficient >= 0.0):
            raise InputError("outer_coefficient", outer_coefficient, "a coefficient ≥ 0 W/(m2 K)")
    if target_pressure is not None:
        target_pressure = _flow._positive("target_pressure", target_pressure, "a pressure > 0 Pa")
        if (mode == "fill") != (target_pressure > P0):
            raise InputError("target_pressure", target_pressure,
                             f"{'above' if mode == 'fill' else 'below'} the initial pressure {P0:.6g} Pa")
    if target_mass is not None:
        target_mass = _flow._positive("target_mass", target_mass, "a mass > 0 kg")
    if not (0.0 < rtol <= 1e-2):
        raise InputError("rtol", rtol, "a number in (0, 0.01]")
    Tw0 = T0 if initial_wall_temperature is None else _flow._positive(
        "initial_wall_temperature", initial_wall_temperature, "a temperature > 0 K")

    model = _Model(fluid, V, mode, restriction, N0, U0, sources, back_pressure, wall, inner_coefficient,
                   outer_coefficient, ambient_temperature, Tw0, float(switch_pressure_difference))
    model.content.T_last = T0
    y0 = np.zeros(model.size)
    y0[:fluid.nc] = N0
    y0[model.iU] = U0
    if wall is not None:
        y0[model.iw:model.iw + model.nw] = Tw0
    for j, c in enumerate(model.bank_contents):
        b = [s for s in sources if isinstance(s, Bank)][j]
        Nb, Ub = _initial_moles(fluid, b.volume, b.temperature, b.pressure, c._kernel.x)
        y0[model.ib + 2 * j] = Nb.sum()
        y0[model.ib + 2 * j + 1] = Ub
    # absolute tolerances from the scale of each variable
    P_scale = max([P0] + [s.pressure for s in sources])
    n_scale = max(N0.sum(), P_scale * V / (R * T0))
    atol = np.empty(model.size)
    atol[:fluid.nc] = rtol * n_scale * 1e-3
    atol[model.iU] = rtol * n_scale * R * 300.0 * 1e-3
    atol[model.iw:model.ib] = rtol * 1e-2
    if wall is not None:
        # a wall node's energy error C ΔT must stay below the gas energy's tolerance too
        # (a heavy wall otherwise breaks the (T3) energy closure)
        atol[model.iw:model.ib] = np.minimum(atol[model.iw:model.ib], atol[model.iU] / wall.heat_capacity)
    for j, c in enumerate(model.bank_contents):
        nb = y0[model.ib + 2 * j]
        atol[model.ib + 2 * j] = rtol * nb * 1e-3
        atol[model.ib + 2 * j + 1] = rtol * nb * R * 300.0 * 1e-3
    M_scale = n_scale * float(np.max(fluid.molar_masses))
    atol[model.ia:model.ia + 2] = rtol * M_scale * 1e-3
    atol[model.ia + 2:] = rtol * n_scale * R * 300.0 * 1e-3

    stops = dict(target_pressure=target_pressure, target_mass=target_mass, temperature_limit=temperature_limit)
    run = _Run(model, y0, duration, rtol, atol, method, max_step, stops)
    run.progress = progress
    run.integrate()
    res = run.result(output_times, n_output, limits or {}, description or [])
    if not run.complete:
        raise IntegrationError(run.failure, run.t_end, run.last_state(), res)
    _refuse_unclosed(res, rtol)
    return res


def _refuse_unclosed(res, rtol):
    """A run whose (T3) closure, checked against the recomputed states, misses
    max(1e-6, 10 rtol) is refused with ConvergenceError and the figures (the tolerance
    is ours: a run closes to ~1e-12 when consistent; common practice, no source)."""
    tol = max(1e-6, 10.0 * rtol)
    res.closure_tolerance = tol
    worst = max(res.mass_closure, res.energy_closure, res.state_residual)
    if not worst <= tol:
        raise ConvergenceError(
            "time-resolved balance check",
            f"the run does not close against an independent recomputation of its states: mass "
            f"{res.mass_closure:.3e}, energy {res.energy_closure:.3e}, two-phase pressure "
            f"{res.state_residual:.3e} (relative; tolerance {tol:g}); the result is refused",
            dict(t_end=float(res.t[-1]), P=float(res.P[-1]), T=float(res.T_gas[-1]),
                 mass_closure=res.mass_closure, energy_closure=res.energy_closure,
                 state_residual=res.state_residual), worst)


class _Run:
    """Step-by-step integration with events located on the dense output."""

    def __init__(self, model, y0, duration, rtol, atol, method, max_step, stops):
        self.m = model
        self.y0 = y0
        self.duration = duration
        self.rtol, self.atol = rtol, atol
        self.method = method
        self.max_step = max_step if max_step is not None else duration / 20.0
        self.stops = stops
        self.segments = []  # (t0, t1, dense, active source index)
        self.stop_reason = "time limit (duration)"
        self.complete = True
        self.failure = ""
        self.t_end = 0.0
        self.y_end = y0
        self.progress = None  # callable(t) after each step, e.g. a progress bar

    def _event_values(self, t, y):
        m = self.m
        d = m.evaluate(t, y)
        P, T = d["P"], d["T"]
        sgn = 1.0 if m.mode == "fill" else -1.0
        out = {}
        s = self.stops
        if s["target_pressure"] is not None:
            out["target pressure reached"] = sgn * (P - s["target_pressure"])
        if s["target_mass"] is not None:
            mass = float(y[:m.nc] @ m.fluid.molar_masses)
            out["target mass reached"] = sgn * (mass - s["target_mass"])
        if s["temperature_limit"] is not None:
            out["gas temperature limit reached"] = sgn * (T - s["temperature_limit"])
        if m.mode == "fill":
            up = d["up"]
            if up is not None:
                # 1e-4 of the upstream pressure: flow practically ended (common practice, no source)
                last = m.active >= len(m.sources) - 1
                dp_switch = 0.0 if last else m.switch_dp
                key = "pressure equalised with the supply" if last else "bank switch"
                out[key] = (P + max(dp_switch, 1e-4 * up["P"])) - up["P"]
        else:
            out["pressure equalised with the back pressure"] = (m.back_pressure + 1e-4 * P) - P
        return out

    def integrate(self):
        from scipy.integrate import BDF, LSODA, Radau
        from scipy.optimize import brentq

        methods = {"BDF": BDF, "LSODA": LSODA, "Radau": Radau}
        if self.method not in methods:
            raise InputError("method", self.method, '"BDF", "LSODA" or "Radau"')
        m = self.m
        t, y = 0.0, self.y0.copy()
        try:
            ev_prev = self._event_values(t, y)
        except (EosfillError, FloatingPointError, ValueError) as exc:
            self.complete, self.failure = False, f"the initial state could not be evaluated ({exc})"
            return
        while True:
            opts = {} if self.method == "LSODA" else dict(jac_sparsity=m.sparsity())
            solver = methods[self.method](m.fun, t, y, self.duration, rtol=self.rtol, atol=self.atol,
                                          max_step=self.max_step, **opts)
            restart = False
            while solver.status == "running":
                try:
                    with np.errstate(invalid="raise", divide="raise", over="raise"):
                        msg = solver.step()
                    if self.progress is not None:
                        self.progress(solver.t)
                except (EosfillError, FloatingPointError, ValueError, ZeroDivisionError) as exc:
                    self.complete, self.failure = False, f"{type(exc).__name__}: {exc}"
                    return
                if solver.status == "failed":
                    self.complete, self.failure = False, f"step failed: {msg}"
                    return
                t0, t1 = solver.t_old, solver.t
                dense = solver.dense_output()
                try:
                    ev = self._event_values(t1, solver.y)
                except (EosfillError, FloatingPointError, ValueError) as exc:
                    self.complete, self.failure = False, f"{type(exc).__name__}: {exc}"
                    self.segments.append((t0, t1, dense, m.active))
                    self.t_end, self.y_end = t0, dense(t0)
                    return
                hit = None
                for name, val in ev.items():
                    if name in ev_prev and ev_prev[name] < 0.0 <= val:
                        def g(tt, name=name):
                            return self._event_values(tt, dense(tt))[name]
                        try:
                            te = brentq(g, t0, t1, xtol=1e-10 * max(t1, 1.0), rtol=1e-12)
                        except ValueError:
                            te = t1
                        if hit is None or te < hit[1]:
                            hit = (name, te)
                if hit is not None:
                    name, te = hit
                    self.segments.append((t0, te, dense, m.active))
                    t, y = te, dense(te)
                    self.t_end, self.y_end = t, y
                    if name == "bank switch":
                        m.active += 1
                        m._nozzle_cache.clear()
                        ev_prev = self._event_values(t, y)
                        restart = True
                        break
                    self.stop_reason = name
                    return
                self.segments.append((t0, t1, dense, m.active))
                ev_prev = ev
                t, y = t1, solver.y
                self.t_end, self.y_end = t, y
            if not restart:
                return

    def last_state(self):
        try:
            d = self.m.evaluate(self.t_end, self.y_end)
            return dict(t=self.t_end, T=d["T"], P=d["P"], n=float(self.y_end[:self.m.nc].sum()))
        except Exception:  # noqa: BLE001 - the last state is reported as far as it can be
            return dict(t=self.t_end, N=self.y_end[:self.m.nc].tolist(), U=float(self.y_end[self.m.iU]))

    def result(self, output_times, n_output, limits, description):
        m = self.m
        t_end = self.t_end
        if output_times is None:
            times = np.linspace(0.0, t_end, int(n_output))
        else:
            times = np.asarray(output_times, dtype=float)
            if np.any(times < 0) or np.any(np.diff(times) <= 0):
                raise InputError("output_times", output_times, "increasing times ≥ 0 s")
            times = times[times <= t_end * (1 + 1e-12)]
            if times.size == 0 or times[-1] < t_end:
                times = np.append(times, t_end)
        if times.size == 0:
            times = np.array([0.0])
        ys = np.empty((times.size, m.size))
        banks = np.full(times.size, -1)
        seg_i = 0
        for i, tt in enumerate(times):
            if tt <= 0.0 or not self.segments:
                ys[i] = self.y0
                banks[i] = 0 if m.nb else -1
                continue
            while seg_i < len(self.segments) - 1 and tt > self.segments[seg_i][1]:
                seg_i += 1
            t0, t1, dense, act = self.segments[seg_i]
            ys[i] = dense(min(max(tt, t0), t1))
            banks[i] = act if m.nb else -1
        keep_active = m.active
        rows = []
        for i, tt in enumerate(times):
            m.active = int(max(banks[i], 0)) if m.nb else keep_active
            rows.append(m.evaluate(tt, ys[i]))
        m.active = keep_active
        Mw = m.fluid.molar_masses
        T = np.array([r["T"] for r in rows])
        P = np.array([r["P"] for r in rows])
        mass = ys[:, :m.nc] @ Mw
        beta = np.array([r["gas"]["beta"] for r in rows])
        phase = np.array([_phase_label(m.fluid, r) for r in rows], dtype=object)
        res = TransientResult(
            kind=m.mode, t=times, P=P, T_gas=T,
            T_wall_inner=np.array([r["Tw_in"] for r in rows]), T_wall_outer=np.array([r["Tw_out"] for r in rows]),
            mass=mass, mdot_in=np.array([r["mdot_in"] for r in rows]),
            mdot_out=np.array([r["mdot_out"] for r in rows]), Q_wall=np.array([r["Q_wall"] for r in rows]),
            phase=phase, vapour_fraction=beta, bank=banks, stop_reason=self.stop_reason if self.complete
            else f"integration failed: {self.failure}", complete=self.complete,
            description=list(description), n_rhs=m.n_rhs)
        a = m.ia
        res.mass_in, res.mass_out = float(ys[-1, a]), float(ys[-1, a + 1])
        res.heat_from_ambient = float(ys[-1, a + 5])
        res.mass_closure, res.energy_closure, res.state_residual, st_closure = _closure(m, ys, rows, self.y0)
        res.status = worst_status(m.status, st_closure, *(t.status for t in m._isentrope_tables.values()))
        risk = path_solid_risk(m.fluid, T, P, np.array([r["gas"]["x"] for r in rows]))
        res.solid = np.asarray(risk.flag, dtype=bool)
        res.flags = _flags(res, limits) + [f"solid region first seen at {times[i[0]]:.4g} s "
                                           f"({int(res.solid.sum())} of {res.solid.size} output rows): {text}"
                                           for i, text in risk.reasons[:1]]
        for f in res.flags:
            warnings.warn(f, LimitWarning, stacklevel=3)
        return res


def _cp_and_expansion(fluid, g, M):
    """The content's isobaric heat capacity [J/(kg K)] and thermal expansion β [1/K]
    from the equation of state, for the inner heat-transfer coefficient:
    c_p = c_v − T (∂P/∂T)_v² / (∂P/∂v)_T and β (H4 of :mod:`eosfill.transient.heat`).
    Two-phase content has no finite c_p (a pure fluid boils at constant T, P):
    the ideal-gas c_p° of the mixture and β = 1/T are passed then (stated in
    docs/transient.md)."""
    T = g["T"]
    pr = g["pr"]
    if pr is not None:
        cp = pr["cv"] - T * pr["dPdT"] ** 2 / pr["dPdv"]
        return float(cp) / M, float(isobaric_expansion(g["v"], pr["dPdT"], pr["dPdv"]))
    from eosfill.model import idealgas

    cp0 = idealgas.mixture_cp0(T, g["x"], fluid.cp_coeffs, fluid.cp_Tmin, fluid.cp_Tmax)
    return float(cp0) / M, 1.0 / T


def _phase_label(fluid, row):
    """The content's phase label, from the State's own labelling (one rule for the
    whole package, :mod:`eosfill.model.mixture`): a two-phase row carries the
    equilibrium solver's label; a single-phase row is labelled by the State of
    the same root at its (T, P) (the cubic root whose volume is the content's)."""
    g = row["gas"]
    if "phase" in g:
        return str(g["phase"])
    x = np.asarray(g["x"])
    f = fluid if np.array_equal(x, fluid.mole_fractions) else fluid.with_composition(x)
    with np.errstate(invalid="ignore", divide="ignore"):
        st = f.single_phase(row["T"], row["P"])
        if abs(float(st.v) / g["v"] - 1.0) > 1e-6:   # not the stable root: the other one
            st = f.single_phase(row["T"], row["P"], which="liquid" if g["v"] < float(st.v) else "vapour")
    return str(st.phase)


def _recomputed_row(fluid, V, row):
    """(n, U, P residual) of an output row's content recomputed by a separate evaluation
    from its reported T, P and composition: the (T, P) state of the content's root for one
    phase (n = V/v), the (T, v) equilibrium state when two-phase (its P compared with the
    reported one)."""
    g = row["gas"]
    x = np.asarray(g["x"])
    f = g.get("fluid_x") or (fluid if np.array_equal(x, fluid.mole_fractions) else fluid.with_composition(x))
    with np.errstate(invalid="ignore", divide="ignore"):
        if g["pr"] is None:
            st = f.state(T=row["T"], v=g["v"])
            return (g["n"], g["n"] * float(st.u), (float(st.P) - row["P"]) / row["P"],
                    worst_status(getattr(st, "status", CONVERGED)))
        st = f.single_phase(row["T"], row["P"])
        if abs(float(st.v) / g["v"] - 1.0) > 1e-6:   # the content is on the other root
            st = f.single_phase(row["T"], row["P"], which="liquid" if g["v"] < float(st.v) else "vapour")
    n = V / float(st.v)
    return n, n * float(st.u), 0.0, worst_status(getattr(st, "status", CONVERGED))


def _closure(m, ys, rows, y0):
    """(T3) relative mass and energy closure, the largest over the output times, and the
    largest two-phase pressure residual.

    The content's amount and energy are recomputed from each row's reported T, P and
    composition by a separate evaluation (:func:`_recomputed_row`), not taken from the
    integrated N and U."""
    Mw = m.fluid.molar_masses
    a = m.ia
    m0 = float(y0[:m.nc] @ Mw)
    recomputed = [_recomputed_row(m.fluid, m.V, r) for r in rows]
    Mx = np.array([float(np.asarray(r["gas"]["x"]) @ Mw) for r in rows])
    mass = np.array([q[0] for q in recomputed]) * Mx
    m_in, m_out = ys[:, a], ys[:, a + 1]
    mass_scale = np.maximum.reduce([np.full(mass.size, m0), mass, m_in, m_out])
    mass_cl = float(np.max(np.abs(mass - m0 - m_in + m_out) / mass_scale))
    E = np.array([q[1] for q in recomputed])
    p_res = float(np.max(np.abs([q[2] for q in recomputed])))
    status = worst_status(*(q[3] for q in recomputed))
    Ew = np.zeros(len(rows))
    Ew0 = 0.0
    if m.wall is not None:
        C = m.wall.heat_capacity
        Ew = ys[:, m.iw:m.ib] @ C
        Ew0 = float(y0[m.iw:m.ib] @ C)
    Eb = np.zeros(len(rows))
    Eb0 = 0.0
    for j in range(m.nb):
        Eb = Eb + ys[:, m.ib + 2 * j + 1]
        Eb0 += float(y0[m.ib + 2 * j + 1])
    E0 = float(y0[m.iU])
    H_in, H_out, Q_amb = ys[:, a + 2], ys[:, a + 3], ys[:, a + 5]
    if m.nb:
        # banks are inside the system boundary: what leaves them enters the vessel
        lhs = E + Ew + Eb - E0 - Ew0 - Eb0 + H_out - Q_amb
    else:
        lhs = E + Ew - E0 - Ew0 - H_in + H_out - Q_amb
    n_max = float(np.max(ys[:, :m.nc].sum(axis=1)))
    # the energies involved, and 1e-9 of the wall's stored energy C T_w: float64 round-off
    # of a very heavy wall's energy (the isothermal limit) would otherwise set the closure
    scale = (np.abs(H_in) + np.abs(H_out) + np.abs(Q_amb) + np.abs(ys[:, a + 4]) + n_max * R * 300.0
             + 1e-9 * np.abs(Ew))
    return mass_cl, float(np.max(np.abs(lhs) / scale)), p_res, status


def _flags(res, limits):
    flags = []
    L = limits or {}

    def C(T):
        return f"{T - 273.15:.2f} °C"

    checks = (("max_gas_temperature", "T_gas", "max", "gas temperature"),
              ("min_gas_temperature", "T_gas", "min", "gas temperature"),
              ("max_wall_temperature", "T_wall_inner", "max", "inner wall temperature"),
              ("min_wall_temperature", "T_wall_inner", "min", "inner wall temperature"))
    for key, series, which, label in checks:
        lim = L.get(key)
        if lim is None:
            continue
        val, when = res.peak(series, which)
        if not math.isfinite(val):
            continue
        if (which == "max" and val > lim) or (which == "min" and val < lim):
            word = "above" if which == "max" else "below"
            flags.append(f"{label} {C(val)} at {when:.4g} s is {word} the limit {C(lim)} ({key})")
    if L.get("min_wall_temperature") is not None:
        val, when = res.peak("T_wall_outer", "min")
        if math.isfinite(val) and val < L["min_wall_temperature"]:
            flags.append(f"outer wall temperature {C(val)} at {when:.4g} s is below the limit "
                         f"{C(L['min_wall_temperature'])} (min_wall_temperature)")
    if L.get("max_pressure") is not None:
        val, when = res.peak("P", "max")
        if val > L["max_pressure"]:
            flags.append(f"pressure {val / 1e5:.6g} bar at {when:.4g} s is above the limit "
                         f"{L['max_pressure'] / 1e5:.6g} bar (max_pressure)")
    if res.liquid_appeared:
        i = int(np.argmax(np.asarray(res.vapour_fraction) < 1.0 - 1e-12))
        flags.append(f"a liquid phase appears at {res.t[i]:.4g} s")
    return flags
