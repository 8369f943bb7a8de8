"""A mixture of fixed composition with its cubic model, and the :class:`State` it evaluates.

:class:`Mixture` holds what every layer above computes with (components,
composition, model, k_ij, volume shift) and evaluates single-phase states at
(T, P) — no phase-split test.  The public :class:`eosfill.Fluid`
(``eosfill.states.fluid``) adds ``.state(**pair)``, the equilibrium state
solvers.

The module is split by concept; this file holds :class:`Mixture` and its
single-phase evaluation, and re-exports the names of its neighbours:

- :mod:`eosfill.model.state` -- :class:`State` (derived properties, solver
  status), the phase codes ``PHASES``, ``GAS`` ... ``THREE_PHASE`` and the
  helpers ``_as_float_array``, ``_out``;
- :mod:`eosfill.model.phase_label` -- :func:`phase_kind`, the label rule of a
  single-phase state.

Molar SI throughout (K, Pa, m³/mol, J/mol, J/(mol K)); ``*_mass`` properties
per kg.  Reference state: each component as ideal gas with H = 0, S = 0 at
298.15 K and 101 325 Pa.
"""
from __future__ import annotations

import math

import numpy as np

from eosfill.model import cubic
from eosfill.model import idealgas
from eosfill.model.components import get_component, kij_matrix
from eosfill.errors import EosfillError, InputError
from eosfill.model.state import LIQUID, State, _as_float_array, _kernel_modules, _out
from eosfill.model.phase_label import phase_kind  # noqa: F401  (re-exported)
from eosfill.model.state import GAS, PHASES, SUPERCRITICAL, THREE_PHASE, TWO_PHASE  # noqa: F401  (re-exported)


class Mixture:
    """A pure fluid or a mixture of fixed composition, with a cubic model.

    Parameters
    ----------
    composition : str, dict or sequence of (name, fraction)
        One fluid name (pure), or {name: fraction}.  Names, aliases,
        formulas and CAS numbers are accepted, case-insensitive.
    model : str
        A name of :data:`eosfill.model.models.MODELS` (case-insensitive):
        "PR" (Peng-Robinson 1976), "PR78" (the 1978 κ(ω) for ω > 0.491),
        "SRK" (Soave-Redlich-Kwong 1972), "tc-PR", "tc-RK" (Le Guennec et al.
        2016) or "PR-fitted" (Twu α and translation fitted per fluid by
        eosfill; tc-PR for components without a fitted row).
        ``fluid.model`` is the :class:`~eosfill.model.models.Model`;
        ``fluid.model_description()`` lists its parts and sources.
    kij : dict, optional
        {(name1, name2): k_ij} overriding the bundled values.
    basis : {"mole", "mass"}
        Whether the fractions are mole or mass fractions.
    normalise : bool
        Rescale fractions to sum to one; otherwise they must sum to one
        within 1e-9.
    volume_shift : None, "peneloux" or array_like
        Volume translation of a plain model (PR, PR78, SRK): None (off),
        "peneloux" (the family's Péneloux-type constants,
        :func:`eosfill.model.translation.peneloux_shift`: Péneloux et al. 1982
        for SRK, 0.50033/0.25969 for PR) or per-component shifts c_i
        [m³/mol].  The shift moves v and h (h - P c) and ln φ_i (- c_i P/RT);
        u, s and phase equilibria are unchanged.  A model with its own
        translation (tc-PR, tc-RK, PR-fitted) refuses a shift (InputError),
        except an array equal to its own (``fluid.volume_shift``).
        ``fluid.volume_shift`` is the translation applied, whichever its origin.

    Examples
    --------
    >>> pure = Mixture("nitrogen", model="SRK")
    >>> round(pure.single_phase(T=300.0, P=1e5).Z, 6)   # thermo 0.6.1 SRK, same constants: 0.999958
    0.999958
    """

    def __init__(self, composition, model="PR", kij=None, basis="mole", normalise=False,
                 volume_shift=None):
        if isinstance(composition, str):
            composition = {composition: 1.0}
        elif not isinstance(composition, dict):
            try:
                composition = dict(composition)
            except (TypeError, ValueError):
                raise InputError("composition", composition,
                                 "a fluid name, a {name: fraction} dict or (name, fraction) pairs") from None
        if not composition:
            raise InputError("composition", composition, "at least one fluid")
        comps, fracs = [], []
        for name, frac in composition.items():
            comp = get_component(name)
            if any(c.name == comp.name for c in comps):
                raise InputError(f"composition[{name!r}]", frac, f"each fluid once ({comp.name} appears twice)")
            try:
                f = float(frac)
            except (TypeError, ValueError):
                raise InputError(f"composition[{name!r}]", frac, "a fraction in [0, 1]") from None
            if not np.isfinite(f) or f < 0.0 or f > 1.0 + 1e-12:
                raise InputError(f"composition[{name!r}]", frac, "a fraction in [0, 1]")
            comps.append(comp)
            fracs.append(f)
        fracs = np.array(fracs)
        total = fracs.sum()
        if total <= 0.0:
            raise InputError("composition", composition, "fractions with a positive sum")
        if not normalise and abs(total - 1.0) > 1e-9:
            raise InputError("composition", composition,
                             f"fractions summing to 1 within 1e-9 (they sum to {total!r}); "
                             "pass normalise=True to rescale")
        fracs = fracs / total
        basis = str(basis).lower()
        if basis not in ("mole", "mass"):
            raise InputError("basis", basis, '"mole" or "mass"')
        M = np.array([c.M for c in comps])
        if basis == "mass":
            n = fracs / M
            fracs = n / n.sum()
        from eosfill.model.models import get_model

        self.model = get_model(model)
        self.components = tuple(comps)
        self.names = tuple(c.name for c in comps)
        self.mole_fractions = fracs
        self.Tc = np.array([c.Tc for c in comps])
        self.Pc = np.array([c.Pc for c in comps])
        self.omega = np.array([c.omega for c in comps])
        self.molar_masses = M
        self.kij, self.kij_sources = kij_matrix(list(self.names), self.model.kij_table, kij)
        if not self.model.soave_alpha:
            note = f" (regressed for {self.model.kij_table} with Soave alpha; used unchanged with {self.model.name})"
            self.kij_sources = {k: (v + note if v not in ("user", "none known: 0") else v)
                                for k, v in self.kij_sources.items()}
        self.cp_coeffs = np.array([c.cp for c in comps])
        self.cp_Tmin = np.array([c.cp_Tmin for c in comps])
        self.cp_Tmax = np.array([c.cp_Tmax for c in comps])
        for arr in (self.mole_fractions, self.Tc, self.Pc, self.omega, self.molar_masses,
                    self.kij, self.cp_coeffs, self.cp_Tmin, self.cp_Tmax):
            arr.setflags(write=False)
        parts = self.model.component_parameters(comps, self.Tc, self.Pc, self.omega)
        self._component_lines = parts.lines
        self._model_valid = parts.valid
        c = np.array(parts.c, dtype=float)
        if volume_shift is not None and self.model.carries_translation:
            same = (not isinstance(volume_shift, str)
                    and np.shape(volume_shift) == c.shape and np.array_equal(np.asarray(volume_shift, float), c))
            if not same:
                raise InputError("volume_shift", volume_shift,
                                 f"None: model {self.model.name} carries its own volume translation "
                                 f"({self.model.translation.name}); use a plain model (PR, PR78, SRK) "
                                 "for a user shift")
        elif isinstance(volume_shift, str):
            if volume_shift.lower() != "peneloux":
                raise InputError("volume_shift", volume_shift, 'None, "peneloux" or per-component shifts [m3/mol]')
            from eosfill.model.translation import peneloux_shift

            c = peneloux_shift(self.model.family.name, self.Tc, self.Pc, self.omega)   # (V4) / (V6)
        elif volume_shift is not None:
            c = _as_float_array("volume_shift", volume_shift)
            if c.shape != (len(comps),):
                raise InputError("volume_shift", volume_shift, f"{len(comps)} shifts, one per component [m3/mol]")
        c = np.array(c, dtype=float)
        self.volume_shift = c
        self.volume_shift.setflags(write=False)
        if self.model.soave_alpha:
            self.params = cubic.MixtureParameters.build(self.model.family, self.Tc, self.Pc, self.omega,
                                                        self.kij, c=c)
        else:
            self.params = cubic.MixtureParameters.build(self.model.family, self.Tc, self.Pc, self.omega,
                                                        self.kij, c=c, alpha_kind=parts.alpha_kind,
                                                        alpha_params=parts.alpha_params)

    def model_description(self):
        """The model's full description as lines of text: family, α, translation and mixing
        parts with their sources, the k_ij table, and one line per component where the
        parameters are per component (fitted rows labelled "fitted by eosfill to
        <reference equation>"; components without a fitted row say they use tc-PR).
        A user volume shift of a plain model adds a line."""
        lines = self.model.describe()
        lines += list(self._component_lines)
        if not self.model.carries_translation and np.any(self.volume_shift != 0.0):
            lines.append("user volume translation c_i [m3/mol]: " + ", ".join(
                f"{n} {c:.6g}" for n, c in zip(self.names, self.volume_shift)))
        return lines

    # ------------------------------------------------------------------
    @property
    def nc(self) -> int:
        """Number of components."""
        return len(self.names)

    @property
    def kernel_ideal_gas(self):
        """The ideal-gas data as the compiled kernels take them (private copies):
        (Cp° coefficients (nc, 5), Tmin (nc,), Tmax (nc,))."""
        ig = self.__dict__.get("_kernel_ideal_gas")
        if ig is None:
            ig = tuple(np.array(a, dtype=np.float64, order="C") for a in (self.cp_coeffs, self.cp_Tmin, self.cp_Tmax))
            self.__dict__["_kernel_ideal_gas"] = ig
        return ig

    @property
    def is_pure(self) -> bool:
        return self.nc == 1

    @property
    def molar_mass(self) -> float:
        """Mixture molar mass [kg/mol]."""
        return float(self.mole_fractions @ self.molar_masses)

    @property
    def mass_fractions(self) -> np.ndarray:
        w = self.mole_fractions * self.molar_masses
        return w / w.sum()

    @property
    def pseudo_critical(self):
        """Kay's-rule pseudo-critical (Σ x Tc, Σ x Pc) [K, Pa] (Kay, Ind. Eng. Chem.
        28 (1936) 1014); used only to label single-phase states 'supercritical'."""
        x = self.mole_fractions
        return float(x @ self.Tc), float(x @ self.Pc)

    def __repr__(self):
        if self.is_pure:
            return f"{type(self).__name__}({self.names[0]!r}, model={self.model.name!r})"
        comp = ", ".join(f"{n!r}: {x:.6g}" for n, x in zip(self.names, self.mole_fractions))
        return f"{type(self).__name__}({{{comp}}}, model={self.model.name!r})"

    def with_composition(self, x):
        """The same components and model with other mole fractions (kij kept)."""
        new = object.__new__(type(self))
        new.__dict__.update(self.__dict__)
        x = np.array(x, dtype=float)
        x.setflags(write=False)
        new.mole_fractions = x
        return new

    def single_phase(self, T, P, x=None, which="stable"):
        """A single-phase state at T, P (no phase-split test).

        ``which`` picks the cubic's root: "stable" (lowest Gibbs energy),
        "liquid" (smallest) or "vapour" (largest).  ``x`` (shape (..., nc))
        overrides the fluid's composition, for phases of a flash.
        """
        if x is None and type(which) is str:
            Ts, Ps = _scalar(T), _scalar(P)
            if Ts is not None and Ps is not None:   # one state: plain floats, one kernel call
                return _single_phase_one(self, Ts, Ps, which)
        T = _as_float_array("T", T)
        P = _as_float_array("P", P)
        if np.any(T <= 0.0):
            raise InputError("T", _out(T), "T > 0 K")
        if np.any(P <= 0.0):
            raise InputError("P", _out(P), "P > 0 Pa")
        try:
            T, P = np.broadcast_arrays(T, P)
        except ValueError:
            raise InputError("T, P", (np.shape(T), np.shape(P)), "shapes that broadcast together") from None
        x = self.mole_fractions if x is None else np.asarray(x, dtype=float)
        return _single_phase_state(self, T, P, x, which)

    def critical_point_pure(self):
        """Model critical point (Tc, Pc) of a pure fluid [K, Pa] (exact for the cubic)."""
        if not self.is_pure:
            raise InputError("fluid", self.names, "a pure fluid")
        return float(self.Tc[0]), float(self.Pc[0])


def _scalar(value):
    """A Python float for one real number (float, int, numpy scalar, 0-d array), else None."""
    t = type(value)
    if t is float or t is int or t is np.float64:
        return float(value)
    if isinstance(value, (np.floating, np.integer)) or (isinstance(value, np.ndarray) and value.ndim == 0
                                                        and value.dtype.kind in "fiu"):
        return float(value)
    return None


class _OneStateData:
    """What the one-state path of a fluid reuses (for its own composition): the kernel
    arguments and the T range inside which no range warning is due."""

    def __init__(self, fluid):
        x = fluid.mole_fractions
        self.x_source = x
        self.x = np.array(x, dtype=np.float64)
        self.m = fluid.params.kernel_model
        self.ig = fluid.kernel_ideal_gas
        self.Pc = np.array(fluid.Pc, dtype=np.float64)
        present = x > 0.0
        self.present = present
        self.T_lo = float(np.max(fluid.cp_Tmin[present]))    # Cp° correlations of the present components
        self.T_hi = float(np.min(fluid.cp_Tmax[present]))
        valid = [(tmin, tmax, pmax) for name, tmin, tmax, pmax in fluid.__dict__.get("_model_valid", ())
                 if present[fluid.names.index(name)]]
        self.model_T_lo = max([v[0] for v in valid], default=-np.inf)   # fitted model parameters
        self.model_T_hi = min([v[1] for v in valid], default=np.inf)
        self.model_P_max = min([v[2] for v in valid], default=np.inf)
        self.cbar = float(x @ fluid.volume_shift)
        self.b = float(x @ fluid.params.b)            # the cubic's co-volume Σ x b
        self.Tc_min = float(np.min(fluid.Tc))


def _one_state_data(fluid):
    data = fluid.__dict__.get("_one_state_data")
    if data is None or data.x_source is not fluid.mole_fractions:
        data = _OneStateData(fluid)
        fluid.__dict__["_one_state_data"] = data
    return data


def _single_phase_one(fluid: Mixture, T, P, which):
    """:meth:`Mixture.single_phase` for one state (T, P floats) with the fluid's composition:
    one labelled kernel row, range checks on floats, the State read from the row."""
    if not (math.isfinite(T) and math.isfinite(P)):
        bad = ("T", T) if not math.isfinite(T) else ("P", P)
        raise InputError(bad[0], bad[1], "finite numbers (no NaN or inf)")
    if T <= 0.0:
        raise InputError("T", T, "T > 0 K")
    if P <= 0.0:
        raise InputError("P", P, "P > 0 Pa")
    d = _one_state_data(fluid)
    os1, kp = _kernel_modules()
    row = np.empty(kp.TP_NCOL + fluid.nc)
    Z = os1.props_TP_state(T, P, d.x, d.m, d.ig, kp.WHICH_CODES[which], d.Pc, row)
    if not math.isfinite(Z):
        raise EosfillError("no admissible root of the cubic at rows [0]")
    if not d.T_lo <= T <= d.T_hi:
        idealgas.check_range(T, fluid.cp_Tmin, fluid.cp_Tmax, fluid.names, d.present)
    if not (d.model_T_lo <= T <= d.model_T_hi and P <= d.model_P_max):
        _check_model_range(fluid, T, P, d.present)
    return State._from_row(fluid, T, P, row, d.x_source, d.cbar)


def _single_phase_state(fluid: Mixture, T, P, x, which="stable"):
    from eosfill.model import one_state as os1
    from eosfill.model import properties as kp

    p = fluid.params
    rows = kp.props_TP_rows(p.kernel_model, fluid.kernel_ideal_gas, T, P, x, which, _one_state_data(fluid).Pc)
    Z = rows[..., kp.TP_Z]
    if not np.all(np.isfinite(Z)):
        bad = np.argwhere(~np.isfinite(np.atleast_1d(Z)))[:3].ravel().tolist()
        raise EosfillError(f"no admissible root of the cubic at rows {bad}")
    x_arr = np.broadcast_to(x, np.shape(T) + (fluid.nc,)) if np.ndim(x) == 1 else x
    d = _one_state_data(fluid)
    lo, hi, pmax = (float(T.min()), float(T.max()), float(P.max())) if T.size else (d.T_lo, d.T_lo, 0.0)
    inside = d.T_lo <= lo and hi <= d.T_hi and d.model_T_lo <= lo and hi <= d.model_T_hi and pmax <= d.model_P_max
    if not (inside and x is d.x_source):   # the fluid's own composition inside every range: nothing to warn
        present = np.any(np.reshape(x_arr, (-1, fluid.nc)) > 0.0, axis=0)
        idealgas.check_range(T, fluid.cp_Tmin, fluid.cp_Tmax, fluid.names, present)
        _check_model_range(fluid, T, P, present)
    sol = os1.RowSol(rows)
    st = State(fluid)
    st._set(T=T, P=P, v=rows[..., kp.TP_V], h=rows[..., kp.TP_H], u=rows[..., kp.TP_U], s=rows[..., kp.TP_S],
            beta=None, x=x_arr, sol=sol, h_res=rows[..., kp.TP_H_RES], s_res=rows[..., kp.TP_S_RES],
            v_eos=rows[..., kp.TP_V_EOS], shift=rows[..., kp.TP_SHIFT])
    code = rows[..., kp.TP_KIND].astype(np.int8)   # phase_kind's rule, in the kernel
    st._phase_code = code
    st._beta = np.where(code == LIQUID, 0.0, 1.0)
    return st


def _check_model_range(fluid, T, P, present):
    """RangeWarning where a component's fitted model parameters are used outside the range
    recorded with them (``valid_T_min_K``, ``valid_T_max_K``, ``valid_P_max_MPa``)."""
    valid = fluid.__dict__.get("_model_valid", ())
    if not valid or np.size(T) == 0:
        return
    import warnings

    from eosfill.errors import RangeWarning

    lo, hi, pmax = float(np.min(T)), float(np.max(T)), float(np.max(P))
    for name, tmin, tmax, p_max in valid:
        if present[fluid.names.index(name)] and (lo < tmin or hi > tmax or pmax > p_max):
            warnings.warn(f"{fluid.model.name} parameters of {name} were fitted for {tmin:g}-{tmax:g} K and up to "
                          f"{p_max / 1e6:g} MPa; used at T in [{lo:.6g}, {hi:.6g}] K, P up to {pmax / 1e6:.6g} MPa "
                          "(an extrapolation: see data/fluids/pr_twu_fitted.csv)", RangeWarning, stacklevel=4)
