"""The registry of named models and where their descriptions and accuracy appear.

Consistency and bad-input checks (the models' numbers are checked against
thermo in tests/test_translated_reference.py and test_cubic_reference.py,
their accuracy against CoolProp in tests/test_accuracy_envelope.py).
"""
from __future__ import annotations

import pytest

import eosfill
from eosfill.model.models import MODELS, get_model


def test_scenario_files_accept_every_registered_model():
    from eosfill.io import scenario

    assert tuple(scenario.MODELS) == tuple(MODELS)


@pytest.mark.parametrize("name", list(MODELS))
def test_model_name_rebuilds_the_same_model(name):
    f = eosfill.Fluid({"methane": 0.8, "nitrogen": 0.2}, model=name.swapcase())
    g = eosfill.Fluid({"methane": 0.8, "nitrogen": 0.2}, model=f.model.name)
    assert f.model is g.model is get_model(name)
    assert (f.params.alpha_params == g.params.alpha_params).all() and (f.volume_shift == g.volume_shift).all()
    assert f.model_description()[0].startswith(f"model {name}:")


def test_accuracy_lines_for_the_gas_in_hand():
    from eosfill.io.accuracy import accuracy_lines

    lines = accuracy_lines(eosfill.Fluid("hydrogen", model="PR-fitted"))
    assert any(ln.startswith("density") for ln in lines) and any("fill end temperature" in ln for ln in lines)
    other = accuracy_lines(eosfill.Fluid({"methane": 0.5, "ethane": 0.5}, model="PR"))
    assert "not measured for this mixture" in other[0]


@pytest.mark.parametrize("model", ["tc-PR", "PR-fitted"])
def test_trace_shows_the_alpha_the_model_uses(model):
    # thermo 0.6.1 PRTranslatedConsistent / PRTranslatedTwu with the same constants: alpha = a_alpha / a
    thermo = pytest.importorskip("thermo")
    from eosfill.io.trace import trace_state, trace_value

    f = eosfill.Fluid("nitrogen", model=model)
    T, P = 300.0, 1e6
    lines = trace_state(f, T, P)
    L, M, N = f.params.alpha_params[0]
    kw = dict(Tc=float(f.Tc[0]), Pc=float(f.Pc[0]), omega=float(f.omega[0]), T=T, P=P)
    eos = (thermo.PRTranslatedConsistent(**kw) if model == "tc-PR"
           else thermo.PRTranslatedTwu(alpha_coeffs=(L, M, N), c=float(f.volume_shift[0]), **kw))
    assert trace_value(lines, "alpha[nitrogen]") == pytest.approx(eos.a_alpha / eos.a, rel=1e-10)
    assert trace_value(lines, "rho_mass") == pytest.approx(f.state(T=T, P=P).rho_mass, rel=1e-10)
    assert any(ln.key.startswith("model_part") and model in str(ln.value) for ln in lines)


def test_fluids_command_prints_every_model(capsys):
    from eosfill.io.cli import main

    assert main(["fluids"]) == 0
    out = capsys.readouterr().out
    for name in MODELS:
        assert f"model {name}:" in out


def test_fitted_parameters_warn_outside_their_recorded_range():
    # data/fluids/pr_twu_fitted.csv: hydrogen valid_T_min_K 200, valid_P_max_MPa 100
    import warnings

    f = eosfill.Fluid({"hydrogen": 0.5, "ethanol": 0.5}, model="PR-fitted")
    with pytest.warns(eosfill.RangeWarning, match="hydrogen were fitted for 200-400 K"):
        f.single_phase(150.0, 1e6)
    with pytest.warns(eosfill.RangeWarning, match="up to 100 MPa"):
        eosfill.Fluid("hydrogen", model="PR-fitted").state(T=300.0, P=120e6)
    with warnings.catch_warnings():
        warnings.simplefilter("error", eosfill.RangeWarning)
        eosfill.Fluid("hydrogen", model="PR-fitted").state(T=300.0, P=70e6)
