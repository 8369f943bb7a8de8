"""The developer-run fit of Twu α and a constant translation (data/tools/fit_alpha_translation.py).

Outside check: CoolProp 8.0's reference equation for nitrogen (Span et al.,
J. Phys. Chem. Ref. Data 29 (2000) 1361-1433; citation from memory) on
held-out states that the fit never saw (those of benchmarks/accuracy_table.py).
The fitted PR (Twu α + constant c) must beat the generalised tc-PR of Le
Guennec et al. (2016) and plain PR on held-out densities and fill end
temperatures and meet the figures measured when the script was written, with
margin.  Its α must satisfy the consistency conditions of Le Guennec et al.
(FPE 427, 2016).  The script's own measurement of the model equals the
accuracy table's measurement through eosfill.Fluid (plain PR, nitrogen).
"""
import importlib.util
from pathlib import Path

import pytest

pytest.importorskip("CoolProp")
pytest.importorskip("scipy")

SCRIPT = Path(__file__).resolve().parents[1] / "data" / "tools" / "fit_alpha_translation.py"


def _load():
    spec = importlib.util.spec_from_file_location("fit_alpha_translation", SCRIPT)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


@pytest.mark.reference
@pytest.mark.slow
def test_nitrogen_fit_beats_generalised_tc_pr_on_held_out_states():
    """Fit nitrogen afresh; on the accuracy table's held-out states (CoolProp 8.0,
    Span et al. 2000) it must beat tc-PR and plain PR and come close to the
    issue's targets (figures measured when the script was written: density worst
    -1.15 %, fill end T worst +1.03 K, vapour pressure worst
    +0.89 %)."""
    fit = _load()
    r = fit.fit_fluid("nitrogen")
    f, g, p = r["fitted"], r["generalised"], r["plain"]
    assert r["consistent"]
    assert abs(f["density"][0]) < 1.3 and f["density"][1] < 0.7          # % vs the reference equation
    assert abs(f["fill_end_T"][0]) < 1.3                                   # K
    assert abs(f["vapour_pressure"][0]) < 1.1                              # %
    for q in ("density", "fill_end_T"):
        assert abs(f[q][0]) < 0.3 * min(abs(g[q][0]), abs(p[q][0])), q
    assert r["n_out"] >= 50


@pytest.mark.reference
def test_script_measures_plain_pr_as_the_accuracy_table_does():
    """The script's held-out figures (its own pure-fluid model on eosfill's
    equations) for plain PR equal those benchmarks/accuracy_table.py measures
    through eosfill.Fluid(model="PR") on the same states (nitrogen: density,
    fill end temperature, vapour pressure), to 1e-8."""
    import warnings

    import numpy as np

    fit = _load()
    acc = fit._accuracy_table()           # a private copy: its lists are narrowed below
    acc.GASES = [g for g in acc.GASES if g[0] == "nitrogen"]
    acc.SATURATION = [g for g in acc.SATURATION if g[0] == "nitrogen"]
    setup = fit.SETUP["nitrogen"]
    comp = fit.get_component("nitrogen")
    devs = fit.deviations(fit.PureTwuPR.of("nitrogen"), comp.M, fit.held_out_reference(setup),
                          fit.plain_pr_parameters("nitrogen"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        bench = {"density": acc.density_deviations("PR")["nitrogen"],
                 "fill_end_T": acc.fill_end_T_deviations("PR")["nitrogen"],
                 "vapour_pressure": acc.vapour_pressure_deviations("PR")["nitrogen"]}
    for q, b in bench.items():
        assert len(b) == devs[q].size and len(b) > 5, q
        assert np.max(np.abs(np.asarray(b) - devs[q])) < 1e-8, q


def test_convexity_condition_matches_the_kernel():
    """The sufficient convexity condition used as a fit constraint agrees with
    the compiled α kernel's d²α/dT² (self-consistency)."""
    import numpy as np

    from eosfill.model import alpha as al

    fit = _load()
    Tr = np.geomspace(1e-3, 40.0, 300)
    for L, M, N in [(0.3, 0.88, 1.13), (0.04, 0.9996, 1.04), (0.5, 1.0, 0.65), (0.2, 0.5, 3.0)]:
        _, _, d2a = al.alpha_values(al.TWU91, Tr, [1.0], [[L, M, N]])
        if fit.convexity_violation(L, M, N) == 0.0:
            assert np.all(d2a > 0.0), (L, M, N)
    # a set that breaks the condition shows a negative d²α/dT² somewhere
    # (M = 1, N = 2: T² α''/α = u² - u, negative for 0 < u < 1)
    _, _, d2a = al.alpha_values(al.TWU91, Tr, [1.0], [[0.1, 1.0, 2.0]])
    assert fit.convexity_violation(0.1, 1.0, 2.0) > 0.0 and np.any(d2a < 0.0)


@pytest.mark.reference
@pytest.mark.parametrize("name", ["nitrogen", "propane", "carbon dioxide"])
def test_fit_model_matches_thermo_tc_pr(name):
    """The fit's pure-fluid model (eosfill's cubic equations + Twu α + constant c)
    against thermo 0.6.1's PRTranslatedConsistent with the same L, M, N, c:
    density and residual enthalpy to 1e-9, on liquid, vapour and supercritical
    roots, and the vapour pressure and saturated-liquid density to 1e-8."""
    import numpy as np
    from thermo.eos import PRTranslatedConsistent

    from eosfill.model import alpha as al
    from eosfill.model import translation as tr
    from eosfill.model.components import get_component

    fit = _load()
    comp = get_component(name)
    Tc, Pc, omega = comp.Tc, comp.Pc, comp.omega
    L, M, N = al.TC_PR_ALPHA.parameters([Tc], [Pc], [omega])[0]
    c = tr.tc_pr_shift([Tc], [Pc], [omega])[0]
    model = fit.PureTwuPR(Tc, Pc)
    for Tr, P in [(0.7, 5e6), (0.9, 1e5), (1.5, 30e6)]:
        T = Tr * Tc
        eos = PRTranslatedConsistent(Tc=Tc, Pc=Pc, omega=omega, alpha_coeffs=(L, M, N), c=c, T=T, P=P)
        phase = "l" if eos.phase == "l" else "g"
        code = 0 if Tr > 1 else (1 if phase == "l" else 2)
        rho, hR = model.single_phase(np.array([T]), np.array([P]), np.array([code]), L, M, N, c)
        V = eos.V_l if phase == "l" else eos.V_g
        H = eos.H_dep_l if phase == "l" else eos.H_dep_g
        assert abs(rho[0] * V - 1.0) < 1e-9, (Tr, P)
        assert abs(hR[0] / H - 1.0) < 1e-9, (Tr, P)
    T = np.array([0.6 * Tc, 0.85 * Tc])
    eos = PRTranslatedConsistent(Tc=Tc, Pc=Pc, omega=omega, alpha_coeffs=(L, M, N), c=c, T=T[0], P=1e5)
    Psat_ref = np.array([eos.Psat(t) for t in T])
    Psat, rhoL = model.saturation(T, 1.05 * Psat_ref, L, M, N, c)
    assert np.all(np.abs(Psat / Psat_ref - 1.0) < 1e-8)
    VL = [PRTranslatedConsistent(Tc=Tc, Pc=Pc, omega=omega, alpha_coeffs=(L, M, N), c=c, T=t, P=p).V_l
          for t, p in zip(T, Psat_ref)]
    assert np.all(np.abs(rhoL * np.array(VL) - 1.0) < 1e-7)
