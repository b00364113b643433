"""The ``scorewright`` command.

``main`` parses the arguments, builds a frozen options object, calls the command's ``run`` and
maps our exceptions to exit codes: 0 done (warnings allowed), 1 a check failed that the user
asked to fail on, 2 bad input or usage. Bad input never shows a traceback (``--traceback`` does,
for developers). Results go to stdout; messages, warnings and errors to stderr.

The work of each command is in ``commands`` (one table, ``COMMANDS``, from name to function);
the options, streams and exit codes both use are in ``options``.
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import sys
import warnings
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import IO

from .options import (
    EXIT_BAD_INPUT, EXIT_CODES, EXIT_OK, BuildOptions, DemoOptions, ExportOptions, InitOptions, MonitorOptions, ScoreOptions,
    SetOptions, Streams,
)

# Each command's work: module and function. The demo is a script over the other commands, so
# it sits above this module (scorecard.demo.run calls main); this lazy look-up is its only way in.
COMMANDS = {
    "init": "commands:run_init",
    "set": "commands:run_set",
    "build": "commands:run_build",
    "score": "commands:run_score",
    "monitor": "commands:run_monitor",
    "export": "commands:run_export",
    "demo": "demo.run:run_demo",
}


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser of every command."""
    parser = argparse.ArgumentParser(
        prog="scorewright",
        description="Build, validate and monitor a points scorecard for credit applications.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples(
            "scorewright init ledger.csv --target outcome --bad bad --out scorecard.toml",
            "scorewright build scorecard.toml --out run1/",
            "scorewright score run1/model.json new.csv --out scored.csv",
            "scorewright monitor run1/model.json q3.csv --out q3/",
            "scorewright export run1/model.json --out scorecard.pmml",
        ),
    )
    parser.add_argument("--version", action="version", version=f"scorewright {_version()}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
    _add_init(commands)
    _add_set(commands)
    _add_build(commands)
    _add_score(commands)
    _add_monitor(commands)
    _add_export(commands)
    _add_demo(commands)
    return parser


def _add_common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--quiet", "-q", action="store_true", help="hide warnings and progress (errors are always shown)")
    parser.add_argument("--traceback", action="store_true", help="show a Python traceback on errors (for developers)")


def _examples(*lines: str) -> str:
    return "examples:\n" + "\n".join(f"  {line}" for line in lines) + "\n\n" + EXIT_CODES


def _add_init(commands) -> None:
    parser = commands.add_parser(
        "init", help="read a ledger and write a settings file with a proposed classing",
        description=(
            "Read a labelled ledger, check it, and write a settings file that records the outcome "
            "mapping, the kind of every characteristic and a proposed classing with its information "
            "value. Edit the file, then run 'scorewright build' on it."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples(
            "scorewright init ledger.csv --target outcome --bad bad --good good --indeterminate cured",
            "scorewright init loans.parquet --target defaulted --special months_since_arrears=-1 --out loans.toml",
        ),
    )
    parser.add_argument("ledger", type=Path, help="the ledger: CSV, Parquet or .xlsx")
    parser.add_argument("--target", required=True, metavar="COLUMN", help="the outcome column")
    _add_ledger_options(parser)
    parser.add_argument("--out", type=Path, default=Path("scorecard.toml"), help="settings file to write (default: scorecard.toml)")
    parser.add_argument("--force", action="store_true", help="overwrite the settings file if it exists")
    _add_common(parser)
    parser.set_defaults(make_options=_init_options)


def _add_ledger_options(parser: argparse.ArgumentParser, *, only: str = "") -> None:
    """The options that say how to read a ledger, shared by init and the quick path of build (same meanings)."""
    parser.add_argument("--bad", nargs="+", default=(), metavar="VALUE", help=f"outcome values meaning bad (default for a 0/1 column: 1){only}")
    parser.add_argument("--good", nargs="+", default=(), metavar="VALUE", help=f"outcome values meaning good (default: every other value){only}")
    parser.add_argument("--indeterminate", nargs="+", default=(), metavar="VALUE", help=f"outcome values meaning neither{only}")
    parser.add_argument("--id", dest="id_column", metavar="COLUMN", help=f"the application id column (default: detected){only}")
    parser.add_argument("--date", dest="date_column", metavar="COLUMN", help=f"the application date column (default: detected){only}")
    parser.add_argument("--weight", dest="weight_column", metavar="COLUMN", help=f"a case-weight column{only}")
    parser.add_argument("--special", nargs="+", default=(), metavar="COLUMN=V[,V]",
                        help=f"special values of a numeric characteristic, each with its meaning after a colon, e.g. "
                             f"'months_since_arrears=-1:no arrears on record,999'{only}")
    parser.add_argument("--leave-out", nargs="+", default=(), metavar="COLUMN", help=f"columns that are not characteristics (e.g. recorded after the decision){only}")
    parser.add_argument("--out-of-time-from", default="", metavar="YYYY-MM-DD", help=f"rows dated on or after this date form the out-of-time sample{only}")
    parser.add_argument("--holdout", type=float, metavar="SHARE", help=f"share of the in-time rows kept back as the hold-out sample (default 0.3){only}")
    parser.add_argument("--rejected", default="", metavar="COLUMN=V[,V]",
                        help=f"the decision column and its values meaning rejected, e.g. 'decision=declined': those "
                             f"applications are set apart (reject inference: rejects.method in the settings){only}")


def _ledger_choices(args: argparse.Namespace) -> dict:
    """The ledger options as keyword arguments of InitOptions and BuildOptions."""
    return dict(bad=tuple(args.bad), good=tuple(args.good), indeterminate=tuple(args.indeterminate),
                id_column=args.id_column, date_column=args.date_column, weight_column=args.weight_column,
                special=tuple(args.special), leave_out=tuple(args.leave_out), out_of_time_from=args.out_of_time_from,
                holdout=args.holdout, rejected=args.rejected)


def _init_options(args: argparse.Namespace) -> InitOptions:
    return InitOptions(ledger=args.ledger, target=args.target, **_ledger_choices(args), out=args.out, force=args.force)


def _add_set(commands) -> None:
    parser = commands.add_parser(
        "set", help="change keys of a settings file from the command line, keeping its comments",
        description=(
            "Set one or more keys of a settings file, as you would by editing it: comments and layout "
            "are kept, and the result is checked before it is written. Values are written as in the file "
            "(numbers, true/false, \"text\", [lists]); a bare word is taken as text."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples(
            "scorewright set scorecard.toml characteristics.collections_status.use=never",
            "scorewright set scorecard.toml samples.holdout_fraction=0.25 'characteristics.age.cuts=[25, 35, 50]'",
        ),
    )
    parser.add_argument("settings", type=Path, help="the settings file to change")
    parser.add_argument("assignments", nargs="+", metavar="KEY=VALUE", help="dotted key and its new value")
    _add_common(parser)
    parser.set_defaults(make_options=lambda a: SetOptions(a.settings, tuple(a.assignments)))


def _add_build(commands) -> None:
    parser = commands.add_parser(
        "build", help="build the scorecard from a settings file (or straight from a ledger)",
        description=(
            "Build the scorecard the settings file describes: classing, selection, fit, points, checks. "
            "Writes model.json, the resolved settings.toml, summary.txt, report.html, workbook.xlsx and model-document.html into the output folder. "
            "Given a ledger instead of a settings file, builds with the default settings and the proposed classing."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples(
            "scorewright build scorecard.toml --out run1/",
            "scorewright build ledger.csv --target outcome --bad bad --date applied --out-of-time-from 2025-01-01 --out quick/",
        ),
    )
    parser.add_argument("source", type=Path, metavar="SETTINGS_OR_LEDGER", help="a settings file (.toml) or a ledger")
    parser.add_argument("--target", metavar="COLUMN", help="the outcome column (only when building straight from a ledger)")
    _add_ledger_options(parser, only="; ledger only, as for init")
    parser.add_argument("--out", type=Path, metavar="DIR", help="output folder (default: NAME-build beside the settings file or ledger)")
    parser.add_argument("--force", action="store_true", help="replace the outputs of an earlier build in the output folder")
    parser.add_argument("--no-reports", dest="reports", action="store_false", help="write model.json and settings.toml only")
    parser.add_argument("--timings", action="store_true", help="print the seconds each stage took to stderr, as JSON (for benchmarks)")
    parser.add_argument("--stream", action="store_true",
                        help="read the ledger in batches, never whole (automatic above ledger.stream_above_mb); same result")
    parser.add_argument("--engine", metavar="NAME", help="read and count the rows with this engine: in-process, duckdb or spark "
                        "(default: ledger.engine)")
    parser.add_argument("--previous", type=Path, metavar="MODEL", help="the model file this build replaces: the model "
                        "document's change log sets the two side by side")
    _add_common(parser)
    parser.set_defaults(
        make_options=lambda a: BuildOptions(a.source, a.target, **_ledger_choices(a), out=a.out, force=a.force,
                                            reports=a.reports, timings=a.timings, stream=a.stream, engine=a.engine,
                                            previous=a.previous),
    )


def _add_engine_options(parser: argparse.ArgumentParser) -> None:
    """Where a new ledger's rows are, for score and monitor: an engine, and a table or a query instead of a file."""
    parser.add_argument("--engine", metavar="NAME", default=None,
                        help="read and count the rows with this engine: in-process (the default), duckdb or spark")
    parser.add_argument("--table", default="", metavar="NAME",
                        help="the table holding the ledger: in the DuckDB database LEDGER, or in Spark's catalog (no LEDGER)")
    parser.add_argument("--query", default="", metavar="SQL", help="a SELECT whose rows are the ledger (run in the database LEDGER, if given)")


def _add_score(commands) -> None:
    parser = commands.add_parser(
        "score", help="score new applications with a saved model",
        description=(
            "Score every row of a ledger with a saved model. Writes one row per application: the id "
            "(or the row number), score, probability of default (pd) and the reasons that cost it the most points."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples(
            "scorewright score run1/model.json applications.csv --out scored.csv",
            "scorewright score run1/model.json applications.parquet --out scored.parquet --reasons 2",
            "scorewright score run1/model.json warehouse.duckdb --engine duckdb --table applications --out-table scores",
        ),
    )
    parser.add_argument("model", type=Path, help="model.json written by 'scorewright build'")
    parser.add_argument("ledger", type=Path, nargs="?",
                        help="applications to score: CSV, Parquet or .xlsx; through an engine also a folder of them or a DuckDB database")
    parser.add_argument("--out", type=Path, metavar="FILE", help="scored file to write (.csv or .parquet; Spark writes .parquet)")
    parser.add_argument("--out-table", default="", metavar="NAME",
                        help="write the scores as a table instead, through the engine (into the DuckDB database LEDGER, or Spark's catalog)")
    parser.add_argument("--reasons", type=int, metavar="N", help="reasons per application (default: reasons.count of the model's settings)")
    parser.add_argument("--force", action="store_true", help="overwrite FILE (or the table) if it exists")
    parser.add_argument("--stream", action="store_true", help="read and write in batches (automatic above ledger.stream_above_mb)")
    _add_engine_options(parser)
    _add_common(parser)
    parser.set_defaults(make_options=lambda a: ScoreOptions(a.model, a.ledger, a.out, a.reasons, a.force, a.stream,
                                                            a.engine, a.table, a.query, a.out_table))


def _add_monitor(commands) -> None:
    parser = commands.add_parser(
        "monitor", help="re-check a saved scorecard on a new quarter's applications",
        description=(
            "Score a new ledger with a saved model and compare it with the development baseline: "
            "stability of the score and of each characteristic, and, where outcomes are known, "
            "discrimination and calibration. Every check gets a status: ok, watch or act. "
            "Writes monitor.html and monitor.xlsx; with the model's date column, also per calendar quarter."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples(
            "scorewright monitor run1/model.json q3.csv --out q3/",
            "scorewright monitor run1/model.json latest.parquet --out checks/ --fail-on act",
            "scorewright monitor run1/model.json --engine spark --table lake.applications_2025q3 --out q3/",
        ),
    )
    parser.add_argument("model", type=Path, help="model.json written by 'scorewright build'")
    parser.add_argument("ledger", type=Path, nargs="?",
                        help="the new applications: CSV, Parquet or .xlsx (outcome column optional); through an engine also "
                             "a folder of them or a DuckDB database")
    parser.add_argument("--out", type=Path, metavar="DIR", help="output folder (default: NAME-monitor beside the ledger)")
    parser.add_argument("--fail-on", choices=("watch", "act"), help="exit with 1 when any check reaches this status")
    parser.add_argument("--force", action="store_true", help="write into the output folder even if it exists")
    parser.add_argument("--stream", action="store_true", help="read the ledger in batches (automatic above ledger.stream_above_mb)")
    _add_engine_options(parser)
    _add_common(parser)
    parser.set_defaults(make_options=lambda a: MonitorOptions(a.model, a.ledger, a.out, a.fail_on, a.force, a.stream,
                                                              a.engine, a.table, a.query))


def _add_export(commands) -> None:
    parser = commands.add_parser(
        "export", help="write a saved scorecard as PMML, one SQL query or a Python file",
        description=(
            "Write a saved scorecard in a form other systems run: PMML 4.4 (the open standard's Scorecard "
            "model, for any PMML evaluator), one SQL query over a table of applications, or a Python file "
            "that needs only the standard library. Each gives the scores, probabilities and reasons "
            "'scorewright score' gives, and states the model's checksum, its scaling and the caution. "
            "The form follows the file's ending (.pmml or .xml, .sql, .py) unless --form says it."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples(
            "scorewright export run1/model.json --out scorecard.pmml",
            "scorewright export run1/model.json --out scorecard.sql --table loan_applications --id application_id",
            "scorewright export run1/model.json --out scorecard.py --reasons 2",
        ),
    )
    parser.add_argument("model", type=Path, help="model.json written by 'scorewright build'")
    parser.add_argument("--out", type=Path, required=True, metavar="FILE", help="file to write (.pmml, .xml, .sql or .py)")
    parser.add_argument("--form", choices=("pmml", "sql", "python"), help="the form to write (default: from FILE's ending)")
    parser.add_argument("--reasons", type=int, metavar="N", help="reasons per application (default: reasons.count of the model's settings)")
    parser.add_argument("--table", default="applications", metavar="NAME", help="SQL: the table of applications (default: applications)")
    parser.add_argument("--id", dest="id_column", metavar="COLUMN", help="SQL: its id column (default: the model's id column)")
    parser.add_argument("--materialize", action="store_true",
                        help="SQL: mark the points step MATERIALIZED (not standard SQL; SQLite then runs the query many times faster)")
    parser.add_argument("--force", action="store_true", help="overwrite FILE if it exists")
    _add_common(parser)
    parser.set_defaults(make_options=lambda a: ExportOptions(a.model, a.out, a.form, a.reasons, a.table, a.id_column,
                                                             a.materialize, a.force))


def _add_demo(commands) -> None:
    parser = commands.add_parser(
        "demo", help="run the whole flow on an invented lender's ledgers",
        description=(
            "Generate the ledgers of an invented lender (eight quarters of applications), then run the "
            "analyst's whole flow on them: init, the analyst's decisions, build with an out-of-time sample, "
            "score new applications with reasons, and monitor the last two quarters. Prints each step and "
            "the files to open."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_examples("scorewright demo", "scorewright demo --out my-demo --rows 100000"),
    )
    parser.add_argument("--out", type=Path, default=Path("demo-run"), metavar="DIR", help="output folder (default: demo-run)")
    parser.add_argument("--rows", type=int, default=40_000, help="applications over the eight quarters (default 40000)")
    parser.add_argument("--seed", type=int, default=2024, help="seed of the generator (default 2024)")
    parser.add_argument("--force", action="store_true", help="write into the output folder even if it exists")
    _add_common(parser)
    parser.set_defaults(make_options=lambda a: DemoOptions(a.out, a.rows, a.seed, a.force))


# --------------------------------------------------------------------------------------------
# Entry points


def main(argv: Sequence[str] | None = None, *, stdout: IO[str] | None = None, stderr: IO[str] | None = None,
         imported: Callable[[], None] | None = None) -> int:
    """Run the command line; return the exit code.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name (default: ``sys.argv[1:]``).
    stdout, stderr : text streams, optional
        Where results and messages go (default: the process's own).
    imported : callable, optional
        Called once the command's modules are imported, before it runs (the console script
        freezes what the imports made, see ``entry_point``).
    """
    out, err = stdout or sys.stdout, stderr or sys.stderr
    parser = build_parser()
    try:
        # argparse prints usage errors and --help to the process's streams; send them to ours
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            args = parser.parse_args(argv)
    except SystemExit as exit_:  # argparse exits with 2 on usage errors and 0 on --help
        return int(exit_.code or 0)
    if args.command is None:
        parser.print_help(out)
        return EXIT_BAD_INPUT
    streams = Streams(out, err, quiet=getattr(args, "quiet", False))
    from .errors import ScorecardError, ScorecardWarning

    try:
        options = args.make_options(args)
        run = _command(args.command)
        if imported is not None:
            imported()
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ScorecardWarning)
            code = run(options, streams)
        _show_warnings(caught, streams)
        return code
    except ScorecardError as error:
        if args.traceback:
            raise
        print(f"scorewright: error: {error}", file=err)
        return EXIT_BAD_INPUT
    except BrokenPipeError:  # the reader of our output has gone (e.g. '| head'): nothing to report
        _silence_stdout()
        return EXIT_OK
    except OSError as error:  # a folder that cannot be written, a full disk: the user's to fix
        if args.traceback:
            raise
        where = f"{error.filename}: " if error.filename else ""
        print(f"scorewright: error: {where}{error.strerror or error}. Check the path exists and can be written.", file=err)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("scorewright: interrupted; no output was left half-written.", file=err)
        return 130


def _command(name: str):
    """The function that does a command's work, imported on first use (so that --help stays fast)."""
    module, _, function = COMMANDS[name].partition(":")
    return getattr(importlib.import_module(f".{module}", __package__), function)


def _show_warnings(caught: list, streams: Streams) -> None:
    from .errors import ScorecardWarning

    shown = set()
    for warning in caught:
        text = str(warning.message)
        if issubclass(warning.category, ScorecardWarning) and text not in shown:
            shown.add(text)
            streams.warn(text)


def _silence_stdout() -> None:
    """Point stdout at /dev/null so that Python's final flush does not fail on a closed pipe."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):  # stdout is not a real file (tests pass a StringIO)
        pass


def entry_point() -> None:
    """The console script: run ``main`` and exit with its code."""
    # Our matrix products are small (patterns × a few dozen columns): on two cores OpenBLAS's
    # threads cost more than they give (a dot product of 13k numbers took 0.34 ms threaded,
    # 0.004 ms on one thread, and X'WX on 1M rows 235 ms against 96 ms). The user can override.
    #
    # The objects the imports make (numpy's, pandas', ours: hundreds of thousands) live as long as
    # the process, so they are moved out of the garbage collector's sight once the command's modules
    # are imported, and everything is again at the end: every full collection, and the one at exit,
    # would otherwise walk them all (on a 1M-row build 0.3 s of collections and 0.3 s of exit, halved
    # and gone). Reference counting still frees them; only one process per command does this.
    import gc
    import os

    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    code = main(imported=gc.freeze)
    gc.freeze()
    raise SystemExit(code)


def _version() -> str:
    from . import __version__

    return __version__
