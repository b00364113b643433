"""Intake: read a ledger, check it against the settings, map the outcome, weigh the rows, split the samples.

One of the three rooms that see rows (with ``scorecard.rows`` and scoring). Everything is checked
once, where the data enter, with messages that name the file, the column and the rows as the
user sees them (the header is row 1).

- ``read``: files (CSV, Parquet, Excel), whole or in batches;
- ``kinds``: which columns are characteristics, and numeric or categorical;
- ``roles``: the outcome mapping, weights and dates;
- ``samples``: development, hold-out and out-of-time;
- ``ledger``: the checked ledger and its fingerprint;
- ``prepare``: the whole check, and ``open_ledger``, the entry the build and the commands use;
- ``sql``: the same checks of a ledger a SQL engine holds (DuckDB, Spark), as queries.
"""

from .kinds import (
    check_finite_values, check_numbers, closest_names, detect_kind, ground_of, looks_like_identifier_or_date, protected_ground, unusable_reason,
)
from .ledger import Characteristic, Fingerprint, Ledger, RejectedRows, fingerprint_of
from .prepare import (
    columns_of, ledger_place, open_batches, open_ledger, prepare_ledger, rows_in_memory, stream_ledger, with_inferred_rejects,
)
from .read import csv_delimiter, ledger_columns, read_batches, read_ledger
from .roles import default_outcome_mapping, outcome_key, unit_weights
from .samples import split_samples

__all__ = [
    "Characteristic", "Fingerprint", "Ledger", "check_finite_values", "check_numbers", "closest_names", "columns_of", "csv_delimiter",
    "default_outcome_mapping", "detect_kind", "fingerprint_of", "ground_of", "ledger_columns", "ledger_place",
    "looks_like_identifier_or_date", "open_batches", "open_ledger", "outcome_key", "prepare_ledger", "protected_ground",
    "read_batches", "read_ledger", "RejectedRows", "rows_in_memory", "split_samples", "stream_ledger", "unit_weights",
    "unusable_reason", "with_inferred_rejects",
]
