"""State-solver speed: eosfill vs thermo 0.6.1 on the same work, in one run.

Cases (same Tc, Pc, omega, kij and the same ideal-gas Cp polynomials in
both codes, so both solve the same equations):

1. scalar pure-fluid UV solve (nitrogen, PR, single phase at 300 K, 20 MPa):
   ``Fluid.state(u=, v=)`` vs thermo ``FlashPureVLS.flash(U=, V=)``;
2. 5-component PH solve (natural gas, single phase at 250 K, 5 MPa):
   ``Fluid.state(h=, P=)`` vs thermo ``FlashVL.flash(H=, P=)``;
3. 5-component TP flash, single-phase (250 K, 5 MPa) and two-phase
   (200 K, 3 MPa): ``Fluid.state(T=, P=)`` vs ``FlashVL.flash(T=, P=)``;
4. the same TP flash as a batch of 1000 two-phase states (eosfill
   vectorised, per-state rate) vs thermo per state;
5. a batch of 10,000 pure-fluid UV solves (nitrogen, random single- and
   two-phase states): time against the 1 s target.

Also, for information: a 5-component UV solve inside the two-phase region,
which thermo 0.6.1's FlashVL does not solve (it raises) - the case that
motivated our nested solver.

Ratios are thermo time / eosfill time (> 1: eosfill faster); absolute times
are indicative only on this noisy machine.  Run from the repository root:

    python benchmarks/bench_solvers.py
"""
from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import eosfill  # noqa: E402

NATGAS = {"methane": 0.85, "ethane": 0.07, "propane": 0.04, "nitrogen": 0.02, "carbon dioxide": 0.02}


def per_call(fn, n):
    fn()
    best = np.inf
    for _ in range(3):
        t0 = time.perf_counter()
        for _ in range(n):
            fn()
        best = min(best, (time.perf_counter() - t0) / n)
    return best


def thermo_flasher(g):
    from thermo import (CEOSGas, CEOSLiquid, ChemicalConstantsPackage, FlashPureVLS, FlashVL,
                        HeatCapacityGas, PRMIX)

    consts = ChemicalConstantsPackage(Tcs=list(g.Tc), Pcs=list(g.Pc), omegas=list(g.omega),
                                      MWs=list(g.molar_masses * 1e3), CASs=[c.cas for c in g.components])
    # the same Poling polynomial, as thermo's poly_fit (coefficients highest power first)
    cpg = [HeatCapacityGas(poly_fit=(1.0, 5000.0, list(eosfill.R * c[::-1]))) for c in g.cp_coeffs]
    kw = dict(eos_kwargs=dict(Tcs=list(g.Tc), Pcs=list(g.Pc), omegas=list(g.omega), kijs=g.kij.tolist()),
              HeatCapacityGases=cpg)
    gas, liq = CEOSGas(PRMIX, **kw), CEOSLiquid(PRMIX, **kw)
    if g.nc == 1:
        return FlashPureVLS(consts, None, gas=gas, liquids=[liq], solids=[])
    return FlashVL(consts, None, liquid=liq, gas=gas)


def row(label, t_thermo, t_ours, target=20.0):
    ratio = t_thermo / t_ours
    print(f"  {label:<44s} thermo {t_thermo * 1e3:9.3f} ms   eosfill {t_ours * 1e3:9.3f} ms   "
          f"ratio {ratio:7.2f}x  (target >= {target:g}x)")


def main():
    warnings.simplefilter("ignore")
    print("state solvers, eosfill vs thermo 0.6.1 (best of 3; ratio = thermo time / eosfill time)")
    n2 = eosfill.Fluid("nitrogen")
    fl = thermo_flasher(n2)
    st = n2.state(T=300.0, P=20e6)
    ref = fl.flash(T=300.0, P=20e6)
    assert abs(ref.U() - st.u) < 1e-6 * abs(st.u) + 1e-6, "different work: U differs"
    row("1 scalar pure UV (N2, 300 K, 20 MPa)",
        per_call(lambda: fl.flash(U=ref.U(), V=ref.V()), 50),
        per_call(lambda: n2.state(u=st.u, v=st.v), 50))

    g = eosfill.Fluid(NATGAS)
    z = list(g.mole_fractions)
    fm = thermo_flasher(g)
    s1 = g.state(T=250.0, P=5e6)
    r1 = fm.flash(T=250.0, P=5e6, zs=z)
    row("2 5-component PH (250 K, 5 MPa)",
        per_call(lambda: fm.flash(P=5e6, H=r1.H(), zs=z), 5),
        per_call(lambda: g.state(h=s1.h, P=5e6), 5))
    row("3a 5-component TP flash, one phase",
        per_call(lambda: fm.flash(T=250.0, P=5e6, zs=z), 20),
        per_call(lambda: g.state(T=250.0, P=5e6), 20))
    r2 = fm.flash(T=200.0, P=3e6, zs=z)
    s2 = g.state(T=200.0, P=3e6)
    assert abs(r2.VF - s2.vapor_fraction) < 1e-6, "different work: vapour fraction differs"
    t_th2 = per_call(lambda: fm.flash(T=200.0, P=3e6, zs=z), 20)
    row("3b 5-component TP flash, two phases", t_th2, per_call(lambda: g.state(T=200.0, P=3e6), 20))

    rng = np.random.default_rng(7)
    Tb = rng.uniform(190.0, 210.0, 1000)
    Pb = rng.uniform(2.5e6, 3.5e6, 1000)
    t_batch = per_call(lambda: g.state(T=Tb, P=Pb), 1) / Tb.size
    row("4 5-component TP flash, batch of 1000 (per state)", t_th2, t_batch)

    # 5: 10,000 pure UV solves
    T = rng.uniform(70.0, 400.0, 10_000)
    P = 10.0 ** rng.uniform(5.0, 7.5, 10_000)
    ref_states = n2.state(T=T, P=P)
    t10k = per_call(lambda: n2.state(u=ref_states.u, v=ref_states.v), 1)
    print(f"  5 batch of 10,000 pure UV solves (N2): {t10k:.3f} s  (target < 1 s)")

    # information: two-phase 5-component UV
    try:
        fm.flash(U=r2.U(), V=r2.V(), zs=z)
        th = "solved"
    except Exception as exc:  # noqa: BLE001 - reporting thermo's failure mode
        th = f"fails ({type(exc).__name__})"
    t_uv = per_call(lambda: g.state(u=s2.u, v=s2.v), 1)
    print(f"  i 5-component UV inside the two-phase region: eosfill {t_uv * 1e3:.1f} ms; thermo {th}")


if __name__ == "__main__":
    main()
