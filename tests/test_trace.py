"""Calculation trace (eosfill.io.trace): its values agree with the State's and
the roots it prints satisfy the cubic (C5).  Consistency checks; the State
itself is checked against outside references in the physics tests."""
import math

import numpy as np
import pytest

import eosfill
from eosfill.model import cubic
from eosfill.constants import R
from eosfill.io.trace import format_trace, trace_state, trace_value

CASES = [
    ({"methane": 0.9, "ethane": 0.06, "nitrogen": 0.04}, "PR", 300.0, 20e6),
    ("nitrogen", "SRK", 300.0, 5e6),
    ("propane", "PR", 250.0, 5e5),            # liquid root of three
    ("propane", "PR", 300.0, 2e5),            # vapour root
    ({"methane": 0.5, "carbon dioxide": 0.5}, "PR78", 280.0, 8e6),
    ("n-decane", "PR78", 400.0, 1e5),         # ω > 0.491: 1978 κ branch
]


@pytest.mark.parametrize("comp, model, T, P", CASES)
def test_trace_matches_state(comp, model, T, P):
    fl = eosfill.Fluid(comp, model=model)
    lines = trace_state(fl, T, P)
    st = fl.single_phase(T, P)
    for key, value in (("h", st.h), ("s", st.s), ("u", st.u), ("Z", st.Z), ("v", st.v),
                       ("h_res", st.h_res), ("s_res", st.s_res)):
        assert math.isclose(trace_value(lines, key), value, rel_tol=1e-10, abs_tol=1e-9), key


@pytest.mark.parametrize("comp, model, T, P", CASES)
def test_roots_satisfy_the_cubic(comp, model, T, P):
    fl = eosfill.Fluid(comp, model=model)
    lines = trace_state(fl, T, P)
    A, B = trace_value(lines, "A"), trace_value(lines, "B")
    c2, c1, c0 = (trace_value(lines, k) for k in ("c2", "c1", "c0"))
    # the printed coefficients are those of (C5) for the printed A, B
    d1, d2 = fl.model.delta1, fl.model.delta2
    assert math.isclose(c2, (d1 + d2 - 1) * B - 1)
    assert math.isclose(c1, A + d1 * d2 * B**2 - (d1 + d2) * B * (B + 1))
    assert math.isclose(c0, -(A * B + d1 * d2 * B**2 * (B + 1)))
    roots = trace_value(lines, "roots")
    assert 1 <= len(roots) <= 3
    for z in roots:
        scale = max(1.0, abs(c2), abs(c1), abs(c0))
        assert abs(z**3 + c2 * z**2 + c1 * z + c0) < 1e-12 * scale
    # Vieta: product of the roots = -c0 when all three are real
    if len(roots) == 3:
        assert math.isclose(np.prod(roots), -c0, rel_tol=1e-9)
    assert trace_value(lines, "Z_eos") in roots


def test_mixing_sum_by_hand():
    fl = eosfill.Fluid({"methane": 0.7, "carbon dioxide": 0.3}, kij={("methane", "carbon dioxide"): 0.1})
    T, P = 300.0, 5e6
    lines = trace_state(fl, T, P)
    a1, a2 = trace_value(lines, "a[methane]"), trace_value(lines, "a[carbon dioxide]")
    # (C4) written out for two components
    a_hand = 0.49 * a1 + 0.09 * a2 + 2 * 0.7 * 0.3 * (1 - 0.1) * math.sqrt(a1 * a2)
    assert math.isclose(trace_value(lines, "a"), a_hand, rel_tol=1e-14)
    assert trace_value(lines, "kij[methane|carbon dioxide]") == 0.1
    b_hand = 0.7 * trace_value(lines, "b[methane]") + 0.3 * trace_value(lines, "b[carbon dioxide]")
    assert math.isclose(trace_value(lines, "b"), b_hand, rel_tol=1e-14)
    assert math.isclose(trace_value(lines, "A"), trace_value(lines, "a") * P / (R * T) ** 2, rel_tol=1e-14)


def test_kappa_formulas_by_hand():
    # Peng & Robinson 1976 Eq. 18 and Soave 1972 Eq. 15, written out
    w = eosfill.Fluid("nitrogen").omega[0]
    pr = trace_state(eosfill.Fluid("nitrogen", model="PR"), 300.0, 1e6)
    srk = trace_state(eosfill.Fluid("nitrogen", model="SRK"), 300.0, 1e6)
    assert math.isclose(trace_value(pr, "kappa[nitrogen]"), 0.37464 + 1.54226 * w - 0.26992 * w**2)
    assert math.isclose(trace_value(srk, "kappa[nitrogen]"), 0.480 + 1.574 * w - 0.176 * w**2)


def test_every_line_names_equation_and_text_is_ordered():
    fl = eosfill.Fluid({"methane": 0.9, "ethane": 0.1})
    lines = trace_state(fl, 288.15, 200e5)
    assert all(ln.equation for ln in lines)
    text = format_trace(lines)
    order = [text.index(s) for s in ("== inputs", "== component methane", "== mixing", "== cubic in Z",
                                     "== departure", "== ideal gas", "== totals")]
    assert order == sorted(order)
    for label in ("(C2)", "(C3)", "(C4)", "(C5)", "(C6)", "(C7)", "(C8)", "Peng & Robinson 1976, Eq. 18"):
        assert label in text
    assert "licensed practice" in text
    assert cubic.ROOT_CHOICE_TEXT[0] in text


# --------------------------------------------------------------------------
# the balance of a fill or vent with its numbers (trace_fill); consistency checks
# --------------------------------------------------------------------------
from pathlib import Path  # noqa: E402

from eosfill.io.trace_fill import trace_fill  # noqa: E402

DEMOS = Path(__file__).resolve().parent.parent / "data" / "scenarios"


def _demo(name):
    import warnings

    from eosfill.io import jobs
    from eosfill.io.scenario import load_scenario

    sc = load_scenario(DEMOS / f"{name}.toml")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = jobs.run_scenario(sc, write=False)
    v = jobs._vessel_of(sc)
    return sc, res, v, trace_fill(sc.fluid(), res, v.wall_heat_capacity, v.wall_temperature)


BALANCE_DEMOS = ["cylinder_fill_residual", "blend_fill_h2_ch4", "liquefied_co2_fill", "ngv_cascade_3bank",
                 "vent_blowdown_endstate"]


@pytest.fixture(scope="module", params=BALANCE_DEMOS)
def demo_trace(request):
    return _demo(request.param)


def test_balance_numbers_close_by_hand(demo_trace):
    sc, res, vessel, lines = demo_trace
    tv = lambda k: trace_value(lines, k)  # noqa: E731
    nf, n0 = tv("nf"), tv("n0")
    # each printed product is the product of the printed factors
    assert math.isclose(tv("nf_uf"), nf * tv("u[final]"), rel_tol=1e-14)
    if res.initial is not None:
        assert math.isclose(tv("n0_u0"), n0 * tv("u[initial]"), rel_tol=1e-14)
    Cw = tv("Cw")
    if Cw > 0:
        T_w0 = tv("Tw0") if res.kind != "vent" else tv("T0")
        assert math.isclose(tv("wall"), Cw * (tv("Tf") - T_w0), rel_tol=1e-14)
    if res.kind in ("fill", "liquefied_fill"):
        assert math.isclose(tv("H_in"), (nf - n0) * tv("h_in"), rel_tol=1e-14)
    # (V2): the substituted numbers satisfy the balance to 1e-9 of n_f R T_f
    lhs = tv("nf_uf") - tv("n0_u0") + tv("wall")
    rhs = (-tv("H_out")) if res.kind == "vent" else tv("H_in") + tv("Q")
    assert abs(lhs - rhs) / (nf * R * tv("Tf")) < 1e-9
    # (V3)
    assert math.isclose(tv("vf"), sc.vessel.volume / nf, rel_tol=1e-15)
    # composition (V1) sums to one
    zsum = sum(ln.value for ln in lines if ln.key.startswith("zf["))
    assert math.isclose(zsum, 1.0, rel_tol=1e-12)


def test_trace_final_state_equals_result(demo_trace):
    sc, res, vessel, lines = demo_trace
    tv = lambda k: trace_value(lines, k)  # noqa: E731
    assert tv("Tf") == res.final.T and tv("Pf") == res.final.P and tv("nf") == res.final.n
    assert math.isclose(tv("mf"), res.final.mass, rel_tol=1e-12)
    for name, x in res.final.composition.items():
        assert math.isclose(tv(f"zf[{name}]"), x, rel_tol=1e-10, abs_tol=1e-14)
    if res.final.phase != "two-phase":
        # the end state's own trace: its v is V/n_f and its u that of the balance
        assert math.isclose(tv("final.v"), sc.vessel.volume / res.final.n, rel_tol=1e-9)
        assert tv("final.u") == tv("u[final]")
        assert tv("final.T") == res.final.T
    else:
        assert tv("beta[final]") == pytest.approx(res.final.vapor_fraction, rel=1e-9)


def test_fill_trace_text_names_the_equations():
    sc, res, vessel, lines = _demo("cylinder_fill_residual")
    text = format_trace(lines)
    for label in ("(V1)", "(V2)", "(V3)", "== final state: cubic in Z", "(C7)", "licensed practice"):
        assert label in text


def test_cli_explain_scenario():
    import subprocess
    import sys

    r = subprocess.run([sys.executable, "-m", "eosfill", "explain", "--scenario",
                        str(DEMOS / "cylinder_fill_residual.toml")], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert "n_f u_f - n_0 u_0 + C_w (T_f - T_w0)   (V2)" in r.stdout
    r = subprocess.run([sys.executable, "-m", "eosfill", "explain", "--fluid", "nitrogen", "--T", "15 degC"],
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == 2 and "--P" in r.stderr
