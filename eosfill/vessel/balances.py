"""Vessel balances: end states of fills and vents of a rigid vessel.

No time is needed: each result follows from the mass and energy balances of
an open system, solved with the state solvers of :mod:`eosfill.states`.
Pure fluids and mixtures alike.  Molar SI inside (K, Pa, m³, mol, J).

Balances (rigid vessel of volume V; content n [mol], composition z,
molar internal energy u; wall of heat capacity C_w = m_w c_w [J/K] that ends
at the gas temperature; heat Q [J] added to the content):

(V1) mass, fill from a supply of composition z_in:
         n_f z_f = n_0 z_0 + (n_f - n_0) z_in
(V2) energy, fill from a supply at constant state (T_in, P_in):
         n_f u_f - n_0 u_0 + C_w (T_f - T_w0) = (n_f - n_0) h_in + Q
     h_in is the supply's own molar enthalpy: a throttle or regulator
     between supply and vessel is isenthalpic, so what enters carries h_in
     whatever the pressure drop (steady adiabatic flow, no shaft work,
     kinetic energy neglected).
(V3) volume: v_f = V / n_f; the end state is the (u, v) state of z_f (or,
     with a wall, the T with (V2) satisfied at v_f).
(V4) vent, outflow at the vessel's own state, rigid, adiabatic:
         d(n u) = h dn   =>   n du = -P dv n   =>   ds = 0 per mole
     the content left in the vessel follows its own isentrope
     (s_f = s_0 at v_f = V / n_f).  With the outflow at the vessel's state
     the mixture leaves as a whole ("homogeneous outflow"), also when
     two-phase; a vapour-only draw is not modelled here.
(V5) vent with a wall in equilibrium with the gas:
         d(n u + C_w T) = h dn   (equivalently (n c_v + C_w) dT = v T (dP/dT)_v dn)
     integrated for E = n u + C_w T in x = ln n (scipy ``solve_ivp``),
     T recovered from E at each step; the enthalpy that left is E_0 - E_f.
(V6) cascade bank k (adiabatic, homogeneous outflow): the bank vents along
     its own isentrope, s_b = s_b0 at v_b = V_b/(n_b0 - N); the vessel
     receives H_k(N) = ∫_0^N h_b(N') dN' (Gauss-Legendre quadrature in N).
     The vessel is then (V1)-(V3) with (N, H_k) in place of
     (n_f - n_0, (n_f - n_0) h_in).
(V7) settled state: the same content at constant volume brought to
     T_settle: (T_settle, v_f); settled pressure is its P.  The short fill
     is m(P_nominal, T_settle) - m_f; the state of charge is
     ρ_f / ρ(P_nominal, T_nominal) (definition as used for hydrogen vehicle
     fills, SAE J2601, from memory; T_nominal 15 °C by default).

Every result carries the energy and mass closure as relative numbers
(residual of (V2), (V4)-(V6) divided by n_f R T_f, and of (V1) divided by
m_f), the stop criterion that ended the fill or vent (and whether the one
asked for was met), and flags for limits passed.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.

The pieces (this module is their map and re-exports their names):

=================================  ===================================================
module                             holds
=================================  ===================================================
:mod:`~eosfill.vessel.inputs`      :class:`Vessel`, :class:`Stream`, stop names,
                                   common fluid, states with their solver status
:mod:`~eosfill.vessel.results`     :class:`LimitPassed`, :class:`EndState`,
                                   :class:`Settled`, :class:`Result`
:mod:`~eosfill.vessel.closure`     the content's end state (V2)-(V3), closures and
                                   their independent recomputation
:mod:`~eosfill.vessel.liquefied`   liquid-full temperature, P200 filling-density figures
:mod:`~eosfill.vessel.fill`        :func:`fill` and its stop criteria, settled state
                                   (V7), limit flags
=================================  ===================================================
"""
from __future__ import annotations

from eosfill.vessel.inputs import (  # noqa: F401
    CAUTION,
    FILL_STOPS,
    _STATUS,
    T_NOMINAL,
    VENT_STOPS,
    _brentq,
    common_fluid,
    _comp_dict,
    _f,
    _molar_mass,
    _nonneg,
    _note_status,
    _positive,
    _state,
    _StatusRecord,
    Stream,
    Vessel,
    _with_status,
)
from eosfill.vessel.results import (  # noqa: F401
    CLOSURE_TOLERANCE,
    EndState,
    LimitPassed,
    Result,
    Settled,
)
from eosfill.vessel.closure import (  # noqa: F401
    _Content,
    _energy_scale,
    _fill_closure,
    _recomputed_content,
    _refuse_unclosed,
    _z_of,
)
from eosfill.vessel.liquefied import (  # noqa: F401
    P200_FACTOR,
    P200_LIQUID_DENSITY_TEMPERATURE,
    P200_LIQUID_FULL_TEMPERATURE,
    P200_LOW_PRESSURE_TC,
    _liquefied_figures,
    _liquid_density_at,
    liquid_full_temperature,
    _pure_params,
)
from eosfill.vessel.fill import (  # noqa: F401
    fill,
    _initial_content,
    _limit_flags,
    _overfill_flag,
    _scan_first,
    _settle,
)
