"""The report's model, results and balance sections: model and data sources
with their citations, start and end states, settled state, cascade banks,
time-resolved peaks, and the energy and mass balance.  Used by
:mod:`eosfill.io.report`.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import functools
import math
import re
from pathlib import Path

import numpy as np

from eosfill.io.report_words import _comp_text

REFERENCE_STATE = ("Reference state: each component as ideal gas with H = 0 and S = 0 at 298.15 K and "
                   "101 325 Pa (enthalpies, internal energies and entropies in this report are relative to it).")


@functools.lru_cache(maxsize=1)
def _source_citations():
    """{key: citation} from data/SOURCES.md (empty if the file is not found)."""
    from eosfill.model.components import data_dir

    out = {}
    for cand in (Path(data_dir()) / "SOURCES.md", Path(data_dir()).parent / "SOURCES.md"):
        if cand.is_file():
            for line in cand.read_text(encoding="utf-8").splitlines():
                m = re.match(r"^\|\s*([^|]+?)\s*\|\s*(.+?)\s*\|\s*$", line)
                if m and m.group(1) not in ("key", "---"):
                    out[m.group(1)] = m.group(2)
            break
    return out


def _cite(key):
    cit = _source_citations()
    k = str(key)
    if k in cit:
        return cit[k]
    if k.startswith("fit:"):
        base = cit.get(k[4:], "")
        return f"fit of the Poling polynomial to the reference equation {k[4:]}" + (f": {base}" if base else "")
    return ""


def source_blocks(rep, scenario, fmt):
    fluid = scenario.fluid()
    model = fluid.model
    rep.heading("Model and data sources")
    rep.para(f"Equation of state: {model.name} — {model.citation}. Mixing: van der Waals one-fluid rule with "
             "binary interaction parameters k_ij (Michelsen & Mollerup 2007, ch. 3). Ideal-gas heat capacity: "
             "Poling, Prausnitz & O'Connell (2001) polynomial form.")
    from eosfill.io.accuracy import accuracy_lines

    rep.table(["model part and source"], [[ln] for ln in fluid.model_description()], f"Model {model.name}: its parts")
    rep.table(["model error for this fluid"], [[ln] for ln in accuracy_lines(fluid)],
              "Measured against reference equations (data/model_accuracy.csv, docs/accuracy.md)")
    rep.para(REFERENCE_STATE)
    rows = []
    keys = []
    for c in fluid.components:
        rows.append([c.name, f"{c.Tc:.6g}", f"{c.Pc / 1e5:.6g}", f"{c.omega:.5g}", f"{c.M * 1e3:.6g}",
                     c.crit_source, c.cp_source, f"{c.cp_Tmin:g}–{c.cp_Tmax:g}"])
        keys += [c.crit_source, c.cp_source]
    rep.table(["component", "Tc K", "Pc bar", "ω", "M g/mol", "critical data", "Cp° data", "Cp° range K"], rows,
              "Component constants and the keys of their sources")
    if fluid.nc > 1:
        krows = []
        for i in range(fluid.nc):
            for j in range(i + 1, fluid.nc):
                a, b = fluid.names[i], fluid.names[j]
                src = fluid.kij_sources.get((a, b), fluid.kij_sources.get((b, a), ""))
                krows.append([f"{a} – {b}", fmt.n(float(fluid.kij[i, j])), src])
                keys.append(src.split(" ")[0])
        rep.table(["pair", "k_ij", "source"], krows, f"Binary interaction parameters ({model.name})")
    crows = []
    for k in dict.fromkeys(keys):
        cit = _cite(k)
        if cit:
            crows.append([k, cit])
    if crows:
        rep.table(["key", "citation"], crows, "Citations of the data keys (data/SOURCES.md)")


def _state_rows(fmt, states, V):
    """Rows of a side-by-side table of EndStates (label, state)."""
    rows = [["temperature"] + [fmt.T(s.T) for _, s in states],
            ["pressure"] + [fmt.q(s.P, "pressure") for _, s in states],
            ["mass"] + [fmt.q(s.mass, "mass") for _, s in states],
            ["amount"] + [f"{fmt.n(s.n)} mol" for _, s in states],
            ["density (mass / vessel volume)"] + [f"{fmt.n(s.mass / V)} kg/m³" for _, s in states],
            ["phase"] + [f"SOLID REGION (the cubic alone: {s.phase})" if getattr(s, "solid", None) else s.phase
                         for _, s in states]]
    if any(s.wall_temperature is not None for _, s in states):
        rows.append(["wall temperature"] + [fmt.T(s.wall_temperature) for _, s in states])
    if any(len(s.composition) > 1 for _, s in states):
        rows.append(["composition (mole fractions)"] + [_comp_text(s.composition) for _, s in states])
    if any(s.phase == "two-phase" for _, s in states):
        rows += [["liquid mass"] + [fmt.q(s.liquid_mass, "mass") for _, s in states],
                 ["vapour mass"] + [fmt.q(s.vapour_mass, "mass") for _, s in states],
                 ["liquid volume fraction"] + [fmt.n(s.liquid_volume_fraction, 4) for _, s in states]]
    return rows


def result_blocks(rep, scenario, result, fmt):
    from eosfill.vessel.balances import Result

    rep.heading("Results")
    if not isinstance(result, Result):
        return _transient_blocks(rep, scenario, result, fmt)
    r = result
    stop = f"Stopped by: {r.stop}"
    if r.stop != r.stop_requested:
        stop += f" (asked: {r.stop_requested}, {'met' if r.stop_met else 'NOT MET'})"
    rep.para(stop + ".")
    states = ([("initial", r.initial)] if r.initial is not None else []) + [("final", r.final)]
    rep.table(["", *[k for k, _ in states]], _state_rows(fmt, states, r.volume),
              "Vessel content at the start and at the end" + ("" if r.initial is not None else
                                                               " (the vessel starts empty)"))
    if r.supply:
        rep.para(f"Supply: {fmt.T(r.supply['T'])}, {fmt.q(r.supply['P'], 'pressure')}, phase "
                 f"{r.supply['phase']}, molar enthalpy {fmt.n(r.supply['h'])} J/mol (it enters with this "
                 "enthalpy: a throttle or regulator is isenthalpic).")
    if r.settled is not None:
        s = r.settled
        rows = [["settled temperature", fmt.T(s.T)], ["settled pressure", fmt.q(s.P, "pressure")],
                ["phase when settled", s.phase]]
        if s.nominal_pressure is not None:
            rows += [["nominal (working) pressure", fmt.q(s.nominal_pressure, "pressure")],
                     ["mass of a fill to the nominal pressure at the settled temperature", fmt.q(s.nominal_mass, "mass")],
                     ["short fill (that mass minus the mass held)", fmt.q(s.short_fill, "mass")]]
        if s.state_of_charge is not None:
            rows.append([f"state of charge (density relative to {fmt.q(s.nominal_pressure, 'pressure')} at "
                         f"{fmt.q(s.nominal_temperature, 'temperature')})", f"{100 * s.state_of_charge:.4g} %"])
        rep.table(["settled state (same content, constant volume)", "value"], rows,
                  "Settled state, short fill and state of charge (V7)")
    if r.liquefied:
        q = r.liquefied
        rows = [["filling density", f"{fmt.n(q['fill_density'] / 1e3)} kg/L"],
                ["liquid mass", fmt.q(q.get("liquid_mass"), "mass")],
                ["vapour mass", fmt.q(q.get("vapour_mass"), "mass")],
                ["liquid volume fraction", fmt.n(q.get("liquid_volume_fraction"), 4)
                 if q.get("liquid_volume_fraction") is not None else "—"]]
        if q.get("liquid_full_T") is not None:
            rows.append(["liquid-full (hydraulically full) on warming at", fmt.T(q["liquid_full_T"])])
        elif q.get("dry_T") is not None:
            rows.append(["never liquid-full on warming: the liquid is gone at", fmt.T(q["dry_T"])])
        else:
            rows.append(["on warming", q.get("liquid_full_note", "")])
        if q.get("default_max_fill_density") is not None:
            rows.append(["default filling-density limit (to confirm)", f"{fmt.n(q['default_max_fill_density'] / 1e3)} kg/L"])
        rep.table(["liquefied gas", "value"], rows, "Liquefied-gas figures")
        for line in q.get("defaults", []):
            rep.para(line)
    if r.stages:
        rows = []
        for st in r.stages:
            rows.append([st["bank"], st["reason"], fmt.q(st["mass_drawn"], "mass"), fmt.T(st["bank_T"]),
                         fmt.q(st["bank_P"], "pressure"), fmt.T(st["vessel_T"]), fmt.q(st["vessel_P"], "pressure"),
                         fmt.q(st["vessel_mass"], "mass")])
        rep.table(["bank", "ended", "mass delivered", "bank temperature after", "bank pressure after",
                   "vessel temperature after", "vessel pressure after", "vessel mass after"], rows,
                  "Cascade: each bank in turn (V6)")
    if r.comparison:
        c = r.comparison
        rep.para(f"The same fill from one bank instead ({c['description']}): vessel {fmt.T(c['T'])}, "
                 f"{fmt.q(c['P'], 'pressure')}, {fmt.q(c['mass'], 'mass')}; stopped by {c['stop']}; the bank ends "
                 f"at {fmt.q(c['bank_P'], 'pressure')}.")
    if r.vent:
        v = r.vent
        rows = [["mass let out", fmt.q(v["mass_out"], "mass")],
                ["lowest gas temperature (a safety figure for the vessel's material)", fmt.T(v["min_T"])],
                ["liquid formed", "yes, first at " + fmt.q(v["dew_P"], "pressure") if v["liquid_formed"] else "no"]]
        rep.table(["vent", "value"], rows, "Vent")
    for n in r.notes:
        rep.para("Model choice: " + n + ".")


def _transient_blocks(rep, scenario, r, fmt):
    rep.para(f"Time-resolved {r.kind}: {'complete' if r.complete else 'INCOMPLETE (integration stopped early)'}; "
             f"stop: {r.stop_reason}; duration {fmt.q(float(r.t[-1]), 'time')}.")
    rows = [["pressure", fmt.q(float(r.P[0]), "pressure"), fmt.q(float(r.P[-1]), "pressure")],
            ["gas temperature", fmt.T(float(r.T_gas[0])), fmt.T(float(r.T_gas[-1]))],
            ["mass", fmt.q(float(r.mass[0]), "mass"), fmt.q(float(r.mass[-1]), "mass")]]
    if np.isfinite(r.T_wall_inner).any():
        rows.append(["inner wall temperature", fmt.T(float(r.T_wall_inner[0])), fmt.T(float(r.T_wall_inner[-1]))])
        rows.append(["outer wall temperature", fmt.T(float(r.T_wall_outer[0])), fmt.T(float(r.T_wall_outer[-1]))])
    rows.append(["phase", str(r.phase[0]), str(r.phase[-1])])
    rep.table(["", "start", "end"], rows, "Vessel content at the start and at the end")
    prow = []
    for name, label in (("P", "pressure"), ("T_gas", "gas temperature"), ("T_wall_inner", "inner wall temperature"),
                        ("T_wall_outer", "outer wall temperature")):
        hi, thi = r.peak(name, "max")
        lo, tlo = r.peak(name, "min")
        if not math.isfinite(hi):
            continue
        f = (lambda x: fmt.q(x, "pressure")) if name == "P" else fmt.T
        prow.append([label, f(hi), fmt.q(thi, "time"), f(lo), fmt.q(tlo, "time")])
    rep.table(["series", "highest", "at", "lowest", "at"], prow, "Peaks over the run")
    if r.liquid_appeared:
        rep.para("A liquid phase appears during the run (homogeneous equilibrium assumed).")


def balance_blocks(rep, scenario, result, fmt, trace_lines=None):
    from eosfill.vessel.balances import Result

    rep.heading("Energy and mass balance")
    if not isinstance(result, Result):
        m0, m1 = float(result.mass[0]), float(result.mass[-1])
        rows = [["initial mass m_0", fmt.q(m0, "mass")], ["mass in", fmt.q(result.mass_in, "mass")],
                ["mass out", fmt.q(result.mass_out, "mass")],
                ["m_0 + in - out", fmt.q(m0 + result.mass_in - result.mass_out, "mass")],
                ["final mass", fmt.q(m1, "mass")],
                ["heat from the surroundings", fmt.energy(result.heat_from_ambient)],
                ["mass closure (relative, largest over the run)", f"{result.mass_closure:.3e}"],
                ["energy closure (relative, largest over the run, (T3))", f"{result.energy_closure:.3e}"]]
        rep.table(["term", "value"], rows, "Balances of the time-resolved run (T3)")
        return
    r = result
    e = r.energy
    rows = []
    if trace_lines:
        from eosfill.io.trace import trace_value

        keys = [("nf_uf", "n_f u_f (final internal energy)"), ("n0_u0", "n_0 u_0 (initial internal energy)"),
                ("wall", "C_w (T_f − T_w0) (taken up by the wall)"), ("H_in", "enthalpy brought in"),
                ("H_out", "enthalpy let out H_out"), ("Q", "heat added Q"), ("lhs", "left side"),
                ("rhs", "right side"), ("residual", "left − right")]
        for k, label in keys:
            try:
                val = trace_value(trace_lines, k)
            except KeyError:
                continue
            rows.append([label, f"{val:.10g} J"])
        eq = ("n_f u_f − n_0 u_0 + C_w (T_f − T_0) = −H_out   (V4)/(V5)" if r.kind == "vent" else
              "n_f u_f − n_0 u_0 + C_w (T_f − T_w0) = Σ_k H_k + Q   (V2), (V6)" if r.kind == "cascade_fill" else
              "n_f u_f − n_0 u_0 + C_w (T_f − T_w0) = (n_f − n_0) h_in + Q   (V2)")
        rep.para("Energy balance of the vessel: " + eq + ". Each term recomputed from the result's end "
                 "states (the full substitution is in the calculation trace at the end).")
    else:
        for k, v in e.items():
            rows.append([k, f"{v:.10g}"])
    rows.append(["energy closure (relative to n R T, from the solver)", f"{r.energy_closure:.3e}"])
    rows.append(["mass closure (relative)", f"{r.mass_closure:.3e}"])
    rep.table(["term", "value"], rows, "Energy and mass balance closure")
