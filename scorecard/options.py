"""What the parser hands the commands: each command's options, the output streams, and the exit codes.

A light module (standard library only) that both ``cli`` (the parsing) and ``commands`` (the
work) import, so that neither imports the other.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import IO

EXIT_OK, EXIT_CHECK_FAILED, EXIT_BAD_INPUT = 0, 1, 2


EXIT_CODES = """exit codes:
  0  done (warnings allowed)
  1  a check reached the status given with --fail-on
  2  bad input or usage: the message says what, where and what to do"""


@dataclass(frozen=True)
class Streams:
    """Where a command writes: results to ``out``, messages to ``err``."""

    out: IO[str]
    err: IO[str]
    quiet: bool = False

    def say(self, text: str = "") -> None:
        """Write a result line to stdout."""
        print(text, file=self.out)

    def note(self, text: str) -> None:
        """Write a progress or information line to stderr (hidden by --quiet)."""
        if not self.quiet:
            print(f"scorewright: {text}", file=self.err)

    def warn(self, text: str) -> None:
        """Write a warning to stderr (hidden by --quiet)."""
        if not self.quiet:
            print(f"scorewright: warning: {text}", file=self.err)

    def progress(self, items: Iterable, description: str) -> Iterable:
        """Wrap a loop in a progress bar when stderr is a terminal, else return it unchanged."""
        if self.quiet or not getattr(self.err, "isatty", lambda: False)():
            return items
        from tqdm import tqdm

        return tqdm(items, desc=description, file=self.err, leave=False, unit="")


# --------------------------------------------------------------------------------------------
# Options of each command


@dataclass(frozen=True)
class InitOptions:
    """Options of ``scorewright init``."""

    ledger: Path
    target: str
    bad: tuple[str, ...] = ()
    good: tuple[str, ...] = ()
    indeterminate: tuple[str, ...] = ()
    id_column: str | None = None
    date_column: str | None = None
    weight_column: str | None = None
    special: tuple[str, ...] = ()
    leave_out: tuple[str, ...] = ()
    out_of_time_from: str = ""
    holdout: float | None = None
    rejected: str = ""
    out: Path = Path("scorecard.toml")
    force: bool = False


@dataclass(frozen=True)
class SetOptions:
    """Options of ``scorewright set``."""

    settings: Path
    assignments: tuple[str, ...]


@dataclass(frozen=True)
class BuildOptions:
    """Options of ``scorewright build``; the ledger options (from ``bad`` to ``holdout``) mean what they mean
    for ``init`` and are only for building straight from a ledger."""

    source: Path
    target: str | None = None
    bad: tuple[str, ...] = ()
    good: tuple[str, ...] = ()
    indeterminate: tuple[str, ...] = ()
    id_column: str | None = None
    date_column: str | None = None
    weight_column: str | None = None
    special: tuple[str, ...] = ()
    leave_out: tuple[str, ...] = ()
    out_of_time_from: str = ""
    holdout: float | None = None
    rejected: str = ""
    out: Path | None = None
    force: bool = False
    reports: bool = True
    timings: bool = False
    stream: bool = False
    engine: str | None = None
    previous: Path | None = None


@dataclass(frozen=True)
class ScoreOptions:
    """Options of ``scorewright score``: the ledger is a file, or (through an engine) a database's table or a query."""

    model: Path
    ledger: Path | None
    out: Path | None
    reasons: int | None = None
    force: bool = False
    stream: bool = False
    engine: str | None = None
    table: str = ""
    query: str = ""
    out_table: str = ""


@dataclass(frozen=True)
class MonitorOptions:
    """Options of ``scorewright monitor``: the ledger as for ``score``."""

    model: Path
    ledger: Path | None
    out: Path | None = None
    fail_on: str | None = None
    force: bool = False
    stream: bool = False
    engine: str | None = None
    table: str = ""
    query: str = ""


@dataclass(frozen=True)
class ExportOptions:
    """Options of ``scorewright export``."""

    model: Path
    out: Path
    form: str | None = None
    reasons: int | None = None
    table: str = "applications"
    id_column: str | None = None
    materialize: bool = False
    force: bool = False


@dataclass(frozen=True)
class DemoOptions:
    """Options of ``scorewright demo``."""

    out: Path = Path("demo-run")
    rows: int = 40_000
    seed: int = 2024
    force: bool = False
