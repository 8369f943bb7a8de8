"""The two-phase state of a rigid volume of one composition z from its molar energy
and volume (u, v), warm-started from the last two-phase state a run found: what
``fluid.state(u=, v=)`` computes, in a few TP flashes instead of a search from a
grid, and checked before it is used.

Newton on (T, ln P) with the residuals

    r_u = (u(T, P) - u)/(R · 300 K),   r_v = ln(v(T, P)/v)                    (W1)

where u(T, P) = β u^V + (1 - β) u^L and v(T, P) = β v^V + (1 - β) v^L are the
overall energy and volume of the isothermal two-phase flash at (T, P)
(``equilibrium.solvers.flash_TP``, warm-started from the last ln K_i); the
Jacobian by forward differences of warm-started flashes (one batched flash of
three states), reused from one right-hand side to the next while the chord
steps converge (a chord step that fails to cut the residual tenfold asks for
a fresh one).  The same residuals and stopping test (max |r| < 1e-11) as the
cold solve of :mod:`eosfill.states.mixture`.

The result is used only if it passes three checks; otherwise the caller runs the
cold solve (``fluid.state(u=, v=)``, a grid start and the multiphase flash):

1. the flash at the solution ends with two phases, 0 < β < 1, equal fugacities
   (its own status);
2. max |r| < 1e-11 at the solution (the specification);
3. the liquid phase x at (T, P) passes the tangent-plane stability test
   (Michelsen, Fluid Phase Equilib. 9 (1982) 1-19; warm-started from its last
   trial phases).  At a two-phase split with equal fugacities the tangent plane
   at x is the tangent plane at y, so no phase of lower Gibbs energy exists:
   the split is the equilibrium at (T, P), hence the entropy maximum at its
   (u, v) (the (T, P) and (u, v) equilibria are Legendre transforms of each
   other; e.g. Michelsen & Mollerup 2007, ch. 12).

Used by :class:`eosfill.transient.content._Content`.
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.constants import R
from eosfill.errors import CONVERGED

_SCALE_U = R * 300.0    # the energy scale of (W1), as in the cold solve
_TOL = 1e-11            # max |r| at the solution, as in the cold solve
_MAX_ITER = 12          # Newton / chord steps before the warm start gives up
_MAX_STEP_T = 0.05      # largest relative T step; larger moves are not a warm start
_MAX_STEP_LNP = 0.5     # largest ln P step


class WarmSplit:
    """The last two-phase solution of one composition and the warm-started solve (W1).

    The warm start serves a composition within 1e-3 (mole fraction) of the one it
    was found at (a fill's content changes slowly); the checks use the composition
    solved for.
    """

    def __init__(self):
        self.f = None         # Fluid of the composition being solved
        self.z = None
        self.last = None      # (T, ln P, ln K) of the last verified two-phase state
        self.z_last = None    # its composition
        self.J = None         # d(r_u, r_v)/d(T, ln P) there
        self.uv_last = None   # the (u, v) solved there
        self.lnW = None       # the stability test's last trial phases
        self.calls = self.accepted = 0

    def remember(self, z, T, P, lnK):
        """Start the next solves from a two-phase state of composition z found elsewhere
        (the cold solve)."""
        lnK = np.asarray(lnK, dtype=float)
        if np.all(np.isfinite(lnK)) and np.max(np.abs(lnK)) > 1e-6:
            self.last = (float(T), math.log(float(P)), lnK.copy())
            self.z_last = np.array(z, dtype=float)
            self.J = self.uv_last = None
        else:
            self.forget()

    def forget(self):
        self.last = self.J = self.z_last = self.uv_last = None

    # -- pieces ------------------------------------------------------------
    def _eval(self, T, lnP, lnK):
        """Flash at the rows (T, ln P) from ln K: (r_u, r_v) per row, and the flash and
        phase states; None if a row does not end two-phase and converged."""
        from eosfill.equilibrium import solvers as equilibrium

        T = np.atleast_1d(np.asarray(T, dtype=float))
        P = np.exp(np.atleast_1d(np.asarray(lnP, dtype=float)))
        n = T.size
        fl = equilibrium.flash_TP(T, P, self.z, self.f.params, raise_on_fail=False,
                                  lnK_start=np.broadcast_to(lnK, (n, self.z.size)))
        b = fl["beta"]
        if not (np.all(fl["two_phase"]) and np.all(fl["status"] == CONVERGED)
                and np.all((b > 0.0) & (b < 1.0))):
            return None
        ph = self.f.single_phase(np.concatenate([T, T]), np.concatenate([P, P]),
                                 x=np.concatenate([fl["x"], fl["y"]]))
        L, V = slice(0, n), slice(n, 2 * n)
        U, Vv = np.asarray(ph.u, dtype=float), np.asarray(ph.v, dtype=float)
        u = b * U[V] + (1.0 - b) * U[L]
        v = b * Vv[V] + (1.0 - b) * Vv[L]
        return fl, ph, u, v

    def _resid(self, ev, u, v):
        return np.stack([(ev[2] - u) / _SCALE_U, np.log(ev[3] / v)], axis=-1)

    def _jacobian(self, T, lnP, lnK, u, v):
        """Forward differences of (W1) in T and ln P (one batched flash of 3 states)."""
        hT, hP = 1e-7 * T, 1e-7
        ev = self._eval([T, T + hT, T], [lnP, lnP, lnP + hP], lnK)
        if ev is None:
            return None, None
        r = self._resid(ev, u, v)
        J = np.column_stack([(r[1] - r[0]) / hT, (r[2] - r[0]) / hP])
        return J, (ev, r[0])

    # -- the solve -----------------------------------------------------------
    def solve(self, fluid, u, v):
        """The verified two-phase state of ``fluid`` (its composition) at (u, v) as a
        dict (T, P, beta, s, lnK, phase labels), or None: no warm start near this
        composition, no convergence, or a check failed."""
        z = np.asarray(fluid.mole_fractions, dtype=float)
        if self.last is None or np.max(np.abs(z - self.z_last)) > 1e-3:
            return None
        self.f, self.z = fluid, z
        self.calls += 1
        T, lnP, lnK = self.last
        J = self.J
        try:
            with np.errstate(all="raise"):
                return self._newton(T, lnP, lnK, J, u, v)
        except (np.linalg.LinAlgError, FloatingPointError, ArithmeticError, ValueError):
            return None

    def _newton(self, T, lnP, lnK, J, u, v):
        """Chord steps with the stored Jacobian (a fresh one when they stall); the first
        step predicted from the last solution (u_last, v_last), where (W1) is known."""
        from eosfill.errors import EosfillError

        cur, fresh = None, False
        r, norm_prev = None, math.inf
        if J is not None and self.uv_last is not None:
            r = np.array([(self.uv_last[0] - u) / _SCALE_U, math.log(self.uv_last[1] / v)])
        try:
            for _ in range(_MAX_ITER):
                if r is None:
                    if J is None:
                        J, cur = self._jacobian(T, lnP, lnK, u, v)
                        fresh = True
                    else:
                        ev = self._eval(T, lnP, lnK)
                        cur = None if ev is None else (ev, self._resid(ev, u, v)[0])
                    if cur is None:
                        return None
                    r = cur[1]
                    norm = float(np.max(np.abs(r)))
                    if norm < _TOL:
                        return self._verified(T, lnP, cur[0], J, u, v)
                    if norm > 0.1 * norm_prev and not fresh:
                        # the chord (an old Jacobian) no longer converges: a fresh one here
                        J, cur = self._jacobian(T, lnP, lnK, u, v)
                        if J is None:
                            return None
                        r = cur[1]
                    lnK = cur[0][0]["lnK"][0]
                step = np.linalg.solve(J, -r)
                if abs(step[0]) > _MAX_STEP_T * T or abs(step[1]) > _MAX_STEP_LNP:
                    return None   # too far for a warm start: the cold solve
                norm_prev = float(np.max(np.abs(r)))
                T, lnP = T + float(step[0]), lnP + float(step[1])
                r, fresh = None, False
        except EosfillError:
            return None
        return None

    def _verified(self, T, lnP, ev, J, u, v):
        """Check 3 (stability of the liquid phase at (T, P)); store the warm start."""
        from eosfill.equilibrium import solvers as equilibrium

        fl, ph = ev[0], ev[1]
        P = math.exp(lnP)
        x = fl["x"][:1]
        unstable, _, _, lnW, status = equilibrium.stability_test(
            np.array([T]), np.array([P]), x, self.f.params, lnW_start=self.lnW,
            return_trials=True, return_status=True)
        if unstable[0] or status[0] != CONVERGED:
            self.lnW = None
            return None
        self.lnW = lnW
        b = float(fl["beta"][0])
        n = fl["beta"].size
        labels = np.asarray(ph.phase, dtype=object)[[0, n]]     # liquid, vapour rows of row 0
        S = np.asarray(ph.s, dtype=float)
        s = b * float(S[n]) + (1.0 - b) * float(S[0])
        gas_like = [lab in ("gas", "supercritical") for lab in labels]
        beta_v = (1.0 - b) * gas_like[0] + b * gas_like[1]
        lnK = np.array(fl["lnK"][0])
        self.last, self.z_last, self.uv_last = (T, lnP, lnK), self.z, (u, v)
        self.J = J
        self.accepted += 1
        return dict(T=T, P=P, beta=beta_v, s=s, lnK=lnK, labels=tuple(labels))
