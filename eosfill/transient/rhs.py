"""The right-hand side of the balances (T1), (T2) (``_Model``): flows through the
restriction, the supply or bank upstream, the wall's exchange with the gas and the
surroundings, and the accumulators of what crossed each boundary.

The content's state comes from ``content.py``, the sources from ``sources.py``; the
driver that integrates this model is in ``run.py`` (map in ``model.py``).
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.transient import flow as _flow
from eosfill.errors import CONVERGED, EosfillError, InputError, worst_status
from eosfill.transient.content import _Content
from eosfill.transient.heat import isobaric_expansion, surface_exchange
from eosfill.transient.sources import Bank, Reservoir

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
