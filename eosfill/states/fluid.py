"""The public face of the engine: :class:`Fluid`, a :class:`~eosfill.model.mixture.Mixture`
that also solves equilibrium states at any pair of specifications.

>>> import eosfill
>>> gas = eosfill.Fluid({"methane": 0.9, "ethane": 0.06, "nitrogen": 0.04}, model="PR")
>>> st = gas.state(T=300.0, P=20e6)
>>> round(st.Z, 4)   # thermo 0.6.1 PRMIX with the same Tc, Pc, ω, k_ij: Z = 0.796747
0.7967

Molar SI throughout (K, Pa, m³/mol, J/mol, J/(mol K)); ``*_mass`` properties
per kg.  Reference state: each component as ideal gas with H = 0, S = 0 at
298.15 K and 101 325 Pa.
"""
from __future__ import annotations

from eosfill.model.mixture import Mixture, State  # noqa: F401  (State re-exported)
from eosfill.states.dispatch import solve_state


class Fluid(Mixture):
    """A pure fluid or a mixture of fixed composition with its cubic model
    (every parameter as :class:`~eosfill.model.mixture.Mixture`), whose
    :meth:`state` solves the equilibrium state at one pair of specifications.

    Examples
    --------
    >>> pure = Fluid("nitrogen", model="SRK")
    >>> round(pure.state(T=300.0, P=1e5).Z, 6)   # thermo 0.6.1 SRK, same constants: 0.999958
    0.999958
    """

    def state(self, on_failure="raise", **spec):
        """The equilibrium state at one pair of specifications.

        Exactly two of ``T`` [K], ``P`` [Pa], ``v`` [m³/mol], ``h`` [J/mol],
        ``u`` [J/mol], ``s`` [J/(mol K)]; scalars or arrays that broadcast.

        on_failure : {"raise", "flag"}
            "raise" (default, scalars and batches alike): a row that does not
            solve, or whose result misses its specification by more than
            1e-8 relative, raises :class:`~eosfill.errors.ConvergenceError`
            naming the row and its inputs (an input with no solution raises
            :class:`~eosfill.errors.InputError`).  "flag": every row is
            returned; failed rows hold NaN values and a non-converged
            ``status`` (see :mod:`eosfill.errors`), the others are unaffected.

        Returns
        -------
        State, with ``status``, ``status_text``, ``iterations`` and ``residual`` per row.
        """
        return solve_state(self, on_failure=on_failure, **spec)
