"""The work every library is timed on: fluids, state points and batches.

Each :class:`Work` says what is computed (``what``), from which inputs, and
which values are compared between the libraries (``keys``).  The inputs of
the inverse cases ((u, v), (P, h)) are made by eosfill at a known (T, P) or
(T, v) (``origin``); every peer that shares eosfill's ideal-gas Cp° (thermo,
CoolProp, teqp, FeOs are given the same polynomial) receives the same u, v or
h; NeqSim, whose ideal-gas part cannot be matched, first computes its own u
or h at ``origin`` (a round trip, stated in its footnote).

Demo state points (our own choice): a lean natural gas of five components
and a richer one that splits into two phases at 220 K, 4 MPa.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

R = 8.314462618  # J/(mol K), the value eosfill uses (CODATA 2018, rounded)

LEAN = {"methane": 0.85, "ethane": 0.07, "propane": 0.03, "nitrogen": 0.03, "carbon dioxide": 0.02}
RICH = {"methane": 0.70, "ethane": 0.10, "propane": 0.10, "nitrogen": 0.05, "carbon dioxide": 0.05}


@dataclass
class Work:
    id: str
    title: str
    what: str                   # "props_TP", "state_TP", "flash_TP", "PH", "UV"
    composition: dict
    kind: str = "one"           # "one" state, or "batch" (per-state time reported)
    inputs: dict = field(default_factory=dict)   # arrays for batches, floats for one state
    origin: dict = field(default_factory=dict)   # the (T, P) or (T, v) the inputs come from
    keys: tuple = ()
    target: str = ""
    target_s: float | None = None  # the target as seconds (per state for batches), if numeric
    n_peer: int = 1             # batches: peers do the first n_peer states one at a time
    check: object = None        # optional independent check of eosfill's answer: w -> (values, label)
    fluid: object = None        # the eosfill Fluid (constants for every library)
    expect_two_phase: bool = False

    @property
    def pure(self):
        return len(self.composition) == 1

    def peer_inputs(self):
        """The inputs a peer does (the first n_peer states of a batch)."""
        if self.kind == "one":
            return self.inputs
        return {k: np.asarray(v)[: self.n_peer] for k, v in self.inputs.items()}


def random_TP(n, seed=20240601):
    """n (T, P): T 260-450 K, P 0.1-35 MPa log-uniform: single-phase gas and
    supercritical states of the lean gas, where vessels are filled."""
    rng = np.random.default_rng(seed)
    return rng.uniform(260.0, 450.0, n), 10.0 ** rng.uniform(5.0, np.log10(35e6), n)


def two_phase_TP(n, seed=7):
    """n (T, P) inside the rich gas's two-phase region (210-230 K, 3-5 MPa)."""
    rng = np.random.default_rng(seed)
    return rng.uniform(210.0, 230.0, n), rng.uniform(3.0e6, 5.0e6, n)


def co2_dome_check(w):
    """Independent check where no peer solves the case: inside the dome the
    (u, v) state is at the model's saturation pressure, with the vapour
    fraction of the lever rule on the saturated volumes.  Reference: thermo's
    pure-fluid PR (``PR.Psat`` polished, ``V_l``, ``V_g``) with the same Tc, Pc, ω;
    T is the origin's."""
    from thermo import PR

    f, T, v = w.fluid, w.origin["T"], w.origin["v"]
    kw = dict(Tc=float(f.Tc[0]), Pc=float(f.Pc[0]), omega=float(f.omega[0]))
    Ps = PR(T=T, P=1e6, **kw).Psat(T, polish=True)
    sat = PR(T=T, P=Ps, **kw)
    return {"T": T, "P": Ps, "beta": (v - sat.V_l) / (sat.V_g - sat.V_l)}, "thermo PR Psat + lever rule"


def build(quick=False):
    """The list of cases; the eosfill Fluid and the derived inputs are filled in here."""
    import eosfill

    n_batch = 20_000 if quick else 100_000
    n_peer = 100 if quick else 1000
    n_2p = 200 if quick else 1000
    n_2p_peer = 10 if quick else 50

    lean = eosfill.Fluid(LEAN, model="PR")
    rich = eosfill.Fluid(RICH, model="PR")
    n2 = eosfill.Fluid("nitrogen", model="PR")
    co2 = eosfill.Fluid("carbon dioxide", model="PR")
    Tb, Pb = random_TP(n_batch)
    T2, P2 = two_phase_TP(n_2p)

    cases = []
    cases.append(Work("n2_tp_1", "pure N2 props (T,P), one state", "props_TP", {"nitrogen": 1.0},
                      inputs=dict(T=300.0, P=20e6), keys=("Z", "hR_RT", "ln_phi"),
                      target="≤ 5 µs", target_s=5e-6, fluid=n2))
    cases.append(Work("tp_props_1", "props (T,P), one state", "props_TP", LEAN,
                      inputs=dict(T=300.0, P=10e6), keys=("Z", "hR_RT", "ln_phi"),
                      target="≤ fastest peer", fluid=lean))
    cases.append(Work("tp_props_batch", f"props (T,P), batch {n_batch // 1000}k, per state", "props_TP", LEAN,
                      kind="batch", inputs=dict(T=Tb, P=Pb), keys=("Z", "hR_RT", "ln_phi"),
                      target="≤ 0.15 µs/state", target_s=0.15e-6, n_peer=n_peer, fluid=lean))
    cases.append(Work("tp_state_1", "state(T,P) with stability, one state", "state_TP", LEAN,
                      inputs=dict(T=300.0, P=10e6), keys=("Z", "nphase"), target="≤ fastest peer", fluid=lean))
    cases.append(Work("tp_state_batch", f"state(T,P) with stability, batch {n_batch // 1000}k, per state",
                      "state_TP", LEAN, kind="batch", inputs=dict(T=Tb, P=Pb), keys=("Z", "nphase"),
                      target="≤ 2 µs/state", target_s=2e-6, n_peer=n_peer, fluid=lean))

    s = n2.state(T=300.0, P=20e6)
    cases.append(Work("n2_uv_1", "pure N2 (u,v), one state", "UV", {"nitrogen": 1.0},
                      inputs=dict(u=s.u, v=s.v), origin=dict(T=300.0, P=20e6), keys=("T", "P"),
                      target="≤ 5 µs", target_s=5e-6, fluid=n2))
    v_dome = 0.0440098 / 400.0  # 400 kg/m3 at 280 K: between the saturated liquid and vapour
    s = co2.state(T=280.0, v=v_dome)
    cases.append(Work("co2_uv_dome_1", "pure CO2 (u,v) in the dome, one state", "UV", {"carbon dioxide": 1.0},
                      inputs=dict(u=s.u, v=s.v), origin=dict(T=280.0, v=v_dome), keys=("T", "P", "beta"),
                      target="≤ fastest peer", fluid=co2, expect_two_phase=True, check=co2_dome_check))
    cases.append(Work("flash2_1", "TP flash, two phases (rich gas 220 K, 4 MPa)", "flash_TP", RICH,
                      inputs=dict(T=220.0, P=4e6), keys=("beta", "x_liq"), target="≤ 100 µs", target_s=100e-6,
                      fluid=rich, expect_two_phase=True))
    s = lean.state(T=250.0, P=5e6)
    cases.append(Work("ph1_1", "(P,h), one phase, one state", "PH", LEAN, inputs=dict(P=5e6, h=s.h),
                      origin=dict(T=250.0, P=5e6), keys=("T", "beta"), target="≤ 100 µs", target_s=100e-6,
                      fluid=lean))
    s = rich.state(T=220.0, P=4e6)
    cases.append(Work("ph2_1", "(P,h), two phases (rich gas), one state", "PH", RICH, inputs=dict(P=4e6, h=s.h),
                      origin=dict(T=220.0, P=4e6), keys=("T", "beta"), target="≤ 1 ms", target_s=1e-3,
                      fluid=rich, expect_two_phase=True))
    s = lean.state(T=300.0, P=10e6)
    cases.append(Work("uv1_1", "(u,v), one phase, one state", "UV", LEAN, inputs=dict(u=s.u, v=s.v),
                      origin=dict(T=300.0, P=10e6), keys=("T", "P", "beta"), target="≤ 100 µs", target_s=100e-6,
                      fluid=lean))
    s = rich.state(T=220.0, P=4e6)
    cases.append(Work("uv2_1", "(u,v), two phases (rich gas), one state", "UV", RICH, inputs=dict(u=s.u, v=s.v),
                      origin=dict(T=220.0, P=4e6), keys=("T", "P", "beta"), target="≤ 1 ms", target_s=1e-3,
                      fluid=rich, expect_two_phase=True))
    cases.append(Work("flash2_batch", f"TP flash, two phases, batch {n_2p}, per state", "flash_TP", RICH,
                      kind="batch", inputs=dict(T=T2, P=P2), keys=("beta", "x_liq"),
                      target="≥ 20× one at a time", n_peer=n_2p_peer, fluid=rich, expect_two_phase=True))
    return cases
