"""Maintenance tool: fit ideal-gas heat-capacity polynomials for fluids that
Poling, Prausnitz & O'Connell (2001) Appendix A does not list.

NOT part of the eosfill package and never imported by it. It imports CoolProp
(allowed only in tests and offline maintenance scripts) to evaluate the
ideal-gas isobaric heat capacity cp0(T) of each fluid's reference equation of
state, and fits it by least squares (relative deviations) to the same form
that Poling et al. use:

    Cp0/R = a0 + a1*T + a2*T**2 + a3*T**3 + a4*T**4      (T in K, SI, unscaled)

Usage (from the repository root):

    python data/tools/fit_cp0.py            # print fits and deviations
    python data/tools/fit_cp0.py --write    # also update data/fluids/fluids.csv

With --write the cp_* columns, cp_source and the fit part of `note` of the
fitted rows in fluids.csv are rewritten; other rows are left untouched.
Tested with CoolProp 8.0.0.
"""
from __future__ import annotations

import csv
import os
import sys

import numpy as np

R_GAS = 8.314462618  # J/(mol K), CODATA 2018 exact value (k_B * N_A)

# (name in fluids.csv, CoolProp fluid name, Tmin K, Tmax K, source key of the reference EOS)
# Ranges: chosen so that the 4th-degree polynomial stays within about 0.3 %
# of the reference cp0 (below ~175-200 K the vibrational contributions of
# these polyatomic molecules bend cp0 more than a quartic can follow). The
# package warns outside [Tmin, Tmax].
FITS = [
    # Two fluids ARE in Poling Appendix A but their polynomial was replaced:
    # hydrogen (Poling's polynomial is 22 % off the reference cp0 at 50 K, 2.5 %
    # above 200 K) and sulfur dioxide (Poling's polynomial gives 42.2 J/(mol K)
    # at 298.15 K against the same table's Cp0(298) = 40.05 and the reference
    # EOS 39.89; 6.7 % off at 200 K). See data/SOURCES.md.
    ("hydrogen", "Hydrogen", 100.0, 1000.0, "Leachman2009"),
    ("sulfur dioxide", "SulfurDioxide", 200.0, 1000.0, "Gao2016"),
    ("air", "Air", 50.0, 1000.0, "Lemmon2000"),
    ("sulfur hexafluoride", "SulfurHexafluoride", 200.0, 650.0, "GuderWagner2009"),
    ("carbonyl sulfide", "CarbonylSulfide", 175.0, 650.0, "LemmonSpan2006"),
    ("R-1234yf", "R1234yf", 175.0, 600.0, "LemmonAkasaka2022"),
    ("R-1234ze(E)", "R1234ze(E)", 200.0, 600.0, "TholLemmon2016"),
    ("R-227ea", "R227EA", 175.0, 650.0, "LemmonSpan2015"),
    ("R-1233zd(E)", "R1233zd(E)", 200.0, 600.0, "AkasakaLemmon2022"),
]

N_POINTS = 400


def cp0_over_R(cp_name: str, T: np.ndarray) -> np.ndarray:
    # The ideal-gas part does not depend on density; evaluate it at a tiny
    # molar density so that no melting-line or phase check gets in the way.
    import CoolProp

    st = CoolProp.AbstractState("HEOS", cp_name)
    out = []
    for t in T:
        st.update(CoolProp.DmolarT_INPUTS, 1e-6, float(t))
        out.append(st.cp0molar())
    return np.array(out) / R_GAS


def fit_one(cp_name: str, Tmin: float, Tmax: float):
    """Return (coefficients a0..a4 unscaled, max |relative deviation|)."""
    T = np.linspace(Tmin, Tmax, N_POINTS)
    y = cp0_over_R(cp_name, T)
    s = 1000.0  # scale T for conditioning: x = T/s
    x = T / s
    A = np.vander(x, 5, increasing=True)  # 1, x, x^2, x^3, x^4
    # minimise sum of squared relative deviations
    w = 1.0 / y
    c_scaled, *_ = np.linalg.lstsq(A * w[:, None], y * w, rcond=None)
    coeffs = c_scaled / s ** np.arange(5)
    fit = np.polynomial.polynomial.polyval(T, coeffs)
    maxdev = float(np.max(np.abs(fit / y - 1.0)))
    return coeffs, maxdev


def main(argv=None):
    argv = sys.argv[1:] if argv is None else argv
    results = {}
    for name, cp_name, Tmin, Tmax, src in FITS:
        coeffs, maxdev = fit_one(cp_name, Tmin, Tmax)
        results[name] = (coeffs, maxdev, Tmin, Tmax, src)
        print(f"{name:22s} {Tmin:6.0f}-{Tmax:6.0f} K  max rel dev {maxdev*100:.3f} %  "
              + " ".join(f"{c:.10g}" for c in coeffs))
    if "--write" in argv:
        path = os.path.join(os.path.dirname(__file__), "..", "fluids", "fluids.csv")
        with open(path, newline="", encoding="utf-8") as f:
            reader = csv.DictReader(f)
            fields = reader.fieldnames
            rows = list(reader)
        for r in rows:
            if r["name"] in results:
                coeffs, maxdev, Tmin, Tmax, src = results[r["name"]]
                r["cp_form"] = "poling"
                for i in range(5):
                    r[f"cp_a{i}"] = f"{coeffs[i]:.10g}"
                r["cp_Tmin_K"] = f"{Tmin:g}"
                r["cp_Tmax_K"] = f"{Tmax:g}"
                r["cp_source"] = f"fit:{src}"
                fitnote = (f"Cp0 polynomial fitted by data/tools/fit_cp0.py to the reference-EOS "
                           f"ideal-gas cp0 (CoolProp 8.0.0) over {Tmin:g}-{Tmax:g} K; "
                           f"max rel. dev. {maxdev*100:.3f} %")
                old = [p for p in r["note"].split(" | ") if p and not p.startswith("Cp0 polynomial fitted")]
                r["note"] = " | ".join(old + [fitnote])
        with open(path, "w", newline="", encoding="utf-8") as f:
            w = csv.DictWriter(f, fieldnames=fields, lineterminator="\n")
            w.writeheader()
            w.writerows(rows)
        print("updated", os.path.normpath(path))
    return results


if __name__ == "__main__":
    main()
