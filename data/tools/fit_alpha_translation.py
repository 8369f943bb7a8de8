"""Maintenance tool: fit Twu α parameters (L, M, N) and a constant volume
translation c per pure fluid for the Peng-Robinson cubic, to a reference
equation of state.

NOT part of the eosfill package and never imported by it; never run at
install time or in CI.  It imports CoolProp (allowed only in tests and
offline maintenance scripts) to evaluate each fluid's reference
multiparameter equation, and eosfill's own cubic equations
(``eosfill.model.cubic``: Eqs. C1, C5, C6, C7) with the Twu α of
``eosfill.model.alpha`` for the model, so that the fitted numbers belong to
exactly the equations the engine solves.

Model (per pure fluid, PR family δ1 = 1 + √2, δ2 = 1 - √2, exact Ωa, Ωb):

    a(T) = Ωa R² Tc²/Pc · α(T),  α = Tr^(N(M-1)) exp[L (1 - Tr^(N M))]   (Twu et al. 1991)
    v = v_eos - c                                               (Péneloux et al. 1982)

What is fitted (scipy.optimize.least_squares, soft-L1 loss; each residual
dimensionless so that 1 % in density weighs like 0.01 RT in enthalpy):

* single-phase states on a grid of T in [T_lo, T_hi] (default 200-400 K) and
  P in [0.1, 100] MPa, log-spaced: density (ρ_model/ρ_ref - 1) and residual
  enthalpy ((h^R_model - h^R_ref)/(R T)); the root is the one of the
  reference's phase (liquid or vapour below Tc, the stable one above);
* the saturation curve where the fluid has one, 0.5-0.95 Tc (above the
  triple point): vapour pressure (ln(p_model/p_ref)) and saturated-liquid
  density (ρ_L,model/ρ_L,ref - 1).

Held-out states: the same ranges on grids offset by half a step in T and in
ln P (and in T along the saturation curve); none of them is fitted.  The
script prints, per fluid, the held-out residuals of the fitted set beside
those of the generalised tc-PR (Le Guennec, Privat & Jaubert 2016) with the
same equations, and checks the Le Guennec et al. (FPE 427, 2016) consistency
conditions of the fitted α (α > 0, α' < 0, α'' > 0 on 1e-3 ≤ Tr ≤ 40).

Usage (from the repository root, with CoolProp installed):

    python data/tools/fit_alpha_translation.py                 # fit and print
    python data/tools/fit_alpha_translation.py --fluids nitrogen methane
    python data/tools/fit_alpha_translation.py --write out.csv  # also write the table

The CSV holds one row per fluid: name, model, L, M, N, c [m³/mol], source
("fitted by eosfill to <reference equation> (CoolProp <version>)"), fit
ranges, numbers of fitted and held-out points, held-out residuals
(density RMS/max %, residual enthalpy RMS/max J/mol, vapour pressure and
saturated-liquid density RMS/max %) and whether the α is consistent.
Tested with CoolProp 8.0.0.
"""
from __future__ import annotations

import argparse
import csv
import sys
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from eosfill.constants import R  # noqa: E402
from eosfill.errors import RangeWarning  # noqa: E402
from eosfill.model import alpha as alpha_parts  # noqa: E402
from eosfill.model import cubic  # noqa: E402  (the engine's cubic equations)
from eosfill.model import translation  # noqa: E402
from eosfill.model.components import get_component  # noqa: E402

# (name in fluids.csv, CoolProp name, fit the saturation curve?)
# helium: no saturation curve fitted (normal-helium liquid below 5.2 K, far
# from fills, and the lambda line); air: a pseudo-pure mixture with bubble and
# dew lines, no single vapour pressure.
FLUIDS = [
    ("hydrogen", "Hydrogen", True),
    ("helium", "Helium", False),
    ("nitrogen", "Nitrogen", True),
    ("argon", "Argon", True),
    ("oxygen", "Oxygen", True),
    ("air", "Air", False),
    ("methane", "Methane", True),
    ("ethane", "Ethane", True),
    ("propane", "Propane", True),
    ("carbon dioxide", "CO2", True),
]

# caveats written into the table's note column
NOTES = {
    "hydrogen": "quantum fluid: one alpha for 200-400 K and 16-32 K saturation is a compromise "
                "(held-out saturated-liquid density off by several %)",
    "helium": "Tr >= 38 over the fit range: alpha is far below 1e-20 there, so the attractive term "
              "is negligible and L, M, N are not determined by the data (only c matters); "
              "do not use below 200 K",
    "air": "pseudo-pure air (Lemmon et al. 2000); no saturation curve fitted",
    "carbon dioxide": "near-critical states (290-330 K, 7-14 MPa) dominate the density maximum",
    "propane": "near-critical states (350-390 K, 4-8 MPa) dominate the density maximum",
    "ethane": "near-critical states dominate the density maximum",
}

MODEL = cubic.PR
T_RANGE = (200.0, 400.0)        # K
P_RANGE = (1e5, 1e8)            # Pa
N_T, N_P, N_SAT = 11, 13, 12    # fitted grid sizes
SAT_TR = (0.5, 0.95)            # reduced-temperature range of the saturation curve
# L, M, N, c Pc/(R Tc); M <= 1 keeps dα/dT < 0 at every T (with L, M, N > 0)
PARAM_BOUNDS = ([0.01, 0.05, 0.2, -0.2], [6.0, 1.0, 8.0, 0.2])
CONVEXITY_WEIGHT = 1e3


# --------------------------------------------------------------------------
# reference data (CoolProp, at fit time only)
# --------------------------------------------------------------------------
def _coolprop():
    import CoolProp

    return CoolProp


def reference_source(cp_name):
    CoolProp = _coolprop()
    key = CoolProp.CoolProp.get_fluid_param_string(cp_name, "BibTeX-EOS")
    return f"{key} (CoolProp {CoolProp.__version__} HEOS)"


def single_phase_grid(offset):
    """(T, P) of the fitted grid (offset = 0) or the held-out grid (offset = 0.5)."""
    t = (np.arange(N_T - (1 if offset else 0)) + offset) / (N_T - 1)
    s = (np.arange(N_P - (1 if offset else 0)) + offset) / (N_P - 1)
    T = T_RANGE[0] + t * (T_RANGE[1] - T_RANGE[0])
    P = np.exp(np.log(P_RANGE[0]) + s * (np.log(P_RANGE[1]) - np.log(P_RANGE[0])))
    TT, PP = np.meshgrid(T, P, indexing="ij")
    return TT.ravel(), PP.ravel()


def reference_single_phase(cp_name, T, P, Tc):
    """Reference density [mol/m³], residual enthalpy [J/mol] and root code
    (1 liquid, 2 vapour, 0 above Tc) where the reference equation solves."""
    CoolProp = _coolprop()
    st = CoolProp.AbstractState("HEOS", cp_name)
    rows = []
    for t, p in zip(T, P):
        try:
            st.update(CoolProp.PT_INPUTS, float(p), float(t))
            rho, hr = st.rhomolar(), st.hmolar_residual()
        except ValueError:
            continue  # outside the reference equation's range (e.g. below its melting line)
        if not (np.isfinite(rho) and np.isfinite(hr)):
            continue
        if t >= Tc:
            code = 0
        else:
            try:
                psat = CoolProp.CoolProp.PropsSI("P", "T", float(t), "Q", 0, cp_name)
            except ValueError:
                psat = np.nan
            code = 1 if p > psat else 2
        rows.append((t, p, rho, hr, code))
    a = np.array(rows, dtype=float).reshape(-1, 5)
    return dict(T=a[:, 0], P=a[:, 1], rho=a[:, 2], hres=a[:, 3], code=a[:, 4].astype(int))


def reference_saturation(cp_name, Tc, offset):
    CoolProp = _coolprop()
    Ttr = CoolProp.CoolProp.PropsSI("Ttriple", cp_name)
    lo, hi = max(SAT_TR[0] * Tc, Ttr + 0.1), SAT_TR[1] * Tc
    t = (np.arange(N_SAT - (1 if offset else 0)) + offset) / (N_SAT - 1)
    T = lo + t * (hi - lo)
    P = np.array([CoolProp.CoolProp.PropsSI("P", "T", x, "Q", 0, cp_name) for x in T])
    rhoL = np.array([CoolProp.CoolProp.PropsSI("Dmolar", "T", x, "Q", 0, cp_name) for x in T])
    return dict(T=T, P=P, rhoL=rhoL, range=(lo, hi))


# --------------------------------------------------------------------------
# the model: eosfill's cubic equations with the Twu α and a constant c
# --------------------------------------------------------------------------
class PureTwuPR:
    """One pure fluid, PR family with Twu α and constant translation."""

    def __init__(self, Tc, Pc):
        self.Tc, self.Pc = float(Tc), float(Pc)
        self.ac = MODEL.Omega_a * R**2 * Tc**2 / Pc           # (C2)
        self.b = MODEL.Omega_b * R * Tc / Pc                  # (C2)

    def a(self, T, L, M, N):
        alpha, dalpha, _ = alpha_parts.alpha_values(alpha_parts.TWU91, T, [self.Tc], [[L, M, N]])
        return self.ac * alpha[:, 0], self.ac * dalpha[:, 0]

    def roots(self, T, P, a):
        A, B = cubic.dimensionless_AB(a, self.b, T, P)
        c2, c1, c0 = cubic.cubic_coefficients(A, B, MODEL.delta1, MODEL.delta2)
        return A, B, cubic.cubic_roots(c2, c1, c0)

    def single_phase(self, T, P, code, L, M, N, c):
        """Density [mol/m³] and residual enthalpy [J/mol] at (T, P) on the root ``code``."""
        a, a_T = self.a(T, L, M, N)
        A, B, roots = self.roots(T, P, a)
        Z_stable, _ = cubic.choose_root(roots, A, B, MODEL.delta1, MODEL.delta2)
        Z = np.where(code == 1, cubic.select_root(roots, B, "liquid"),
                     np.where(code == 2, cubic.select_root(roots, B, "vapour"), Z_stable))
        v = Z * R * T / P - c                                  # (V1)
        hR = cubic.residual_h(T, Z, a, a_T, self.b, B, MODEL) - P * c   # (C7), (V2)
        return 1.0 / v, hR

    def saturation(self, T, P_start, L, M, N, c, maxiter=60):
        """Vapour pressure [Pa] and saturated-liquid density [mol/m³] of the model.

        Newton on ln P for equal ln φ of the two roots (C6),
        d(ln φ_L - ln φ_V)/d ln P = Z_L - Z_V; where only one root exists the
        pressure is moved towards the other spinodal first.  Returns NaN
        where it does not converge (the caller turns that into a large residual).
        """
        a, _ = self.a(T, L, M, N)
        lnP = np.log(P_start)
        ok = np.zeros(T.shape, dtype=bool)
        ZL = np.full(T.shape, np.nan)
        for _ in range(maxiter):
            P = np.exp(lnP)
            A, B, roots = self.roots(T, P, a)
            zl = cubic.select_root(roots, B, "liquid")
            zv = cubic.select_root(roots, B, "vapour")
            one = ~(zv - zl > 1e-9 * zv)
            gl = cubic.residual_g_RT(zl, A, B, MODEL.delta1, MODEL.delta2)
            gv = cubic.residual_g_RT(zv, A, B, MODEL.delta1, MODEL.delta2)
            with np.errstate(invalid="ignore", divide="ignore"):
                step = np.where(one, np.where(zv > MODEL.Zc, 0.2, -0.2), -(gl - gv) / (zl - zv))
            step = np.clip(step, -0.5, 0.5)
            ok = ~one & (np.abs(gl - gv) < 1e-11)
            ZL = zl
            if np.all(ok):
                break
            lnP = np.where(ok, lnP, lnP + step)
        P = np.exp(lnP)
        rhoL = 1.0 / (ZL * R * T / P - c)
        return np.where(ok, P, np.nan), np.where(ok, rhoL, np.nan)


# --------------------------------------------------------------------------
# fit
# --------------------------------------------------------------------------
def convexity_violation(L, M, N):
    """How far (L, M, N) is from a sufficient condition for a convex Twu α.

    With g = T d ln α/dT = -k - u, k = N(1 - M) >= 0, u = L N M Tr^(NM) > 0,
    T² α''/α = g² - g - N M u = u² + (2k + 1 - NM) u + k² + k  (from (A2)),
    which is positive for every u > 0 when q = NM - 2k - 1 <= 0 (sufficient;
    derived here from the conditions of Le Guennec et al., FPE 427, 2016).
    Returns max(0, q); :func:`consistent` checks the fitted α numerically too.
    """
    return max(0.0, N * M - 2.0 * N * (1.0 - M) - 1.0)


def residual_vector(x, model, sp, sat):
    L, M, N, c_red = x
    c = c_red * R * model.Tc / model.Pc
    rho, hR = model.single_phase(sp["T"], sp["P"], sp["code"], L, M, N, c)
    parts = [rho / sp["rho"] - 1.0, (hR - sp["hres"]) / (R * sp["T"])]
    if sat is not None:
        P, rhoL = model.saturation(sat["T"], sat["P"], L, M, N, c)
        parts += [np.log(P / sat["P"]), rhoL / sat["rhoL"] - 1.0]
    parts.append([CONVEXITY_WEIGHT * convexity_violation(L, M, N)])
    r = np.concatenate(parts)
    return np.where(np.isfinite(r), r, 1.0)


def held_out_figures(model, sp, sat, L, M, N, c):
    rho, hR = model.single_phase(sp["T"], sp["P"], sp["code"], L, M, N, c)
    d_rho = 100.0 * (rho / sp["rho"] - 1.0)
    d_h = hR - sp["hres"]
    out = dict(rho_rms=np.sqrt(np.mean(d_rho**2)), rho_max=np.max(np.abs(d_rho)),
               h_rms=np.sqrt(np.mean(d_h**2)), h_max=np.max(np.abs(d_h)),
               psat_rms=np.nan, psat_max=np.nan, rhoL_rms=np.nan, rhoL_max=np.nan)
    if sat is not None:
        P, rhoL = model.saturation(sat["T"], sat["P"], L, M, N, c)
        dP = 100.0 * (P / sat["P"] - 1.0)
        dL = 100.0 * (rhoL / sat["rhoL"] - 1.0)
        out.update(psat_rms=np.sqrt(np.mean(dP**2)), psat_max=np.max(np.abs(dP)),
                   rhoL_rms=np.sqrt(np.mean(dL**2)), rhoL_max=np.max(np.abs(dL)))
    return out


def consistent(L, M, N):
    """Le Guennec et al. (FPE 427, 2016) conditions on 1e-3 <= Tr <= 40
    (where α underflows double precision the signs cannot be evaluated and
    those points are skipped)."""
    Tr = np.geomspace(1e-3, 40.0, 400)
    a, da, d2a = alpha_parts.alpha_values(alpha_parts.TWU91, Tr, [1.0], [[L, M, N]])
    ok = a > 1e-280
    return bool(np.all(a >= 0.0) and np.all(da[ok] < 0.0) and np.all(d2a[ok] > 0.0))


def fit_fluid(name, cp_name, with_sat):
    from scipy.optimize import least_squares

    comp = get_component(name)
    Tc, Pc, omega = comp.Tc, comp.Pc, comp.omega
    model = PureTwuPR(Tc, Pc)
    sp_fit = reference_single_phase(cp_name, *single_phase_grid(0.0), Tc)
    sp_out = reference_single_phase(cp_name, *single_phase_grid(0.5), Tc)
    sat_fit = reference_saturation(cp_name, Tc, 0.0) if with_sat else None
    sat_out = reference_saturation(cp_name, Tc, 0.5) if with_sat else None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RangeWarning)     # H2, He: ω below the tc-PR range
        L0, M0, N0 = alpha_parts.TC_PR_ALPHA.parameters([Tc], [Pc], [omega])[0]
        c0 = translation.tc_pr_shift([Tc], [Pc], [omega])[0]
    x0 = np.clip([L0, M0, N0, c0 * Pc / (R * Tc)], np.array(PARAM_BOUNDS[0]) + 1e-9,
                 np.array(PARAM_BOUNDS[1]) - 1e-9)
    res = least_squares(residual_vector, x0, args=(model, sp_fit, sat_fit), bounds=PARAM_BOUNDS,
                        loss="soft_l1", f_scale=0.02, x_scale="jac")
    L, M, N, c_red = res.x
    c = c_red * R * Tc / Pc
    fitted = held_out_figures(model, sp_out, sat_out, L, M, N, c)
    generalised = held_out_figures(model, sp_out, sat_out, L0, M0, N0, c0)
    n_fit = sp_fit["T"].size + (2 * sat_fit["T"].size if with_sat else 0)
    n_out = sp_out["T"].size + (2 * sat_out["T"].size if with_sat else 0)
    return dict(name=name, cp_name=cp_name, L=L, M=M, N=N, c=c, success=res.success, message=res.message,
                consistent=consistent(L, M, N), fitted=fitted, generalised=generalised,
                n_fit=n_fit, n_out=n_out, sat_range=sat_fit["range"] if with_sat else None)


def _fmt(fig):
    return (f"rho RMS {fig['rho_rms']:.2f} % max {fig['rho_max']:.2f} % | "
            f"hR RMS {fig['h_rms']:.0f} max {fig['h_max']:.0f} J/mol | "
            f"psat RMS {fig['psat_rms']:.2f} % max {fig['psat_max']:.2f} % | "
            f"rhoL RMS {fig['rhoL_rms']:.2f} % max {fig['rhoL_max']:.2f} %")


CSV_COLUMNS = ["name", "model", "twu_L", "twu_M", "twu_N", "c_m3_per_mol", "source", "T_range_K",
               "P_range_MPa", "sat_range_K", "n_points_fit", "n_points_held_out",
               "held_out_rho_rms_pct", "held_out_rho_max_pct", "held_out_hres_rms_J_per_mol",
               "held_out_hres_max_J_per_mol", "held_out_psat_rms_pct", "held_out_psat_max_pct",
               "held_out_rhoL_rms_pct", "held_out_rhoL_max_pct", "consistent_alpha", "note"]


def _row(r):
    f = r["fitted"]
    sat = "" if r["sat_range"] is None else f"{r['sat_range'][0]:.2f}-{r['sat_range'][1]:.2f}"
    return dict(
        name=r["name"], model=MODEL.name, twu_L=f"{r['L']:.8g}", twu_M=f"{r['M']:.8g}",
        twu_N=f"{r['N']:.8g}", c_m3_per_mol=f"{r['c']:.8g}",
        source=f"fitted by eosfill to {reference_source(r['cp_name'])}",
        T_range_K=f"{T_RANGE[0]:g}-{T_RANGE[1]:g}", P_range_MPa=f"{P_RANGE[0] / 1e6:g}-{P_RANGE[1] / 1e6:g}",
        sat_range_K=sat, n_points_fit=r["n_fit"], n_points_held_out=r["n_out"],
        held_out_rho_rms_pct=f"{f['rho_rms']:.3f}", held_out_rho_max_pct=f"{f['rho_max']:.3f}",
        held_out_hres_rms_J_per_mol=f"{f['h_rms']:.1f}", held_out_hres_max_J_per_mol=f"{f['h_max']:.1f}",
        held_out_psat_rms_pct="" if np.isnan(f["psat_rms"]) else f"{f['psat_rms']:.3f}",
        held_out_psat_max_pct="" if np.isnan(f["psat_max"]) else f"{f['psat_max']:.3f}",
        held_out_rhoL_rms_pct="" if np.isnan(f["rhoL_rms"]) else f"{f['rhoL_rms']:.3f}",
        held_out_rhoL_max_pct="" if np.isnan(f["rhoL_max"]) else f"{f['rhoL_max']:.3f}",
        consistent_alpha="yes" if r["consistent"] else "no",
        note="; ".join(filter(None, ["an extrapolation outside the fit ranges", NOTES.get(r["name"])])),
    )


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--fluids", nargs="*", help="names from fluids.csv (default: the built-in list)")
    ap.add_argument("--write", metavar="CSV", help="write the fitted table to this file")
    args = ap.parse_args(argv)
    chosen = FLUIDS if not args.fluids else [f for f in FLUIDS if f[0] in args.fluids]
    unknown = set(args.fluids or []) - {f[0] for f in FLUIDS}
    if unknown:
        ap.error(f"no reference set-up for {sorted(unknown)}; known: {[f[0] for f in FLUIDS]}")
    results = []
    for name, cp_name, with_sat in chosen:
        r = fit_fluid(name, cp_name, with_sat)
        results.append(r)
        print(f"{name}: L={r['L']:.5f} M={r['M']:.5f} N={r['N']:.5f} c={r['c'] * 1e6:.3f} cm3/mol "
              f"({r['n_fit']} fitted, {r['n_out']} held out; optimiser: {r['message']}; "
              f"alpha consistent: {r['consistent']})")
        print(f"   held out, fitted    : {_fmt(r['fitted'])}")
        print(f"   held out, tc-PR gen.: {_fmt(r['generalised'])}")
    if args.write:
        out = Path(args.write)
        tmp = out.with_suffix(out.suffix + ".tmp")
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=CSV_COLUMNS)
            w.writeheader()
            for r in results:
                w.writerow(_row(r))
        tmp.replace(out)   # nothing half-written
        print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
