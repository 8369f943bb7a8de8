"""FeOs: ``EquationOfState.peng_robinson`` from PureRecords holding eosfill's Tc,
Pc, ω (and BinaryRecords with its k_ij), with eosfill's ideal-gas Cp°
polynomial as FeOs's DIPPR eq. 100 ideal gas (J/(kmol K), reference 298.15 K,
as eosfill's).

States are checked the way eosfill's ``state`` checks them: a single-phase
``State`` and FeOs's own ``is_stable()`` tangent-plane test, then FeOs's
``tp_flash`` / ``ph_flash`` where it is unstable.  FeOs's State cannot be specified
by (ρ, u) (it answers "Undetermined state: Missing input parameters") and
it has no (u, v) flash, so the (u, v) cases are not done.
"""
from __future__ import annotations

import numpy as np

from . import Unsupported
from .base import PeerAdapter

R_EOSFILL = 8.314462618


class Adapter(PeerAdapter):
    name = "FeOs"
    no_reason = {"UV": "FeOs's State takes no (density, internal energy) pair and FeOs has no (u, v) flash"}

    def __init__(self):
        import feos
        import si_units as si

        self.feos, self.si = feos, si
        self.version = feos.__version__
        self._eos = {}

    def _model(self, f):
        key = f.names
        if key not in self._eos:
            feos = self.feos
            ids = [feos.Identifier(name=n, cas=c.cas) for n, c in zip(f.names, f.components)]
            M = [float(m) * 1e3 for m in f.molar_masses]  # g/mol
            pr = [feos.PureRecord(i, m, tc=float(tc), pc=float(pc), acentric_factor=float(om))
                  for i, m, tc, pc, om in zip(ids, M, f.Tc, f.Pc, f.omega)]
            kij = [feos.BinaryRecord(ids[i], ids[j], k_ij=float(f.kij[i, j]))
                   for i in range(f.nc) for j in range(i + 1, f.nc) if f.kij[i, j] != 0.0]
            ig = [feos.PureRecord(i, m, DIPPR100=[R_EOSFILL * 1e3 * float(a) for a in co])
                  for i, m, co in zip(ids, M, f.cp_coeffs)]
            eos = feos.EquationOfState.peng_robinson(feos.Parameters.from_records(pr, kij))
            self._eos[key] = eos.dippr(feos.Parameters.from_records(ig))
        return self._eos[key]

    def _common(self, w):
        si = self.si
        return self._model(w.fluid), np.array(w.fluid.mole_fractions, dtype=float), si

    def one_props_TP(self, w):
        eos, x, si = self._common(w)
        res = self.feos.Contributions.Residual
        J = si.JOULE / si.MOL

        def g(T, P):
            st = self.feos.State(eos, temperature=T * si.KELVIN, pressure=P * si.PASCAL, composition=x)
            return {"Z": st.compressibility(), "hR_RT": st.molar_enthalpy(res) / J / (R_EOSFILL * T),
                    "ln_phi": np.asarray(st.ln_phi()).tolist()}
        return g

    def one_state_TP(self, w):
        eos, x, si = self._common(w)

        def g(T, P):
            st = self.feos.State(eos, temperature=T * si.KELVIN, pressure=P * si.PASCAL, composition=x)
            if st.is_stable():
                return {"Z": st.compressibility(), "nphase": 1}
            pe = st.tp_flash()
            beta = pe.vapor_phase_fraction
            rho_unit = si.MOL / si.METER ** 3
            v = beta / (pe.vapor.density / rho_unit) + (1.0 - beta) / (pe.liquid.density / rho_unit)
            return {"Z": P * v / (R_EOSFILL * T), "nphase": 2}
        return g

    @staticmethod
    def _beta(pe):
        return pe.vapor_phase_fraction

    def one_flash_TP(self, w):
        eos, x, si = self._common(w)

        def g(T, P):
            st = self.feos.State(eos, temperature=T * si.KELVIN, pressure=P * si.PASCAL, composition=x)
            if st.is_stable():
                return {"beta": 1.0, "x_liq": x.tolist()}
            pe = st.tp_flash()
            return {"beta": self._beta(pe), "x_liq": np.asarray(pe.liquid.molefracs).tolist()}
        return g

    def one_PH(self, w):
        eos, x, si = self._common(w)
        J = si.JOULE / si.MOL

        def g(P, h):
            st = self.feos.State(eos, pressure=P * si.PASCAL, molar_enthalpy=h * J, composition=x)
            if st.is_stable():
                return {"T": st.temperature / si.KELVIN, "beta": 1.0}
            # unstable: FeOs's PH flash, started from the single-phase temperature
            pe = self.feos.PhaseEquilibrium.ph_flash(eos, P * si.PASCAL, h * J, x,
                                                     initial_temperature=st.temperature)
            return {"T": pe.vapor.temperature / si.KELVIN, "beta": self._beta(pe)}
        return g
