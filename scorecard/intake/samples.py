"""The sample split: development, hold-out (stratified by outcome, seeded) and out-of-time (by date)."""

from __future__ import annotations

import datetime

import numpy as np

from ..errors import LedgerError, describe_rows
from ..settings import Settings
from ..terms import HOLDOUT, OUT_OF_TIME, OUTCOME_NAMES


def split_samples(outcome: np.ndarray, dates: np.ndarray | None, settings: Settings, *, source: str = "ledger") -> np.ndarray:
    """Assign each row to the development, hold-out or out-of-time sample.

    Rows dated on or after ``samples.out_of_time_from`` form the out-of-time sample. Of the rest,
    a seeded random ``holdout_fraction`` of each outcome class (good, bad, indeterminate, unknown)
    forms the hold-out sample, so that both samples have the same bad rate to within one row.

    Returns
    -------
    numpy.ndarray
        int8 per row: 0 development, 1 hold-out, 2 out-of-time.

    Raises
    ------
    LedgerError
        An out-of-time date is set but the ledger has no date column, or rows have no date.
    """
    samples = settings.samples
    sample = np.zeros(len(outcome), dtype=np.int8)
    if samples.out_of_time_from:
        if dates is None:
            raise LedgerError(
                f"{source}: samples.out_of_time_from is set but the ledger has no date column. "
                "Name it as date_column under [ledger], or clear out_of_time_from."
            )
        undated = np.isnat(dates)
        if undated.any():
            rows = describe_rows((np.flatnonzero(undated)+ 2).tolist())
            raise LedgerError(
                f"{source}, column {settings.ledger.date_column!r}, {rows}: no date, so the row cannot be placed "
                "in or out of time. Fill the dates or remove the rows."
            )
        start = np.datetime64(datetime.date.fromisoformat(samples.out_of_time_from), "D")
        sample[dates >= start] = OUT_OF_TIME
    rng = np.random.default_rng(samples.seed)
    in_time = sample != OUT_OF_TIME
    for outcome_class in range(len(OUTCOME_NAMES)):
        rows = np.flatnonzero(in_time & (outcome == outcome_class))
        n_holdout = int(round(samples.holdout_fraction * len(rows)))
        sample[rng.choice(rows, size=n_holdout, replace=False)] = HOLDOUT
    return sample
