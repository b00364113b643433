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
        build["same"] = _same_model(build["model"], _reference(found, build["rows"]))
    return found


def _reference(found: list[dict], rows: int) -> Path | None:
    """The in-process model of a size (read whole when it was, else streamed)."""
    mine = [b for b in found if b["engine"] == "in-process" and b["rows"] == rows and b["run"].ok]
    return min(mine, key=lambda b: b["options"])["model"] if mine else None


def _same_model(model: Path, reference: Path | None) -> bool | None:
    """Whether two model files hold the same content but for the engine named in the settings."""
    if reference is None or not model.exists() or not reference.exists():
        return None
    documents = []
    for path in (model, reference):
        document = json.loads(path.read_text(encoding="utf-8"))
        document.pop("checksum", None)
        document["settings"]["ledger"].pop("engine", None)
        documents.append(json.dumps(document, sort_keys=True))
    return documents[0] == documents[1]


def summary_rows(builds: list[dict]) -> list[tuple]:
    """Table rows: engine, rows, wall, peak RSS of the process and of its tree, time against in-process, same model."""
    rows = []
    for build in builds:
        run: Run = build["run"]
        mine = [b for b in builds if b["engine"] == "in-process" and b["rows"] == build["rows"] and b["run"].ok]
        reference = min(mine, key=lambda b: b["options"])["run"] if mine else None  # read whole when it was
        ratio = f"{run.wall / reference.wall:.2f}" if run.ok and reference is not None else "—"
        same = {True: "yes", False: "NO", None: "—"}[build["same"]]
        label = f"{build['engine']}{' ' + build['options'] if build['options'] else ''}"
        if not run.ok:
            rows.append((label, f"{build['rows']:,}", run.failure(), "", "", "", ""))
            continue
        rows.append((label, f"{build['rows']:,}", f"{run.wall:.2f}", f"{run.peak_mb:,.0f}", f"{run.session_peak_mb:,.0f}",
                     ratio, same))
    return rows
