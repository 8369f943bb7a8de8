"""``eosfill sweep SCENARIO.toml -o results.parquet``: the command-line face of
:mod:`eosfill.io.sweep` (registered by :mod:`eosfill.io.cli` with one call).

Exit codes as the rest of the command line: 0 the sweep is done (also when
some cases failed: their rows say why, and the count is printed); 2 bad
input (the scenario, its [sweep], an option, an output folder that does not
exist, no Dask scheduler answering at --scheduler); 3 an eosfill error
outside the cases (e.g. the chunks of a study found incomplete on
assembly); 4 an internal error.  SIGTERM (and Ctrl-C) stop the sweep after
terminating its workers (exit 143 for SIGTERM); the chunks written stay,
and ``--resume`` continues from them.
"""
from __future__ import annotations

import signal
import sys

EXIT_INTERNAL = 4


def add_sweep_command(sub):
    """Add the ``sweep`` subcommand to the parser's subcommands."""
    p = sub.add_parser("sweep", help="run a study of a scenario with a [sweep] section: grids, Monte Carlo "
                       "draws, limit searches (docs/study.md)")
    p.add_argument("scenario", help="scenario file with a [sweep] section")
    p.add_argument("-o", "--output", required=True, metavar="FILE",
                   help="result table, one row per case: FILE.parquet (needs pyarrow) or FILE.csv")
    p.add_argument("--workers", type=int, metavar="N", help="processes of the local pool (default: all cores)")
    p.add_argument("--scheduler", metavar="tcp://HOST:PORT", help="run on this Dask scheduler instead of the "
                   "local pool (needs eosfill[dask])")
    p.add_argument("--resume", action="store_true", help="continue an interrupted sweep: run only the cases "
                   "not yet written")
    p.add_argument("--report", metavar="FILE", help="write a study report (HTML, plots embedded; needs matplotlib)")
    p.add_argument("--chunk-size", type=int, metavar="N", help="cases per task (default: about four tasks per worker)")
    p.set_defaults(func=cmd_sweep)
    return p


def _on_sigterm(signum, frame):
    raise SystemExit(128 + signum)


def cmd_sweep(args):
    from pathlib import Path

    from eosfill.errors import EosfillError, InputError

    old = signal.signal(signal.SIGTERM, _on_sigterm)
    try:
        for opt in ("workers", "chunk_size"):
            v = getattr(args, opt)
            if v is not None and v < 1:
                raise InputError(f"--{opt.replace('_', '-')}", v, "a whole number >= 1")
        if args.report is not None:
            from eosfill.io.plots import require_matplotlib

            p = Path(args.report)
            if not p.parent.resolve().is_dir():
                raise InputError("--report", args.report, message=f"--report {args.report}: the folder "
                                 f"{p.parent} does not exist")
            try:
                require_matplotlib()
            except EosfillError as exc:
                raise InputError("--report", args.report, message=f"--report: {exc}") from None
        from eosfill.io.sweep import load_study, study_summary
        from eosfill.study import run_study

        study = load_study(args.scenario)
        print(f"study of {args.scenario}: {len(study.cases)} cases", file=sys.stderr)
        df = run_study(study.case, study.cases, run_batch=study.case.run_batch, output=args.output,
                       resume=args.resume, workers=args.workers, scheduler=args.scheduler,
                       chunk_size=args.chunk_size or study.spec.chunk_size, progress=True, what=study.text)
        for line in study_summary(df):
            print(line)
        print(f"rows written to {args.output}")
        if args.report is not None:
            from eosfill.io.study_report import write_study_report

            write_study_report(study, df, args.report)
            print(f"study report written to {args.report}")
        from eosfill.io.scenario import CAUTION

        print(f"Caution: {CAUTION}")
        return 0
    except (EosfillError, KeyboardInterrupt, SystemExit):
        raise
    except Exception as exc:  # noqa: BLE001 - a bug of ours, not of the input
        import traceback

        traceback.print_exc()
        print(f"eosfill: internal error: {type(exc).__name__}: {exc}", file=sys.stderr)
        return EXIT_INTERNAL
    finally:
        signal.signal(signal.SIGTERM, old)
