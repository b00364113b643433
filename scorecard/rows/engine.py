"""The row-source interface: the short list of aggregates the stages ask of the rows.

The stages never loop over rows. They hand a row source small pieces of data (binnings, the
points table, a list of row numbers) and get back count tables (``scorecard.rows.tables``):

==========================  ==================================================================
``count_bins``              per characteristic: bins × (sample, outcome), weighted and raw, and
                            the levels no bin holds, counted (classing, both passes)
``gather``                  the values of some development rows (fine classing takes its cut
                            points from a seeded sample of them)
``pattern_table``           distinct bin-code patterns of chosen rows with their goods and bads
                            (selection and the fit)
``score_histograms``        goods, bads and others per score and sample (every check)
``period_counts``           per period of a new ledger: score histogram, bin counts, unseen
                            levels (monitoring)
==========================  ==================================================================

``InProcessRows`` (``scorecard.rows.inprocess``) computes them with numpy, from a frame in
memory or from a file read in batches. An engine that keeps the rows elsewhere (an embedded SQL
engine, a cluster) provides the same methods with the same results; the fit of a table too large
to hold is a cost summed over parts (``scorecard.fitter.parts``), which such an engine can sum
where the rows are.

Whether a ledger file is read whole or in batches is decided here, once: ``reads_in_batches``.
Where the rows are is said by a ``RowPlace`` (an engine and a path, table or query); an engine that
keeps the rows elsewhere is reached by ``connect`` (``scorecard.rows.duckdb``, ``scorecard.rows.spark``),
whose rows ``scorecard.rows.sqlrows.SqlRows`` counts.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Protocol

import pandas as pd

from ..terms import DUCKDB, IN_PROCESS, SPARK

# batches(columns) returns a fresh iterator of (first row, frame): one pass over the ledger
# reading those columns; a ledger in memory yields its whole frame once
Batches = Callable[[Sequence[str]], Iterator[tuple[int, pd.DataFrame]]]

# file types that can be read in batches (an .xlsx workbook is always read whole)
BATCH_READABLE = (".csv", ".txt", ".parquet", ".pq")


def reads_in_batches(path: str | os.PathLike[str], stream_above_mb: float, *, asked: bool | None = None) -> bool:
    """Whether a ledger file is read in batches: as asked (``--stream``: True; ``stream=False``: never), or
    else when it is larger than ``ledger.stream_above_mb`` and of a type that can be (CSV or Parquet).

    This is the one place the choice is made; build, score and monitor all ask here.
    """
    if asked is not None:
        return asked
    path = Path(path)
    return path.suffix.lower() in BATCH_READABLE and path.exists() and path.stat().st_size > stream_above_mb * 2**20


def csv_delimiter(path: Path) -> str:
    """The CSV file's delimiter: a comma, or the ';', tab or '|' its header uses instead (as some exports do)."""
    with path.open(encoding="utf-8-sig", errors="replace") as stream:
        header = stream.readline()
    if "," in header:
        return ","
    return next((candidate for candidate in (";", "\t", "|") if candidate in header), ",")


class RowSource(Protocol):
    """What the stages ask of the rows; see the module's table. ``InProcessRows`` is the reference.

    A sub-sample is named: 'fitting' (the development rows with a good or bad outcome), or
    'classing' / 'selection', the seeded sub-samples of them drawn at intake when there are more
    than the settings' limits (``subsamples`` lists those drawn).
    """

    in_memory: bool
    subsamples: Mapping | Sequence

    def count_bins(self, binnings, *, keep_codes: bool, progress: Callable) -> tuple:
        ...

    def gather(self, subsample: str, columns: Sequence[str]) -> tuple:
        ...

    def pattern_table(self, subsample: str, binnings, *, kept=None):
        ...

    def score_histograms(self, binnings, table, *, kept=None) -> dict:
        ...

    def period_counts(self, scorecard, *, by_quarter: bool) -> tuple:
        ...


@dataclass(frozen=True)
class RowPlace:
    """Where a ledger's rows are: the engine that reads and counts them, and a file, a table or a query.

    Attributes
    ----------
    engine : str
        'in-process' (this process, from a file), 'duckdb' or 'spark'.
    path : str
        A file or folder (relative paths already resolved), or a DuckDB database file.
    table : str
        A table of the DuckDB database at ``path``, or of Spark's catalog.
    query : str
        A SELECT whose rows are the ledger.
    options : mapping
        The engine's own settings (``[duckdb]`` or ``[spark]`` of the settings file).
    """

    engine: str = IN_PROCESS
    path: str = ""
    table: str = ""
    query: str = ""
    options: Mapping[str, object] = field(default_factory=dict)

    @property
    def name(self) -> str:
        """The ledger's name in messages: the file's name, the table, or 'the query'."""
        if self.query:
            return "the query" + (f" in {Path(self.path).name}" if self.path else "")
        if self.table:
            return f"table {self.table!r}" + (f" in {Path(self.path).name}" if self.path else "")
        return Path(self.path).name or self.path


def connect(place: RowPlace, *, writable: bool = False):
    """Open the engine that holds a ledger's rows (DuckDB or Spark) with the ledger as its view ``sw__source``."""
    if place.engine == DUCKDB:
        from .duckdb import DuckDBEngine

        return DuckDBEngine(place, writable=writable)
    if place.engine == SPARK:
        from .spark import SparkEngine

        return SparkEngine(place)
    raise ValueError(f"connect: no SQL engine is called {place.engine!r}")  # our own invariant: settings checked it
