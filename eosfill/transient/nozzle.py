"""Real-gas isentropic nozzle with choking (F1-F3) and its ideal-gas closed forms (F4).

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
ratio), so the real-gas choking is exact for the model.  The isentrope is
made of stable (equilibrium) states: where it enters the saturation dome
the flow is homogeneous-equilibrium two-phase flow (HEM).  See e.g.
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

Neighbours: gas states in :mod:`~eosfill.transient.gas`, the tabulated equilibrium
isentropes in :mod:`~eosfill.transient.isentropes`; the map is
:mod:`~eosfill.transient.flow`.
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.constants import R
from eosfill.errors import ConvergenceError, InputError
from eosfill.transient.gas import TVKernel, _positive, gas_state_TP
from eosfill.transient.isentropes import EquilibriumIsentropes


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

    Two-phase path (homogeneous equilibrium, HEM): the throat stays on
    stable states.  When the upstream state is two-phase, or the single-phase
    expansion leaves the stable region before its sonic point (a liquid or
    dense upstream state whose single-phase branch runs into metastable
    liquid, even to negative pressure; see :meth:`_throat_two_phase`), G is
    maximised along the equilibrium isentrope through the dome: the states
    ``fluid.state(P=..., s=s0)`` tabulated once (:class:`EquilibriumIsentropes`,
    shared by the nozzles of a run) and the maximum located continuously on
    the smooth interpolant.  The flux depends on the upstream state and the
    back pressure only, not on earlier calls.

    Parameters
    ----------
    fluid : Fluid
    T0 : upstream temperature [K];  v0_eos : upstream model molar volume [m³/mol]
    x : upstream mole fractions (default the fluid's);  kernel : TVKernel to reuse
    check_phase : test whether the throat leaves the stable single-phase region
    equilibrium : go straight to the homogeneous-equilibrium path (throat known two-phase)
    hint : ignored (kept for compatibility)
    isentropes : EquilibriumIsentropes of the same composition to share, or None

    Attributes
    ----------
    G_star [kg/(m² s)], P_star [Pa], T_star [K] : the choked throat
    two_phase : whether the equilibrium path was used
    """

    def __init__(self, fluid, T0, v0_eos, x=None, kernel=None, check_phase=True, hint=None, isentropes=None,
                 equilibrium=False):
        self.fluid = fluid
        self.hint = hint  # accepted for compatibility; the throat no longer depends on a previous one
        k = kernel if kernel is not None else TVKernel(fluid, x)
        self.kernel = k
        self.M = k.molar_mass
        up = k(float(T0), float(v0_eos))
        self.T0, self.v0 = float(T0), float(v0_eos)
        self.P0, self.h0, self.s0 = float(up["P"]), float(up["h"]), float(up["s"])
        if not self.P0 > 0.0:
            raise InputError("upstream state", dict(T=T0, v=v0_eos), "a state with P > 0")
        self.two_phase = False
        self._table = None
        if equilibrium:   # the caller knows the throat is two-phase: straight to the HEM path
            self.two_phase = True
            self._equilibrium_path(self._fluid_x(), isentropes)
            return
        try:
            self._sonic(up)
            leaves = check_phase and self._throat_two_phase()
        except ConvergenceError:
            # the single-phase branch has no sonic point (it runs into the spinodal):
            # the expansion leaves the stable single-phase region first
            leaves = True
        if leaves:
            self.two_phase = True
            self._equilibrium_path(self._fluid_x(), isentropes)

    @classmethod
    def from_equilibrium(cls, fluid, P0, h0, s0, x=None, hint=None, isentropes=None):
        """A nozzle fed by an equilibrium (possibly two-phase) upstream state (P0, h0, s0)."""
        self = object.__new__(cls)
        self.fluid = fluid
        self.hint = hint
        self.kernel = None
        xx = fluid.mole_fractions if x is None else np.asarray(x, dtype=float)
        self.M = float(xx @ fluid.molar_masses)
        self.P0, self.h0, self.s0 = float(P0), float(h0), float(s0)
        self.two_phase = True
        self._table = None
        self._equilibrium_path(fluid if x is None else fluid.with_composition(xx), isentropes)
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
        """Does the single-phase expansion leave the stable single-phase region before its
        sonic point?  Yes when the throat pressure is not positive (a metastable liquid
        stretched into tension); pure fluids below Tc: the throat's volume lies inside the
        model's saturation dome, v_L(T*) < v* < v_V(T*) (a metastable liquid or a
        supersaturated vapour); mixtures: the throat's volume must be the cubic's stable (lowest Gibbs energy) root at
        (T*, P*), and that root stable in the tangent-plane test (Michelsen 1982), when
        T* < 1.1 max Tc of the components present (the guard is common practice, no
        source)."""
        if not self.P_star > 0.0:
            return True
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
            if sat["status"][0] != equilibrium.CONVERGED:
                return False
            v_eos = self.v_star + self.kernel.c_shift
            return bool(sat["v_L"][0] < v_eos < sat["v_V"][0])
        # the throat state must be the cubic's stable root at (T*, P*) (not a metastable
        # liquid-like root where the gas root has the lower Gibbs energy) ...
        from eosfill.model.cubic import solve_volume_from_TP

        v_stable = float(solve_volume_from_TP(self.T_star, self.P_star, x, fl.params, which="stable")["v"])
        if abs(v_stable / (self.v_star + self.kernel.c_shift) - 1.0) > 1e-6:
            return True
        # ... and that root stable against a split (tangent-plane test)
        unstable, _, _ = equilibrium.stability_test(np.array([self.T_star]), np.array([self.P_star]),
                                                    x[None, :], fl.params)
        return bool(unstable[0])

    def _subcritical(self, P_back):
        """G at a back pressure above P*: Newton on ln q, dP/dln q = v (∂P/∂v)_s."""
        # start between the inlet and the throat, by the fraction of ln P covered
        # (no warm start from an earlier call: the result depends on P_back only)
        frac = math.log(self.P0 / P_back) / math.log(self.P0 / self.P_star)
        lnq, T = frac * self.lnq_star, self.T0 + frac * (self.T_star - self.T0)
        lo, hi = 0.0, self.lnq_star
        for _ in range(60):
            T, pr = self._point(lnq, T)
            f = pr["P"] - P_back
            if abs(f) < 1e-12 * P_back:
                break
            if f > 0:
                lo = lnq
            else:
                hi = lnq
            ve = self.v0 * math.exp(lnq)
            slope = ve * self._dPdv_s(pr, T)
            new = lnq - f / slope
            if not (lo < new < hi):
                new = 0.5 * (lo + hi)
            if abs(new - lnq) < 1e-13:
                lnq = new
                break
            lnq = new
        T, pr = self._point(lnq, T)
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
    def _equilibrium_path(self, f, isentropes=None):
        """Throat on the equilibrium isentrope through the dome (HEM): the states of
        an :class:`EquilibriumIsentropes` table (one per nozzle unless a shared one is
        given), G maximised continuously on its smooth interpolant."""
        if isentropes is None:
            isentropes = EquilibriumIsentropes(f)
        self._table = isentropes
        th = isentropes.throat(self.P0, self.s0)
        self.P_star, self.G_star, self.T_star = th.P, th.G, th.T
        self.lnq_star = None
        self.v_star = th.v

    # -- public ------------------------------------------------------------
    def mass_flux(self, P_back):
        """G [kg/(m² s)] at a back pressure P_back [Pa] (F3): G* when P_back ≤ P*, 0 above P0."""
        P_back = float(P_back)
        if P_back <= self.P_star:
            return self.G_star
        if P_back >= self.P0:
            return 0.0
        if self._table is not None:  # equilibrium (two-phase) path
            return self._table.mass_flux(self.P0, self.s0, P_back)
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

