"""eosfill against the peers on the same work, in one run: one table and a JSON file.

    python benchmarks/run.py --quick             # about a minute
    python benchmarks/run.py                      # full: 100k batches, more repeats
    python benchmarks/run.py --json out.json      # also write every figure as JSON
    python benchmarks/run.py --peers thermo,teqp --cases n2_uv_1,flash2_1

For each case every library is first called once and its computed values are
compared with eosfill's (same Tc, Pc, ω, k_ij and ideal-gas Cp° fed to every
library, read from eosfill's Fluid).  The largest difference is printed beside
the time; a peer that differs by more than TOL is marked "≠" and its ratio is
shown marked, not as a plain number, because it did other work.  Then each is
timed: best of several rounds with time.perf_counter, after a warm-up (so
numba compilation is not counted; eosfill's first call is reported apart).

Ratio = peer time / eosfill time: > 1 means eosfill is faster.  Batches are
per-state times: eosfill on the whole array in one call, peers one state at a
time on the first states of the same batch.  The issue's targets are printed
beside the eosfill figures for information; nothing here asserts a time.
This machine is noisy: compare ratios, not seconds.
"""
from __future__ import annotations

import argparse
import json
import math
import os
import platform
import sys
import time
import warnings
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))  # run from a checkout without installing
sys.path.insert(0, str(HERE))

import cases as cases_mod  # noqa: E402
import peers  # noqa: E402
import timing  # noqa: E402
import workers  # noqa: E402
from peers import Unsupported  # noqa: E402

# Agreement tolerance: relative for Z, T, P; absolute for hR/RT, ln φ, β and
# mole fractions.  Round-off of identical equations is ~1e-12; peers' own
# solver tolerances sit at 1e-8..1e-6; 1e-5 separates "same work" from not.
TOL = 1e-5
RELATIVE = {"Z", "T", "P"}

# What a peer's figure stands for, where that is not plain (printed as footnotes)
NOTES = {
    "FeOs": {w: "FeOs's PR uses the rounded Ωa = 0.45724, Ωb = 0.07780 (Peng & Robinson 1976 print them so); "
                "eosfill uses the exact roots of the cubic's critical conditions: Z differs by ~1e-5 at the "
                "same Tc, Pc, ω (checked: a PR with the rounded values reproduces FeOs's Z to 1e-15)"
             for w in ("props_TP", "state_TP", "flash_TP", "PH")},
    "teqp": {"props_TP": "teqp gives P(T, ρ) and its derivatives; the density at (T, P) is a Newton "
                         "iteration on teqp's derivatives written in this benchmark (benchmarks/peers/teqp_adapter.py)",
             "UV": "teqp has no flash: T at (u, v) is a Newton iteration on teqp's residual derivatives plus "
                   "eosfill's ideal-gas Cp° polynomial, written in this benchmark (single phase only)"},
    "NeqSim": {**{w: "NeqSim's PR keeps its own Ωa, Ωb and R (its a and b differ from eosfill's by ~2e-5 and "
                     "~9e-5 at the same Tc, Pc): its figures differ at that level" for w in ("state_TP", "flash_TP")},
               "PH": "NeqSim's ideal-gas part is its own: it first computes its own h at the same (T, P), then "
                     "its PH flash recovers T (a round trip; not timed)",
               "UV": "NeqSim's ideal-gas part is its own: it first computes its own u, v at the same state, then "
                     "its VU flash recovers T, P (a round trip; not timed)"},
}


# ------------------------------------------------------------------ agreement
def difference(a, b, key):
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if a.shape != b.shape:
        try:
            a, b = np.broadcast_arrays(a, b)
        except ValueError:
            return math.inf
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(b))):
        return math.inf
    d = np.abs(a - b)
    if key in RELATIVE:
        d = d / np.maximum(np.abs(b), 1e-300)
    return float(np.max(d)) if d.size else 0.0


def agreement(peer_vals, ref_vals, keys):
    """Max difference over the compared keys, and the key where it is largest."""
    worst, where = 0.0, None
    for k in keys:
        if k in peer_vals and k in ref_vals:
            d = difference(peer_vals[k], ref_vals[k], k)
            if d > worst or where is None:
                worst, where = d, k
    return worst, where


def slice_ref(vals, n):
    return {k: (np.asarray(v)[:n] if isinstance(v, np.ndarray) and v.ndim >= 1 else v) for k, v in vals.items()}


# ------------------------------------------------------------------ formatting
def fmt_t(t):
    if t is None or not math.isfinite(t):
        return "—"
    if t < 1e-6:
        return f"{t * 1e9:.0f} ns"
    if t < 1e-3:
        return f"{t * 1e6:.3g} µs"
    if t < 1.0:
        return f"{t * 1e3:.3g} ms"
    return f"{t:.3g} s"


def fmt_d(d):
    if d is None:
        return ""
    if not math.isfinite(d):
        return "Δ=inf"
    return f"Δ{d:.0e}" if d > 0 else "Δ0"


class Footnotes:
    def __init__(self):
        self.items = []

    def add(self, text):
        if text not in self.items:
            self.items.append(text)
        return f"[{self.items.index(text) + 1}]"


def short(exc):
    msg = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
    msg = msg if len(msg) < 160 else msg[:157] + "..."
    return msg if isinstance(exc, Unsupported) else f"{type(exc).__name__}: {msg}"


# ------------------------------------------------------------------ the run
def run_case(index, w, eos, procs, opts, log):
    res = {"id": w.id, "title": w.title, "kind": w.kind, "target": w.target, "target_s": w.target_s,
           "n": int(np.size(next(iter(w.inputs.values())))), "n_peer": w.n_peer if w.kind == "batch" else 1,
           "libraries": {}}
    per = res["n"] if w.kind == "batch" else 1
    # eosfill first: its values are the reference of the agreement check
    e = {}
    try:
        fn = eos.__getattribute__("case_" + w.what)(w)
        e["first_call_s"], ref = timing.first_call(fn)
        e["first_call_s"] /= per
        if w.expect_two_phase:
            beta = np.atleast_1d(ref.get("beta"))
            if not np.all((beta > 0.0) & (beta < 1.0)):
                e["note"] = f"expected two phases, eosfill gives vapour fraction {beta[:3]}"
        e["time_s"] = timing.best_of(fn, opts.repeat, opts.min_time, max_total=opts.max_total) / per
        res["libraries"]["eosfill"] = e
    except Exception as exc:  # noqa: BLE001 - eosfill failing a case is reported, the run goes on
        e["error"] = short(exc)
        res["libraries"]["eosfill"] = e
        log(f"  {w.id}: eosfill failed: {e['error']}")
        return res
    ref_peer = slice_ref(ref, w.n_peer) if w.kind == "batch" else ref
    if w.check is not None:  # an independent check of eosfill's answer (not timed)
        try:
            chk, label = w.check(w)
            d, key = agreement(ref, chk, w.keys)
            e["check"] = {"against": label, "diff": d, "diff_key": key, "agrees": bool(d <= TOL)}
            text = (f"eosfill checked against {label}: Δ{d:.1e} ({key})"
                    + ("" if d <= TOL else f" — DIFFERS beyond {TOL:g}"))
            e["note"] = e["note"] + "; " + text if "note" in e else text
        except Exception as exc:  # noqa: BLE001
            e["check"] = {"error": short(exc)}
    res["eosfill_values"] = {k: np.asarray(v).tolist() for k, v in ref_peer.items() if k in w.keys}
    if w.kind == "batch" and w.what == "flash_TP":
        try:  # the same states, eosfill one call per state
            fn1 = eos.one_at_a_time(w)
            vals1 = fn1()
            d1, _ = agreement(vals1, ref_peer, w.keys)
            res["eosfill_one_at_a_time_s"] = timing.best_of(fn1, opts.repeat, opts.min_time) / w.n_peer
            res["eosfill_one_at_a_time_diff"] = d1
        except Exception as exc:  # noqa: BLE001
            res["eosfill_one_at_a_time_error"] = short(exc)
    for pp in procs:
        r = {}
        res["libraries"][pp.name] = r
        try:
            reply = pp.ask("values", index)
        except TimeoutError as exc:
            r["error"] = f"timed out: {exc}"
            continue
        if reply[0] != "ok":
            r["error"] = reply[1]
            continue
        vals, r["first_call_s"] = reply[1], reply[2]
        r["diff"], r["diff_key"] = agreement(vals, ref_peer, w.keys)
        r["agrees"] = bool(r["diff"] <= TOL)
        if pp.name in NOTES and w.what in NOTES[pp.name]:
            r["note"] = NOTES[pp.name][w.what]
        try:
            reply = pp.ask("time", index)
        except TimeoutError as exc:
            r["error"] = f"timing timed out: {exc}"
            continue
        if reply[0] != "ok":
            r["error"] = "timing: " + reply[1]
            continue
        r["time_s"] = reply[1] / (w.n_peer if w.kind == "batch" else 1)
        if reply[2]:
            r["note_time"] = reply[2]
        r["ratio"] = r["time_s"] / e["time_s"]
    return res


def transient_case(opts):
    """The 1000-point time-resolved fill of bench_transient.py (eosfill only)."""
    import bench_transient

    res = {"id": "fill_1000", "title": "time-resolved fill, 1000 points (eosfill only)", "kind": "one",
           "target": "≤ 0.1 s", "target_s": 0.1, "libraries": {}}
    e = {}
    try:
        e["first_call_s"], out = timing.first_call(bench_transient.run)
        e["time_s"] = timing.best_of(bench_transient.run, max(2, opts.repeat - 2), min_time=0.0, max_total=30.0)
        e["note"] = f"{out.t.size} output points, {getattr(out, 'n_rhs', '?')} right-hand sides, stop: {out.stop_reason}"
    except Exception as exc:  # noqa: BLE001
        e["error"] = short(exc)
    res["libraries"]["eosfill"] = e
    return res


def print_table(results, names, meta, out=print):
    notes = Footnotes()
    head = ["case", "eosfill", "target", "first call"] + names
    rows = []
    for res in results:
        e = res["libraries"].get("eosfill", {})
        if "error" in e:
            et = "✗ " + notes.add("eosfill: " + e["error"])
        else:
            et = fmt_t(e.get("time_s"))
            if "note" in e:
                et += " " + notes.add(f"{res['id']}: {e['note']}")
        row = [res["title"], et, res.get("target", ""), fmt_t(e.get("first_call_s"))]
        for n in names:
            r = res["libraries"].get(n)
            if r is None or (not r and n != "eosfill"):
                row.append("·")
                continue
            if "error" in r and "time_s" not in r:
                row.append("— " + notes.add(f"{n}: {r['error']}"))
                continue
            cell = fmt_t(r.get("time_s"))
            ratio = r.get("ratio")
            mark = "" if r.get("agrees", True) else "≠"
            cell += f" {mark}{ratio:.3g}×" if ratio is not None else ""
            cell += " " + fmt_d(r.get("diff"))
            if not r.get("agrees", True):
                cell += " " + notes.add(f"{n}: differs from eosfill by {r['diff']:.2e} in {r['diff_key']} "
                                        f"(tolerance {TOL:g}): different work, ratio not comparable")
            for key in ("note", "note_time"):
                if key in r:
                    cell += " " + notes.add(f"{n}: {r[key]}")
            row.append(cell)
        rows.append(row)
        if "eosfill_one_at_a_time_s" in res:
            t1 = res["eosfill_one_at_a_time_s"]
            rows.append(["  same states, eosfill one at a time", fmt_t(t1), "",
                         "", f"batch is {t1 / e['time_s']:.3g}× faster per state (target ≥ 20×)"]
                        + [""] * (len(names) - 1))
    widths = [max(len(str(r[i])) for r in rows + [head]) for i in range(len(head))]
    line = "  ".join(h.ljust(wd) for h, wd in zip(head, widths))
    out(line)
    out("-" * len(line))
    for r in rows:
        out("  ".join(str(c).ljust(wd) for c, wd in zip(r, widths)))
    out("")
    out(f"Cells: peer time, ratio peer/eosfill (> 1: eosfill faster), Δ = largest difference from eosfill "
        f"(relative for Z, T, P; absolute for hR/RT, ln φ, vapour fraction (1 for any single phase), mole fractions); "
        f"≠ marks Δ > {TOL:g} (different work). '·' = not run for this case.")
    out("Batches: per-state time; eosfill on the whole batch in one call, peers one state at a time on the "
        "first states of the same batch. Targets (issue 9) are information only.")
    for i, t in enumerate(notes.items, 1):
        out(f"[{i}] {t}")
    out("")
    for k, v in meta.items():
        out(f"{k}: {v}")


def jsonable(o):
    if isinstance(o, dict):
        return {k: jsonable(v) for k, v in o.items()}
    if isinstance(o, (list, tuple)):
        return [jsonable(v) for v in o]
    if isinstance(o, (np.floating, float)):
        return float(o) if math.isfinite(o) else str(o)
    if isinstance(o, (np.integer,)):
        return int(o)
    if isinstance(o, np.ndarray):
        return jsonable(o.tolist())
    return o


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true", help="smaller batches, fewer repeats (about a minute)")
    ap.add_argument("--json", metavar="FILE", help="write every figure to FILE as JSON")
    ap.add_argument("--peers", default=",".join(peers.PEER_NAMES),
                    help=f"comma-separated peers (default: all of {','.join(peers.PEER_NAMES)})")
    ap.add_argument("--cases", default="", help="comma-separated case ids (default: all)")
    ap.add_argument("--repeat", type=int, default=None, help="timing rounds (default 3 quick, 5 full)")
    ap.add_argument("--timeout", type=float, default=None,
                    help="s a peer may take for one step before its process is ended (default 15 quick, 90 full)")
    ap.add_argument("--no-fill", action="store_true", help="skip the time-resolved fill")
    args = ap.parse_args(argv)
    args.repeat = args.repeat or (3 if args.quick else 5)
    args.min_time = 0.03 if args.quick else 0.2
    args.only_eosfill = False
    args.slow = 1.0 if args.quick else 5.0      # s: a first call slower than this is not repeated
    args.max_total = 3.0 if args.quick else 15.0  # s: time budget of one timing
    args.timeout = args.timeout or (15.0 if args.quick else 90.0)
    log = lambda s: print(s, file=sys.stderr, flush=True)  # noqa: E731

    warnings.simplefilter("ignore")
    t_start = time.perf_counter()
    meta = {}
    try:
        meta["import eosfill (fresh interpreter, best of 3)"] = f"{timing.import_time():.3f} s (target < 0.3 s)"
    except Exception as exc:  # noqa: BLE001
        meta["import eosfill"] = "failed: " + short(exc)
    try:
        meta["fresh interpreter: import, Fluid, first state(T,P) (best of 3; includes loading cached or "
             "compiling kernels)"] = f"{timing.first_state_time():.2f} s"
    except Exception as exc:  # noqa: BLE001
        meta["fresh interpreter: first state"] = "failed: " + short(exc)

    wanted = [p.strip() for p in args.peers.split(",") if p.strip()]
    (eos,), _ = peers.load(["eosfill"])
    all_cases = cases_mod.build(quick=args.quick)
    sel = [c.strip() for c in args.cases.split(",") if c.strip()]
    todo = [c for c in all_cases if not sel or c.id in sel]
    wopts = dict(slow=args.slow, repeat=args.repeat, min_time=args.min_time, max_total=args.max_total)
    procs = [workers.PeerProcess(n, todo, wopts, timeout=args.timeout) for n in wanted]
    results = []
    try:
        for i, w in enumerate(todo):
            log(f"case {w.id} ...")
            results.append(run_case(i, w, eos, procs, args, log))
        versions = {"eosfill": eos.version}
        for pp in procs:
            versions[pp.name] = pp.version or f"not loaded ({pp.load_error})"
            if pp.version:
                try:
                    reply = pp.ask("notes")
                    for line in (reply[1] if reply[0] == "ok" else []):
                        meta[f"{pp.name} note"] = line
                except TimeoutError:
                    pass
    finally:
        for pp in procs:
            pp.stop()
    if not args.no_fill and (not sel or "fill_1000" in sel):
        log("case fill_1000 ...")
        results.append(transient_case(args))
    names_all = wanted
    meta["versions"] = ", ".join(f"{k} {v}" for k, v in versions.items())
    meta["machine"] = f"{platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}"
    meta["mode"] = f"{'quick' if args.quick else 'full'}, best of {args.repeat}; run took " \
                   f"{time.perf_counter() - t_start:.0f} s"
    print_table(results, names_all, meta)
    if args.json:
        Path(args.json).write_text(json.dumps(jsonable({"tolerance": TOL, "meta": meta, "versions": versions,
                                                        "results": results}), indent=1, ensure_ascii=False))
        print(f"JSON: {args.json}")


if __name__ == "__main__":
    main()
