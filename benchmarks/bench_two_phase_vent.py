"""Vent benchmark whose nozzle throat turns two-phase (issue 10 item 7).

    python benchmarks/bench_two_phase_vent.py [duration_s]

Nitrogen 0.2 / methane 0.8 (PR), a 50 L adiabatic vessel at 50 MPa and 230 K
vented through a 2 mm orifice (C_d = 0.8) to 1 MPa (the issue's case; the
vessel and orifice are demo values).  Once the throat passes the bubble point
the choked flux is found on equilibrium (P, s) states: tabulated once per
entropy level of the content and interpolated (``flow.EquilibriumIsentropes``).
Target: the vent to 1 MPa in under 60 s of wall time with mass and energy
closed to 1e-6 (indicative: this machine is noisy and shared).
"""
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import eosfill  # noqa: E402
from eosfill.transient import flow  # noqa: E402
from eosfill.transient import model as transient  # noqa: E402


def run(duration=600.0, target=1e6):
    gas = eosfill.Fluid({"nitrogen": 0.2, "methane": 0.8}, model="PR")
    return transient.simulate(gas, 0.05, mode="vent", initial_temperature=230.0, initial_pressure=50e6,
                              restriction=flow.Orifice(0.002, 0.8), back_pressure=101325.0,
                              duration=duration, target_pressure=target, n_output=101)


if __name__ == "__main__":
    duration = float(sys.argv[1]) if len(sys.argv) > 1 else 600.0
    t0 = time.perf_counter()
    res = run(duration)
    wall = time.perf_counter() - t0
    i2 = [i for i, b in enumerate(res.vapour_fraction) if b < 1.0 - 1e-12]
    print(f"wall time {wall:.1f} s; simulated {res.t[-1]:.4g} s; stop: {res.stop_reason}; "
          f"right-hand sides {res.n_rhs}")
    print(f"P {res.P[0] / 1e6:.4g} -> {res.P[-1] / 1e6:.4g} MPa; T {res.T_gas[0]:.2f} -> {res.T_gas[-1]:.2f} K "
          f"(min {res.T_gas.min():.2f} K); content two-phase from t = "
          f"{res.t[i2[0]] if i2 else float('nan'):.4g} s")
    print(f"closure: mass {res.mass_closure:.2e}, energy {res.energy_closure:.2e}")
