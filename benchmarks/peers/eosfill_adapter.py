"""eosfill, through its public API only (Fluid.single_phase, Fluid.state).

Whatever eosfill is installed is measured: numpy kernels or compiled ones.
Batches are one call on the whole array (eosfill's way of use).
"""
from __future__ import annotations

import numpy as np

R = 8.314462618


def _beta(st):
    """Vapour fraction of two-phase rows, 1 for single-phase rows (whose vapour
    fraction is only a label, 0 or 1 by each library's naming)."""
    return np.where(np.asarray(st.phase) == "two-phase", st.vapor_fraction, 1.0)


class Adapter:
    name = "eosfill"

    def __init__(self):
        import eosfill

        self.version = getattr(eosfill, "__version__", "?")

    # --- values read from a State (inside the timed call: they are the result)
    @staticmethod
    def _props(st, T):
        return {"Z": st.Z, "hR_RT": np.asarray(st.h_res) / (R * np.asarray(T)), "ln_phi": st.ln_phi}

    def case_props_TP(self, w):
        f, T, P = w.fluid, w.inputs["T"], w.inputs["P"]
        return lambda: self._props(f.single_phase(T, P), T)

    def case_state_TP(self, w):
        f, T, P = w.fluid, w.inputs["T"], w.inputs["P"]

        def run():
            st = f.state(T=T, P=P)
            # number of phases (1 or 2): the vapour fraction of a single phase is a label
            return {"Z": st.Z, "nphase": 1 + (np.asarray(st.phase) == "two-phase")}
        return run

    def case_flash_TP(self, w):
        f, T, P = w.fluid, w.inputs["T"], w.inputs["P"]

        def run():
            st = f.state(T=T, P=P)
            liq = st.liquid if st.liquid is not None else st
            return {"beta": _beta(st), "x_liq": liq.x, "phase": st.phase}
        return run

    def case_PH(self, w):
        f, P, h = w.fluid, w.inputs["P"], w.inputs["h"]

        def run():
            st = f.state(P=P, h=h)
            return {"T": st.T, "beta": _beta(st), "phase": st.phase}
        return run

    def case_UV(self, w):
        f, u, v = w.fluid, w.inputs["u"], w.inputs["v"]

        def run():
            st = f.state(u=u, v=v)
            return {"T": st.T, "P": st.P, "beta": _beta(st), "phase": st.phase}
        return run

    def one_at_a_time(self, w):
        """The batch's first n_peer states, one call per state (for the batch/one ratio)."""
        fn = getattr(self, "case_" + w.what)
        sub = w.peer_inputs()
        n = len(next(iter(sub.values())))
        calls = []
        for i in range(n):
            one = type(w)(**{**w.__dict__, "kind": "one", "inputs": {k: float(v[i]) for k, v in sub.items()}})
            calls.append(fn(one))

        def run():
            outs = [c() for c in calls]
            return {k: np.array([o[k] for o in outs]) for k in outs[0] if k != "phase"}
        return run
