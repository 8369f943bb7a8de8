"""CoolProp's cubic backend ("PR"), through its low-level AbstractState.

CoolProp's own cubic library carries its own Tc, Pc and ω, which differ a little
from eosfill's (the differences are listed in this adapter's ``info`` and
printed by the runner).  So that both compute the same thing, eosfill's
constants and ideal-gas Cp° polynomial are loaded as new cubic fluids through
CoolProp's documented ``add_fluids_as_JSON("PR", ...)`` (named ``EOSFILL-<name>``;
the ideal gas as the terms IdealGasHelmholtzLead, LogTau and CP0PolyT, with
reference 298.15 K, as eosfill), and the k_ij through
``set_binary_interaction_double``.
"""
from __future__ import annotations

import json
import math

from . import Unsupported
from .base import PeerAdapter

_REGISTERED = set()
# CoolProp's names of its built-in fluids, for the comparison of constants only
_BUILTIN = {"methane": "Methane", "ethane": "Ethane", "propane": "n-Propane", "nitrogen": "Nitrogen",
            "carbon dioxide": "CarbonDioxide"}


class Adapter(PeerAdapter):
    name = "CoolProp"

    def __init__(self):
        import CoolProp
        import CoolProp.CoolProp as CP

        self.CP = CP
        self.version = CoolProp.__version__
        self._states = {}
        self.info = {}

    def _register(self, f):
        CP = self.CP
        new = []
        for comp, Tc, Pc, om, M, cp in zip(f.components, f.Tc, f.Pc, f.omega, f.molar_masses, f.cp_coeffs):
            name = "EOSFILL-" + comp.name.replace(" ", "_")
            if name in _REGISTERED:
                continue
            new.append({
                "name": name, "CAS": "EOSFILL-" + comp.cas, "aliases": [],
                "Tc": float(Tc), "Tc_units": "K", "pc": float(Pc), "pc_units": "Pa",
                "acentric": float(om), "molemass": float(M), "molemass_units": "kg/mol",
                # ideal gas: a0 = ln(delta) + a1 + a2 tau + (c0 - 1) ln(tau) + CP0PolyT terms
                # with Cp°/R = sum_k a_k T^k (eosfill's polynomial), reference T0 = 298.15 K
                "alpha0": [{"type": "IdealGasHelmholtzLead", "a1": 0.0, "a2": 0.0},
                           {"type": "IdealGasHelmholtzLogTau", "a": -1.0},
                           {"type": "IdealGasHelmholtzCP0PolyT", "c": [float(a) for a in cp],
                            "t": [0.0, 1.0, 2.0, 3.0, 4.0], "Tc": float(Tc), "T0": 298.15}],
            })
            _REGISTERED.add(name)
        if new:
            CP.add_fluids_as_JSON("PR", json.dumps(new))
        # CoolProp's built-in constants, compared with eosfill's (reported, not used)
        for comp, Tc, Pc, om in zip(f.components, f.Tc, f.Pc, f.omega):
            if comp.name in _BUILTIN and comp.name not in self.info:
                try:
                    b = CP.AbstractState("PR", _BUILTIN[comp.name])
                    self.info[comp.name] = dict(
                        Tc=b.get_fluid_constant(0, CP.iT_critical) / Tc - 1,
                        Pc=b.get_fluid_constant(0, CP.iP_critical) / Pc - 1,
                        omega=b.get_fluid_constant(0, CP.iacentric_factor) - om)
                except Exception:  # noqa: BLE001 - information only
                    pass

    def _state(self, w):
        key = (w.fluid.names, tuple(float(x) for x in w.fluid.mole_fractions))
        if key not in self._states:
            f = w.fluid
            self._register(f)
            CP = self.CP
            AS = CP.AbstractState("PR", "&".join("EOSFILL-" + n.replace(" ", "_") for n in f.names))
            if f.nc > 1:
                AS.set_mole_fractions([float(x) for x in f.mole_fractions])
                for i in range(f.nc):
                    for j in range(f.nc):
                        if i != j:
                            AS.set_binary_interaction_double(i, j, "kij", float(f.kij[i, j]))
            self._states[key] = AS
        return self._states[key]

    def notes_for_report(self):
        if not self.info:
            return []
        worst = max(self.info.items(), key=lambda kv: abs(kv[1]["omega"]))
        return [f"CoolProp's built-in PR constants differ from eosfill's (largest: ω of {worst[0]} "
                f"by {worst[1]['omega']:+.2e}, Tc rel {max(abs(v['Tc']) for v in self.info.values()):.1e}, "
                f"Pc rel {max(abs(v['Pc']) for v in self.info.values()):.1e}); eosfill's constants were "
                f"loaded as custom fluids instead"]

    # cases ------------------------------------------------------------------------
    def one_props_TP(self, w):
        CP, AS, nc = self.CP, self._state(w), w.fluid.nc

        def g(T, P):
            AS.specify_phase(CP.iphase_gas)  # a single-phase evaluation, no phase test
            AS.update(CP.PT_INPUTS, P, T)
            return {"Z": AS.compressibility_factor(), "hR_RT": AS.hmolar_residual() / (AS.gas_constant() * T),
                    "ln_phi": [math.log(AS.fugacity_coefficient(i)) for i in range(nc)]}
        return g

    def one_state_TP(self, w):
        CP, AS = self.CP, self._state(w)

        def g(T, P):
            AS.unspecify_phase()
            AS.update(CP.PT_INPUTS, P, T)
            return {"Z": AS.compressibility_factor(), "nphase": 2 if AS.phase() == CP.iphase_twophase else 1}
        return g

    def _two_phase(self, AS):
        """(vapour fraction if two phases else 1, two phases?)"""
        q = AS.Q()
        if AS.phase() != self.CP.iphase_twophase or not (0.0 <= q <= 1.0):
            return 1.0, False
        return q, True

    def one_flash_TP(self, w):
        CP, AS = self.CP, self._state(w)
        z = [float(x) for x in w.fluid.mole_fractions]

        def g(T, P):
            AS.unspecify_phase()
            AS.update(CP.PT_INPUTS, P, T)
            beta, two = self._two_phase(AS)
            return {"beta": beta, "x_liq": list(AS.mole_fractions_liquid()) if two else z}
        return g

    def one_PH(self, w):
        CP, AS = self.CP, self._state(w)

        def g(P, h):
            AS.unspecify_phase()
            AS.update(CP.HmolarP_INPUTS, h, P)
            return {"T": AS.T(), "beta": self._two_phase(AS)[0]}
        return g

    def one_UV(self, w):
        CP, AS = self.CP, self._state(w)

        def g(u, v):
            AS.unspecify_phase()
            AS.update(CP.DmolarUmolar_INPUTS, 1.0 / v, u)
            if not math.isfinite(AS.T()):
                raise Unsupported("CoolProp returned a non-finite T")
            return {"T": AS.T(), "P": AS.p(), "beta": self._two_phase(AS)[0]}
        return g
