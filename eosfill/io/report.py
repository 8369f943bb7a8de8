"""Reports of a scenario's result: one self-contained HTML file and its Markdown twin.

:func:`write_report` writes ``NAME.html`` (styles inline, plots embedded as
PNG data URIs, no outside link) and ``NAME.md`` beside it (the same text and
numbers; its plots are written next to it as ``NAME.<plot>.png``).  Both
are built from one list of blocks (:func:`build_report`), so that the two
files carry the same numbers.

Sections: the caution; the job in words; the inputs with their units; the
model and data sources (model citation, each component's data keys with
their citations from ``data/SOURCES.md``, k_ij and their sources, the
reference state); the results (end states, settled state, short fill,
state of charge, liquefied-gas figures, cascade banks, time-resolved
peaks); the energy and mass balance with its closure; the limits checked
and those passed (in a caution box); the plots; and the balance trace.

Plots need matplotlib (drawn with its Agg canvas, imported on first use);
without it :func:`write_report` raises :class:`eosfill.errors.EosfillError`
saying so.  The two-phase region of a mixture takes a few seconds
(bubble and dew points); it is cached per composition within a process.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import base64
import functools
import html
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np


CAUTION_TITLE = "Caution"
CAUTION_TEXT = ("Results are estimates from an equation of state and simplified heat-transfer models "
                "(adiabatic, lumped-wall or constant-coefficient). Local codes, the vessel's approval "
                "documents and licensed practice govern. Check the model's density error for your gas "
                "before trusting a mass.")
REFERENCE_STATE = ("Reference state: each component as ideal gas with H = 0 and S = 0 at 298.15 K and "
                   "101 325 Pa (enthalpies, internal energies and entropies in this report are relative to it).")
# --------------------------------------------------------------------------
# blocks of a report
# --------------------------------------------------------------------------
@dataclass
class Block:
    """One piece of the report: kind is heading, para, caution, table, figure, pre."""

    kind: str
    text: str = ""
    level: int = 2
    lines: list = field(default_factory=list)
    header: list = field(default_factory=list)
    rows: list = field(default_factory=list)
    name: str = ""
    png: bytes = b""
    tone: str = "caution"


class Report:
    """The report as blocks; rendered to HTML and Markdown."""

    def __init__(self, title):
        self.title = title
        self.blocks = []

    def heading(self, text, level=2):
        self.blocks.append(Block("heading", text=text, level=level))

    def para(self, text):
        self.blocks.append(Block("para", text=text))

    def caution(self, title, lines, tone="caution"):
        self.blocks.append(Block("caution", text=title, lines=list(lines), tone=tone))

    def table(self, header, rows, caption=""):
        self.blocks.append(Block("table", text=caption, header=list(header),
                                 rows=[[str(c) for c in r] for r in rows]))

    def figure(self, name, png, caption):
        self.blocks.append(Block("figure", name=name, png=png, text=caption))

    def pre(self, title, text):
        self.blocks.append(Block("pre", text=title, lines=text.splitlines()))

    @property
    def figures(self):
        return [b for b in self.blocks if b.kind == "figure"]

    # ------------------------------------------------------------------
    def to_html(self) -> str:
        e = html.escape
        out = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
               f"<title>{e(self.title)}</title>", f"<style>{_CSS}</style></head><body>",
               f"<h1>{e(self.title)}</h1>"]
        for b in self.blocks:
            if b.kind == "heading":
                out.append(f"<h{b.level}>{e(b.text)}</h{b.level}>")
            elif b.kind == "para":
                out.append(f"<p>{e(b.text)}</p>")
            elif b.kind == "caution":
                items = "".join(f"<li>{e(x)}</li>" for x in b.lines)
                out.append(f'<div class="box {b.tone}" role="note"><p class="boxtitle">&#9888; {e(b.text)}</p>'
                           f"<ul>{items}</ul></div>")
            elif b.kind == "table":
                cap = f"<caption>{e(b.text)}</caption>" if b.text else ""
                head = "".join(f"<th>{e(h)}</th>" for h in b.header)
                body = "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in r) + "</tr>" for r in b.rows)
                out.append(f"<table>{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>")
            elif b.kind == "figure":
                data = base64.b64encode(b.png).decode("ascii")
                out.append(f'<figure id="plot-{e(b.name)}"><img alt="{e(b.text)}" '
                           f'src="data:image/png;base64,{data}"><figcaption>{e(b.text)}</figcaption></figure>')
            elif b.kind == "pre":
                out.append(f"<details><summary>{e(b.text)}</summary><pre>{e(chr(10).join(b.lines))}</pre></details>")
        out.append("</body></html>")
        return "\n".join(out) + "\n"

    def to_markdown(self, figure_files=None) -> str:
        figure_files = figure_files or {}
        out = [f"# {_md(self.title)}", ""]
        for b in self.blocks:
            if b.kind == "heading":
                out += ["#" * b.level + " " + _md(b.text), ""]
            elif b.kind == "para":
                out += [_md(b.text), ""]
            elif b.kind == "caution":
                out.append(f"> **⚠ {_md(b.text)}**")
                out.append(">")
                out += [f"> * {_md(x)}" for x in b.lines]
                out.append("")
            elif b.kind == "table":
                if b.text:
                    out += [f"*{_md(b.text)}*", ""]
                out.append("| " + " | ".join(_cell(h) for h in b.header) + " |")
                out.append("|" + "---|" * len(b.header))
                out += ["| " + " | ".join(_cell(c) for c in r) + " |" for r in b.rows]
                out.append("")
            elif b.kind == "figure":
                out += [f"![{_md(b.text)}]({figure_files.get(b.name, b.name + '.png')})", "", f"*{_md(b.text)}*", ""]
            elif b.kind == "pre":
                out += [f"**{_md(b.text)}**", "", "```text", *b.lines, "```", ""]
        return "\n".join(out).rstrip() + "\n"


_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Helvetica,Arial,sans-serif;max-width:1100px;margin:1.5em auto;
padding:0 1em;color:#1d1d1d;line-height:1.4}
h1{font-size:1.6em;border-bottom:2px solid #444;padding-bottom:.2em}
h2{font-size:1.25em;margin-top:1.6em;border-bottom:1px solid #bbb}
table{border-collapse:collapse;margin:.6em 0 1em 0;font-size:.92em}
caption{text-align:left;font-style:italic;padding:.2em 0}
th,td{border:1px solid #bbb;padding:.25em .6em;text-align:left;vertical-align:top}
th{background:#eee}
tbody tr:nth-child(even){background:#fafafa}
.box{border:3px solid #b36b00;background:#fff4e0;padding:.4em 1em;margin:1em 0;border-radius:4px}
.box.limits{border-color:#b00020;background:#ffe9ec}
.box.ok{border-color:#2e7d32;background:#eef7ee}
.boxtitle{font-weight:bold;margin:.3em 0}
figure{margin:1em 0}
figure img{max-width:100%;border:1px solid #ccc}
figcaption{font-size:.9em;color:#444}
pre{font-size:.8em;background:#f6f6f6;padding:.6em;overflow-x:auto}
"""


def _md(text):
    return str(text).replace("\n", " ")


def _cell(text):
    return _md(text).replace("|", "\\|")


# --------------------------------------------------------------------------
# formatting
# --------------------------------------------------------------------------
class _Fmt:
    """Numbers in the scenario's units and digits (engineering: bar, °C, L, kg)."""

    def __init__(self, scenario):
        out = scenario.output
        self.digits = int(out.digits) if out is not None else 6
        self.si = out is not None and out.units == "SI"

    def q(self, value, kind):
        from eosfill.io.units import format_quantity

        if value is None:
            return "—"
        if isinstance(value, float) and not math.isfinite(value):
            return "n/a"
        if self.si:
            unit = {"pressure": "Pa", "temperature": "K", "volume": "m**3", "mass": "kg", "time": "s",
                    "density": "kg/m**3", "length": "m", "mass_flow": "kg/s", "pressure_rate": "Pa/s"}.get(kind)
            return format_quantity(value, kind, unit=unit, digits=self.digits)
        return format_quantity(value, kind, digits=self.digits)

    def T(self, value):
        """Temperature with both °C and K (engineering) or K (SI)."""
        if value is None:
            return "—"
        if self.si:
            return self.q(value, "temperature")
        return f"{self.q(value, 'temperature')} ({self.n(value)} K)"

    def n(self, value, digits=None):
        from eosfill.io.units import format_number

        if value is None:
            return "—"
        return format_number(value, digits or self.digits)

    def energy(self, value):
        return f"{self.n(value / 1e3)} kJ"


def _comp_text(comp):
    if not comp:
        return "—"
    if len(comp) == 1:
        return next(iter(comp))
    return ", ".join(f"{k} {v:.6g}" for k, v in comp.items())


# --------------------------------------------------------------------------
# the report's sections
# --------------------------------------------------------------------------
_STOP_WORDS = {
    "target_pressure": ("the pressure reaches {}", "pressure"),
    "target_mass": ("the vessel holds {}", "mass"),
    "target_settled_pressure": ("the content, cooled to the settled temperature, would be at {}", "pressure"),
    "target_fill_density": ("the filling density (mass/volume) reaches {}", "density"),
}


def _stop_words(scenario, fmt):
    s = scenario.stop
    parts = []
    for key, (words, kind) in _STOP_WORDS.items():
        val = getattr(s, key)
        if val is not None:
            if kind == "density":
                parts.append(words.format(f"{fmt.n(val / 1e3)} kg/L"))
            else:
                parts.append(words.format(fmt.q(val, kind)))
    if s.supply_pressure:
        parts.append("the vessel reaches the supply (or last bank) pressure")
    if s.temperature_limit is not None:
        word = "falls to" if scenario.kind in ("vent", "transient_vent") else "rises to"
        parts.append(f"the gas temperature {word} {fmt.q(s.temperature_limit, 'temperature')}")
    if not parts and scenario.transient is not None:
        parts.append(f"{fmt.q(scenario.transient.duration, 'time')} have passed")
    return " or ".join(parts)


def job_paragraph(scenario, fmt=None):
    """The job stated in one paragraph of plain words."""
    fmt = fmt or _Fmt(scenario)
    sc = scenario
    v = sc.vessel
    fs = sc.fluid_spec
    vessel = f"a rigid vessel{' (' + v.name + ')' if v.name else ''} of {fmt.q(v.volume, 'volume')}"
    if v.wall_mass is not None and v.wall_specific_heat is not None:
        vessel += (f" whose wall ({fmt.q(v.wall_mass, 'mass')}, {fmt.n(v.wall_specific_heat)} J/(kg K)) "
                   "exchanges heat with the gas")
    ini = sc.initial
    if ini.empty:
        holds = "is empty (evacuated)"
    else:
        comp = _comp_text(ini.composition or fs.composition)
        amount = fmt.q(ini.pressure, "pressure") if ini.pressure is not None else fmt.q(ini.mass, "mass")
        holds = f"holds {comp} at {fmt.q(ini.temperature, 'temperature')} and {amount}"
    kind = sc.kind
    time_resolved = kind.startswith("transient")
    if kind in ("vent", "transient_vent"):
        what = "is vented"
        if sc.transient is not None:
            what += (f" through a {sc.transient.restriction.type.replace('_', ' ')} to "
                     f"{fmt.q(sc.transient.back_pressure or sc.ambient.pressure, 'pressure')}")
    elif sc.supply is not None:
        what = (f"is filled from a supply of {_comp_text(sc.supply.composition or fs.composition)} at "
                f"{fmt.q(sc.supply.temperature, 'temperature')} and {fmt.q(sc.supply.pressure, 'pressure')}")
        if kind == "liquefied_fill":
            what += " (a liquefied gas: the content may be two-phase)"
    else:
        banks = "; ".join(f"{b.name or i + 1}: {fmt.q(b.volume, 'volume')} at {fmt.q(b.pressure, 'pressure')}, "
                          f"{fmt.q(b.temperature, 'temperature')}" for i, b in enumerate(sc.banks))
        what = (f"is filled from {len(sc.banks)} storage bank{'s' if len(sc.banks) > 1 else ''} used in turn "
                f"({banks}), switching when a bank leads the vessel by "
                f"{fmt.q(sc.cascade.switch_pressure_difference, 'pressure')}")
    if time_resolved and kind == "transient_fill" and sc.transient is not None:
        what += f" through a {sc.transient.restriction.type.replace('_', ' ')}"
    model = {"PR": "Peng–Robinson (1976)", "PR78": "Peng–Robinson (1978 κ)", "SRK": "Soave–Redlich–Kwong (1972)"}
    how = ("followed in time" if time_resolved else "computed as an end state from the mass and energy balances "
           "(no time involved)")
    return (f"{vessel[0].upper() + vessel[1:]} {holds}. It {what}, until {_stop_words(sc, fmt)}. "
            f"The run is {how}, with the {model.get(fs.model, fs.model)} equation of state"
            + (f" (title: {sc.title})." if sc.title else "."))


_INPUT_KINDS = {
    "volume": "volume", "wall_mass": "mass", "mass": "mass", "wall_specific_heat": "specific_heat",
    "internal_area": "area", "external_area": "area", "working_pressure": "pressure",
    "working_temperature": "temperature", "temperature": "temperature", "pressure": "pressure",
    "wall_temperature": "temperature", "target_pressure": "pressure", "target_mass": "mass",
    "target_settled_pressure": "pressure", "settled_temperature": "temperature",
    "target_fill_density": "density", "temperature_limit": "temperature",
    "max_gas_temperature": "temperature", "min_gas_temperature": "temperature",
    "max_wall_temperature": "temperature", "min_wall_temperature": "temperature", "max_pressure": "pressure",
    "max_fill_density": "density", "switch_pressure_difference": "pressure", "duration": "time",
    "output_interval": "time", "back_pressure": "pressure", "diameter": "length", "mass_flow": "mass_flow",
    "rate": "pressure_rate", "inner_coefficient": "heat_transfer_coefficient",
    "outer_coefficient": "heat_transfer_coefficient",
}


def _input_value(fmt, key, value):
    if value is None:
        return None
    if key in ("composition",) and isinstance(value, dict):
        return _comp_text(value) + (" (mole fractions)" if len(value) > 1 else "")
    kind = _INPUT_KINDS.get(key)
    if kind == "temperature":
        return fmt.T(value)
    if kind == "switch_pressure_difference" or key == "switch_pressure_difference":
        return fmt.q(value, "pressure")
    if kind == "density":
        return f"{fmt.n(value)} kg/m³ ({fmt.n(value / 1e3)} kg/L)"
    if kind is not None:
        return fmt.q(value, kind)
    if isinstance(value, float):
        return fmt.n(value)
    return str(value)


def input_rows(scenario, fmt=None):
    """(key path, value with unit) for every input given or defaulted, from the Scenario (SI inside)."""
    from dataclasses import fields

    fmt = fmt or _Fmt(scenario)
    sc = scenario
    rows = [("kind", sc.kind)]
    if sc.title:
        rows.append(("title", sc.title))
    fs = sc.fluid_spec
    rows += [("fluid.composition", _input_value(fmt, "composition", fs.composition)), ("fluid.model", fs.model),
             ("fluid.volume_shift", fs.volume_shift)]
    for k in fs.kij:
        rows.append((f"fluid.kij[{k.pair[0]}, {k.pair[1]}]", fmt.n(k.kij)))

    def section(name, obj, skip=()):
        if obj is None:
            return
        for f in fields(obj):
            if f.name in skip or f.name.startswith("_"):
                continue
            val = getattr(obj, f.name)
            if val is None or val == "" or val is False:
                continue
            if isinstance(val, (list, tuple)) and not val:
                continue
            shown = _input_value(fmt, f.name, val)
            if shown is not None:
                rows.append((f"{name}.{f.name}", shown))

    section("vessel", sc.vessel)
    section("initial", sc.initial)
    section("supply", sc.supply)
    for i, b in enumerate(sc.banks):
        section(f"banks[{i + 1}]", b)
    if sc.kind == "cascade_fill" or sc.banks:
        section("cascade", sc.cascade)
    section("stop", sc.stop, skip=("settled_temperature",) if sc.kind in ("vent", "transient_vent") else ())
    section("ambient", sc.ambient)
    section("limits", sc.limits)
    if sc.transient is not None:
        section("transient", sc.transient, skip=("restriction", "heat_transfer", "output_times"))
        section("transient.restriction", sc.transient.restriction)
        section("transient.heat_transfer", sc.transient.heat_transfer)
    return rows


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
    from eosfill.io.accuracy import accuracy_lines

    rep.para(f"Equation of state: {model.name} — {model.citation}. Mixing: van der Waals one-fluid rule with "
             "binary interaction parameters k_ij (Michelsen & Mollerup 2007, ch. 3). Ideal-gas heat capacity: "
             "Poling, Prausnitz & O'Connell (2001) polynomial form.")
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


def _limits_checked(scenario):
    from dataclasses import asdict

    return {k: v for k, v in asdict(scenario.limits).items() if v is not None}


def limit_blocks(rep, scenario, result, fmt):
    rep.heading("Limits")
    lim = _limits_checked(scenario)
    checked = []
    for k, v in lim.items():
        kind = _INPUT_KINDS.get(k)
        checked.append(f"{k} = {_input_value(fmt, k, v) if kind else fmt.n(v)}")
    flags = list(result.flags)
    if flags:
        rep.caution(f"{len(flags)} limit{'s' if len(flags) > 1 else ''} or warning{'s' if len(flags) > 1 else ''} "
                    "PASSED", flags, tone="limits")
    else:
        rep.caution("No limit passed", ["none of the limits checked was passed"], tone="ok")
    rep.para("Limits checked: " + ("; ".join(checked) if checked else "none given") + ". The −40 °C / 85 °C gas "
             "temperature defaults are common values (from memory), not what any vessel is approved for; give "
             "the vessel's own limits.")


# --------------------------------------------------------------------------
# the whole report
# --------------------------------------------------------------------------
def build_report(scenario, result, trace_lines=None, plots=True) -> Report:
    """The report's blocks for a scenario and its result (vessel.Result or a time-resolved result)."""
    from eosfill.vessel.balances import Result

    fmt = _Fmt(scenario)
    title = scenario.title or (scenario.path.stem if scenario.path else "eosfill result")
    rep = Report(title)
    rep.caution(CAUTION_TITLE, [CAUTION_TEXT, "Flags below mark limits passed; they do not stop a real fill."])
    rep.heading("The job")
    rep.para(job_paragraph(scenario, fmt))
    if scenario.description:
        rep.para(scenario.description)
    limit_blocks(rep, scenario, result, fmt)
    rep.heading("Inputs")
    rep.table(["input", "value (SI inside; shown in engineering units)"], input_rows(scenario, fmt),
              "Inputs as read from the scenario, defaults included")
    source_blocks(rep, scenario, fmt)
    result_blocks(rep, scenario, result, fmt)
    balance_blocks(rep, scenario, result, fmt, trace_lines)
    if plots:
        from eosfill.io.plots import plot_cascade, plot_path, plot_time_series

        rep.heading("Plots")
        if not isinstance(result, Result):
            for name, png, cap in plot_time_series(scenario, result):
                rep.figure(name, png, cap)
        png, cap = plot_path(scenario, result)
        if png is not None:
            rep.figure("path", png, cap)
        else:
            rep.para(f"Temperature–entropy diagram not drawn: {cap}.")
        if isinstance(result, Result) and result.stages:
            png, cap = plot_cascade(scenario, result)
            rep.figure("cascade", png, cap)
    if trace_lines:
        from eosfill.io.trace import format_trace

        rep.heading("Calculation trace")
        rep.para("The balance with every number substituted, then every intermediate value of the end state "
                 "(equation and source on each line), for an auditor to redo by hand. "
                 "The same text is printed by: eosfill explain --scenario FILE.")
        rep.pre("Balance and end-state trace", format_trace(trace_lines))
    rep.caution(CAUTION_TITLE, [CAUTION_TEXT])
    return rep


def balance_trace(scenario, result):
    """The balance trace of a steady result (None for time-resolved results or on failure)."""
    from eosfill.io.inputs import _vessel_of
    from eosfill.io.trace import trace_fill
    from eosfill.vessel.balances import Result

    if not isinstance(result, Result):
        return None
    v = _vessel_of(scenario)
    return trace_fill(scenario.fluid(), result, v.wall_heat_capacity, v.wall_temperature)


def write_report(scenario, result, path, trace=True):
    """Write ``path`` (HTML, self-contained) and its Markdown twin (same name, ``.md``).

    The Markdown's plots are written beside it as ``<stem>.<plot>.png``.
    Returns the list of files written.
    """
    from eosfill.io.plots import require_matplotlib

    require_matplotlib()
    path = Path(path)
    lines = balance_trace(scenario, result) if trace else None
    rep = build_report(scenario, result, trace_lines=lines)
    html_text = rep.to_html()
    md_path = path.with_suffix(".md")
    if md_path == path:
        md_path = path.with_name(path.name + ".md")
    files = {}
    for fig in rep.figures:
        files[fig.name] = f"{path.stem}.{fig.name}.png"
    md_text = rep.to_markdown(files)
    written = []
    for fig in rep.figures:
        p = path.parent / files[fig.name]
        p.write_bytes(fig.png)
        written.append(p)
    path.write_text(html_text, encoding="utf-8")
    md_path.write_text(md_text, encoding="utf-8")
    return [path, md_path, *written]
