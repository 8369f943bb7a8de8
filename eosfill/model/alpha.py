"""α functions of the generalised cubic, as swappable parts.

The attractive parameter of component i is a_i(T) = a_c,i α_i(T) (label C2
and C3 of :mod:`eosfill.model.cubic`).  This module holds the published α
functions, each as one compiled (numba) function of one state in the
papers' symbols returning (α, dα/dT, d²α/dT²):

=====================  ======  ==========================================
function               kind    α(T), Tr = T/Tc
=====================  ======  ==========================================
:func:`soave_alpha`    SOAVE   [1 + κ (1 - √Tr)]²                    (A1)
:func:`twu91_alpha`    TWU91   Tr^(N(M-1)) exp[L (1 - Tr^(N M))]     (A2)
:func:`mathias_        MATHIAS [1 + c1 x + c2 x² + c3 x³]², x = 1 - √Tr,
copeman_alpha`         _COPEMAN  below Tc; [1 + c1 x]² above Tc      (A3)
=====================  ======  ==========================================

Sources
-------
(A1) Soave, Chem. Eng. Sci. 27 (1972) 1197-1203, Eq. 13 (κ(ω) Eq. 15);
     with Peng & Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64, Eq. 18
     (PR76 κ) and Robinson & Peng, GPA RR-28 (1978) (PR78 κ).  The κ(ω)
     correlations live once, in :mod:`eosfill.model.kappa` (``kappa_pr76``,
     ``kappa_pr78``, ``kappa_srk``); here κ is a per-component parameter.
(A2) Twu, Bluck, Cunningham & Coon, Fluid Phase Equilib. 69 (1991) 33-50,
     doi:10.1016/0378-3812(91)90024-2 (the three-parameter α of their
     Eq. 8 as reprinted by later papers; equation number from memory, not
     checked against the paper).
(A3) Mathias & Copeman, Fluid Phase Equilib. 13 (1983) 91-108,
     doi:10.1016/0378-3812(83)80084-3.  Above Tc the paper keeps only the
     first term (the Soave form with κ = c1), so that α stays monotone and
     positive at high temperature; this module uses that form.  thermo 0.6.1
     calls it ``Mathias_Copeman_a_alpha`` / ``Mathias_Copeman_original_alpha_pure``
     (the paper's form); its ``Mathias_Copeman_untruncated_*`` keeps all
     three terms above Tc and is *not* the paper's form.  (The statement about
     the paper's supercritical branch is from memory; thermo's docstring of
     the truncated form cites the same paper.)  α'' is discontinuous at Tc
     (α and α' are continuous), as in the paper.
(A4) tc-PR and tc-RK: Le Guennec, Privat & Jaubert, Fluid Phase Equilib.
     429 (2016) 301-312, doi:10.1016/j.fluid.2016.09.003: the Twu α (A2)
     with N = 2 and L, M quadratic in ω,

         tc-PR:  L = 0.1290 ω² + 0.6039 ω + 0.0877
                 M = 0.1760 ω² - 0.2600 ω + 0.8884
         tc-RK:  L = 0.0947 ω² + 0.6871 ω + 0.1508
                 M = 0.1615 ω² - 0.2349 ω + 0.8876

     (coefficients as printed in thermo 0.6.1's ``PRTranslatedConsistent``
     and ``SRKTranslatedConsistent``, which cite the paper; the paper's own
     equation numbers could not be checked here, its text was not at hand).
     The correlations are evaluated with ω clipped to the range the
     generalisation was made for (:data:`eosfill.model.translation.TC_OMEGA_RANGE`),
     with a :class:`~eosfill.errors.RangeWarning` when clipping happens.

Derivatives: for √α = s(T), α' = 2 s s', α'' = 2 (s'² + s s''); for (A2),
with g = N(M-1) - L N M Tr^(NM) = T d ln α/dT,

    α' = α g / T ,   α'' = α [g² - g - L (N M)² Tr^(NM)] / T²

Every kernel is ``@njit(cache=True)``: importing this module imports numba
(and compiles on first call, cached on disk); ``import eosfill`` does not
import this module.

A model holds one ``alpha_kind`` (int) and an ``alpha_params`` array of
shape (nc, 3) (p0, p1, p2 per component: κ, 0, 0 for SOAVE; L, M, N for
TWU91; c1, c2, c3 for MATHIAS_COPEMAN).  :func:`alpha_T` evaluates any kind
from one row, :func:`alpha_components` all rows at one T.  The small frozen
:class:`AlphaPart` objects say which kind, which source and how the
(nc, 3) array is built from the component data.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from numba import njit

from . import kappa as cubic   # the κ(ω) correlations (C3)
from ..errors import InputError
from .translation import le_guennec_omega

# kind codes of the α functions (stored in a model as one int)
SOAVE = 0
TWU91 = 1
MATHIAS_COPEMAN = 2
KIND_NAMES = {SOAVE: "Soave 1972", TWU91: "Twu et al. 1991", MATHIAS_COPEMAN: "Mathias & Copeman 1983"}


# --------------------------------------------------------------------------
# one-state kernels, in the papers' symbols
# --------------------------------------------------------------------------
@njit(cache=True)
def soave_alpha(T, Tc, kappa):
    """Soave's α (A1) and its first two temperature derivatives.

    .. math:: \\alpha = [1 + \\kappa (1 - \\sqrt{T/T_c})]^2

    Soave, Chem. Eng. Sci. 27 (1972) 1197-1203, Eq. 13.

    Parameters
    ----------
    T : float
        Temperature [K].
    Tc : float
        Critical temperature [K].
    kappa : float
        κ of the model's κ(ω) correlation [-].

    Returns
    -------
    alpha : float
        α [-].
    dalpha_dT : float
        dα/dT [1/K].
    d2alpha_dT2 : float
        d²α/dT² [1/K²].

    Examples
    --------
    >>> soave_alpha(300.0, 300.0, 0.5)[0]
    1.0
    """
    sqrtTTc = np.sqrt(T * Tc)
    s = 1.0 + kappa * (1.0 - np.sqrt(T / Tc))          # √α
    ds = -kappa / (2.0 * sqrtTTc)                       # d√α/dT
    d2s = kappa / (4.0 * T * sqrtTTc)                   # d²√α/dT²
    return s * s, 2.0 * s * ds, 2.0 * (ds * ds + s * d2s)


@njit(cache=True)
def twu91_alpha(T, Tc, L, M, N):
    """Twu et al.'s α (A2) and its first two temperature derivatives.

    .. math:: \\alpha = T_r^{N(M-1)} \\exp[L (1 - T_r^{N M})]

    Twu, Bluck, Cunningham & Coon, Fluid Phase Equilib. 69 (1991) 33-50.

    Parameters
    ----------
    T : float
        Temperature [K].
    Tc : float
        Critical temperature [K].
    L, M, N : float
        The three per-fluid parameters [-].

    Returns
    -------
    alpha : float
        α [-].
    dalpha_dT : float
        dα/dT [1/K].
    d2alpha_dT2 : float
        d²α/dT² [1/K²].

    Examples
    --------
    >>> twu91_alpha(190.0, 190.0, 0.1, 0.9, 2.0)[0]
    1.0
    """
    Tr = T / Tc
    NM = N * M
    TrNM = Tr ** NM
    alpha = Tr ** (N * (M - 1.0)) * np.exp(L * (1.0 - TrNM))
    g = N * (M - 1.0) - L * NM * TrNM                   # T dlnα/dT
    dalpha = alpha * g / T
    d2alpha = alpha * (g * g - g - L * NM * NM * TrNM) / (T * T)
    return alpha, dalpha, d2alpha


@njit(cache=True)
def mathias_copeman_alpha(T, Tc, c1, c2, c3):
    """Mathias & Copeman's α (A3) and its first two temperature derivatives.

    .. math::
        \\sqrt{\\alpha} = 1 + c_1 x + c_2 x^2 + c_3 x^3 \\quad (T < T_c),
        \\qquad 1 + c_1 x \\quad (T \\ge T_c), \\qquad x = 1 - \\sqrt{T/T_c}

    Mathias & Copeman, Fluid Phase Equilib. 13 (1983) 91-108 (above Tc the
    first term only, as in the paper; see the module notes).

    Parameters
    ----------
    T : float
        Temperature [K].
    Tc : float
        Critical temperature [K].
    c1, c2, c3 : float
        The three per-fluid parameters [-].

    Returns
    -------
    alpha : float
        α [-].
    dalpha_dT : float
        dα/dT [1/K].
    d2alpha_dT2 : float
        d²α/dT² [1/K²].

    Examples
    --------
    >>> mathias_copeman_alpha(100.0, 100.0, 0.6, -0.2, 0.1)[0]
    1.0
    """
    if T >= Tc:
        c2 = 0.0
        c3 = 0.0
    sqrtTTc = np.sqrt(T * Tc)
    x = 1.0 - np.sqrt(T / Tc)
    dx = -1.0 / (2.0 * sqrtTTc)                         # dx/dT
    d2x = 1.0 / (4.0 * T * sqrtTTc)                     # d²x/dT²
    s = 1.0 + x * (c1 + x * (c2 + x * c3))              # √α
    ds_dx = c1 + x * (2.0 * c2 + 3.0 * c3 * x)
    d2s_dx2 = 2.0 * c2 + 6.0 * c3 * x
    ds = ds_dx * dx
    d2s = d2s_dx2 * dx * dx + ds_dx * d2x
    return s * s, 2.0 * s * ds, 2.0 * (ds * ds + s * d2s)


@njit(cache=True)
def alpha_T(kind, T, Tc, p0, p1, p2):
    """α, dα/dT, d²α/dT² of any α kind for one component at T.

    Parameters
    ----------
    kind : int
        :data:`SOAVE` (p0 = κ), :data:`TWU91` (p0, p1, p2 = L, M, N) or
        :data:`MATHIAS_COPEMAN` (p0, p1, p2 = c1, c2, c3).
    T : float
        Temperature [K].
    Tc : float
        Critical temperature [K].
    p0, p1, p2 : float
        The component's row of the model's (nc, 3) ``alpha_params`` [-].

    Returns
    -------
    alpha, dalpha_dT, d2alpha_dT2 : float
        [-], [1/K], [1/K²].
    """
    if kind == SOAVE:
        return soave_alpha(T, Tc, p0)
    if kind == TWU91:
        return twu91_alpha(T, Tc, p0, p1, p2)
    if kind == MATHIAS_COPEMAN:
        return mathias_copeman_alpha(T, Tc, p0, p1, p2)
    raise ValueError("alpha kind must be SOAVE (0), TWU91 (1) or MATHIAS_COPEMAN (2)")


@njit(cache=True)
def alpha_components(kind, T, Tc, params):
    """α_i, dα_i/dT, d²α_i/dT² of every component at one T.

    Parameters
    ----------
    kind : int
        α kind code (see :func:`alpha_T`).
    T : float
        Temperature [K].
    Tc : ndarray, shape (nc,)
        Critical temperatures [K].
    params : ndarray, shape (nc, 3)
        The model's ``alpha_params`` [-].

    Returns
    -------
    alpha, dalpha_dT, d2alpha_dT2 : ndarray, shape (nc,)
        [-], [1/K], [1/K²].
    """
    nc = Tc.shape[0]
    a = np.empty(nc)
    da = np.empty(nc)
    d2a = np.empty(nc)
    for i in range(nc):
        a[i], da[i], d2a[i] = alpha_T(kind, T, Tc[i], params[i, 0], params[i, 1], params[i, 2])
    return a, da, d2a


@njit(cache=True)
def _alpha_table(kind, T, Tc, params):
    m, nc = T.shape[0], Tc.shape[0]
    a = np.empty((m, nc))
    da = np.empty((m, nc))
    d2a = np.empty((m, nc))
    for k in range(m):
        for i in range(nc):
            a[k, i], da[k, i], d2a[k, i] = alpha_T(kind, T[k], Tc[i], params[i, 0], params[i, 1], params[i, 2])
    return a, da, d2a


def alpha_values(kind, T, Tc, params):
    """α_i, dα_i/dT, d²α_i/dT² at many temperatures: a compiled loop over :func:`alpha_T`.

    Parameters
    ----------
    kind : int
        α kind code.
    T : array_like, shape (m,)
        Temperatures [K].
    Tc : array_like, shape (nc,)
        Critical temperatures [K].
    params : array_like, shape (nc, 3)
        ``alpha_params`` [-].

    Returns
    -------
    alpha, dalpha_dT, d2alpha_dT2 : ndarray, shape (m, nc)
        [-], [1/K], [1/K²].
    """
    T = np.ascontiguousarray(np.atleast_1d(T), dtype=float).ravel()
    Tc = np.ascontiguousarray(np.atleast_1d(Tc), dtype=float)
    params = np.ascontiguousarray(params, dtype=float).reshape(-1, 3)
    if params.shape[0] != Tc.shape[0]:
        raise InputError("params", params.shape, f"({Tc.shape[0]}, 3): one row per component")
    return _alpha_table(int(kind), T, Tc, params)


# --------------------------------------------------------------------------
# generalised tc-PR / tc-RK parameters (A4)
# --------------------------------------------------------------------------
# (L, M) coefficients, each a quadratic a ω² + b ω + c, per family (A4)
TC_L_M_COEFFICIENTS = {
    "PR": ((0.1290, 0.6039, 0.0877), (0.1760, -0.2600, 0.8884)),   # tc-PR
    "SRK": ((0.0947, 0.6871, 0.1508), (0.1615, -0.2349, 0.8876)),  # tc-RK
}


def tc_L_M(omega, family):
    """L, M of the translated-consistent Twu α (A4) for ``family`` "PR" or "SRK"
    (Le Guennec, Privat & Jaubert 2016); N = 2.

    Parameters
    ----------
    omega : array_like
        Acentric factor [-]; clipped to the correlation's range (with a
        :class:`~eosfill.errors.RangeWarning`).
    family : {"PR", "SRK"}

    Returns
    -------
    L, M : ndarray [-]
    """
    o = le_guennec_omega(omega, family)
    (aL, bL, cL), (aM, bM, cM) = TC_L_M_COEFFICIENTS[family]
    return aL * o**2 + bL * o + cL, aM * o**2 + bM * o + cM


def tc_pr_L_M(omega):
    """L, M of the tc-PR α (A4); see :func:`tc_L_M`."""
    return tc_L_M(omega, "PR")


def tc_rk_L_M(omega):
    """L, M of the tc-RK α (A4); see :func:`tc_L_M`."""
    return tc_L_M(omega, "SRK")


# --------------------------------------------------------------------------
# parts
# --------------------------------------------------------------------------
def _frozen(arr):
    arr = np.ascontiguousarray(arr, dtype=float)
    arr.setflags(write=False)
    return arr


def _soave_builder(kappa_of_omega):
    def build(Tc, Pc, omega, coefficients=None):
        kappa = np.asarray(kappa_of_omega(omega), dtype=float)
        return np.stack([kappa, np.zeros_like(kappa), np.zeros_like(kappa)], axis=-1)
    return build


def _tc_builder(L_M):
    def build(Tc, Pc, omega, coefficients=None):
        L, M = L_M(omega)
        return np.stack([L, M, np.full_like(L, 2.0)], axis=-1)
    return build


def _given(Tc, Pc, omega, coefficients=None):
    return np.asarray(coefficients, dtype=float)


@dataclass(frozen=True)
class AlphaPart:
    """One α function as a model part.

    Attributes
    ----------
    name : str
        Short name shown in model descriptions.
    kind : int
        Kernel code: :data:`SOAVE`, :data:`TWU91` or :data:`MATHIAS_COPEMAN`.
    citation : str
        Where the α function (and its parameter rule) is published.
    rule : str
        How the (nc, 3) parameters are built from the component data, in words.
    per_fluid : bool
        True if the parameters are given per fluid (fitted tables), False if
        they follow from (Tc, Pc, ω) by a published correlation.
    build : callable
        ``build(Tc, Pc, omega, coefficients)`` -> array (nc, 3).
    """

    name: str
    kind: int
    citation: str
    rule: str
    per_fluid: bool = False
    build: Callable = field(default=_given, repr=False, compare=False)

    def parameters(self, Tc, Pc, omega, coefficients=None):
        """The model's ``alpha_params``: array (nc, 3), read-only.

        Parameters
        ----------
        Tc : array_like, shape (nc,)
            Critical temperatures [K].
        Pc : array_like, shape (nc,)
            Critical pressures [Pa].
        omega : array_like, shape (nc,)
            Acentric factors [-].
        coefficients : array_like, shape (nc, 3), optional
            Per-fluid parameters (required when ``per_fluid``; refused otherwise).
        """
        Tc = np.atleast_1d(np.asarray(Tc, dtype=float))
        omega = np.atleast_1d(np.asarray(omega, dtype=float))
        if self.per_fluid:
            if coefficients is None:
                raise InputError("coefficients", None, f"{len(Tc)} rows of 3 parameters for {self.name}")
            c = np.asarray(coefficients, dtype=float)
            if c.shape != (len(Tc), 3) or not np.all(np.isfinite(c)):
                raise InputError("coefficients", coefficients,
                                 f"a finite array of shape ({len(Tc)}, 3) for {self.name}")
            if self.kind == TWU91 and np.any(c[:, 2] <= 0.0):
                raise InputError("coefficients", coefficients, "Twu N > 0 for every component")
        elif coefficients is not None:
            raise InputError("coefficients", coefficients,
                             f"None: {self.name} builds its parameters from (Tc, Pc, omega)")
        return _frozen(self.build(Tc, Pc, omega, coefficients))

    def describe(self) -> str:
        """One line for reports and traces: name, rule and source."""
        return f"{self.name}: {self.rule} [{self.citation}]"


_SOAVE_1972 = ("Soave, G. Equilibrium constants from a modified Redlich-Kwong equation of state. "
               "Chem. Eng. Sci. 27 (1972) 1197-1203, Eq. 13. doi:10.1016/0009-2509(72)80096-4")
_TWU_1991 = ("Twu, C. H.; Bluck, D.; Cunningham, J. R.; Coon, J. E. A cubic equation of state with a "
             "new alpha function and a new mixing rule. Fluid Phase Equilib. 69 (1991) 33-50. "
             "doi:10.1016/0378-3812(91)90024-2")
_MC_1983 = ("Mathias, P. M.; Copeman, T. W. Extension of the Peng-Robinson equation of state to "
            "complex mixtures: evaluation of the various forms of the local composition concept. "
            "Fluid Phase Equilib. 13 (1983) 91-108. doi:10.1016/0378-3812(83)80084-3")
LE_GUENNEC_2016 = ("Le Guennec, Y.; Privat, R.; Jaubert, J.-N. Development of the translated-consistent "
                   "tc-PR and tc-RK cubic equations of state for a safe and accurate prediction of "
                   "volumetric, energetic and saturation properties of pure compounds in the sub- and "
                   "super-critical domains. Fluid Phase Equilib. 429 (2016) 301-312. "
                   "doi:10.1016/j.fluid.2016.09.003")

SOAVE_PR76 = AlphaPart(
    "Soave alpha, PR 1976 kappa", SOAVE, _SOAVE_1972 + "; kappa: Peng & Robinson, Ind. Eng. Chem. "
    "Fundam. 15 (1976) 59-64, Eq. 18", "kappa = 0.37464 + 1.54226 w - 0.26992 w^2",
    build=_soave_builder(cubic.kappa_pr76))
SOAVE_PR78 = AlphaPart(
    "Soave alpha, PR 1978 kappa", SOAVE, _SOAVE_1972 + "; kappa: Robinson & Peng, GPA Research "
    "Report RR-28 (1978)", "kappa cubic in w for w > 0.491, PR 1976 kappa below",
    build=_soave_builder(cubic.kappa_pr78))
SOAVE_SRK = AlphaPart(
    "Soave alpha, SRK 1972 kappa", SOAVE, _SOAVE_1972 + ", kappa Eq. 15",
    "kappa = 0.480 + 1.574 w - 0.176 w^2", build=_soave_builder(cubic.kappa_srk))
TWU91_FITTED = AlphaPart(
    "Twu 1991 alpha", TWU91, _TWU_1991, "L, M, N per fluid (table)", per_fluid=True)
MATHIAS_COPEMAN_FITTED = AlphaPart(
    "Mathias-Copeman 1983 alpha", MATHIAS_COPEMAN, _MC_1983,
    "c1, c2, c3 per fluid (table); c1 only above Tc", per_fluid=True)
TC_PR_ALPHA = AlphaPart(
    "tc-PR alpha (generalised Twu)", TWU91, LE_GUENNEC_2016 + "; alpha form: " + _TWU_1991,
    "L, M quadratic in w, N = 2", build=_tc_builder(tc_pr_L_M))
TC_RK_ALPHA = AlphaPart(
    "tc-RK alpha (generalised Twu)", TWU91, LE_GUENNEC_2016 + "; alpha form: " + _TWU_1991,
    "L, M quadratic in w, N = 2", build=_tc_builder(tc_rk_L_M))

SOAVE_PARTS = {"PR": SOAVE_PR76, "PR78": SOAVE_PR78, "SRK": SOAVE_SRK}
"""The α part each plain published model (PR, PR78, SRK) uses."""
