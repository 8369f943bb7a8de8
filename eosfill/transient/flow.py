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
from eosfill.errors import CONVERGED, ConvergenceError, InputError, worst_status

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


# --------------------------------------------------------------------------
# the equilibrium isentrope, tabulated (homogeneous equilibrium, HEM)
# --------------------------------------------------------------------------
@dataclass
class Throat:
    """The choked throat: P [Pa], G [kg/(m² s)], T [K], v [m³/mol]."""

    P: float
    G: float
    T: float
    v: float


def _hermite(x, xs, y, mL, mR):
    """Piecewise cubic Hermite interpolant on the nodes xs (values y; on interval i the
    slopes mL[i] at xs[i] and mR[i] at xs[i+1], so a kink can sit on a node); exact at
    the nodes (e.g. de Boor, A Practical Guide to Splines, 1978, ch. IV)."""
    x = np.asarray(x, dtype=float)
    i = np.clip(np.searchsorted(xs, x) - 1, 0, xs.size - 2)
    d = xs[i + 1] - xs[i]
    t = (x - xs[i]) / d
    h00 = (1.0 + 2.0 * t) * (1.0 - t) ** 2
    h10 = t * (1.0 - t) ** 2
    h01 = t * t * (3.0 - 2.0 * t)
    h11 = t * t * (t - 1.0)
    return h00 * y[i] + h10 * d * mL[i] + h01 * y[i + 1] + h11 * d * mR[i]


class _IsentropeLevel:
    """Equilibrium states ``fluid.state(P=..., s=s)`` at one entropy s on the lattice
    ln P_k = k Δ (the same nodes whatever range is asked for, so extending the range
    never moves a node), plus a node where the isentrope crosses the phase boundary
    (bubble or dew point; located between the lattice nodes by extrapolating the
    vapour fraction of the two-phase states to 0 or 1, safeguarded by bisection).

    h(ln P) is a cubic Hermite interpolant with the exact slope dh/d ln P = P v
    ((∂h/∂P)_s = v, Gibbs); ln v(ln P) and T(ln P) are monotone piecewise-cubic
    (PCHIP, Fritsch & Carlson 1980) interpolants built separately on each side of
    the phase boundary, so the kink of v there (where G* of a flashing liquid
    often sits) is kept, not smoothed over."""

    def __init__(self, fluid, s, dlnP):
        self.f, self.s, self.d = fluid, float(s), float(dlnP)
        self.nodes = {}   # lattice index k -> (h, ln v, T, vapour fraction, two-phase)
        self.kinks = {}   # lattice interval k (between k and k+1) -> (ln P, h, ln v, T)
        self.k_lo = self.k_hi = None
        self.k_floor = None   # lowest lattice index with an equilibrium state
        self.status = CONVERGED   # worst solver status of the states tabulated

    # when the range must grow, grow it by this much more in ln P (fewer, larger batches
    # as a vent's pressure falls)
    MARGIN_BELOW, MARGIN_ABOVE = 1.0, 0.2

    def cover(self, lnP_lo, lnP_hi):
        """Make sure the nodes span [lnP_lo, lnP_hi] (one batch for the missing ones)."""
        k_lo = int(math.floor(lnP_lo / self.d)) - 1
        k_hi = int(math.ceil(lnP_hi / self.d)) + 1
        if self.k_floor is not None:
            k_lo = max(k_lo, self.k_floor)
        if self.k_lo is not None and k_lo >= self.k_lo and k_hi <= self.k_hi:
            return
        if self.k_lo is not None:
            if k_lo < self.k_lo:
                k_lo = int(math.floor((lnP_lo - self.MARGIN_BELOW) / self.d))
            if k_hi > self.k_hi:
                k_hi = int(math.ceil((lnP_hi + self.MARGIN_ABOVE) / self.d))
            k_lo, k_hi = min(k_lo, self.k_lo), max(k_hi, self.k_hi)
            if self.k_floor is not None:
                k_lo = max(k_lo, self.k_floor)
        missing = np.array([k for k in range(k_hi, k_lo - 1, -1) if k not in self.nodes], dtype=int)
        for k, row in zip(missing, zip(*self._states(np.exp(missing * self.d)))):
            self.nodes[int(k)] = row
        # the contiguous run of good nodes from the top down
        ks = []
        for k in range(k_hi, k_lo - 1, -1):
            if not np.isfinite(self.nodes[k][0]) or not np.isfinite(self.nodes[k][1]):
                self.k_floor = k + 1
                break
            ks.append(k)
        if len(ks) < 3:
            raise ConvergenceError("equilibrium isentrope", "fewer than three equilibrium states",
                                   dict(s=self.s, P_top=float(np.exp(k_hi * self.d))))
        ks = ks[::-1]
        for k0, k1 in zip(ks[:-1], ks[1:]):
            if self.nodes[k0][4] != self.nodes[k1][4] and k0 not in self.kinks:
                self.kinks[k0] = self._boundary(k0)
        self.k_lo, self.k_hi = ks[0], ks[-1]
        self._build(ks)

    def _build(self, ks):
        from scipy.interpolate import PchipInterpolator

        xs, rows, breaks = [], [], [0]
        for k in ks:
            xs.append(k * self.d)
            rows.append(self.nodes[k][:3])
            kink = self.kinks.get(k)
            if kink is not None and k != ks[-1]:
                if kink[0] - k * self.d < 1e-9:
                    breaks.append(len(xs) - 1)           # the boundary is on the lower node
                elif (k + 1) * self.d - kink[0] < 1e-9:
                    breaks.append(len(xs))               # ... on the upper node
                else:
                    xs.append(kink[0])
                    rows.append(kink[1:])
                    breaks.append(len(xs) - 1)
        xs = np.array(xs)
        h, lnv, T = (np.array(c) for c in zip(*rows))
        breaks.append(xs.size - 1)
        breaks = sorted(set(breaks))
        n = xs.size - 1
        mv_L, mv_R, mT_L, mT_R = (np.empty(n) for _ in range(4))
        for a, b in zip(breaks[:-1], breaks[1:]):
            if b - a < 1:
                continue
            seg = slice(a, b + 1)
            if b - a == 1:
                dv = np.full(2, (lnv[b] - lnv[a]) / (xs[b] - xs[a]))
                dT = np.full(2, (T[b] - T[a]) / (xs[b] - xs[a]))
            else:
                dv = PchipInterpolator(xs[seg], lnv[seg]).derivative()(xs[seg])
                dT = PchipInterpolator(xs[seg], T[seg]).derivative()(xs[seg])
            mv_L[a:b], mv_R[a:b] = dv[:-1], dv[1:]
            mT_L[a:b], mT_R[a:b] = dT[:-1], dT[1:]
        mh = np.exp(xs + lnv)   # dh/d ln P = P v, continuous across the boundary
        self.xs, self.h, self.lnv, self.T = xs, h, lnv, T
        inner = [xs[i] for i in breaks[1:-1]]
        self.kink = max(inner) if inner else None   # ln P where the isentrope first enters or leaves the dome
        self.mh_L, self.mh_R = mh[:-1], mh[1:]
        self.mv_L, self.mv_R, self.mT_L, self.mT_R = mv_L, mv_R, mT_L, mT_R
        self.x0 = float(xs[0])

    def _states(self, P):
        """(h, ln v, T, vapour fraction, two-phase) at the pressures P; NaN rows where
        the model has no equilibrium state (one bad row never discards the others)."""
        from eosfill.errors import EosfillError

        n = np.size(P)
        out = [np.full(n, np.nan) for _ in range(4)] + [np.zeros(n, dtype=bool)]
        if n == 0:
            return out

        def put(idx, st):
            self.status = worst_status(self.status, getattr(st, "status", CONVERGED))
            out[0][idx] = np.asarray(st.h, dtype=float)
            out[1][idx] = np.log(np.asarray(st.v, dtype=float))
            out[2][idx] = np.asarray(st.T, dtype=float)
            out[3][idx] = np.asarray(st.vapor_fraction, dtype=float)
            out[4][idx] = np.asarray(st.phase) == "two-phase"

        try:
            with np.errstate(invalid="ignore", divide="ignore"):
                put(slice(None), self.f.state(P=np.asarray(P, dtype=float), s=np.full(n, self.s)))
        except (EosfillError, FloatingPointError, ValueError):
            for i, p in enumerate(np.atleast_1d(P)):
                try:
                    with np.errstate(invalid="ignore", divide="ignore"):
                        put(i, self.f.state(P=float(p), s=self.s))
                except (EosfillError, FloatingPointError, ValueError):
                    pass
        return out

    def _boundary(self, k0):
        """(ln P, h, ln v, T) where the isentrope crosses the phase boundary between the
        lattice nodes k0 and k0 + 1: secant on the vapour fraction β of the two-phase
        states (β → 0 at a bubble point, 1 at a dew point), kept inside the bracket."""
        a, b = self.nodes[k0], self.nodes[k0 + 1]
        xa, xb = k0 * self.d, (k0 + 1) * self.d
        two, one = ((xa, a), (xb, b)) if a[4] else ((xb, b), (xa, a))
        target = 0.0 if two[1][3] < 0.5 else 1.0
        pts = [(two[0], two[1][3])]
        x_two, x_one, row_one = two[0], one[0], one[1]
        for _ in range(8):
            x_new = 0.5 * (x_two + x_one)
            if len(pts) >= 2 and pts[-1][1] != pts[-2][1]:
                (x1, b1), (x2, b2) = pts[-2], pts[-1]
                guess = x2 + (target - b2) * (x2 - x1) / (b2 - b1)
                lo, hi = sorted((x_two, x_one))
                if lo < guess < hi:
                    # step a little past the prediction so the bracket closes from both sides
                    x_new = guess + 1e-3 * (x_one - x_two)
            r = self._states(np.array([math.exp(x_new)]))
            if not np.isfinite(r[0][0]):
                break
            row = tuple(c[0] for c in r)
            if row[4]:
                x_two = x_new
                pts.append((x_new, row[3]))
            else:
                x_one, row_one = x_new, row
            if abs(x_one - x_two) < 1e-7:
                break
        return (x_one,) + tuple(row_one[:3])

    def props(self, lnP):
        """h [J/mol], v [m³/mol], T [K] at ln P (inside the covered range)."""
        h = _hermite(lnP, self.xs, self.h, self.mh_L, self.mh_R)
        v = np.exp(_hermite(lnP, self.xs, self.lnv, self.mv_L, self.mv_R))
        T = _hermite(lnP, self.xs, self.T, self.mT_L, self.mT_R)
        return h, v, T


class EquilibriumIsentropes:
    """Homogeneous-equilibrium isentropes of one composition, tabulated once and shared.

    A nozzle fed at (P0, s0) expands along s = s0 through stable (equilibrium)
    states, into and through the saturation dome (HEM):

        G(P) = sqrt(2 M (h(P0, s0) − h(P, s0))) / v(P, s0)       (F1-F2 on equilibrium states)

    The states come from tables at the entropy levels s_j = j Δs (each on its
    own ln P lattice, see :class:`_IsentropeLevel`), blended linearly in s
    between the two levels around s0, so G is a continuous function of
    (P0, s0, P) with no dependence on call history.  The throat is the maximum
    of G in ln P located by a bounded Brent search on the interpolant
    (bracketed by the best node), not a grid argmax, so G* changes smoothly
    with the upstream state.  Tables are built on first use of a level and
    extended (never rebuilt) as the pressures asked for move.

    Parameters
    ----------
    fluid : Fluid of the composition that flows
    ds : entropy spacing of the levels [J/(mol K)]
    dlnP : spacing of the ln P nodes [-]
    span : ln(P0/P) searched below P0 for the throat (extended if G still rises there)
    """

    def __init__(self, fluid, ds=0.25, dlnP=0.06, span=4.5):
        self.f = fluid
        self.M = float(fluid.mole_fractions @ fluid.molar_masses)
        self.ds, self.dlnP, self.span = float(ds), float(dlnP), float(span)
        self.levels = {}

    @property
    def status(self):
        """Worst solver status of the states tabulated (eosfill.errors codes)."""
        return worst_status(*(lev.status for lev in self.levels.values()))

    def _pair(self, s0, lnP_lo, lnP_hi):
        j = int(math.floor(s0 / self.ds))
        w = s0 / self.ds - j
        out = []
        for jj in (j, j + 1):
            lev = self.levels.get(jj)
            if lev is None:
                lev = self.levels[jj] = _IsentropeLevel(self.f, jj * self.ds, self.dlnP)
            lev.cover(lnP_lo, lnP_hi)
            out.append(lev)
        return out[0], out[1], w

    def _G(self, lnP, lnP0, pair):
        """G, v, T at ln P on the isentrope s0 (blend of the two levels around s0).

        Where both levels cross the phase boundary, each is read at a pressure scaled
        so that the two crossings meet (P → P e^δ, δ linear in s, the crossing of s0
        interpolated between theirs): the kink of v stays a kink instead of being
        smeared, and the error stays second order in Δs.  The enthalpy drop uses the
        same scaling, Δh = Σ w e^(−δ) [h(x0 + δ) − h(x + δ)], which is exactly the
        integral of the blended P v d ln P, so (∂h/∂P)_s = v holds on the blend."""
        a, b, w = pair
        da = db = 0.0
        if a.kink is not None and b.kink is not None:
            k0 = (1.0 - w) * a.kink + w * b.kink
            da, db = a.kink - k0, b.kink - k0
        ha0, _, _ = a.props(lnP0 + da)
        hb0, _, _ = b.props(lnP0 + db)
        ha, va, Ta = a.props(lnP + da)
        hb, vb, Tb = b.props(lnP + db)
        dh = (1.0 - w) * math.exp(-da) * (ha0 - ha) + w * math.exp(-db) * (hb0 - hb)
        v = (1.0 - w) * va + w * vb
        return np.sqrt(2.0 * self.M * np.maximum(dh, 0.0)) / v, v, (1.0 - w) * Ta + w * Tb

    def _low(self, pair):
        a, b, _ = pair
        return max(a.x0, b.x0)

    def throat(self, P0, s0):
        """The choked throat (maximum of G along s = s0 below P0) as a :class:`Throat`."""
        from scipy.optimize import minimize_scalar

        lnP0 = math.log(P0)
        span = self.span
        for _ in range(3):
            pair = self._pair(s0, lnP0 - span, lnP0)
            lo = max(lnP0 - span, self._low(pair))
            x = np.linspace(lo, lnP0, max(int(round((lnP0 - lo) / self.dlnP)) + 1, 9))
            G, _, _ = self._G(x, lnP0, pair)
            i = int(np.argmax(G))
            if i > 0 or lo > lnP0 - span:
                break
            span *= 1.6   # still rising at the low end: search lower
        if i == 0:
            raise ConvergenceError("choked throat (equilibrium isentrope)",
                                   "G still rises at the lowest pressure the model reaches",
                                   dict(P0=P0, s0=s0, P_low=float(math.exp(lo))))
        a, b = x[max(i - 1, 0)], x[min(i + 1, x.size - 1)]
        r = minimize_scalar(lambda q: -float(self._G(q, lnP0, pair)[0]), bounds=(a, b), method="bounded",
                            options=dict(xatol=1e-10))
        G, v, T = self._G(r.x, lnP0, pair)
        return Throat(P=float(math.exp(r.x)), G=float(G), T=float(T), v=float(v))

    def mass_flux(self, P0, s0, P_back):
        """G [kg/(m² s)] at a back pressure between the throat and P0 (sub-critical)."""
        lnP0 = math.log(P0)
        pair = self._pair(s0, math.log(P_back), lnP0)
        return float(self._G(math.log(P_back), lnP0, pair)[0])


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
