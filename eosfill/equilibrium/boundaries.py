"""Bubble and dew points of mixtures and the phase envelope.

Neighbours: Wilson K and ln φ in :mod:`eosfill.equilibrium.kvalues`; the TP
flash in :mod:`eosfill.equilibrium.flash`; pure-fluid saturation in
:mod:`eosfill.equilibrium.saturation` (map: :mod:`eosfill.equilibrium.solvers`).
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import ConvergenceError
from eosfill.equilibrium.kvalues import wilson_lnK, lnphi_root
from eosfill.equilibrium.flash import flash_TP


# --------------------------------------------------------------------------
# bubble and dew points of mixtures
# --------------------------------------------------------------------------
def _saturation_point(T, P, z, p, kind, solve_for, tol=1e-10, maxiter=200):
    """Bubble or dew point by Newton on the incipient-phase condition.

    Bubble: Σ z_i K_i = 1 with K_i = φ_i^L(z)/φ_i^V(y), y = zK/ΣzK.
    Dew:    Σ z_i / K_i = 1 with K_i = φ_i^L(x)/φ_i^V(z), x = (z/K)/Σ(z/K).
    The outer variable (ln P or T) is updated by a secant step on
    ln Σ z K (bubble) or ln Σ z/K (dew); the incipient phase by
    successive substitution at each step (Michelsen & Mollerup 2007, ch. 12).
    """
    z = np.asarray(z, dtype=float)
    T = float(T) if T is not None else None
    P = float(P) if P is not None else None
    if solve_for == "P":
        # Wilson estimate of the bubble/dew pressure
        K1 = np.exp(wilson_lnK(T, 1.0, p.Tc, p.Pc, p.omega))
        var = np.log((z * K1).sum()) if kind == "bubble" else -np.log((z / K1).sum())
    else:
        var = float(z @ p.Tc) * 0.7 if T is None else T
        from scipy.optimize import brentq

        def wil(Tt):
            K = np.exp(wilson_lnK(Tt, P, p.Tc, p.Pc, p.omega))
            return np.log((z * K).sum()) if kind == "bubble" else np.log((z / K).sum())
        try:
            var = brentq(wil, 10.0, 5000.0)
        except ValueError:
            var = float(z @ p.Tc)
    # starting points: Wilson's estimate, then lower pressures (or other
    # temperatures) when a start runs into the trivial solution K = 1
    if solve_for == "P":
        starts = [var - 0.7 * k for k in range(5)]
    else:
        starts = [var * f for f in (1.0, 0.92, 1.08, 0.85, 1.15)]
    last = None
    for var0 in starts:
        try:
            res = _saturation_point_from(var0, T, P, z, p, kind, solve_for, tol, maxiter)
        except ConvergenceError as exc:
            last = exc
            continue
        if _on_boundary(kind, res[0], res[1], z, p):
            return res
        last = ConvergenceError(f"{kind}_point", "converged to a point that is not on the "
                                f"{kind} line (flash check)", dict(T=res[0], P=res[1]))
    # near a critical point successive substitution falls into K = 1 from every
    # start: locate the phase boundary with the flash instead (the vapour
    # fraction reaches 0 at a bubble point, 1 at a dew point), then polish
    # from the flash's K-values
    try:
        var0, lnK0 = _boundary_by_flash(T, P, z, p, kind, solve_for)
        res = _saturation_point_from(var0, T, P, z, p, kind, solve_for, tol, maxiter, lnK0)
    except ConvergenceError:
        raise last from None
    if not _on_boundary(kind, res[0], res[1], z, p):
        raise last
    return res


def _on_boundary(kind, T, P, z, p, eps=1e-5):
    """A bubble point has the feed just two-phase with β → 0 when warmed a
    little; a dew point, just two-phase with β → 1 when cooled a little."""
    Tt = T * (1.0 + eps) if kind == "bubble" else T * (1.0 - eps)
    f = flash_TP(np.array([Tt]), np.array([P]), z, p, raise_on_fail=False)
    if not f["two_phase"][0]:
        return False
    beta = f["beta"][0]
    return beta < 0.05 if kind == "bubble" else beta > 0.95


def _boundary_by_flash(T, P, z, p, kind, solve_for, n=48):
    """Bracket the bubble (β → 0) or dew (β → 1) boundary on a grid of TP
    flashes and narrow it by bisection; returns the outer variable and ln K
    just inside the two-phase region."""
    if solve_for == "P":
        grid = np.linspace(np.log(1e3), np.log(5.0 * float(p.Pc.max())), n)
        TT, PP = np.full(n, T), np.exp(grid)
    else:
        grid = np.linspace(0.3 * float(p.Tc.min()), 1.6 * float(p.Tc.max()), n)
        TT, PP = grid, np.full(n, P)
    fl = flash_TP(TT, PP, z, p, raise_on_fail=False, maxiter=60, second_order=False)
    two = fl["two_phase"]
    target = 0.0 if kind == "bubble" else 1.0
    for k in range(n - 1):
        if two[k] != two[k + 1]:
            inside = k if two[k] else k + 1
            a, b = grid[inside], grid[k + 1 if two[k] else k]
            lnK, beta = fl["lnK"][inside], fl["beta"][inside]
            for _ in range(45):
                mid = 0.5 * (a + b)
                Tm, Pm = (T, np.exp(mid)) if solve_for == "P" else (mid, P)
                f = flash_TP(np.array([Tm]), np.array([Pm]), z, p, raise_on_fail=False)
                if f["two_phase"][0]:
                    a, lnK, beta = mid, f["lnK"][0], f["beta"][0]
                else:
                    b = mid
            if abs(beta - target) < 0.05:
                return a, lnK
    raise ConvergenceError(f"{kind}_point", "no phase boundary found on the flash grid",
                           dict(T=T, P=P))


def _saturation_point_from(var, T, P, z, p, kind, solve_for, tol, maxiter, lnK=None):
    """One run of the bubble/dew iteration from the outer variable ``var``."""
    if lnK is None:
        lnK = wilson_lnK(T if solve_for == "P" else var, np.exp(var) if solve_for == "P" else P,
                         p.Tc, p.Pc, p.omega)
    prev = None
    for it in range(maxiter):
        TT = np.array([T if solve_for == "P" else var])
        PP = np.array([np.exp(var) if solve_for == "P" else P])
        for _ in range(30):
            K = np.exp(lnK)
            if kind == "bubble":
                w = z * K
                w = w / w.sum()
                lpl, _ = lnphi_root(TT, PP, z[None], p, which="liquid")
                lpv, _ = lnphi_root(TT, PP, w[None], p, which="vapour")
            else:
                w = z / K
                w = w / w.sum()
                lpl, _ = lnphi_root(TT, PP, w[None], p, which="liquid")
                lpv, _ = lnphi_root(TT, PP, z[None], p, which="vapour")
            new = (lpl - lpv)[0]
            if np.max(np.abs(new - lnK)) < 1e-12:
                lnK = new
                break
            lnK = new
        K = np.exp(lnK)
        g = np.log((z * K).sum()) if kind == "bubble" else np.log((z / K).sum())
        if np.max(np.abs(lnK)) < 1e-3:
            raise ConvergenceError(f"{kind}_point", "trivial solution (K = 1): near or above the "
                                   "critical point, no saturation point here",
                                   dict(T=float(TT[0]), P=float(PP[0])), float(g))
        if abs(g) < tol:
            return float(TT[0]), float(PP[0]), w, lnK
        if prev is None:
            # first step: a small probe, then secant steps on g(var)
            step = 0.01 if solve_for == "P" else 0.5
        else:
            dvar = var - prev[0]
            dg = g - prev[1]
            step = -g * dvar / dg if dg != 0 else (0.01 if solve_for == "P" else 0.5)
        prev = (var, g)
        limit = 0.5 if solve_for == "P" else 0.1 * var
        step = float(np.clip(step, -limit, limit))
        var = var + step
    raise ConvergenceError(f"{kind}_point", "no convergence", dict(T=float(TT[0]), P=float(PP[0])))


def bubble_point(z, p, T=None, P=None):
    """Bubble point of a mixture: (T, P, incipient vapour composition y).

    Give T (solve for P) or P (solve for T).
    """
    if (T is None) == (P is None):
        from eosfill.errors import InputError

        raise InputError("bubble_point", (T, P), "exactly one of T or P")
    Tb, Pb, y, _ = _saturation_point(T, P, z, p, "bubble", "P" if T is not None else "T")
    return Tb, Pb, y


def dew_point(z, p, T=None, P=None):
    """Dew point of a mixture: (T, P, incipient liquid composition x)."""
    if (T is None) == (P is None):
        from eosfill.errors import InputError

        raise InputError("dew_point", (T, P), "exactly one of T or P")
    Td, Pd, x, _ = _saturation_point(T, P, z, p, "dew", "P" if T is not None else "T")
    return Td, Pd, x


# --------------------------------------------------------------------------
# phase envelope (mixtures) and saturation dome (pure fluids)
# --------------------------------------------------------------------------
def phase_envelope(z, p, n=24, P_min=1e5):
    """Bubble and dew curves of a mixture, point by point in pressure.

    At each pressure of a geometric grid from ``P_min`` upward the bubble
    and dew temperatures are solved (:func:`bubble_point`,
    :func:`dew_point`); the grid stops where neither exists any more (above
    the cricondenbar).  A tracer of the whole envelope through the critical
    point (Michelsen 1980) would be more complete; this one is enough to
    draw the dome on a diagram.

    Returns
    -------
    dict with ``bubble`` and ``dew``: each (P, T, incipient composition)
    arrays of the points that converged.
    """
    z = np.asarray(z, dtype=float)
    Pmax = 1.5 * float(p.Pc @ z) + 0.5 * float(p.Pc.max())
    grid = np.geomspace(P_min, Pmax, n)
    out = {"bubble": ([], [], []), "dew": ([], [], [])}
    for kind, fn in (("bubble", bubble_point), ("dew", dew_point)):
        misses = 0
        for P in grid:
            try:
                T, _, w = fn(z, p, P=float(P))
            except ConvergenceError:
                misses += 1
                if misses >= 3:
                    break
                continue
            out[kind][0].append(P)
            out[kind][1].append(T)
            out[kind][2].append(w)
    return {k: tuple(np.array(a) for a in v) for k, v in out.items()}
