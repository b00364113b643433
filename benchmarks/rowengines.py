"""The same build through each engine that can count the rows: in process, DuckDB, Spark (local).

For each engine and size, ``scorewright build SETTINGS --out DIR --force --no-reports --timings
--engine E`` runs once under GNU time on the Parquet ledger of that size (the generator writes it
in bounded memory), SETTINGS naming that ledger with the main run's fixed classing. Measured:
wall time, the process's peak RSS (GNU time), and the peak of the whole process tree sampled every
quarter second (Spark's JVM is a process of its own); and whether each engine's model file equals
the in-process one but for the engine's name in the settings.

In process, the 1M ledger is read whole and the 10M one in batches (``--stream``), each the way
that build would run. On this 2-core machine Spark is not expected to win: the point is that the
same build runs where the data lives, with the same answer.
"""

from __future__ import annotations

import json
import shutil
from collections.abc import Sequence
from pathlib import Path

from . import RUNS
from .data import ledger_file, settings_for
from .measure import Run, describe, run_process
from .sections import Log, scorewright

# (engine, extra options, sizes): every engine on 1M rows; DuckDB and the in-process stream on 10M too
PLAN = (
    ("in-process", (), (1_000_000,)),
    ("in-process", ("--stream",), (1_000_000, 10_000_000)),
    ("duckdb", (), (1_000_000, 10_000_000)),
    ("spark", (), (1_000_000,)),
)


def engine_builds(seed: int, settings: Path, log: Log, plan: Sequence = PLAN) -> list[dict]:
    """Run each planned build; return per build its engine, options, rows, run and whether its model equals in-process's."""
    folder = RUNS / "engines"
    shutil.rmtree(folder, ignore_errors=True)
    found = []
    for engine, extra, sizes in plan:
        for size in sizes:
            ledger = ledger_file(size, seed, ".parquet", log=log)
            copy = settings_for(ledger, settings, folder)
            out = folder / f"build-{engine}{''.join(extra)}-{size}"
            log(f"build through {engine} {' '.join(extra)} on {size:,} rows ...")
            run = run_process(f"build --engine {engine}{' ' + ' '.join(extra) if extra else ''} ({size:,} rows)", [
                scorewright(), "build", copy, "--out", out, "--force", "--no-reports", "--timings", "--engine", engine, *extra,
            ])
            log(describe(run) + f", process tree {run.session_peak_mb:,.0f} MB")
            found.append({"engine": engine, "options": " ".join(extra), "rows": size, "run": run, "model": out / "model.json"})
    for build in found:
        build["same"], build["same_detail"] = _same_model(build["model"], _reference(found, build["rows"]))
    return found


def _reference(found: list[dict], rows: int) -> Path | None:
    """The in-process model of a size (read whole when it was, else streamed)."""
    mine = [b for b in found if b["engine"] == "in-process" and b["rows"] == rows and b["run"].ok]
    return min(mine, key=lambda b: b["options"])["model"] if mine else None


# what an engine's model file may differ in: the fit's solver is named for where it ran, and the fairness checks and
# the challenger are computed in process only (an engine's build says so in a note); every other figure equals
# in-process's, floats to this relative difference (the 1e-9: sums added in another order)
SOLVER_NAMED = ("fit", "solver")
IN_PROCESS_ONLY = ("fairness",)
IN_PROCESS_ONLY_NOTES = ("The challenger was not fitted", "The fairness checks of")
RELATIVE = 1e-9


def _same_model(model: Path, reference: Path | None) -> tuple[bool | None, str]:
    """Whether an engine's model file holds what the in-process one holds, and how close: 'identical', or the largest
    relative difference of a float; differences beyond ``RELATIVE`` (or in anything but floats) name the first place."""
    if reference is None or not model.exists() or not reference.exists():
        return None, ""
    documents = []
    for path in (model, reference):
        document = json.loads(path.read_text(encoding="utf-8"))
        document.pop("checksum", None)
        document["settings"]["ledger"].pop("engine", None)
        document.get(SOLVER_NAMED[0], {}).pop(SOLVER_NAMED[1], None)
        document["notes"] = [note for note in document.get("notes", []) if not note.startswith(IN_PROCESS_ONLY_NOTES)]
        documents.append(document)
    for section in IN_PROCESS_ONLY:  # set aside where the engine's model says it was not computed (empty)
        if any(not document.get(section) for document in documents):
            for document in documents:
                document.pop(section, None)
    found: list[tuple[float, str]] = []
    _differences(documents[0], documents[1], "", found)
    if not found:
        return True, "identical"
    worst = max(found)
    if worst[0] > RELATIVE:
        return False, f"differs at {worst[1]}" + (f" (relative {worst[0]:.1e})" if worst[0] != float("inf") else "")
    return True, f"floats within {worst[0]:.0e} relative"


def _differences(a, b, path: str, found: list[tuple[float, str]]) -> None:
    """Collect (relative difference, path) of every place two JSON documents differ (inf: not a float difference)."""
    if isinstance(a, float) or isinstance(b, float):
        if isinstance(a, (int, float)) and isinstance(b, (int, float)):
            if a != b:
                found.append((abs(a - b) / max(abs(a), abs(b)), path))
            return
    if type(a) is not type(b):
        found.append((float("inf"), path))
    elif isinstance(a, dict):
        for key in sorted(set(a) | set(b)):
            if key in a and key in b:
                _differences(a[key], b[key], f"{path}/{key}", found)
            else:
                found.append((float("inf"), f"{path}/{key}"))
    elif isinstance(a, list):
        if len(a) != len(b):
            found.append((float("inf"), path))
        for index, (x, y) in enumerate(zip(a, b)):
            _differences(x, y, f"{path}[{index}]", found)
    elif a != b:
        found.append((float("inf"), path))


def summary_rows(builds: list[dict]) -> list[tuple]:
    """Table rows: engine, rows, wall, peak RSS of the process and of its tree, time against in-process, same model."""
    rows = []
    for build in builds:
        run: Run = build["run"]
        mine = [b for b in builds if b["engine"] == "in-process" and b["rows"] == build["rows"] and b["run"].ok]
        reference = min(mine, key=lambda b: b["options"])["run"] if mine else None  # read whole when it was
        ratio = f"{run.wall / reference.wall:.2f}" if run.ok and reference is not None else "—"
        same = {True: "yes", False: "NO", None: "—"}[build["same"]] + (f": {build['same_detail']}" if build.get("same_detail") else "")
        label = f"{build['engine']}{' ' + build['options'] if build['options'] else ''}"
        if not run.ok:
            rows.append((label, f"{build['rows']:,}", run.failure(), "", "", "", ""))
            continue
        rows.append((label, f"{build['rows']:,}", f"{run.wall:.2f}", f"{run.peak_mb:,.0f}", f"{run.session_peak_mb:,.0f}",
                     ratio, same))
    return rows
