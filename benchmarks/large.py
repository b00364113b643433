"""The streamed build of 100M rows, apart from the whole run: benchmarks/RESULTS-large.md.

``python -m benchmarks --large`` (``make bench-large``) runs only the streamed builds of 1M and
100M rows (``--sizes`` for others; the 1M build is the yardstick of issue 18's targets) and writes
RESULTS-large.md atomically: the three targets of the 100M build, the builds, their stages, and
the same figures as JSON at the end. ``make bench`` does not rebuild 100M rows (about an hour on
two cores): its RESULTS.md fills the three 100M rows of issue 18's table from that JSON, saying
when it was recorded, for as long as RESULTS-large.md exists.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

from scorecard.files import write_text_atomically

from .measure import Run

LARGE_SIZES = (1_000_000, 100_000_000)
FIGURES_MARK = "## Figures for RESULTS.md"  # the JSON after this heading is what results.py reads


@dataclass(frozen=True)
class LargeRecord:
    """The streamed builds of a ``--large`` run, as RESULTS-large.md keeps them."""

    recorded: str  # when the run started, local time, "YYYY-MM-DD HH:MM"
    command: str
    runs: tuple[tuple[int, Run], ...]


def write_large(path: Path, markdown: str, record: LargeRecord) -> Path:
    """Write RESULTS-large.md: the Markdown, then the figures as JSON (under a temporary name, then renamed)."""
    return write_text_atomically(path, markdown.rstrip() + "\n\n" + FIGURES_MARK + "\n\n```json\n"
                                 + json.dumps(_as_plain(record), indent=1) + "\n```\n")


def read_large(path: Path) -> LargeRecord | None:
    """The figures RESULTS-large.md ends with, or None when there is no such file (or it holds none)."""
    if not path.exists():
        return None
    text = path.read_text(encoding="utf-8")
    if FIGURES_MARK not in text:
        return None
    block = text.split(FIGURES_MARK, 1)[1].split("```json", 1)[1].split("```", 1)[0]
    plain = json.loads(block)
    runs = tuple((int(run["rows"]), Run(run["label"], tuple(run["argv"]), int(run["returncode"]), float(run["wall"]),
                                        float(run["peak_mb"]), float(run["cpu"]), float(run["load"]), "", run["timings"],
                                        run["stopped"])) for run in plain["runs"])
    return LargeRecord(plain["recorded"], plain["command"], runs)


def _as_plain(record: LargeRecord) -> dict:
    return {"recorded": record.recorded, "command": record.command, "runs": [
        {"rows": size, "label": run.label, "argv": list(run.argv), "returncode": run.returncode, "wall": run.wall,
         "peak_mb": run.peak_mb, "cpu": run.cpu, "load": run.load, "stopped": run.stopped,
         "timings": _timings_line(run)} for size, run in record.runs]}


def _timings_line(run: Run) -> str:
    """The stage table the build printed (``--timings``: one JSON line on stderr), or ''."""
    for line in reversed(run.stderr.strip().splitlines()):
        if line.startswith("{") and line.endswith("}"):
            return line
    return ""
