"""Calculation trace of one single-phase state at (T, P), for auditors.

Every intermediate value, in the order of the equations, each with the
equation and its published source, recomputed step by step with the kernel
functions of :mod:`eosfill.cubic` and :mod:`eosfill.idealgas` (not read back
from a :class:`eosfill.State`), so that a reader holding the papers can redo
each line by hand and the tests can compare the end values with the State's.

Equation labels (C1)-(C11) are those of the :mod:`eosfill.cubic` docstring.

>>> import eosfill
>>> from eosfill.trace import trace_state, format_trace
>>> lines = trace_state(eosfill.Fluid("nitrogen"), T=300.0, P=1e6)
>>> print(format_trace(lines))  # doctest: +SKIP

The trace is of the single-phase root chosen at (T, P); it makes no
phase-split test.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from eosfill.model import cubic
from eosfill.model import idealgas
from eosfill.constants import P0, R, T0
from eosfill.errors import InputError

MM2007 = "Michelsen & Mollerup 2007, ch. 3"
POLING = "Poling, Prausnitz & O'Connell 2001, App. A"
GIBBS = "Gibbs' theorem for ideal-gas mixtures (e.g. Poling et al. 2001, ch. 6)"

_KAPPA_TEXT = {
    "PR": ("κ = 0.37464 + 1.54226 ω - 0.26992 ω²", "Peng & Robinson 1976, Eq. 18"),
    "SRK": ("κ = 0.480 + 1.574 ω - 0.176 ω²", "Soave 1972, Eq. 15"),
}
_KAPPA_PR78_HIGH = ("κ = 0.379642 + 1.48503 ω - 0.164423 ω² + 0.016666 ω³ (ω > 0.491)",
                    "Robinson & Peng 1978, GPA RR-28")
_OMEGA_SOURCE = {
    "PR": "Peng & Robinson 1976, Eqs. 9-10 (exact roots of the critical conditions)",
    "PR78": "Peng & Robinson 1976, Eqs. 9-10 (exact roots of the critical conditions)",
    "SRK": "Soave 1972, Eqs. 11-12: Ωa = 1/(9(2^(1/3)-1)), Ωb = (2^(1/3)-1)/3",
}


@dataclass(frozen=True)
class TraceLine:
    """One value of the trace.

    Attributes
    ----------
    section : str
        Which step it belongs to ("inputs", "component methane", "mixing", ...).
    key : str
        Short identifier for programs (``"kappa[methane]"``, ``"Z"``, ``"h"``).
    symbol : str
        The symbol as printed in the source.
    value : float, tuple of float, or str
    unit : str
    equation : str
        The formula it was computed with.
    source : str
        Where the formula is published.
    """

    section: str
    key: str
    symbol: str
    value: object
    unit: str
    equation: str
    source: str


def _f(x):
    return float(np.asarray(x))


def trace_state(fluid, T, P):
    """Every intermediate value of a single-phase state at scalar T [K], P [Pa].

    Parameters
    ----------
    fluid : eosfill.Fluid
    T : float
        Temperature [K].
    P : float
        Pressure [Pa].

    Returns
    -------
    list of TraceLine
        In the order of the equations.
    """
    T = float(T)
    P = float(P)
    if not (np.isfinite(T) and T > 0.0):
        raise InputError("T", T, "T > 0 K")
    if not (np.isfinite(P) and P > 0.0):
        raise InputError("P", P, "P > 0 Pa")
    soave = fluid.model.soave_alpha
    if not soave and fluid.params.alpha_kind != 1:   # shown: Soave (C3) and Twu (A2); never another model's numbers
        raise InputError("model", fluid.model.name, "a model with Soave's or Twu's alpha for a trace")
    p = fluid.params
    model = p.model
    d1, d2 = model.delta1, model.delta2
    x = np.asarray(fluid.mole_fractions, dtype=float)
    names = fluid.names
    out = []

    def add(section, key, symbol, value, unit, equation, source):
        out.append(TraceLine(section, key, symbol, value, unit, equation, source))

    # --- inputs -----------------------------------------------------------
    sec = "inputs"
    add(sec, "model", "model", model.name, "", "generalised cubic (C1) P = RT/(v-b) - a/((v+δ1 b)(v+δ2 b))",
        f"{MM2007}, Eq. 3.1; instance: {model.citation}")
    add(sec, "T", "T", T, "K", "given", "")
    add(sec, "P", "P", P, "Pa", "given", "")
    add(sec, "R", "R", R, "J/(mol K)", "molar gas constant", "CODATA 2018 (exact)")
    add(sec, "delta1", "δ1", d1, "", "model constant of (C1)", model.citation)
    add(sec, "delta2", "δ2", d2, "", "model constant of (C1)", model.citation)
    add(sec, "Omega_a", "Ωa", model.Omega_a, "", "critical-point constant of (C2)", _OMEGA_SOURCE[model.name])
    add(sec, "Omega_b", "Ωb", model.Omega_b, "", "critical-point constant of (C2)", _OMEGA_SOURCE[model.name])
    for i, n in enumerate(names):
        add(sec, f"x[{n}]", f"x_{n}", float(x[i]), "mol/mol", "mole fraction (given)", "")
    for k, line in enumerate(fluid.model_description()):
        add(sec, f"model_part[{k}]", "part", line, "", "model description (parts and sources)", "")

    # --- pure-component parameters ------------------------------------------
    ac = model.Omega_a * R**2 * p.Tc**2 / p.Pc  # (C2)
    bi = model.Omega_b * R * p.Tc / p.Pc  # (C2)
    if soave:
        kappa = np.asarray(model.kappa(p.omega), dtype=float)  # (C3) κ(ω) of the model
        s, ds, _ = cubic.soave_sqrt_alpha(T, p.Tc, kappa)  # (C3)
        s, ds = np.asarray(s), np.asarray(ds)
        alpha_i, dalpha_i = s**2, 2.0 * s * ds
    else:   # the model's own α (A2), one compiled call per component
        from eosfill.model.alpha import alpha_T

        al = [alpha_T(p.alpha_kind, T, float(p.Tc[i]), *map(float, p.alpha_params[i])) for i in range(len(names))]
        alpha_i, dalpha_i = np.array([r[0] for r in al]), np.array([r[1] for r in al])
    ai = ac * alpha_i  # a_i = a_c,i α_i
    ai_T = ac * dalpha_i  # a_c dα/dT
    for i, n in enumerate(names):
        sec = f"component {n}"
        comp = fluid.components[i]
        add(sec, f"Tc[{n}]", "Tc", float(p.Tc[i]), "K", "critical temperature", f"data: {comp.crit_source}")
        add(sec, f"Pc[{n}]", "Pc", float(p.Pc[i]), "Pa", "critical pressure", f"data: {comp.crit_source}")
        add(sec, f"omega[{n}]", "ω", float(p.omega[i]), "", "acentric factor", f"data: {comp.crit_source}")
        if not soave:
            for k, sym in enumerate("LMN"):
                add(sec, f"twu_{sym}[{n}]", sym, float(p.alpha_params[i, k]), "", f"Twu alpha parameter {sym}",
                    "model description above (per component)")
            add(sec, f"Tr[{n}]", "Tr", T / float(p.Tc[i]), "", "Tr = T/Tc", "")
            add(sec, f"alpha[{n}]", "α", float(alpha_i[i]), "", "α = Tr^(N(M-1)) exp[L (1 - Tr^(N M))]   (A2)",
                "Twu et al. 1991")
        elif model.name == "PR78" and p.omega[i] > 0.491:
            ktext, ksrc = _KAPPA_PR78_HIGH
        elif model.name == "PR78":
            ktext, ksrc = _KAPPA_TEXT["PR"][0] + " (ω ≤ 0.491)", "Robinson & Peng 1978, GPA RR-28 (= Peng & Robinson 1976, Eq. 18)"
        else:
            ktext, ksrc = _KAPPA_TEXT[model.name]
        if soave:
            add(sec, f"kappa[{n}]", "κ", float(kappa[i]), "", ktext, ksrc)
            add(sec, f"Tr[{n}]", "Tr", T / float(p.Tc[i]), "", "Tr = T/Tc", "")
            add(sec, f"sqrt_alpha[{n}]", "√α", float(s[i]), "", "√α = 1 + κ (1 - √Tr)   (C3)", "Soave 1972, Eq. 13")
            add(sec, f"alpha[{n}]", "α", float(s[i] ** 2), "", "α = [1 + κ (1 - √Tr)]²   (C3)", "Soave 1972, Eq. 13")
        add(sec, f"ac[{n}]", "a_c", float(ac[i]), "Pa m6/mol2", "a_c = Ωa R² Tc²/Pc   (C2)", _OMEGA_SOURCE[model.name].split(" (")[0].split(":")[0])
        add(sec, f"a[{n}]", "a_i", float(ai[i]), "Pa m6/mol2", "a_i = a_c α", "Soave 1972, Eq. 10")
        add(sec, f"a_T[{n}]", "da_i/dT", float(ai_T[i]), "Pa m6/(mol2 K)",
            "da_i/dT = -a_c κ √α / √(T Tc)" if soave else "da_i/dT = a_c α g/T, g = N(M-1) - L N M Tr^(NM)",
            "derivative of (C3)" if soave else "derivative of (A2)")
        add(sec, f"b[{n}]", "b_i", float(bi[i]), "m3/mol", "b_i = Ωb R Tc/Pc   (C2)", _OMEGA_SOURCE[model.name].split(" (")[0].split(":")[0])

    # --- mixing -------------------------------------------------------------
    sec = "mixing (van der Waals one-fluid)"
    nc = len(names)
    a_sum = 0.0
    for i in range(nc):
        for j in range(i, nc):
            kij = float(p.kij[i, j])
            aij = (1.0 - kij) * np.sqrt(ai[i] * ai[j])
            pair = f"{names[i]}|{names[j]}"
            if i != j:
                src = fluid.kij_sources.get((names[i], names[j]), fluid.kij_sources.get((names[j], names[i]), ""))
                add(sec, f"kij[{pair}]", "k_ij", kij, "", f"binary interaction parameter {names[i]}-{names[j]}",
                    f"data: {src}")
            add(sec, f"aij[{pair}]", "a_ij", float(aij), "Pa m6/mol2", "a_ij = (1 - k_ij) √(a_i a_j)   (C4)", MM2007)
            a_sum += (1.0 if i == j else 2.0) * x[i] * x[j] * aij
    add(sec, "a", "a", float(a_sum), "Pa m6/mol2", "a = Σ_i Σ_j x_i x_j (1 - k_ij) √(a_i a_j)   (C4)", MM2007)
    a_k, a_T_k, _ = cubic.mixture_a(T, x, p)
    a_T = _f(a_T_k)
    a = float(a_sum)
    add(sec, "a_T", "da/dT", a_T, "Pa m6/(mol2 K)",
        "da/dT = Σ_i Σ_j x_i x_j (1 - k_ij) (a_i' a_j + a_i a_j')/(2 √(a_i a_j))", "derivative of (C4)")
    b = _f(cubic.mixture_b(x, p))
    add(sec, "b", "b", b, "m3/mol", "b = Σ_i x_i b_i   (C4)", MM2007)

    # --- the cubic in Z ---------------------------------------------------------
    sec = "cubic in Z"
    A, B = (_f(v) for v in cubic.dimensionless_AB(a, b, T, P))
    add(sec, "A", "A", A, "", "A = a P/(R T)²", MM2007)
    add(sec, "B", "B", B, "", "B = b P/(R T)", MM2007)
    c2, c1, c0 = (_f(v) for v in cubic.cubic_coefficients(A, B, d1, d2))
    add(sec, "c2", "c2", c2, "", "c2 = (δ1 + δ2 - 1) B - 1   (C5)", MM2007)
    add(sec, "c1", "c1", c1, "", "c1 = A + δ1 δ2 B² - (δ1 + δ2) B (B + 1)   (C5)", MM2007)
    add(sec, "c0", "c0", c0, "", "c0 = -(A B + δ1 δ2 B² (B + 1))   (C5)", MM2007)
    roots = np.asarray(cubic.cubic_roots(c2, c1, c0))
    real = tuple(float(r) for r in roots if np.isfinite(r))
    add(sec, "roots", "Z roots", real, "", "real roots of Z³ + c2 Z² + c1 Z + c0 = 0   (C5)",
        "closed form (Press et al. 2007, §5.6) polished by Newton steps")
    for k, z in enumerate(real):
        res = ((z + c2) * z + c1) * z + c0
        add(sec, f"residual[{k}]", f"f(Z{k + 1})", float(res), "", f"Z{k + 1}³ + c2 Z{k + 1}² + c1 Z{k + 1} + c0 (check: ≈ 0)", "")
        if z > B:
            g = _f(cubic.residual_g_RT(z, A, B, d1, d2))
            add(sec, f"gR_RT[{k}]", f"G^R/RT(Z{k + 1})", g, "",
                "G^R/(RT) = Z - 1 - ln(Z - B) - (A/B) L   (C6)", MM2007)
        else:
            add(sec, f"gR_RT[{k}]", f"G^R/RT(Z{k + 1})", "not admissible (Z ≤ B)", "", "Z > B required", "")
    Z_k, choice = cubic.choose_root(roots, A, B, d1, d2)
    Z = _f(Z_k)
    add(sec, "Z_eos", "Z", Z, "", "chosen root", "eosfill.cubic.choose_root")
    add(sec, "root_choice", "why", cubic.ROOT_CHOICE_TEXT[int(np.asarray(choice))], "",
        "at fixed T, P, x the roots' Gibbs energies differ only by G^R; the lowest is stable", MM2007)
    v_eos = Z * R * T / P
    add(sec, "v_eos", "v", v_eos, "m3/mol", "v = Z R T/P", "")

    # --- departures -----------------------------------------------------------
    sec = "departure functions at (T, P)"
    L = _f(cubic.log_term(Z, B, d1, d2))
    add(sec, "L", "L", L, "", "L = ln[(Z + δ1 B)/(Z + δ2 B)]/(δ1 - δ2)", MM2007)
    hR = _f(cubic.residual_h(T, Z, a, a_T, b, B, model))
    add(sec, "h_res", "H^R", hR, "J/mol", "H^R = R T (Z - 1) + (T da/dT - a)/b · L   (C7)", MM2007)
    sR = _f(cubic.residual_s(Z, a_T, b, B, model))
    add(sec, "s_res", "S^R", sR, "J/(mol K)", "S^R = R ln(Z - B) + (da/dT)/b · L   (C8)", MM2007)
    uR = _f(cubic.residual_u(T, Z, a, a_T, b, B, model))
    add(sec, "u_res", "U^R", uR, "J/mol", "U^R = (T da/dT - a)/b · L   (C9)", MM2007)

    # --- ideal gas --------------------------------------------------------------
    sec = "ideal gas (reference: H° = 0, S° = 0 at 298.15 K, 101325 Pa)"
    cp = np.asarray(fluid.cp_coeffs, dtype=float)
    rng = (fluid.cp_Tmin, fluid.cp_Tmax)
    h0_i = R * np.asarray(idealgas.h0_R_ext(T, cp, *rng))
    s0T_i = R * np.asarray(idealgas.s0T_R_ext(T, cp, *rng))
    cp0_i = R * np.asarray(idealgas.cp0_R_ext(T, cp, *rng))
    for i, n in enumerate(names):
        comp = fluid.components[i]
        if not (comp.cp_Tmin <= T <= comp.cp_Tmax):
            add(sec, f"cp0_range[{n}]", f"T range of Cp°_{n}", float(T), "K",
                f"outside {comp.cp_Tmin:g}-{comp.cp_Tmax:g} K: Cp° held at its value at the "
                "nearer end (H°, S° continued with that constant Cp°)", "common practice, no source")
        add(sec, f"cp0[{n}]", f"Cp°_{n}", float(cp0_i[i]), "J/(mol K)",
            "Cp°/R = a0 + a1 T + a2 T² + a3 T³ + a4 T⁴", f"{POLING}; data: {comp.cp_source}")
        add(sec, f"h0[{n}]", f"H°_{n}", float(h0_i[i]), "J/mol",
            f"H° = R Σ_k a_k (T^(k+1) - T0^(k+1))/(k+1), T0 = {T0} K", POLING)
        add(sec, f"s0T[{n}]", f"S°_{n}(T, P0)", float(s0T_i[i]), "J/(mol K)",
            f"S°(T, P0) = R [a0 ln(T/T0) + Σ_(k≥1) a_k (T^k - T0^k)/k], P0 = {P0} Pa", POLING)
    h0 = float(x @ h0_i)
    add(sec, "h0", "H°", h0, "J/mol", "H° = Σ x_i H°_i", GIBBS)
    xlnx = float(sum(xi * np.log(xi) for xi in x if xi > 0.0))
    s0 = float(x @ s0T_i) - R * np.log(P / P0) - R * xlnx
    add(sec, "s0", "S°", s0, "J/(mol K)", "S° = Σ x_i S°_i(T, P0) - R ln(P/P0) - R Σ x_i ln x_i", GIBBS)

    # --- totals -----------------------------------------------------------------
    sec = "totals"
    c = float(x @ np.asarray(fluid.volume_shift, dtype=float))
    if c != 0.0:
        add(sec, "shift", "c", c, "m3/mol", "c = Σ x_i c_i (volume translation)",
            "constant translation (Péneloux, Rauzy & Fréze 1982 form); c_i: model description above")
    v = v_eos - c
    add(sec, "v", "v", v, "m3/mol", "v = v_EOS - c" if c else "v = Z R T/P", "")
    add(sec, "Z", "Z", P * v / (R * T), "", "Z = P v/(R T)", "")
    add(sec, "h", "h", h0 + hR - P * c, "J/mol", "h = H° + H^R" + (" - P c" if c else ""), "")
    add(sec, "u", "u", h0 + hR - P * v_eos, "J/mol", "u = H° + H^R - P v_EOS  (= H° + U^R - R T)", "")
    add(sec, "s", "s", s0 + sR, "J/(mol K)", "s = S° + S^R", "")
    M = float(x @ fluid.molar_masses)
    add(sec, "M", "M", M, "kg/mol", "M = Σ x_i M_i", "")
    add(sec, "rho_mass", "ρ", M / v, "kg/m3", "ρ = M/v", "")
    return out


def trace_value(lines, key):
    """The value of the line with ``key`` (KeyError if none)."""
    for line in lines:
        if line.key == key:
            return line.value
    raise KeyError(key)


def _fmt(value):
    if isinstance(value, str):
        return value
    if isinstance(value, tuple):
        return "(" + ", ".join(f"{v:.15g}" for v in value) + ")"
    return f"{value:.15g}"


def format_trace(lines, caution=True) -> str:
    """The trace as plain text, one value per line with its equation and source."""
    text = []
    section = None
    for ln in lines:
        if ln.section != section:
            section = ln.section
            text.append("")
            text.append(f"== {section} ==")
        unit = f" {ln.unit}" if ln.unit else ""
        text.append(f"  {ln.symbol} = {_fmt(ln.value)}{unit}")
        note = ln.equation + (f"   [{ln.source}]" if ln.source else "")
        text.append(f"      {note}")
    if caution:
        text.append("")
        if any(ln.key == "kind" for ln in lines):
            text.append("Balance of the result with its numbers substituted; the state trace is of the "
                        "single-phase root at the end state's (T, P). Results are estimates from an equation "
                        "of state and simplified models; local codes, the vessel's approval documents and "
                        "licensed practice govern.")
        else:
            text.append("Single-phase trace at (T, P): no phase-split test is made. Results are estimates "
                        "from an equation of state; local codes, the vessel's approval documents and "
                        "licensed practice govern.")
    return "\n".join(text).lstrip("\n")


# --------------------------------------------------------------------------
# the balance of a fill or a vent, numbers substituted
# --------------------------------------------------------------------------
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
