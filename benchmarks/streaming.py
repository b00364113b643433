"""Streamed builds on Parquet ledgers of growing size: wall time and peak memory per size.

For each size, a Parquet ledger is made by the generator (in bounded memory) and
``scorewright build SETTINGS --out DIR --force --stream --no-reports --timings`` runs once under
GNU time. SETTINGS is a copy of the main run's settings file naming the Parquet ledger, so the
classing is the same fixed one at every size. Targets: peak RSS at most 3 GB at every size and
nearly flat across sizes; time linear in rows (seconds per million rows about constant).

While ``build`` does not accept ``--stream`` (exit code 2 with a usage message) the section is
recorded as not yet available, before the larger ledgers are generated. A build whose memory
passes ``MEMORY_CAP_MB`` (well past the 3 GB target, so the verdict is already "missed") is ended
so that it cannot push other work out of memory, and the larger sizes are not run.
"""

from __future__ import annotations

import shutil
from collections.abc import Sequence
from pathlib import Path

from . import RUNS
from .data import ledger_file, settings_for
from .measure import Run, describe, run_process
from .sections import Log, scorewright

MEMORY_CAP_MB = 6000.0  # twice the target: past it the verdict is plain, and the machine is shared


def streamed_builds(sizes: Sequence[int], seed: int, settings: Path, log: Log, *,
                    folder: Path = RUNS / "streaming") -> list[tuple[int, Run]] | str:
    """Run one streamed build per size (settings and build folders in ``folder``, emptied first); return (rows, run)
    per size, or why the section cannot run."""
    shutil.rmtree(folder, ignore_errors=True)
    found = []
    for size in sizes:
        ledger = ledger_file(size, seed, ".parquet", log=log)
        copy = settings_for(ledger, settings, folder)
        log(f"streamed build on {size:,} rows ...")
        run = run_process(f"build --stream ({size:,} rows)", [
            scorewright(), "build", copy, "--out", folder / f"build-{size}", "--force", "--stream", "--no-reports",
            "--timings",
        ], memory_cap_mb=MEMORY_CAP_MB)
        log(describe(run))
        if run.returncode == 2 and "usage:" in run.stderr:
            message = run.stderr.strip().splitlines()[-1]
            return f"not yet available: 'scorewright build --stream' is refused ({message})"
        found.append((size, run))
        if run.stopped == "memory":
            log("streamed build went over the memory cap; larger sizes not run")
            break
    return found
