"""Time-resolved fill benchmark: a 5-component natural gas, layered wall, 1000 output points.

    python benchmarks/bench_transient.py

Demo values (invented): an 80 L vessel with a 5 mm aluminium liner and a
20 mm composite shell, filled from 2 MPa to 20 MPa through a 2 mm orifice
from a 25 MPa, 27 °C supply, inner coefficient 500/250 W/(m² K) and outer
4.5 W/(m² K) (the constants of Woodfield, Monde & Takano 2008).  Target:
under 0.5 s per run on the development machine (indicative only: this
machine is noisy).  For a ratio, thermo's flash at the same (u, v) work is
timed: thermo has no (U, V) flash for this mixture's PR model in 0.6.1, so
the comparison is one thermo PR (T, P) property evaluation per right-hand-
side call of our run, which underestimates the work a UV solve needs.
"""
import time

import numpy as np

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import eosfill  # noqa: E402
from eosfill.transient import flow  # noqa: E402
from eosfill.transient import heat  # noqa: E402
from eosfill.transient import model as transient  # noqa: E402

COMP = {"methane": 0.85, "ethane": 0.07, "propane": 0.03, "nitrogen": 0.03, "carbon dioxide": 0.02}


def run():
    gas = eosfill.Fluid(COMP, model="PR")
    wall = heat.LayeredWall(0.15, 1.2, [heat.Layer(0.005, 160.0, 2700.0, 900.0, 3, "aluminium liner"),
                                        heat.Layer(0.020, 0.5, 1600.0, 1000.0, 4, "composite")])
    return transient.simulate(
        gas, 0.08, mode="fill", initial_temperature=288.15, initial_pressure=2e6,
        restriction=flow.Orifice(0.002, 0.9), supply=transient.Reservoir(25e6, 300.15),
        duration=600.0, target_pressure=20e6, wall=wall,
        inner_coefficient=heat.ConstantCoefficient.woodfield_2008(), outer_coefficient=4.5,
        ambient_temperature=288.15, n_output=1000)


def thermo_per_call(n):
    try:
        from thermo import CEOSGas, CEOSLiquid, ChemicalConstantsPackage, FlashVL, HeatCapacityGas, PRMIX
    except ImportError:
        return None
    names = ["methane", "ethane", "propane", "nitrogen", "carbon dioxide"]
    consts, props = ChemicalConstantsPackage.from_IDs(names)
    kw = dict(Tcs=consts.Tcs, Pcs=consts.Pcs, omegas=consts.omegas)
    gas = CEOSGas(PRMIX, eos_kwargs=kw, HeatCapacityGases=props.HeatCapacityGases)
    zs = [COMP[k] for k in names]
    t = time.perf_counter()
    for i in range(n):
        g = gas.to(T=300.0 + 1e-3 * i, P=1e7, zs=zs)
        g.U(), g.Cv()
    return time.perf_counter() - t


if __name__ == "__main__":
    run()  # warm-up (imports scipy)
    times = []
    for _ in range(5):
        t = time.perf_counter()
        res = run()
        times.append(time.perf_counter() - t)
    best = min(times)
    print(f"5-component natural-gas fill, layered wall (7 cells), {res.t.size} output points: "
          f"best of 5 {best:.3f} s (median {np.median(times):.3f} s); target 0.5 s; "
          f"{res.n_rhs} right-hand-side evaluations; stop: {res.stop_reason} at {res.t[-1]:.1f} s; "
          f"peak gas {res.peak('T_gas')[0] - 273.15:.1f} °C")
    tt = thermo_per_call(res.n_rhs)
    if tt is not None:
        print(f"thermo 0.6.1, one PR (T, P) evaluation of U and Cv per right-hand-side call "
              f"({res.n_rhs} calls): {tt:.3f} s; ratio eosfill run / thermo calls = {best / tt:.2f}")
