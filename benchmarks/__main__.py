"""Run the benchmarks and write benchmarks/RESULTS.md.

``python -m benchmarks [--rows 1000000] [--pairs 5] [--quick] [--streaming] [--sizes 1000000,10000000,30000000] [--engines]``
``python -m benchmarks --large [--sizes 1000000,100000000]`` (``make bench-large``; see ``large.py``)

In order: make (or reuse) the ledger; run ``scorewright init`` once; time pandas' two CSV engines
and keep the faster as the parse-only baseline; time ``scorewright --help``; alternate parse-only
with build (with and without reports), the hand-written pipeline and score, ``--pairs`` rounds;
compute the true model's AUC; time in-memory scoring; time report rendering at two sizes and the
workbook of credit_data; with
``--streaming``, time streamed builds on Parquet ledgers of each size; with ``--engines``, the same
build through each engine (``rowengines.py``). RESULTS.md is written at the end, atomically.
Progress goes to stderr.
"""

from __future__ import annotations

import argparse
import shlex
import sys
from datetime import datetime

from . import LARGE_RESULTS, RESULTS, RUNS
from . import sections as s
from .data import ledger_file
from .large import LARGE_SIZES, LargeRecord, read_large, write_large
from .machine import changed_files, code_fingerprint, machine
from .results import Results
from .rowengines import PLAN, engine_builds
from .streaming import streamed_builds
from .writing import large_markdown, write_results

SEED = 7
QUICK_ROWS, QUICK_PAIRS = 100_000, 2
STREAM_SIZES = (1_000_000, 10_000_000, 30_000_000)
QUICK_STREAM_SIZES = (100_000, 1_000_000, 3_000_000)
SCORING_REPEATS = 5
QUICK_ENGINE_PLAN = (("in-process", (), (100_000,)), ("in-process", ("--stream",), (100_000,)), ("duckdb", (), (100_000,)),
                     ("spark", (), (100_000,)))


def main(argv: list[str] | None = None) -> int:
    parser = _parser()
    options = parser.parse_args(argv)
    if options.rows < 1000 or options.pairs < 1:
        parser.error("--rows must be at least 1000 and --pairs at least 1")
    started = datetime.now()
    rows = QUICK_ROWS if options.quick else options.rows
    pairs = QUICK_PAIRS if options.quick else options.pairs
    sizes = options.sizes or (QUICK_STREAM_SIZES if options.quick else STREAM_SIZES)
    command = "python -m benchmarks " + shlex.join(sys.argv[1:] if argv is None else argv)
    ledger = ledger_file(rows, SEED, ".csv", log=_log)
    results = Results(command=command.strip(), started=started, note=options.note, rows=rows, pairs=pairs,
                      seed=SEED, ledger=ledger.name, ledger_mb=ledger.stat().st_size / 1e6, machine=machine())
    code = code_fingerprint()
    s.compile_package(_log)
    settings = s.make_settings(ledger, RUNS, _log)  # also brings the ledger into the page cache
    if options.large:
        return _large(results, options.sizes or LARGE_SIZES, settings)
    results.engines = s.engine_runs(ledger, _log)
    results.engine = s.fastest_engine(results.engines)
    results.help = s.help_runs(_log)
    results.paired = s.paired_runs(ledger, settings, results.engine, pairs, SEED, _log)
    results.build_auc = s.holdout_auc(RUNS / "build") or s.holdout_auc(RUNS / "build-no-reports")
    _log("true model's AUC ...")
    results.truth = s.in_process("truth", ledger, "--seed", SEED, log=_log)
    _log("in-memory scoring ...")
    model = RUNS / "build" / "model.json"
    results.scoring = (s.in_process("scoring", model, ledger, "--repeats", SCORING_REPEATS, log=_log)
                       if model.exists() else {"error": "no model file: the build failed"})
    results.reports = s.report_rendering((rows // 10, rows), SEED, settings, _log)
    _log("the workbook of credit_data ...")
    results.credit_workbook = s.in_process("credit-data", log=_log)
    if options.streaming:
        results.streaming = streamed_builds(sizes, SEED, settings, _log)
    if options.engines:
        results.row_engines = engine_builds(SEED, settings, _log, QUICK_ENGINE_PLAN if options.quick else PLAN)
    results.finished = datetime.now()
    results.code_changes = changed_files(code, code_fingerprint())
    results.large = read_large(LARGE_RESULTS)
    _log(f"written {write_results(results, RESULTS)}")
    return 0


def _large(results: Results, sizes: tuple[int, ...], settings) -> int:
    """Only the streamed builds of the given sizes, written to RESULTS-large.md (``make bench-large``)."""
    results.streaming = streamed_builds(sizes, SEED, settings, _log, folder=RUNS / "streaming-large")
    results.finished = datetime.now()
    runs = tuple(results.streaming) if isinstance(results.streaming, list) else ()
    record = LargeRecord(f"{results.started:%Y-%m-%d %H:%M}", results.command, runs)
    _log(f"written {write_large(LARGE_RESULTS, large_markdown(results), record)}")
    return 0


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="python -m benchmarks", description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000, help="rows of the CSV ledger (default 1000000)")
    parser.add_argument("--pairs", type=int, default=5, help="alternating pairs per comparison (default 5)")
    parser.add_argument("--quick", action="store_true", help=f"smoke run: {QUICK_ROWS:,} rows, {QUICK_PAIRS} pairs")
    parser.add_argument("--streaming", action="store_true", help="also time streamed builds on Parquet ledgers")
    parser.add_argument("--sizes", type=_sizes, help="rows of the streamed ledgers, comma-separated "
                        "(default 1000000,10000000,30000000; with --quick 100000,1000000,3000000)")
    parser.add_argument("--engines", action="store_true",
                        help="also build through each engine (in process, DuckDB, Spark) on Parquet ledgers of 1M and 10M rows")
    parser.add_argument("--large", action="store_true",
                        help="only the streamed builds of 1M and 100M rows (or --sizes), written to RESULTS-large.md; "
                             "make bench's RESULTS.md then takes the 100M targets from it")
    parser.add_argument("--note", default="", help="a sentence to put at the top of RESULTS.md (e.g. the machine was busy)")
    return parser


def _sizes(text: str) -> tuple[int, ...]:
    try:
        sizes = tuple(int(part.replace("_", "")) for part in text.split(",") if part.strip())
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a comma-separated list of row counts") from None
    if not sizes or min(sizes) <= 0:
        raise argparse.ArgumentTypeError(f"{text!r}: give positive row counts, e.g. 1000000,10000000")
    return sizes


def _log(text: str) -> None:
    print(f"benchmarks: {text}", file=sys.stderr, flush=True)


if __name__ == "__main__":
    raise SystemExit(main())
