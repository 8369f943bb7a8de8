"""Checks of a time-resolved run's output rows: the content's phase label, each row
recomputed by a separate evaluation, the (T3) mass and energy closures, and the flags
of limits passed.

Used by the driver in ``run.py`` (map in ``model.py``).
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.constants import R
from eosfill.errors import CONVERGED, worst_status

def _phase_label(fluid, row):
    """The content's phase label, from the State's own labelling (one rule for the
    whole package, :mod:`eosfill.model.mixture`): a two-phase row carries the
    equilibrium solver's label; a single-phase row is labelled by the State of
    the same root at its (T, P) (the cubic root whose volume is the content's)."""
    g = row["gas"]
    if "phase" in g:
        return str(g["phase"])
    x = np.asarray(g["x"])
    f = fluid if np.array_equal(x, fluid.mole_fractions) else fluid.with_composition(x)
    with np.errstate(invalid="ignore", divide="ignore"):
        st = f.single_phase(row["T"], row["P"])
        if abs(float(st.v) / g["v"] - 1.0) > 1e-6:   # not the stable root: the other one
            st = f.single_phase(row["T"], row["P"], which="liquid" if g["v"] < float(st.v) else "vapour")
    return str(st.phase)


def _recomputed_row(fluid, V, row):
    """(n, U, P residual) of an output row's content recomputed by a separate evaluation
    from its reported T, P and composition: the (T, P) state of the content's root for one
    phase (n = V/v), the (T, v) equilibrium state when two-phase (its P compared with the
    reported one)."""
    g = row["gas"]
    x = np.asarray(g["x"])
    f = g.get("fluid_x") or (fluid if np.array_equal(x, fluid.mole_fractions) else fluid.with_composition(x))
    with np.errstate(invalid="ignore", divide="ignore"):
        if g["pr"] is None:
            st = f.state(T=row["T"], v=g["v"])
            return (g["n"], g["n"] * float(st.u), (float(st.P) - row["P"]) / row["P"],
                    worst_status(getattr(st, "status", CONVERGED)))
        st = f.single_phase(row["T"], row["P"])
        if abs(float(st.v) / g["v"] - 1.0) > 1e-6:   # the content is on the other root
            st = f.single_phase(row["T"], row["P"], which="liquid" if g["v"] < float(st.v) else "vapour")
    n = V / float(st.v)
    return n, n * float(st.u), 0.0, worst_status(getattr(st, "status", CONVERGED))


def _single_phase_batches(fluid, rows):
    """The State of the content's root at each single-phase row's (T, P), as
    {row index: (State of one row, index in it)}: one :meth:`single_phase` call per
    composition for the rows that share it (a fixed-composition run: one call for
    all rows), the rows whose content is on the other root then one at a time.
    Each row is the same one-state kernel as :func:`_recomputed_row` evaluates."""
    groups = {}
    for i, r in enumerate(rows):
        g = r["gas"]
        if g["pr"] is None or "phase" in g:
            continue
        x = np.asarray(g["x"], dtype=float)
        groups.setdefault(x.tobytes(), (x, []))[1].append(i)
    out = {}
    for x, idx in groups.values():
        f = fluid if np.array_equal(x, fluid.mole_fractions) else fluid.with_composition(x)
        T = np.array([rows[i]["T"] for i in idx], dtype=float)
        P = np.array([rows[i]["P"] for i in idx], dtype=float)
        with np.errstate(invalid="ignore", divide="ignore"):
            st = f.single_phase(T, P)
        v = np.atleast_1d(st.v)
        for k, i in enumerate(idx):
            vg = rows[i]["gas"]["v"]
            if abs(float(v[k]) / vg - 1.0) > 1e-6:   # the content is on the other root
                with np.errstate(invalid="ignore", divide="ignore"):
                    one = f.single_phase(rows[i]["T"], rows[i]["P"], which="liquid" if vg < float(v[k]) else "vapour")
                out[i] = (one, None)
            else:
                out[i] = (st, k)
    return out


def _pick(st, k, name):
    a = getattr(st, name)
    return a if k is None else np.atleast_1d(a)[k]


def _phase_labels(fluid, rows):
    """:func:`_phase_label` of every output row, single-phase rows in batches."""
    one = _single_phase_batches(fluid, rows)
    labels = []
    for i, r in enumerate(rows):
        if i in one:
            st, k = one[i]
            labels.append(str(_pick(st, k, "phase")))
        else:
            labels.append(_phase_label(fluid, r))
    return labels


def _recomputed_rows(fluid, V, rows):
    """:func:`_recomputed_row` of every output row, single-phase rows in batches."""
    one = _single_phase_batches(fluid, rows)
    out = []
    for i, r in enumerate(rows):
        if i in one:
            st, k = one[i]
            n = V / float(_pick(st, k, "v"))
            status = getattr(st, "status", CONVERGED)
            out.append((n, n * float(_pick(st, k, "u")), 0.0,
                        worst_status(status if k is None or np.ndim(status) == 0 else np.atleast_1d(status)[k])))
        else:
            out.append(_recomputed_row(fluid, V, r))
    return out


def _closure(m, ys, rows, y0):
    """(T3) relative mass and energy closure, the largest over the output times, and the
    largest two-phase pressure residual.

    The content's amount and energy are recomputed from each row's reported T, P and
    composition by a separate evaluation (:func:`_recomputed_row`), not taken from the
    integrated N and U."""
    Mw = m.fluid.molar_masses
    a = m.ia
    m0 = float(y0[:m.nc] @ Mw)
    recomputed = _recomputed_rows(m.fluid, m.V, rows)
    Mx = np.array([float(np.asarray(r["gas"]["x"]) @ Mw) for r in rows])
    mass = np.array([q[0] for q in recomputed]) * Mx
    m_in, m_out = ys[:, a], ys[:, a + 1]
    mass_scale = np.maximum.reduce([np.full(mass.size, m0), mass, m_in, m_out])
    mass_cl = float(np.max(np.abs(mass - m0 - m_in + m_out) / mass_scale))
    E = np.array([q[1] for q in recomputed])
    p_res = float(np.max(np.abs([q[2] for q in recomputed])))
    status = worst_status(*(q[3] for q in recomputed))
    Ew = np.zeros(len(rows))
    Ew0 = 0.0
    if m.wall is not None:
        C = m.wall.heat_capacity
        Ew = ys[:, m.iw:m.ib] @ C
        Ew0 = float(y0[m.iw:m.ib] @ C)
    Eb = np.zeros(len(rows))
    Eb0 = 0.0
    for j in range(m.nb):
        Eb = Eb + ys[:, m.ib + 2 * j + 1]
        Eb0 += float(y0[m.ib + 2 * j + 1])
    E0 = float(y0[m.iU])
    H_in, H_out, Q_amb = ys[:, a + 2], ys[:, a + 3], ys[:, a + 5]
    if m.nb:
        # banks are inside the system boundary: what leaves them enters the vessel
        lhs = E + Ew + Eb - E0 - Ew0 - Eb0 + H_out - Q_amb
    else:
        lhs = E + Ew - E0 - Ew0 - H_in + H_out - Q_amb
    n_max = float(np.max(ys[:, :m.nc].sum(axis=1)))
    # the energies involved, and 1e-9 of the wall's stored energy C T_w: float64 round-off
    # of a very heavy wall's energy (the isothermal limit) would otherwise set the closure
    scale = (np.abs(H_in) + np.abs(H_out) + np.abs(Q_amb) + np.abs(ys[:, a + 4]) + n_max * R * 300.0
             + 1e-9 * np.abs(Ew))
    return mass_cl, float(np.max(np.abs(lhs) / scale)), p_res, status


def _flags(res, limits):
    flags = []
    L = limits or {}

    def C(T):
        return f"{T - 273.15:.2f} °C"

    checks = (("max_gas_temperature", "T_gas", "max", "gas temperature"),
              ("min_gas_temperature", "T_gas", "min", "gas temperature"),
              ("max_wall_temperature", "T_wall_inner", "max", "inner wall temperature"),
              ("min_wall_temperature", "T_wall_inner", "min", "inner wall temperature"))
    for key, series, which, label in checks:
        lim = L.get(key)
        if lim is None:
            continue
        val, when = res.peak(series, which)
        if not math.isfinite(val):
            continue
        if (which == "max" and val > lim) or (which == "min" and val < lim):
            word = "above" if which == "max" else "below"
            flags.append(f"{label} {C(val)} at {when:.4g} s is {word} the limit {C(lim)} ({key})")
    if L.get("min_wall_temperature") is not None:
        val, when = res.peak("T_wall_outer", "min")
        if math.isfinite(val) and val < L["min_wall_temperature"]:
            flags.append(f"outer wall temperature {C(val)} at {when:.4g} s is below the limit "
                         f"{C(L['min_wall_temperature'])} (min_wall_temperature)")
    if L.get("max_pressure") is not None:
        val, when = res.peak("P", "max")
        if val > L["max_pressure"]:
            flags.append(f"pressure {val / 1e5:.6g} bar at {when:.4g} s is above the limit "
                         f"{L['max_pressure'] / 1e5:.6g} bar (max_pressure)")
    if res.liquid_appeared:
        i = int(np.argmax(np.asarray(res.vapour_fraction) < 1.0 - 1e-12))
        flags.append("the content holds a liquid from the start (two-phase)" if i == 0
                     else f"a liquid phase appears at {res.t[i]:.4g} s")
    return flags
