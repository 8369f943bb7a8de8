"""The phase label rule of a single-phase state, :func:`phase_kind` (GAS, LIQUID or SUPERCRITICAL).

Neighbours: :mod:`eosfill.model.state` (the phase codes and the State), :mod:`eosfill.model.mixture`
(the Mixture, whose single-phase states it labels).
"""
from __future__ import annotations

import numpy as np

from eosfill.model import cubic
from eosfill.model.state import GAS, LIQUID, SUPERCRITICAL
from eosfill.constants import R


def phase_kind(fluid, T, P, v_eos, x=None, sol=None):
    """The one label rule of a single-phase state: GAS, LIQUID or SUPERCRITICAL codes.

    Rules, in order (T_pc, P_pc: Kay's-rule pseudo-critical point, Kay 1936):

    1. T ≥ T_pc and P ≥ P_pc: SUPERCRITICAL.
    2. T ≥ T_pc: GAS.  Above the critical temperature a pure fluid has no
       liquid branch; Π of rule 4 is not used there because Soave's α turns
       back up at high reduced temperature (a_T > 0), which flips its sign
       (water SRK at 2519 K and 5.8 kPa, Z = 1.000006, gave Π > 1).
    3. T < T_pc and the cubic has two or more admissible roots (Z > B) at
       (T, P): the branch of the root the state sits on -- the largest root is
       GAS, any smaller one LIQUID (the van der Waals loop's vapour and liquid
       branches).
    4. T < T_pc with one root: Venkatarathnam & Oellrich, Fluid Phase
       Equilib. 301 (2011) 225-233, Eq. 6: Π > 1 LIQUID, else GAS.

    Where it does not apply exactly: mixtures between their true critical
    temperature and T_pc (Kay's rule is an estimate of the mixture's critical
    point), where the label may be the other one; the equilibrium phase split
    itself never depends on this label.

    Parameters
    ----------
    T [K], P [Pa], v_eos [m³/mol] (the cubic's own volume, before any shift)
    x : composition (nc,) or (..., nc); the fluid's when None.
    sol : optional result of :func:`cubic.solve_volume_from_TP` at (T, P, x)
        (its ``roots`` and ``B`` are reused).

    fluid : the :class:`~eosfill.model.mixture.Mixture` of the state.

    The time-resolved layer calls this with (T, P, v) of its content.
    """
    x = fluid.mole_fractions if x is None else np.asarray(x, dtype=float)
    T = np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    v_eos = np.asarray(v_eos, dtype=float)
    p = fluid.params
    if sol is None or "roots" not in sol:
        sol = cubic.solve_volume_from_TP(T, P, x, p, which="stable")
    roots, B = np.asarray(sol["roots"]), np.asarray(sol["B"])
    with np.errstate(invalid="ignore"):
        admissible = np.isfinite(roots) & (roots > B[..., None])
    n_roots = admissible.sum(axis=-1)
    Z = P * v_eos / (R * T)
    Zmax = np.where(admissible, roots, -np.inf).max(axis=-1)
    on_largest = np.abs(Z - Zmax) <= 1e-9 * np.maximum(np.abs(Zmax), 1e-300) + 1e-12
    if "Pi" in sol:   # the compiled kernel's Π at the same state
        Pi = sol["Pi"]
    else:
        if "a_T" in sol:
            a, a_T, b = sol["a"], sol["a_T"], sol["b"]
        else:
            a, a_T = cubic.mixture_a(T, x, p, derivatives=1)[:2]
            b = cubic.mixture_b(x, p)
        with np.errstate(invalid="ignore", divide="ignore"):
            Pi = cubic.phase_identification_parameter(T, v_eos, a, a_T, b, p.model)
    if np.ndim(x) == 1:
        Tpc, Ppc = float(x @ fluid.Tc), float(x @ fluid.Pc)
    else:
        Tpc, Ppc = x @ fluid.Tc, x @ fluid.Pc
    code = np.where(n_roots >= 2, np.where(on_largest, GAS, LIQUID), np.where(Pi > 1.0, LIQUID, GAS))
    code = np.where(T >= Tpc, GAS, code)
    code = np.where((T >= Tpc) & (P >= Ppc), SUPERCRITICAL, code)
    return code.astype(np.int8)
