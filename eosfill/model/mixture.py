"""A mixture of fixed composition with its cubic model, and the :class:`State` it evaluates.

:class:`Mixture` holds what every layer above computes with (components,
composition, model, k_ij, volume shift) and evaluates single-phase states at
(T, P) — no phase-split test.  The public :class:`eosfill.Fluid`
(``eosfill.states.fluid``) adds ``.state(**pair)``, the equilibrium state
solvers.

Molar SI throughout (K, Pa, m³/mol, J/mol, J/(mol K)); ``*_mass`` properties
per kg.  Reference state: each component as ideal gas with H = 0, S = 0 at
298.15 K and 101 325 Pa.
"""
from __future__ import annotations

from functools import cached_property

import numpy as np

from eosfill.model import cubic
from eosfill.model import idealgas
from eosfill.model.components import get_component, kij_matrix
from eosfill.constants import R
from eosfill.errors import EosfillError, InputError

PHASES = ("gas", "liquid", "supercritical", "two-phase", "three-phase")
GAS, LIQUID, SUPERCRITICAL, TWO_PHASE, THREE_PHASE = 0, 1, 2, 3, 4


def _as_float_array(name, value):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(name, value, "a real number or array of real numbers") from None
    if not np.all(np.isfinite(arr)):
        raise InputError(name, value, "finite numbers (no NaN or inf)")
    return arr


def _out(arr):
    """0-d arrays leave as Python floats, others as arrays."""
    arr = np.asarray(arr)
    if arr.ndim == 0:
        return arr.item()
    return arr


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


def phase_kind(fluid: Mixture, T, P, v_eos, x=None, sol=None):
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


def _single_phase_state(fluid: Mixture, T, P, x, which="stable"):
    from eosfill.model import properties as kp

    p = fluid.params
    rows = kp.props_TP_rows(p.kernel_model, fluid.kernel_ideal_gas, T, P, x, which)
    Z = rows[..., kp.TP_Z]
    if not np.all(np.isfinite(Z)):
        bad = np.argwhere(~np.isfinite(np.atleast_1d(Z)))[:3].ravel().tolist()
        raise EosfillError(f"no admissible root of the cubic at rows {bad}")
    x_arr = np.broadcast_to(x, np.shape(T) + (fluid.nc,)) if np.ndim(x) == 1 else x
    present = np.any(np.reshape(x_arr, (-1, fluid.nc)) > 0.0, axis=0)
    idealgas.check_range(T, fluid.cp_Tmin, fluid.cp_Tmax, fluid.names, present)
    _check_model_range(fluid, T, P, present)
    sol = dict(Z=Z, v=rows[..., kp.TP_V_EOS], a=rows[..., kp.TP_A], a_T=rows[..., kp.TP_A_T],
               a_TT=rows[..., kp.TP_A_TT], b=rows[..., kp.TP_B], A=rows[..., kp.TP_ADIM],
               B=rows[..., kp.TP_BDIM], roots=rows[..., kp.TP_R0:kp.TP_R2 + 1],
               choice=rows[..., kp.TP_CHOICE].astype(np.int8),
               dPdT=rows[..., kp.TP_DPDT], dPdv=rows[..., kp.TP_DPDV], cv=rows[..., kp.TP_CV],
               cp=rows[..., kp.TP_CP], Pi=rows[..., kp.TP_PI])
    hR, sR = rows[..., kp.TP_H_RES], rows[..., kp.TP_S_RES]
    st = State(fluid)
    st._set(T=T, P=P, v=rows[..., kp.TP_V], h=rows[..., kp.TP_H], u=rows[..., kp.TP_U], s=rows[..., kp.TP_S],
            beta=None, x=x_arr, sol=sol, h_res=hR, s_res=sR, v_eos=sol["v"], shift=rows[..., kp.TP_SHIFT])
    code = phase_kind(fluid, T, P, sol["v"], x, sol=sol)
    st._phase_code = code.astype(np.int8)
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


class State:
    """An equilibrium state (or a batch of them) of a :class:`Mixture` (or :class:`eosfill.Fluid`).

    Every attribute is a float for a scalar specification and an array of
    the broadcast shape for a batch.  Molar SI units; ``*_mass`` per kg.

    Attributes
    ----------
    T [K], P [Pa], v [m³/mol], h, u [J/mol], s [J/(mol K)], Z [-]
    phase : str or ndarray of str
        "gas", "liquid", "supercritical" or "two-phase".
    vapor_fraction : molar vapour fraction β (1 single-phase gas, 0 liquid).
    liquid, vapour : State or None
        The two phases of two-phase rows (None when no row is two-phase):
        ``vapour`` the less dense, ``liquid`` the denser (both may be liquids,
        see each one's ``phase``); in three-phase rows ``vapour`` is the least
        dense and ``liquid`` the next.  In single-phase rows both hold that
        single phase.
    phases : list of State or None
        Every phase of a split, least dense first (length: the largest phase
        count of the batch); ``phase_fractions`` (..., n) their molar fractions
        β (0 where a row has fewer phases); ``n_phases`` the count per row.
    """

    def __init__(self, fluid: Mixture):
        self.fluid = fluid
        self.liquid = None
        self.vapour = None
        self.phases = None
        self._phase_fractions = None
        self.solver_info = {}
        # per-row solver outcome (codes of eosfill.errors), set by the state solvers
        self.status_array = None
        self.residual_array = None
        self.iterations_array = None

    # --- solver outcome ------------------------------------------------------
    @property
    def status(self):
        """Solver status per row (int codes of :mod:`eosfill.errors`: 0 converged
        and verified, 1 out of range, 2 no solution, 3 not converged); a
        single-phase evaluation with no solver is 0."""
        if self.status_array is None:
            return _out(np.zeros(np.shape(self._T), dtype=np.int8))
        return _out(self.status_array)

    @property
    def status_text(self):
        """:attr:`status` in words."""
        from eosfill.errors import STATUS_TEXT

        codes = np.asarray(self.status)
        text = np.vectorize(STATUS_TEXT.get, otypes=[object])(codes) if codes.ndim else STATUS_TEXT[int(codes)]
        return text

    @property
    def residual(self):
        """Per row: the largest relative miss on the two specifications, or the
        phase-equilibrium residual (max |Δ ln f| between phases, material
        balance) of the flash under the state when that is larger."""
        if self.residual_array is None:
            return _out(np.zeros(np.shape(self._T)))
        return _out(self.residual_array)

    @property
    def iterations(self):
        """Iterations of the multiphase flash's phase-split loop under each row
        (0 where the state needed none: single-phase rows, pure fluids).  The
        outer 1-D searches are bounded (200 steps) and raise or flag when
        they do not converge; their counts are not recorded here."""
        if self.iterations_array is None:
            return _out(np.zeros(np.shape(self._T), dtype=np.int64))
        return _out(self.iterations_array)

    def _set(self, T, P, v, h, u, s, beta, x, sol=None, h_res=None, s_res=None, v_eos=None, shift=None):
        self._T, self._P, self._v, self._h, self._u, self._s = T, P, v, h, u, s
        self._x = x
        self._sol = sol
        self._h_res, self._s_res = h_res, s_res
        self._v_eos = v if v_eos is None else v_eos
        self._shift = 0.0 if shift is None else shift
        if beta is not None:
            self._beta = beta

    # --- primary ----------------------------------------------------------
    T = property(lambda self: _out(self._T), doc="Temperature [K].")
    P = property(lambda self: _out(self._P), doc="Pressure [Pa].")
    v = property(lambda self: _out(self._v), doc="Molar volume [m³/mol].")
    h = property(lambda self: _out(self._h), doc="Molar enthalpy [J/mol].")
    u = property(lambda self: _out(self._u), doc="Molar internal energy [J/mol].")
    s = property(lambda self: _out(self._s), doc="Molar entropy [J/(mol K)].")

    @property
    def shape(self):
        return np.shape(self._T)

    @property
    def Z(self):
        """Compressibility factor P v/(R T) [-]."""
        return _out(self._P * self._v / (R * self._T))

    @property
    def g(self):
        """Molar Gibbs energy h - T s [J/mol]."""
        return _out(self._h - self._T * self._s)

    @property
    def phase_code(self):
        return self._phase_code

    @property
    def phase(self):
        """Phase label(s): "gas", "liquid", "supercritical" or "two-phase"."""
        labels = np.asarray(PHASES, dtype=object)[np.asarray(self._phase_code)]
        return labels if isinstance(labels, np.ndarray) and labels.ndim else str(labels)

    @property
    def n_phases(self):
        """Number of phases per row."""
        code = np.asarray(self._phase_code)
        return _out(np.where(code == THREE_PHASE, 3, np.where(code == TWO_PHASE, 2, 1)))

    @property
    def phase_fractions(self):
        """Molar fraction β of each phase of :attr:`phases`, shape (..., n)."""
        if self._phase_fractions is None:
            return np.ones(np.shape(self._T) + (1,))
        return self._phase_fractions

    @property
    def vapor_fraction(self):
        """Molar vapour fraction β [-]."""
        return _out(self._beta)

    @property
    def x(self):
        """Overall mole fractions, shape (..., nc)."""
        return self._x

    def _x_fixed(self):
        """The composition as one vector when every row has the fluid's own
        composition (the kernels then take their fixed-composition forms)."""
        x = self._x
        if isinstance(x, np.ndarray) and x.ndim >= 1 and x.strides[:-1] == (0,) * (x.ndim - 1):
            return x.reshape(-1, x.shape[-1])[0] if x.size else x
        return x

    @property
    def root_choice(self):
        """Which root of the cubic was taken, in words (single-phase states)."""
        choice = np.asarray(self._sol["choice"])
        labels = np.array([cubic.ROOT_CHOICE_TEXT[k] for k in range(len(cubic.ROOT_CHOICE_TEXT))], dtype=object)
        text = labels[choice]  # one table look-up for the whole batch
        return text if np.ndim(text) else str(text)

    @property
    def roots(self):
        """All real roots Z of the cubic (NaN for complex), shape (..., 3)."""
        return self._sol["roots"]

    # --- mass-based -------------------------------------------------------
    @property
    def molar_mass(self):
        """Molar mass of the (overall) content [kg/mol]."""
        return _out(np.asarray(self._x) @ self.fluid.molar_masses)

    @property
    def rho(self):
        """Molar density [mol/m³]."""
        return _out(1.0 / self._v)

    @property
    def rho_mass(self):
        """Mass density [kg/m³]."""
        return _out((np.asarray(self._x) @ self.fluid.molar_masses) / self._v)

    def _per_mass(self, value):
        return _out(np.asarray(value) / (np.asarray(self._x) @ self.fluid.molar_masses))

    h_mass = property(lambda self: self._per_mass(self._h), doc="Specific enthalpy [J/kg].")
    u_mass = property(lambda self: self._per_mass(self._u), doc="Specific internal energy [J/kg].")
    s_mass = property(lambda self: self._per_mass(self._s), doc="Specific entropy [J/(kg K)].")
    v_mass = property(lambda self: self._per_mass(self._v), doc="Specific volume [m³/kg].")
    cp_mass = property(lambda self: self._per_mass(self._single("cp")), doc="Cp [J/(kg K)].")
    cv_mass = property(lambda self: self._per_mass(self._single("cv")), doc="Cv [J/(kg K)].")

    # --- single-phase derivative properties --------------------------------
    def _require_single(self, what):
        if self._sol is None or np.any(self._phase_code >= TWO_PHASE):
            rows = np.argwhere(np.atleast_1d(self._phase_code) >= TWO_PHASE).ravel()[:5].tolist()
            raise EosfillError(
                f"{what} is a single-phase property; rows {rows} are two-phase "
                "(use state.liquid / state.vapour)")

    @cached_property
    def _derivs(self):
        self._require_single("derivative property")
        sol = self._sol
        if "cp" in sol:   # computed with the state by the (T, P) kernel
            return dict(dPdT=sol["dPdT"], dPdv=sol["dPdv"], cv=sol["cv"], cp=sol["cp"])
        from eosfill.model import properties as kp

        rows = kp.props_Tv_rows(self.fluid.params.kernel_model, self.fluid.kernel_ideal_gas,
                                self._T, sol["v"], self._x)
        dPdT, dPdv, cv = rows[..., kp.TV_DPDT], rows[..., kp.TV_DPDV], rows[..., kp.TV_CV]
        return dict(dPdT=dPdT, dPdv=dPdv, cv=cv, cp=cv - self._T * dPdT**2 / dPdv)

    def _single(self, name):
        return self._derivs[name]

    @property
    def dP_dT_v(self):
        """(∂P/∂T)_v [Pa/K]."""
        return _out(self._single("dPdT"))

    @property
    def dP_dv_T(self):
        """(∂P/∂v)_T [Pa mol/m³]."""
        return _out(self._single("dPdv"))

    @property
    def cv(self):
        """Isochoric heat capacity [J/(mol K)]: Cv° + Cv^R (C11)."""
        return _out(self._single("cv"))

    @property
    def cp(self):
        """Isobaric heat capacity [J/(mol K)]: Cv - T (∂P/∂T)_v² / (∂P/∂v)_T."""
        return _out(self._single("cp"))

    @property
    def kappa_T(self):
        """Isothermal compressibility -1/v (∂v/∂P)_T [1/Pa]."""
        return _out(-1.0 / (self._v * self._single("dPdv")))

    @property
    def speed_of_sound(self):
        """Speed of sound w = v √(-(Cp/Cv)(∂P/∂v)_T / M) [m/s]."""
        d = self._derivs
        M = np.asarray(self._x) @ self.fluid.molar_masses
        return _out(self._v * np.sqrt(-(d["cp"] / d["cv"]) * d["dPdv"] / M))

    @property
    def joule_thomson(self):
        """Joule-Thomson coefficient μ_JT = (T (∂v/∂T)_P - v)/Cp [K/Pa]."""
        d = self._derivs
        dvdT = -d["dPdT"] / d["dPdv"]
        return _out((self._T * dvdT - self._v) / d["cp"])

    @property
    def gamma(self):
        """Heat-capacity ratio Cp/Cv [-]."""
        d = self._derivs
        return _out(d["cp"] / d["cv"])

    # --- departures and fugacity --------------------------------------------
    def _cP(self):
        """P Σ x_i c_i [J/mol]: what the volume translation moves h and g by (V2)."""
        return np.asarray(self._P) * (np.asarray(self._x) @ self.fluid.volume_shift)

    @property
    def h_res(self):
        """Residual enthalpy H - H° at the same T, P [J/mol]: (C7) of the cubic, minus
        P c of the volume translation (V2) (zero without one)."""
        self._require_single("h_res")
        return _out(self._h_res - self._cP())

    @property
    def s_res(self):
        """Residual entropy S^R at the same T, P (C8) [J/(mol K)] (a translation leaves it)."""
        self._require_single("s_res")
        return _out(self._s_res)

    @property
    def u_res(self):
        """Residual internal energy U^R (C9) [J/mol] (a translation leaves it)."""
        self._require_single("u_res")
        return _out(self._h_res - R * self._T * (self._sol["Z"] - 1.0))

    @property
    def g_res(self):
        """Residual Gibbs energy G^R = H^R - T S^R [J/mol] (C6, minus P c with a translation)."""
        self._require_single("g_res")
        return _out(self._h_res - self._cP() - self._T * self._s_res)

    @property
    def a_res(self):
        """Residual Helmholtz energy A^R at the same T, P [J/mol] (a translation leaves it)."""
        self._require_single("a_res")
        return _out(self._h_res - self._T * self._s_res - R * self._T * (self._sol["Z"] - 1.0))

    @cached_property
    def _lnphi(self):
        self._require_single("ln_phi")
        from eosfill.model import properties as kp

        lnphi = kp.ln_phi_at_Z(self.fluid.params.kernel_model, self._T, self._P, self._sol["Z"], self._x_fixed())
        # Péneloux shift: ln φ_i - c_i P/(R T)
        return lnphi - self.fluid.volume_shift * (self._P / (R * self._T))[..., None]

    @property
    def ln_phi(self):
        """ln of the fugacity coefficient of each component (C10), shape (..., nc)."""
        return self._lnphi

    @property
    def fugacity(self):
        """Fugacity of each component x_i φ_i P [Pa], shape (..., nc)."""
        return np.asarray(self._x) * np.exp(self._lnphi) * np.asarray(self._P)[..., None]

    # solid-formation screening; set by eosfill.equilibrium.solid (the layer above) on import
    _solid_screen = None

    @cached_property
    def solid_risk(self):
        """Where a solid may form (triple point, melting and sublimation curves; freeze-out of
        mixture components): ``.flag`` per row, ``.messages``, ``.label``.  Computed on first use."""
        if State._solid_screen is None:
            raise EosfillError("solid_risk needs eosfill.equilibrium.solid (import eosfill.equilibrium)")
        return State._solid_screen(self)

    def __repr__(self):
        if np.ndim(self._T) == 0:
            return (f"State(T={self.T:.6g} K, P={self.P:.6g} Pa, v={self.v:.6g} m3/mol, "
                    f"h={self.h:.6g} J/mol, s={self.s:.6g} J/(mol K), phase={self.phase!r})")
        return f"State(batch of shape {self.shape})"
