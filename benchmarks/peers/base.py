"""Shared plumbing of the peer adapters: one state at a time, batches as a loop."""
from __future__ import annotations

import numpy as np

from . import Unsupported

WHATS = ("props_TP", "state_TP", "flash_TP", "PH", "UV")


class PeerAdapter:
    """A peer implements ``one_<what>(work)`` returning ``g(**inputs) -> dict`` for one
    state; this class turns it into the runner's ``case_<what>(work)``: one call, or a
    Python loop over the batch's first ``n_peer`` states (peers are called one state at
    a time, their documented way of use)."""

    name = "?"
    version = "?"

    def __getattr__(self, attr):
        if attr.startswith("case_") and attr[5:] in WHATS:
            what = attr[5:]
            one = getattr(type(self), "one_" + what, None)
            if one is None:
                raise Unsupported(self.no_reason.get(what, "not offered by this library"))
            return lambda w: self._wrap(one(self, w), w)
        raise AttributeError(attr)

    no_reason: dict = {}

    @staticmethod
    def _wrap(g, w):
        if w.kind == "one":
            inp = {k: float(v) for k, v in w.inputs.items()}
            return lambda: g(**inp)
        sub = w.peer_inputs()
        keys = list(sub)
        rows = list(zip(*[np.asarray(sub[k]).tolist() for k in keys]))

        def run():
            outs = [g(**dict(zip(keys, r))) for r in rows]
            return {k: np.array([o[k] for o in outs]) for k in outs[0] if k != "phase"}
        return run
