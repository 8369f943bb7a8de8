"""thermo (Caleb Bell's ChEDL): PRMIX for properties, FlashVL / FlashPureVLS for
the flashes, given eosfill's Tc, Pc, ω, k_ij and its ideal-gas Cp° polynomial
(as thermo's ``poly_fit``), so that both solve the same equations."""
from __future__ import annotations

import math

from . import Unsupported
from .base import PeerAdapter

R = 8.314462618


class Adapter(PeerAdapter):
    name = "thermo"

    def __init__(self):
        import thermo

        self.version = thermo.__version__
        self._flashers = {}

    # eosfill Fluid -> thermo objects -------------------------------------------
    @staticmethod
    def _consts(f):
        return dict(Tcs=[float(t) for t in f.Tc], Pcs=[float(p) for p in f.Pc],
                    omegas=[float(o) for o in f.omega], kijs=[[float(k) for k in r] for r in f.kij])

    def _flasher(self, w):
        key = (w.id, tuple(w.fluid.names))
        if key in self._flashers:
            return self._flashers[key]
        from thermo import (CEOSGas, CEOSLiquid, ChemicalConstantsPackage, FlashPureVLS, FlashVL,
                            HeatCapacityGas, PRMIX)

        f = w.fluid
        c = self._consts(f)
        consts = ChemicalConstantsPackage(Tcs=c["Tcs"], Pcs=c["Pcs"], omegas=c["omegas"],
                                          MWs=[float(m) * 1e3 for m in f.molar_masses],
                                          CASs=[comp.cas for comp in f.components])
        # the same Cp° polynomial; thermo's poly_fit takes the highest power first
        cpg = [HeatCapacityGas(poly_fit=(1.0, 5000.0, [R * float(a) for a in co[::-1]])) for co in f.cp_coeffs]
        kw = dict(eos_kwargs=c, HeatCapacityGases=cpg)
        gas, liq = CEOSGas(PRMIX, **kw), CEOSLiquid(PRMIX, **kw)
        if f.nc == 1:
            fl = FlashPureVLS(consts, None, gas=gas, liquids=[liq], solids=[])
        else:
            fl = FlashVL(consts, None, liquid=liq, gas=gas)
        self._flashers[key] = fl
        return fl

    # cases ------------------------------------------------------------------------
    def one_props_TP(self, w):
        from thermo import PRMIX

        c = self._consts(w.fluid)
        zs = [float(z) for z in w.fluid.mole_fractions]

        def g(T, P):
            eos = PRMIX(T=T, P=P, zs=zs, **c)
            # the root of lowest Gibbs energy, as eosfill's "stable"
            sfx = "g" if hasattr(eos, "Z_g") else "l"
            if hasattr(eos, "Z_g") and hasattr(eos, "Z_l") and eos.G_dep_l < eos.G_dep_g:
                sfx = "l"
            return {"Z": getattr(eos, "Z_" + sfx), "hR_RT": getattr(eos, "H_dep_" + sfx) / (R * T),
                    "ln_phi": getattr(eos, "lnphis_" + sfx)}
        return g

    def one_state_TP(self, w):
        fl = self._flasher(w)
        zs = [float(z) for z in w.fluid.mole_fractions]
        pure = w.fluid.nc == 1

        def g(T, P):
            r = fl.flash(T=T, P=P) if pure else fl.flash(T=T, P=P, zs=zs)
            return {"Z": r.Z(), "nphase": r.phase_count}
        return g

    def one_flash_TP(self, w):
        fl = self._flasher(w)
        zs = [float(z) for z in w.fluid.mole_fractions]

        def g(T, P):
            r = fl.flash(T=T, P=P, zs=zs)
            if r.phase_count < 2:
                return {"beta": 1.0, "x_liq": list(zs), "phase": "one phase"}
            return {"beta": r.VF, "x_liq": list(r.liquid0.zs), "phase": "two-phase"}
        return g

    def one_PH(self, w):
        fl = self._flasher(w)
        zs = [float(z) for z in w.fluid.mole_fractions]

        def g(P, h):
            r = fl.flash(P=P, H=h, zs=zs)
            return {"T": r.T, "beta": r.VF if r.phase_count == 2 else 1.0}
        return g

    def one_UV(self, w):
        fl = self._flasher(w)
        zs = [float(z) for z in w.fluid.mole_fractions]
        pure = w.fluid.nc == 1

        def g(u, v):
            r = fl.flash(U=u, V=v) if pure else fl.flash(U=u, V=v, zs=zs)
            if not (math.isfinite(r.T) and math.isfinite(r.P)):
                raise Unsupported("thermo returned a non-finite state")
            return {"T": r.T, "P": r.P, "beta": r.VF if r.phase_count == 2 else 1.0}
        return g
