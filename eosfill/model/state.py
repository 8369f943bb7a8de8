"""The :class:`State` of a :class:`~eosfill.model.mixture.Mixture` (its stored specification, derived
properties and solver status), the phase codes and the array helpers the package shares.

Neighbours: :mod:`eosfill.model.mixture` (the Mixture that makes single-phase States, and the map of
this split), :mod:`eosfill.model.phase_label` (:func:`phase_kind`, the label of a single-phase state).
Molar SI throughout; ``*_mass`` properties per kg.
"""
from __future__ import annotations

from functools import cached_property

import numpy as np

from eosfill.model import cubic
from eosfill.constants import R
from eosfill.errors import EosfillError, InputError

from eosfill.model.phases import GAS, LIQUID, PHASES, SUPERCRITICAL, THREE_PHASE, TWO_PHASE  # noqa: F401  (re-exported)

_CODES = tuple(np.int8(k) for k in range(len(PHASES)))   # the codes as numpy scalars, made once


def _as_float_array(name, value):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(name, value, "a real number or array of real numbers") from None
    if not np.all(np.isfinite(arr)):
        raise InputError(name, value, "finite numbers (no NaN or inf)")
    return arr


_KERNEL_MODULES = []


def _kernel_modules():
    """(one_state, properties) of eosfill.model, imported on first use (they import numba)."""
    if not _KERNEL_MODULES:
        from eosfill.model import one_state, properties

        _KERNEL_MODULES[:] = [one_state, properties]
    return _KERNEL_MODULES


def _out(arr):
    """0-d arrays leave as Python floats, others as arrays."""
    if type(arr) is float:
        return arr
    if isinstance(arr, np.generic):
        return arr.item()
    arr = np.asarray(arr)
    if arr.ndim == 0:
        return arr.item()
    return arr


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

    def __init__(self, fluid):  # fluid: a Mixture (eosfill.model.mixture, which imports this module)
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
        if not codes.ndim:
            return STATUS_TEXT[int(codes)]
        table = np.empty(max(STATUS_TEXT) + 1, dtype=object)   # the texts indexed by their codes
        table[list(STATUS_TEXT)] = list(STATUS_TEXT.values())
        return table[codes]

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

    @classmethod
    def _from_row(cls, fluid, T, P, row, x, cbar):
        """One single-phase state from its labelled (T, P) kernel row (TP_NCOL values of
        :mod:`eosfill.model.properties`, then ln φ_i) of
        :func:`eosfill.model.one_state.props_TP_state`; T, P floats, x the fluid's
        composition, cbar = Σ x c."""
        os1, kp = _kernel_modules()
        code = int(row[kp.TP_KIND])
        st = object.__new__(cls)
        # the attributes of __init__ and _set, set here directly (one state is made often)
        st.fluid, st.liquid, st.vapour, st.phases, st._phase_fractions = fluid, None, None, None, None
        st.solver_info = {}
        st.status_array = st.residual_array = st.iterations_array = None
        st._T, st._P = np.float64(T), np.float64(P)
        st._v, st._h, st._u, st._s = row[kp.TP_V], row[kp.TP_H], row[kp.TP_U], row[kp.TP_S]
        st._x, st._sol = x, os1.RowSol(row)
        st._h_res, st._s_res = row[kp.TP_H_RES], row[kp.TP_S_RES]
        st._v_eos, st._shift = row[kp.TP_V_EOS], row[kp.TP_SHIFT]
        st._cbar, st._row = cbar, row
        st._phase_code = _CODES[code]
        st._beta = 0.0 if code == LIQUID else 1.0
        return st

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
        code = self._phase_code
        if not np.ndim(code):
            return PHASES[int(code)]
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
        code = self._phase_code
        if self._sol is not None and (code < TWO_PHASE if not np.ndim(code) else not np.any(code >= TWO_PHASE)):
            return
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
        cbar = self.__dict__.get("_cbar")   # Σ x c, kept by a one-state constructor
        if cbar is not None:
            return self._P * cbar
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
        row = self.__dict__.get("_row")
        if row is not None:   # one state: ln φ came with its kernel row
            return row[-self.fluid.nc:]
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
