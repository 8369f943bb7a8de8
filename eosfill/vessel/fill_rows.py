"""Fills from a supply at constant state as rows of arrays: the end state and the
stop criteria's residuals for many amounts at once, and the amount admitted at which
each row's stop criterion is met (a pressure, a settled pressure, the supply pressure).

:func:`eosfill.vessel.fill` solves one fill as one row of :class:`FillRows`;
:func:`eosfill.vessel.batch.fill_to_stop` solves many as many rows, with the same
code: the root search (:func:`eosfill.vessel.roots.increasing_roots`) works row by
row, and every state is solved by :func:`eosfill.vessel.inputs._rows_state`, whose
rows equal the same states solved alone.  So a batch row equals the single fill of
the same case bit for bit.

Balances, as in :mod:`eosfill.vessel.balances`:

* z_f = (n_0 z_0 + N z_in) / (n_0 + N), N = n_f - n_0               (V1)
* E = U_0 + N h_in + Q;  end state (u, v) = (E / n_f, V / n_f)      (V2)-(V3)
* settled state (T_settle, V / n_f)                                  (V7)

An initial content of the supply's composition (every mole fraction the same) keeps
that composition exactly (the mixing rule (V1) gives it up to rounding), so that the
rows of a batch share one composition and one call of each state solver.
"""
from __future__ import annotations

import numpy as np

from eosfill.errors import ConvergenceError, EosfillError, InputError
from eosfill.vessel.inputs import _rows_state
from eosfill.vessel.roots import increasing_roots

ROOT_STOPS = ("target_pressure", "target_settled_pressure", "supply_pressure")
#: a pressure stop criterion is met when |P / P_goal - 1| <= TARGET_RTOL at the end (the root
#: search stops at 1e-13, or at a bracket of 1e-14 n; dln P/dln n is of order 1 to 3)
TARGET_RTOL = 1e-10
#: the flow stops at the supply pressure: an end pressure above it by more than this (relative)
SUPPLY_SLACK = 1e-12


def mixed_composition(n0, z0, N, z_in):
    """(V1) z after N mol of composition z_in entered a content of n0 mol of z0
    (z_in itself when the vessel was empty or held the supply's composition)."""
    if n0 > 0 and not np.array_equal(z0, z_in):
        return (n0 * z0 + N * z_in) / (n0 + N)
    return np.array(z_in, dtype=float)


def target_error(stop, target, supply_P, P0, m0, V):
    """The InputError of a stop criterion the supply cannot reach by its nature (or None)."""
    if P0 >= supply_P:
        return InputError("supply.P", supply_P, f"a supply pressure above the vessel's initial {P0:.6g} Pa")
    if stop == "target_pressure" and target > supply_P:
        return InputError("target_pressure", target,
                          f"at most the supply pressure {supply_P:.6g} Pa (a fill cannot end above it)")
    if stop == "target_pressure" and target <= P0:
        return InputError("target_pressure", target, f"above the initial pressure {P0:.6g} Pa")
    if stop == "target_mass" and target <= m0:
        return InputError("target_mass", target, f"above the initial mass {m0:.6g} kg")
    if stop == "target_fill_density" and target * V <= m0:
        return InputError("target_fill_density", target, f"above the initial {m0 / V:.6g} kg/m3")
    return None


def unmet_flag(stop, target, mass):
    """The flag of a stop criterion the flow cannot meet (it stops at the supply pressure)."""
    return (f"stop criterion {stop} = {target:.6g} (SI) cannot be met: the flow stops at the supply "
            f"pressure with {mass:.6g} kg in the vessel")


def first_guess(n0, V, v_in, phase_in):
    """A first upper end of the bracket in n: the supply's density (90 % of it for a liquid supply)."""
    return np.where(phase_in != "liquid", np.maximum(n0 * 1.05, V / v_in), 0.9 * V / v_in)


def densest(fluid, V):
    """The largest amount the model can hold in V: V / (1.0005 max(b - c))."""
    b_max = float(np.max(fluid.params.b - fluid.volume_shift))
    return V / (1.0005 * b_max)


class FillRows:
    """Fills of one supply composition ``z_in`` into vessels holding ``n0`` mol of ``z0``.

    Arrays (one value per row): ``V`` [m³], ``n0`` [mol], ``U0`` [J], ``h_in`` [J/mol],
    ``Q`` [J], ``T_settle`` [K], ``P_in`` [Pa] (supply), ``target`` (SI; NaN where
    none), ``n_guess`` and ``cap`` (first upper end and largest amount, mol).
    ``content``: a :class:`eosfill.vessel.closure._Content` for one row whose end
    state needs it (a wall taking part); None: the end state is the (u, v) state.
    """

    def __init__(self, fluid, z_in, z0, V, n0, U0, h_in, Q, T_settle, P_in, target, n_guess, cap, content=None):
        self.fluid = fluid
        self.z_in = np.asarray(z_in, dtype=float)
        self.z0 = np.asarray(z0, dtype=float)
        self.same = bool(np.array_equal(self.z0, self.z_in))
        arr = [np.atleast_1d(np.asarray(a, dtype=float)) for a in (V, n0, U0, h_in, Q, T_settle, P_in, target,
                                                                  n_guess, cap)]
        n = max(a.size for a in arr)
        (self.V, self.n0, self.U0, self.h_in, self.Q, self.T_settle, self.P_in, self.target, self.n_guess,
         self.cap) = (np.broadcast_to(a, (n,)).copy() for a in arr)
        self.size = n
        self.content = content

    # (V1) per row
    def compositions(self, rows, n):
        """{bytes: (z, positions)}: the rows' end compositions, rows of the same z together."""
        N = n - self.n0[rows]
        mix = (self.n0[rows] > 0) & (not self.same)
        if not mix.any():
            return {b"": (self.z_in, np.arange(rows.size))}
        groups = {}
        if (~mix).any():
            groups[b""] = (self.z_in, np.flatnonzero(~mix))
        k = np.flatnonzero(mix)
        n0 = self.n0[rows][k]
        zs = (n0[:, None] * self.z0[None, :] + N[k][:, None] * self.z_in[None, :]) / (n0 + N[k])[:, None]
        for j, z in zip(k, zs):
            key = z.tobytes()
            if key in groups:
                groups[key] = (groups[key][0], np.append(groups[key][1], j))
            else:
                groups[key] = (z, np.array([j]))
        return groups

    def end_states(self, rows, n):
        """(V2)-(V3): the end state of each row with n mol; (values, errors) as _rows_state."""
        rows = np.asarray(rows)
        n = np.asarray(n, dtype=float)
        out = {k: np.full(rows.size, np.nan) for k in ("T", "P", "v", "u", "h", "beta")}
        out["phase"] = np.full(rows.size, "", dtype=object)
        out["solid"] = np.zeros(rows.size, dtype=bool)
        errors = {}
        N = n - self.n0[rows]
        E = self.U0[rows] + N * self.h_in[rows] + self.Q[rows]
        for z, pos in self.compositions(rows, n).values():
            if self.content is not None:
                vals, errs = self._with_content(z, n[pos], E[pos])
            else:
                vals, errs = _rows_state(self.fluid, z, u=E[pos] / n[pos], v=self.V[rows[pos]] / n[pos])
            for k, v in vals.items():
                out[k][pos] = v
            errors.update({int(pos[j]): e for j, e in errs.items()})
        return out, errors

    def _with_content(self, z, n, E):
        out = {k: np.full(n.size, np.nan) for k in ("T", "P", "v", "u", "h", "beta")}
        out["phase"] = np.full(n.size, "", dtype=object)
        out["solid"] = np.zeros(n.size, dtype=bool)
        errors = {}
        for j in range(n.size):
            try:
                st = self.content.end_state(float(n[j]), z, float(E[j]))
            except EosfillError as exc:
                errors[j] = exc
                continue
            for k in ("T", "P", "v", "u", "h"):
                out[k][j] = float(np.asarray(getattr(st, k)))
            out["beta"][j] = float(np.asarray(st.vapor_fraction))
            out["phase"][j] = str(st.phase)
            out["solid"][j] = bool(st.solid_risk.messages)
        return out, errors

    def settled_pressures(self, rows, n):
        """(V7): the pressure of each row's content at T_settle; (values, errors)."""
        P = np.full(rows.size, np.nan)
        errors = {}
        for z, pos in self.compositions(rows, n).values():
            vals, errs = _rows_state(self.fluid, z, T=self.T_settle[rows[pos]], v=self.V[rows[pos]] / n[pos])
            P[pos] = vals["P"]
            errors.update({int(pos[j]): e for j, e in errs.items()})
        return P, errors

    def residual(self, name, rows, n):
        """The stop criterion ``name`` at n mol, relative: (P - P_goal) / P_goal."""
        if name == "target_settled_pressure":
            P, errors = self.settled_pressures(rows, n)
            goal = self.target[rows]
        else:
            vals, errors = self.end_states(rows, n)
            P = vals["P"]
            goal = self.P_in[rows] if name == "supply_pressure" else self.target[rows]
        return (P - goal) / goal, errors

    # the amount admitted
    def start(self):
        """(n_lo, errors): where each row's search starts.  An empty vessel: the first gas
        admitted expands into vacuum (a liquid supply may then fall below the model's
        temperature range), so start where the end state exists."""
        n_lo = np.where(self.n0 > 0, self.n0, 1e-9 * self.n_guess)
        errors = {}
        pending = np.flatnonzero(self.n0 == 0.0)
        for _ in range(9):
            if pending.size == 0:
                break
            _, errs = self.end_states(pending, n_lo[pending])
            retry = []
            for j, exc in errs.items():
                if isinstance(exc, InputError):
                    retry.append(j)
                else:
                    errors[int(pending[j])] = exc
            pending = pending[np.array(retry, dtype=int)]
            n_lo[pending] *= 10.0
        return n_lo, errors

    def solve(self, stop, start=None):
        """n_f of each row with its stop criterion met (one of ROOT_STOPS).

        Returns ``(n, reached, errors)``: the amount [mol], the stop reached per row (the
        criterion asked for, or ``"supply_pressure"`` where the flow stops at the supply
        pressure before it is met), {row: exception} of the rows that failed."""
        n_lo, errors = self.start() if start is None else (start[0], dict(start[1]))
        n = np.full(self.size, np.nan)
        reached = np.full(self.size, stop, dtype=object)
        rows = np.array([i for i in range(self.size) if i not in errors], dtype=int)

        def search(name, rows):
            x, fx, errs = increasing_roots(lambda r, at: self.residual(name, rows[r], at), n_lo[rows],
                                           self.n_guess[rows], self.cap[rows], f"fill to {name}")
            for j, exc in errs.items():
                errors[int(rows[j])] = self._named(name, rows[j], exc)
            # verified before it is returned: the criterion met within TARGET_RTOL
            for j in np.flatnonzero(np.isfinite(x) & ~(np.abs(fx) <= TARGET_RTOL)):
                errors[int(rows[j])] = ConvergenceError(
                    f"fill to {name}", f"the end pressure misses its goal by {fx[j]:.3g} (relative; allowed "
                    f"{TARGET_RTOL:g})", dict(n=float(x[j])), float(fx[j]))
                x[j] = np.nan
            n[rows] = x
            return rows[np.isfinite(x)]

        rows = search(stop, rows)
        if stop != "supply_pressure" and rows.size:
            vals, errs = self.end_states(rows, n[rows])
            for j, exc in errs.items():
                errors[int(rows[j])] = exc
            over = np.array([j not in errs for j in range(rows.size)], dtype=bool) & (
                vals["P"] > self.P_in[rows] * (1.0 + SUPPLY_SLACK))
            if over.any():
                # the flow stops at the supply pressure before the criterion is met
                redo = rows[over]
                reached[redo] = "supply_pressure"
                search("supply_pressure", redo)
        n[list(errors)] = np.nan
        return n, reached, errors

    def _named(self, name, i, exc):
        """A settled-pressure target the initial content already passes is an input error."""
        if (name == "target_settled_pressure" and isinstance(exc, ConvergenceError)
                and "f_lo" in exc.last_iterate and exc.last_iterate["f_lo"] > 0):
            P0s = self.target[i] * (1.0 + exc.last_iterate["f_lo"])
            return InputError("target_settled_pressure", float(self.target[i]),
                              f"above the initial content's settled pressure {P0s:.6g} Pa at "
                              f"{self.T_settle[i]:.6g} K")
        return exc
