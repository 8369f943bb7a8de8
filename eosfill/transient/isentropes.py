"""The equilibrium isentrope, tabulated (homogeneous equilibrium, HEM): the choked
throat and the sub-critical mass flux of a nozzle whose isentrope may enter the
saturation dome (F1-F3 of :mod:`~eosfill.transient.nozzle`).

Neighbours: gas states in :mod:`~eosfill.transient.gas`, the nozzle in
:mod:`~eosfill.transient.nozzle`; the map is :mod:`~eosfill.transient.flow`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from eosfill.errors import CONVERGED, ConvergenceError, worst_status


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

    @staticmethod
    def _shifts(pair):
        """δ of the two levels (the shift that makes their boundary crossings meet; 0, 0
        unless both cross)."""
        a, b, w = pair
        if a.kink is not None and b.kink is not None:
            k0 = (1.0 - w) * a.kink + w * b.kink
            return a.kink - k0, b.kink - k0
        return 0.0, 0.0

    def _h0(self, lnP0, pair):
        """h of the two levels at the inlet (shifted), fixed for one throat search."""
        a, b, _ = pair
        da, db = self._shifts(pair)
        return a.props(lnP0 + da)[0], b.props(lnP0 + db)[0]

    def _G(self, lnP, lnP0, pair, h0=None):
        """G, v, T at ln P on the isentrope s0 (blend of the two levels around s0).

        Where both levels cross the phase boundary, each is read at a pressure scaled
        so that the two crossings meet (P → P e^δ, δ linear in s, the crossing of s0
        interpolated between theirs): the kink of v stays a kink instead of being
        smeared, and the error stays second order in Δs.  The enthalpy drop uses the
        same scaling, Δh = Σ w e^(−δ) [h(x0 + δ) − h(x + δ)], which is exactly the
        integral of the blended P v d ln P, so (∂h/∂P)_s = v holds on the blend."""
        a, b, w = pair
        da, db = self._shifts(pair)
        if h0 is None:
            h0 = self._h0(lnP0, pair)
        ha0, hb0 = h0
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
        h0 = self._h0(lnP0, pair)
        r = minimize_scalar(lambda q: -float(self._G(q, lnP0, pair, h0)[0]), bounds=(a, b), method="bounded",
                            options=dict(xatol=1e-10))
        G, v, T = self._G(r.x, lnP0, pair, h0)
        return Throat(P=float(math.exp(r.x)), G=float(G), T=float(T), v=float(v))

    def mass_flux(self, P0, s0, P_back):
        """G [kg/(m² s)] at a back pressure between the throat and P0 (sub-critical)."""
        lnP0 = math.log(P0)
        pair = self._pair(s0, math.log(P_back), lnP0)
        return float(self._G(math.log(P_back), lnP0, pair)[0])
