"""Studies: cases per second of end-state fills as a batch, on the local pool
and one at a time; a time-resolved sweep on the pool against one process.

Targets (issue 13): the batch path at least 50x one-at-a-time; the pool's
speed-up within 80 % of linear on this machine's cores.

    python benchmarks/bench_study.py            # quick: 2,000 fills, 16 time-resolved cases
    python benchmarks/bench_study.py --full     # 10,000 fills, 200 time-resolved cases
    python benchmarks/bench_study.py --fills-only   # the end-state fills alone

The fills: one natural gas (demo composition of our own), 80 L adiabatic
cylinder filled by mass, with the supply temperature, residual pressure and
target mass drawn (seeded); then the same cylinder filled to a drawn target
pressure (a root search per case; some targets lie above what a case can
reach and fail alike in the batch and one at a time).  "one at a time" is the path of ``eosfill run``
(:func:`eosfill.io.jobs.run_scenario`, one scenario after another; timed on
a subset and given per case).  Every batch row is compared with the single
run of the same case first, so the ratio never compares different work.
Absolute times on this shared machine are indicative only; read the ratios.
"""
from __future__ import annotations

import argparse
import math
import os
import sys
import tempfile
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

FILL = """
kind = "fill"
title = "benchmark: natural-gas cylinder filled by mass (demo values)"
[fluid]
composition = { methane = 0.92, ethane = 0.04, propane = 0.01, nitrogen = 0.02, "carbon dioxide" = 0.01 }
[vessel]
volume = "80 L"
working_pressure = "200 bar"
[initial]
temperature = "15 degC"
pressure = "20 bar"
[supply]
temperature = "15 degC"
pressure = "250 bar"
[stop]
target_mass = "12 kg"
[sweep]
seed = 13
samples = {n}
[sweep.draw]
"supply.temperature" = { distribution = "uniform", low = "0 degC", high = "35 degC" }
"initial.pressure" = { distribution = "uniform", low = "5 bar", high = "60 bar" }
"stop.target_mass" = { distribution = "triangular", low = "10 kg", mode = "12 kg", high = "12.5 kg" }
"""

# the same cylinder filled to a pressure: the amount admitted is a root search per case
# (eosfill.vessel.fill_rows; in the batch all cases together, each row on its own)
FILL_PRESSURE = FILL.replace('target_mass = "12 kg"', 'target_pressure = "200 bar"').replace(
    '"stop.target_mass" = { distribution = "triangular", low = "10 kg", mode = "12 kg", high = "12.5 kg" }',
    '"stop.target_pressure" = { distribution = "uniform", low = "150 bar", high = "240 bar" }')

BLOWDOWN_SWEEP = """
[sweep]
seed = 4
samples = {n}
[sweep.draw]
"transient.restriction.diameter" = { distribution = "uniform", low = "10 mm", high = "20 mm" }
"initial.temperature" = { distribution = "uniform", low = "0 degC", high = "40 degC" }
"""


def timed(func, *args, **kw):
    t = time.perf_counter()
    out = func(*args, **kw)
    return out, time.perf_counter() - t


def same(a, b):
    return a == b or (isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b))


def fill_kind(case, cases, n_single, workers, n_fill, pool):
    """Rates of one kind of end-state fill: one at a time, as a batch, and (pool) on run_study."""
    from eosfill.study import run_study
    from eosfill.io import jobs
    from eosfill.io.sweep import run_scenarios

    # warm-up (imports, compiled kernels), then the equality check on a subset
    case.run_batch(cases[:20])
    single_rows, t_single = timed(lambda: [outcome(case.run_one, c) for c in cases[:n_single]])
    batch_rows = case.run_batch(cases[:n_single])
    bad = sum(not rows_equal(s, b) for s, b in zip(single_rows, batch_rows))
    failed = sum(isinstance(s, Exception) for s in single_rows)
    print(f"  batch rows equal to single runs: {n_single - bad}/{n_single} ({failed} failed alike in both)")
    rate_single = n_single / t_single
    _, t_batch = timed(case.run_batch, cases)
    rate_batch = n_fill / t_batch
    print(f"  one at a time (eosfill run's path, {n_single} cases timed): {rate_single:10.1f} cases/s")
    print(f"  as a batch (this process, scenario checks included):    {rate_batch:10.1f} cases/s"
          f"   ratio {rate_batch / rate_single:7.1f}x   (target >= 50x)")
    if pool:
        # the batch inside run_study: one process, and the local pool
        size = math.ceil(n_fill / (2 * workers))
        _, t_one = timed(run_study, case, cases, run_batch=case.run_batch, workers=1, chunk_size=size)
        _, t_pool = timed(run_study, case, cases, run_batch=case.run_batch, workers=workers, chunk_size=size)
        print(f"  batch on run_study, 1 process:                          {n_fill / t_one:10.1f} cases/s")
        print(f"  batch on the local pool of {workers}:                         {n_fill / t_pool:10.1f} cases/s"
              f"   speed-up {t_one / t_pool:5.2f} of {workers} ({100 * t_one / t_pool / workers:5.1f} % of linear; "
              "target >= 80 %)")
    # the vessel layer alone: the vector function against vessel.fill, same cases
    scs = [case.scenario(c) for c in cases]
    _, t_build = timed(lambda: [case.scenario(c) for c in cases[:n_single]])
    _, t_fill1 = timed(lambda: [outcome(jobs.run_scenario, s, write=False) for s in scs[:n_single]])
    _, t_fillb = timed(run_scenarios, scs)
    print(f"  vessel layer alone (scenarios built beforehand): one at a time {n_single / t_fill1:9.1f} cases/s, "
          f"batch {n_fill / t_fillb:9.1f} cases/s, ratio {(n_fill / t_fillb) / (n_single / t_fill1):6.1f}x; "
          f"reading and checking one case's scenario {1e3 * t_build / n_single:.2f} ms")
    return rate_single, rate_batch


def outcome(func, *args, **kw):
    try:
        return func(*args, **kw)
    except Exception as exc:  # noqa: BLE001 - a failed case is compared, not fatal
        return exc


def rows_equal(s, b):
    if isinstance(s, Exception) or isinstance(b, Exception):
        return type(s) is type(b) and str(s) == str(b)
    return s.keys() == b.keys() and all(same(s[k], b[k]) for k in s)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--full", action="store_true", help="10,000 fills and 200 time-resolved cases")
    ap.add_argument("--workers", type=int, default=None, help="pool size (default: the cores available)")
    ap.add_argument("--fills-only", action="store_true", help="the end-state fills only (no time-resolved sweep)")
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    from eosfill.io.sweep import load_study
    from eosfill.study import run_study
    from eosfill.study.execute import default_workers

    workers = args.workers or default_workers()
    n_fill = 10_000 if args.full else 2_000
    n_single = 200 if args.full else 60
    n_transient = 200 if args.full else 16
    tmp = Path(tempfile.mkdtemp(prefix="bench_study_"))
    path = tmp / "fill.toml"
    path.write_text(FILL.replace("{n}", str(n_fill)), encoding="utf-8")
    study = load_study(path)
    cases = study.cases
    case = study.case
    print(f"eosfill studies benchmark ({'full' if args.full else 'quick'}); {os.cpu_count()} cores seen, "
          f"pool of {workers}")

    print(f"\n{n_fill} end-state fills of one natural gas (fill to a mass, adiabatic):")
    fill_kind(case, cases, n_single, workers, n_fill, pool=True)

    # the same fills to a pressure (a root search per case): batch against one at a time
    ppath = tmp / "fill_pressure.toml"
    ppath.write_text(FILL_PRESSURE.replace("{n}", str(n_fill)), encoding="utf-8")
    pstudy = load_study(ppath)
    print(f"\n{n_fill} end-state fills of the same gas to a pressure (150-240 bar drawn, supply 250 bar):")
    fill_kind(pstudy.case, pstudy.cases, n_single, workers, n_fill, pool=False)

    if args.fills_only:
        return
    # time-resolved: the blowdown demo with drawn orifice and temperature
    text = (ROOT / "data" / "scenarios" / "vessel_blowdown.toml").read_text(encoding="utf-8")
    bpath = tmp / "blowdown.toml"
    bpath.write_text(text + BLOWDOWN_SWEEP.replace("{n}", str(n_transient)), encoding="utf-8")
    bstudy = load_study(bpath)
    bstudy.case.run_one(bstudy.cases[0])  # warm-up
    r1, t1 = timed(run_study, bstudy.case, bstudy.cases, workers=1, chunk_size=1)
    rp, tp = timed(run_study, bstudy.case, bstudy.cases, workers=workers, chunk_size=1)
    equal = r1.drop(columns=["message"]).equals(rp.drop(columns=["message"]))
    print(f"\n{n_transient} time-resolved blowdowns (orifice, lumped wall): one process {n_transient / t1:.2f} "
          f"cases/s, pool of {workers} {n_transient / tp:.2f} cases/s; speed-up {t1 / tp:.2f} of {workers} "
          f"({100 * t1 / tp / workers:.1f} % of linear; target >= 80 %); rows equal: {equal}; "
          f"failed {int((r1['status'] != 'ok').sum())}")
    print("\nThis machine's cores are shared with other work: a pool's speed-up below linear may be the "
          "neighbours', not the pool's; compare runs.")


if __name__ == "__main__":
    main()
