"""Data files vs the outside world.

Checks data/fluids/fluids.csv and data/fluids/kij.csv against independent
general-purpose libraries used ONLY in tests: chemicals 1.5.2, thermo 0.6.1,
CoolProp 8.0.0. The CSVs are read with the csv module directly (no package
loader needed). Each test names the source it compares with.
"""
from __future__ import annotations

import csv
import json
import math
import os
import re

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
FLUIDS_CSV = os.path.join(ROOT, "data", "fluids", "fluids.csv")
KIJ_CSV = os.path.join(ROOT, "data", "fluids", "kij.csv")
SOURCES_MD = os.path.join(ROOT, "data", "SOURCES.md")
R = 8.314462618  # J/(mol K), CODATA 2018 exact

FLUID_COLUMNS = ("name,cas,formula,aliases,M_kg_per_mol,Tc_K,Pc_Pa,omega,crit_source,cp_form,"
                 "cp_a0,cp_a1,cp_a2,cp_a3,cp_a4,cp_Tmin_K,cp_Tmax_K,cp_source,note").split(",")
KIJ_COLUMNS = "model,name1,name2,kij,source,note".split(",")

AIR_CAS = "132259-10-0"


def _read(path):
    with open(path, newline="", encoding="utf-8") as f:
        reader = csv.DictReader(f)
        return reader.fieldnames, list(reader)


FLUID_HEADER, FLUIDS = _read(FLUIDS_CSV)
KIJ_HEADER, KIJS = _read(KIJ_CSV)
BY_NAME = {r["name"]: r for r in FLUIDS}
IDS = [r["name"] for r in FLUIDS]


def _cp_poly(row, T):
    a = [float(row[f"cp_a{i}"]) for i in range(5)]
    return R * (a[0] + T * (a[1] + T * (a[2] + T * (a[3] + T * a[4]))))


def _grid(row, n=20, lo=None, hi=None):
    tmin, tmax = float(row["cp_Tmin_K"]), float(row["cp_Tmax_K"])
    if lo is not None:
        tmin = max(tmin, lo)
    if hi is not None:
        tmax = min(tmax, hi)
    if tmax < tmin:
        return []
    return [tmin + (tmax - tmin) * i / (n - 1) for i in range(n)]


# --------------------------------------------------------------------------
# Structure (self-consistency of the files; no outside source)
# --------------------------------------------------------------------------

def test_headers_exact():
    assert FLUID_HEADER == FLUID_COLUMNS
    assert KIJ_HEADER == KIJ_COLUMNS


def test_required_fluids_present():
    required = {
        "1333-74-0", "7440-59-7", "7440-01-9", "7440-37-1", "7439-90-9", "7440-63-3", "7727-37-9",
        "7782-44-7", AIR_CAS, "630-08-0", "124-38-9", "10024-97-2", "7783-06-4", "7664-41-7",
        "7732-18-5", "2551-62-4", "7446-09-5", "463-58-1", "7647-01-0", "74-82-8", "74-84-0",
        "74-98-6", "106-97-8", "75-28-5", "109-66-0", "78-78-4", "463-82-1", "110-54-3", "142-82-5",
        "111-65-9", "111-84-2", "124-18-5", "74-85-1", "115-07-1", "74-86-2", "106-98-9", "115-10-6",
        "67-56-1", "64-17-5", "71-43-2", "108-88-3", "287-92-3", "75-10-5", "354-33-6", "811-97-2",
        "420-46-2", "754-12-1", "29118-24-9", "75-37-6", "75-45-6", "75-46-7", "431-89-0",
        "102687-65-0"}
    assert required <= {r["cas"] for r in FLUIDS}
    assert len(FLUIDS) >= 53


# Molecular formulas shared by isomers: a lookup by formula must refuse these
# as ambiguous (documented, not an error in the data).
ISOMER_FORMULAS = {"c4h10", "c5h12", "c2h6o", "c3h2f4"}


def test_lookup_keys_unique():
    """name, aliases and CAS (case-insensitive) identify exactly one fluid;
    formulas too, except the documented isomer groups."""
    owner = {}
    for r in FLUIDS:
        keys = {r["name"].lower(), r["cas"].lower()} | {a.strip().lower() for a in r["aliases"].split(";") if a.strip()}
        for k in keys:
            assert k not in owner, f"lookup key {k!r} used by {owner[k]!r} and {r['name']!r}"
            owner[k] = r["name"]
    for r in FLUIDS:
        f = r["formula"].lower()
        if f in ISOMER_FORMULAS:
            continue
        if f in owner:
            assert owner[f] == r["name"], f"formula {f!r} of {r['name']!r} collides with {owner[f]!r}"
    formulas = [r["formula"].lower() for r in FLUIDS]
    dup = {f for f in formulas if formulas.count(f) > 1}
    assert dup == ISOMER_FORMULAS


def test_every_source_key_is_cited():
    text = open(SOURCES_MD, encoding="utf-8").read()
    keys = set()
    for r in FLUIDS:
        keys.add(r["crit_source"])
        keys.add(r["cp_source"].split(":", 1)[-1])
    for r in KIJS:
        keys.add(r["source"])
    missing = [k for k in sorted(keys) if not re.search(r"\|\s*" + re.escape(k) + r"\s*\|", text)]
    assert not missing, f"source keys without citation in SOURCES.md: {missing}"


def test_values_physical():
    for r in FLUIDS:
        assert float(r["Tc_K"]) > 0 and float(r["Pc_Pa"]) > 0 and float(r["M_kg_per_mol"]) > 0
        assert -0.5 < float(r["omega"]) < 1.0
        assert r["cp_form"] == "poling"
        assert 0 < float(r["cp_Tmin_K"]) < float(r["cp_Tmax_K"])
        for T in _grid(r, 50):
            assert _cp_poly(r, T) >= 2.5 * R * (1 - 1e-9), (r["name"], T)


# --------------------------------------------------------------------------
# Critical constants vs chemicals 1.5.2 (Tc, Pc: chemicals.critical default
# method; omega: chemicals.acentric.omega default; M: chemicals.identifiers
# molecular weight from the formula with IUPAC atomic weights)
# --------------------------------------------------------------------------

# Tolerances: 0.1 % on Tc and 1 % on Pc (the spread between critically
# evaluated measurements of a well-studied fluid's critical point is a few
# 0.01 % in Tc and a few 0.1 % in Pc; the former 1 % / 3 % hid n-heptane's
# computed-not-printed critical point, issue 10 item 4).
TOL_TC, TOL_PC, TOL_OMEGA, TOL_M = 0.001, 0.01, 0.02, 0.001

# Per-fluid exceptions, each with its reason (also in the CSV note or SOURCES.md):
CRIT_EXCEPTIONS: dict = {
    # chemicals' default for methanol is the critical point computed from the
    # de Reuck & Craven 1993 equation (513.38 K, 8.216 MPa); the paper prints
    # 512.5 K, as does chemicals' own IUPAC method (Gude & Teja 1995)
    "methanol": dict(Tc=0.002, Pc=0.016),
    # chemicals' default is the earlier Mondejar et al. 2015 equation (439.6 K,
    # 3.624 MPa); the row follows Akasaka & Lemmon 2022 (438.86 K, 3.5828 MPa)
    "R-1233zd(E)": dict(Tc=0.002, Pc=0.012),
    # Horstmann et al. 2005 (PSRK revision 4) vs chemicals' default: Pc +2.5 %
    "acetylene": dict(Pc=0.03),
}


@pytest.mark.parametrize("name", [n for n in IDS if BY_NAME[n]["cas"] != AIR_CAS])
def test_critical_constants_vs_chemicals(name):
    pytest.importorskip("chemicals")
    from chemicals.acentric import omega
    from chemicals.critical import Pc, Tc
    from chemicals.identifiers import search_chemical

    r = BY_NAME[name]
    cas = r["cas"]
    tol = dict(Tc=TOL_TC, Pc=TOL_PC, omega=TOL_OMEGA, M=TOL_M)
    tol.update(CRIT_EXCEPTIONS.get(name, {}))
    assert float(r["Tc_K"]) == pytest.approx(Tc(cas), rel=tol["Tc"])
    assert float(r["Pc_Pa"]) == pytest.approx(Pc(cas), rel=tol["Pc"])
    assert float(r["omega"]) == pytest.approx(omega(cas), abs=tol["omega"])
    assert float(r["M_kg_per_mol"]) == pytest.approx(search_chemical(cas).MW / 1000.0, rel=tol["M"])


def test_air_vs_chemicals_lemmon2000():
    """Air is not in chemicals' database; compare with chemicals.air, an
    independent implementation of Lemmon et al. 2000. Its T/P_reducing are the
    maxcondentherm values (132.6312 K, 3.78502 MPa) while our row holds the
    critical point (132.5306 K, 3.786 MPa), hence 0.1 %. omega: no outside
    value exists for air (not checked)."""
    pytest.importorskip("chemicals")
    from chemicals import air

    r = BY_NAME["air"]
    assert float(r["M_kg_per_mol"]) == pytest.approx(air.lemmon2000_air_MW / 1000.0, rel=1e-3)
    assert float(r["Tc_K"]) == pytest.approx(air.lemmon2000_air_T_reducing, rel=1e-3)
    assert float(r["Pc_Pa"]) == pytest.approx(air.lemmon2000_air_P_reducing, rel=1e-3)
    assert "pseudo-pure" in r["note"]


# --------------------------------------------------------------------------
# Transcription vs the cited reference equations (CoolProp 8.0.0)
# --------------------------------------------------------------------------

def _coolprop_name(r):
    pytest.importorskip("CoolProp")
    import CoolProp.CoolProp as CP

    for fn in CP.get_global_param_string("FluidsList").split(","):
        if r["cas"] == AIR_CAS and fn == "Air":
            return fn
        try:
            if CP.get_fluid_param_string(fn, "CAS") == r["cas"]:
                return fn
        except ValueError:
            pass
    return None


def _printed_critical_point(fn):
    """The critical point the reference equation's paper prints, as CoolProp
    8.0.0's fluid file transcribes it (STATES.critical: T [K], p [Pa])."""
    import CoolProp.CoolProp as CP

    data = json.loads(CP.get_fluid_param_string(fn, "JSON"))
    data = data[0] if isinstance(data, list) else data
    crit = data["STATES"]["critical"]
    return crit["T"], crit["p"]


@pytest.mark.parametrize("name", [n for n in IDS if n != "acetylene"])
def test_critical_constants_match_reference_eos(name):
    """Tc, Pc equal the critical point the cited reference equation's paper
    prints (CoolProp 8.0.0's transcription, STATES.critical) to the digits
    written, not the critical point computed from the equation; M equals the
    equation's; omega re-derived as -log10(psat(0.7 Tc)/Pc) - 1 with them."""
    pytest.importorskip("CoolProp")
    import CoolProp.CoolProp as CP

    r = BY_NAME[name]
    fn = _coolprop_name(r)
    assert fn is not None
    tc, pc = _printed_critical_point(fn)
    assert float(r["Tc_K"]) == pytest.approx(tc, rel=1e-9)
    assert float(r["Pc_Pa"]) == pytest.approx(pc, rel=1e-9)
    assert float(r["M_kg_per_mol"]) == pytest.approx(CP.PropsSI("molar_mass", fn), rel=1e-9)
    if name == "air":
        assert float(r["omega"]) == pytest.approx(CP.PropsSI("acentric", fn), abs=1e-6)
    else:
        w = -math.log10(CP.PropsSI("P", "T", 0.7 * tc, "Q", 0, fn) / pc) - 1.0
        assert float(r["omega"]) == pytest.approx(w, abs=1e-5)


@pytest.mark.published
@pytest.mark.parametrize("name, Tc, Pc, omega", [
    # Span & Wagner, Int. J. Thermophys. 24 (2003) 41-109, Table I (n-heptane):
    # Tc = 540.13 K, pc = 2.736 MPa; omega 0.349 (CoolProp's transcription of
    # the paper; the definition with these constants gives 0.3494)
    ("n-heptane", 540.13, 2.736e6, 0.349),
    # Schmidt & Wagner, Fluid Phase Equilib. 19 (1985) 175-200: 154.581 K, 5.043 MPa
    ("oxygen", 154.581, 5.043e6, 0.0222),
    # Lemmon & Span, J. Chem. Eng. Data 51 (2006) 785-850, Table (CO): 132.86 K, 3.494 MPa, omega 0.0497
    ("carbon monoxide", 132.86, 3.494e6, 0.0497),
    # Akasaka & Lemmon, J. Phys. Chem. Ref. Data 51 (2022) 023101: 438.86 K, 3.5828 MPa
    ("R-1233zd(E)", 438.86, 3.5828e6, 0.304),
])
def test_critical_constants_printed_in_cited_paper(name, Tc, Pc, omega):
    """Issue 10 item 4: the printed critical constants of the cited papers, to
    the digits printed (a computed critical point of a short equation is off
    by 0.2 % in Tc and 1.4 % in Pc for n-heptane)."""
    r = BY_NAME[name]
    digits_T = 10.0 ** -len(repr(Tc).split(".")[1]) / 2
    assert abs(float(r["Tc_K"]) - Tc) <= digits_T
    assert float(r["Pc_Pa"]) == pytest.approx(Pc, rel=5e-5)
    assert float(r["omega"]) == pytest.approx(omega, abs=6e-4)


def test_acetylene_vs_horstmann2005_table():
    """Acetylene constants equal Horstmann et al. 2005 as copied in chemicals 1.5.2."""
    chemicals = pytest.importorskip("chemicals")
    path = os.path.join(os.path.dirname(chemicals.__file__), "Critical Properties",
                        "Appendix to PSRK Revision 4.tsv")
    with open(path, encoding="utf-8") as f:
        row = next(x for x in csv.DictReader(f, delimiter="\t") if x["CAS"] == "74-86-2")
    r = BY_NAME["acetylene"]
    assert float(r["Tc_K"]) == float(row["Tc"])
    assert float(r["Pc_Pa"]) == float(row["Pc"])
    assert float(r["omega"]) == float(row["omega"])


# --------------------------------------------------------------------------
# Ideal-gas heat capacity
# --------------------------------------------------------------------------

POLING_ROWS = [n for n in IDS if BY_NAME[n]["cp_source"] == "Poling2001"]
FIT_ROWS = [n for n in IDS if BY_NAME[n]["cp_source"].startswith("fit:")]
MONO_ROWS = [n for n in IDS if BY_NAME[n]["cp_source"] == "monatomic"]


@pytest.mark.parametrize("name", POLING_ROWS)
def test_poling_rows_transcribed_exactly(name):
    """Coefficients equal chemicals 1.5.2's copy of Poling et al. 2001 App. A
    (Cp_data_Poling, unscaled), and thermo's POLING_POLY method gives the same Cp."""
    pytest.importorskip("thermo")
    from chemicals.heat_capacity import Cp_data_Poling
    from thermo.heat_capacity import POLING_POLY, HeatCapacityGas

    r = BY_NAME[name]
    ref = Cp_data_Poling.loc[r["cas"]]
    for i in range(5):
        assert float(r[f"cp_a{i}"]) == pytest.approx(float(ref[f"a{i}"]), rel=1e-12, abs=0)
    if name != "acetylene":  # acetylene's Tmin raised to 100 K, see note
        assert float(r["cp_Tmin_K"]) == float(ref["Tmin"])
    assert float(r["cp_Tmax_K"]) == float(ref["Tmax"])
    h = HeatCapacityGas(CASRN=r["cas"])
    for T in _grid(r, 5):
        assert _cp_poly(r, T) == pytest.approx(h.calculate(T, POLING_POLY), rel=1e-6)


# Tolerance vs thermo 0.6.1's default HeatCapacityGas method (HEOS_FIT: fits to
# reference-EOS ideal-gas cp; JANAF for acetylene, whose HEOS_FIT curve covers
# only 192-310 K). Default 1 %. Exceptions: Poling's 4th-degree polynomials
# depart from the reference cp0 at the ends of their ranges (worst point
# given); the hydrogen fit cannot follow H2's rotational cp0 near 100 K; for
# R-1233zd(E) and R-1234yf thermo's curve disagrees with the cited reference EOS
# (CoolProp 8.0.0), which our fit follows within 0.3 % (checked below).
CP_TOL_DEFAULT = 0.01
CP_EXCEPTIONS = {
    "hydrogen": (0.015, "fit to Leachman 2009: max 1.21 % at 100 K"),
    "carbon monoxide": (0.04, "Poling polynomial: max 3.61 % at 100 K"),
    "carbon dioxide": (0.02, "Poling polynomial: max 1.68 % at 900 K"),
    "nitrous oxide": (0.02, "Poling polynomial: max 1.76 % at 200 K"),
    "water": (0.015, "Poling polynomial: max 1.17 % at 900 K"),
    "methane": (0.02, "Poling polynomial: max 1.90 % at 150 K"),
    "ethane": (0.02, "Poling polynomial: max 1.76 % at 150 K"),
    "propane": (0.03, "Poling polynomial: max 2.69 % at 150 K"),
    "n-butane": (0.015, "Poling polynomial: max 1.05 % at 200 K"),
    "isobutane": (0.035, "Poling polynomial: max 3.35 % at 150 K"),
    "n-pentane": (0.015, "Poling polynomial: max 1.12 % at 200 K"),
    "neopentane": (0.015, "Poling polynomial: max 1.33 % at 495 K"),
    "n-hexane": (0.015, "Poling polynomial: max 1.26 % at 411 K"),
    "n-heptane": (0.02, "Poling polynomial: max 1.74 % at 200 K"),
    "ethylene": (0.015, "Poling polynomial: max 1.37 % at 150 K"),
    "propylene": (0.02, "Poling polynomial: max 1.61 % at 100 K"),
    "acetylene": (0.04, "Poling polynomial vs JANAF: max 3.51 % at 195 K"),
    "1-butene": (0.025, "Poling polynomial: max 2.33 % at 100 K"),
    "dimethyl ether": (0.025, "Poling polynomial: max 2.16 % at 479 K"),
    "methanol": (0.025, "Poling polynomial: max 2.14 % at 200 K"),
    "benzene": (0.015, "Poling polynomial: max 1.10 % at 650 K"),
    "toluene": (0.02, "Poling polynomial: max 1.92 % at 200 K"),
    "cyclopentane": (0.02, "Poling polynomial: max 1.85 % at 400 K"),
    "R-134a": (0.03, "Poling polynomial: max 2.76 % at 200 K"),
    "R-143a": (0.02, "Poling polynomial: max 1.61 % at 200 K"),
    "R-1234yf": (0.02, "thermo curve vs cited EOS: max 1.78 % at 175 K"),
    "R-152a": (0.02, "Poling polynomial: max 1.68 % at 250 K"),
    "R-22": (0.015, "Poling polynomial: max 1.30 % at 150 K"),
    "R-23": (0.02, "Poling polynomial: max 1.72 % at 150 K"),
    "R-1233zd(E)": (0.095, "thermo curve vs cited EOS: max 9.31 % at 200 K"),
}


@pytest.mark.parametrize("name", [n for n in IDS if n != "air"])
def test_cp_vs_thermo_default(name):
    pytest.importorskip("thermo")
    from thermo.heat_capacity import HeatCapacityGas

    r = BY_NAME[name]
    h = HeatCapacityGas(CASRN=r["cas"])
    method = "JANAF" if name == "acetylene" else h.method
    lo, hi = h.T_limits[method]
    tol = CP_EXCEPTIONS.get(name, (CP_TOL_DEFAULT, ""))[0]
    # 20 temperatures evenly over our row's range; those inside thermo's range are compared
    Ts = [T for T in _grid(r, 20) if lo <= T <= hi]
    assert Ts, f"no overlap between our range and thermo {method} range for {name}"
    for T in Ts:
        ref = h.calculate(T, method)
        assert _cp_poly(r, T) == pytest.approx(ref, rel=tol), (name, T, method)
    if name in CP_EXCEPTIONS:  # the reason is also recorded in the CSV note
        assert "Cp0" in r["note"]


def test_air_cp_vs_chemicals_lemmon2000():
    """Air Cp0 vs the ideal-gas part of Lemmon et al. 2000 as implemented in
    chemicals.air: cp0/R = 1 - tau^2 d2A0/dtau2 (with Lemmon's R = 8.31451)."""
    pytest.importorskip("chemicals")
    from chemicals import air

    r = BY_NAME["air"]
    for T in _grid(r, 20):
        tau = air.lemmon2000_air_T_reducing / T
        cp0 = (1.0 - tau * tau * air.lemmon2000_air_d2A0_dtau2(tau, 0.0)) * air.lemmon2000_air_R
        assert _cp_poly(r, T) == pytest.approx(cp0, rel=0.005), T


FIT_TOL = 0.005
FIT_EXCEPTIONS = {"hydrogen": (0.013, "quartic cannot follow H2 rotational cp0 near 100 K: max 1.2 %")}


@pytest.mark.parametrize("name", FIT_ROWS)
def test_fitted_cp_vs_coolprop(name):
    """Fitted rows within 0.5 % of the cited reference EOS ideal-gas cp0
    (CoolProp 8.0.0 CP0MOLAR) over the stated range."""
    CoolProp = pytest.importorskip("CoolProp")
    r = BY_NAME[name]
    st = CoolProp.AbstractState("HEOS", _coolprop_name(r))
    tol = FIT_EXCEPTIONS.get(name, (FIT_TOL, ""))[0]
    for T in _grid(r, 20):
        st.update(CoolProp.DmolarT_INPUTS, 1e-6, T)
        assert _cp_poly(r, T) == pytest.approx(st.cp0molar(), rel=tol), (name, T)
    m = re.search(r"max rel\. dev\. ([0-9.]+) %", r["note"])
    assert m and float(m.group(1)) / 100 <= tol


@pytest.mark.parametrize("name", MONO_ROWS)
def test_monatomic_cp(name):
    """Exact 5/2 R; CoolProp 8.0.0 reference EOS ideal-gas part agrees."""
    CoolProp = pytest.importorskip("CoolProp")
    r = BY_NAME[name]
    assert [float(r[f"cp_a{i}"]) for i in range(5)] == [2.5, 0, 0, 0, 0]
    st = CoolProp.AbstractState("HEOS", _coolprop_name(r))
    st.update(CoolProp.DmolarT_INPUTS, 1e-6, 300.0)
    assert st.cp0molar() == pytest.approx(2.5 * R, rel=1e-5)


# --------------------------------------------------------------------------
# Binary interaction parameters
# --------------------------------------------------------------------------

# |kij| >= 0.5 kept as published, documented: both are Knapp et al. 1982
# regressions for strongly asymmetric pairs (He-CO, H2-toluene).
KIJ_LARGE_OK = {frozenset(("helium", "carbon monoxide")), frozenset(("hydrogen", "toluene"))}


def test_kij_rows():
    seen = set()
    for r in KIJS:
        assert r["model"] in ("PR", "SRK")
        assert r["name1"] in BY_NAME and r["name2"] in BY_NAME, r
        assert r["name1"] != r["name2"]
        key = (r["model"], frozenset((r["name1"], r["name2"])))
        assert key not in seen, f"duplicate pair {key}"
        seen.add(key)
        assert r["source"] and r["note"]
        k = float(r["kij"])
        if frozenset((r["name1"], r["name2"])) in KIJ_LARGE_OK:
            assert abs(k) < 0.6
        else:
            assert abs(k) < 0.5, r


def test_pr_kij_equal_chemsep_table():
    """PR rows = every pair of our fluids in thermo 0.6.1's ChemSep pr.json
    (Knapp et al. 1982), values and pages unchanged."""
    thermo = pytest.importorskip("thermo")
    path = os.path.join(os.path.dirname(thermo.__file__), "Interaction Parameters", "ChemSep", "pr.json")
    data = json.load(open(path, encoding="utf-8"))["data"]
    cas = {r["cas"]: r["name"] for r in FLUIDS}
    expected = {}
    for k, v in data.items():
        a, b = k.split()
        if a in cas and b in cas:
            expected[frozenset((cas[a], cas[b]))] = v
    ours = {frozenset((r["name1"], r["name2"])): r for r in KIJS if r["model"] == "PR"}
    assert set(ours) == set(expected)
    for key, r in ours.items():
        assert float(r["kij"]) == expected[key]["kij"]
        assert r["source"] == "Knapp1982"
        assert expected[key]["page"][0] in r["note"]
