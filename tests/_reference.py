"""Outside reference set-ups shared by the tests (test-only; thermo 0.6.1).

thermo is given exactly our constants (Tc, Pc, ω, M, k_ij) and our ideal-gas
Cp° polynomial (as its ``poly_fit``), so both codes solve the same equations.
"""
import pytest


def thermo_eos_kwargs(g):
    """CEOSGas/CEOSLiquid keyword arguments for PRMIX with the Fluid's data."""
    thermo = pytest.importorskip("thermo")
    cpg = [thermo.HeatCapacityGas(poly_fit=(1.0, 5000.0, list(8.314462618 * c[::-1]))) for c in g.cp_coeffs]
    return dict(eos_kwargs=dict(Tcs=list(g.Tc), Pcs=list(g.Pc), omegas=list(g.omega), kijs=g.kij.tolist()),
                HeatCapacityGases=cpg)


def thermo_flashvl(g):
    """thermo's FlashVL (PRMIX gas and liquid) for a mixture Fluid."""
    pytest.importorskip("thermo")
    from thermo import CEOSGas, CEOSLiquid, ChemicalConstantsPackage, FlashVL, PRMIX

    consts = ChemicalConstantsPackage(Tcs=list(g.Tc), Pcs=list(g.Pc), omegas=list(g.omega),
                                      MWs=list(g.molar_masses * 1e3), CASs=[c.cas for c in g.components])
    kw = thermo_eos_kwargs(g)
    return FlashVL(consts, None, liquid=CEOSLiquid(PRMIX, **kw), gas=CEOSGas(PRMIX, **kw))
