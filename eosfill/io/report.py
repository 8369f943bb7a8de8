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

Where things are: the page shell here - :class:`Report` (a list of
:class:`Block` rendered by ``Report.to_html()`` / ``Report.to_markdown()``,
with its styles and the caution texts ``CAUTION_TITLE``/``CAUTION_TEXT``),
which other reports (studies) reuse - and the assembly (:func:`build_report`,
:func:`render_report`, :func:`write_report`); the words, inputs and limits in
:mod:`eosfill.io.report_words`; the model, results and balance sections in
:mod:`eosfill.io.report_sections`; the plots in :mod:`eosfill.io.plots`.

Plots need matplotlib (drawn with its Agg canvas, imported on first use);
without it :func:`write_report` raises :class:`eosfill.errors.EosfillError`
saying so.  The two-phase region of a mixture takes a few seconds
(bubble and dew points); it is cached per composition within a process.

Results are estimates from an equation of state and simplified models;
local codes, the vessel's approval documents and licensed practice govern.
"""
from __future__ import annotations

import base64
import html
from dataclasses import dataclass, field
from pathlib import Path

# the report's sections, importable from here as before
from eosfill.io.report_sections import (REFERENCE_STATE, balance_blocks, result_blocks,  # noqa: F401
                                        source_blocks)
from eosfill.io.report_words import (_Fmt, input_rows, input_tables, job_paragraph,  # noqa: F401
                                     limit_blocks)


CAUTION_TITLE = "Caution"
CAUTION_TEXT = ("Results are estimates from an equation of state and simplified heat-transfer models "
                "(adiabatic, lumped-wall or constant-coefficient). Local codes, the vessel's approval "
                "documents and licensed practice govern. Check the model's density error for your gas "
                "before trusting a mass.")

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
                mark = "&#9888; " if b.tone in ("caution", "limits") else ""  # a warning sign only where one is due
                out.append(f'<div class="box {b.tone}" role="note"><p class="boxtitle">{mark}{e(b.text)}</p>'
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
                mark = "⚠ " if b.tone in ("caution", "limits") else ""
                out.append(f"> **{mark}{_md(b.text)}**")
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
.box.neutral{border-color:#777;background:#f4f4f4}
.box.note{border-color:#8a6d00;background:#fffbe6}
.boxtitle{font-weight:bold;margin:.3em 0}
figure{margin:1em 0}
figure img{max-width:100%;border:1px solid #ccc}
figcaption{font-size:.9em;color:#444}
pre{font-size:.8em;background:#f6f6f6;padding:.6em;overflow-x:auto}
table{min-width:24em;max-width:100%}
td{overflow-wrap:break-word}
@page{size:A4;margin:14mm}
@media print{body{max-width:none;margin:0;padding:0;font-size:10pt}
figure,table,.box,pre{break-inside:avoid}
h2,h3,caption{break-after:avoid}
details{display:block}
pre{white-space:pre-wrap;font-size:7pt}}
"""


def _md(text):
    return str(text).replace("\n", " ")


def _cell(text):
    return _md(text).replace("|", "\\|")


# --------------------------------------------------------------------------
# the whole report
# --------------------------------------------------------------------------
def build_report(scenario, result, trace_lines=None, plots=True) -> Report:
    """The report's blocks for a scenario and its result (vessel.Result or a time-resolved result)."""
    from eosfill.vessel.balances import Result

    fmt = _Fmt(scenario)
    title = scenario.title or (scenario.path.stem if scenario.path else "eosfill result")
    rep = Report(title)
    word = "vent" if scenario.kind in ("vent", "transient_vent") else "fill"
    rep.caution(CAUTION_TITLE, [CAUTION_TEXT, f"Limits below are checked on the computed figures; passing one "
                                f"does not stop the calculation, nor a real {word}."])
    rep.heading("The job")
    rep.para(job_paragraph(scenario, fmt, result))
    if scenario.description:
        rep.para(scenario.description)
    limit_blocks(rep, scenario, result, fmt)
    rep.heading("Inputs")
    rep.table(["input", "value (SI inside; shown in engineering units)"], input_rows(scenario, fmt),
              "Inputs as read from the scenario, defaults included")
    input_tables(rep, scenario, fmt)
    source_blocks(rep, scenario, fmt)
    result_blocks(rep, scenario, result, fmt)
    balance_blocks(rep, scenario, result, fmt, trace_lines)
    if plots:
        from eosfill.io.plots import plot_cascade, plot_time_series
        from eosfill.io.plots_path import plot_path

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
    from eosfill.io.trace_fill import trace_fill
    from eosfill.vessel.balances import Result

    if not isinstance(result, Result):
        return None
    v = _vessel_of(scenario)
    return trace_fill(scenario.fluid(), result, v.wall_heat_capacity, v.wall_temperature)


def render_report(scenario, result, path, trace=True) -> dict:
    """{path: bytes} of the HTML report at ``path``, its Markdown twin (same
    name, ``.md``) and the Markdown's plots (``<stem>.<plot>.png``); nothing written."""
    from eosfill.io.files import report_companions
    from eosfill.io.plots import require_matplotlib

    require_matplotlib()
    path = Path(path)
    lines = balance_trace(scenario, result) if trace else None
    rep = build_report(scenario, result, trace_lines=lines)
    names = {fig.name: f"{path.stem}.{fig.name}.png" for fig in rep.figures}
    files = {path: rep.to_html().encode("utf-8"),
             report_companions(path): rep.to_markdown(names).encode("utf-8")}
    for fig in rep.figures:
        files[path.parent / names[fig.name]] = fig.png
    return files


def write_report(scenario, result, path, trace=True, force=True):
    """Write ``path`` (HTML, self-contained) and its Markdown twin (same name, ``.md``).

    The Markdown's plots are written beside it as ``<stem>.<plot>.png``; all
    files or none (:func:`eosfill.io.files.commit`).  Returns the list of files written.
    """
    from eosfill.io.files import commit

    return commit(render_report(scenario, result, path, trace), force=force,
                  scenario_path=getattr(scenario, "path", None))
