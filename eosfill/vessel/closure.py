"""The vessel's end state for a given amount and energy (:class:`_Content`), and the
closure of a result verified against an independent recomputation.

Neighbours in :mod:`eosfill.vessel`: inputs and helpers in ``inputs.py``, the
content's end state and the closures in ``closure.py``, result types in
``results.py``, the fill in ``fill.py``, liquefied-gas figures in ``liquefied.py``;
the map is :mod:`~eosfill.vessel.balances`.
"""
from __future__ import annotations

import numpy as np

from eosfill.constants import R
from eosfill.errors import ConvergenceError, InputError
from eosfill.vessel.inputs import Vessel, _brentq, _f, _molar_mass, _state
from eosfill.vessel.results import CLOSURE_TOLERANCE, EndState  # noqa: F401


# --------------------------------------------------------------------------
# the vessel's end state for a given amount and energy
# --------------------------------------------------------------------------
class _Content:
    """The vessel's content as a function of the amount admitted or let out."""

    def __init__(self, fluid, vessel: Vessel, n0, z0, U0, T0, heat):
        self.fluid = fluid
        self.V = vessel.volume
        self.Cw = vessel.wall_heat_capacity
        self.Tw0 = vessel.wall_temperature if vessel.wall_temperature is not None else T0
        if self.Cw > 0.0 and self.Tw0 is None:
            raise InputError("wall_temperature", None,
                             "an initial wall temperature [K] (the vessel is empty, so there is no gas temperature to take)")
        self.n0, self.z0, self.U0, self.T0 = n0, z0, U0, T0
        self.Q = float(heat)
        self._cache = {}

    def composition(self, N, z_in):
        """(V1) z after N mol of composition z_in entered."""
        from eosfill.vessel.fill_rows import mixed_composition

        return mixed_composition(self.n0, self.z0, N, z_in)

    def end_state(self, n, z, E):
        """The state with n u(T, V/n) + C_w (T - T_w0) = E  (V2)-(V3)."""
        key = (n, tuple(z), E)
        if key in self._cache:
            return self._cache[key]
        v = self.V / n
        if self.Cw == 0.0:
            st = _state(self.fluid, z, u=E / n, v=v)
        else:
            st = self._with_wall(n, z, E, v)
        self._cache[key] = st
        return st

    def _with_wall(self, n, z, E, v):
        Cw, Tw0 = self.Cw, self.Tw0

        def g(T):
            return (n * _state(self.fluid, z, T=T, v=v).u + Cw * (T - Tw0) - E) / (n * R * 300.0)

        # gas alone at the target energy, T1; the answer lies between T1 and T_w0
        try:
            T1 = _f(_state(self.fluid, z, u=(E - 0.0) / n, v=v).T)
        except InputError:
            # the gas alone would pass the inverse solver's range: bracket by g itself
            # (g rises with T: n c_v + C_w > 0), stepping from T_w0 outwards
            T1 = Tw0
            step = 2.0 if g(Tw0) < 0 else 0.5
            for _ in range(12):
                T1 *= step
                if (g(T1) >= 0) == (step > 1):
                    break
        lo, hi = sorted((T1, Tw0))
        if hi - lo < 1e-12 * hi:
            T = 0.5 * (lo + hi)
        else:
            glo, ghi = g(lo), g(hi)
            if glo > 0 or ghi < 0:
                raise ConvergenceError("wall balance", "no bracket between the gas-only and wall temperatures",
                                       dict(n=n, T_lo=lo, T_hi=hi), min(abs(glo), abs(ghi)))
            T = _brentq(g, lo, hi, xtol=1e-12 * hi, what="wall balance (V2)")
        return _state(self.fluid, z, T=T, v=v)


def _energy_scale(n, T):
    return max(n, 1e-300) * R * T


# --------------------------------------------------------------------------
# closure verified against an independent recomputation
# --------------------------------------------------------------------------


def _z_of(fluid, composition):
    """Mole-fraction vector (in the fluid's order) of a reported {name: x} composition."""
    return np.array([composition.get(n, 0.0) for n in fluid.names], dtype=float)


def _recomputed_content(fluid, es: "EndState", V):
    """(n, U, P residual) of a reported content in a volume V, recomputed by a separate
    evaluation from its reported T, P and composition: the (T, P) state for one phase
    (n = V/v), the (T, v = V/n) equilibrium state when two-phase (where T and P do not
    fix v; the pressure of that state is compared with the reported one instead)."""
    z = _z_of(fluid, es.composition)
    if es.phase == "two-phase":
        st = _state(fluid, z, T=es.T, v=V / es.n)
        return es.n, es.n * _f(st.u), (_f(st.P) - es.P) / es.P
    st = _state(fluid, z, T=es.T, P=es.P)
    n = V / _f(st.v)
    return n, n * _f(st.u), 0.0


def _refuse_unclosed(kind, energy_closure, mass_closure, state_residual, figures, tol=CLOSURE_TOLERANCE):
    """Raise ConvergenceError (with the figures) when a result misses its closure tolerance."""
    worst = max(abs(energy_closure), abs(mass_closure), abs(state_residual))
    if not worst <= tol:   # also refuses NaN
        raise ConvergenceError(
            f"{kind} balance check",
            f"the result does not close against an independent recomputation of its states: energy "
            f"{energy_closure:.3e}, mass {mass_closure:.3e}, end-state pressure {state_residual:.3e} "
            f"(relative; tolerance {tol:g}); the result is refused",
            dict(figures, energy_closure=float(energy_closure), mass_closure=float(mass_closure),
                 state_residual=float(state_residual)), worst)


def _fill_closure(fluid, V, final, initial, supply_T, supply_P, z_in, N, Cw, Tw0, Q):
    """(V1), (V2) of a fill from the reported end and initial states and the supply state,
    each recomputed by its own evaluation (not the solved states): relative energy and
    mass closures and the end state's pressure residual."""
    n_f, U_f, p_res = _recomputed_content(fluid, final, V)
    if initial is not None:
        n_0, U_0, p0 = _recomputed_content(fluid, initial, V)
        m_0 = n_0 * _molar_mass(fluid, _z_of(fluid, initial.composition))
    else:
        n_0 = U_0 = m_0 = p0 = 0.0
    h_in = _f(_state(fluid, z_in, T=supply_T, P=supply_P).h)
    M_f = _molar_mass(fluid, _z_of(fluid, final.composition))
    e = (U_f - U_0 + Cw * (final.T - (Tw0 or 0.0)) - N * h_in - Q) / _energy_scale(final.n, final.T)
    m = (n_f * M_f - m_0 - N * _molar_mass(fluid, z_in)) / (n_f * M_f)
    return float(e), float(m), float(max(abs(p_res), abs(p0)))
