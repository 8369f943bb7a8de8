"""Best-of-several timing with time.perf_counter (warm-up first, not counted)."""
from __future__ import annotations

import subprocess
import sys
import time


def first_call(fn):
    """Time and result of the first call (for eosfill: includes any compilation
    not already paid by an earlier case in this process)."""
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def best_of(fn, repeat=5, min_time=0.2, max_total=20.0):
    """Best time of one call, over ``repeat`` rounds of n calls each (n chosen so that
    a round lasts about ``min_time``); fewer rounds when one call is slow."""
    t0 = time.perf_counter()
    fn()  # warm-up
    t1 = time.perf_counter() - t0
    n = max(1, min(int(min_time / max(t1, 1e-9)), 200_000))
    if t1 * n * repeat > max_total:
        repeat = max(1, int(max_total / max(t1 * n, 1e-9)))
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        for _ in range(n):
            fn()
        best = min(best, (time.perf_counter() - t0) / n)
    return best


def import_time(module="eosfill", repeat=3):
    """``import module`` in a fresh interpreter (best of ``repeat``), in s."""
    code = ("import time; t = time.perf_counter(); import %s; "
            "print(time.perf_counter() - t)" % module)
    best = float("inf")
    for _ in range(repeat):
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
        if out.returncode != 0:
            raise RuntimeError(out.stderr.strip().splitlines()[-1] if out.stderr.strip() else "import failed")
        best = min(best, float(out.stdout.strip().splitlines()[-1]))
    return best


FIRST_STATE = """
import time
t = time.perf_counter()
import eosfill
gas = eosfill.Fluid({"methane": 0.85, "ethane": 0.07, "propane": 0.03, "nitrogen": 0.03, "carbon dioxide": 0.02})
gas.state(T=300.0, P=10e6)
print(time.perf_counter() - t)
"""


def first_state_time(repeat=3):
    """A fresh interpreter's import, Fluid and first state(T, P), in s (best of ``repeat``)."""
    best = float("inf")
    for _ in range(repeat):
        out = subprocess.run([sys.executable, "-c", FIRST_STATE], capture_output=True, text=True, timeout=300)
        if out.returncode != 0:
            raise RuntimeError(out.stderr.strip().splitlines()[-1] if out.stderr.strip() else "failed")
        best = min(best, float(out.stdout.strip().splitlines()[-1]))
    return best
