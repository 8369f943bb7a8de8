"""NeqSim (Java, through its Python package): ``SystemPrEos`` with eosfill's Tc,
Pc, ω set on every component of every phase and eosfill's k_ij in the classic
mixing rule.  Needs a Java runtime; skipped with the reason if it does not load.

NeqSim's own constants of the cubic (Ωa, Ωb, R) and its ideal-gas Cp° are
its own, so its figures differ from eosfill's at ~1e-5 and more; the inverse
cases are round trips: NeqSim first computes its own h, or u and v, at the
case's origin state (not timed), then its PH or VU flash recovers T (and P),
each timed call starting from the same 288.15 K, 50 bar.
"""
from __future__ import annotations

from . import Unsupported
from .base import PeerAdapter

_NAMES = {"methane": "methane", "ethane": "ethane", "propane": "propane", "nitrogen": "nitrogen",
          "carbon dioxide": "CO2"}
T_START, P_START_BAR = 288.15, 50.0


class Adapter(PeerAdapter):
    name = "NeqSim"
    no_reason = {"props_TP": "NeqSim evaluates properties after a TP flash (timed under state(T,P))"}

    def __init__(self):
        import neqsim
        from neqsim import jneqsim

        self.j = jneqsim
        self.version = getattr(neqsim, "__version__", None) or _dist_version("neqsim")
        self._systems = {}

    def _system(self, w):
        key = w.id
        if key in self._systems:
            return self._systems[key]
        f = w.fluid
        j = self.j
        S = j.thermo.system.SystemPrEos(T_START, P_START_BAR)
        for n, x in zip(f.names, f.mole_fractions):
            if n not in _NAMES:
                raise Unsupported(f"no NeqSim name for {n}")
            S.addComponent(_NAMES[n], float(x))
        for k in range(S.getMaxNumberOfPhases()):
            ph = S.getPhase(k)
            for i in range(f.nc):
                c = ph.getComponent(i)
                c.setTC(float(f.Tc[i]))
                c.setPC(float(f.Pc[i]) / 1e5)
                c.setAcentricFactor(float(f.omega[i]))
        S.setMixingRule("classic")
        if f.nc > 1:
            for k in range(S.getMaxNumberOfPhases()):
                mr = S.getPhase(k).getMixingRule()
                for i in range(f.nc):
                    for jj in range(f.nc):
                        if i != jj:
                            mr.setBinaryInteractionParameter(i, jj, float(f.kij[i, jj]))
        ops = j.thermodynamicoperations.ThermodynamicOperations(S)
        self._systems[key] = (S, ops)
        return S, ops

    @staticmethod
    def _beta(S):
        if S.getNumberOfPhases() < 2:
            return 1.0
        return float(S.getBeta())  # molar fraction of phase 0, the gas after a flash

    def one_state_TP(self, w):
        S, ops = self._system(w)

        def g(T, P):
            S.setTemperature(T)
            S.setPressure(P / 1e5)
            ops.TPflash()
            S.initProperties()
            return {"Z": float(S.getZ()), "nphase": int(S.getNumberOfPhases())}
        return g

    def one_flash_TP(self, w):
        S, ops = self._system(w)
        nc = w.fluid.nc
        z = [float(x) for x in w.fluid.mole_fractions]

        def g(T, P):
            S.setTemperature(T)
            S.setPressure(P / 1e5)
            ops.TPflash()
            if S.getNumberOfPhases() < 2:
                return {"beta": 1.0, "x_liq": z}
            liq = S.getPhase(1)
            return {"beta": self._beta(S), "x_liq": [float(liq.getComponent(i).getx()) for i in range(nc)]}
        return g

    def one_PH(self, w):
        S, ops = self._system(w)
        S.setTemperature(w.origin["T"])
        S.setPressure(w.origin["P"] / 1e5)
        ops.TPflash()
        S.initProperties()
        h_own = float(S.getEnthalpy("J/mol"))

        def g(P, h):  # h is eosfill's; NeqSim recovers T from its own h at the same state
            S.setTemperature(T_START)
            S.setPressure(P / 1e5)
            ops.PHflash(h_own, "J/mol")
            return {"T": float(S.getTemperature()), "beta": self._beta(S)}
        return g

    def one_UV(self, w):
        S, ops = self._system(w)
        if "P" not in w.origin:
            raise Unsupported("the round trip needs NeqSim's own u at the case's (T, v); "
                              "not set up for states given by (T, v)")
        S.setTemperature(w.origin["T"])
        S.setPressure(w.origin["P"] / 1e5)
        ops.TPflash()
        S.initProperties()
        v_own, u_own = float(S.getVolume("m3")), float(S.getInternalEnergy("J"))

        def g(u, v):
            S.setTemperature(T_START)
            S.setPressure(P_START_BAR)
            ops.VUflash(v_own, u_own, "m3", "J")
            return {"T": float(S.getTemperature()), "P": float(S.getPressure()) * 1e5, "beta": self._beta(S)}
        return g


def _dist_version(name):
    from importlib.metadata import version

    return version(name)
