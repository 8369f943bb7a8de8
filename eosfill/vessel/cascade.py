"""Cascade (multi-bank) fills to an end state: (V6) of :mod:`eosfill.vessel`.

Storage banks feed the vessel in order; each bank empties along its own
isentrope and the vessel receives the enthalpy it delivers, integrated over
the amount drawn (no time needed).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from eosfill.errors import InputError
from eosfill.vessel.vent import _gauss_legendre
from eosfill.vessel.balances import FILL_STOPS, T_NOMINAL, EndState, Result, Stream, Vessel, _brentq, _comp_dict, _Content, _energy_scale, _f, _initial_content, _limit_flags, _molar_mass, _nonneg, _overfill_flag, _positive, _recomputed_content, _refuse_unclosed, _scan_first, _settle, _state, _with_status, _z_of, common_fluid

@dataclass
class Bank:
    """A storage bank of a cascade: ``volume`` [m³] and its gas (a :class:`Stream` with T, P)."""

    volume: float
    gas: Stream
    name: str = ""

    def __post_init__(self):
        self.volume = _positive("bank.volume", self.volume, "a volume > 0 m3")
        if self.gas.P is None:
            raise InputError("bank.P", None, "the bank's initial pressure [Pa]")


class _BankDraw:
    """(V6): a bank venting along its own isentrope; H(N) = ∫_0^N h_b dN."""

    def __init__(self, fluid, z, bank: Bank):
        self.fluid, self.z, self.V = fluid, z, bank.volume
        st = _state(fluid, z, T=bank.gas.T, P=bank.gas.P)
        self.n0, self.s0, self.U0, self.st0 = bank.volume / _f(st.v), _f(st.s), bank.volume / _f(st.v) * _f(st.u), st

    def state(self, N):
        return _state(self.fluid, self.z, s=self.s0, v=self.V / (self.n0 - N))

    def H(self, N):
        if N <= 0:
            return 0.0
        x, w = _gauss_legendre(0.0, N, m=20, panels=3)
        st = _state(self.fluid, self.z, s=np.full(x.shape, self.s0), v=self.V / (self.n0 - x))
        return float(np.sum(w * np.asarray(st.h)))


@_with_status
def cascade_fill(vessel: Vessel, banks, initial: Stream | None = None, *, switch_pressure_difference=0.0,
                 stop="target_pressure", target=None, temperature_limit=None, heat=0.0,
                 settled_temperature=None, nominal_pressure=None, nominal_temperature=T_NOMINAL,
                 state_of_charge=False, limits=None, compare=True):
    """End state of a fill from several storage banks used in order.

    Each bank vents adiabatically along its own isentrope (V6) into the
    vessel; the next bank is taken when the bank-vessel pressure difference
    falls to ``switch_pressure_difference`` [Pa].  The integration is in the
    amount drawn (no time).  ``stop`` and ``target`` as for :func:`fill`
    (``"supply_pressure"``: use every bank to its switch point).  With
    ``compare`` the same fill from one bank of the banks' total volume at the
    highest bank's state is reported beside it.
    """
    if not isinstance(vessel, Vessel):
        raise InputError("vessel", vessel, "an eosfill.vessel.Vessel")
    banks = list(banks)
    if not banks:
        raise InputError("banks", banks, "one or more Bank")
    if stop not in FILL_STOPS:
        raise InputError("stop", stop, ", ".join(FILL_STOPS))
    if stop != "supply_pressure":
        target = _positive(stop, target, "a positive value (SI) for the stop criterion")
    dP_sw = _nonneg("switch_pressure_difference", switch_pressure_difference, "a pressure difference >= 0 Pa")
    V = vessel.volume
    fl = [b.gas.fluid for b in banks] + ([initial.fluid] if initial is not None else [])
    fluid, zs = common_fluid(*fl)
    zb = zs[:len(banks)]
    z0 = zs[len(banks)] if initial is not None else zb[0]
    n0, st0 = _initial_content(fluid, z0, initial, V)
    P0 = _f(st0.P) if st0 is not None else 0.0
    top = max(b.gas.P for b in banks)
    if stop == "target_pressure" and target > top:
        raise InputError("target_pressure", target, f"at most the highest bank pressure {top:.6g} Pa")
    if stop == "target_pressure" and target <= P0:
        raise InputError("target_pressure", target, f"above the initial pressure {P0:.6g} Pa")
    if temperature_limit is not None:
        temperature_limit = _positive("temperature_limit", temperature_limit, "a temperature > 0 K")
    T_settle = T_NOMINAL if settled_temperature is None else _positive("settled_temperature", settled_temperature)
    U0 = n0 * _f(st0.u) if st0 is not None else 0.0
    c = _Content(fluid, vessel, n0, z0, U0, initial.T if initial is not None else None, heat)
    draws = [_BankDraw(fluid, z, b) for z, b in zip(zb, banks)]
    cap = V / (1.0005 * float(np.max(fluid.params.b - fluid.volume_shift)))
    Mb = [_molar_mass(fluid, z) for z in zb]
    m0 = n0 * _molar_mass(fluid, z0)

    # running totals before the current bank
    n_v, nz_v, H_tot, m_v = n0, n0 * z0, 0.0, m0
    stages, flags = [], []
    notes = ["each bank vents adiabatically along its own isentrope (homogeneous outflow); the gas enters "
             "the vessel with the bank's enthalpy (isenthalpic throttle); the vessel is rigid and, apart "
             "from the heat given, adiabatic"]
    reached, met, done = "supply_pressure", True, False
    final_st = final_n = final_z = None
    bank_end = []
    for k, (d, bank) in enumerate(zip(draws, banks)):
        zk = zb[k]

        def vessel_at(N, d=d, zk=zk, n_v=n_v, nz_v=nz_v, H_tot=H_tot):
            n = n_v + N
            z = (nz_v + N * zk) / n
            return c.end_state(n, z, U0 + H_tot + d.H(N) + c.Q), n, z

        def crit(name, N, d=d, Mk=Mb[k], m_v=m_v, vessel_at=vessel_at):
            if name == "target_mass":
                return m_v + N * Mk - target
            if name == "target_fill_density":
                return (m_v + N * Mk) / V - target
            st, n, z = vessel_at(N)
            if name == "target_settled_pressure":
                return _f(_state(fluid, z, T=T_settle, v=V / n).P) - target
            if name == "temperature_limit":
                return _f(st.T) - temperature_limit
            return (_f(st.P) - target) / target

        def gap(N, d=d, vessel_at=vessel_at):
            return _f(d.state(N).P) - _f(vessel_at(N)[0].P) - dP_sw if N > 0 else \
                _f(d.st0.P) - (_f(vessel_at(0.0)[0].P) if n_v > 0 else 0.0) - dP_sw

        if gap(0.0) <= 0:
            stages.append(dict(bank=bank.name or str(k + 1), reason="skipped: not above the vessel pressure by the "
                               "switch difference", bank_T=_f(d.st0.T), bank_P=_f(d.st0.P), mass_drawn=0.0,
                               moles_drawn=0.0, energy_drawn=0.0, bank_composition=_comp_dict(fluid, zk),
                               vessel_T=_f(final_st.T) if final_st is not None else (initial.T if initial else float("nan")),
                               vessel_P=_f(final_st.P) if final_st is not None else P0, vessel_mass=m_v))
            bank_end.append(d.st0)
            continue
        # bracket the switch point: the bank cannot give all it holds
        N_cap = min(d.n0, cap - n_v)  # the bank empties, or the vessel reaches the model's densest content
        hi = 0.5 * N_cap
        for _ in range(60):
            if gap(hi) < 0:
                break
            hi = N_cap - 0.5 * (N_cap - hi)
        N_sw = _brentq(gap, 0.0, hi, xtol=1e-14 * d.n0, what=f"cascade bank {k + 1} switch")
        N_end, reason = N_sw, "switched (pressure difference reached)" if k < len(banks) - 1 else "equalised"
        if stop != "supply_pressure" and crit(stop, N_sw) >= 0:
            N_end = _brentq(lambda N: crit(stop, N), 0.0, N_sw, xtol=1e-14 * N_sw, what=f"cascade to {stop}")
            reached, reason, done = stop, f"stop criterion {stop} met", True
        if temperature_limit is not None:
            N_T, _ = _scan_first(lambda N: crit("temperature_limit", N), 0.0, N_end, npts=6)
            if N_T is not None:
                N_end, reached, reason, done = N_T, "temperature_limit", "temperature limit reached", True
        final_st, final_n, final_z = vessel_at(N_end)
        b_st = d.state(N_end) if N_end > 0 else d.st0
        bank_end.append(b_st)
        H_k = d.H(N_end)
        stages.append(dict(bank=bank.name or str(k + 1), reason=reason, bank_T=_f(b_st.T), bank_P=_f(b_st.P),
                           bank_mass_left=(d.n0 - N_end) * Mb[k], mass_drawn=N_end * Mb[k], energy_drawn=H_k,
                           moles_drawn=N_end, bank_composition=_comp_dict(fluid, zk),
                           vessel_T=_f(final_st.T), vessel_P=_f(final_st.P), vessel_mass=m_v + N_end * Mb[k]))
        n_v, nz_v, H_tot, m_v = final_n, nz_v + N_end * zk, H_tot + H_k, m_v + N_end * Mb[k]
        if done:
            break
    if final_st is None:
        raise InputError("banks", [b.gas.P for b in banks],
                         "at least one bank above the vessel pressure by the switch difference")
    if stop != "supply_pressure" and reached == "supply_pressure":
        met = False
        flags.append(f"stop criterion {stop} = {target:.6g} (SI) cannot be met: the banks are used up "
                     f"with {m_v:.6g} kg in the vessel")
        reached = "banks_used"
    elif stop == "supply_pressure":
        reached = "banks_used" if reached == "supply_pressure" else reached
        met = reached == "banks_used"
    else:
        met = reached == stop
    Tw = _f(final_st.T) if vessel.wall_heat_capacity > 0 else None
    final = EndState.of(fluid, final_st, final_n, V, wall=Tw)
    # closures: vessel + banks together (V1), (V6)
    U_banks0 = sum(d.U0 for d in draws)
    U_banks = 0.0
    for d, b_st, st in zip(draws, bank_end, stages):
        U_banks += (d.n0 - st["mass_drawn"] / _molar_mass(fluid, d.z)) * _f(b_st.u)
    U_banks += sum(d.U0 for d in draws[len(bank_end):])
    lhs = final_n * _f(final_st.u) + c.Cw * (_f(final_st.T) - (c.Tw0 or 0.0)) + U_banks
    # relative to the whole system's n R T (vessel and banks: a huge bank has a huge energy)
    n_sys = final_n + sum(d.n0 for d in draws) - (final_n - n0)
    e_cl = (lhs - U0 - U_banks0 - c.Q) / _energy_scale(n_sys, _f(final_st.T))
    e_vessel = (final_n * _f(final_st.u) + c.Cw * (_f(final_st.T) - (c.Tw0 or 0.0)) - U0 - H_tot - c.Q)
    m_cl = (final.mass - m_v) / final.mass
    e_cl, m_cl, p_res = _cascade_closure(fluid, V, final, st0, n0, z0, c, draws, banks, stages, bank_end, H_tot)
    _refuse_unclosed("cascade fill", e_cl, m_cl, p_res, dict(T=final.T, P=final.P, n=final.n))
    settled = _settle(fluid, final_z, final_n, V, T_settle, nominal_pressure, nominal_temperature, state_of_charge)
    lim = dict(limits or {})
    lim["_volume"] = V
    _limit_flags(final, lim, flags)
    _overfill_flag(settled, flags)
    res = Result(kind="cascade_fill", volume=V, stop=reached, stop_requested=stop, stop_met=met,
                 initial=EndState.of(fluid, st0, n0, V) if st0 is not None else None, final=final,
                 energy_closure=float(e_cl), mass_closure=float(m_cl), settled=settled, stages=stages,
                 energy=dict(U0=U0, Uf=final_n * _f(final_st.u), H_in=H_tot, Q=c.Q,
                             vessel_closure=e_vessel / _energy_scale(final_n, _f(final_st.T))),
                 flags=flags, notes=notes)
    if compare and len(banks) > 1:
        kbest = int(np.argmax([b.gas.P for b in banks]))
        one = Bank(sum(b.volume for b in banks), banks[kbest].gas, name="single")
        alt = cascade_fill(vessel, [one], initial, switch_pressure_difference=dP_sw, stop=stop, target=target,
                           temperature_limit=temperature_limit, heat=heat, settled_temperature=settled_temperature,
                           compare=False)
        res.comparison = dict(description=f"total volume {sum(b.volume for b in banks):.6g} m3 at the highest "
                              f"bank's state", T=alt.final.T, P=alt.final.P, mass=alt.final.mass, stop=alt.stop,
                              bank_P=alt.stages[-1]["bank_P"], bank_mass_drawn=alt.stages[-1]["mass_drawn"])
    return res


def _cascade_closure(fluid, V, final, st0, n0, z0, c, draws, banks, stages, bank_end, H_tot):
    """(V1), (V6) over the vessel and its banks from the reported states, each recomputed
    by its own evaluation (vessel end and start from T, P and composition; each bank's end
    from its reported T, P; each bank's start from its given T, P): relative energy and
    mass closures of the whole system and the largest two-phase pressure residual."""
    nf, Uf, p_res = _recomputed_content(fluid, final, V)
    Mf = _molar_mass(fluid, _z_of(fluid, final.composition))
    if st0 is not None:
        ini = EndState.of(fluid, st0, n0, V)
        n0r, U0r, p0 = _recomputed_content(fluid, ini, V)
        p_res = max(abs(p_res), abs(p0))
        m0r = n0r * _molar_mass(fluid, z0)
    else:
        U0r = m0r = 0.0
    U_b0 = U_b = m_b0 = m_b = 0.0
    for k, (d, bank) in enumerate(zip(draws, banks)):
        Mk = _molar_mass(fluid, d.z)
        st_b0 = _state(fluid, d.z, T=bank.gas.T, P=bank.gas.P)
        nb0 = bank.volume / _f(st_b0.v)
        U_b0 += nb0 * _f(st_b0.u)
        m_b0 += nb0 * Mk
        if k < len(stages):
            es = EndState(T=stages[k]["bank_T"], P=stages[k]["bank_P"], n=nb0 - stages[k]["moles_drawn"],
                          mass=0.0, composition=stages[k]["bank_composition"], phase=str(bank_end[k].phase),
                          vapor_fraction=_f(bank_end[k].vapor_fraction))
            nb, Ub, pb = _recomputed_content(fluid, es, bank.volume)
            p_res = max(abs(p_res), abs(pb))
        else:
            nb, Ub = nb0, nb0 * _f(st_b0.u)
        U_b += Ub
        m_b += nb * Mk
    n_sys = final.n + sum(d.n0 for d in draws) - (final.n - n0)
    e = (Uf + c.Cw * (final.T - (c.Tw0 or 0.0)) + U_b - U0r - U_b0 - c.Q) / _energy_scale(n_sys, final.T)
    m = (nf * Mf + m_b - m0r - m_b0) / (m0r + m_b0)
    return float(e), float(m), float(p_res)
