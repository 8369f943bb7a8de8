"""End states of many fills and vents at once: vectorised (V1)-(V3) and (V7)
where the amount admitted is known in advance, and (V4) for adiabatic vents
(:func:`vent_isentropic`).

:func:`eosfill.vessel.fill` solves one fill; its amount admitted is a root
search except when the stop criterion fixes it (``target_mass``,
``target_fill_density``).  For those fills of a rigid adiabatic vessel
(no wall heat capacity) whose initial content has the supply's composition
(or is empty), this module evaluates the same balances for many cases with
one call of each state solver per shared composition:

* supply states (T_in, P_in) and initial states (T_0, P_0) -> h_in, n_0, U_0;
* n_f = n_0 + (m_target - m_0) / M_in                         (V1)
* z_f = (n_0 z_0 + N z_in) / (n_0 + N), N = n_f - n_0            (V1)
* end state (u_f, v_f) = ((U_0 + (n_f - n_0) h_in) / n_f, V / n_f)   (V2)-(V3)
* settled state (T_settle, v_f), nominal states (T, P_nominal)      (V7)

with the same arithmetic, in the same order, as ``fill``; the state
solvers' batch path runs the same code as their single path, so each row
equals a single run bit for bit (checked in tests/test_sweep.py).  Rows
whose end composition differs in any bit are solved in separate calls.

What is not batched (``ok`` False; the caller runs those one at a time):
fills to a pressure or settled pressure (a root search per case), a wall
taking part, a temperature limit, an initial content of another
composition, a two-phase end state, and any case a check of ``fill``
would refuse (end above the supply pressure, target below the start).
The end-state curve that ``fill`` adds to its result is not computed.
"""
from __future__ import annotations

import numpy as np

from eosfill.constants import R


def _states(fluid, z, **spec):
    f = fluid.with_composition(z)
    with np.errstate(invalid="ignore", divide="ignore"):
        return f.state(**spec)


def fill_to_amount(fluid, z, V, T_in, P_in, target_mass, T_settle, T0=None, P0=None, mass0=None,
                   nominal_pressure=None, nominal_temperature=None):
    """End states of adiabatic fills to a known mass, many at once.

    Parameters
    ----------
    fluid : eosfill.Fluid
        Components and model; ``z`` [mol/mol] is the composition of the
        supply and of any initial content.
    V, T_in, P_in, target_mass, T_settle : array_like
        Volume [m³], supply temperature [K] and pressure [Pa], mass at the
        end [kg], settled temperature [K]; one value per case.
    T0, P0, mass0 : array_like or None
        Initial temperature [K] with pressure [Pa] or mass [kg]; NaN (or
        None for all) where the vessel starts empty.
    nominal_pressure, nominal_temperature : array_like or None
        Working pressure [Pa] (NaN: none) and its reference temperature [K].

    Returns
    -------
    dict of arrays
        ``ok`` (bool: computed here), and per case ``T``, ``P``, ``n``,
        ``mass``, ``m0``, ``phase``, ``vapor_fraction``, ``energy_closure``,
        ``mass_closure``, ``P_settled``, ``phase_settled``, ``nominal_mass``,
        ``short_fill``, ``state_of_charge`` (SI; NaN where not computed).
    """
    arrays = [np.asarray(a, dtype=float) for a in (V, T_in, P_in, target_mass, T_settle)]
    n_cases = np.broadcast(*arrays).size
    V, T_in, P_in, m_target, T_settle = (np.broadcast_to(a, (n_cases,)).copy() for a in arrays)

    def col(a):
        return np.full(n_cases, np.nan) if a is None else np.broadcast_to(np.asarray(a, dtype=float), (n_cases,)).copy()

    T0, P0, mass0 = col(T0), col(P0), col(mass0)
    P_nom, T_nom = col(nominal_pressure), col(nominal_temperature)
    z = np.array(z, dtype=float)
    M = float(z @ fluid.molar_masses)  # (the same product as vessel._molar_mass)
    nan = np.full(n_cases, np.nan)
    out = {k: nan.copy() for k in ("T", "P", "n", "mass", "m0", "vapor_fraction", "energy_closure",
                                   "mass_closure", "P_settled", "nominal_mass", "short_fill", "state_of_charge")}
    out["phase"] = np.full(n_cases, "", dtype=object)
    out["phase_settled"] = np.full(n_cases, "", dtype=object)
    ok = np.ones(n_cases, dtype=bool)

    # supply states (one composition for all)
    st_in = _states(fluid, z, T=T_in, P=P_in)
    h_in = np.asarray(st_in.h, dtype=float).reshape(n_cases)
    # initial content: by pressure, by mass, or empty
    n0 = np.zeros(n_cases)
    U0 = np.zeros(n_cases)
    P_start = np.zeros(n_cases)
    by_P = np.isfinite(T0) & np.isfinite(P0)
    by_m = np.isfinite(T0) & np.isfinite(mass0) & ~by_P
    if by_P.any():
        st0 = _states(fluid, z, T=T0[by_P], P=P0[by_P])
        n0[by_P] = V[by_P] / np.asarray(st0.v, dtype=float).reshape(-1)
        U0[by_P] = n0[by_P] * np.asarray(st0.u, dtype=float).reshape(-1)
        P_start[by_P] = np.asarray(st0.P, dtype=float).reshape(-1)
    if by_m.any():
        n0[by_m] = mass0[by_m] / M
        try:
            st0 = _states(fluid, z, T=T0[by_m], v=V[by_m] / n0[by_m])
            U0[by_m] = n0[by_m] * np.asarray(st0.u, dtype=float).reshape(-1)
            P_start[by_m] = np.asarray(st0.P, dtype=float).reshape(-1)
        except Exception:  # noqa: BLE001 - fill() names the input; let the single runs say it
            ok[by_m] = False
    m0 = n0 * M
    # the initial content as the closure recomputes it: (T0, P) of its reported state
    U0_r, m0_r = np.zeros(n_cases), np.zeros(n_cases)
    has0 = by_P | by_m
    if has0.any():
        with np.errstate(invalid="ignore", divide="ignore"):
            try:
                st0r = _states(fluid, z, T=T0[has0], P=P_start[has0])
                n0r = V[has0] / np.asarray(st0r.v, dtype=float).reshape(-1)
                U0_r[has0] = n0r * np.asarray(st0r.u, dtype=float).reshape(-1)
                m0_r[has0] = n0r * M
            except Exception:  # noqa: BLE001 - the single runs name the input
                ok[has0] = False
    ok &= P_start < P_in
    ok &= m_target > m0
    # (V1): the amount at the end, and the composition
    n_f = n0 + (m_target - m0) / M
    N = n_f - n0
    E = U0 + N * h_in + 0.0
    n_sum = n0 + N  # as vessel._Content.composition forms it (not always n_f to the bit)
    with np.errstate(invalid="ignore", divide="ignore"):
        z_rows = np.where(n0[:, None] > 0, (n0[:, None] * z[None, :] + N[:, None] * z[None, :]) / n_sum[:, None],
                          z[None, :])
    # rows whose end composition is the same to the bit share one call of each solver
    keys = {}
    for i in np.flatnonzero(ok):
        keys.setdefault(z_rows[i].tobytes(), []).append(i)
    for rows in keys.values():
        rows = np.array(rows)
        zf = z_rows[rows[0]]
        try:
            st = _states(fluid, zf, u=E[rows] / n_f[rows], v=V[rows] / n_f[rows])
            st_s = _states(fluid, zf, T=T_settle[rows], v=V[rows] / n_f[rows])
        except Exception:  # noqa: BLE001 - one case the model refuses: all to the single path
            ok[rows] = False
            continue
        T = np.asarray(st.T, dtype=float).reshape(-1)
        P = np.asarray(st.P, dtype=float).reshape(-1)
        phase = np.asarray(st.phase, dtype=object).reshape(-1)
        beta = np.asarray(st.vapor_fraction, dtype=float).reshape(-1)
        Mf = float(zf @ fluid.molar_masses)
        n = n_f[rows]
        mass = n * Mf
        good = (P <= P_in[rows] * (1.0 + 1e-12)) & (phase != "two-phase")
        out["T"][rows], out["P"][rows], out["n"][rows], out["mass"][rows] = T, P, n, mass
        out["phase"][rows], out["vapor_fraction"][rows] = phase, beta
        # closures (V1), (V2) as fill() forms them: the reported end and initial states and
        # the supply recomputed by separate evaluations (balances._fill_closure), not the solved states
        st_r = _states(fluid, zf, T=T, P=P)
        n_r = V[rows] / np.asarray(st_r.v, dtype=float).reshape(-1)
        U_r = n_r * np.asarray(st_r.u, dtype=float).reshape(-1)
        e_cl = (U_r - U0_r[rows] + 0.0 - N[rows] * h_in[rows] - 0.0) / (np.maximum(n, 1e-300) * R * T)
        out["energy_closure"][rows] = np.where(np.isfinite(e_cl), e_cl, np.nan)
        out["mass_closure"][rows] = (n_r * Mf - m0_r[rows] - N[rows] * M) / (n_r * Mf)
        out["P_settled"][rows] = np.asarray(st_s.P, dtype=float).reshape(-1)
        out["phase_settled"][rows] = np.asarray(st_s.phase, dtype=object).reshape(-1)
        nom = np.isfinite(P_nom[rows])
        if nom.any():
            r = rows[nom]
            st_n = _states(fluid, zf, T=T_settle[r], P=P_nom[r])
            out["nominal_mass"][r] = V[r] / np.asarray(st_n.v, dtype=float).reshape(-1) * Mf
            out["short_fill"][r] = out["nominal_mass"][r] - n_f[r] * Mf
            st_r = _states(fluid, zf, T=T_nom[r], P=P_nom[r])
            out["state_of_charge"][r] = (n_f[r] / V[r]) * np.asarray(st_r.v, dtype=float).reshape(-1)
        ok[rows] &= good
    out["m0"] = m0
    out["ok"] = ok
    return out


def vent_isentropic(fluid, z, V, T0, target_pressure=None, target_mass=None, P0=None, mass0=None):
    """End states of adiabatic vents (no wall, no temperature limit), many at once.

    (V4) of :mod:`eosfill.vessel.balances`: the content left follows its
    isentrope s = s_0 to the end pressure (``target_pressure`` [Pa]) or the
    mass left (``target_mass`` [kg]; NaN where the other is given); the
    enthalpy let out is ∫ h dn along it (Gauss-Legendre, as
    :func:`eosfill.vessel.vent._isentrope_enthalpy_integral`), the lowest
    temperature is taken over the same nine path points as
    :func:`eosfill.vessel.vent.vent`.  The same arithmetic as ``vent``; cases
    whose path or end state is two-phase (the integral is then split at the
    dew point, case by case) come back with ``ok`` False.

    Returns
    -------
    dict of arrays
        ``ok``, ``T``, ``P``, ``n``, ``mass``, ``m0``, ``phase``,
        ``vapor_fraction``, ``T_min``, ``liquid``, ``energy_closure``,
        ``mass_closure`` (SI).
    """
    import math

    from eosfill.vessel.vent import _gauss_legendre

    arrays = [np.asarray(a, dtype=float) for a in (V, T0)]
    n_cases = np.broadcast(*arrays).size
    V, T0 = (np.broadcast_to(a, (n_cases,)).copy() for a in arrays)

    def col(a):
        return np.full(n_cases, np.nan) if a is None else np.broadcast_to(np.asarray(a, dtype=float), (n_cases,)).copy()

    P_end, m_end, P0, mass0 = col(target_pressure), col(target_mass), col(P0), col(mass0)
    z = np.array(z, dtype=float)
    M = float(z @ fluid.molar_masses)
    ok = np.ones(n_cases, dtype=bool)
    out = {k: np.full(n_cases, np.nan) for k in ("T", "P", "n", "mass", "m0", "vapor_fraction", "T_min",
                                                  "energy_closure", "mass_closure")}
    out["phase"] = np.full(n_cases, "", dtype=object)
    out["liquid"] = np.zeros(n_cases, dtype=bool)
    # initial content (vessel._initial_content)
    n0 = np.full(n_cases, np.nan)
    u0 = np.full(n_cases, np.nan)
    s0 = np.full(n_cases, np.nan)
    P_start = np.full(n_cases, np.nan)
    by_P = np.isfinite(P0)
    if by_P.any():
        st0 = _states(fluid, z, T=T0[by_P], P=P0[by_P])
        n0[by_P] = V[by_P] / np.asarray(st0.v, dtype=float).reshape(-1)
        for key, arr in (("u", u0), ("s", s0), ("P", P_start)):
            arr[by_P] = np.asarray(getattr(st0, key), dtype=float).reshape(-1)
    by_m = ~by_P & np.isfinite(mass0)
    if by_m.any():
        n0[by_m] = mass0[by_m] / M
        try:
            st0 = _states(fluid, z, T=T0[by_m], v=V[by_m] / n0[by_m])
            for key, arr in (("u", u0), ("s", s0), ("P", P_start)):
                arr[by_m] = np.asarray(getattr(st0, key), dtype=float).reshape(-1)
        except Exception:  # noqa: BLE001 - the single path names the input
            ok[by_m] = False
    by_target_P = np.isfinite(P_end)
    ok &= np.where(by_target_P, P_end < P_start, m_end < n0 * M)
    ok &= np.isfinite(n0) & np.isfinite(s0)
    rows = np.flatnonzero(ok)
    if rows.size == 0:
        out["ok"] = ok
        return out
    # the end of the isentrope
    n_f = np.full(n_cases, np.nan)
    T_f, P_f, u_f = (np.full(n_cases, np.nan) for _ in range(3))
    phase_f = np.full(n_cases, "", dtype=object)
    beta_f = np.full(n_cases, np.nan)
    for mask, spec in ((by_target_P & ok, "P"), (~by_target_P & ok, "m")):
        r = np.flatnonzero(mask)
        if r.size == 0:
            continue
        if spec == "P":
            st = _states(fluid, z, P=P_end[r], s=s0[r])
            n_f[r] = V[r] / np.asarray(st.v, dtype=float).reshape(-1)
        else:
            n_f[r] = m_end[r] / M
            st = _states(fluid, z, s=s0[r], v=V[r] / n_f[r])
        T_f[r], P_f[r], u_f[r] = (np.asarray(getattr(st, k), dtype=float).reshape(-1) for k in ("T", "P", "u"))
        phase_f[r] = np.asarray(st.phase, dtype=object).reshape(-1)
        beta_f[r] = np.asarray(st.vapor_fraction, dtype=float).reshape(-1)
    # the phase along the isentrope (17 points in ln n), the quadrature nodes and the 9 path points of each case
    grids, nodes, weights, paths = [], [], [], []
    for i in rows:
        xa, xb = math.log(n0[i]), math.log(n_f[i])
        grids.append(np.linspace(xa, xb, 17))
        x, w = _gauss_legendre(xb, xa)
        nodes.append(np.exp(x))
        weights.append(w)
        paths.append(np.geomspace(n0[i], n_f[i], 9))
    k_grid, k_node, k_path = 17, nodes[0].size, 9
    s_rep = np.repeat(s0[rows], k_grid)
    V_rep = np.repeat(V[rows], k_grid)
    ph = np.asarray(_states(fluid, z, s=s_rep, v=V_rep / np.exp(np.concatenate(grids))).phase).reshape(rows.size, k_grid)
    st_n = _states(fluid, z, s=np.repeat(s0[rows], k_node), v=np.repeat(V[rows], k_node) / np.concatenate(nodes))
    h = np.asarray(st_n.h, dtype=float).reshape(rows.size, k_node)
    st_p = _states(fluid, z, s=np.repeat(s0[rows], k_path), v=np.repeat(V[rows], k_path) / np.concatenate(paths))
    T_path = np.asarray(st_p.T, dtype=float).reshape(rows.size, k_path)
    ph_path = np.asarray(st_p.phase, dtype=object).reshape(rows.size, k_path)
    with np.errstate(invalid="ignore", divide="ignore"):
        st_fr = _states(fluid, z, T=T_f[rows], P=P_f[rows])
        st_0r = _states(fluid, z, T=T0[rows], P=P_start[rows])
    nf_r = V[rows] / np.asarray(st_fr.v, dtype=float).reshape(-1)
    Uf_r = nf_r * np.asarray(st_fr.u, dtype=float).reshape(-1)
    n0_r = V[rows] / np.asarray(st_0r.v, dtype=float).reshape(-1)
    U0_r = n0_r * np.asarray(st_0r.u, dtype=float).reshape(-1)
    for j, i in enumerate(rows):
        if np.any(ph[j] == "two-phase") or phase_f[i] == "two-phase":
            ok[i] = False  # the integral is split at the dew point: the single path
            continue
        E_out = 0.0 + float(np.sum(weights[j] * nodes[j] * h[j]))
        mass = n_f[i] * M
        out["T"][i], out["P"][i], out["n"][i], out["mass"][i] = T_f[i], P_f[i], n_f[i], mass
        out["phase"][i], out["vapor_fraction"][i] = phase_f[i], beta_f[i]
        # closures (V4)/(V5), (V1) as vent() forms them: the reported states recomputed
        out["energy_closure"][i] = ((Uf_r[j] + 0.0 * T_f[i] - U0_r[j] - 0.0 * T0[i] + E_out)
                                    / (max(n_f[i], 1e-300) * R * T_f[i]))
        out["mass_closure"][i] = (nf_r[j] * M - (n0_r[j] * M - (n0[i] - n_f[i]) * M)) / (nf_r[j] * M)
        out["T_min"][i] = min([float(t) for t in T_path[j]] + [float(T_f[i])])
        out["liquid"][i] = bool(np.isin(ph_path[j], ("two-phase", "liquid")).any())
    out["m0"] = n0 * M
    out["ok"] = ok
    return out
