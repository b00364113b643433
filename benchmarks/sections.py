"""The measurements of one benchmark run, section by section.

Each function runs whole processes (through ``measure.run_process``) and returns plain results;
``results.py`` turns them into tables. Nothing here imports scorewright: the tool is driven only
through its command line and, for in-process figures, through ``inmemory.py`` in a child process,
so the harness keeps working while the tool's internals change.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from . import HERE, REPO, RUNS
from .data import ledger_file
from .measure import Run, alternate, describe, median, run_process

PYTHON = sys.executable
BASELINE = "parse-only"
BUILD, BUILD_NO_REPORTS, HANDWRITTEN, SCORE = "build", "build --no-reports", "hand-written", "score"
HELP_REPEATS = 10
REPORT_MODULES = ("scorecard/report/build_page.py", "scorecard/report/build_sheets.py")  # render_report, workbook

Log = Callable[[str], None]


def scorewright() -> str:
    """Return the ``scorewright`` command beside this Python (the virtualenv's), else on PATH."""
    beside = Path(PYTHON).parent / "scorewright"
    found = str(beside) if beside.exists() else shutil.which("scorewright")
    if not found:
        sys.exit("benchmarks: the scorewright command is not installed; run 'make test' once to install it.")
    return found


def compile_package(log: Log) -> None:
    """Write the package's byte code (``__pycache__``), as installing it from a wheel does.

    A checkout run with PYTHONDONTWRITEBYTECODE set (as on the machines these figures come from)
    would otherwise compile every module of the tool from source in every timed process (about
    0.2 s), which no installed copy pays.
    """
    log("compiling the package's byte code, as an install does ...")
    subprocess.run([PYTHON, "-m", "compileall", "-q", str(REPO / "scorecard")], check=True, stdout=subprocess.DEVNULL)


def make_settings(ledger: Path, folder: Path, log: Log) -> Path:
    """Run ``scorewright init`` once (untimed) and return the settings file it wrote.

    Its proposed classing is then fixed in the settings, as when an analyst rebuilds.
    """
    folder.mkdir(parents=True, exist_ok=True)
    settings = folder / "settings.toml"
    log(f"scorewright init {ledger.name} (once, untimed) ...")
    run = run_process("init", [
        scorewright(), "init", ledger, "--target", "outcome", "--bad", "bad", "--good", "good",
        "--indeterminate", "indeterminate", "--special", "months_since_delinquency=-1",
        "months_since_last_enquiry=999", "--leave-out", "collections_status", "--out", settings, "--force",
    ])
    if not run.ok:
        sys.exit(f"benchmarks: scorewright init failed, so nothing can be built ({run.failure()}).")
    return settings


def parse_command(ledger: Path, engine: str) -> list[str]:
    """Return the argv of the parse-only process."""
    return [PYTHON, str(HERE / "parse_only.py"), str(ledger), "--engine", engine]


def engine_runs(ledger: Path, log: Log) -> dict[str, Run]:
    """Parse the ledger once with pandas' C engine and once with its pyarrow engine."""
    runs = {}
    for engine in ("c", "pyarrow"):
        runs[engine] = run_process(f"{BASELINE} ({engine})", parse_command(ledger, engine))
        log(describe(runs[engine]))
    return runs


def fastest_engine(runs: dict[str, Run]) -> str:
    """Return the engine whose successful run took the least wall time."""
    ok = {engine: run.wall for engine, run in runs.items() if run.ok}
    if not ok:
        sys.exit("benchmarks: pandas could not parse the ledger with either engine: "
                 + "; ".join(run.failure() for run in runs.values()))
    return min(ok, key=ok.get)


def help_runs(log: Log, repeats: int = HELP_REPEATS) -> list[Run]:
    """Run ``scorewright --help`` ``repeats`` times."""
    runs = [run_process("scorewright --help", [scorewright(), "--help"]) for _ in range(repeats)]
    log(f"scorewright --help: median {median([r.wall for r in runs if r.ok]) or float('nan'):.2f} s over {repeats} runs")
    return runs


def paired_runs(ledger: Path, settings: Path, engine: str, pairs: int, seed: int,
                log: Log) -> dict[str, list[tuple[Run, Run]]]:
    """Alternate parse-only with each of: build, build --no-reports, the hand-written pipeline, score.

    In every round the build with reports runs before score, which scores with the model it wrote.
    """
    tool = scorewright()
    for stale in ("build", "build-no-reports"):  # a failed build must not leave an older model to be read
        shutil.rmtree(RUNS / stale, ignore_errors=True)
    others = [
        (BUILD, [tool, "build", settings, "--out", RUNS / "build", "--force", "--timings"]),
        (BUILD_NO_REPORTS, [tool, "build", settings, "--out", RUNS / "build-no-reports", "--force", "--no-reports",
                            "--timings"]),
        (HANDWRITTEN, [PYTHON, str(HERE / "handwritten.py"), ledger, "--seed", str(seed)]),
        (SCORE, [tool, "score", RUNS / "build" / "model.json", ledger, "--out", RUNS / "scored.csv", "--force"]),
    ]
    return alternate((BASELINE, parse_command(ledger, engine)), others, pairs, log=log)


def stage_seconds(runs: Sequence[Run]) -> list[dict[str, float]]:
    """Return the stage table (``build --timings``: JSON on stderr) of every run that printed one."""
    tables = []
    for run in runs:
        for line in reversed(run.stderr.strip().splitlines()):
            try:
                table = json.loads(line)
            except ValueError:
                continue
            if isinstance(table, dict):
                tables.append({str(stage): float(seconds) for stage, seconds in table.items()})
                break
    return tables


def holdout_auc(build_folder: Path) -> float | None:
    """Return ``performance`` → ``hold-out`` → ``auc`` of the model file a build wrote, if any."""
    try:
        document = json.loads((build_folder / "model.json").read_text(encoding="utf-8"))
        return float(document["performance"]["hold-out"]["auc"])
    except (OSError, ValueError, KeyError, TypeError):
        return None


def in_process(command: str, *arguments: object, log: Log) -> dict:
    """Run ``python -m benchmarks.inmemory COMMAND ...``; return its JSON, or {"error": ...}."""
    completed = subprocess.run([PYTHON, "-m", "benchmarks.inmemory", command, *map(str, arguments)], cwd=REPO,
                               capture_output=True, text=True)
    if completed.returncode != 0:
        tail = " / ".join(completed.stderr.strip().splitlines()[-3:])
        log(f"inmemory {command} failed: {tail}")
        return {"error": f"exit code {completed.returncode}: {tail}"}
    return json.loads(completed.stdout.strip().splitlines()[-1])


def report_rendering(sizes: Sequence[int], seed: int, settings: Path, log: Log) -> dict[int, dict] | str:
    """Time the HTML report and the workbook for builds on each size; a text when not yet available."""
    missing = [name for name in REPORT_MODULES if not (REPO / name).exists()]
    if missing:
        return f"not yet available: {', '.join(missing)} not in the repository"
    found = {}
    for size in sizes:
        ledger = ledger_file(size, seed, ".csv", log=log)
        log(f"report rendering on {size:,} rows ...")
        found[size] = in_process("reports", ledger, settings, log=log)
        if "unavailable" in found[size]:
            return f"not yet available: {found[size]['unavailable']}"
    return found
