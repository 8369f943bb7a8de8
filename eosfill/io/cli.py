"""Command line: ``eosfill run | state | fluids | explain``.

Exit codes: 0 success; 2 bad input (a wrong option, a scenario error, an
unknown fluid, an output file that cannot be written); 3 a solver failed or
is not available; 4 an internal error of eosfill (a bug: please report it,
with the output of the same command run with ``--debug``).  Messages go to
stderr as one line, results to stdout; a traceback only with ``--debug``.

Examples::

    eosfill state --fluid "methane=0.9,ethane=0.1" --T "15 degC" --P "200 bar"
    eosfill explain --fluid nitrogen --model SRK --T "300 K" --P "5 MPa"
    eosfill explain --scenario data/scenarios/cylinder_fill_residual.toml
    eosfill fluids
    eosfill run data/scenarios/cng_fill.toml --json result.json --report result.html
"""
from __future__ import annotations

import argparse
import sys
import warnings

from eosfill import __version__
from eosfill.errors import EosfillError, InputError

EXIT_OK, EXIT_INPUT, EXIT_SOLVER, EXIT_INTERNAL = 0, 2, 3, 4

CAUTION = ("Caution: estimates from an equation of state and simplified models; local codes, the "
           "vessel's approval documents and licensed practice govern.")
REFERENCE = "Reference state: each component as ideal gas, H = 0 and S = 0 at 298.15 K and 101325 Pa."


# --------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------
def parse_fluid_text(text: str) -> dict:
    """``"methane=0.9,ethane=0.1"`` (or ``;`` separated, or one name) -> {name: fraction}."""
    text = (text or "").strip()
    if not text:
        raise InputError("--fluid", text, 'a fluid name or "name=fraction,name=fraction"')
    if "=" not in text:
        return {text: 1.0}
    comp = {}
    for part in text.replace(";", ",").split(","):
        if not part.strip():
            continue
        if "=" not in part:
            raise InputError("--fluid", text, message=f"--fluid {text!r}: {part.strip()!r} has no '=fraction'")
        name, _, value = part.rpartition("=")
        try:
            comp[name.strip()] = float(value)
        except ValueError:
            raise InputError("--fluid", text, message=f"--fluid {text!r}: fraction {value.strip()!r} "
                             "is not a number") from None
    return comp


def parse_kij_text(items) -> dict:
    """``["methane/carbon dioxide=0.09", ...]`` -> {(name1, name2): kij}."""
    out = {}
    for item in items or []:
        pair, sep, value = item.rpartition("=")
        names = pair.split("/")
        if not sep or len(names) != 2:
            raise InputError("--kij", item, message=f"--kij {item!r}: expected \"name1/name2=value\"")
        try:
            out[(names[0].strip(), names[1].strip())] = float(value)
        except ValueError:
            raise InputError("--kij", item, message=f"--kij {item!r}: {value!r} is not a number") from None
    return out


def _make_fluid(args):
    import math

    from eosfill.states.fluid import Fluid

    comp = parse_fluid_text(args.fluid)
    for name, x in comp.items():  # the checks a scenario file applies, in the command line's words
        if not math.isfinite(x) or x < 0.0 or x > 1.0:
            raise InputError("--fluid", args.fluid, message=f"--fluid {args.fluid!r}: fraction of {name} "
                             f"{x:g} is out of range: a fraction must be in [0, 1]")
    total = sum(comp.values())
    if total <= 0.0:
        raise InputError("--fluid", args.fluid, message=f"--fluid {args.fluid!r}: the fractions sum to zero")
    if abs(total - 1.0) > 1e-9 and not args.normalise:
        raise InputError("--fluid", args.fluid, message=f"--fluid {args.fluid!r}: the fractions sum to "
                         f"{float(total)!r}, not 1 (within 1e-9); correct them or add --normalise")
    for (a, b), k in parse_kij_text(args.kij).items():
        if not -1.0 < k < 1.0:
            raise InputError("--kij", k, message=f"--kij {a}/{b}={k:g}: out of range: must be > -1 and < 1")
    return Fluid(comp, model=args.model, kij=parse_kij_text(args.kij) or None,
                 basis=args.basis, normalise=args.normalise)


def _ambient_pressure(args):
    """``--ambient-pressure``: absolute, above 0 Pa (the same check as ``ambient.pressure`` in a file)."""
    from eosfill.io.units import check_range, is_gauge, parse_quantity

    raw = args.ambient_pressure
    if is_gauge(raw):
        raise InputError("--ambient-pressure", raw, message=f"--ambient-pressure = {raw!r}: must be absolute "
                         "(it is the zero of gauge pressures)")
    value = parse_quantity(raw, "pressure", "--ambient-pressure")
    check_range("--ambient-pressure", raw, value, "pressure", minimum=0.0, strict=True)
    return value


def _finite_state(st, what):
    """A state printed must have finite figures; a solver that returns NaN has failed."""
    import numpy as np

    from eosfill.errors import ConvergenceError

    bad = [k for k in ("T", "P", "v", "h", "s") if not np.all(np.isfinite(getattr(st, k)))]
    if bad:
        raise ConvergenceError(what, "non-finite " + ", ".join(bad),
                               {k: float(np.ravel(getattr(st, k))[0]) for k in ("T", "P", "v")})


def _fluid_options(p):
    p.add_argument("--fluid", required=p.prog.split()[-1] != "explain",
                   help='one fluid ("nitrogen") or a mixture ("methane=0.9,ethane=0.1")')
    p.add_argument("--model", default="PR", help="model: PR (default), PR78, SRK, tc-PR, tc-RK or PR-fitted "
                   "(case-insensitive; parts and sources: eosfill fluids)")
    p.add_argument("--basis", default="mole", choices=("mole", "mass"),
                   help="fractions in --fluid are mole (default) or mass fractions")
    p.add_argument("--normalise", action="store_true", help="rescale fractions to sum to one")
    p.add_argument("--kij", action="append", metavar="A/B=VALUE",
                   help='binary interaction parameter override, e.g. "methane/carbon dioxide=0.09" (repeatable)')
    p.add_argument("--ambient-pressure", default="101325 Pa",
                   help="zero of gauge pressures such as '20 barg' (default 101325 Pa)")


_STATE_KINDS = {"T": "temperature", "P": "pressure", "v": "molar_volume", "h": "molar_energy",
                "u": "molar_energy", "s": "molar_entropy"}


def _row(label, value, unit, alt=None):
    return (label, value, unit, alt or "")


def _state_table(fluid, st):
    import numpy as np

    from eosfill.io.units import format_number as fn

    M = st.molar_mass
    risk = st.solid_risk  # solid region / freeze-out screening (eosfill.equilibrium.solid)
    rows = [
        _row("phase", "solid region", "", f"{risk.label.partition(' (')[2].rstrip(')')}; the cubic alone says "
             f"{st.phase}") if risk else
        _row("phase", st.phase, "", st.root_choice if st.phase != "two-phase" else ""),
        _row("temperature", fn(st.T - 273.15), "°C", f"{fn(st.T)} K"),
        _row("pressure", fn(st.P / 1e5), "bar", f"{fn(st.P)} Pa"),
        _row("density", fn(st.rho_mass), "kg/m³", f"{fn(st.rho)} mol/m³"),
        _row("molar volume", fn(st.v), "m³/mol", f"{fn(st.v_mass)} m³/kg"),
        _row("compressibility Z", fn(st.Z), "", ""),
        _row("enthalpy h", fn(st.h), "J/mol", f"{fn(st.h_mass / 1e3)} kJ/kg"),
        _row("internal energy u", fn(st.u), "J/mol", f"{fn(st.u_mass / 1e3)} kJ/kg"),
        _row("entropy s", fn(st.s), "J/(mol K)", f"{fn(st.s_mass / 1e3)} kJ/(kg K)"),
        _row("molar mass", fn(M * 1e3), "g/mol", f"{fn(M)} kg/mol"),
    ]
    derived = [
        ("isobaric heat capacity cp", lambda: (fn(st.cp), "J/(mol K)", f"{fn(st.cp_mass / 1e3)} kJ/(kg K)")),
        ("isochoric heat capacity cv", lambda: (fn(st.cv), "J/(mol K)", f"{fn(st.cv_mass / 1e3)} kJ/(kg K)")),
        ("heat-capacity ratio cp/cv", lambda: (fn(st.gamma), "", "")),
        ("speed of sound", lambda: (fn(st.speed_of_sound), "m/s", "")),
        ("Joule-Thomson coefficient", lambda: (fn(st.joule_thomson * 1e5), "K/bar", f"{fn(st.joule_thomson)} K/Pa")),
    ]
    for label, get in derived:
        try:
            rows.append(_row(label, *get()))
        except EosfillError:
            rows.append(_row(label, "n/a (two-phase)", "", ""))
    if fluid.nc > 1:
        for n, x, w in zip(fluid.names, fluid.mole_fractions, fluid.mass_fractions):
            rows.append(_row(f"x {n}", fn(x), "mol/mol", f"{fn(w)} kg/kg"))
    if st.phase == "two-phase":
        beta = st.vapor_fraction
        m_v = beta * st.vapour.molar_mass / M  # vapour mass fraction of the content
        rows.append(_row("vapour fraction", fn(beta), "mol/mol", f"{fn(m_v)} kg/kg"))
        for label, ph in (("liquid", st.liquid), ("vapour", st.vapour)):
            rows.append(_row(f"{label} density", fn(ph.rho_mass), "kg/m³", f"{fn(ph.rho)} mol/m³"))
            if fluid.nc > 1:
                for n, x in zip(fluid.names, np.ravel(ph.x)):
                    rows.append(_row(f"  {label} x {n}", fn(x), "mol/mol", ""))
    width = max(len(r[0]) for r in rows)
    vw = max(len(str(r[1])) for r in rows)
    lines = [f"{fluid!r}"]
    for label, value, unit, alt in rows:
        line = f"  {label:<{width}}  {str(value):>{vw}} {unit}"
        if alt:
            line = f"{line:<{width + vw + 16}}  ({alt})"
        lines.append(line.rstrip())
    return "\n".join(lines)


# --------------------------------------------------------------------------
# commands
# --------------------------------------------------------------------------
def cmd_state(args):
    from eosfill.io.units import check_range, parse_quantity

    fluid = _make_fluid(args)
    amb = _ambient_pressure(args)
    spec = {}
    for key, kind in _STATE_KINDS.items():
        raw = getattr(args, key)
        if raw is not None:
            spec[key] = parse_quantity(raw, kind, f"--{key}", ambient_pressure=amb, molar_mass=fluid.molar_mass)
    if len(spec) != 2:
        raise InputError("state", sorted(spec), message="give exactly two of --T, --P, --v, --h, --u, --s "
                         f"(got {', '.join('--' + k for k in spec) or 'none'})")
    if "P" in spec:
        check_range("--P", args.P, spec["P"], "pressure", minimum=0.0, strict=True)
    import numpy as np

    with np.errstate(all="ignore"):  # a non-finite figure is checked below, not printed as a warning
        st = fluid.state(**spec)
        _finite_state(st, "state")
        table = _state_table(fluid, st)
    print(table)
    for message in st.solid_risk.messages:
        print(f"WARNING: {message}")
    print(REFERENCE)
    print(CAUTION)
    return EXIT_OK


def cmd_explain(args):
    from eosfill.io.trace import format_trace, trace_state
    from eosfill.io.units import check_range, parse_quantity

    if args.scenario is not None:
        return _explain_scenario(args)
    missing = [o for o in ("fluid", "T", "P") if getattr(args, o) is None]
    if missing:
        raise InputError("explain", None, message="explain: give --fluid, --T and --P (missing: "
                         + ", ".join("--" + m for m in missing) + "), or --scenario FILE")
    fluid = _make_fluid(args)
    amb = _ambient_pressure(args)
    T = parse_quantity(args.T, "temperature", "--T")
    P = parse_quantity(args.P, "pressure", "--P", ambient_pressure=amb)
    check_range("--P", args.P, P, "pressure", minimum=0.0, strict=True)
    print(format_trace(trace_state(fluid, T, P)))
    for message in fluid.state(T=T, P=P).solid_risk.messages:  # solid region screening
        print(f"WARNING: {message}")
    return EXIT_OK


def _explain_scenario(args):
    """The balance of a scenario's end state with its numbers, and the end state's trace."""
    from eosfill.io import jobs
    from eosfill.io.report import balance_trace
    from eosfill.io.scenario import load_scenario
    from eosfill.io.trace import format_trace

    scenario = load_scenario(args.scenario)
    if scenario.kind not in ("fill", "cascade_fill", "liquefied_fill", "vent"):
        raise InputError("--scenario", args.scenario, message=f"explain --scenario {args.scenario}: kind "
                         f"{scenario.kind!r} has no end-state balance to explain (fill, cascade_fill, "
                         "liquefied_fill and vent have)")
    result = jobs.run_scenario(scenario, write=False)
    print(format_trace(balance_trace(scenario, result)))
    return EXIT_OK


def _progress_bar(scenario):
    """A tqdm progress bar over simulated time for time-resolved runs, on stderr,
    only when stderr is a terminal (quiet in pipes, logs and CI)."""
    if scenario.transient is None or not sys.stderr.isatty():
        return None, None
    try:
        from tqdm import tqdm
    except ImportError:  # the bar is a convenience; run without it
        return None, None
    bar = tqdm(total=float(scenario.transient.duration), unit="s", desc="simulated time", file=sys.stderr,
               leave=False, bar_format="{desc}: {n:.1f}/{total:.1f} s |{bar}| {elapsed}")

    def progress(t):
        bar.update(max(0.0, min(float(t), bar.total) - bar.n))

    return bar, progress


def _require_report_tools(scenario):
    """A report needs matplotlib: say so before anything is computed or written."""
    if scenario.output.report is None:
        return
    from eosfill.io.plots import require_matplotlib

    try:
        require_matplotlib()
    except EosfillError as exc:
        raise InputError("--report", str(scenario.output.report), message=f"--report: {exc}") from None


def cmd_fluids(args):
    from eosfill.model.components import load_components

    comps, _ = load_components()
    header = ("name", "formula", "CAS", "M g/mol", "Tc K", "Pc bar", "omega", "critical data", "Cp° data")
    rows = [header]
    for c in comps.values():
        rows.append((c.name, c.formula, c.cas, f"{c.M * 1e3:.5f}", f"{c.Tc:.3f}", f"{c.Pc / 1e5:.4f}",
                     f"{c.omega:.5f}", c.crit_source, c.cp_source))
    widths = [max(len(r[k]) for r in rows) for k in range(len(header))]
    for r in rows:
        print("  ".join(f"{v:<{w}}" for v, w in zip(r, widths)).rstrip())
    print(f"{len(rows) - 1} fluids; sources are keys of data/SOURCES.md.")
    from eosfill.model.models import MODELS

    for m in MODELS.values():   # every model's parts and their sources
        print("\n" + "\n  ".join(m.describe()))
    return EXIT_OK


def cmd_run(args):
    from pathlib import Path

    from eosfill.io.scenario import load_scenario

    scenario = load_scenario(args.scenario, allow_output_outside=args.allow_output_outside)
    for key in ("json", "csv", "report"):
        raw = getattr(args, key)
        if raw is not None:
            setattr(scenario.output, key, Path(raw))
    from eosfill.io.files import check_outputs

    check_outputs(scenario, force=args.force)  # before anything is computed
    _require_report_tools(scenario)
    for line in scenario.summary():
        print(line)
    from eosfill.io import jobs

    bar, progress = _progress_bar(scenario)
    try:
        result = jobs.run_scenario(scenario, progress=progress, force=args.force)
    finally:
        if bar is not None:
            bar.close()
    from eosfill.io.summaries import render

    text = "" if result is None else render(result)
    if text:
        print(text)
    if "Caution" not in text:  # results carry their own caution; never print none
        print(CAUTION)
    return EXIT_OK


# --------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="eosfill",
        description="Fills and vents of rigid pressure vessels with real gases and mixtures, "
                    "from published cubic equations of state. " + CAUTION,
    )
    parser.add_argument("--version", action="version", version=f"eosfill {__version__}")
    parser.add_argument("--debug", action="store_true", help="on an error, print the full traceback too")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    p = sub.add_parser("run", help="run a scenario file (TOML)")
    p.add_argument("scenario", help="scenario file, e.g. fill.toml (schema: docs/scenario.md)")
    p.add_argument("--json", metavar="FILE", help="write the results as JSON")
    p.add_argument("--csv", metavar="FILE", help="write the time series or table as CSV")
    p.add_argument("--report", metavar="FILE", help="write an HTML report (self-contained, plots embedded) and "
                   "its Markdown twin FILE.md beside it, with the plots as PNG files; needs matplotlib")
    p.add_argument("--force", action="store_true", help="overwrite output files that exist (never the "
                   "scenario file)")
    p.add_argument("--allow-output-outside", action="store_true", help="let the scenario's [output] paths "
                   "leave the scenario file's folder")
    p.set_defaults(func=cmd_run)

    p = sub.add_parser("state", help="properties of a fluid at two given properties")
    _fluid_options(p)
    p.add_argument("--T", help='temperature, e.g. "15 degC", "300 K"')
    p.add_argument("--P", help='pressure, e.g. "200 bar", "3000 psi", "20 barg"')
    p.add_argument("--v", help='molar or specific volume, e.g. "1e-4 m3/mol", "0.005 m3/kg"')
    p.add_argument("--h", help='enthalpy, e.g. "-1200 J/mol", "350 kJ/kg"')
    p.add_argument("--u", help="internal energy, as --h")
    p.add_argument("--s", help='entropy, e.g. "-20 J/mol/K", "4 kJ/kg/K"')
    p.set_defaults(func=cmd_state)

    p = sub.add_parser("fluids", help="list the bundled fluids and their data sources")
    p.set_defaults(func=cmd_fluids)

    p = sub.add_parser("explain", help="calculation trace of a single-phase state at T, P, or of a "
                       "scenario's end state (--scenario)")
    _fluid_options(p)
    p.add_argument("--T", help='temperature, e.g. "15 degC"')
    p.add_argument("--P", help='pressure, e.g. "200 bar"')
    p.add_argument("--scenario", metavar="FILE", help="explain a scenario's end state instead: the mass and "
                   "energy balance with every number, then the end state's trace (kinds fill, cascade_fill, "
                   "liquefied_fill, vent)")
    p.set_defaults(func=cmd_explain)
    from eosfill.io.sweep_cli import add_sweep_command  # studies: eosfill sweep (eosfill.io.sweep_cli)

    add_sweep_command(sub)
    return parser


def _show_warning(message, category, filename, lineno, file=None, line=None):
    print(f"eosfill: warning: {message}", file=sys.stderr)


def _os_error_text(exc) -> str:
    """One line for a file the command could not read or write."""
    what = exc.strerror or type(exc).__name__
    where = f" {exc.filename}" if exc.filename else ""
    return f"cannot use the file{where}: {what}"


def main(argv=None) -> int:
    """Entry point of the ``eosfill`` command; returns the exit code.

    Every failure is one line on stderr and an exit code: 2 input (including
    files that cannot be read or written), 3 solver, 4 anything unexpected
    (an internal error, "please report"); ``--debug`` adds the traceback."""
    argv = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in argv
    argv = [a for a in argv if a != "--debug"]  # accepted before or after the command
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: --help (0) or a usage error (2)
        return int(exc.code or 0)
    old = warnings.showwarning
    warnings.showwarning = _show_warning
    try:
        return args.func(args)
    except InputError as exc:
        _debug_traceback(debug)
        print(f"eosfill: error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except EosfillError as exc:
        _debug_traceback(debug)
        print(f"eosfill: solver failure: {exc}", file=sys.stderr)
        return EXIT_SOLVER
    except BrokenPipeError:  # output piped into `head` and the like
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_OK
    except OSError as exc:  # a file that cannot be read or written: the user's input
        _debug_traceback(debug)
        print(f"eosfill: error: {_os_error_text(exc)}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("eosfill: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - the top-level guard: never a bare traceback
        _debug_traceback(debug)
        print(f"eosfill: internal error ({type(exc).__name__}: {str(exc).splitlines()[0] if str(exc) else ''}); "
              "this is a bug, please report it to the eosfill developers with the command, the scenario "
              "file and the output of the same command with --debug", file=sys.stderr)
        return EXIT_INTERNAL
    finally:
        warnings.showwarning = old


def _debug_traceback(debug):
    if debug:
        import traceback

        traceback.print_exc(file=sys.stderr)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
