"""Model accuracy against reference equations: writes docs/accuracy.md and data/model_accuracy.csv.

What is measured, for every model eosfill offers (``eosfill.model.cubic.MODELS``),
against CoolProp's multiparameter reference equations (HEOS back end; for the
natural gas, its multi-fluid model with GERG-2008-type binary parameters):

* density of the gases filled at high pressure (gas and supercritical states
  only) on a grid of 230-360 K and 1-90 MPa: worst and RMS deviation per fluid;
* the end temperature of an adiabatic fill of an empty rigid vessel ending at
  the supply pressure (u_end = h_supply: the first law of an open system with
  no heat and no initial content), 20-87.5 MPa, supplies at 15 °C and −40 °C;
* saturated-liquid density of carbon dioxide and propane, 0.5-0.9 Tc (above
  the triple point);
* vapour pressure, 0.5-0.95 Tc (above the triple point).

The targets beside each figure are those of the accuracy issue (density
within 1 %, fill end temperature within 1 K, saturated-liquid density within
2 %, vapour pressure within 1 %); they are information, not tests.
``data/model_accuracy.csv`` carries the same figures per (model, fluid,
quantity) so reports can show the model error for the gas in hand.

CoolProp is used here and in the tests only; eosfill never imports it.

Run from the repository root:

    python benchmarks/accuracy_table.py            # rewrites docs/accuracy.md and data/model_accuracy.csv
    python benchmarks/accuracy_table.py --stdout   # prints the tables only
"""
from __future__ import annotations

import argparse
import csv
import math
import sys
import warnings
from pathlib import Path

import CoolProp
import numpy as np
from CoolProp.CoolProp import PropsSI

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import eosfill  # noqa: E402
from eosfill.model.models import MODELS  # noqa: E402
from eosfill.io.accuracy import mixture_label  # noqa: E402

T15 = 288.15

NATGAS = {"methane": 0.9, "ethane": 0.05, "propane": 0.02, "nitrogen": 0.02, "carbon dioxide": 0.01}
NATGAS_LABEL = mixture_label(NATGAS)
NATGAS_COOLPROP = "HEOS::Methane[0.9]&Ethane[0.05]&Propane[0.02]&Nitrogen[0.02]&CarbonDioxide[0.01]"

# (label, eosfill composition, CoolProp fluid)
GASES = [
    ("hydrogen", "hydrogen", "Hydrogen"),
    ("helium", "helium", "Helium"),
    ("nitrogen", "nitrogen", "Nitrogen"),
    ("argon", "argon", "Argon"),
    ("oxygen", "oxygen", "Oxygen"),
    ("methane", "methane", "Methane"),
    ("carbon dioxide", "carbon dioxide", "CarbonDioxide"),
    (NATGAS_LABEL, NATGAS, NATGAS_COOLPROP),
]

# Mixtures at a few states each (density only): (eosfill composition, CoolProp fluid, [(T [K], P [Pa])]);
# every state single-phase in the reference mixture model and in eosfill's PR (checked when written)
H2_CH4 = {"hydrogen": 0.2, "methane": 0.8}
CO2_IMP = {"carbon dioxide": 0.95, "nitrogen": 0.02, "methane": 0.02, "hydrogen": 0.01}
MIXTURES = [
    (H2_CH4, "HEOS::Hydrogen[0.2]&Methane[0.8]",
     [(T15, 10e6), (T15, 20e6), (T15, 35e6), (233.15, 10e6), (233.15, 20e6), (233.15, 35e6)]),
    (CO2_IMP, "HEOS::CarbonDioxide[0.95]&Nitrogen[0.02]&Methane[0.02]&Hydrogen[0.01]",
     [(T15, 3e6), (313.15, 10e6), (313.15, 15e6), (313.15, 20e6), (333.15, 10e6), (333.15, 20e6)]),
]
LIQUIDS = [("carbon dioxide", "CarbonDioxide"), ("propane", "Propane")]
SATURATION = [("nitrogen", "Nitrogen"), ("argon", "Argon"), ("oxygen", "Oxygen"), ("methane", "Methane"),
              ("ethane", "Ethane"), ("propane", "Propane"), ("carbon dioxide", "CarbonDioxide")]

GRID_T = (230.0, 260.0, 288.15, 320.0, 360.0)  # K
GRID_P = (1e6, 5e6, 10e6, 20e6, 35e6, 50e6, 70e6, 90e6)  # Pa
FILL_P = (20e6, 35e6, 50e6, 70e6, 87.5e6)  # Pa, end pressure = supply pressure
FILL_T = (T15, 233.15)  # K, supply temperatures

TARGETS = {"density": 1.0, "fill_end_T": 1.0, "sat_liquid_density": 2.0, "vapour_pressure": 1.0}
UNITS = {"density": "%", "fill_end_T": "K", "sat_liquid_density": "%", "vapour_pressure": "%"}


def _quiet():
    ctx = warnings.catch_warnings()
    ctx.__enter__()
    warnings.simplefilter("ignore", eosfill.RangeWarning)
    return ctx


def _ref_gas_phase(T, P, name):
    """True where the reference equation puts (T, P) in the gas or supercritical region."""
    if name.startswith("HEOS::"):
        # mixture: CoolProp's phase routine does not cover every multi-fluid
        # state; this gas's cricondentherm lies below 230 K (eosfill's PR
        # finds every grid state single-phase, checked when this was written)
        return True
    try:
        phase = PropsSI("Phase", "T", T, "P", P, name)
    except ValueError:
        return False
    gas_like = {CoolProp.iphase_gas, CoolProp.iphase_supercritical, CoolProp.iphase_supercritical_gas,
                CoolProp.iphase_supercritical_liquid}
    if phase == CoolProp.iphase_supercritical_liquid and T < PropsSI("Tcrit", name):
        return False
    return phase in gas_like


def _within_reference_range(T, P, name):
    try:
        return PropsSI("Tmin", name) <= T <= PropsSI("Tmax", name) and P <= PropsSI("pmax", name)
    except ValueError:
        return True  # mixtures: no single range; CoolProp raises on a state it cannot do


def density_deviations(model):
    """{label: [100 (rho/rho_ref - 1) over the grid]}."""
    out = {}
    for label, comp, cp in GASES:
        fluid = eosfill.Fluid(comp, model=model)
        devs = []
        for T in GRID_T:
            for P in GRID_P:
                if not (_within_reference_range(T, P, cp) and _ref_gas_phase(T, P, cp)):
                    continue
                try:
                    rho_ref = PropsSI("Dmass", "T", T, "P", P, cp)
                except ValueError:
                    continue
                st = fluid.state(T=T, P=P)
                devs.append(100.0 * (st.rho_mass / rho_ref - 1.0))
        out[label] = devs
    return out


def mixture_density_deviations(model):
    """{label: [100 (rho/rho_ref - 1)]} at the few states of each of MIXTURES."""
    out = {}
    for comp, cp, states in MIXTURES:
        fluid = eosfill.Fluid(comp, model=model)
        devs = []
        for T, P in states:
            rho_ref = PropsSI("Dmass", "T", T, "P", P, cp)
            devs.append(100.0 * (fluid.state(T=T, P=P).rho_mass / rho_ref - 1.0))
        out[mixture_label(comp)] = devs
    return out


def fill_end_T_deviations(model):
    """{label: [T_end,model - T_end,ref]} [K] for adiabatic empty-vessel fills."""
    out = {}
    for label, comp, cp in GASES:
        fluid = eosfill.Fluid(comp, model=model)
        devs = []
        for Ts in FILL_T:
            for P in FILL_P:
                if not _within_reference_range(Ts, P, cp) or not _ref_gas_phase(Ts, P, cp):
                    continue
                try:
                    h_ref = PropsSI("Hmolar", "T", Ts, "P", P, cp)
                    T_ref = PropsSI("T", "P", P, "Umolar", h_ref, cp)  # u_end = h_supply
                except ValueError:
                    continue
                h = fluid.state(T=Ts, P=P).h
                T_end = fluid.state(P=P, u=h).T
                devs.append(float(T_end - T_ref))
        out[label] = devs
    return out


def _sat_temperatures(cp, lo, hi, n=9):
    Tc = PropsSI("Tcrit", cp)
    Tt = PropsSI("Ttriple", cp)
    return [T for T in np.linspace(lo * Tc, hi * Tc, n) if T > Tt * 1.0001]


def sat_liquid_deviations(model):
    from eosfill.equilibrium import saturation_pressure

    out = {}
    for label, cp in LIQUIDS:
        fluid = eosfill.Fluid(label, model=model)
        Ts = np.array(_sat_temperatures(cp, 0.5, 0.9))
        sat = saturation_pressure(Ts, fluid.params)
        liq = fluid.single_phase(Ts, sat["P"], which="liquid")
        rho = np.asarray(liq.rho_mass)
        ref = np.array([PropsSI("Dmass", "T", T, "Q", 0, cp) for T in Ts])
        out[label] = list(100.0 * (rho / ref - 1.0))
    return out


def vapour_pressure_deviations(model):
    from eosfill.equilibrium import saturation_pressure

    out = {}
    for label, cp in SATURATION:
        fluid = eosfill.Fluid(label, model=model)
        Ts = np.array(_sat_temperatures(cp, 0.5, 0.95))
        P = saturation_pressure(Ts, fluid.params)["P"]
        ref = np.array([PropsSI("P", "T", T, "Q", 0, cp) for T in Ts])
        out[label] = list(100.0 * (np.asarray(P) / ref - 1.0))
    return out


QUANTITIES = {
    "density": lambda model: {**density_deviations(model), **mixture_density_deviations(model)},
    "fill_end_T": fill_end_T_deviations,
    "sat_liquid_density": sat_liquid_deviations,
    "vapour_pressure": vapour_pressure_deviations,
}


def measure(models):
    """Rows (model, quantity, fluid, n, worst signed, worst |.|, RMS, target)."""
    rows = []
    ctx = _quiet()
    try:
        for model in models:
            for q, func in QUANTITIES.items():
                for fluid, devs in func(model).items():
                    if not devs:
                        continue
                    d = np.asarray(devs)
                    worst = float(d[np.argmax(np.abs(d))])
                    rows.append(dict(model=model, quantity=q, fluid=fluid, n=len(d), worst=worst,
                                     rms=float(math.sqrt(np.mean(d**2))), target=TARGETS[q], unit=UNITS[q]))
    finally:
        ctx.__exit__(None, None, None)
    return rows


def summary_table(rows, quantity):
    models = sorted({r["model"] for r in rows}, key=lambda m: list(MODELS).index(m) if m in MODELS else 99)
    fluids = []
    for r in rows:
        if r["quantity"] == quantity and r["fluid"] not in fluids:
            fluids.append(r["fluid"])
    unit = UNITS[quantity]
    head = "| fluid | n | " + " | ".join(f"{m} worst / RMS [{unit}]" for m in models) + " |"
    lines = [head, "|---|---:|" + "---:|" * len(models)]
    for f in fluids:
        cells, n = [], ""
        for m in models:
            hit = [r for r in rows if r["model"] == m and r["quantity"] == quantity and r["fluid"] == f]
            if hit:
                r = hit[0]
                n = r["n"]
                mark = "" if abs(r["worst"]) <= r["target"] else " ✗"
                cells.append(f"{r['worst']:+.2f} / {r['rms']:.2f}{mark}")
            else:
                cells.append("—")
        lines.append(f"| {f} | {n} | " + " | ".join(cells) + " |")
    return "\n".join(lines)


TITLES = {
    "density": ("Density, gas and supercritical states, 230–360 K, 1–90 MPa",
                "deviation 100 (ρ_model/ρ_ref − 1) [%]; target within 1 %"),
    "fill_end_T": ("End temperature of an adiabatic fill of an empty vessel, ending at the supply pressure "
                   "(20–87.5 MPa; supply at 15 °C and −40 °C)",
                   "T_model − T_ref [K]; target within 1 K"),
    "sat_liquid_density": ("Saturated-liquid density, 0.5–0.9 Tc (above the triple point)",
                           "deviation [%]; target within 2 %"),
    "vapour_pressure": ("Vapour pressure, 0.5–0.95 Tc (above the triple point)",
                        "deviation [%]; target within 1 %"),
}


PARAGRAPH = """\
**Look at the model error before you trust a mass.** A cubic equation of
state is a simple model: at fill pressures plain Peng–Robinson misses the
density of common gases by up to about five per cent, and the sign and size
depend on the gas, the model and the pressure. The mass a vessel holds is
its volume times this density, so the error passes one for one into the
filled mass, the state of charge and the settled pressure. Before using a
result for a rating, a safety margin or custody transfer, find your gas and
conditions below (or compare with a reference equation or measured data at
your conditions), choose the model that is closest, and carry its deviation
into your margins. Reports print the figures of this page for the gas in
hand (`data/model_accuracy.csv`).
"""


def document(rows):
    parts = [f"""# Model accuracy against reference equations

Deviation signs: positive density means the model predicts a denser fluid
(more mass in a given volume) than the reference equation; positive
temperature means the model's fill ends hotter. "worst" is the signed
deviation of largest magnitude over the states measured, RMS the root mean
square; ✗ marks a fluid where the worst deviation misses the target.

{PARAGRAPH}"""]
    for q in QUANTITIES:
        title, what = TITLES[q]
        parts.append(f"## {title}\n\n{what}.\n\n{summary_table(rows, q)}\n")
    parts.append(f"""Models: {"; ".join(f"{m.name} = {m.summary}" for m in MODELS.values())}
(parts and sources: `eosfill fluids --model NAME`, `Fluid.model_description()`).
Constants from `data/fluids/fluids.csv`, binary parameters from
`data/fluids/kij.csv` (the PR rows, regressed for Soave's α, serve every PR-family
model; the SRK rows every SRK-family model), no volume translation unless the model has one.
Mixtures other than the natural gas (density only, a few states each): {"; ".join(
f"{mixture_label(c)} at " + ", ".join(f"{T:g} K/{P / 1e6:g} MPa" for T, P in st) for c, _, st in MIXTURES)}.
Grids: density at T = {", ".join(f"{T:g}" for T in GRID_T)} K and
P = {", ".join(f"{P / 1e6:g}" for P in GRID_P)} MPa where the reference
equation puts the state in the gas or supercritical region and within its
range of validity; fills at {", ".join(f"{P / 1e6:g}" for P in FILL_P)} MPa.

Reference: CoolProp {CoolProp.__version__} (HEOS back end): the reference
equation of state of each pure fluid (hydrogen: Leachman et al. 2009;
helium: Ortiz-Vega et al.; nitrogen: Span et al. 2000; argon: Tegeler et
al. 1999; oxygen: Schmidt & Wagner 1985; methane: Setzmann & Wagner 1991;
ethane: Bücker & Wagner 2006; propane: Lemmon et al. 2009; carbon dioxide:
Span & Wagner 1996), whose own density uncertainty at these conditions is of
the order of 0.1 % or less; the natural gas uses CoolProp's multi-fluid
mixture model with GERG-2008-type binary parameters (Kunz & Wagner 2012).

Generated by `benchmarks/accuracy_table.py` (eosfill {eosfill.__version__});
do not edit by hand.
""")
    return "\n".join(parts)


# docs/accuracy.md below this line is written by hand and kept when the tables are regenerated
KEEP_MARK = "<!-- hand-written below; kept by benchmarks/accuracy_table.py -->"


def write_csv(rows, path):
    cols = ["model", "quantity", "fluid", "n", "worst", "rms", "target", "unit"]
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=cols)
        w.writeheader()
        for r in rows:
            w.writerow({k: (f"{r[k]:.4g}" if isinstance(r[k], float) else r[k]) for k in cols})


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stdout", action="store_true", help="print the tables instead of writing the files")
    ap.add_argument("--models", nargs="*", default=list(MODELS), help="models to measure (default: all)")
    args = ap.parse_args(argv)
    rows = measure(args.models)
    if args.stdout:
        for q in QUANTITIES:
            print(f"\n{TITLES[q][0]}\n{summary_table(rows, q)}")
        return
    doc = ROOT / "docs" / "accuracy.md"
    kept = ""
    if doc.exists() and KEEP_MARK in doc.read_text(encoding="utf-8"):
        kept = doc.read_text(encoding="utf-8").split(KEEP_MARK, 1)[1]
    doc.write_text(document(rows) + "\n" + KEEP_MARK + kept, encoding="utf-8")
    write_csv(rows, ROOT / "data" / "model_accuracy.csv")
    print(f"wrote {doc} and data/model_accuracy.csv")
    for q in QUANTITIES:
        print(f"\n{TITLES[q][0]}\n{summary_table(rows, q)}")


if __name__ == "__main__":
    main()
