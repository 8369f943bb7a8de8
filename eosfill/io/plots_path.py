"""The report's temperature-entropy diagram: the states the content passes
through, the two-phase boundary where the process comes near it (from the
triple point up where it is bundled), and point labels placed without
overlapping.  Uses the figure helpers of :mod:`eosfill.io.plots`.
"""
from __future__ import annotations

import functools
import io

import numpy as np

from eosfill.errors import EosfillError
from eosfill.io.plots import _C, _figure


def _z_vec(fluid, comp):
    z = np.zeros(fluid.nc)
    for k, x in (comp or {}).items():
        z[fluid.names.index(k)] = x
    return z


def _props(fluid, z, T, v):
    """(s, h) per kg of composition z at (T, v), or None if the state fails."""
    f = fluid.with_composition(z)
    M = float(z @ fluid.molar_masses)
    try:
        with np.errstate(invalid="ignore", divide="ignore"):
            st = f.state(T=float(T), v=float(v))
        return float(np.asarray(st.s)) / M, float(np.asarray(st.h)) / M
    except EosfillError:
        return None


def path_states(scenario, result, max_points=40):
    """States the content passes through, for the diagram.

    Returns dict with ``path`` (list of dict T [K], P [Pa], s [J/(kg K)],
    h [J/kg], label), ``joined`` (True when only end points are known and the
    line between them is not the path), ``others`` (supply or bank states:
    lists of such dicts with a ``label``), and ``z_final`` (mole fractions).
    """
    from eosfill.vessel.balances import Result

    fluid = scenario.fluid()
    V = scenario.vessel.volume
    pts, others, joined = [], [], False

    def add(target, z, T, P, n, label=""):
        if n <= 0:
            return
        sh = _props(fluid, z, T, V / n)
        if sh is not None:
            target.append(dict(T=float(T), P=float(P), s=sh[0], h=sh[1], label=label))

    def add_TP(target, z, T, P, label):
        f = fluid.with_composition(z)
        M = float(z @ fluid.molar_masses)
        try:
            with np.errstate(invalid="ignore", divide="ignore"):
                st = f.state(T=float(T), P=float(P))
            target.append(dict(T=float(T), P=float(P), s=float(st.s) / M, h=float(st.h) / M, label=label))
        except EosfillError:
            pass

    if isinstance(result, Result):
        r = result
        z_f = _z_vec(fluid, r.final.composition)
        z0 = _z_vec(fluid, r.initial.composition) if r.initial is not None else None
        n0 = r.initial.n if r.initial is not None else 0.0
        m0 = r.initial.mass if r.initial is not None else 0.0
        if r.kind in ("fill", "liquefied_fill"):
            z_in = _z_vec(fluid, r.supply["composition"])
            M_in = float(z_in @ fluid.molar_masses)
            if r.initial is not None:
                add(pts, z0, r.initial.T, r.initial.P, n0, "initial")
            for p in r.curve:
                n = n0 + (p["mass"] - m0) / M_in
                if r.initial is None and p["P"] < 0.02 * r.final.P:
                    continue  # the first gas in an evacuated vessel: near vacuum, off the chart
                z = (n0 * z0 + (n - n0) * z_in) / n if z0 is not None else z_in
                add(pts, z, p["T"], p["P"], n)
            add(pts, z_f, r.final.T, r.final.P, r.final.n, "final")
            add_TP(others, z_in, r.supply["T"], r.supply["P"], "supply")
        elif r.kind == "cascade_fill":
            joined = True
            if r.initial is not None:
                add(pts, z0, r.initial.T, r.initial.P, n0, "initial")
            n, nz = n0, (n0 * z0 if z0 is not None else np.zeros(fluid.nc))
            for st, b in zip(r.stages, scenario.banks):
                zb = _z_vec(fluid, st["bank_composition"])
                add_TP(others, zb, b.temperature, b.pressure, f"bank {st['bank']} start")
                if st["moles_drawn"] <= 0:
                    continue
                add_TP(others, zb, st["bank_T"], st["bank_P"], f"bank {st['bank']} end")
                n += st["moles_drawn"]
                nz = nz + st["moles_drawn"] * zb
                add(pts, nz / n, st["vessel_T"], st["vessel_P"], n, f"after bank {st['bank']}")
        else:  # vent: one composition
            M = float(z0 @ fluid.molar_masses)
            for p in r.curve:
                add(pts, z0, p["T"], p["P"], p["mass"] / M)
            if pts:
                pts[0]["label"] = "initial"
            add(pts, z_f, r.final.T, r.final.P, r.final.n, "final")
        return dict(path=pts, joined=joined, others=others, z_final=z_f)

    # time-resolved
    r = result
    sc = scenario
    z0 = sc.mole_fractions(sc.initial.composition) if not sc.initial.empty else None
    if sc.kind == "transient_vent":
        z_in = None
    elif sc.supply is not None:
        z_in = sc.mole_fractions(sc.supply.composition)
    else:
        zs = [sc.mole_fractions(b.composition) for b in sc.banks]
        z_in = zs[0] if all(np.allclose(z, zs[0]) for z in zs) else None
        if z_in is None:
            return dict(path=[], joined=False, others=[], z_final=None,
                        note="banks of different compositions: the path is not drawn")
    if z0 is None:
        z0 = z_in
    M0 = float(z0 @ fluid.molar_masses)
    # the integrator's own steps where the run kept them (denser than the output grid)
    d = getattr(r, "dense", None) or {}
    if "mass" in d and len(d["t"]) > r.t.size:
        T_s, P_s, m_s = (np.asarray(d[k], dtype=float) for k in ("T_gas", "P", "mass"))
    else:
        T_s, P_s, m_s = (np.asarray(a, dtype=float) for a in (r.T_gas, r.P, r.mass))
    m0 = float(m_s[0])
    n0 = m0 / M0
    idx = np.unique(np.linspace(0, m_s.size - 1, min(max_points, m_s.size)).round().astype(int))
    z = z0
    for i in idx:
        m = float(m_s[i])
        if z_in is not None:
            M_in = float(z_in @ fluid.molar_masses)
            n = n0 + (m - m0) / M_in
            z = (n0 * z0 + (n - n0) * z_in) / n
        else:
            n = m / M0
        add(pts, z, T_s[i], P_s[i], n, "initial" if i == 0 else ("final" if i == idx[-1] else ""))
    if z_in is not None and sc.supply is not None:
        add_TP(others, z_in, sc.supply.temperature, sc.supply.pressure, "supply")
    return dict(path=pts, joined=False, others=others, z_final=z)


def _triple_temperature(name):
    """The triple-point temperature [K] of a pure fluid where the data has it (else None)."""
    try:
        from eosfill.equilibrium.solid import triple_point
    except ImportError:  # triple points not bundled in this version
        return None
    try:
        return triple_point(name).T
    except EosfillError:
        return None


# The two-phase region is computed only when the process comes near it: when its
# lowest temperature is below this multiple of the pseudo-critical temperature
# of the final composition (Kay's rule, Kay 1936: sum of x_i Tc_i); beyond it
# the boundary is far off the drawing (common practice, no source).  It is then
# drawn only if some of it falls inside the region the process lives in.
DOME_RELEVANT_TC_MULTIPLE = 1.3


def dome_relevant(fluid, z, T_min) -> bool:
    """Whether the two-phase region may matter to a process whose lowest temperature is ``T_min`` [K]."""
    z = np.asarray(z, dtype=float)
    T_pc = float(z @ np.asarray(fluid.Tc)) / float(z.sum())  # Kay (1936)
    return T_min < DOME_RELEVANT_TC_MULTIPLE * T_pc


def _dome_in_view(dome, xlim, ylim, margin=0.3):
    """True when some point of the boundary lies inside the view (widened by ``margin``)."""
    dx, dy = margin * (xlim[1] - xlim[0]), margin * (ylim[1] - ylim[0])
    for name, (dT, ds) in dome.items():
        x, y = np.asarray(ds) / 1e3, _C(dT)
        if np.any((x > xlim[0] - dx) & (x < xlim[1] + dx) & (y > ylim[0] - dy) & (y < ylim[1] + dy)):
            return True
    return False


def _place_labels(fig, ax, items, fontsize=8):
    """Annotate points without labels overlapping each other or leaving the axes:
    each label tries a few offsets around its point and takes the first free one."""
    renderer = fig.canvas.get_renderer()
    placed = []
    box = ax.get_window_extent(renderer)
    offsets = ((6, 5, "left"), (6, -13, "left"), (-6, 5, "right"), (-6, -13, "right"), (6, 16, "left"),
               (-6, 16, "right"), (6, -24, "left"), (-6, -24, "right"))
    for x, y, text in items:
        best = None
        for dx, dy, ha in offsets:
            a = ax.annotate(text, (x, y), textcoords="offset points", xytext=(dx, dy), fontsize=fontsize, ha=ha,
                            bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.8))
            bb = a.get_window_extent(renderer)
            inside = bb.x0 >= box.x0 and bb.x1 <= box.x1 and bb.y0 >= box.y0 and bb.y1 <= box.y1
            free = not any(bb.overlaps(o) for o in placed)
            if inside and free:
                best = a
                break
            a.remove()
        if best is None:  # no free place: the first offset, kept inside the axes
            best = ax.annotate(text, (x, y), textcoords="offset points", xytext=(-6, 5), fontsize=fontsize,
                               ha="right", annotation_clip=True)
        placed.append(best.get_window_extent(renderer))


@functools.lru_cache(maxsize=16)
def _dome_cached(names, z, model, kij, shift):
    """Two-phase boundary (T [K], s [J/(kg K)]) lines: pure saturation curve or bubble/dew curves."""
    from eosfill.equilibrium import solvers as equilibrium
    from eosfill.states.fluid import Fluid

    comp = {n: x for n, x in zip(names, z) if x > 0}
    kd = {}
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            kd[(names[i], names[j])] = kij[i * len(names) + j]
    f = Fluid(comp, model=model, kij={k: v for k, v in kd.items() if k[0] in comp and k[1] in comp} or None,
              normalise=True)
    M = f.molar_mass
    lines = {}
    with np.errstate(invalid="ignore", divide="ignore"):
        if f.nc == 1:
            Tc, Pc = f.critical_point_pure()
            T = Tc * (1.0 - np.geomspace(2e-4, 0.45, 40))[::-1]
            Tt = _triple_temperature(names[0])
            if Tt is not None and Tt < Tc:  # no liquid below the triple point: the curve starts there
                T = np.unique(np.append(T[T > Tt], Tt))
            sat = equilibrium.saturation_pressure(T, f.params, raise_on_fail=False)
            P = np.asarray(sat["P"])
            ok = np.isfinite(P) & (P > 0)
            T, P = T[ok], P[ok]
            sL = np.asarray(f.single_phase(T, P, which="liquid").s) / M
            sV = np.asarray(f.single_phase(T, P, which="vapour").s) / M
            sc = float(np.asarray(f.single_phase(Tc, Pc).s)) / M
            lines["saturated liquid"] = (np.append(T, Tc), np.append(sL, sc))
            lines["saturated vapour"] = (np.append(T, Tc), np.append(sV, sc))
            lines["critical point"] = (np.array([Tc]), np.array([sc]))
        else:
            env = equilibrium.phase_envelope(f.mole_fractions, f.params, n=10)  # a few seconds; enough for a drawing
            for kind, which in (("bubble", "liquid"), ("dew", "vapour")):
                P, T, _ = env[kind]
                if len(P):
                    s = np.asarray(f.single_phase(np.asarray(T), np.asarray(P), which=which).s) / M
                    lines[f"{kind} curve"] = (np.asarray(T), s)
    return lines


def dome_lines(fluid, z):
    """Two-phase boundary of composition z on T-s axes (cached per composition)."""
    z = np.asarray(z, dtype=float)
    keep = z > 1e-12
    names = tuple(n for n, k in zip(fluid.names, keep) if k)
    zz = tuple(round(float(x), 12) for x in z[keep])
    idx = np.flatnonzero(keep)
    kij = tuple(float(fluid.kij[i, j]) for i in idx for j in idx)
    return _dome_cached(names, zz, fluid.model.name, kij, 0.0)


def plot_path(scenario, result):
    """T-s diagram of the region the process lives in: the content's path, the
    supply/bank states and, where the process comes near it, the two-phase boundary."""
    info = path_states(scenario, result)
    pts = info["path"]
    if not pts:
        return None, info.get("note", "no path")
    fluid = scenario.fluid()
    s = np.array([p["s"] for p in pts]) / 1e3
    T = _C([p["T"] for p in pts])
    s_all = list(s) + [o["s"] / 1e3 for o in info["others"]]
    T_all = list(T) + [float(_C(o["T"])) for o in info["others"]]
    box = (min(s_all), max(s_all), min(T_all), max(T_all))
    dome = {}
    relevant = dome_relevant(fluid, info["z_final"], box[2] + 273.15)
    if relevant:
        try:
            dome = dome_lines(fluid, info["z_final"])
        except EosfillError:
            dome = {}
    fig = _figure(9.0, 5.2)
    ax = fig.add_subplot(1, 1, 1)
    # the region the process lives in, with a margin; the boundary is drawn inside it only
    ds_, dT_ = (box[1] - box[0]) or 0.1, (box[3] - box[2]) or 5.0
    xlim = [box[0] - 0.15 * ds_, box[1] + 0.15 * ds_]
    ylim = [box[2] - 0.15 * dT_, box[3] + 0.15 * dT_]
    if dome and not _dome_in_view(dome, xlim, ylim):
        dome, relevant = {}, False
    if dome:
        crit = dome.get("critical point")
        if crit is not None:  # show the critical point when it is close to the process
            cs, cT = float(crit[1][0]) / 1e3, float(_C(crit[0][0]))
            if cT - ylim[1] < 0.5 * dT_ and xlim[0] - 0.5 * ds_ < cs < xlim[1] + 0.5 * ds_:
                xlim = [min(xlim[0], cs - 0.05 * ds_), max(xlim[1], cs + 0.05 * ds_)]
                ylim[1] = max(ylim[1], cT + 0.05 * dT_)
        for name, (dT, ds) in dome.items():
            if name == "critical point":
                ax.plot(ds / 1e3, _C(dT), "k*", ms=9, label=name)
            else:
                ax.plot(ds / 1e3, _C(dT), "-", color="#1f5fa0" if "liquid" in name or "bubble" in name else "#c0392b",
                        lw=1.4, label=name)
        if "bubble curve" in dome and "dew curve" in dome:
            # the two curves meet at the mixture's critical point; where the envelope stopped short of it,
            # their ends are joined by a dotted line (not computed)
            (Tb, sb), (Td, sd) = dome["bubble curve"], dome["dew curve"]
            if len(Tb) and len(Td):
                ib, jd = int(np.argmax(Tb)), int(np.argmax(Td))
                ax.plot([sb[ib] / 1e3, sd[jd] / 1e3], [_C(Tb[ib]), _C(Td[jd])], ":", color="#555", lw=1.2,
                        label="near the critical point (not computed)")
    ax.plot(s, T, "--" if info["joined"] else "-", color="#222", lw=2.0, marker="o", ms=3.5,
            label="vessel content" + (" (states joined in order)" if info["joined"] else ""))
    groups = {}
    for o in info["others"]:
        groups.setdefault(o["label"].replace(" start", "").replace(" end", ""), []).append(o)
    shades = ("#1b5e20", "#43a047", "#81c784", "#00695c", "#4db6ac", "#827717")
    for i, (label, grp) in enumerate(groups.items()):
        gs = [o["s"] / 1e3 for o in grp]
        gT = [float(_C(o["T"])) for o in grp]
        # named in the legend, not on the plot: bank states crowd together
        ax.plot(gs, gT, "s-", color=shades[i % len(shades)], ms=5, lw=1.2,
                label=f"{label} (start → end)" if len(grp) > 1 else label)
    ax.set_xlim(*xlim)
    ax.set_ylim(*ylim)
    ax.set_xlabel("specific entropy s  [kJ/(kg K)]")
    ax.set_ylabel("temperature  [°C]")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7, loc="center left", bbox_to_anchor=(1.01, 0.5), borderaxespad=0.0)
    fig.suptitle("Temperature–entropy diagram", fontsize=11)
    fig.tight_layout()
    _place_labels(fig, ax, [(ss, tt, p["label"]) for p, ss, tt in zip(pts, s, T) if p["label"]])
    where = "of the final composition" if fluid.nc > 1 else "of the fluid"
    cap = ("Temperature–entropy diagram of the region the process lives in: the vessel content's path (black)"
           + ("; cascade: states after each bank, joined in order (the line between them is not the path); "
              "green squares: each bank's start and end states (each bank follows its own isentrope)"
              if info["joined"] else "; green: the supply state (it enters by an isenthalpic throttle)"
              if info["others"] else ""))
    if dome:
        known = fluid.nc == 1 and _triple_temperature(fluid.names[0]) is not None
        cap += (f"; the two-phase boundary {where} (blue: liquid/bubble side, red: vapour/dew side)"
                + (", from the triple point up" if known else "") + ".")
        if fluid.nc > 1:
            cap += (" Bubble and dew curves are drawn where their points converged, pressure by pressure; a dotted "
                    "line joins their ends towards the critical point, which was not computed.")
    elif relevant:
        cap += ". The two-phase boundary could not be computed for this composition."
    else:
        cap += (". The two-phase region is not drawn: the process stays far from it (lowest temperature "
                f"{box[2]:.4g} °C).")
    return _png_tight(fig), cap


def _png_tight(fig):
    """PNG of a figure already laid out (labels placed after tight_layout)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100)
    return buf.getvalue()

