"""The report of a study (``eosfill sweep ... --report study.html``).

Same page shell, caution box and Markdown twin as a run's report
(:class:`eosfill.io.report.Report`), built from the study's rows:

* the caution, and the study in words (cases, grids, draws, seed, limit search);
* the limit flags raised, counted over the cases (a caution box);
* each output's spread: min, 5th, 50th and 95th percentiles, max, mean and
  its standard error (:mod:`eosfill.study.stats`);
* a contour of the main outputs over the first two grid inputs (the other
  inputs averaged), or a line plot over one grid input;
* histograms of the main outputs with their 5/50/95 percentiles when
  inputs are drawn;
* the inputs ranked by Spearman's rank correlation with each main output;
* the limit-search curve (the input value at the limit over the first grid
  input);
* the failure table (every failed case, its inputs, exit class and message).

Numbers are shown in engineering units (°C, bar, L); the table file keeps SI.
Needs matplotlib.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from eosfill.io.plots import require_matplotlib
from eosfill.io.report import CAUTION_TEXT, CAUTION_TITLE, Report
from eosfill.study.stats import mean_and_standard_error, percentiles, rank_correlations

MAIN_OUTPUTS = ("T_gas_max [K]", "T_end [K]", "P_settled [Pa]", "T_wall_inner_min [K]", "T_min [K]",
                "P_max [Pa]", "P_end [Pa]", "mass_end [kg]", "short_fill [kg]")
MAX_FAILURE_ROWS = 200

# SI column unit -> (shown unit, scale, offset): shown = SI * scale + offset
_SHOWN = {"K": ("°C", 1.0, -273.15), "Pa": ("bar", 1e-5, 0.0), "m3": ("L", 1e3, 0.0), "m": ("mm", 1e3, 0.0),
          "Pa/s": ("MPa/min", 6e-5, 0.0)}


def _unit(col):
    head, sep, unit = col.rpartition(" [")
    return (head, unit.rstrip("]")) if sep else (col, "")


def shown(col, values):
    """(label, values) in engineering units for a column in SI."""
    name, unit = _unit(col)
    u, scale, offset = _SHOWN.get(unit, (unit, 1.0, 0.0))
    if unit == "K" and ("width" in name or "sd" in name):
        offset = 0.0  # a temperature difference
    label = f"{name} [{u}]" if u else name
    return label, np.asarray(values, dtype=float) * scale + offset


def _difference(col):
    """The column name of a difference of ``col`` (a temperature difference has no offset)."""
    head, unit = _unit(col)
    return f"{head} width [{unit}]" if unit else f"{head} width"


def _fmt(x, digits=5):
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "—"
    return f"{x:.{digits}g}"


def _is_number(series):
    from pandas.api.types import is_bool_dtype, is_numeric_dtype

    return is_numeric_dtype(series) and not is_bool_dtype(series)


def _numeric_outputs(df, inputs):
    skip = set(inputs) | {"case", "status", "message", "flags", "limit runs"}
    out = []
    for c in df.columns:
        if c in skip or not _is_number(df[c]):
            continue
        v = np.asarray(df[c], dtype=float)
        if np.isfinite(v).any():
            out.append(c)
    return out


def _main_outputs(df, outputs, n=2):
    chosen = [c for c in MAIN_OUTPUTS if c in outputs and np.nanstd(np.asarray(df[c], dtype=float)) > 0]
    return chosen[:n] or outputs[:1]


def _study_words(study, df):
    spec = study.spec
    parts = [f"{len(df)} cases of the scenario {study.path.name}"]
    for g in spec.grids:
        label, vals = shown(g.name, [v for v in g.values if isinstance(v, (int, float))]) if all(
            isinstance(v, (int, float)) for v in g.values) else (g.name, None)
        text = ", ".join(_fmt(v) for v in vals) if vals is not None else ", ".join(map(str, g.values))
        parts.append(f"grid over {label}: {text}")
    for d in spec.draws:
        label, _ = shown(d.name, [0.0])
        ps = ", ".join(f"{k} {_fmt(shown(d.name if k != 'sd' else _difference(d.name), [v])[1][0])}"
                       for k, v in d.params.items())
        parts.append(f"{label} drawn from a {d.distribution} distribution ({ps})")
    if spec.draws:
        parts.append(f"{spec.samples} draws per grid point, seed {spec.seed}"
                     + (", Latin hypercube" if spec.latin_hypercube else ""))
    if spec.limit is not None:
        lim = spec.limit
        label, (value,) = shown(lim.output, [lim.limit])
        parts.append(f"for each case, the value of {shown(lim.input, [0.0])[0]} at which {label} reaches "
                     f"{_fmt(value)} (kept {lim.keep} it), searched in a bracket to a width of "
                     f"{_fmt(shown(lim.column(lim.input, 'bracket width'), [lim.tolerance])[1][0])}")
    return "; ".join(parts) + "."


def _figure_contour(df, x, y, z):
    from eosfill.io.plots import _figure, _png

    table = df.pivot_table(index=y, columns=x, values=z, aggfunc="mean")
    fig = _figure(7.0, 4.8)
    ax = fig.add_subplot(1, 1, 1)
    xl, X = shown(x, table.columns.to_numpy())
    yl, Y = shown(y, table.index.to_numpy())
    zl, Z = shown(z, table.to_numpy())
    if Z.shape[0] >= 2 and Z.shape[1] >= 2:
        cs = ax.contourf(X, Y, Z, levels=12, cmap="viridis")
        lines = ax.contour(X, Y, Z, levels=cs.levels, colors="k", linewidths=0.4)
        ax.clabel(lines, fontsize=7, fmt="%.4g")
        fig.colorbar(cs, ax=ax, label=zl)
    ax.plot(*np.meshgrid(X, Y), "k.", ms=2)
    ax.set_xlabel(xl)
    ax.set_ylabel(yl)
    return _png(fig), f"{zl} over {xl} and {yl} (mean over the other inputs; dots: cases)"


def _figure_lines(df, x, z):
    from eosfill.io.plots import _figure, _finish, _png

    g = df.groupby(x)[z]
    fig = _figure(7.0, 4.2)
    ax = fig.add_subplot(1, 1, 1)
    xl, X = shown(x, np.array(list(g.groups)))
    zl, mean = shown(z, g.mean().to_numpy())
    _, lo = shown(z, g.min().to_numpy())
    _, hi = shown(z, g.max().to_numpy())
    ax.plot(X, mean, "o-", label="mean over the other inputs")
    if np.any(hi > lo):
        ax.fill_between(X, lo, hi, alpha=0.25, label="range")
    _finish(ax, xl, zl)
    return _png(fig), f"{zl} over {xl}"


def _figure_histogram(df, z):
    from eosfill.io.plots import _figure, _finish, _png

    zl, v = shown(z, df[z])
    v = v[np.isfinite(v)]
    pc = percentiles(v)
    fig = _figure(7.0, 4.0)
    ax = fig.add_subplot(1, 1, 1)
    ax.hist(v, bins=max(5, min(40, int(math.sqrt(v.size)) * 2)), color="#4c72b0", alpha=0.8, label="cases")
    for q, style in zip((5, 50, 95), (":", "-", ":")):
        ax.axvline(pc[q], color="#b00020", ls=style, label=f"{q}th percentile {pc[q]:.4g}")
    _finish(ax, zl, "cases")
    return _png(fig), f"distribution of {zl} over the Monte Carlo draws ({v.size} cases)"


def _figure_limit(df, spec, x):
    from eosfill.io.plots import _figure, _finish, _png

    col = spec.limit.column(spec.limit.input)
    fig = _figure(7.0, 4.2)
    ax = fig.add_subplot(1, 1, 1)
    others = [g.name for g in spec.grids if g.name != x]
    groups = df.groupby(others[0]) if others else [(None, df)]
    for key, sub in groups:
        sub = sub.sort_values(x)
        xl, X = shown(x, sub[x])
        yl, Y = shown(col, sub[col])
        label = "" if key is None else f"{shown(others[0], [key])[0].split(' [')[0]} = {_fmt(shown(others[0], [key])[1][0])}"
        ax.plot(X, Y, "o-", label=label or "limit")
    _finish(ax, xl, yl)
    return _png(fig), f"{yl}: where {spec.limit.output.split(' [')[0]} reaches its limit, over {xl}"


def build_study_report(study, df, plots=True) -> Report:
    """The report's blocks for a study (:class:`eosfill.io.sweep.Study`) and its rows."""
    spec = study.spec
    title = f"Study: {study.case.data.get('title') or study.path.stem}"
    rep = Report(title)
    rep.caution(CAUTION_TITLE, [CAUTION_TEXT, "A study repeats one model over many inputs; it widens neither the "
                                "model's validity nor the vessel's approval. Flags mark limits passed; they do "
                                "not stop a real fill."])
    rep.heading("The study")
    rep.para(_study_words(study, df))
    inputs = [c for c in spec.keys if c in df.columns]  # a limit search's input is an output column
    ok = df[df["status"] == "ok"]
    failed = df[df["status"] != "ok"]
    counts = df["status"].value_counts().to_dict()
    rep.para(f"{len(ok)} of {len(df)} cases ran; {len(failed)} failed"
             + (" (" + ", ".join(f"{k}: {v}" for k, v in counts.items() if k != "ok") + ")" if len(failed) else "")
             + ". Every case is one row of the result table (SI units, unit in each column name).")
    if "flags" in ok:
        flagged = int((np.asarray(ok["flags"], dtype=float) > 0).sum())
        if flagged:
            rep.caution(f"Limits PASSED in {flagged} of {len(ok)} cases",
                        [f"{flagged} cases raised at least one limit flag (column flags); run one with "
                         "eosfill run to read its flags"], tone="limits")
        else:
            rep.caution("No limit passed", ["no case raised a limit flag"], tone="ok")
    outputs = _numeric_outputs(ok, inputs)
    rep.heading("Outputs over the cases")
    rows = []
    for c in outputs:
        label, v = shown(c, ok[c])
        pc = percentiles(v)
        m, se = mean_and_standard_error(v)
        rows.append([label, _fmt(np.nanmin(v) if np.isfinite(v).any() else None), _fmt(pc[5]), _fmt(pc[50]),
                     _fmt(pc[95]), _fmt(np.nanmax(v) if np.isfinite(v).any() else None),
                     f"{_fmt(m)} ± {_fmt(se, 2)}"])
    rep.table(["output", "min", "5 %", "50 %", "95 %", "max", "mean ± standard error"], rows,
              "Percentiles by linear interpolation (numpy.percentile); standard error s/√n")
    main = _main_outputs(ok, outputs)
    if spec.limit is not None:  # a limit search: its answer is the output of the study
        answer = spec.limit.column(spec.limit.input)
        main = [answer] + [c for c in main if c != answer][:1] if answer in outputs else main
    numeric_grids = [g.name for g in spec.grids if all(isinstance(v, (int, float)) for v in g.values)
                     and len(g.values) > 1]
    if len(ok) >= 3 and len(inputs) > 0:
        rep.heading("Which inputs matter")
        for z in main:
            ranking = rank_correlations(ok, [c for c in inputs if _is_number(ok[c])], z)
            rep.table(["input", "Spearman rank correlation ρ", "p-value"],
                      [[shown(n, [0.0])[0], f"{r:+.3f}", f"{p:.2g}"] for n, r, p in ranking],
                      f"Inputs ranked by |ρ| with {shown(z, [0.0])[0]} (Spearman 1904; monotone effects only)")
    if plots and len(ok):
        require_matplotlib()
        rep.heading("Plots")
        for z in main:
            if len(numeric_grids) >= 2:
                png, cap = _figure_contour(ok, numeric_grids[0], numeric_grids[1], z)
                rep.figure(f"contour-{len(rep.figures)}", png, cap)
            elif len(numeric_grids) == 1:
                png, cap = _figure_lines(ok, numeric_grids[0], z)
                rep.figure(f"lines-{len(rep.figures)}", png, cap)
            if spec.draws:
                png, cap = _figure_histogram(ok, z)
                rep.figure(f"histogram-{len(rep.figures)}", png, cap)
        if spec.limit is not None and numeric_grids:
            png, cap = _figure_limit(ok, spec, numeric_grids[0])
            rep.figure("limit", png, cap)
    rep.heading("Failed cases")
    if len(failed):
        head = ["case", *[shown(c, [0.0])[0] for c in inputs], "status", "message"]
        body = []
        for _, r in failed.head(MAX_FAILURE_ROWS).iterrows():
            vals = [str(r[c]) if isinstance(r[c], str) else _fmt(shown(c, [r[c]])[1][0], 6) for c in inputs]
            body.append([int(r["case"]), *vals, r["status"], r["message"]])
        rep.table(head, body, f"{len(failed)} failed cases" + (f" (first {MAX_FAILURE_ROWS} shown)"
                                                               if len(failed) > MAX_FAILURE_ROWS else "")
                  + "; status is the exit class: input 2, solver 3, internal 4")
    else:
        rep.para("None.")
    rep.caution(CAUTION_TITLE, [CAUTION_TEXT])
    return rep


def write_study_report(study, df, path):
    """Write ``path`` (HTML, self-contained) and its Markdown twin with PNG plots beside it; return the files."""
    require_matplotlib()
    path = Path(path)
    rep = build_study_report(study, df)
    files = {fig.name: f"{path.stem}.{fig.name}.png" for fig in rep.figures}
    md_path = path.with_suffix(".md") if path.suffix != ".md" else path.with_name(path.name + ".md")
    written = []
    for fig in rep.figures:
        p = path.parent / files[fig.name]
        p.write_bytes(fig.png)
        written.append(p)
    path.write_text(rep.to_html(), encoding="utf-8")
    md_path.write_text(rep.to_markdown(files), encoding="utf-8")
    return [path, md_path, *written]
