"""Volume translations of the generalised cubic, as swappable parts.

A constant (temperature-independent) translation c_i per component moves
the cubic's molar volume (Péneloux, Rauzy & Fréze, Fluid Phase Equilib. 8
(1982) 7-23):

    v = v_eos - c ,   c = Σ_i x_i c_i                                   (V1)

where v_eos is the root of the untranslated cubic at the same T and P.
Because c does not depend on T, the translated equation is the untranslated
one with v replaced by v + c, and at the same T and P:

    h = h_eos - P c                                                    (V2)
    ln φ_i = ln φ_i,eos - c_i P / (R T)                                 (V3)
    u = u_eos ,  s = s_eos                      (unchanged)
    phase equilibria unchanged: (V3) moves ln φ_i by the same amount in
    every phase at the same T and P, so equal fugacities stay equal.

Sign: c > 0 shrinks the volume.  thermo 0.6's ``PRTranslated`` /
``SRKTranslated`` use the same sign (their b = b0 - c).

Parts held here (c in m³/mol):

* :data:`NO_TRANSLATION` - c = 0.
* :data:`CONSTANT` - c_i given per component (a table or the user).
* :data:`PENELOUX_SRK` - Péneloux et al. (1982), for SRK:

      c_i = 0.40768 (0.29441 - Z_RA,i) R Tc,i / Pc,i                     (V4)

  with the Rackett compressibility from ω by Yamada & Gunn, J. Chem. Eng.
  Data 18 (1973) 234-236:

      Z_RA,i = 0.29056 - 0.08775 ω_i                                    (V5)

* :data:`PENELOUX_PR` - the same form with constants for Peng-Robinson:

      c_i = 0.50033 (0.25969 - Z_RA,i) R Tc,i / Pc,i                     (V6)

  Source: we did not find the primary publication of these two constants
  with the search tools at hand.  They are the constants used for PR in
  the petroleum-fluid literature and in open-source engines (e.g. NeqSim's
  Pedersen characterisation for PR uses {0.25969, 0.50033} beside
  {0.29441, 0.40768} for SRK); from memory they are printed in Pedersen,
  Christensen & Shaikh, *Phase Behavior of Petroleum Reservoir Fluids*
  (CRC Press, 2nd ed. 2014) - not verified.  Repeating Péneloux's
  construction ourselves (c = v_eos - v_Rackett of the saturated liquid at
  Tr = 0.7, linear in Z_RA over 0 ≤ ω ≤ 0.5, with the Rackett exponent
  1 + (1 - Tr)^(2/7)) gives 0.433 (0.2932 - Z_RA) for SRK (c within 2 % of
  (V4) at ω = 0.15) and 0.464 (0.2623 - Z_RA) for PR (c about 20 % smaller
  than (V6) at ω = 0.15), so our derivation only roughly supports (V6);
  what is checked in the tests is the outside result: propane's saturated
  liquid volume at Tr = 0.7 against its reference equation (CoolProp).
* :data:`TC_PR_TRANSLATION`, :data:`TC_RK_TRANSLATION` - Le Guennec, Privat
  & Jaubert, Fluid Phase Equilib. 429 (2016) 301-312 (tc-PR, tc-RK):

      tc-PR:  c_i = (R Tc,i / Pc,i) (0.0198 ω_i - 0.0065)               (V7)
      tc-RK:  c_i = (R Tc,i / Pc,i) (0.0172 ω_i + 0.0096)               (V8)

  as coded in thermo 0.6.1 (``PRTranslatedConsistent``,
  ``SRKTranslatedConsistent``; its docstring of the latter prints
  "- 0.0096", its code "+ 0.0096"; the tests show that only "+" gives
  the saturated-liquid volumes at Tr = 0.8 the translation was fitted to).
  Equation numbers of the paper not checked (the paper was not at hand).

The module needs only numpy (no compiled kernels).
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from ..constants import R
from ..errors import InputError, RangeWarning

# (V4), (V6): (k, Z0) of c = k (Z0 - Z_RA) R Tc / Pc per cubic family
PENELOUX_SRK_CONSTANTS = (0.40768, 0.29441)  # Péneloux, Rauzy & Fréze 1982
PENELOUX_PR_CONSTANTS = (0.50033, 0.25969)   # see module notes for the source

# ω range in which the generalised tc-PR / tc-RK correlations are applied:
# thermo 0.6.1 clips ω to these bounds ("a little under the range reported"
# in Le Guennec et al. 2016); we clip the same way, and warn.
TC_OMEGA_RANGE = {"PR": (-0.01, 1.48), "SRK": (-0.01, 1.46)}


def rackett_z_yamada_gunn(omega):
    """Rackett compressibility Z_RA from ω, (V5).

    Yamada & Gunn, J. Chem. Eng. Data 18 (1973) 234-236.

    Parameters
    ----------
    omega : array_like
        Acentric factor [-].

    Returns
    -------
    ndarray
        Z_RA [-].

    Examples
    --------
    >>> float(rackett_z_yamada_gunn(0.0))
    0.29056
    """
    return 0.29056 - 0.08775 * np.asarray(omega, dtype=float)


def _family(model_name):
    name = str(model_name).upper()
    if name in ("PR", "PR78", "PR76"):
        return "PR"
    if name == "SRK":
        return "SRK"
    raise InputError("model_name", model_name, '"PR", "PR78" or "SRK"')


def peneloux_shift(model_name, Tc, Pc, omega):
    """Péneloux-type volume translation c_i for the model's cubic family.

    SRK: (V4) with Péneloux, Rauzy & Fréze's constants (0.40768, 0.29441);
    PR and PR78: (V6) with the Peng-Robinson constants (0.50033, 0.25969);
    Z_RA from ω by Yamada & Gunn (V5).  The translation moves v by -c, h by
    -P c and ln φ_i by -c_i P/(R T); u, s and phase equilibria are
    unchanged (module notes, V1-V3).

    Parameters
    ----------
    model_name : {"PR", "PR78", "SRK"}
        The cubic the shift is for.
    Tc : array_like, shape (nc,)
        Critical temperatures [K].
    Pc : array_like, shape (nc,)
        Critical pressures [Pa].
    omega : array_like, shape (nc,)
        Acentric factors [-].

    Returns
    -------
    ndarray, shape (nc,)
        c_i [m³/mol]; v = v_eos - Σ x_i c_i.

    Examples
    --------
    >>> c = peneloux_shift("SRK", 369.89, 4.2512e6, 0.1521)
    >>> round(float(c[0]) * 1e6, 2)   # propane, cm3/mol
    5.07
    """
    k, Z0 = PENELOUX_PR_CONSTANTS if _family(model_name) == "PR" else PENELOUX_SRK_CONSTANTS
    Tc, Pc, omega = (np.atleast_1d(np.asarray(a, dtype=float)) for a in (Tc, Pc, omega))
    return k * (Z0 - rackett_z_yamada_gunn(omega)) * R * Tc / Pc   # (V4) / (V6)


def le_guennec_omega(omega, family):
    """ω as used in the generalised tc-PR / tc-RK correlations.

    Clipped to :data:`TC_OMEGA_RANGE` (as thermo 0.6.1 does); a
    :class:`~eosfill.errors.RangeWarning` names the values clipped.

    Parameters
    ----------
    omega : array_like
        Acentric factor [-].
    family : {"PR", "SRK"}
        Which correlation.

    Returns
    -------
    ndarray
        ω inside the range [-].
    """
    lo, hi = TC_OMEGA_RANGE[_family(family)]
    o = np.asarray(omega, dtype=float)
    if not np.all(np.isfinite(o)):
        raise InputError("omega", omega, "finite acentric factors")
    if np.any((o < lo) | (o > hi)):
        out = np.atleast_1d(o)[(np.atleast_1d(o) < lo) | (np.atleast_1d(o) > hi)]
        warnings.warn(f"acentric factor(s) {out.tolist()} outside {lo} <= omega <= {hi} of the "
                      f"generalised tc-{'PR' if family == 'PR' else 'RK'} correlations "
                      "(Le Guennec et al. 2016); clipped to the range", RangeWarning, stacklevel=3)
    return np.clip(o, lo, hi)


# c_i = (R Tc/Pc)(a ω + b) of the translated-consistent models, per family
TC_SHIFT_COEFFICIENTS = {"PR": (0.0198, -0.0065),   # tc-PR, (V7)
                         "SRK": (0.0172, 0.0096)}   # tc-RK, (V8)


def tc_shift(Tc, Pc, omega, family):
    """c_i of tc-PR (V7) or tc-RK (V8): (R Tc/Pc)(a ω + b) [m³/mol].

    Le Guennec, Privat & Jaubert, Fluid Phase Equilib. 429 (2016) 301-312.

    Parameters
    ----------
    Tc : array_like, shape (nc,)
        Critical temperatures [K].
    Pc : array_like, shape (nc,)
        Critical pressures [Pa].
    omega : array_like, shape (nc,)
        Acentric factors [-] (clipped to the correlation's range, with a warning).
    family : {"PR", "SRK"}

    Returns
    -------
    ndarray, shape (nc,)
        c_i [m³/mol].
    """
    o = le_guennec_omega(omega, family)
    a, b = TC_SHIFT_COEFFICIENTS[family]
    return R * np.asarray(Tc, dtype=float) / np.asarray(Pc, dtype=float) * (a * o + b)


def tc_pr_shift(Tc, Pc, omega):
    """c_i of tc-PR, (V7); see :func:`tc_shift`."""
    return tc_shift(Tc, Pc, omega, "PR")


def tc_rk_shift(Tc, Pc, omega):
    """c_i of tc-RK, (V8); see :func:`tc_shift`."""
    return tc_shift(Tc, Pc, omega, "SRK")


# --------------------------------------------------------------------------
# parts
# --------------------------------------------------------------------------
def _zero(Tc, Pc, omega, c=None):
    return np.zeros(np.shape(Tc))


def _given(Tc, Pc, omega, c=None):
    return np.asarray(c, dtype=float)


def _peneloux(model_name):
    return lambda Tc, Pc, omega, c=None: peneloux_shift(model_name, Tc, Pc, omega)


@dataclass(frozen=True)
class TranslationPart:
    """One volume translation as a model part.

    Attributes
    ----------
    name : str
        Short name shown in model descriptions.
    citation : str
        Where the translation is published.
    rule : str
        How c_i follows from the component data, in words.
    per_fluid : bool
        True if c_i are given per component (table or user).
    build : callable
        ``build(Tc, Pc, omega, c)`` -> array (nc,) [m³/mol].
    """

    name: str
    citation: str
    rule: str
    per_fluid: bool = False
    build: Callable = field(default=_given, repr=False, compare=False)

    def shifts(self, Tc, Pc, omega, c=None):
        """The model's ``c``: array (nc,) [m³/mol], read-only.

        Parameters
        ----------
        Tc : array_like, shape (nc,)
            Critical temperatures [K].
        Pc : array_like, shape (nc,)
            Critical pressures [Pa].
        omega : array_like, shape (nc,)
            Acentric factors [-].
        c : array_like, shape (nc,), optional
            Per-component translations [m³/mol] (required when ``per_fluid``,
            refused otherwise).
        """
        Tc, Pc, omega = (np.atleast_1d(np.asarray(a, dtype=float)) for a in (Tc, Pc, omega))
        if self.per_fluid:
            arr = None if c is None else np.atleast_1d(np.asarray(c, dtype=float))
            if arr is None or arr.shape != Tc.shape or not np.all(np.isfinite(arr)):
                raise InputError("c", c, f"{Tc.size} finite translations, one per component [m3/mol]")
        elif c is not None:
            raise InputError("c", c, f"None: {self.name} builds its translations from (Tc, Pc, omega)")
        out = np.ascontiguousarray(self.build(Tc, Pc, omega, c), dtype=float)
        out.setflags(write=False)
        return out

    def describe(self) -> str:
        """One line for reports and traces: name, rule and source."""
        return f"{self.name}: {self.rule} [{self.citation}]"


_PENELOUX_1982 = ("Peneloux, A.; Rauzy, E.; Freze, R. A consistent correction for Redlich-Kwong-Soave "
                  "volumes. Fluid Phase Equilib. 8 (1982) 7-23. doi:10.1016/0378-3812(82)80002-2; "
                  "Z_RA: Yamada, T.; Gunn, R. D. J. Chem. Eng. Data 18 (1973) 234-236")
_LE_GUENNEC_2016 = ("Le Guennec, Y.; Privat, R.; Jaubert, J.-N. Fluid Phase Equilib. 429 (2016) 301-312. "
                    "doi:10.1016/j.fluid.2016.09.003")

NO_TRANSLATION = TranslationPart("no volume translation", "-", "c = 0", build=_zero)
CONSTANT = TranslationPart("constant volume translation", "Peneloux et al. 1982 (form); values per table",
                           "c_i given per component", per_fluid=True)
PENELOUX_SRK = TranslationPart(
    "Peneloux translation (SRK constants)", _PENELOUX_1982,
    "c = 0.40768 (0.29441 - Z_RA) R Tc/Pc, Z_RA = 0.29056 - 0.08775 w", build=_peneloux("SRK"))
PENELOUX_PR = TranslationPart(
    "Peneloux-type translation (PR constants)",
    "form: " + _PENELOUX_1982 + "; PR constants 0.50033, 0.25969 as used in the petroleum literature "
    "(primary source not verified; see eosfill.model.translation)",
    "c = 0.50033 (0.25969 - Z_RA) R Tc/Pc, Z_RA = 0.29056 - 0.08775 w", build=_peneloux("PR"))
TC_PR_TRANSLATION = TranslationPart(
    "tc-PR translation", _LE_GUENNEC_2016, "c = (R Tc/Pc)(0.0198 w - 0.0065)",
    build=lambda Tc, Pc, omega, c=None: tc_pr_shift(Tc, Pc, omega))
TC_RK_TRANSLATION = TranslationPart(
    "tc-RK translation", _LE_GUENNEC_2016, "c = (R Tc/Pc)(0.0172 w + 0.0096)",
    build=lambda Tc, Pc, omega, c=None: tc_rk_shift(Tc, Pc, omega))

PENELOUX_PARTS = {"PR": PENELOUX_PR, "PR78": PENELOUX_PR, "SRK": PENELOUX_SRK}
"""The Péneloux-type part that belongs to each plain model's cubic family."""
