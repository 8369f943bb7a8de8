"""Named models: a cubic family, an α part, a mixing rule and a volume translation.

A model of eosfill is four small parts, each with its citation
(Clapeyron.jl's layout, see DEVELOPERS.md):

* the cubic family (δ1, δ2, Ωa, Ωb) of (C1)-(C2): :class:`eosfill.model.cubic.CubicModel`
  (``PR`` or ``SRK``; ``PR78`` is the PR family with the 1978 κ);
* the α function: :class:`eosfill.model.alpha.AlphaPart`;
* the mixing rule: :class:`MixingRule` (van der Waals one-fluid (C4) for every model here);
* the volume translation: :class:`eosfill.model.translation.TranslationPart`.

:data:`MODELS` is the registry of named models; :func:`get_model` looks a
name up case-insensitively.  :class:`eosfill.model.mixture.Mixture` builds
its :class:`~eosfill.model.cubic.MixtureParameters` from the model it names
(:meth:`Model.component_parameters`), and ``Fluid(..., model=fluid.model.name)``
rebuilds the same model.

=============  ======  ==================================  =================================
name           family  α                                   translation
=============  ======  ==================================  =================================
``PR``         PR      Soave, κ of PR 1976                 none (user: ``"peneloux"``)
``PR78``       PR      Soave, κ of PR 1978                 none (user: ``"peneloux"``)
``SRK``        SRK     Soave, κ of Soave 1972              none (user: ``"peneloux"``)
``tc-PR``      PR      Twu, L, M from ω, N = 2 (tc-PR)     tc-PR c(ω) (own)
``tc-RK``      SRK     Twu, L, M from ω, N = 2 (tc-RK)     tc-RK c(ω) (own)
``PR-fitted``  PR      Twu, L, M, N per fluid (fitted)     c per fluid (fitted) (own)
=============  ======  ==================================  =================================

tc-PR and tc-RK: Le Guennec, Privat & Jaubert, Fluid Phase Equilib. 429
(2016) 301-312.  ``PR-fitted``: the Twu α and a constant translation with
per-fluid L, M, N, c fitted by eosfill to reference equations
(``data/fluids/pr_twu_fitted.csv``, written by
``data/tools/fit_alpha_translation.py``); a component without a fitted row
takes the generalised tc-PR α and translation, and the model description
says so for that component.  Nothing switches silently: every component's
parts are listed by :meth:`Model.describe`.

A model that carries its own translation (tc-PR, tc-RK, PR-fitted) refuses
a user ``volume_shift`` (an :class:`~eosfill.errors.InputError` naming the
model), except an array equal to its own translation (a fluid rebuilt from
``fluid.volume_shift``), which changes nothing.

Binary parameters: every model reads the k_ij rows of its family in
``data/fluids/kij.csv`` (PR rows for PR, PR78, tc-PR, PR-fitted; SRK rows
for SRK and tc-RK).  The PR rows were regressed for PR with Soave's α
(Knapp et al. 1982); used with another α they are an approximation, and
the k_ij sources say so (``Fluid.kij_sources``).  docs/accuracy.md gives
the mixture accuracy measured with them.
"""
from __future__ import annotations

import csv
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from eosfill.errors import InputError
from eosfill.model import cubic
from eosfill.model import translation as tr

# the α parts are built in eosfill.model.alpha, which imports numba; the
# part objects are plain data, so they are imported lazily (see _alpha()).

MM2007 = ("Michelsen, M. L.; Mollerup, J. M. Thermodynamic Models: Fundamentals and Computational "
          "Aspects, 2nd ed. Tie-Line Publications, 2007, ch. 3")

FITTED_TABLE = "pr_twu_fitted.csv"


@dataclass(frozen=True)
class MixingRule:
    """A mixing rule as a model part.

    Attributes
    ----------
    name : str
        Short name.
    rule : str
        The rule in words and symbols.
    citation : str
        Where it is published.
    """

    name: str
    rule: str
    citation: str

    def describe(self) -> str:
        """One line: name, rule and source."""
        return f"{self.name}: {self.rule} [{self.citation}]"


VDW_ONE_FLUID = MixingRule(
    "van der Waals one-fluid mixing",
    "a = sum_ij x_i x_j (1 - k_ij) sqrt(a_i a_j), b = sum_i x_i b_i (C4)", MM2007)


def _alpha():
    from eosfill.model import alpha

    return alpha


@dataclass(frozen=True)
class ComponentParameters:
    """The per-component parameters a model gives a list of components.

    Attributes
    ----------
    alpha_kind : int
        α kind code (:mod:`eosfill.model.alpha`).
    alpha_params : ndarray, shape (nc, 3)
        α parameters per component [-].
    c : ndarray, shape (nc,)
        The model's own volume translation per component [m³/mol] (zeros if none).
    lines : tuple of str
        One description line per component where parameters are per component
        (empty for models whose parameters all follow from a published correlation).
    """

    alpha_kind: int
    alpha_params: np.ndarray
    c: np.ndarray
    lines: tuple = ()
    valid: tuple = ()
    """(name, T_min [K], T_max [K], P_max [Pa]) of each component whose parameters hold
    only over a recorded range (fitted rows)."""


@dataclass(frozen=True)
class Model:
    """One named model: family + α part + mixing rule + translation part.

    Attributes
    ----------
    name : str
        The registry name (``Fluid(..., model=name)`` rebuilds it).
    family : CubicModel
        δ1, δ2, Ωa, Ωb (and, for Soave α, κ(ω)) of (C1)-(C3).
    alpha_part : str
        Name of the α part in :mod:`eosfill.model.alpha` (resolved lazily, as
        that module loads numba); for per-fluid models the fallback part is
        ``fallback_alpha_part``.
    translation : TranslationPart
        The model's own volume translation (``NO_TRANSLATION`` for the plain models).
    mixing : MixingRule
    kij_table : str
        Which family's rows of ``data/fluids/kij.csv`` the model reads ("PR" or "SRK").
    summary : str
        One line saying what the model is.
    fitted_table : str or None
        File in ``data/fluids`` with per-fluid α parameters and translations.
    fallback_alpha_part, fallback_translation
        Parts used for a component with no fitted row.
    """

    name: str
    family: cubic.CubicModel
    alpha_part: str
    translation: tr.TranslationPart
    mixing: MixingRule
    kij_table: str
    summary: str
    fitted_table: str = None
    fallback_alpha_part: str = None
    fallback_translation: tr.TranslationPart = field(default=None)

    # --- the family's constants, so a Model serves where a CubicModel did -----
    delta1 = property(lambda self: self.family.delta1, doc="δ1 of (C1) [-].")
    delta2 = property(lambda self: self.family.delta2, doc="δ2 of (C1) [-].")
    Omega_a = property(lambda self: self.family.Omega_a, doc="Ωa of (C2) [-].")
    Omega_b = property(lambda self: self.family.Omega_b, doc="Ωb of (C2) [-].")
    Zc = property(lambda self: self.family.Zc, doc="Critical compressibility of the family [-].")

    @property
    def citation(self) -> str:
        """The family's citation (the α and translation sources: :meth:`describe`)."""
        return self.family.citation

    @property
    def alpha(self):
        """The α part (:class:`eosfill.model.alpha.AlphaPart`)."""
        return getattr(_alpha(), self.alpha_part)

    @property
    def soave_alpha(self) -> bool:
        """True for the plain models (Soave α with the family's κ(ω))."""
        return self.fitted_table is None and self.alpha.kind == _alpha().SOAVE

    @property
    def kappa(self):
        """κ(ω) of the Soave α; only models with Soave's α have one."""
        if not self.soave_alpha:
            raise AttributeError(f"model {self.name} has no Soave kappa (its alpha: {self.alpha.name})")
        return self.family.kappa

    @property
    def carries_translation(self) -> bool:
        """True if the model has its own volume translation (a user shift is then refused)."""
        return self.translation is not tr.NO_TRANSLATION

    # ------------------------------------------------------------------
    def component_parameters(self, components, Tc, Pc, omega) -> ComponentParameters:
        """α kind, α parameters (nc, 3), own translation c (nc,) and per-component lines.

        Parameters
        ----------
        components : sequence of Component
            The components (their ``name`` is looked up in the fitted table).
        Tc, Pc, omega : array_like, shape (nc,)
            Critical temperature [K], critical pressure [Pa], acentric factor [-].
        """
        al = _alpha()
        Tc, Pc, omega = (np.atleast_1d(np.asarray(a, dtype=float)) for a in (Tc, Pc, omega))
        if self.fitted_table is None:
            part = self.alpha
            params = part.parameters(Tc, Pc, omega)
            c = self.translation.shifts(Tc, Pc, omega)
            return ComponentParameters(part.kind, params, c, ())
        rows = fitted_rows(self.fitted_table)
        fb_alpha = getattr(al, self.fallback_alpha_part)
        params = np.zeros((len(Tc), 3))
        c = np.zeros(len(Tc))
        missing = np.array([comp.name not in rows for comp in components], dtype=bool)
        if np.any(missing):   # generalised tc-PR only where no fitted row exists (its ω range warns)
            params[missing] = fb_alpha.parameters(Tc[missing], Pc[missing], omega[missing])
            c[missing] = self.fallback_translation.shifts(Tc[missing], Pc[missing], omega[missing])
        lines, valid = [], []
        for i, comp in enumerate(components):
            row = rows.get(comp.name)
            if row is None:
                lines.append(f"{comp.name}: no fitted row in data/fluids/{self.fitted_table}: generalised "
                             f"{fb_alpha.name} (L = {params[i, 0]:.6g}, M = {params[i, 1]:.6g}, N = 2) and "
                             f"{self.fallback_translation.name} (c = {c[i]:.6g} m3/mol) "
                             f"[Le Guennec, Privat & Jaubert 2016]")
                continue
            params[i] = row["L"], row["M"], row["N"]
            c[i] = row["c"]
            valid.append((comp.name, float(row["valid_T_min_K"]), float(row["valid_T_max_K"]),
                          1e6 * float(row["valid_P_max_MPa"])))
            lines.append(f"{comp.name}: Twu alpha L = {row['L']:.8g}, M = {row['M']:.8g}, N = {row['N']:.8g}; "
                         f"c = {row['c']:.8g} m3/mol: {row['source']} (data/fluids/{self.fitted_table}; fitted "
                         f"{row['T_range_K']} K, {row['P_range_MPa']} MPa; valid from {row['valid_T_min_K']} K; "
                         f"targets missed on held-out states: {row['targets_missed']})")
        for arr in (params, c):
            arr.setflags(write=False)
        return ComponentParameters(al.TWU91, params, c, tuple(lines), tuple(valid))

    def describe(self, components=(), Tc=None, Pc=None, omega=None):
        """The model's full description as lines of text: its parts and their sources,
        and per component where parameters are per component (fitted rows labelled
        "fitted by eosfill to <reference equation>").

        Parameters
        ----------
        components : sequence of Component, optional
            With (Tc, Pc, ω): add the per-component lines.
        """
        fam = "PR" if self.family.name in ("PR", "PR78") else self.family.name
        lines = [f"model {self.name}: {self.summary}",
                 f"cubic family {fam}: delta1 = {self.delta1:.10g}, delta2 = {self.delta2:.10g}, "
                 f"Omega_a = {self.Omega_a:.10g}, Omega_b = {self.Omega_b:.10g} [{self.family.citation}]"]
        if self.fitted_table is None:
            lines.append("alpha " + self.alpha.describe())
            lines.append("translation " + self.translation.describe())
        else:
            al = _alpha()
            lines.append("alpha " + al.TWU91_FITTED.describe() + f"; per-fluid values from data/fluids/"
                         f"{self.fitted_table}, fitted by eosfill (not published); components without a "
                         f"row: {getattr(al, self.fallback_alpha_part).describe()}")
            lines.append("translation constant c_i per fluid from the same table; components without a row: "
                         + self.fallback_translation.describe())
        lines.append("mixing " + self.mixing.describe())
        lines.append(f"k_ij: {self.kij_table} rows of data/fluids/kij.csv"
                     + ("" if self.soave_alpha else " (regressed for the Soave alpha; applied here unchanged, "
                        "an approximation: see docs/accuracy.md)"))
        if len(components) and Tc is not None:
            lines += list(self.component_parameters(components, Tc, Pc, omega).lines)
        return lines


@lru_cache(maxsize=None)
def _read_fitted(path):
    out = {}
    with open(path, newline="", encoding="utf-8") as fh:
        for r in csv.DictReader(fh):
            out[r["name"]] = dict(r, L=float(r["twu_L"]), M=float(r["twu_M"]), N=float(r["twu_N"]),
                                  c=float(r["c_m3_per_mol"]))
    return out


def fitted_rows(table=FITTED_TABLE):
    """{component name: row} of a fitted-parameter table in ``data/fluids`` (L, M, N, c as floats)."""
    from eosfill.model.components import data_dir

    return _read_fitted(str(data_dir() / "fluids" / table))


PR = Model("PR", cubic.PR, "SOAVE_PR76", tr.NO_TRANSLATION, VDW_ONE_FLUID, "PR",
           "Peng-Robinson 1976, Soave alpha with its kappa(omega), no translation")
PR78 = Model("PR78", cubic.PR78, "SOAVE_PR78", tr.NO_TRANSLATION, VDW_ONE_FLUID, "PR",
             "Peng-Robinson with the 1978 kappa(omega) (differs from PR for omega > 0.491), no translation")
SRK = Model("SRK", cubic.SRK, "SOAVE_SRK", tr.NO_TRANSLATION, VDW_ONE_FLUID, "SRK",
            "Soave-Redlich-Kwong 1972, no translation")
TC_PR = Model("tc-PR", cubic.PR, "TC_PR_ALPHA", tr.TC_PR_TRANSLATION, VDW_ONE_FLUID, "PR",
              "translated-consistent Peng-Robinson (Le Guennec, Privat & Jaubert 2016): Twu alpha with "
              "L, M from omega, N = 2, and a constant translation c from omega")
TC_RK = Model("tc-RK", cubic.SRK, "TC_RK_ALPHA", tr.TC_RK_TRANSLATION, VDW_ONE_FLUID, "SRK",
              "translated-consistent Redlich-Kwong (Le Guennec, Privat & Jaubert 2016): Twu alpha with "
              "L, M from omega, N = 2, and a constant translation c from omega")
PR_FITTED = Model("PR-fitted", cubic.PR, "TWU91_FITTED", tr.CONSTANT, VDW_ONE_FLUID, "PR",
                  "Peng-Robinson family with Twu alpha and constant translation, L, M, N, c fitted per fluid "
                  "by eosfill to reference equations; generalised tc-PR for components without a fitted row",
                  fitted_table=FITTED_TABLE, fallback_alpha_part="TC_PR_ALPHA",
                  fallback_translation=tr.TC_PR_TRANSLATION)

MODELS = {m.name: m for m in (PR, PR78, SRK, TC_PR, TC_RK, PR_FITTED)}
"""The named models, in the order tables list them."""

_BY_KEY = {k.upper(): m for k, m in MODELS.items()}


def get_model(name) -> Model:
    """The named model (case-insensitive); an InputError lists the names."""
    if isinstance(name, Model):
        return name
    m = _BY_KEY.get(str(name).strip().upper())
    if m is None:
        raise InputError("model", name, "one of " + ", ".join(f'"{k}"' for k in MODELS) + " (case-insensitive)")
    return m
