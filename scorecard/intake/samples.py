"""The sample split: development, hold-out (stratified by outcome, by a seeded hash) and out-of-time (by date).

The hold-out sample is drawn from each row's split key (``scorecard.rows.keys``): a seeded hash
of the id column, or of the whole row when there is none (the repeats of a row then keyed apart,
so that identical rows are split like any others). Of each outcome class, the rows with
the smallest keys form the hold-out sample, so the split depends on the rows' content only, never
on their order or on where they are read (in memory, in batches, by a SQL engine or a cluster).
"""

from __future__ import annotations

import datetime
from collections.abc import Callable, Sequence

import numpy as np
import pandas as pd

from ..errors import LedgerError, describe_rows
from ..rows.keys import TWIN_SEED_STEP, holdout_count, repeat_keys, row_texts, split_keys, subsample_keys
from ..settings import Settings
from ..terms import BAD, DEVELOPMENT, GOOD, HOLDOUT, OUT_OF_TIME, OUTCOME_NAMES

# the texts that order rows whose keys are equal: (the id's row text, the whole row's text)
TieTexts = Callable[[np.ndarray], Sequence[tuple[str, str]]]


def split_samples(outcome: np.ndarray, dates: np.ndarray | None, settings: Settings, *, keys: np.ndarray | None = None,
                  tie_texts: TieTexts | None = None, source: str = "ledger") -> np.ndarray:
    """Assign each row to the development, hold-out or out-of-time sample.

    Rows dated on or after ``samples.out_of_time_from`` form the out-of-time sample. Of the rest,
    each outcome class (good, bad, indeterminate, unknown) of n rows gives its
    ``floor(n × holdout_fraction + 1/2)`` rows with the smallest split keys to the hold-out
    sample, so that both samples have the same bad rate to within one row.

    Parameters
    ----------
    outcome : numpy.ndarray
        Outcome code per row.
    dates : numpy.ndarray or None
        datetime64[D] per row, when the ledger has a date column.
    settings : Settings
    keys : numpy.ndarray, optional
        The split key of every row (``sample_keys``); needed when a hold-out sample is drawn.
    tie_texts : callable, optional
        ``tie_texts(rows)``: the (id text, row text) of some rows, to order rows of equal keys at
        the edge of a class's hold-out (with 60-bit keys, rows with the same id or the same values).
    source : str
        The ledger's name, for messages.

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
    sample = out_of_time(dates, settings, n_rows=len(outcome), source=source)
    if samples.holdout_fraction == 0:
        return sample
    if keys is None:
        raise TypeError("split_samples: the split keys are needed to draw a hold-out sample")  # our own invariant
    in_time = sample != OUT_OF_TIME
    for outcome_class in range(len(OUTCOME_NAMES)):
        rows = np.flatnonzero(in_time & (outcome == outcome_class))
        chosen = smallest_keys(rows, keys[rows], holdout_count(len(rows), samples.holdout_fraction), tie_texts)
        sample[chosen] = HOLDOUT
    return sample


def smallest_keys(rows: np.ndarray, keys: np.ndarray, count: int, tie_texts: TieTexts | None) -> np.ndarray:
    """The ``count`` rows of smallest key; rows of equal key at the edge are ordered by their texts."""
    if count <= 0:
        return rows[:0]
    if count >= len(rows):
        return rows
    edge = np.partition(keys, count - 1)[count - 1]
    below, at = keys < edge, keys == edge
    wanted = count - int(below.sum())
    tied = rows[at]
    if len(tied) > wanted:
        if tie_texts is None:
            raise TypeError("smallest_keys: rows of equal key need their texts")  # our own invariant
        texts = tie_texts(tied)
        tied = tied[sorted(range(len(tied)), key=lambda i: texts[i])]  # str order is UTF-8 byte order
    return np.sort(np.concatenate([rows[below], tied[:wanted]]))


def draw_subsamples(sample: np.ndarray, outcome: np.ndarray, keys: np.ndarray | None, settings: Settings, *,
                    tie_texts: TieTexts | None = None) -> dict[str, np.ndarray]:
    """The seeded sub-samples of a large development sample, as ascending row numbers.

    ``classing``: the rows fine cut points are taken from (``classing.fine_sample_rows``);
    ``selection``: the rows the choice of characteristics runs on (``selection.sample_rows``).
    Each is the wanted number of development rows with a good or bad outcome whose reordered
    keys (``subsample_keys``) are smallest; a sub-sample is left out when every such row is in it.
    """
    fitting = np.flatnonzero((sample == DEVELOPMENT) & ((outcome == GOOD) | (outcome == BAD)))
    limits = {"classing": settings.classing.fine_sample_rows, "selection": settings.selection.sample_rows}
    drawn = {}
    for purpose, limit in limits.items():
        if limit and len(fitting) > limit:
            drawn[purpose] = smallest_keys(fitting, subsample_keys(keys[fitting], purpose), limit, tie_texts)
    return drawn


def needs_keys(n_rows: int | None, settings: Settings) -> bool:
    """Whether a build draws anything from the split keys: a hold-out sample, or a sub-sample of a large
    ledger (``n_rows`` None: not known yet, so perhaps)."""
    limits = [limit for limit in (settings.classing.fine_sample_rows, settings.selection.sample_rows) if limit]
    large = bool(limits) and (n_rows is None or n_rows > min(limits))
    return bool(settings.samples.holdout_fraction) or large


def key_columns(columns: Sequence[str], settings: Settings) -> list[str]:
    """The columns a row's split key is made of: the id column, or every column of the ledger."""
    id_column = settings.ledger.id_column
    return [id_column] if id_column else [str(c) for c in columns]


def sample_keys(frame: pd.DataFrame, settings: Settings) -> np.ndarray:
    """The split key of every row of a ledger held in memory (``scorecard.rows.keys``)."""
    columns = key_columns(frame.columns, settings)
    return repeats_apart(split_keys(frame, columns, settings.samples.seed), lambda rows: frame.iloc[rows], columns, settings)


def repeats_apart(keys: np.ndarray, rows_of: Callable[[np.ndarray], pd.DataFrame], columns: Sequence[str],
                  settings: Settings) -> np.ndarray:
    """Without an id column, the split keys with the repeats of a row keyed apart (``scorecard.rows.keys``, rule 3),
    so that a ledger that repeats its rows still splits them by the hold-out share; with one, ``keys`` as they are.
    ``rows_of(rows)`` gives the ``columns`` of some rows (only of rows whose key another row shares)."""
    if settings.ledger.id_column:
        return keys
    seed = settings.samples.seed
    return repeat_keys(keys, lambda rows: split_keys(rows_of(rows), columns, seed + TWIN_SEED_STEP), seed)


def frame_tie_texts(frame: pd.DataFrame, settings: Settings) -> TieTexts:
    """``tie_texts`` for a ledger held in memory: the id's and the whole row's texts of some rows."""
    def texts(rows: np.ndarray) -> list[tuple[str, str]]:
        part = frame.iloc[rows]
        own = row_texts(part, key_columns(part.columns, settings)).to_pylist()
        whole = row_texts(part, [str(c) for c in part.columns]).to_pylist()
        return list(zip(own, whole))

    return texts


def out_of_time(dates: np.ndarray | None, settings: Settings, *, n_rows: int, source: str) -> np.ndarray:
    """int8 per row: out-of-time for rows dated on or after ``samples.out_of_time_from``, else development."""
    samples = settings.samples
    sample = np.zeros(n_rows, dtype=np.int8)
    if not samples.out_of_time_from:
        return sample
    if dates is None:
        raise LedgerError(
            f"{source}: samples.out_of_time_from is set but the ledger has no date column. "
            "Name it as date_column under [ledger], or clear out_of_time_from."
        )
    undated = np.isnat(dates)
    if undated.any():
        rows = describe_rows((np.flatnonzero(undated) + 2).tolist())
        raise LedgerError(
            f"{source}, column {settings.ledger.date_column!r}, {rows}: no date, so the row cannot be placed "
            "in or out of time. Fill the dates or remove the rows."
        )
    start = np.datetime64(datetime.date.fromisoformat(samples.out_of_time_from), "D")
    sample[dates >= start] = OUT_OF_TIME
    return sample
