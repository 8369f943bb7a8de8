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

This module is the map of the pieces, and re-exports their names (callers and
tests import them from here):

- ``result.py``: ``CAUTION``, ``IntegrationError``, ``TransientResult``;
- ``sources.py``: ``Reservoir``, ``Bank``;
- ``content.py``: ``_Content``, the vessel's (or a bank's) state from (N, U);
- ``rhs.py``: ``_Model``, the right-hand side, flows and wall (``_cp_and_expansion``);
- ``run.py``: ``simulate``, ``_Run`` (steps, events, dense output and extrema),
  ``_initial_moles``, ``_refuse_unclosed``;
- ``checks.py``: ``_phase_label``, ``_recomputed_row``, ``_closure`` (T3), ``_flags``.

Scenario files are mapped to :func:`simulate` by :mod:`eosfill.io.transient_run`.
Restrictions are in :mod:`eosfill.transient.flow`, walls in :mod:`eosfill.transient.heat`.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from eosfill.transient.result import CAUTION, IntegrationError, TransientResult
from eosfill.transient.sources import Bank, Reservoir
from eosfill.transient.content import _Content
from eosfill.transient.rhs import _Model, _cp_and_expansion
from eosfill.transient.checks import _closure, _flags, _phase_label, _recomputed_row
from eosfill.transient.run import _Run, _initial_moles, _refuse_unclosed, simulate

__all__ = ["CAUTION", "IntegrationError", "TransientResult", "Bank", "Reservoir", "_Content", "_Model",
           "_cp_and_expansion", "_closure", "_flags", "_phase_label", "_recomputed_row", "_Run",
           "_initial_moles", "_refuse_unclosed", "simulate"]
