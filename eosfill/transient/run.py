"""The integration driver: ``simulate`` (inputs checked, initial state, tolerances) and
``_Run`` (step-by-step implicit integration, stop events located on the dense output,
dense extrema, the output rows and the result), with the refusal of a run that does
not close (T3).

The model integrated is in ``rhs.py``; closures, phase labels and limit flags in
``checks.py``; the result in ``result.py`` (map in ``model.py``).
"""
from __future__ import annotations

import warnings

import numpy as np

from eosfill.transient import flow as _flow
from eosfill.constants import R
from eosfill.equilibrium.solid import path_solid_risk
from eosfill.errors import ConvergenceError, EosfillError, InputError, LimitWarning, worst_status
from eosfill.transient.checks import _closure, _flags, _phase_labels
from eosfill.transient.heat import ConstantCoefficient, LayeredWall, LumpedWall
from eosfill.transient.result import IntegrationError, TransientResult
from eosfill.transient.rhs import _Model
from eosfill.transient.sources import Bank, Reservoir

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
        phase = np.array(_phase_labels(m.fluid, rows), dtype=object)
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
        res.dense, res.extrema = self._dense_extrema()
        risk = path_solid_risk(m.fluid, T, P, np.array([r["gas"]["x"] for r in rows]))
        res.solid = np.asarray(risk.flag, dtype=bool)
        res.flags = _flags(res, limits) + [f"solid region first seen at {times[i[0]]:.4g} s "
                                           f"({int(res.solid.sum())} of {res.solid.size} output rows): {text}"
                                           for i, text in risk.reasons[:1]]
        for f in res.flags:
            warnings.warn(f, LimitWarning, stacklevel=3)
        return res


    def _at(self, seg, tt):
        """The evaluated state at time ``tt`` on one segment's dense output."""
        m = self.m
        t0, t1, dense, act = seg
        keep = m.active
        if m.nb:
            m.active = act
        try:
            return m.evaluate(tt, dense(min(max(tt, t0), t1)))
        finally:
            m.active = keep

    def _dense_extrema(self):
        """The solution at every integrator step, and the extrema of P, T_gas and
        the wall temperatures located on the dense output: the largest or smallest
        step value, refined by a bounded scalar search (Brent) over the steps on
        either side of it."""
        from scipy.optimize import minimize_scalar

        series = {"P": "P", "T_gas": "T", "T_wall_inner": "Tw_in", "T_wall_outer": "Tw_out"}
        if not self.segments:
            return {}, {}
        m = self.m
        keep = m.active
        if m.nb:
            m.active = 0
        first = m.evaluate(0.0, self.y0)
        m.active = keep
        rows = [first] + [self._at(seg, seg[1]) for seg in self.segments]
        t = np.array([0.0] + [seg[1] for seg in self.segments])
        dense = {"t": t}
        for name, key in series.items():
            dense[name] = np.array([float(r[key]) for r in rows])
        Mw = m.fluid.molar_masses
        dense["mass"] = np.array([float(self.y0[:m.nc] @ Mw)] +
                                 [float(seg[2](seg[1])[:m.nc] @ Mw) for seg in self.segments])
        extrema = {}
        for name, key in series.items():
            vals = dense[name]
            if not np.all(np.isfinite(vals)):
                continue
            for which, sign in (("max", -1.0), ("min", 1.0)):
                i = int(np.argmin(sign * vals))
                best = (float(vals[i]), float(t[i]))
                for j in (i - 1, i):  # the segments ending at and starting from point i
                    if j < 0 or j >= len(self.segments):
                        continue
                    seg = self.segments[j]
                    if seg[1] <= seg[0]:
                        continue
                    try:
                        opt = minimize_scalar(lambda tt: sign * float(self._at(seg, tt)[key]),
                                              bounds=(seg[0], seg[1]), method="bounded",
                                              options={"xatol": 1e-6 * max(seg[1], 1.0)})
                    except (EosfillError, ValueError):
                        continue
                    if np.isfinite(opt.fun) and sign * opt.fun < sign * best[0]:
                        best = (float(sign * opt.fun), float(opt.x))
                extrema[f"{which}_{name}"] = best
        return dense, extrema
