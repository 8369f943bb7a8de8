"""data/fluids/pr_twu_fitted.csv: Twu α and constant translation fitted by eosfill.

Checks, each with its source:
* structure: every row says it is "fitted by eosfill to <reference equation>"
  (never published), with its fit ranges, validity range and numbers of points;
  CoolProp 8.0's "Air" is the pseudo-pure equation of Lemmon et al. (2000), as
  the air row says;
* consistency of every fitted α (Le Guennec, Privat & Jaubert, Fluid Phase
  Equilib. 427 (2016) 513-538: α > 0, dα/dT < 0, d²α/dT² > 0, α → 0);
* the recorded held-out figures are true: recomputed against CoolProp 8.0's
  reference equations on the held-out states of benchmarks/accuracy_table.py
  (density 230-360 K x 1-90 MPa, fill end temperature from 15 °C and -40 °C to
  20-87.5 MPa, saturated-liquid density 0.5-0.9 Tc, vapour pressure
  0.5-0.95 Tc), and each row's ``targets_missed`` names exactly the targets of
  the accuracy issue (1 %, 1 K, 2 %, 1 %) that its figures miss; for the gases
  filled at high pressure the fitted row beats the generalised tc-PR and plain
  PR in held-out density and fill end temperature (worst and RMS);
* independently of eosfill's cubic code: thermo 0.6.1's PRTranslatedTwu with
  the row's L, M, N and c gives densities within the row's recorded worst
  held-out deviation of CoolProp at held-out supercritical states.
"""
import csv
import importlib.util
import math
from pathlib import Path

import numpy as np
import pytest

from eosfill.model import alpha as al
from eosfill.model.components import get_component

ROOT = Path(__file__).resolve().parents[1]
TABLE = ROOT / "data" / "fluids" / "pr_twu_fitted.csv"
SCRIPT = ROOT / "data" / "tools" / "fit_alpha_translation.py"
GASES = ("hydrogen", "helium", "nitrogen", "argon", "oxygen", "air", "methane")
TARGETS = {"density": 1.0, "fill_end_T": 1.0, "sat_liquid_density": 2.0, "vapour_pressure": 1.0}  # issue 11

with open(TABLE, newline="", encoding="utf-8") as fh:
    ROWS = list(csv.DictReader(fh))
IDS = [r["name"] for r in ROWS]


def _script():
    spec = importlib.util.spec_from_file_location("fit_alpha_translation", SCRIPT)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _LMNc(row):
    return float(row["twu_L"]), float(row["twu_M"]), float(row["twu_N"]), float(row["c_m3_per_mol"])


def _col(q, stat):
    return f"held_out_{q}_{stat}_{'K' if q == 'fill_end_T' else 'pct'}"


def test_table_rows_are_labelled_as_fitted_with_ranges_and_points():
    assert {"hydrogen", "helium", "nitrogen", "argon", "oxygen", "methane", "ethane", "propane",
            "carbon dioxide", "air"} <= set(IDS)
    for row in ROWS:
        get_component(row["name"])   # a bundled fluid
        assert row["model"] == "PR"
        assert row["source"].startswith("fitted by eosfill to ") and "CoolProp" in row["source"]
        assert row["T_range_K"] and row["P_range_MPa"] and row["fitted_quantities"]
        assert float(row["valid_T_min_K"]) < float(row["valid_T_max_K"]) and float(row["valid_P_max_MPa"]) > 0
        assert int(row["n_points_fit"]) > 50 and int(row["n_points_held_out"]) >= 20
        assert row["consistent_alpha"] == "yes"
        assert row[_col("density", "rms")]
        if row["name"] not in ("ethane", "propane", "carbon dioxide"):   # those have no gas-phase held-out fill
            assert row[_col("fill_end_T", "rms")]
    by = {r["name"]: r for r in ROWS}
    for name in ("hydrogen", "helium"):   # supercritical at every fill: no cryogenic saturation fitted
        assert by[name]["sat_range_K"] == "" and float(by[name]["valid_T_min_K"]) >= 200.0
        assert "not fitted" in by[name]["note"]
    for name in ("ethane", "propane", "carbon dioxide"):
        assert {"sat_liquid_density", "vapour_pressure"} <= set(by[name]["fitted_quantities"].split())


@pytest.mark.reference
def test_coolprop_air_is_the_pseudo_pure_lemmon_2000_equation():
    """The air row's note: CoolProp 8.0's 'Air' is a pseudo-pure fluid (not a
    mixture model) whose equation is Lemmon, Jacobsen, Penoncello & Friend,
    J. Phys. Chem. Ref. Data 29 (2000) 331-385."""
    CP = pytest.importorskip("CoolProp.CoolProp")
    assert CP.get_fluid_param_string("Air", "pure") == "false"
    assert CP.get_fluid_param_string("Air", "BibTeX-EOS") == "Lemmon-JPCRD-2000"
    row = {r["name"]: r for r in ROWS}["air"]
    assert "Lemmon-JPCRD-2000" in row["source"] and "pseudo-pure" in row["note"]


@pytest.mark.parametrize("row", ROWS, ids=IDS)
def test_fitted_alpha_is_consistent(row):
    """Le Guennec et al. (2016) conditions on 1e-3 <= Tr <= 40 (points where α
    underflows double precision skipped), and α → 0 as T → ∞."""
    L, M, N, _ = _LMNc(row)
    comp = get_component(row["name"])
    p = al.TWU91_FITTED.parameters([comp.Tc], [comp.Pc], [comp.omega], coefficients=[[L, M, N]])
    Tr = np.geomspace(1e-3, 40.0, 500)
    a, da, d2a = al.alpha_values(al.TWU91, Tr * comp.Tc, [comp.Tc], p)
    ok = a > 1e-280
    assert np.all(a >= 0.0) and np.all(da[ok] < 0.0) and np.all(d2a[ok] > 0.0)
    assert al.twu91_alpha(1e4 * comp.Tc, comp.Tc, L, M, N)[0] < 1e-6


@pytest.fixture(scope="module")
def fit():
    pytest.importorskip("CoolProp")
    return _script()


@pytest.mark.reference
@pytest.mark.parametrize("row", ROWS, ids=IDS)
def test_recorded_held_out_figures_are_reproduced_against_coolprop(row, fit):
    """Held-out figures recomputed against CoolProp 8.0 on the accuracy table's
    states agree with the row, and ``targets_missed`` lists exactly the misses."""
    setup = fit.SETUP[row["name"]]
    L, M, N, c = _LMNc(row)
    model = fit.PureTwuPR.of(row["name"])
    ref = fit.held_out_reference(setup)
    devs = fit.deviations(model, get_component(row["name"]).M, ref, fit.Parameters(al.TWU91, (L, M, N), c))
    got = fit.figures(devs, setup.quantities)
    # every quantity measured is fitted (ethane, propane, CO2: no held-out fill is a gas-phase state)
    assert set(got) <= set(row["fitted_quantities"].split()) and {"density"} <= set(got)
    assert sum(v[2] for v in got.values()) == int(row["n_points_held_out"])
    missed = set() if row["targets_missed"] == "none" else {m.split()[0] for m in row["targets_missed"].split("; ")}
    for q in fit.QUANTITIES:
        if q not in got:
            assert row[_col(q, "worst")] == "" and row[_col(q, "rms")] == ""
            continue
        worst, rms, _ = got[q]
        assert math.isfinite(worst), q          # every model solve converged
        assert abs(worst - float(row[_col(q, "worst")])) <= 2e-3, (q, worst, row[_col(q, "worst")])
        assert abs(rms - float(row[_col(q, "rms")])) <= 2e-3, (q, rms, row[_col(q, "rms")])
        assert (abs(worst) > TARGETS[q]) == (q in missed), (q, worst, missed)
    assert missed <= set(got)
    if row["name"] in GASES:
        # the fitted row beats the generalised tc-PR and plain PR at the gas-region targets
        for other in (fit.generalised_parameters(row["name"]), fit.plain_pr_parameters(row["name"])):
            theirs = fit.figures(fit.deviations(model, get_component(row["name"]).M, ref, other), setup.quantities)
            for q in ("density", "fill_end_T"):
                assert abs(got[q][0]) < abs(theirs[q][0]) and got[q][1] < theirs[q][1], (q, got[q], theirs[q])


@pytest.mark.reference
@pytest.mark.parametrize("row", ROWS, ids=IDS)
def test_thermo_with_the_row_parameters_meets_the_recorded_density_worst(row, fit):
    """thermo 0.6.1 PRTranslatedTwu (row's L, M, N, c; our Tc, Pc, ω) vs CoolProp 8.0
    at held-out states (the accuracy table's grid, supercritical states only)."""
    CP = pytest.importorskip("CoolProp.CoolProp")
    from thermo.eos import PRTranslatedTwu

    setup = fit.SETUP[row["name"]]
    comp = get_component(row["name"])
    L, M, N, c = _LMNc(row)
    limit = abs(float(row[_col("density", "worst")])) + 1e-3
    checked = 0
    for T in fit.ACC.GRID_T[::2]:
        for P in fit.ACC.GRID_P[1::3]:
            if T < comp.Tc or not fit._gas_state(T, P, setup.cp_name):
                continue  # states above Tc (no root to choose by phase) inside the reference's range
            rho_ref = CP.PropsSI("Dmass", "T", T, "P", P, setup.cp_name)
            eos = PRTranslatedTwu(Tc=comp.Tc, Pc=comp.Pc, omega=comp.omega, alpha_coeffs=(L, M, N), c=c,
                                  T=T, P=P)
            if eos.phase == "l/g":
                V = eos.V_l if eos.G_dep_l < eos.G_dep_g else eos.V_g
            else:
                V = eos.V_l if eos.phase == "l" else eos.V_g
            assert abs(100.0 * (comp.M / V / rho_ref - 1.0)) <= limit, (T, P)
            checked += 1
    assert checked >= 3 or comp.Tc > 320.0
