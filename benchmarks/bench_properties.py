"""Property-evaluation speed: eosfill (one vectorised call) vs thermo (per state).

Work per state, the same in both codes: Peng-Robinson (1976) for a
5-component natural gas (methane 0.90, ethane 0.05, propane 0.02,
nitrogen 0.02, carbon dioxide 0.01) with the same Tc, Pc, omega and kij
(taken from the eosfill Fluid), at one (T, P): the cubic's roots and the
lowest-Gibbs root, Z, H^R, S^R, ln phi_i and Cp^R.

* eosfill: ``Fluid.single_phase(T, P)`` on all N states at once, then the
  properties read from the batch State.
* thermo: one ``PRMIX`` object per state (its documented way of use), on a
  subset of the same states, then ``H_dep``, ``S_dep``, ``lnphis``, ``Cp_dep``
  of the root nearest eosfill's Z.

Also timed, for information: ``Fluid.state(T=..., P=...)``, which adds the
tangent-plane stability test (and a flash where needed) to the same work.

States are per second; the ratio eosfill/thermo is what counts (this machine
is noisy; absolute times are indicative only).  The best of REPEAT runs is
taken for each.

Run from the repository root:

    python benchmarks/bench_properties.py [--n 100000] [--n-thermo 500]
"""
from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import eosfill  # noqa: E402

NATGAS = {"methane": 0.9, "ethane": 0.05, "propane": 0.02, "nitrogen": 0.02, "carbon dioxide": 0.01}


def states(n, seed=20240601):
    """n random (T, P): T 260-450 K, P 0.1-35 MPa log-uniform (single-phase gas
    and supercritical region of this gas, where vessels are filled)."""
    rng = np.random.default_rng(seed)
    T = rng.uniform(260.0, 450.0, n)
    P = 10.0 ** rng.uniform(5.0, np.log10(35e6), n)
    return T, P


def best_of(fn, repeat):
    times = []
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def run_eosfill(fluid, T, P):
    st = fluid.single_phase(T, P)
    return st.Z, st.h_res, st.s_res, st.ln_phi, st.cp


def run_eosfill_state(fluid, T, P):
    st = fluid.state(T=T, P=P)
    return st.Z, st.h, st.s


def run_thermo(fluid, T, P, Z_ours):
    from thermo import PRMIX

    Tcs, Pcs, omegas = fluid.Tc.tolist(), fluid.Pc.tolist(), fluid.omega.tolist()
    zs, kijs = fluid.mole_fractions.tolist(), fluid.kij.tolist()
    out = []
    for Ti, Pi, Zi in zip(T.tolist(), P.tolist(), Z_ours.tolist()):
        eos = PRMIX(Tcs=Tcs, Pcs=Pcs, omegas=omegas, zs=zs, kijs=kijs, T=Ti, P=Pi)
        roots = {s: getattr(eos, "Z_" + s) for s in ("l", "g") if hasattr(eos, "Z_" + s)}
        sfx = min(roots, key=lambda k: abs(roots[k] - Zi))
        out.append((roots[sfx], getattr(eos, "H_dep_" + sfx), getattr(eos, "S_dep_" + sfx),
                    getattr(eos, "lnphis_" + sfx), getattr(eos, "Cp_dep_" + sfx)))
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description="eosfill vs thermo property-evaluation speed")
    ap.add_argument("--n", type=int, default=100_000, help="states for eosfill (default 100000)")
    ap.add_argument("--n-thermo", type=int, default=500, help="states for thermo, a subset (default 500)")
    ap.add_argument("--repeat", type=int, default=3, help="best of this many runs (default 3)")
    args = ap.parse_args(argv)

    import thermo

    warnings.simplefilter("ignore", eosfill.RangeWarning)
    fluid = eosfill.Fluid(NATGAS, model="PR")
    T, P = states(args.n)
    sub = slice(0, min(args.n_thermo, args.n))

    fluid.single_phase(T[:10], P[:10])  # warm-up (imports, data load)
    t_e, res_e = best_of(lambda: run_eosfill(fluid, T, P), args.repeat)
    t_s, _ = best_of(lambda: run_eosfill_state(fluid, T, P), max(1, args.repeat - 1))
    t_t, res_t = best_of(lambda: run_thermo(fluid, T[sub], P[sub], res_e[0][sub]), args.repeat)

    # same numbers? (a benchmark of different work would mean nothing)
    Z_t = np.array([r[0] for r in res_t])
    H_t = np.array([r[1] for r in res_t])
    lnphi_t = np.array([r[3] for r in res_t])
    err = max(np.max(np.abs(res_e[0][sub] / Z_t - 1.0)),
              np.max(np.abs(res_e[1][sub] - H_t) / (np.abs(H_t) + 8.314 * T[sub])),
              np.max(np.abs(res_e[3][sub] - lnphi_t)))

    n_t = len(Z_t)
    rate_e = args.n / t_e
    rate_s = args.n / t_s
    rate_t = n_t / t_t
    print(f"natural gas, PR, {args.n} states (eosfill) / {n_t} states (thermo {thermo.__version__}), "
          f"best of {args.repeat}")
    print(f"  eosfill single_phase (vectorised): {rate_e:14,.0f} states/s  ({t_e:.3f} s)")
    print(f"  eosfill state(T, P) incl. stability: {rate_s:12,.0f} states/s  ({t_s:.3f} s)")
    print(f"  thermo PRMIX per state:            {rate_t:14,.0f} states/s  ({t_t:.3f} s)")
    print(f"  ratio eosfill/thermo: {rate_e / rate_t:.0f}x (single_phase), "
          f"{rate_s / rate_t:.0f}x (state with stability test)  [target >= 100x]")
    print(f"  largest difference on the common states (Z rel, H^R rel, ln phi abs): {err:.1e}")


if __name__ == "__main__":
    main()
