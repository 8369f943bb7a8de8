"""Each peer runs in its own child process, so that a peer that hangs inside
its compiled code (no Python signal reaches it there) is ended after a time
limit and shown as "—" with the reason, instead of stopping the run.

The child is forked from the runner after the cases are built, so it has the
same cases (by index) and loads only its own library.
"""
from __future__ import annotations

import multiprocessing as mp
import traceback

import timing

_CTX = mp.get_context("fork")


def _short(exc):
    from peers import Unsupported

    msg = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
    msg = msg if len(msg) < 160 else msg[:157] + "..."
    return msg if isinstance(exc, Unsupported) else f"{type(exc).__name__}: {msg}"


def _serve(conn, name, cases, opts):
    import warnings

    warnings.simplefilter("ignore")
    import peers

    adapters, missing = peers.load([name])
    if missing:
        conn.send(("loadfail", missing[name]))
        return
    ad = adapters[0]
    conn.send(("loaded", ad.version))
    fns = {}
    while True:
        msg = conn.recv()
        try:
            if msg[0] == "values":
                w = cases[msg[1]]
                fn = getattr(ad, "case_" + w.what)(w)
                t_first, vals = timing.first_call(fn)
                fns[msg[1]] = (fn, t_first)
                conn.send(("ok", vals, t_first))
            elif msg[0] == "time":
                fn, t_first = fns.pop(msg[1])
                if t_first > opts["slow"]:  # a very slow call: its first call is the figure
                    conn.send(("ok", t_first, f"one call only (first call took {t_first:.1f} s)"))
                else:
                    conn.send(("ok", timing.best_of(fn, opts["repeat"], opts["min_time"],
                                                    max_total=opts["max_total"]), None))
            elif msg[0] == "notes":
                conn.send(("ok", list(getattr(ad, "notes_for_report", lambda: [])()), None))
            elif msg[0] == "stop":
                return
        except Exception as exc:  # noqa: BLE001 - reported to the runner
            conn.send(("err", _short(exc), traceback.format_exc(limit=3)))


class PeerProcess:
    """One peer library in a child process; ``ask`` returns the reply or raises TimeoutError."""

    def __init__(self, name, cases, opts, timeout):
        self.name, self.cases, self.opts, self.timeout = name, cases, opts, timeout
        self.proc = None
        self.version = None
        self.load_error = None

    def _start(self):
        parent, child = _CTX.Pipe()
        self.proc = _CTX.Process(target=_serve, args=(child, self.name, self.cases, self.opts), daemon=True)
        self.proc.start()
        self.conn = parent
        if not parent.poll(120.0):
            self.kill()
            self.load_error = "did not load within 120 s"
            return
        reply = parent.recv()
        if reply[0] == "loadfail":
            self.load_error = reply[1]
            self.kill()
        else:
            self.version = reply[1]

    def ask(self, *msg):
        if self.load_error:
            return ("err", self.load_error)
        if self.proc is None or not self.proc.is_alive():
            self._start()
            if self.load_error:
                return ("err", self.load_error)
        self.conn.send(msg)
        if not self.conn.poll(self.timeout):
            self.kill()
            raise TimeoutError(f"no answer within {self.timeout:.0f} s (process ended)")
        try:
            return self.conn.recv()
        except EOFError:
            self.kill()
            return ("err", "the peer's process died (crash in the library)")

    def kill(self):
        if self.proc is not None:
            if self.proc.is_alive():
                self.proc.kill()
            self.proc.join(5)
            self.proc = None

    def stop(self):
        if self.proc is not None and self.proc.is_alive():
            try:
                self.conn.send(("stop",))
                self.proc.join(5)
            except (BrokenPipeError, OSError):
                pass
        self.kill()
