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
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Protocol

import pandas as pd

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


class RowSource(Protocol):
    """What the stages ask of the rows; see the module's table. ``InProcessRows`` is the reference."""

    in_memory: bool

    def count_bins(self, binnings, *, keep_codes: bool, progress: Callable) -> tuple:
        ...

    def gather(self, rows, columns: Sequence[str]) -> tuple:
        ...

    def pattern_table(self, rows, binnings, *, kept=None):
        ...

    def score_histograms(self, binnings, table, *, kept=None) -> dict:
        ...

    def period_counts(self, scorecard, quarter, labels, *, source: str) -> tuple:
        ...
