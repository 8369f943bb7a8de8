"""Gas states for the flow models: explicit properties at (T, v) for one composition
(:class:`TVKernel`), the stable single-phase state at (T, P) (:func:`gas_state_TP`) and
the input check shared by the flow modules.

Neighbours: the nozzle in :mod:`~eosfill.transient.nozzle`, the tabulated equilibrium
isentropes in :mod:`~eosfill.transient.isentropes`, the IEC 60534-2-1 valve equations
in :mod:`~eosfill.transient.valves`, the restrictions in
:mod:`~eosfill.transient.restrictions`; the map is :mod:`~eosfill.transient.flow`.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import CONVERGED, ConvergenceError, InputError


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

