"""End states of many fills and vents at once: vectorised (V1)-(V3) and (V7) for fills
to a known amount (:func:`fill_to_amount`) or to a pressure, a settled pressure or the
supply pressure (:func:`fill_to_stop`), and (V4) for adiabatic vents
(:func:`vent_isentropic`).

For fills of a rigid adiabatic vessel (no wall heat capacity, no temperature limit)
this module evaluates the balances of :func:`eosfill.vessel.fill` for many cases with
one call of each state solver per shared composition:

* supply states (T_in, P_in) and initial states (T_0, P_0) -> h_in, n_0, U_0;
* n_f = n_0 + (m_target - m_0) / M_in (to a mass), or the root search of
  :class:`eosfill.vessel.fill_rows.FillRows` (to a pressure) -- the code ``fill``
  itself runs, on one row;                                               (V1)-(V3)
* z_f = (n_0 z_0 + N z_in) / (n_0 + N), N = n_f - n_0                      (V1)
* end state (u_f, v_f) = ((U_0 + N h_in) / n_f, V / n_f)                  (V2)-(V3)
* settled state (T_settle, v_f), nominal states (T, P_nominal)            (V7)

with the same arithmetic, in the same order, as ``fill``, and every state solved by
:func:`eosfill.vessel.inputs._rows_state` (whose rows equal the single states); so each
row equals a single run bit for bit (checked in tests/test_sweep.py and
tests/test_vessel.py).  Rows whose end composition differs in any bit are solved in
separate calls.

A row that fails as ``fill`` would (a target the supply cannot reach by its nature, a
root search that does not converge) carries in ``error`` the exception ``fill``
raises for it.  What is not computed here (``ok`` False, no ``error``; the caller
runs those one at a time): a wall taking part, a temperature limit, a two-phase end
state, a state where a solid may form (flags with text), a result that does not close,
a fill to a mass that stops at the supply pressure.  The end-state curve that
``fill`` adds to its result is not computed.
"""
from __future__ import annotations

import numpy as np

from eosfill.constants import R
from eosfill.vessel.inputs import _rows_state


def _states(fluid, z, **spec):
    """(values, errors) of _rows_state; a batch with any failed row raises (callers fall back)."""
    return _rows_state(fluid, z, **spec)


def _column(a, n):
    return np.full(n, np.nan) if a is None else np.broadcast_to(np.asarray(a, dtype=float), (n,)).copy()


def _prepare(fluid, z_in, z0, V, T_in, P_in, T0, P0, mass0):
    """Supply and initial content of each case (vessel.fill's steps up to the search)."""
    n = V.size
    p = dict(ok=np.ones(n, dtype=bool), errors={})
    M_in = float(z_in @ fluid.molar_masses)  # (the same product as vessel._molar_mass)
    M0 = float(z0 @ fluid.molar_masses)
    p["M_in"], p["M0"] = M_in, M0
    st_in, err = _states(fluid, z_in, T=T_in, P=P_in)
    for i in err:
        p["ok"][i] = False
    p["ok"] &= ~st_in["solid"]  # the flag's text: the single path
    p["h_in"], p["v_in"], p["phase_in"] = st_in["h"], st_in["v"], st_in["phase"]
    n0, U0, P_start = np.zeros(n), np.zeros(n), np.zeros(n)
    by_P = np.isfinite(T0) & np.isfinite(P0)
    by_m = np.isfinite(T0) & np.isfinite(mass0) & ~by_P
    if by_P.any():
        r = np.flatnonzero(by_P)
        st0, err = _states(fluid, z0, T=T0[r], P=P0[r])
        n0[r] = V[r] / st0["v"]
        U0[r] = n0[r] * st0["u"]
        P_start[r] = st0["P"]
        p["ok"][r[list(err)]] = False
    if by_m.any():
        r = np.flatnonzero(by_m)
        n0[r] = mass0[r] / M0
        st0, err = _states(fluid, z0, T=T0[r], v=V[r] / n0[r])
        U0[r] = n0[r] * st0["u"]
        P_start[r] = st0["P"]
        p["ok"][r[list(err)]] = False  # fill() names the input: the single path says it
    p["n0"], p["U0"], p["P_start"], p["m0"] = n0, U0, P_start, n0 * M0
    # the initial content as the closure recomputes it: (T0, P) of its reported state
    U0_r, m0_r = np.zeros(n), np.zeros(n)
    has0 = np.flatnonzero(by_P | by_m)
    if has0.size:
        st0r, err = _states(fluid, z0, T=T0[has0], P=P_start[has0])
        n0r = V[has0] / st0r["v"]
        U0_r[has0] = n0r * st0r["u"]
        m0_r[has0] = n0r * M0
        p["ok"][has0[list(err)]] = False
    p["U0_r"], p["m0_r"] = U0_r, m0_r
    return p


def _outputs(n):
    out = {k: np.full(n, np.nan) for k in ("T", "P", "n", "mass", "m0", "vapor_fraction", "energy_closure",
                                          "mass_closure", "P_settled", "nominal_mass", "short_fill",
                                          "state_of_charge")}
    out["phase"] = np.full(n, "", dtype=object)
    out["phase_settled"] = np.full(n, "", dtype=object)
    out["stop"] = np.full(n, "", dtype=object)
    out["stop_met"] = np.zeros(n, dtype=bool)
    out["unmet_flag"] = np.full(n, "", dtype=object)
    out["error"] = np.full(n, None, dtype=object)
    return out


def fill_to_amount(fluid, z, V, T_in, P_in, target_mass, T_settle, T0=None, P0=None, mass0=None,
                   nominal_pressure=None, nominal_temperature=None, z0=None):
    """End states of adiabatic fills to a known mass, many at once.

    Parameters
    ----------
    fluid : eosfill.Fluid
        Components and model; ``z`` [mol/mol] is the composition of the
        supply (and of any initial content unless ``z0`` is given).
    V, T_in, P_in, target_mass, T_settle : array_like
        Volume [m³], supply temperature [K] and pressure [Pa], mass at the
        end [kg], settled temperature [K]; one value per case.
    T0, P0, mass0 : array_like or None
        Initial temperature [K] with pressure [Pa] or mass [kg]; NaN (or
        None for all) where the vessel starts empty.
    nominal_pressure, nominal_temperature : array_like or None
        Working pressure [Pa] (NaN: none) and its reference temperature [K].
    z0 : array_like, optional
        Composition of the initial content (default ``z``).

    Returns
    -------
    dict of arrays
        ``ok`` (bool: computed here), ``error`` (the exception ``fill`` raises for the
        case, or None), and per case ``T``, ``P``, ``n``, ``mass``, ``m0``, ``phase``,
        ``vapor_fraction``, ``energy_closure``, ``mass_closure``, ``P_settled``,
        ``phase_settled``, ``nominal_mass``, ``short_fill``, ``state_of_charge``,
        ``stop``, ``stop_met``, ``unmet_flag`` (SI; NaN where not computed).
    """
    return fill_to_stop(fluid, z, V, T_in, P_in, "target_mass", target_mass, T_settle, T0=T0, P0=P0, mass0=mass0,
                        nominal_pressure=nominal_pressure, nominal_temperature=nominal_temperature, z0=z0)


def fill_to_stop(fluid, z, V, T_in, P_in, stop, target, T_settle, T0=None, P0=None, mass0=None,
                 nominal_pressure=None, nominal_temperature=None, z0=None):
    """End states of adiabatic fills to a stop criterion, many at once.

    ``stop``: ``"target_pressure"`` [Pa], ``"target_settled_pressure"`` [Pa, at
    ``T_settle``], ``"supply_pressure"`` (``target`` ignored) or ``"target_mass"``
    [kg]; ``target`` one value per case.  Other parameters and the result as
    :func:`fill_to_amount`.  The amount admitted is found by the root search of
    :meth:`eosfill.vessel.fill_rows.FillRows.solve`, all rows together, each on its own.
    """
    from eosfill.vessel.fill_rows import FillRows, densest, first_guess, target_error, unmet_flag

    arrays = [np.asarray(a, dtype=float) for a in (V, T_in, P_in, T_settle)]
    n_cases = np.broadcast(*arrays).size
    V, T_in, P_in, T_settle = (np.broadcast_to(a, (n_cases,)).copy() for a in arrays)
    target = _column(target, n_cases)
    T0, P0, mass0 = _column(T0, n_cases), _column(P0, n_cases), _column(mass0, n_cases)
    P_nom, T_nom = _column(nominal_pressure, n_cases), _column(nominal_temperature, n_cases)
    z_in = np.array(z, dtype=float)
    z0 = z_in if z0 is None else np.array(z0, dtype=float)
    out = _outputs(n_cases)
    p = _prepare(fluid, z_in, z0, V, T_in, P_in, T0, P0, mass0)
    ok, n0, m0 = p["ok"], p["n0"], p["m0"]
    out["m0"] = m0
    # the checks of fill(): a target the supply cannot reach by its nature
    bad = (p["P_start"] >= P_in) | {
        "target_pressure": (target > P_in) | (target <= p["P_start"]),
        "target_mass": target <= m0}.get(stop, np.zeros(n_cases, dtype=bool))
    for i in np.flatnonzero(bad & ok):
        out["error"][i] = target_error(stop, float(target[i]), float(P_in[i]), float(p["P_start"][i]),
                                       float(m0[i]), float(V[i]))
    ok &= ~bad
    rows = np.flatnonzero(ok)
    n_f = np.full(n_cases, np.nan)
    reached = np.full(n_cases, stop, dtype=object)
    if stop == "target_mass":
        n_f = n0 + (target - m0) / p["M_in"]
    elif rows.size:
        fr = FillRows(fluid, z_in, z0, V[rows], n0[rows], p["U0"][rows], p["h_in"][rows], 0.0, T_settle[rows],
                      P_in[rows], target[rows], first_guess(n0[rows], V[rows], p["v_in"][rows], p["phase_in"][rows]),
                      densest(fluid, V[rows]))
        start = fr.start()
        ns, reach, errors = fr.solve(stop, start)
        for j, exc in list(start[1].items()) + list(errors.items()):
            out["error"][rows[j]] = exc
            ok[rows[j]] = False
        n_f[rows], reached[rows] = ns, reach
    ok &= np.isfinite(n_f)
    out["stop"] = reached
    out["stop_met"] = reached == stop
    M_in = p["M_in"]
    for i in np.flatnonzero(ok & ~out["stop_met"]):
        out["unmet_flag"][i] = unmet_flag(stop, float(target[i]), float(m0[i] + (n_f[i] - n0[i]) * M_in))
    # (V1): the amount at the end, and the composition
    N = n_f - n0
    E = p["U0"] + N * p["h_in"] + 0.0
    same = np.array_equal(z0, z_in)
    with np.errstate(invalid="ignore", divide="ignore"):
        z_rows = np.where((n0[:, None] > 0) & (not same), (n0[:, None] * z0[None, :] + N[:, None] * z_in[None, :])
                          / (n0 + N)[:, None], z_in[None, :])
    # rows whose end composition is the same to the bit share one call of each solver
    keys = {}
    for i in np.flatnonzero(ok):
        keys.setdefault(z_rows[i].tobytes(), []).append(i)
    for rows in keys.values():
        rows = np.array(rows)
        _end_rows(fluid, z_rows[rows[0]], rows, out, ok, p, V, P_in, T_settle, P_nom, T_nom, n_f, N, E,
                  check_supply=stop == "target_mass")
    out["ok"] = ok
    return out


def _end_rows(fluid, zf, rows, out, ok, p, V, P_in, T_settle, P_nom, T_nom, n_f, N, E, check_supply):
    """The end, settled and nominal states of rows of one end composition, and their closures."""
    st, err = _states(fluid, zf, u=E[rows] / n_f[rows], v=V[rows] / n_f[rows])
    st_s, err_s = _states(fluid, zf, T=T_settle[rows], v=V[rows] / n_f[rows])
    if err or err_s:  # fill() raises for such a row: the single path says it
        ok[rows[list(set(err) | set(err_s))]] = False
    T, P, phase, beta = st["T"], st["P"], st["phase"], st["beta"]
    Mf = float(zf @ fluid.molar_masses)
    n = n_f[rows]
    mass = n * Mf
    good = (phase != "two-phase") & (phase != "") & ~st["solid"]
    if check_supply:
        good &= P <= P_in[rows] * (1.0 + 1e-12)
    out["T"][rows], out["P"][rows], out["n"][rows], out["mass"][rows] = T, P, n, mass
    out["phase"][rows], out["vapor_fraction"][rows] = phase, beta
    # closures (V1), (V2) as fill() forms them: the reported end and initial states and
    # the supply recomputed by separate evaluations (closure._fill_closure), not the solved states
    st_r, err_r = _states(fluid, zf, T=np.where(good, T, 300.0), P=np.where(good, P, 1e5))
    good[list(err_r)] = False
    n_r = V[rows] / st_r["v"]
    U_r = n_r * st_r["u"]
    with np.errstate(invalid="ignore", divide="ignore"):
        e_cl = (U_r - p["U0_r"][rows] + 0.0 - N[rows] * p["h_in"][rows] - 0.0) / (np.maximum(n, 1e-300) * R * T)
        m_cl = (n_r * Mf - p["m0_r"][rows] - N[rows] * p["M_in"]) / (n_r * Mf)
    out["energy_closure"][rows] = np.where(np.isfinite(e_cl), e_cl, np.nan)
    out["mass_closure"][rows] = m_cl
    from eosfill.vessel.results import CLOSURE_TOLERANCE

    good &= np.maximum(np.abs(e_cl), np.abs(m_cl)) <= CLOSURE_TOLERANCE  # refused by fill(): the single path
    out["P_settled"][rows] = st_s["P"]
    out["phase_settled"][rows] = st_s["phase"]
    nom = np.isfinite(P_nom[rows])
    if nom.any():
        r = rows[nom]
        st_n, err_n = _states(fluid, zf, T=T_settle[r], P=P_nom[r])
        out["nominal_mass"][r] = V[r] / st_n["v"] * Mf
        out["short_fill"][r] = out["nominal_mass"][r] - n_f[r] * Mf
        st_c, err_c = _states(fluid, zf, T=T_nom[r], P=P_nom[r])
        out["state_of_charge"][r] = (n_f[r] / V[r]) * st_c["v"]
        bad = np.zeros(rows.size, dtype=bool)
        bad[np.flatnonzero(nom)[list(set(err_n) | set(err_c))]] = True
        good &= ~bad
    ok[rows] &= good


def _vent_states(fluid, z, **spec):
    f = fluid.with_composition(z)
    with np.errstate(invalid="ignore", divide="ignore"):
        return f.state(**spec)


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
        st0 = _vent_states(fluid, z, T=T0[by_P], P=P0[by_P])
        n0[by_P] = V[by_P] / np.asarray(st0.v, dtype=float).reshape(-1)
        for key, arr in (("u", u0), ("s", s0), ("P", P_start)):
            arr[by_P] = np.asarray(getattr(st0, key), dtype=float).reshape(-1)
    by_m = ~by_P & np.isfinite(mass0)
    if by_m.any():
        n0[by_m] = mass0[by_m] / M
        try:
            st0 = _vent_states(fluid, z, T=T0[by_m], v=V[by_m] / n0[by_m])
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
            st = _vent_states(fluid, z, P=P_end[r], s=s0[r])
            n_f[r] = V[r] / np.asarray(st.v, dtype=float).reshape(-1)
        else:
            n_f[r] = m_end[r] / M
            st = _vent_states(fluid, z, s=s0[r], v=V[r] / n_f[r])
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
    ph = np.asarray(_vent_states(fluid, z, s=s_rep, v=V_rep / np.exp(np.concatenate(grids))).phase).reshape(rows.size, k_grid)
    st_n = _vent_states(fluid, z, s=np.repeat(s0[rows], k_node), v=np.repeat(V[rows], k_node) / np.concatenate(nodes))
    h = np.asarray(st_n.h, dtype=float).reshape(rows.size, k_node)
    st_p = _vent_states(fluid, z, s=np.repeat(s0[rows], k_path), v=np.repeat(V[rows], k_path) / np.concatenate(paths))
    T_path = np.asarray(st_p.T, dtype=float).reshape(rows.size, k_path)
    ph_path = np.asarray(st_p.phase, dtype=object).reshape(rows.size, k_path)
    with np.errstate(invalid="ignore", divide="ignore"):
        st_fr = _vent_states(fluid, z, T=T_f[rows], P=P_f[rows])
        st_0r = _vent_states(fluid, z, T=T0[rows], P=P_start[rows])
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
