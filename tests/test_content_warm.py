"""The vessel content's warm-started two-phase (u, v) solve
(:mod:`eosfill.transient.content_split`).

Consistency checks (common practice, no source): along a path of two-phase
contents the warm-started state equals the cold solve ``Fluid.state(u=, v=)`` to
1e-9 and meets its specification when recomputed by the TP equilibrium solver
``Fluid.state(T=, P=)``; a warm start that cannot serve (the content left the
dome, a start far away, a split that fails its stability check) falls back to the
cold solve and gives its answer.
"""
import numpy as np
import pytest

import eosfill
from eosfill.transient import content_split
from eosfill.transient.content import _Content

V = 0.05  # m3, the vessel of the path below (demo value)


@pytest.fixture(scope="module")
def gas():
    return eosfill.Fluid({"nitrogen": 0.2, "methane": 0.8}, model="PR")


def _path(gas, n=8):
    """(N, U) of contents inside the dome: a vent-like path of falling T and P
    (150 K / 2 MPa to 141 K / 1.15 MPa, vapour fractions 0.2-0.5; demo values)."""
    out = []
    for T, P in zip(np.linspace(150.0, 141.0, n), np.geomspace(2.0e6, 1.15e6, n)):
        st = gas.state(T=T, P=P)
        assert st.phase == "two-phase"
        nmol = V / float(st.v)
        out.append((nmol * gas.mole_fractions, nmol * float(st.u)))
    return out


def _cold(gas, N, U):
    n = float(N.sum())
    return gas.state(u=U / n, v=V / n)


def test_warm_two_phase_equals_cold_solve_along_a_path(gas):
    c = _Content(gas, V, gas.mole_fractions)
    c.T_last = 150.0
    for N, U in _path(gas):
        g = c.state(N, U)
        ref = _cold(gas, N, U)
        assert ref.phase == "two-phase" and g["phase"] == "two-phase" and not g["single"]
        assert g["T"] == pytest.approx(float(ref.T), rel=1e-9)
        assert g["P"] == pytest.approx(float(ref.P), rel=1e-9)
        assert g["beta"] == pytest.approx(float(ref.vapor_fraction), abs=1e-9)
        assert g["s"] == pytest.approx(float(ref.s), abs=1e-9 * abs(float(ref.s)))
        # the specification met, recomputed by the TP equilibrium solver
        tp = gas.state(T=g["T"], P=g["P"])
        assert float(tp.u) == pytest.approx(g["u"], rel=1e-9, abs=1e-6)
        assert float(tp.v) == pytest.approx(g["v"], rel=1e-9)
    # the path after the first (cold) state was served by the warm start
    assert c.split.accepted >= 6


def test_warm_start_left_behind_when_content_leaves_the_dome(gas):
    c = _Content(gas, V, gas.mole_fractions)
    c.T_last = 150.0
    N, U = _path(gas, 2)[0]
    assert c.state(N, U)["phase"] == "two-phase" and c.split.last is not None
    # the same amount with far more energy: single-phase gas (state of the model at 250 K)
    n = float(N.sum())
    up = gas.state(T=250.0, v=V / n)
    assert up.phase in ("gas", "supercritical")
    g = c.state(N, n * float(up.u))
    assert g["single"] and g["T"] == pytest.approx(250.0, rel=1e-9)
    assert c.split.last is None   # the warm start is dropped once the content is single phase


def test_warm_start_far_away_falls_back_to_cold(gas):
    c = _Content(gas, V, gas.mole_fractions)
    c.T_last = 150.0
    first, *_ , last = _path(gas, 8)
    c.state(*first)
    accepted = c.split.accepted
    # a two-phase content far from the remembered one (160 K / 3 MPa)
    st = gas.state(T=160.0, P=3.0e6)
    assert st.phase == "two-phase"
    n = V / float(st.v)
    N, U = n * gas.mole_fractions, n * float(st.u)
    g = c.state(N, U)
    assert c.split.accepted == accepted          # not served by the warm start ...
    ref = _cold(gas, N, U)
    assert g["T"] == pytest.approx(float(ref.T), rel=1e-9)   # ... but by the cold solve
    assert g["P"] == pytest.approx(float(ref.P), rel=1e-9)


def test_split_failing_its_stability_check_falls_back(gas, monkeypatch):
    c = _Content(gas, V, gas.mole_fractions)
    c.T_last = 150.0
    path = _path(gas, 3)
    c.state(*path[0])
    from eosfill.equilibrium import solvers

    real = solvers.stability_test
    seen = []

    def says_unstable(*args, **kw):
        out = list(real(*args, **kw))
        out[0] = np.ones_like(out[0])      # every tested phase reported unstable
        seen.append(1)
        return tuple(out)

    monkeypatch.setattr(solvers, "stability_test", says_unstable)
    w = c.split.solve(gas, path[1][1] / float(path[1][0].sum()), V / float(path[1][0].sum()))
    assert seen and w is None     # the warm result is refused by its check ...
    monkeypatch.setattr(solvers, "stability_test", real)
    g = c.state(*path[1])
    ref = _cold(gas, *path[1])
    assert g["T"] == pytest.approx(float(ref.T), rel=1e-9)   # ... and the content still solved
    assert g["P"] == pytest.approx(float(ref.P), rel=1e-9)


def test_warm_split_needs_a_start_near_its_composition(gas):
    w = content_split.WarmSplit()
    assert w.solve(gas, -5000.0, 1e-4) is None          # nothing remembered yet
    w.remember(np.array([0.5, 0.5]), 150.0, 2e6, np.array([0.8, -0.5]))
    assert w.solve(gas, -5000.0, 1e-4) is None          # remembered for another composition
    w.remember(gas.mole_fractions, 150.0, 2e6, np.zeros(2))
    assert w.last is None                                # a trivial ln K is no warm start


def test_content_on_a_non_stable_root_is_not_taken_single_phase(gas):
    """A (u, v) whose single-phase (T, v) solution is a liquid-like root of the cubic
    where the gas root has the lower Gibbs energy at the same (T, P) (so a state of
    lower Gibbs energy exists, whatever the tangent-plane test of z at the stable
    root says): the content is solved as the equilibrium state, as by the cold solve.
    (166 K, 6.86e-5 m3/mol: P = 2.3 MPa on the liquid-like branch, dP/dv < 0.)"""
    from eosfill.transient.gas import TVKernel

    T, v = 166.056, 6.861838265944145e-05
    k = TVKernel(gas)
    pr = k(T, v + k.c_shift)
    assert pr["dPdv"] < 0.0 and pr["P"] > 0.0
    n = V / v
    c = _Content(gas, V, gas.mole_fractions)
    c.T_last = T
    g = c.state(n * gas.mole_fractions, n * pr["u"])
    ref = gas.state(u=pr["u"], v=v)
    assert ref.phase == "two-phase"
    assert not g["single"] and g["P"] == pytest.approx(float(ref.P), rel=1e-9)
    assert g["T"] == pytest.approx(float(ref.T), rel=1e-9)
