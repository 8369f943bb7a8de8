"""The compiled flash and multi-trial stability test against the numpy forms
they replaced (tests/_oracles.py).

Consistency checks (the flashes built on them are checked against thermo in
test_states.py and test_solver_trust.py): the compiled one-state kernels of
eosfill.equilibrium.stability_kernels and eosfill.equilibrium.flash_kernels
run the same steps with the same stopping tests as the vectorised numpy
forms, so they must give the same tm*, stationary points, phase fractions
and compositions, to round-off (1e-10; 1e-8 where Newton's linear solve
differs: numpy's LAPACK there, Gaussian elimination in the kernel).
"""
import numpy as np
import pytest

import eosfill
from _oracles import _flash_warm_oracle, flash_TP_oracle, stability_multi_oracle
from eosfill.equilibrium import flash as flash_mod
from eosfill.equilibrium.flash import flash_TP
from eosfill.equilibrium.multiphase import TM_TOL, stability_multi_batch

LEAN = {"methane": 0.97, "ethane": 0.015, "nitrogen": 0.01, "carbon dioxide": 0.005}
RICH = {"methane": 0.70, "ethane": 0.10, "propane": 0.10, "nitrogen": 0.05, "carbon dioxide": 0.05}
CO2_N2 = {"carbon dioxide": 0.98, "nitrogen": 0.02}
CH4_N2 = {"methane": 0.5, "nitrogen": 0.5}

# (T, P) grids with stable, vapour-liquid, liquid-liquid and three-phase
# states: the lean gas at 82 K / 72 kPa is liquid + liquid and at 86 K /
# 5.3 kPa three-phase (thermo FlashVLN, see test_solver_trust.py)
GRID_T = [80.0, 82.0, 86.0, 100.0, 120.0, 150.0, 220.0, 260.0, 300.0]
GRID_P = [5.3e3, 7.2e4, 1e6, 4e6, 1e7]


def _grid(g):
    T, P = np.meshgrid(GRID_T, GRID_P)
    T, P = T.ravel(), P.ravel()
    return T, P, np.broadcast_to(g.mole_fractions, (T.size, g.nc)).copy()


@pytest.mark.parametrize("comp", [LEAN, RICH, CO2_N2, CH4_N2], ids=["lean", "rich", "co2_n2", "ch4_n2"])
@pytest.mark.parametrize("detect_only", [False, True])
def test_multi_trial_stability_kernel_equals_numpy_form(comp, detect_only):
    g = eosfill.Fluid(comp, model="PR")
    T, P, z = _grid(g)
    for extra in (None, np.stack([0.9 * z + 0.1 / g.nc, z], axis=1)):
        tm, w = stability_multi_batch(T, P, z, g.params, extra=extra, detect_only=detect_only)
        rtm, rw = stability_multi_oracle(T, P, z, g.params, extra=extra, detect_only=detect_only)
        np.testing.assert_allclose(tm, rtm, rtol=0.0, atol=1e-10)
        np.testing.assert_allclose(w, rw, rtol=0.0, atol=1e-10)
        # the grid has stable and unstable rows (the check can fail both ways)
        assert (tm < TM_TOL).any() and (tm >= TM_TOL).any()


def test_multi_trial_stability_finds_liquid_liquid_split():
    """The lean gas at 82 K, 72 kPa splits into two liquids (thermo 0.6.1
    FlashVLN, test_solver_trust.py): the liquid-like feed must test unstable."""
    g = eosfill.Fluid(LEAN, model="PR")
    tm, w = stability_multi_batch(np.array([82.0]), np.array([72e3]), g.mole_fractions[None, :], g.params)
    assert tm[0] < TM_TOL


def test_multi_trial_stability_batch_equals_one_state():
    g = eosfill.Fluid(RICH, model="PR")
    T, P, z = _grid(g)
    tm, w = stability_multi_batch(T, P, z, g.params)   # parallel loop (≥ 16 rows)
    for k in (0, 17, T.size - 1):
        t1, w1 = stability_multi_batch(T[k:k + 1], P[k:k + 1], z[k:k + 1], g.params)
        assert t1[0] == tm[k]
        np.testing.assert_array_equal(w1[0], w[k])


FLASH_CASES = [(LEAN, "PR"), (RICH, "PR"), (RICH, "SRK"), (CO2_N2, "PR"), ({"propane": 0.6, "n-butane": 0.4}, "PR"),
               ({"methane": 0.8, "propane": 0.2}, "PR"), ({"carbon dioxide": 0.7, "methane": 0.3}, "PR")]


@pytest.mark.parametrize("comp, model", FLASH_CASES, ids=[f"{i}-{c[1]}" for i, c in enumerate(FLASH_CASES)])
def test_flash_kernel_equals_numpy_form(comp, model):
    g = eosfill.Fluid(comp, model=model)
    T, P = np.meshgrid(np.linspace(90.0, 380.0, 30), np.geomspace(5e3, 1.2e7, 20))
    T, P = T.ravel(), P.ravel()
    z = np.broadcast_to(g.mole_fractions, (T.size, g.nc))
    a = flash_TP_oracle(T, P, z, g.params, raise_on_fail=False)
    b = flash_TP(T, P, z, g.params, raise_on_fail=False)
    assert a["two_phase"].any() and not a["two_phase"].all()
    np.testing.assert_array_equal(b["two_phase"], a["two_phase"])
    np.testing.assert_array_equal(b["status"], a["status"])
    for key in ("beta", "x", "y", "lnK"):
        np.testing.assert_allclose(b[key], a[key], rtol=0.0, atol=1e-8)
    assert np.max(np.abs(b["beta"] - a["beta"])[b["iterations"] <= 25]) <= 1e-10
    np.testing.assert_array_equal(b["iterations"][b["iterations"] <= 25], a["iterations"][b["iterations"] <= 25])


def test_flash_near_critical_second_order_path(monkeypatch):
    """Near the rich gas's critical region successive substitution is slow:
    Newton at step 25, and the Gibbs-energy minimisation where Newton falls
    short (the compiled flash hands those states back to Python).  Same
    result as the numpy form, and the minimisation is reached."""
    g = eosfill.Fluid({"methane": 0.8, "propane": 0.2}, model="PR")
    T = np.array([212.5, 215.0, 252.5, 255.0])
    P = np.array([5.740294e6, 6.034176e6, 9.457416e6, 9.457416e6])
    calls = []
    real = flash_mod._flash_gibbs_min

    def spy(*args):
        calls.append(args[:2])
        return real(*args)

    monkeypatch.setattr(flash_mod, "_flash_gibbs_min", spy)
    b = flash_TP(T, P, g.mole_fractions, g.params)
    assert calls and np.all(b["iterations"] > 25)
    a = flash_TP_oracle(T, P, g.mole_fractions, g.params)
    np.testing.assert_array_equal(b["two_phase"], a["two_phase"])
    for key in ("beta", "x", "y"):
        np.testing.assert_allclose(b[key], a[key], rtol=0.0, atol=1e-8)
    assert np.all(b["residual"] < 1e-8)


def test_flash_batch_equals_one_state():
    g = eosfill.Fluid(RICH, model="PR")
    T = np.linspace(180.0, 260.0, 40)
    P = np.full(40, 4e6)
    fl = flash_TP(T, P, g.mole_fractions, g.params)   # parallel loop
    assert fl["two_phase"].any() and not fl["two_phase"].all()
    for k in (0, 11, 39):
        one = flash_TP(T[k:k + 1], P[k:k + 1], g.mole_fractions, g.params)
        assert one["beta"][0] == fl["beta"][k] and one["iterations"][0] == fl["iterations"][k]
        np.testing.assert_array_equal(one["x"][0], fl["x"][k])


def test_warm_flash_equals_numpy_form():
    """Warm start from the K-values of a state 1 K away: the compiled warm
    flash and the numpy form reach the same result."""
    g = eosfill.Fluid(RICH, model="PR")
    T = np.linspace(200.0, 240.0, 9)
    P = np.full(9, 4e6)
    cold = flash_TP(T + 1.0, P, g.mole_fractions, g.params)
    assert cold["two_phase"].all()
    warm = flash_TP(T, P, g.mole_fractions, g.params, lnK_start=cold["lnK"])
    ref = _flash_warm_oracle(T, P, g.mole_fractions, g.params, cold["lnK"], 1e-11, 400)
    assert ref is not None
    for key in ("beta", "x", "y", "lnK"):
        np.testing.assert_allclose(warm[key], ref[key], rtol=0.0, atol=1e-10)
    # the numpy form steps the whole batch until its slowest row converges,
    # the kernel stops each row on its own
    assert np.all(warm["iterations"] <= ref["iterations"])
    assert warm["iterations"].max() == ref["iterations"].max()
    # and the same state as the cold flash at T
    full = flash_TP(T, P, g.mole_fractions, g.params)
    np.testing.assert_allclose(warm["beta"], full["beta"], rtol=0.0, atol=1e-9)


def test_warm_flash_falls_back_per_row():
    """A warm start that cannot end two-phase (a stable state) goes to the
    full flash for that row only; the other rows keep the warm result."""
    g = eosfill.Fluid(RICH, model="PR")
    T = np.array([220.0, 400.0])
    P = np.array([4e6, 4e6])
    cold = flash_TP(np.array([221.0, 221.0]), P, g.mole_fractions, g.params)
    warm = flash_TP(T, P, g.mole_fractions, g.params, lnK_start=cold["lnK"])
    full = flash_TP(T, P, g.mole_fractions, g.params)
    assert list(warm["two_phase"]) == [True, False] == list(full["two_phase"])
    np.testing.assert_allclose(warm["beta"], full["beta"], rtol=0.0, atol=1e-9)
