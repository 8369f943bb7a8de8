"""The state of a rigid volume of gas from its amounts and energy (N_i, U): a warm-started
Newton on T at fixed v (:meth:`eosfill.transient.flow.TVKernel.T_from_uv`) and, where the
content may split into two phases, the equilibrium solver ``fluid.state(u=, v=)``; a
mixture's content that stays two-phase is solved from the last two-phase state
(:class:`eosfill.transient.content_split.WarmSplit`, verified; the cold solve whenever
the warm one fails).

Used for the vessel and for each bank by the right-hand side in ``rhs.py``; the other
pieces are mapped in ``model.py``.
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.transient import flow as _flow
from eosfill.transient.content_split import WarmSplit
from eosfill.errors import CONVERGED, ConvergenceError, EosfillError, worst_status

# --------------------------------------------------------------------------
# the model
# --------------------------------------------------------------------------
class _Content:
    """A rigid volume of gas tracked by (N_i, U): its state with a warm-started UV solve."""

    def __init__(self, fluid, volume, x_fixed=None):
        self.fluid = fluid
        self.V = volume
        self.T_last = 300.0
        self.fixed = x_fixed is not None
        self._kernel = _flow.TVKernel(fluid, x_fixed) if self.fixed else None
        self._kx = None
        self._stable_cache = None
        self.T_range_warned = False
        self.split = WarmSplit()   # the last two-phase state (mixtures), for warm starts

    def kernel(self, x):
        if self.fixed:
            return self._kernel
        if self._kx is None or not np.array_equal(self._kx.x, x):
            self._kx = _flow.TVKernel(self.fluid, x)
        return self._kx

    def state(self, N, U):
        N = np.maximum(N, 0.0)
        n = float(N.sum())
        if not n > 0.0:
            raise EosfillError("the vessel holds no gas (n = 0)")
        x = self._kernel.x if self.fixed else N / n
        k = self.kernel(x)
        v = self.V / n
        u = U / n
        v_eos = v + k.c_shift
        if v_eos <= k.b:
            raise EosfillError(f"molar volume {v:.6g} m3/mol at or below the co-volume (over-full vessel)")
        if self.split.last is not None:
            f = self._fluid_x(x)
            w = self.split.solve(f, u, v)
            if w is not None:
                self.T_last = w["T"]
                return dict(T=w["T"], P=w["P"], h=u + w["P"] * v, u=u, v=v, v_eos=v_eos, x=x, n=n,
                            beta=w["beta"], kernel=k, pr=None, single=False, phase="two-phase", fluid_x=f,
                            s=w["s"], status=CONVERGED)
        try:
            T, pr = k.T_from_uv(u, v_eos, self.T_last)
            ok = pr["P"] > 0.0 and pr["dPdv"] < 0.0
        except ConvergenceError:
            ok, T, pr = False, self.T_last, None
        if ok and not self._maybe_two_phase(T, float(pr["P"]), v_eos, x):
            self.T_last = T
            self.split.forget()
            return dict(T=T, P=float(pr["P"]), h=float(pr["h"]), u=u, v=v, v_eos=v_eos, x=x, n=n,
                        beta=1.0, kernel=k, pr=pr, single=True)
        f = self._fluid_x(x)
        st = f.state(u=u, v=v)
        T, P = float(st.T), float(st.P)
        self.T_last = T
        if st.phase == "two-phase" and not self.fluid.is_pure:
            self.split.remember(x, T, P, np.log(np.asarray(st.vapour.x) / np.asarray(st.liquid.x)))
        else:
            self.split.forget()
        return dict(T=T, P=P, h=u + P * v, u=u, v=v, v_eos=v_eos, x=x, n=n, beta=float(st.vapor_fraction),
                    kernel=k, pr=None, single=st.phase != "two-phase", phase=st.phase, fluid_x=f, s=float(st.s),
                    status=int(worst_status(getattr(st, "status", CONVERGED))))

    def _fluid_x(self, x):
        """The Fluid of composition x (the run's own when x is its composition)."""
        if np.array_equal(x, self.fluid.mole_fractions):
            return self.fluid
        c = getattr(self, "_fx", None)
        if c is None or not np.array_equal(c[0], x):
            c = self._fx = (np.array(x), self.fluid.with_composition(x))
        return c[1]

    def _maybe_two_phase(self, T, P, v_eos, x):
        """Phase check of a single-phase (T, v) solution (pure: saturation curve;
        mixture: the content's volume is the stable root at (T, P), and the
        tangent-plane test, re-used while T and ln P move by < 2 K and
        0.05 from the last stable check; the guard T < 1.1 max Tc is common
        practice, no source)."""
        fl = self.fluid
        present = x > 0
        if T >= 1.1 * float(np.max(fl.Tc[present])):
            return False
        from eosfill.equilibrium import solvers as equilibrium

        if fl.is_pure:
            if T >= fl.Tc[0]:
                return False
            from eosfill.equilibrium.saturation_curve import saturation_curve

            side = saturation_curve(fl).classify(T, v_eos - float(fl.volume_shift[0]))
            if side in ("gas-side", "liquid-side"):
                return False
            sat = equilibrium.saturation_pressure(np.array([T]), fl.params, raise_on_fail=False)
            if sat["status"][0] != equilibrium.CONVERGED:
                return False
            return bool(sat["v_L"][0] < v_eos < sat["v_V"][0])
        # the content's volume must be the cubic's stable (lowest Gibbs energy) root at its
        # own (T, P): a liquid-like root where the gas root is the stable one (or the
        # reverse) is no equilibrium state, whatever the tangent-plane test of z says
        # (the test uses the stable root)
        if self._not_stable_root(T, P, v_eos, x):
            return True
        c = self._stable_cache
        if c is not None and abs(c[0] - T) < 2.0 and abs(c[1] - math.log(P)) < 0.05 \
                and np.max(np.abs(c[2] - x)) < 1e-6:
            return False
        # warm start from the last test's trial phases (a few steps away)
        lnW0 = None if c is None or np.max(np.abs(c[2] - x)) > 1e-3 else c[3]
        unstable, _, _, lnW = equilibrium.stability_test(np.array([T]), np.array([P]), x[None, :], fl.params,
                                                         lnW_start=lnW0, return_trials=True)
        if not unstable[0]:
            self._stable_cache = (T, math.log(P), np.array(x), lnW)
            return False
        return True

    def _not_stable_root(self, T, P, v_eos, x):
        """Is v_eos another root than the cubic's lowest-Gibbs one at (T, P) (relative
        difference > 1e-7, as the state solvers' own check)?"""
        from eosfill.model import properties as kp

        k = self.kernel(x)
        v_stable = float(kp.props_TP_rows(k._m, k._ig, T, P, k.x)[..., kp.TP_V_EOS])
        return abs(v_stable - v_eos) > 1e-7 * v_eos
