"""The cubic families (:data:`MODELS`: PR, PR78, SRK) and the model object
:class:`MixtureParameters` every kernel computes with; equations (C1)-(C4)
of :mod:`eosfill.model.cubic`."""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Callable

import numpy as np

from eosfill.constants import R

SQRT2 = np.sqrt(2.0)


# κ(ω) correlations of the Soave-type alpha function (C3): eosfill.model.kappa
from eosfill.model.kappa import kappa_pr76, kappa_pr78, kappa_srk  # noqa: E402,F401


@dataclass(frozen=True)
class CubicModel:
    """One named instance of the generalised cubic (C1).

    Attributes
    ----------
    name : str
        ``"PR"``, ``"PR78"`` or ``"SRK"``.
    delta1, delta2 : float
        Constants of the attractive term of (C1) [-].
    Omega_a, Omega_b : float
        Critical-point constants of (C2) [-].
    kappa : callable
        κ(ω) of the Soave-type alpha function (C3).
    Zc : float
        Critical compressibility factor the model predicts for every pure fluid.
    citation : str
        Where the model is published.
    """

    name: str
    delta1: float
    delta2: float
    Omega_a: float
    Omega_b: float
    kappa: Callable = field(repr=False)
    Zc: float
    citation: str


# Exact Ωa, Ωb of PR: Ωb is the real root of 64 Ωb³ + 6 Ωb² + 12 Ωb - 1 = 0
# (triple root of (C5) at the critical point; Peng & Robinson 1976 Eqs. 9-10
# print 0.45724, 0.07780); full precision makes the critical point exact.
_PR_OMEGA_A = 0.4572355289213821893834601962251837888504
_PR_OMEGA_B = 0.0777960739038884559718447100373331839711
_SRK_OMEGA_A = 0.4274802335403414043909906940611707345513  # 1/(9(2^(1/3)-1))
_SRK_OMEGA_B = 0.08664034996495772158907020242607611685675  # (2^(1/3)-1)/3

PR = CubicModel(
    "PR", 1.0 + SQRT2, 1.0 - SQRT2, _PR_OMEGA_A, _PR_OMEGA_B, kappa_pr76,
    0.3074013086987039,
    "Peng, D.-Y.; Robinson, D. B. A New Two-Constant Equation of State. "
    "Ind. Eng. Chem. Fundam. 15 (1976) 59-64. doi:10.1021/i160057a011",
)
PR78 = CubicModel(
    "PR78", 1.0 + SQRT2, 1.0 - SQRT2, _PR_OMEGA_A, _PR_OMEGA_B, kappa_pr78,
    0.3074013086987039,
    "Robinson, D. B.; Peng, D.-Y. The Characterization of the Heptanes and "
    "Heavier Fractions for the GPA Peng-Robinson Programs. GPA Research "
    "Report RR-28 (1978)",
)
SRK = CubicModel(
    "SRK", 1.0, 0.0, _SRK_OMEGA_A, _SRK_OMEGA_B, kappa_srk, 1.0 / 3.0,
    "Soave, G. Equilibrium constants from a modified Redlich-Kwong equation "
    "of state. Chem. Eng. Sci. 27 (1972) 1197-1203. "
    "doi:10.1016/0009-2509(72)80096-4",
)

MODELS = {"PR": PR, "PR78": PR78, "SRK": SRK}
"""The cubic families (δ1, δ2, Ωa, Ωb, with the Soave κ(ω) of each plain model).
The named models a Fluid uses (family + α + mixing + translation parts) are
:data:`eosfill.model.models.MODELS`."""


# kind code of Soave's α in eosfill.model.alpha (SOAVE there; a test keeps them equal)
ALPHA_SOAVE = 0


@dataclass(frozen=True, eq=False)
class MixtureParameters:
    """The model every kernel computes with: a small frozen object of arrays.

    Solvers never know which cubic they solve: the family (δ1, δ2, Ωa, Ωb),
    the α function (kind code and per-component parameters), the mixing
    parameters (k_ij) and the volume translation (c_i) are all data here.
    The compiled kernels (:mod:`eosfill.model.cubic_kernels`) take the tuple
    :attr:`kernel_model`.

    Attributes
    ----------
    model : CubicModel
        The named instance (PR, PR78, SRK) the family constants come from.
    Tc, Pc, omega : ndarray, shape (nc,)
        Critical temperature [K], critical pressure [Pa], acentric factor [-].
    kij : ndarray, shape (nc, nc)
        Binary interaction parameters, symmetric, zero diagonal [-].
    ac : ndarray, shape (nc,)
        a_c,i of (C2) [Pa m⁶/mol²].
    b : ndarray, shape (nc,)
        b_i of (C2) [m³/mol].
    kappa : ndarray, shape (nc,)
        κ_i of (C3) [-] (the Soave α's parameter; p0 of ``alpha_params``);
        NaN when the model's α is not Soave's.
    delta1, delta2, Omega_a, Omega_b : float
        Family constants of (C1), (C2) [-].
    alpha_kind : int
        α function code of :mod:`eosfill.model.alpha` (0: Soave (C3)).
    alpha_params : ndarray, shape (nc, 3)
        The α function's per-component parameters (Soave: κ, 0, 0).
    c : ndarray, shape (nc,)
        Volume translation c_i [m³/mol] (v = v_eos - Σ x_i c_i).
    """

    model: CubicModel
    Tc: np.ndarray
    Pc: np.ndarray
    omega: np.ndarray
    kij: np.ndarray
    ac: np.ndarray
    b: np.ndarray
    kappa: np.ndarray
    delta1: float = 0.0
    delta2: float = 0.0
    Omega_a: float = 0.0
    Omega_b: float = 0.0
    alpha_kind: int = ALPHA_SOAVE
    alpha_params: np.ndarray = None
    c: np.ndarray = None

    @classmethod
    def build(cls, model: CubicModel, Tc, Pc, omega, kij, c=None, alpha_kind=None, alpha_params=None):
        """Parameters of ``model`` for components (Tc, Pc, ω, k_ij); Soave α (C3)
        with the model's κ(ω) unless another α kind and its (nc, 3) parameters
        are given; translation ``c`` [m³/mol] (default none)."""
        Tc = np.asarray(Tc, dtype=float)
        Pc = np.asarray(Pc, dtype=float)
        omega = np.asarray(omega, dtype=float)
        kij = np.asarray(kij, dtype=float)
        ac = model.Omega_a * R**2 * Tc**2 / Pc  # (C2)
        b = model.Omega_b * R * Tc / Pc  # (C2)
        kappa = np.asarray(model.kappa(omega), dtype=float)
        if alpha_kind is not None and int(alpha_kind) != ALPHA_SOAVE:
            kappa = np.full_like(kappa, np.nan)   # no Soave κ in this model: never used silently
        if alpha_kind is None:
            alpha_kind = ALPHA_SOAVE
            alpha_params = np.stack([kappa, np.zeros_like(kappa), np.zeros_like(kappa)], axis=-1)
        alpha_params = np.array(alpha_params, dtype=float).reshape(Tc.shape[0], 3)
        c = np.zeros(Tc.shape[0]) if c is None else np.array(c, dtype=float)
        for arr in (Tc, Pc, omega, kij, ac, b, kappa, alpha_params, c):
            arr.setflags(write=False)
        return cls(model, Tc, Pc, omega, kij, ac, b, kappa, model.delta1, model.delta2,
                   model.Omega_a, model.Omega_b, int(alpha_kind), alpha_params, c)

    @cached_property
    def kernel_model(self):
        """The model as the compiled kernels take it (private writable copies):
        (δ1, δ2, Tc, √a_c, b, 1 - k_ij, α kind, α parameters, c)."""
        def f(a):
            return np.array(a, dtype=np.float64, order="C")
        return (float(self.delta1), float(self.delta2), f(self.Tc), f(np.sqrt(self.ac)), f(self.b),
                f(1.0 - self.kij), int(self.alpha_kind), f(self.alpha_params), f(self.c))
