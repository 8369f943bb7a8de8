"""The output-row checks of a time-resolved run evaluated in batches
(:func:`eosfill.transient.checks._recomputed_rows`, ``_phase_labels``) give, row
for row, what the one-row checks give, including a row whose content sits on
the cubic's other (metastable) root."""
import numpy as np

from eosfill import Fluid
from eosfill.transient.checks import _phase_label, _phase_labels, _recomputed_row, _recomputed_rows


def _rows(fluid, states, which):
    rows = []
    for (T, P), w in zip(states, which):
        st = fluid.single_phase(T, P, which=w)
        rows.append(dict(T=T, P=P, gas=dict(x=np.array(fluid.mole_fractions), v=float(st.v), n=1.0, pr={})))
    return rows


def test_batched_checks_equal_the_one_row_checks():
    gas = Fluid({"propane": 1.0})
    # propane (PR) at 280 K: Psat about 0.58 MPa (NIST webbook, from memory, 0.582 MPa); at 0.4 MPa
    # the stable root is the vapour, at 2 MPa the liquid; the 0.5 MPa row is put on the liquid
    # (metastable) root so that the other-root branch is exercised
    states = [(280.0, 0.4e6), (280.0, 2e6), (280.0, 0.5e6), (320.0, 0.2e6)]
    rows = _rows(gas, states, ["stable", "stable", "liquid", "stable"])
    labels = _phase_labels(gas, rows)
    assert labels == [_phase_label(gas, r) for r in rows]
    assert labels[1] == "liquid" and labels[2] == "liquid" and labels[0] == "gas"
    V = 0.05
    batch = _recomputed_rows(gas, V, rows)
    single = [_recomputed_row(gas, V, r) for r in rows]
    assert batch == single
    # the amount recomputed is V / v of the row's own root (the liquid row holds far more)
    assert batch[2][0] == V / rows[2]["gas"]["v"] and batch[2][0] > 50 * batch[0][0]
