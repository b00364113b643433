"""Rows: the one room that touches the rows of a ledger after intake, and hands back count tables.

- ``engine``: the row-source interface (the aggregates the stages ask for) and the one rule for
  reading a ledger whole or in batches;
- ``inprocess``: the in-process row source (numpy; a frame in memory or a file in batches);
- ``tables``: the count tables every engine returns (bin counts, pattern tables, score histograms);
- ``coding``: values to bins and bins to scores, the row work the in-process engine and scoring share;
- ``keys``: the seeded split key of each row, the rule every engine draws the samples by;
- ``sql``, ``sqlrows``: the same row work as SQL, and the row source over an engine that runs it;
- ``duckdb``, ``spark``: the two engines (imported only when a ledger names them).
"""

from .coding import (
    UNSEEN_LABEL, code_rows, factorize_levels, ordered_levels, score_codes, score_units, scores_of_units, tally_unseen,
    unseen_levels,
)
from .engine import BATCH_READABLE, Batches, RowPlace, RowSource, connect, csv_delimiter, reads_in_batches
from .inprocess import InProcessRows, KeptCodes
from .tables import (
    MERGE_LIMIT, BinCounts, PatternTable, RowsOnDisk, ScoreHistogram, count_bins, goods_and_bads, merge_histograms,
    merge_pattern_tables, pattern_keys, pattern_table, row_table, rows_on_disk, score_histogram,
)

__all__ = [
    "BATCH_READABLE", "MERGE_LIMIT", "UNSEEN_LABEL", "Batches", "BinCounts", "InProcessRows", "KeptCodes", "RowPlace",
    "connect", "csv_delimiter",
    "PatternTable", "RowSource", "RowsOnDisk", "ScoreHistogram", "code_rows", "count_bins", "factorize_levels", "goods_and_bads", "merge_histograms",
    "merge_pattern_tables", "ordered_levels", "pattern_keys", "pattern_table", "reads_in_batches", "row_table", "rows_on_disk", "score_codes",
    "score_histogram", "score_units", "scores_of_units", "tally_unseen", "unseen_levels",
]
