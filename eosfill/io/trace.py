"""Calculation trace of one single-phase state at (T, P), for auditors.

Every intermediate value, in the order of the equations, each with the
equation and its published source, recomputed step by step with the kernel
functions of :mod:`eosfill.cubic` and :mod:`eosfill.idealgas` (not read back
from a :class:`eosfill.State`), so that a reader holding the papers can redo
each line by hand and the tests can compare the end values with the State's.

Equation labels (C1)-(C11) are those of the :mod:`eosfill.cubic` docstring.

>>> import eosfill
>>> from eosfill.io.trace import trace_state, format_trace
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
