"""Solid boundaries (eosfill.equilibrium.solid): triple points, melting and
sublimation curves against published and outside values, and the solid /
freeze-out screening of pure fluids and mixtures.

Kinds of check, each with its source beside it:
* published values: IAPWS R14-08(2011) verification values, Span & Wagner
  1996's triple point and normal sublimation temperature;
* outside data and libraries: chemicals 1.5.2's triple-point tables
  (Staveley et al. 1981, NIST WebBook), CoolProp 8.0.0's melting lines,
  the NIST WebBook Antoine fit to Giauque & Egan's CO2 data, Fray & Schmitt
  2009, chemicals' IAPWS-11 sublimation pressure, handbook enthalpies of
  fusion through the Clapeyron equation;
* consistency: continuity at the triple point, monotonic curves (hypothesis).
"""
from __future__ import annotations

import csv
import math
import re
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hs

import eosfill
from eosfill.equilibrium import solid as S
from eosfill.errors import InputError, RangeWarning
from eosfill.model.components import data_dir

R = 8.314462618


# --------------------------------------------------------------------------
# the data file
# --------------------------------------------------------------------------
def _rows(name):
    with open(data_dir() / "fluids" / name, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def test_every_bundled_fluid_has_a_triple_point_row_with_a_cited_source():
    fluids = [r["name"] for r in _rows("fluids.csv")]
    tps = _rows("triple_points.csv")
    assert sorted(r["name"] for r in tps) == sorted(fluids)  # one row per bundled fluid, no other
    sources = (data_dir() / "SOURCES.md").read_text(encoding="utf-8")
    keys = set(re.findall(r"^\| (\S+) \|", sources, flags=re.M))
    for r in tps:
        assert r["source"] in keys, f"{r['name']}: source key {r['source']} not in SOURCES.md"
        if r["T_triple_K"]:
            assert 0.0 < float(r["T_triple_K"]) < 300.0 and float(r["P_triple_Pa"]) > 0.0
        else:
            assert r["name"] == "helium" and r["note"]


def _chemicals_Tt(cas):
    """chemicals 1.5.2's triple points from its tables that are not CoolProp's
    (Staveley et al. 1981, else the NIST WebBook), or None."""
    from chemicals import triple

    for method in ("STAVELEY", "WEBBOOK"):
        if method in triple.Tt_methods(cas):
            return triple.Tt(cas, method=method), method
    return None, None


# entries of chemicals' tables that are not triple points (checked by hand): hydrogen's WEBBOOK
# row reads 0.31 K; ethanol's WEBBOOK row reads 150 K (the reference
# equation gives 159.1 K, the usual freezing point about 159 K, from memory)
TABLE_OUTLIERS = {"hydrogen", "ethanol"}


@pytest.mark.reference
def test_triple_point_temperatures_against_chemicals_tables():
    # chemicals 1.5.2: Staveley et al. 1981 / NIST WebBook tables (independent of CoolProp)
    cas = {r["name"]: r["cas"] for r in _rows("fluids.csv")}
    checked = 0
    for r in _rows("triple_points.csv"):
        if not r["T_triple_K"] or r["name"] == "air":
            continue
        ref, method = _chemicals_Tt(cas[r["name"]])
        if ref is None:
            continue
        if r["name"] in TABLE_OUTLIERS:
            continue
        # 1.5 K: SF6 (Staveley 222.41 K vs Guder & Wagner's 223.555 K) is the widest honest spread
        assert abs(float(r["T_triple_K"]) - ref) < 1.5, (r["name"], r["T_triple_K"], ref, method)
        checked += 1
    assert checked >= 40


@pytest.mark.published
def test_co2_triple_point_is_span_wagner():
    # Span & Wagner 1996, Sec. 3.2.1: T_t = 216.592 K, p_t = 0.51795 MPa
    tp = S.triple_point("CO2")
    assert (tp.T, tp.P, tp.source) == (216.592, 517950.0, "SpanWagner1996")


def test_wheel_ships_the_triple_point_file():
    # pyproject's package-data takes data/fluids/*.csv into the wheel as eosfill/data/fluids
    text = (data_dir().parent / "pyproject.toml").read_text() if (data_dir().parent / "pyproject.toml").exists() else ""
    if text:
        assert '"fluids/*.csv"' in text


# --------------------------------------------------------------------------
# the curves against published and outside values
# --------------------------------------------------------------------------
@pytest.mark.published
@pytest.mark.parametrize("T, ice, p_MPa", [
    (260.0, "Ih", 138.268), (254.0, "III", 268.685), (265.0, "V", 479.640),
    (320.0, "VI", 1356.76), (550.0, "VII", 6308.71),
])
def test_iapws_2011_melting_verification_values(T, ice, p_MPa):
    # IAPWS R14-08(2011), table of values for computer-program verification (from memory;
    # the values agree with the release's equations to the digits printed)
    assert float(S.ice_melting_pressure(T, ice)) / 1e6 == pytest.approx(p_MPa, abs=0.6 * 10 ** (math.floor(math.log10(p_MPa)) - 5))


@pytest.mark.published
def test_iapws_2011_sublimation_verification_value():
    # IAPWS R14-08(2011) verification value: p_subl(230 K) = 8.94735e-6 MPa
    assert float(S.sublimation_pressure("water", 230.0)) == pytest.approx(8.94735, abs=6e-6)


@pytest.mark.reference
@pytest.mark.parametrize("T", [60.0, 150.0, 230.0, 260.0, 273.0])
def test_water_sublimation_against_chemicals_iapws11(T):
    # chemicals 1.5.2, chemicals.iapws.iapws11_Psub (its own transcription of IAPWS R14-08(2011))
    from chemicals.iapws import iapws11_Psub

    assert float(S.sublimation_pressure("water", T)) == pytest.approx(iapws11_Psub(T), rel=1e-8)


@pytest.mark.published
def test_co2_normal_sublimation_temperature():
    # Span & Wagner 1996: normal sublimation temperature 194.686 K at 0.101325 MPa
    # (from memory; also the value pychemqt's CO2 file carries as Tb)
    assert float(S.sublimation_pressure("CO2", 194.686)) == pytest.approx(101325.0, rel=2e-4)


@pytest.mark.published
@pytest.mark.parametrize("T", [154.0, 160.0, 175.0, 190.0, 196.0])
def test_co2_sublimation_against_giauque_egan(T):
    # NIST WebBook Antoine fit to Giauque & Egan 1937 (154-196 K): log10(p/bar) = 6.81228 - 1301.679/(T - 3.494)
    ref = 10 ** (6.81228 - 1301.679 / (T - 3.494)) * 1e5
    assert float(S.co2_sublimation_pressure(T)) == pytest.approx(ref, rel=0.01)


@pytest.mark.published
@pytest.mark.parametrize("T", [140.0, 160.0, 180.0, 194.0])
def test_co2_sublimation_against_fray_schmitt(T):
    # Fray & Schmitt 2009 CO2 fit (40-194.7 K), ln(p/bar) = sum A_i T^-i
    A = [1.476e1, -2.571e3, -7.781e4, 4.325e6, -1.207e8, 1.350e9]
    ref = math.exp(sum(a * T ** -i for i, a in enumerate(A))) * 1e5
    assert float(S.co2_sublimation_pressure(T)) == pytest.approx(ref, rel=0.02)


@pytest.mark.reference
@pytest.mark.parametrize("fluid, cp_name, temps, rel", [
    ("carbon dioxide", "CarbonDioxide", [220.0, 250.0, 300.0], 1e-9),   # same equation (S&W 3.10)
    ("nitrogen", "Nitrogen", [70.0, 100.0, 200.0], 1e-9),               # same equation (Span 2000)
    ("argon", "Argon", [90.0, 150.0, 250.0], 1e-9),                     # same equation (Tegeler 1999)
    ("ethane", "Ethane", [95.0, 120.0, 180.0], 1e-9),                   # same equation (Buecker & Wagner 2006)
    ("methane", "Methane", [100.0, 150.0, 300.0], 0.015),               # CoolProp: Abramson 2011 Simon form
    ("water", "Water", [252.0, 255.0, 260.0, 265.0, 270.0, 273.2], 1e-9),  # IAPWS ice Ih, III, V
])
def test_melting_pressure_against_coolprop_melting_line(fluid, cp_name, temps, rel):
    # CoolProp 8.0.0 AbstractState.melting_line(iP, iT, T) (test-only reference).  Water's ice VI
    # is left out: CoolProp's file carries p* = 623.4 MPa where IAPWS prints 632.400 MPa
    # (the verification value at 320 K above confirms 632.400).
    import CoolProp

    AS = CoolProp.AbstractState("HEOS", cp_name)
    for T in temps:
        assert float(S.melting_pressure(fluid, T)) == pytest.approx(AS.melting_line(CoolProp.iP, CoolProp.iT, T), rel=rel)


@pytest.mark.published
@pytest.mark.parametrize("fluid, cp_name, dh_fus", [
    ("nitrogen", "Nitrogen", 720.0), ("argon", "Argon", 1180.0), ("methane", "Methane", 940.0),
    ("carbon dioxide", "CarbonDioxide", 9000.0), ("water", "Water", 6010.0),
])
def test_sublimation_slope_gives_the_enthalpy_of_fusion(fluid, cp_name, dh_fus):
    # Clapeyron at the triple point (ideal vapour, condensed volumes neglected):
    # Δh_fus = R T_t² [d ln p_sub/dT - d ln p_sat/dT]; Δh_fus from handbooks (from memory, CRC-fusion);
    # the liquid's vapour-pressure slope from the reference equation (CoolProp 8.0.0).  10 %.
    import CoolProp.CoolProp as CP

    Tt = S.triple_point(fluid).T
    h = 1e-3
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RangeWarning)
        ds = (np.log(S.sublimation_pressure(fluid, Tt - h)) - np.log(S.sublimation_pressure(fluid, Tt - 2 * h))) / h
    dl = (math.log(CP.PropsSI("P", "T", Tt + 2 * h, "Q", 0, cp_name)) - math.log(CP.PropsSI("P", "T", Tt + h, "Q", 0, cp_name))) / h
    assert R * Tt ** 2 * (float(ds) - dl) == pytest.approx(dh_fus, rel=0.10)


@pytest.mark.parametrize("fluid", ["carbon dioxide", "water", "nitrogen", "argon", "methane"])
def test_sublimation_curve_meets_the_triple_point(fluid):
    tp = S.triple_point(fluid)
    assert float(S.sublimation_pressure(fluid, tp.T)) == pytest.approx(tp.P, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(fluid=hs.sampled_from(["carbon dioxide", "nitrogen", "argon", "methane", "ethane"]),
       a=hs.floats(0.0, 1.0), b=hs.floats(0.0, 1.0))
def test_melting_pressure_rises_with_temperature(fluid, a, b):
    c = S.MELTING[fluid]
    lo, hi = sorted((a, b))
    T1, T2 = c.T_min + lo * (c.T_max - c.T_min), c.T_min + hi * (c.T_max - c.T_min)
    p1, p2 = float(S.melting_pressure(fluid, T1)), float(S.melting_pressure(fluid, T2))
    assert p1 >= S.triple_point(fluid).P * (1 - 1e-12) and p2 >= p1


@settings(max_examples=80, deadline=None)
@given(fluid=hs.sampled_from(["carbon dioxide", "nitrogen", "argon", "methane", "ethane", "propane"]),
       T=hs.floats(40.0, 400.0), P1=hs.floats(1.0, 1e9), P2=hs.floats(1.0, 1e9))
def test_pure_flag_never_clears_when_pressure_rises(fluid, T, P1, P2):
    # away from water's anomaly, compressing a pure fluid at fixed T never leaves the solid region
    lo, hi = sorted((P1, P2))
    assert bool(S.solid_risk(fluid, T, hi)) >= bool(S.solid_risk(fluid, T, lo))


@settings(max_examples=150, deadline=None)
@given(fluid=hs.sampled_from(sorted(r["name"] for r in _rows("fluids.csv"))),
       T=hs.floats(1.0, 3000.0), P=hs.floats(1.0, 1e10))
def test_every_fluid_screens_any_state_and_names_itself(fluid, T, P):
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no warning leaks out of the screening
        r = S.solid_risk(fluid, T, P)
    assert isinstance(r.flag, bool)
    assert len(r.messages) == int(r.flag)
    if r.flag:
        assert r.messages[0].startswith(fluid) and f"{T:.6g} K" in r.messages[0]
        assert r.label.startswith("solid region (")
    else:
        assert r.label == ""


def test_curves_refuse_bad_input_and_warn_outside_range():
    with pytest.raises(InputError, match="T"):
        S.sublimation_pressure("CO2", 250.0)          # above the triple point
    with pytest.raises(InputError, match="fluid"):
        S.sublimation_pressure("propane", 80.0)       # no curve bundled
    with pytest.raises(InputError, match="T"):
        S.melting_pressure("CO2", 200.0)
    with pytest.warns(RangeWarning, match="carbon dioxide"):
        S.sublimation_pressure("CO2", 120.0)


# --------------------------------------------------------------------------
# the screening
# --------------------------------------------------------------------------
def test_pure_solid_regions():
    # CO2 (Span & Wagner 1996): dry ice at -85 °C / 1.2 bar (above p_sub = 0.058 MPa) and at
    # -70 °C / 10 bar; vapour at -85 °C / 0.5 bar; liquid at 230 K / 10 bar; solid above the
    # melting curve at 220 K / 30 MPa (p_m = 16.7 MPa)
    r = S.solid_risk("carbon dioxide", [188.15, 203.15, 188.15, 230.0, 220.0], [1.2e5, 10e5, 0.5e5, 10e5, 30e6])
    assert r.flag.tolist() == [True, True, False, False, True]
    assert "carbon dioxide" in r.messages[0] and "188.15 K" in r.messages[0] and "-85.00 °C" in r.messages[0]
    assert "melting" in r.messages[-1]
    # water: ice Ih between the sublimation and the ice-Ih melting curve; liquid above it at
    # 260 K (p_m,Ih = 138.268 MPa, IAPWS); ice V above 479.64 MPa at 265 K
    w = S.solid_risk("water", [260.0, 260.0, 265.0, 265.0, 300.0], [1e5, 150e6, 300e6, 500e6, 1e5])
    assert w.flag.tolist() == [True, False, False, True, False]
    # a fluid without curves: flagged below its triple point (propane T_t = 85.525 K) only
    p = S.solid_risk("propane", [80.0, 90.0], [1e5, 1e5])
    assert p.flag.tolist() == [True, False] and "no sublimation curve" in p.messages[0]
    # helium-4 has no triple point: nothing flagged
    assert not S.solid_risk("helium", 2.0, 1e5)


def test_state_solid_risk_pure_and_labels():
    co2 = eosfill.Fluid("carbon dioxide")
    st = co2.state(T=203.15, P=10e5)
    assert st.phase == "liquid"          # what the cubic says ...
    assert st.solid_risk.flag is True    # ... and the screening that corrects it
    assert st.solid_risk.label.startswith("solid region")
    warm = co2.state(T=np.array([250.0, 203.15]), P=np.array([10e5, 10e5]))
    assert warm.solid_risk.flag.tolist() == [False, True]
    assert warm.solid_risk.messages[0].startswith("row 1:")


NG = {"methane": 0.90, "ethane": 0.05, "nitrogen": 0.03}


@pytest.mark.published
def test_natural_gas_co2_freeze_out_screening():
    # natural gas with 2 % CO2 at 150 K, 5 MPa: the CO2 fugacity (PR) exceeds Span & Wagner's
    # sublimation pressure p_sub(150 K) = 843 Pa -> flagged, naming CO2
    g = eosfill.Fluid({**NG, "carbon dioxide": 0.02}, model="PR")
    st = g.state(T=150.0, P=5e6)
    p_sub = float(S.co2_sublimation_pressure(150.0))
    assert p_sub == pytest.approx(842.6, rel=1e-3)
    f_co2 = float(st.fugacity[..., 3]) if st.phase != "two-phase" else float(st.vapour.fugacity[..., 3])
    assert f_co2 > p_sub
    assert st.solid_risk.flag is True
    assert any("carbon dioxide freeze-out" in m and "150 K" in m for m in st.solid_risk.messages)
    assert "screening check" in st.solid_risk.messages[0]
    # 0.01 % CO2 at 190 K, 5 MPa: fugacity ~ 90 Pa (ideal partial pressure 500 Pa) against
    # p_sub(190 K) = 68.3 kPa -> not flagged
    lean = eosfill.Fluid({"methane": 0.9199, "ethane": 0.05, "nitrogen": 0.03, "carbon dioxide": 0.0001}, model="PR")
    st2 = lean.state(T=190.0, P=5e6)
    assert float(S.co2_sublimation_pressure(190.0)) == pytest.approx(68.34e3, rel=1e-3)
    assert 0.0001 * 5e6 < float(S.co2_sublimation_pressure(190.0))
    assert st2.solid_risk.flag is False


def test_wet_gas_below_0_degC_flags_ice():
    # methane with 0.1 % water at 250 K, 5 MPa: the cubic drops out liquid water, whose PR vapour
    # pressure at 250 K (69.9 Pa) is below ice's sublimation pressure (IAPWS R14-08(2011): 76.01 Pa);
    # the solid is the stable phase below 273.16 K, so the water phase is flagged as ice
    from eosfill.equilibrium import saturation_pressure
    from eosfill.model.mixture import Mixture

    p_sat_PR = float(saturation_pressure(np.array([250.0]), Mixture("water", model="PR").params)["P"][0])
    p_sub = float(S.sublimation_pressure("water", 250.0))
    assert p_sub == pytest.approx(76.0127, rel=1e-5)  # IAPWS-11 value, as chemicals 1.5.2 prints it
    assert p_sat_PR < p_sub
    wet = eosfill.Fluid({"methane": 0.999, "water": 0.001}, model="PR").state(T=250.0, P=5e6)
    assert wet.phase == "two-phase" and wet.solid_risk.flag is True
    assert "water freeze-out" in wet.solid_risk.messages[0]
    # 10 ppm water: water fugacity about 20 Pa, below both thresholds -> no ice
    dry = eosfill.Fluid({"methane": 0.99999, "water": 0.00001}, model="PR").state(T=250.0, P=5e6)
    assert dry.solid_risk.flag is False


def test_mixture_screening_needs_fugacities():
    with pytest.raises(InputError, match="fugacity"):
        S.solid_risk(["methane", "carbon dioxide"], 150.0, 5e6)
    # ideal-gas partial pressures: 1 % CO2 at 1 bar and 180 K (y P = 1 kPa < p_sub = 20 kPa): no flag;
    # 50 % at 1 bar (50 kPa > 20 kPa): flag
    r = S.solid_risk(["methane", "carbon dioxide"], [180.0, 180.0], 1e5, fugacity=[[0.99e5, 1e3], [0.5e5, 0.5e5]])
    assert r.flag.tolist() == [False, True]
