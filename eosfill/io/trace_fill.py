"""Calculation trace of a fill's or vent's end state, for auditors: the balance
(V2) with every number substituted - n_0, n_f, the composition by (V1), the
internal energies recomputed from each state's (T, P) by the single-phase
trace of :mod:`eosfill.io.trace` (two-phase: from the flash), each product,
both sides and the relative closure - then the end state's full trace.
``eosfill explain --scenario FILE`` prints it.
"""
from __future__ import annotations

import numpy as np

from eosfill.constants import R
from eosfill.errors import InputError
from eosfill.io.trace import TraceLine, _f, trace_state, trace_value

VESSEL_DOC = "eosfill.vessel docstring and docs/vessel.md"


def _z_of(fluid, composition):
    """{name: x} -> mole fractions in the order of ``fluid.names`` (InputError on an unknown name)."""
    z = np.zeros(len(fluid.names))
    for name, x in (composition or {}).items():
        if name not in fluid.names:
            raise InputError("fluid", name, f"a fluid holding every component of the result ({', '.join(fluid.names)})")
        z[fluid.names.index(name)] = x
    return z


def _u_of(fluid, z, T, P, v, label, add, sec):
    """Molar u of composition z at the result's (T, P), with v checked against V/n.

    Single phase: recomputed by :func:`trace_state` (its full trace is
    returned).  Two phases: from the flash at (T, v), as β u_V + (1 - β) u_L.
    Returns (u, single-phase trace or None)."""
    f = fluid.with_composition(z)
    with np.errstate(invalid="ignore", divide="ignore"):
        st = f.state(T=T, v=v)
    if str(st.phase) != "two-phase":
        lines = trace_state(f, T, P)
        v_tr = trace_value(lines, "v")
        add(sec, f"v_check[{label}]", f"v({label}) from the cubic at (T, P)", v_tr, "m3/mol",
            f"v = Z R T/P at the {label} (T, P); equals V/n to the solver's tolerance "
            f"(relative difference {abs(v_tr - v) / v:.2e})", "")
        u = trace_value(lines, "u")
        add(sec, f"u[{label}]", f"u_{label}", u, "J/mol", f"u at the {label} (T, P): line 'u' of its state trace",
            "see the state trace below" if label == "final" else "eosfill explain --fluid ... --T ... --P ...")
        return u, lines
    beta = _f(st.vapor_fraction)
    uL, uV = _f(st.liquid.u), _f(st.vapour.u)
    add(sec, f"beta[{label}]", f"β_{label}", beta, "mol/mol", f"vapour fraction of the {label} content (flash at T, v)",
        "Rachford-Rice (eosfill.equilibrium)")
    add(sec, f"u_L[{label}]", f"u_L,{label}", uL, "J/mol", "liquid-phase u (its own composition)", "")
    add(sec, f"u_V[{label}]", f"u_V,{label}", uV, "J/mol", "vapour-phase u (its own composition)", "")
    u = beta * uV + (1.0 - beta) * uL
    add(sec, f"u[{label}]", f"u_{label}", u, "J/mol", "u = β u_V + (1 - β) u_L (two-phase content)", "")
    return u, None


def trace_fill(fluid, result, wall_heat_capacity=0.0, wall_temperature=None):
    """The energy and mass balance of a fill (or vent) result with every term's number.

    Fill from a supply, (V2):
        n_f u_f - n_0 u_0 + C_w (T_f - T_w0) = (n_f - n_0) h_in + Q
    cascade: (n_f - n_0) h_in is replaced by Σ_k H_k of (V6) (integrals from
    the result); vent (V4)-(V5): the right-hand side is -H_out.
    With v_f = V/n_f (V3) and the composition of (V1).  u_0, u_f and h_in
    are recomputed here from the result's (T, P) with :func:`trace_state`
    (single phase) so that each can be redone by hand; the end state's full
    trace is appended.

    Parameters
    ----------
    fluid : eosfill.Fluid
        A fluid holding every component named in the result (e.g.
        ``scenario.fluid()``).
    result : eosfill.vessel.Result
    wall_heat_capacity : float
        C_w = m_w c_w [J/K] used for the result (0: none).
    wall_temperature : float, optional
        Initial wall temperature T_w0 [K] (default: the initial gas temperature).

    Returns
    -------
    list of TraceLine
    """
    out = []

    def add(section, key, symbol, value, unit, equation, source):
        out.append(TraceLine(section, key, symbol, value, unit, equation, source))

    kind = result.kind
    V = float(result.volume)
    Cw = float(wall_heat_capacity or 0.0)
    ini, fin = result.initial, result.final
    sec = "balance: inputs (from the scenario and the result)"
    add(sec, "kind", "kind", kind, "", "what is balanced", VESSEL_DOC)
    add(sec, "V", "V", V, "m3", "vessel volume (given)", "")
    n0 = float(ini.n) if ini is not None else 0.0
    T0 = float(ini.T) if ini is not None else None
    add(sec, "n0", "n_0", n0, "mol", "initial amount (V / v_0; 0 when evacuated)", "")
    if ini is not None:
        add(sec, "T0", "T_0", T0, "K", "initial gas temperature", "")
        add(sec, "P0", "P_0", float(ini.P), "Pa", "initial pressure", "")
    nf, Tf, Pf = float(fin.n), float(fin.T), float(fin.P)
    add(sec, "nf", "n_f", nf, "mol", "final amount: the solver's end point", "eosfill.vessel")
    add(sec, "Tf", "T_f", Tf, "K", "final gas temperature: the solver's end point", "eosfill.vessel")
    add(sec, "Pf", "P_f", Pf, "Pa", "final pressure: the solver's end point", "eosfill.vessel")
    Tw0 = T0 if wall_temperature is None else float(wall_temperature)
    add(sec, "Cw", "C_w", Cw, "J/K", "wall heat capacity m_w c_w (0: adiabatic gas)", "")
    if Cw > 0.0:
        add(sec, "Tw0", "T_w0", Tw0, "K", "initial wall temperature; the wall ends at T_f", VESSEL_DOC)
    Q = float(result.energy.get("Q", 0.0) or 0.0)
    if kind != "vent":
        add(sec, "Q", "Q", Q, "J", "heat added to the content over the fill (given)", "")

    # --- mass (V1) -------------------------------------------------------------
    sec = "balance: mass and composition (V1), volume (V3)"
    z0 = _z_of(fluid, ini.composition) if ini is not None else None
    if kind in ("fill", "liquefied_fill"):
        z_in = _z_of(fluid, result.supply["composition"])
        inflows = [("supply", nf - n0, z_in)]
    elif kind == "cascade_fill":
        inflows = [(f"bank {s['bank']}", float(s["moles_drawn"]), _z_of(fluid, s["bank_composition"]))
                   for s in result.stages]
    else:
        inflows = []
    for name, N, z in inflows:
        add(sec, f"N[{name}]", f"N_{name}", N, "mol", f"amount from the {name}"
            + (" = n_f - n_0" if kind != "cascade_fill" else " (bank's share, from the result)"), "")
    if kind == "vent":
        zf = z0.copy()
        add(sec, "n_out", "n_0 - n_f", n0 - nf, "mol", "amount let out (homogeneous outflow: composition unchanged)",
            VESSEL_DOC)
    else:
        nz = (n0 * z0 if z0 is not None else np.zeros(len(fluid.names))) + sum(N * z for _, N, z in inflows)
        n_sum = n0 + sum(N for _, N, _ in inflows)
        add(sec, "n_sum", "n_0 + Σ N", n_sum, "mol", "mass balance in moles: equals n_f", "(V1)")
        zf = nz / n_sum
    for i, name in enumerate(fluid.names):
        if zf[i] > 0.0 or (z0 is not None and z0[i] > 0.0):
            eq = ("z_f = z_0 (vent)" if kind == "vent" else
                  "z_f = (n_0 z_0 + Σ_k N_k z_k)/n_f" if kind == "cascade_fill" else
                  "z_f = (n_0 z_0 + (n_f - n_0) z_in)/n_f")
            add(sec, f"zf[{name}]", f"z_f,{name}", float(zf[i]), "mol/mol", eq + "   (V1)", VESSEL_DOC)
    M = float(zf @ fluid.molar_masses)
    add(sec, "mf", "m_f", nf * M, "kg", "m_f = n_f Σ z_f,i M_i", "")
    vf = V / nf
    add(sec, "vf", "v_f", vf, "m3/mol", "v_f = V / n_f   (V3)", VESSEL_DOC)

    # --- energy (V2) -----------------------------------------------------------
    sec = "balance: energy (V2)" if kind != "vent" else "balance: energy (V4)-(V5)"
    u0 = 0.0
    if ini is not None:
        u0, _ = _u_of(fluid, z0, T0, float(ini.P), V / n0, "initial", add, sec)
    uf, final_trace = _u_of(fluid, zf, Tf, Pf, vf, "final", add, sec)
    if kind in ("fill", "liquefied_fill"):
        sup = result.supply
        f_in = fluid.with_composition(inflows[0][2])
        if str(sup.get("phase", "gas")) != "two-phase":
            h_in = trace_value(trace_state(f_in, sup["T"], sup["P"]), "h")
        else:  # pragma: no cover - a two-phase supply is not a scenario kind
            h_in = _f(f_in.state(T=sup["T"], P=sup["P"]).h)
        add(sec, "T_in", "T_in", float(sup["T"]), "K", "supply temperature (given)", "")
        add(sec, "P_in", "P_in", float(sup["P"]), "Pa", "supply pressure (given)", "")
        add(sec, "h_in", "h_in", h_in, "J/mol", "supply molar enthalpy at (T_in, P_in): line 'h' of its state trace",
            "eosfill explain --fluid ... --T T_in --P P_in")
        H_flow = (nf - n0) * h_in
        add(sec, "H_in", "(n_f - n_0) h_in", H_flow, "J", "enthalpy brought in (isenthalpic throttle)", VESSEL_DOC)
    elif kind == "cascade_fill":
        H_flow = 0.0
        for s in result.stages:
            add(sec, f"H[bank {s['bank']}]", f"H_{s['bank']}", float(s.get("energy_drawn", 0.0)), "J",
                "H_k = ∫ h_bank dN along the bank's isentrope (V6), Gauss-Legendre; value from the result",
                VESSEL_DOC)
            H_flow += float(s.get("energy_drawn", 0.0))
        add(sec, "H_in", "Σ_k H_k", H_flow, "J", "enthalpy brought in by the banks", "")
    else:
        H_flow = -float(result.vent["E_out"])
        add(sec, "H_out", "H_out", -H_flow, "J",
            "H_out = ∫ h dn let out, along the content's path (V4)/(V5); value from the result", VESSEL_DOC)
        Q = 0.0
        Tw0 = T0
    nfuf = nf * uf
    n0u0 = n0 * u0
    wall = Cw * (Tf - Tw0) if Cw > 0.0 else 0.0
    add(sec, "nf_uf", "n_f u_f", nfuf, "J", "final internal energy of the content", "")
    add(sec, "n0_u0", "n_0 u_0", n0u0, "J", "initial internal energy of the content", "")
    add(sec, "wall", "C_w (T_f - T_w0)", wall, "J", "energy taken up by the wall", "")
    lhs = nfuf - n0u0 + wall
    if kind == "vent":
        add(sec, "lhs", "left side", lhs, "J", "n_f u_f - n_0 u_0 + C_w (T_f - T_0)", VESSEL_DOC)
        rhs = H_flow
        add(sec, "rhs", "right side", rhs, "J", "- H_out", VESSEL_DOC)
    else:
        add(sec, "lhs", "left side", lhs, "J", "n_f u_f - n_0 u_0 + C_w (T_f - T_w0)   (V2)", VESSEL_DOC)
        rhs = H_flow + Q
        add(sec, "rhs", "right side", rhs, "J", ("(n_f - n_0) h_in" if kind != "cascade_fill" else "Σ_k H_k")
            + " + Q   (V2)", VESSEL_DOC)
    resid = lhs - rhs
    add(sec, "residual", "left - right", resid, "J", "closure of the balance (≈ 0)", "")
    scale = max(nf, 1e-300) * R * Tf
    add(sec, "closure", "(left - right)/(n_f R T_f)", resid / scale, "", "relative closure, as in the result", "")

    if final_trace is not None:
        for ln in final_trace:
            out.append(TraceLine("final state: " + ln.section, "final." + ln.key, ln.symbol, ln.value, ln.unit,
                                 ln.equation, ln.source))
    else:
        add("final state", "final.note", "note", "two-phase: the single-phase trace does not apply; u from the flash",
            "", "see the u_L, u_V lines above", "")
    return out
