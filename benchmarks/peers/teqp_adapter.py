"""teqp (NIST): ``canonical_PR`` with eosfill's Tc, Pc, ω and k_ij.

teqp gives the residual Helmholtz energy and its derivatives at (T, ρ, x);
it has no (T, P) density solver, stability test or flash for this use.  So,
written here in the benchmark and labelled as such in the table:

* (T, P) properties: the density by Newton's method on
  P(ρ) = ρRT(1 + Ar01), dP/dρ = RT(1 + 2 Ar01 + Ar02), from the ideal-gas
  density (gas-like and supercritical states, where the cubic has one root);
* (u, v): the temperature by Newton's method on
  u(T) = u°(T) + RT·Ar10,  du/dT = cv°(T) − R·Ar20, with eosfill's ideal-gas
  Cp° polynomial for u° (teqp's ``Ar_{nm}`` are (1/T)^n ∂^n/∂(1/T)^n ρ^m ∂^m/∂ρ^m of αr,
  so u^r/RT = Ar10, Z − 1 = Ar01, cv^r/R = −Ar20).  Single phase only.
"""
from __future__ import annotations

import math

import numpy as np

from . import Unsupported
from .base import PeerAdapter

R_EOSFILL = 8.314462618
T0 = 298.15


class Adapter(PeerAdapter):
    name = "teqp"
    no_reason = {"state_TP": "teqp has no stability test or (T, P) flash",
                 "flash_TP": "teqp has no (T, P) flash",
                 "PH": "teqp has no flash; the issue gives teqp the (u, v) case only"}

    def __init__(self):
        import teqp

        self.teqp = teqp
        self.version = teqp.__version__
        self._models = {}

    def _model(self, f):
        key = f.names
        if key not in self._models:
            self._models[key] = self.teqp.canonical_PR([float(t) for t in f.Tc], [float(p) for p in f.Pc],
                                                       [float(o) for o in f.omega], f.kij.tolist())
        return self._models[key]

    def one_props_TP(self, w):
        m = self._model(w.fluid)
        z = np.array(w.fluid.mole_fractions, dtype=float)
        R = m.get_R(z)

        def g(T, P):
            rho = P / (R * T)  # ideal-gas start
            rho_max = 0.999 / m.get_b(T, z)
            for _ in range(100):
                Ar01 = m.get_Ar01(T, rho, z)
                dP = R * T * (1.0 + 2.0 * Ar01 + m.get_Ar02(T, rho, z))
                step = (rho * R * T * (1.0 + Ar01) - P) / dP
                rho = min(rho - step, rho_max)
                if abs(step) < 1e-12 * rho:
                    break
            else:
                raise Unsupported("density Newton did not converge")
            Zm1 = m.get_Ar01(T, rho, z)
            return {"Z": 1.0 + Zm1, "hR_RT": m.get_Ar10(T, rho, z) + Zm1,
                    "ln_phi": np.log(m.get_fugacity_coefficients(T, rho * z)).tolist()}
        return g

    def one_UV(self, w):
        if w.expect_two_phase:
            raise Unsupported("teqp has no phase split: a single-phase Newton in the two-phase region would "
                              "return a metastable state, not the equilibrium one")
        f = w.fluid
        m = self._model(f)
        z = np.array(f.mole_fractions, dtype=float)
        R = m.get_R(z)
        # eosfill's ideal gas, Cp°/R = sum_k a_k T^k, mixed with the mole fractions
        a = [float(c) for c in (z @ np.asarray(f.cp_coeffs))]
        Rg = R_EOSFILL

        def u0(T):  # u° = h° − RT, h°(T0) = 0
            return Rg * sum(ak * (T ** (k + 1) - T0 ** (k + 1)) / (k + 1) for k, ak in enumerate(a)) - Rg * T

        def cv0(T):
            return Rg * sum(ak * T ** k for k, ak in enumerate(a)) - Rg

        def g(u, v):
            rho = 1.0 / v
            T = 300.0
            for _ in range(50):  # ideal-gas temperature as the start
                step = (u0(T) - u) / cv0(T)
                T -= step
                if abs(step) < 1e-9 * T:
                    break
            for _ in range(100):
                res = u0(T) + R * T * m.get_Ar10(T, rho, z) - u
                step = res / (cv0(T) - R * m.get_Ar20(T, rho, z))
                T -= step
                if abs(step) < 1e-12 * T:
                    break
            else:
                raise Unsupported("temperature Newton did not converge")
            if not math.isfinite(T) or T <= 0:
                raise Unsupported(f"temperature Newton ended at T = {T}")
            return {"T": T, "P": rho * R * T * (1.0 + m.get_Ar01(T, rho, z)), "beta": 1.0}
        return g
