"""Hand-optimised single-state kernels for one fixed composition.

The vectorised kernels (:mod:`eosfill.cubic`, :mod:`eosfill.idealgas`,
:func:`eosfill.states.props_Tv`) are the readable forms and stay the
oracles; this module evaluates the same equations for *one* state in plain
Python floats, where numpy's per-call cost would dominate (time-resolved
integration, scalar solver calls).  ``tests/test_scalar.py`` checks every
function here against its vectorised form to round-off.

For one composition x the model collapses to a handful of numbers:

* (C4) with Soave's α is a quadratic in t = √T (see
  :func:`eosfill.cubic._mixture_a_fixed_x`): a = c0 - 2 c1 t + c2 t²;
* b = Σ x_i b_i; the volume shift c = Σ x_i c_i;
* the ideal-gas mixture is one Poling polynomial with coefficients
  Σ x_i a_i,k while T lies inside every present component's range
  (outside, Cp° of each component is held at its end value, as in
  :mod:`eosfill.idealgas`; that case is delegated to the vectorised code).
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.model import cubic
from eosfill.model import idealgas
from eosfill.constants import P0, R, T0
from eosfill.errors import ConvergenceError


class FixedComposition:
    """Scalar property kernels of a fluid at one composition.

    Parameters
    ----------
    fluid : eosfill.Fluid
    x : array_like, optional
        Mole fractions (default: the fluid's own).
    """

    def __init__(self, fluid, x=None):
        x = fluid.mole_fractions if x is None else np.asarray(x, dtype=float)
        p = fluid.params
        self.fluid = fluid
        self.x = x
        self.c0, self.c1, self.c2 = cubic._quadratic_a_coefficients(p, tuple(x))
        self.b = float(x @ p.b)
        self.shift = float(x @ fluid.volume_shift)
        self.d1, self.d2 = p.model.delta1, p.model.delta2
        present = x > 0.0
        self.Tlo = float(np.max(fluid.cp_Tmin[present]))
        self.Thi = float(np.min(fluid.cp_Tmax[present]))
        am = x @ fluid.cp_coeffs
        self.am = [float(v) for v in am]
        self.xlnx = float(sum(v * math.log(v) for v in x if v > 0.0))
        self.H0ref = self._F(T0)
        self.S0ref = self._G(T0)

    # ideal-gas polynomial pieces (Poling form, Horner)
    def _F(self, T):
        a0, a1, a2, a3, a4 = self.am
        return T * (a0 + T * (a1 / 2.0 + T * (a2 / 3.0 + T * (a3 / 4.0 + T * a4 / 5.0))))

    def _G(self, T):
        a0, a1, a2, a3, a4 = self.am
        return a0 * math.log(T) + T * (a1 + T * (a2 / 2.0 + T * (a3 / 3.0 + T * a4 / 4.0)))

    def _cp0_R(self, T):
        a0, a1, a2, a3, a4 = self.am
        return a0 + T * (a1 + T * (a2 + T * (a3 + T * a4)))

    def _ideal(self, T):
        """H°/R - ..., S°(T, P0)/R (with mixing term), Cp°/R at T."""
        if self.Tlo <= T <= self.Thi:
            return self._F(T) - self.H0ref, self._G(T) - self.S0ref - self.xlnx, self._cp0_R(T)
        f = self.fluid
        Ta = np.array([T])
        h0 = float(idealgas.mixture_h0(Ta, self.x, f.cp_coeffs, f.cp_Tmin, f.cp_Tmax)[0]) / R
        s0 = float(idealgas.mixture_s0(Ta, P0, self.x, f.cp_coeffs, f.cp_Tmin, f.cp_Tmax)[0]) / R
        cp0 = float(idealgas.mixture_cp0(Ta, self.x, f.cp_coeffs, f.cp_Tmin, f.cp_Tmax)[0]) / R
        return h0, s0, cp0

    def props_Tv(self, T, v):
        """Single-phase P, u, h, s, cv, (∂P/∂T)_v, (∂P/∂v)_T at (T [K], v [m³/mol]).

        Same equations as :func:`eosfill.states.props_Tv` ((C1), (C8), (C9),
        (C11) of :mod:`eosfill.cubic`), v being the (shifted) molar volume.
        """
        b, d1, d2 = self.b, self.d1, self.d2
        ve = v + self.shift
        t = math.sqrt(T)
        a = self.c0 + t * (self.c2 * t - 2.0 * self.c1)
        a_T = self.c2 - self.c1 / t
        a_TT = self.c1 / (2.0 * t * T)
        D = (ve + d1 * b) * (ve + d2 * b)
        L = math.log((ve + d1 * b) / (ve + d2 * b)) / (d1 - d2)
        P = R * T / (ve - b) - a / D
        h0, s0, cp0 = self._ideal(T)
        u = R * (h0 - T) + (T * a_T - a) / b * L
        s = R * s0 - R * math.log(R * T / ((ve - b) * P0)) + a_T / b * L
        cv = R * (cp0 - 1.0) + T * a_TT / b * L
        dPdT = R / (ve - b) - a_T / D
        dPdv = -R * T / (ve - b) ** 2 + a * (2.0 * ve + (d1 + d2) * b) / D**2
        return P, u, u + P * v, s, cv, dPdT, dPdv

    def T_at_v(self, key, target, v, T_guess, T_lo, T_hi, tol=1e-12, maxiter=100):
        """Single-phase T at fixed v with prop(T, v) = target, prop in (u, h, s).

        Newton steps with the analytic derivative at fixed v
        (du/dT = cv, dh/dT = cv + v (∂P/∂T)_v, ds/dT = cv/T), kept inside a
        bracket [T_lo, T_hi] that shrinks with every evaluation (bisection
        when Newton leaves it).  Stops when |step| < tol·T.
        """
        k = {"u": 1, "h": 2, "s": 3}[key]
        lo, hi = T_lo, T_hi
        T = min(max(T_guess, lo), hi)
        for _ in range(maxiter):
            P, u, h, s, cv, dPdT, dPdv = self.props_Tv(T, v)
            f = (u, h, s)[k - 1] - target
            df = (cv, cv + v * dPdT, cv / T)[k - 1]
            if f > 0.0:
                hi = T
            else:
                lo = T
            if df > 0.0:
                Tn = T - f / df
                if abs(Tn - T) <= tol * T:
                    return Tn
            else:
                Tn = 0.5 * (lo + hi)
            if not (lo < Tn < hi):
                Tn = 0.5 * (lo + hi)
            T = Tn
        raise ConvergenceError(f"{key}-v scalar solve", "no convergence", dict(T=T, v=v), f)

    def v_at_TP(self, T, P, v_guess):
        """Molar volume at (T, P) by Newton on P(v) from a guess on the
        wanted branch (no root selection; used to follow one phase)."""
        v = v_guess
        for _ in range(50):
            Pv, _, _, _, _, _, dPdv = self.props_Tv(T, v)
            if dPdv >= 0.0:
                raise ConvergenceError("v_at_TP", "left the mechanically stable branch", dict(T=T, v=v))
            dv = (Pv - P) / dPdv
            vn = v - dv
            if vn <= self.b - self.shift:
                vn = 0.5 * (v + self.b - self.shift)
            if abs(vn - v) <= 1e-13 * v:
                return vn
            v = vn
        raise ConvergenceError("v_at_TP", "no convergence", dict(T=T, P=P, v=v))


def fixed_composition(fluid) -> FixedComposition:
    """The fluid's own :class:`FixedComposition`, built once and kept on it."""
    k = fluid.__dict__.get("_scalar_kernel")
    if k is None or k.x is not fluid.mole_fractions:
        k = FixedComposition(fluid)
        fluid.__dict__["_scalar_kernel"] = k
    return k


# --------------------------------------------------------------------------
# fugacity coefficients of one state, any composition
# --------------------------------------------------------------------------
_PARAM_CACHE: dict = {}


def _param_lists(p):
    hit = _PARAM_CACHE.get(id(p))
    if hit is None or hit[0] is not p:
        if len(_PARAM_CACHE) > 64:
            _PARAM_CACHE.clear()
        lists = dict(sac=np.sqrt(p.ac).tolist(), kappa=p.kappa.tolist(), sqrtTc=np.sqrt(p.Tc).tolist(),
                     b=p.b.tolist(), M=(1.0 - p.kij).tolist(), d1=p.model.delta1, d2=p.model.delta2)
        hit = (p, lists)
        _PARAM_CACHE[id(p)] = hit
    return hit[1]


def _cubic_roots_one(c2, c1, c0):
    """Real roots of Z³ + c2 Z² + c1 Z + c0 (ascending), closed form then three
    Newton steps, as :func:`eosfill.cubic.cubic_roots` does for arrays."""
    Q = (c2 * c2 - 3.0 * c1) / 9.0
    Rr = (2.0 * c2**3 - 9.0 * c2 * c1 + 27.0 * c0) / 54.0
    if Rr * Rr < Q**3:
        theta = math.acos(max(-1.0, min(1.0, Rr / math.sqrt(Q**3))))
        m = -2.0 * math.sqrt(Q)
        roots = [m * math.cos((theta + 2.0 * math.pi * k) / 3.0) - c2 / 3.0 for k in (0, 2, 1)]
    else:
        Aq = -math.copysign(1.0, Rr) * (abs(Rr) + math.sqrt(max(Rr * Rr - Q**3, 0.0))) ** (1.0 / 3.0)
        roots = [Aq + (Q / Aq if Aq != 0.0 else 0.0) - c2 / 3.0]
    out = []
    for Z in roots:
        for _ in range(3):
            df = (3.0 * Z + 2.0 * c2) * Z + c1
            if df == 0.0:
                break
            Z -= (((Z + c2) * Z + c1) * Z + c0) / df
        out.append(Z)
    return sorted(out)


def lnphi_one(T, P, x, p, which="stable"):
    """ln φ_i of one state (C10) in plain floats, with the root taken as in
    :func:`eosfill.cubic.solve_volume_from_TP` ("stable": lowest G^R of the
    smallest and largest admissible roots; "liquid"/"vapour": smallest/largest).

    Returns (list of ln φ_i, Z).  Checked against the vectorised kernels in
    ``tests/test_scalar.py``.
    """
    L_ = _param_lists(p)
    sac, kappa, sqrtTc, bi, M = L_["sac"], L_["kappa"], L_["sqrtTc"], L_["b"], L_["M"]
    d1, d2 = L_["d1"], L_["d2"]
    n = len(x)
    t = math.sqrt(T)
    q = [sac[i] * (1.0 + kappa[i] * (1.0 - t / sqrtTc[i])) for i in range(n)]     # √a_i, (C3)
    xq = [x[i] * q[i] for i in range(n)]
    Mxq = [sum(M[i][j] * xq[j] for j in range(n)) for i in range(n)]
    a = sum(xq[i] * Mxq[i] for i in range(n))                                    # (C4)
    b = sum(x[i] * bi[i] for i in range(n))
    RT = 8.314462618 * T
    A, B = a * P / (RT * RT), b * P / RT
    s, pr = d1 + d2, d1 * d2
    roots = [Z for Z in _cubic_roots_one((s - 1.0) * B - 1.0, A + pr * B * B - s * B * (B + 1.0),
                                         -(A * B + pr * B * B * (B + 1.0))) if Z > B]    # (C5)
    if not roots:
        raise ConvergenceError("lnphi_one", "no root of the cubic above B", dict(T=T, P=P))

    def gR(Z):  # (C6)
        return Z - 1.0 - math.log(Z - B) - A / B * math.log((Z + d1 * B) / (Z + d2 * B)) / (d1 - d2)

    lo, hi = roots[0], roots[-1]
    if which == "liquid":
        Z = lo
    elif which == "vapour":
        Z = hi
    else:
        Z = lo if (lo < hi and gR(lo) < gR(hi)) else hi
    Lt = math.log((Z + d1 * B) / (Z + d2 * B)) / (d1 - d2)
    lnZB = math.log(Z - B)
    AB = A / B
    return [bi[i] / b * (Z - 1.0) - lnZB - AB * (2.0 * q[i] * Mxq[i] / a - bi[i] / b) * Lt
            for i in range(n)], Z                                                 # (C10)
