"""Flow through a restriction: orifice or nozzle, control valve, prescribed flow.

What limits the flow into or out of a vessel, as a mass flow [kg/s] from the
upstream state and the downstream pressure.

========================  ====================================================
restriction               model
========================  ====================================================
:class:`Orifice`          real-gas isentropic nozzle times a discharge
                          coefficient, ṁ = C_d A G (F1-F4)
:class:`Valve`            IEC 60534-2-1 gas sizing equation solved for the
                          flow, with expansion factor and choked limit (F5-F9)
:class:`MassFlow`         a prescribed mass flow
:class:`PressureRamp`     the flow that makes the vessel pressure change at
                          a prescribed rate (solved in :mod:`eosfill.transient`)
========================  ====================================================

Isentropic nozzle, homogeneous equilibrium (F1-F3).  Along the isentrope
s = s0 from the upstream (stagnation) state, the energy equation gives the
velocity and the mass flux

    w(P) = sqrt(2 (h0 - h(P, s0)))                    (F1, per unit mass)
    G(P) = ρ(P, s0) · w(P)                            (F2)

G rises from 0 at P = P0, passes a maximum G* at the throat pressure P*
(the flow is choked there: the velocity equals the speed of sound for a
single phase) and falls again.  The throat of a converging nozzle is at
max(P_back, P*)                                        (F3)
so the flux is G(P_back) for P_back ≥ P* and G* below (choked).  The
maximum is found along the isentrope (not from the ideal-gas critical
ratio), so the real-gas choking is exact for the model.  See e.g.
Anderson, *Modern Compressible Flow*, 3rd ed. (2003), ch. 5 for the ideal-gas
forms and Henry & Fauske (1971) for the homogeneous-equilibrium
maximisation (from memory).

Ideal-gas closed forms (the check of the real-gas path at low pressure):

    G = P0 sqrt(2 γ M/((γ - 1) R T0) [(P/P0)^(2/γ) - (P/P0)^((γ+1)/γ)])   (F4a)
    G* = P0 sqrt(γ M/(R T0)) (2/(γ + 1))^((γ+1)/(2(γ-1)))                 (F4b)
    P*/P0 = (2/(γ + 1))^(γ/(γ-1))                                          (F4c)

(Anderson 2003, Eqs. 5.20-5.21 for the choked flow and the critical ratio;
the sub-critical form is the Saint-Venant-Wantzel relation; equation
numbers from memory.)

IEC 60534-2-1 (2011) gas sizing, turbulent flow (F5-F9):

    x = (P1 - P2)/P1,  Fγ = γ/1.40                              (F5)
    Y = 1 - x/(3 Fγ xT)   (≥ 2/3)                               (F6)
    choked when x ≥ Fγ xT: x and Y are held at Fγ xT and 2/3     (F7)
    W = N6 Fp C Y sqrt(x P1 ρ1),  N6 = 3.16 for Kv [m³/h],
        W [kg/h], P1 [kPa], ρ1 [kg/m³]                          (F8)
    Kv = 0.865 Cv                                                (F9)

with the piping geometry factor Fp and xTP of attached reducers
(:func:`piping_geometry_factor`).  The Reynolds-number factor of laminar
flow (small valves at low flow) is not modelled: turbulent flow is assumed.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from eosfill.constants import R
from eosfill.errors import CONVERGED, ConvergenceError, InputError

# IEC 60534-2-1 numerical constants (Table 1 of the standard; values as
# reproduced in ISA-75.01.01-2007 Table 1, from memory; checked in the tests
# against fluids.control_valve, which implements the same standard)
N6_KV = 3.16  # W [kg/h], P1 [kPa], rho1 [kg/m3], Kv [m3/h] (2.73 is the Cv value)
N2_KV = 1.60e-3  # d [mm], Kv
N5_KV = 1.80e-3  # d [mm], Kv
KV_PER_CV = 0.865  # Kv = 0.865 Cv (F9)


def _positive(name, value, allowed="a number > 0"):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(name, value, allowed) from None
    if not np.isfinite(v) or v <= 0.0:
        raise InputError(name, value, allowed)
    return v


# --------------------------------------------------------------------------
# fast explicit properties at (T, v) for one composition
# --------------------------------------------------------------------------
class TVKernel:
    """Single-phase u, h, s, P, cv and P derivatives at (T, v) for one composition.

    A thin holder of one composition around the compiled kernels
    :func:`eosfill.model.properties.props_Tv_one` (C1-C4, C7-C11 of
    :mod:`eosfill.model.cubic`, Poling Cp° held constant outside its range)
    and the one-state solves on them; a scalar and an array call run the
    same compiled code (checked in ``tests/test_flow.py``, ``tests/test_kernels.py``).

    Parameters
    ----------
    fluid : Fluid
    x : array_like, shape (nc,), optional
        Mole fractions (default: the fluid's).
    """

    def __init__(self, fluid, x=None):
        from eosfill.model import properties

        p = fluid.params
        x = np.array(fluid.mole_fractions if x is None else x, dtype=float)
        self.fluid = fluid
        self.x = x
        self.model = p.model
        self.b = float(x @ p.b)
        self.c_shift = float(x @ fluid.volume_shift)
        self.molar_mass = float(x @ fluid.molar_masses)
        self._kp = properties
        self._m = p.kernel_model
        self._ig = fluid.kernel_ideal_gas

    _KEYS = ("P", "u", "h", "s", "cv", "dPdT", "dPdv", "v")   # the first columns of a (T, v) row

    def _row(self, row):
        return dict(zip(self._KEYS, row.tolist()))

    def __call__(self, T, v_eos):
        """Properties at T [K] and the model's molar volume v_eos [m³/mol].

        Returns a dict: P [Pa], u, h [J/mol], s [J/(mol K)], cv [J/(mol K)],
        dPdT [Pa/K], dPdv [Pa mol/m³], v (shifted) [m³/mol].
        """
        kp = self._kp
        if (isinstance(T, float) or np.ndim(T) == 0) and (isinstance(v_eos, float) or np.ndim(v_eos) == 0):
            return self._row(kp.props_Tv_entry(float(T), float(v_eos), self.x, self._m, self._ig))
        rows = kp.props_Tv_rows(self._m, self._ig, T, v_eos, self.x)
        return {k: rows[..., kp.TV_NAMES.index(k)] for k in ("P", "u", "h", "s", "cv", "dPdT", "dPdv", "v")}

    def T_from_uv(self, u, v_eos, T_guess, tol=1e-11, maxiter=50):
        """Single-phase T with u(T, v) = u: Newton on T (∂u/∂T)_v = cv, warm-started
        (compiled: :func:`eosfill.model.properties.T_from_uv_one`).

        Raises ConvergenceError if it does not converge (e.g. cv ≤ 0 where the
        cubic's single-phase branch is mechanically unstable).
        """
        T, status, row = self._kp.T_from_uv_entry(float(u), float(v_eos), float(T_guess), self.x, self._m,
                                                   self._ig, float(tol), int(maxiter))
        if status != CONVERGED:
            raise ConvergenceError("u-v Newton (single phase)", "no convergence",
                                   dict(T=T, u=u, v_eos=float(v_eos)))
        return T, self._row(row)

    def v_from_TP(self, T, P, v_guess, tol=1e-12, maxiter=50):
        """Single-phase v_eos with P(T, v) = P on the branch of v_guess (Newton in ln v;
        compiled: :func:`eosfill.model.properties.v_from_TP_one`)."""
        v, status, row = self._kp.v_from_TP_entry(float(T), float(P), float(v_guess), self.x, self._m,
                                                   self._ig, float(tol), int(maxiter))
        if status != CONVERGED:
            raise ConvergenceError("T-P volume Newton", "no convergence", dict(T=T, P=P, v=v))
        return v, self._row(row)


def gas_state_TP(fluid, T, P, x=None):
    """Stable single-phase v_eos and properties at (T, P) with the kernel (start point of
    :meth:`TVKernel.v_from_TP` from the cubic's lowest-Gibbs root)."""
    from eosfill.model import properties as kp

    x = fluid.mole_fractions if x is None else np.asarray(x, dtype=float)
    k = TVKernel(fluid, x)
    v_eos = float(kp.props_TP_rows(k._m, k._ig, T, P, k.x)[..., kp.TP_V_EOS])
    return v_eos, k(T, v_eos), k


# --------------------------------------------------------------------------
# ideal-gas closed forms (F4)
# --------------------------------------------------------------------------
def ideal_gas_critical_ratio(gamma):
    """P*/P0 of an ideal gas with constant γ (F4c)."""
    g = np.asarray(gamma, dtype=float)
    return (2.0 / (g + 1.0)) ** (g / (g - 1.0))


def ideal_gas_mass_flux(P0, T0, P, gamma, M):
    """Isentropic mass flux of an ideal gas with constant γ [kg/(m² s)] (F4a/F4b).

    Parameters
    ----------
    P0 : upstream stagnation pressure [Pa]
    T0 : upstream stagnation temperature [K]
    P : downstream (back) pressure [Pa]; below the critical ratio the flow is choked
    gamma : Cp/Cv [-]
    M : molar mass [kg/mol]
    """
    P0, T0, P, g, M = (np.asarray(a, dtype=float) for a in (P0, T0, P, gamma, M))
    r = np.maximum(P / P0, ideal_gas_critical_ratio(g))
    return P0 * np.sqrt(2.0 * g * M / ((g - 1.0) * R * T0) * (r ** (2.0 / g) - r ** ((g + 1.0) / g)))


# --------------------------------------------------------------------------
# real-gas isentropic nozzle (F1-F3)
# --------------------------------------------------------------------------
class IsentropicNozzle:
    """Mass flux of a real-gas isentropic expansion from one upstream state (F1-F3).

    Single-phase path: the throat of a choked nozzle is where the mass flux
    G is largest along the isentrope, which for one phase is where the
    velocity equals the speed of sound (dG/dP = 0 ⇔ w = c):

        2 (h0 - h)/M = c²,  c² = -(v²/M) (∂P/∂v)_s,
        (∂P/∂v)_s = (∂P/∂v)_T - T (∂P/∂T)_v² / cv                  (F3a)

    solved for the expansion ln q = ln(v/v0) by the secant method, each
    point of the isentrope found by Newton on T at fixed v,
    (∂s/∂T)_v = cv/T.  A sub-critical back pressure is met by Newton on
    ln q with dP/d ln q = v (∂P/∂v)_s.  The tests check G* against a brute-
    force maximum of G over equilibrium (P, s) states of the state solver.

    Two-phase path (homogeneous equilibrium): when the upstream state is
    two-phase, or a pure fluid's throat lies inside the saturation dome, G
    is maximised over equilibrium states ``fluid.state(P=..., s=s0)`` on a
    grid in P refined twice (a parabola through the best three points).

    Parameters
    ----------
    fluid : Fluid
    T0 : upstream temperature [K];  v0_eos : upstream model molar volume [m³/mol]
    x : upstream mole fractions (default the fluid's);  kernel : TVKernel to reuse

    Attributes
    ----------
    G_star [kg/(m² s)], P_star [Pa], T_star [K] : the choked throat
    two_phase : whether the equilibrium path was used
    """

    def __init__(self, fluid, T0, v0_eos, x=None, kernel=None, check_phase=True, hint=None):
        self.fluid = fluid
        self.hint = hint  # ln(P*/P0) of a nearby two-phase throat, or None
        k = kernel if kernel is not None else TVKernel(fluid, x)
        self.kernel = k
        self.M = k.molar_mass
        up = k(float(T0), float(v0_eos))
        self.T0, self.v0 = float(T0), float(v0_eos)
        self.P0, self.h0, self.s0 = float(up["P"]), float(up["h"]), float(up["s"])
        if not self.P0 > 0.0:
            raise InputError("upstream state", dict(T=T0, v=v0_eos), "a state with P > 0")
        self.two_phase = False
        self._last = (0.0, self.T0)
        self._sonic(up)
        if check_phase and self._throat_two_phase():
            self.two_phase = True
            self._equilibrium_path(self._fluid_x())

    @classmethod
    def from_equilibrium(cls, fluid, P0, h0, s0, x=None, hint=None):
        """A nozzle fed by an equilibrium (possibly two-phase) upstream state (P0, h0, s0)."""
        self = object.__new__(cls)
        self.fluid = fluid
        self.hint = hint
        self.kernel = None
        xx = fluid.mole_fractions if x is None else np.asarray(x, dtype=float)
        self.M = float(xx @ fluid.molar_masses)
        self.P0, self.h0, self.s0 = float(P0), float(h0), float(s0)
        self.two_phase = True
        self._equilibrium_path(fluid if x is None else fluid.with_composition(xx))
        return self

    def _fluid_x(self):
        fl = self.fluid
        x = self.kernel.x
        return fl if np.array_equal(x, fl.mole_fractions) else fl.with_composition(x)

    # -- single phase ------------------------------------------------------
    def _point(self, lnq, T_guess):
        """T and properties on s = s0 at v = v0 e^lnq (Newton on T, (∂s/∂T)_v = cv/T)."""
        k = self.kernel
        v = self.v0 * math.exp(lnq)
        T = T_guess
        for _ in range(40):
            pr = k(T, v)
            dT = (pr["s"] - self.s0) * T / pr["cv"]
            dT = max(min(dT, 0.5 * T), -0.5 * T)
            T -= dT
            if abs(dT) <= 1e-13 * T:
                return T, k(T, v)
        raise ConvergenceError("isentrope point (T at fixed v and s)", "no convergence",
                               dict(T0=self.T0, v0=self.v0, lnq=lnq, T=T))

    def _dPdv_s(self, pr, T):
        return pr["dPdv"] - T * pr["dPdT"] ** 2 / pr["cv"]   # (F3a)

    def _G(self, pr):
        """(F1-F2) G = sqrt(2 M (h0 - h)) / v."""
        return math.sqrt(2.0 * self.M * max(self.h0 - pr["h"], 0.0)) / pr["v"]

    def _sonic(self, up):
        """Throat of the choked nozzle: 2 (h0 - h) M = -v_eos² (∂P/∂v)_s M² / M² (F3a)."""
        cv = up["cv"]
        cp = cv - self.T0 * up["dPdT"] ** 2 / up["dPdv"]
        g = max(cp / cv, 1.0 + 1e-6)
        lnq = math.log(((g + 1.0) / 2.0) ** (1.0 / (g - 1.0)))  # ideal-gas throat (F4c)
        T = self.T0 * ((2.0 / (g + 1.0)))

        def f(lnq, T):
            T, pr = self._point(lnq, T)
            ve = self.v0 * math.exp(lnq)
            c2v = -ve**2 * self._dPdv_s(pr, T)   # M c²; per mole: c² = -(v²/M)(∂P/∂v)_s
            return (2.0 * (self.h0 - pr["h"]) - c2v) / (R * self.T0), T, pr

        f0, T0_, pr0 = f(lnq, T)
        lnq1 = lnq * 1.05
        f1, T1, pr1 = f(lnq1, T0_)
        for _ in range(60):
            if f1 == f0:
                break
            new = lnq1 - f1 * (lnq1 - lnq) / (f1 - f0)
            new = min(max(new, 0.25 * lnq1), 4.0 * lnq1 + 1e-3)
            lnq, f0, T0_ = lnq1, f1, T1
            lnq1 = new
            f1, T1, pr1 = f(lnq1, T0_)
            if abs(lnq1 - lnq) < 1e-12 * max(lnq1, 1e-3) or abs(f1) < 1e-14:
                break
        else:
            raise ConvergenceError("choked throat (sonic condition)", "no convergence",
                                   dict(T0=self.T0, P0=self.P0, lnq=lnq1), f1)
        self.lnq_star, self.T_star = lnq1, T1
        self.P_star = float(pr1["P"])
        self.G_star = self._G(pr1)
        self.v_star = float(pr1["v"])

    def _throat_two_phase(self):
        """Is the throat state inside the two-phase region?  Pure fluids below Tc:
        P* above the model's vapour pressure; mixtures: tangent-plane test
        (Michelsen 1982) at the throat when T* < 1.1 max Tc of the components
        present (the guard is common practice, no source)."""
        fl = self.fluid
        x = self.kernel.x
        present = x > 0
        if self.T_star >= 1.1 * float(np.max(fl.Tc[present])):
            return False
        from eosfill.equilibrium import solvers as equilibrium

        if fl.is_pure:
            if self.T_star >= fl.Tc[0]:
                return False
            sat = equilibrium.saturation_pressure(np.array([self.T_star]), fl.params, raise_on_fail=False)
            return bool(sat["status"][0] == equilibrium.CONVERGED and self.P_star > sat["P"][0])
        unstable, _, _ = equilibrium.stability_test(np.array([self.T_star]), np.array([self.P_star]),
                                                    x[None, :], fl.params)
        return bool(unstable[0])

    def _subcritical(self, P_back):
        """G at a back pressure above P*: Newton on ln q, dP/dln q = v (∂P/∂v)_s."""
        lnq, T = self._last
        if not (0.0 <= lnq <= self.lnq_star):
            lnq, T = 0.5 * self.lnq_star, self.T0
        lo, hi = 0.0, self.lnq_star
        for _ in range(60):
            T, pr = self._point(lnq, T)
            f = pr["P"] - P_back
            if f > 0:
                lo = lnq
            else:
                hi = lnq
            ve = self.v0 * math.exp(lnq)
            slope = ve * self._dPdv_s(pr, T)
            new = lnq - f / slope
            if not (lo < new < hi):
                new = 0.5 * (lo + hi)
            if abs(new - lnq) < 1e-13 or abs(f) < 1e-12 * P_back:
                lnq = new
                break
            lnq = new
        T, pr = self._point(lnq, T)
        self._last = (lnq, T)
        return self._G(pr)

    def tabulate(self, points=48):
        """Replace the sub-critical Newton by a table (cubic spline of G² against P,
        nodes denser towards P*) for a nozzle used many times; exact at the nodes,
        within ~1e-7 relative between them for the test cases."""
        if self.two_phase or getattr(self, "_spline", None) is not None:
            return self
        from scipy.interpolate import CubicSpline

        s = np.sin(np.linspace(0.0, 0.5 * np.pi, points)) ** 2
        P_nodes = self.P_star + (self.P0 - self.P_star) * s
        G2 = np.empty(points)
        G2[0], G2[-1] = self.G_star**2, 0.0
        for i in range(1, points - 1):
            G2[i] = self._subcritical(float(P_nodes[i])) ** 2
        self._spline = CubicSpline(P_nodes, G2)
        return self

    # -- two phase (homogeneous equilibrium) ----------------------------------
    def _equilibrium_path(self, f):
        def G_of(P):
            st = f.state(P=P, s=np.full(P.shape, self.s0))
            return (np.sqrt(2.0 * self.M * np.maximum(self.h0 - np.asarray(st.h), 0.0)) / np.asarray(st.v),
                    np.asarray(st.T))

        lnP = None
        hint = getattr(self, "hint", None)
        if hint is not None:
            # a nearby state's throat (ln P*/P0): search around it first
            lnP = np.log(self.P0) + hint + np.linspace(-0.25, 0.25, 9)
            lnP = lnP[lnP < np.log(self.P0)][::-1]
            G, T = G_of(np.exp(lnP))
            i = int(np.argmax(G))
            if lnP.size < 5 or i in (0, lnP.size - 1):
                lnP = None  # the maximum is not inside: search the whole path
            else:
                h = lnP[0] - lnP[1]
        if lnP is None:
            lnP = np.log(self.P0) - np.linspace(0.0, 3.0, 31)[1:]
            G, T = G_of(np.exp(lnP))
            i = int(np.argmax(G))
            h = lnP[0] - lnP[1]
        for _ in range(2):
            lnP = np.linspace(lnP[i] - h, lnP[i] + h, 9)
            lnP = lnP[lnP < np.log(self.P0)]
            G, T = G_of(np.exp(lnP))
            i = int(np.clip(np.argmax(G), 1, lnP.size - 2))
            h = lnP[1] - lnP[0]
        g0, g1, g2 = G[i - 1], G[i], G[i + 1]
        den = g0 - 2.0 * g1 + g2
        shift = 0.5 * h * (g0 - g2) / den if den < 0 else 0.0
        Pst = np.exp(np.array([lnP[i] + shift]))
        Gs, Ts = G_of(Pst)
        self.P_star, self.G_star, self.T_star = float(Pst[0]), float(Gs[0]), float(Ts[0])
        self._G_of = G_of  # the sub-critical table is built only when a back pressure needs it

    def _subcritical_spline(self):
        """Sub-critical branch of the equilibrium path: G² against P on a table
        from P* to P0 (cubic spline), built on first use."""
        if getattr(self, "_spline", None) is None:
            from scipy.interpolate import CubicSpline

            P_tab = self.P_star + (self.P0 - self.P_star) * np.sin(np.linspace(0.0, 0.5 * np.pi, 25)[1:-1]) ** 2
            G_tab, _ = self._G_of(P_tab)
            self._spline = CubicSpline(np.concatenate([[self.P_star], P_tab, [self.P0]]),
                                       np.concatenate([[self.G_star**2], G_tab**2, [0.0]]))
        return self._spline

    # -- public ------------------------------------------------------------
    def mass_flux(self, P_back):
        """G [kg/(m² s)] at a back pressure P_back [Pa] (F3): G* when P_back ≤ P*, 0 above P0."""
        P_back = float(P_back)
        if P_back <= self.P_star:
            return self.G_star
        if P_back >= self.P0:
            return 0.0
        if getattr(self, "_G_of", None) is not None:  # equilibrium (two-phase) path
            return math.sqrt(max(float(self._subcritical_spline()(P_back)), 0.0))
        if getattr(self, "_spline", None) is not None:  # single phase, tabulated
            return math.sqrt(max(float(self._spline(P_back)), 0.0))
        return self._subcritical(P_back)

    def choked(self, P_back):
        return float(P_back) <= self.P_star


def isentropic_mass_flux(fluid, T0, P0, P_back, x=None):
    """Real-gas isentropic mass flux [kg/(m² s)] from (T0, P0) to P_back (F1-F3).

    A convenience wrapper: the upstream state is the stable single-phase root
    of the cubic at (T0, P0).  Returns (G, nozzle).
    """
    T0 = _positive("T0", T0, "a temperature > 0 K")
    P0 = _positive("P0", P0, "a pressure > 0 Pa")
    if np.any(np.asarray(P_back) < 0):
        raise InputError("P_back", P_back, "a pressure ≥ 0 Pa")
    v0, _, k = gas_state_TP(fluid, T0, P0, x)
    noz = IsentropicNozzle(fluid, T0, v0, kernel=k)
    return noz.mass_flux(P_back), noz


# --------------------------------------------------------------------------
# IEC 60534-2-1 (F5-F9)
# --------------------------------------------------------------------------
def piping_geometry_factor(C, d, D1=None, D2=None):
    """Fp and the loss coefficient ζ1 + ζB1 of reducers around a valve (IEC 60534-2-1).

        ζ1 = 0.5 (1 - (d/D1)²)²,  ζ2 = 1.0 (1 - (d/D2)²)²
        ζB = 1 - (d/D)⁴,  Σζ = ζ1 + ζ2 + ζB1 - ζB2
        Fp = [1 + Σζ/N2 (C/d²)²]^(-1/2)        (d in mm, C = Kv)

    Parameters
    ----------
    C : Kv [m³/h];  d : valve size [m];  D1, D2 : upstream and downstream pipe [m]
        (None: no reducer on that side).

    Returns
    -------
    Fp [-], zeta_i = ζ1 + ζB1 [-]
    """
    dmm = d * 1000.0
    z1 = zB1 = z2 = zB2 = 0.0
    if D1 is not None:
        z1 = 0.5 * (1.0 - (d / D1) ** 2) ** 2
        zB1 = 1.0 - (d / D1) ** 4
    if D2 is not None:
        z2 = 1.0 * (1.0 - (d / D2) ** 2) ** 2
        zB2 = 1.0 - (d / D2) ** 4
    zsum = z1 + z2 + zB1 - zB2
    Fp = (1.0 + zsum / N2_KV * (C / dmm**2) ** 2) ** -0.5
    return Fp, z1 + zB1


def iec_gas_mass_flow(Kv, xT, P1, P2, rho1, gamma, Fp=1.0, xTP=None):
    """Mass flow [kg/s] through a control valve, IEC 60534-2-1 turbulent gas flow (F5-F8).

    Parameters
    ----------
    Kv : flow coefficient [m³/h]
    xT : pressure-differential ratio factor at choked flow [-]
    P1, P2 : upstream and downstream absolute pressure [Pa]
    rho1 : upstream density [kg/m³]
    gamma : specific-heat ratio of the gas at the inlet [-]
    Fp : piping geometry factor [-] (1 without reducers)
    xTP : xT with attached fittings (default xT)

    Returns
    -------
    W [kg/s] (0 when P2 ≥ P1), choked flag
    """
    xt = xT if xTP is None else xTP
    P1 = np.asarray(P1, dtype=float)
    x = np.clip((P1 - np.asarray(P2, dtype=float)) / P1, 0.0, None)   # (F5)
    Fg = np.asarray(gamma, dtype=float) / 1.40
    x_ch = Fg * xt
    choked = x >= x_ch                                              # (F7)
    xe = np.minimum(x, x_ch)
    Y = 1.0 - xe / (3.0 * x_ch)                                     # (F6)
    W_kg_h = N6_KV * Fp * Kv * Y * np.sqrt(xe * (P1 / 1000.0) * rho1)  # (F8)
    W = W_kg_h / 3600.0
    return (W.item() if np.ndim(W) == 0 else W), (bool(choked) if np.ndim(choked) == 0 else choked)


def iec_xTP(xT, Fp, C, d, zeta_i):
    """xTP of a valve with reducers: (xT/Fp²) / (1 + xT ζi/N5 (C/d²)²) (IEC 60534-2-1; d in mm)."""
    dmm = d * 1000.0
    return (xT / Fp**2) / (1.0 + xT * zeta_i / N5_KV * (C / dmm**2) ** 2)


# --------------------------------------------------------------------------
# restrictions used by the time integration
# --------------------------------------------------------------------------
@dataclass
class Orifice:
    """An orifice or nozzle: ṁ = C_d · (π d²/4) · G (F1-F3).

    Parameters
    ----------
    diameter : bore [m], > 0
    discharge_coefficient : C_d in (0, 1]
    """

    diameter: float
    discharge_coefficient: float

    def __post_init__(self):
        self.diameter = _positive("orifice diameter", self.diameter, "a bore > 0 m")
        cd = self.discharge_coefficient
        try:
            cd = float(cd)
        except (TypeError, ValueError):
            raise InputError("discharge_coefficient", cd, "a number in (0, 1]") from None
        if not (0.0 < cd <= 1.0):
            raise InputError("discharge_coefficient", cd, "a number in (0, 1]")
        self.discharge_coefficient = cd

    @property
    def area(self):
        return np.pi * self.diameter**2 / 4.0

    def mass_flow(self, nozzle: IsentropicNozzle, P_down):
        """[kg/s] from an :class:`IsentropicNozzle` built on the upstream state."""
        return self.discharge_coefficient * self.area * nozzle.mass_flux(P_down)

    def describe(self):
        return f"orifice d = {self.diameter * 1e3:.4g} mm, Cd = {self.discharge_coefficient:.4g}"


@dataclass
class Valve:
    """A control valve sized by IEC 60534-2-1 (F5-F9).

    Give ``Kv`` [m³/h] or ``Cv`` [US gal/min]; ``xT``; optionally the valve
    size ``d`` and pipe sizes ``D1``, ``D2`` [m] for the piping geometry
    factor.  ``FL`` is kept for the record (liquid flow only).
    """

    xT: float
    Kv: float | None = None
    Cv: float | None = None
    FL: float | None = None
    d: float | None = None
    D1: float | None = None
    D2: float | None = None

    def __post_init__(self):
        if (self.Kv is None) == (self.Cv is None):
            raise InputError("Kv/Cv", (self.Kv, self.Cv), "exactly one of Kv [m3/h] or Cv [US gal/min], > 0")
        if self.Kv is None:
            self.Kv = KV_PER_CV * _positive("Cv", self.Cv)
        else:
            self.Kv = _positive("Kv", self.Kv)
        try:
            xT = float(self.xT)
        except (TypeError, ValueError):
            raise InputError("xT", self.xT, "a number in (0, 1]") from None
        if not (0.0 < xT <= 1.0):
            raise InputError("xT", self.xT, "a number in (0, 1]")
        self.xT = xT
        self.Fp, self.xTP = 1.0, xT
        if self.d is not None:
            d = _positive("valve size d", self.d, "a size > 0 m")
            Fp, zi = piping_geometry_factor(self.Kv, d, self.D1, self.D2)
            self.Fp, self.xTP = Fp, iec_xTP(xT, Fp, self.Kv, d, zi)

    def mass_flow(self, P1, P2, rho1, gamma):
        W, _ = iec_gas_mass_flow(self.Kv, self.xT, P1, P2, rho1, gamma, Fp=self.Fp, xTP=self.xTP)
        return W

    def describe(self):
        return f"valve Kv = {self.Kv:.4g} m3/h, xT = {self.xT:.4g}"


@dataclass
class MassFlow:
    """A prescribed mass flow [kg/s], ≥ 0 (into the vessel in a fill, out in a vent)."""

    mass_flow: float

    def __post_init__(self):
        try:
            m = float(self.mass_flow)
        except (TypeError, ValueError):
            raise InputError("mass_flow", self.mass_flow, "a mass flow ≥ 0 kg/s") from None
        if not np.isfinite(m) or m < 0.0:
            raise InputError("mass_flow", self.mass_flow, "a mass flow ≥ 0 kg/s")
        self.mass_flow = m

    def describe(self):
        return f"prescribed mass flow {self.mass_flow:.4g} kg/s"


@dataclass
class PressureRamp:
    """A prescribed rate of vessel pressure change [Pa/s], > 0 (rise in a fill, fall in a vent)."""

    rate: float

    def __post_init__(self):
        self.rate = _positive("pressure ramp rate", self.rate, "a rate > 0 Pa/s")

    def describe(self):
        return f"pressure ramp {self.rate * 60 / 1e6:.4g} MPa/min"
