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
from ..terms import BAD, COMPARISON, COMPARISON_ROWS, DEVELOPMENT, GOOD, HOLDOUT, OUT_OF_TIME, OUTCOME_NAMES, SAMPLE_NAMES

# the texts that order rows whose keys are equal: (the id's row text, the whole row's text)
TieTexts = Callable[[np.ndarray], Sequence[tuple[str, str]]]

# keys are counted in buckets of their top 16 bits (of 60) to find the edge of the smallest ones
_BUCKET_BITS = 16
_BUCKET_SHIFT = 60 - _BUCKET_BITS
PART_ROWS = 1_000_000  # rows gone through at a time when the samples are drawn


def split_samples(outcome: np.ndarray, dates: np.ndarray | None, settings: Settings, *, keys: np.ndarray | None = None,
                  tie_texts: TieTexts | None = None, source: str = "ledger",
                  out_of_time_sample: np.ndarray | None = None) -> np.ndarray:
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
    out_of_time_sample : numpy.ndarray, optional
        The out-of-time sample already set apart (``out_of_time``, batch by batch when the ledger is read
        so): int8 per row, used instead of ``dates`` (and changed in place).

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
    sample = out_of_time(dates, settings, n_rows=len(outcome), source=source) if out_of_time_sample is None \
        else out_of_time_sample
    if samples.holdout_fraction == 0:
        return sample
    if keys is None:
        raise TypeError("split_samples: the split keys are needed to draw a hold-out sample")  # our own invariant
    for outcome_class in range(len(OUTCOME_NAMES)):
        def member(rows: slice, outcome_class=outcome_class) -> np.ndarray:
            return (sample[rows] != OUT_OF_TIME) & (outcome[rows] == outcome_class)

        n_members = sum(int(np.count_nonzero(member(rows))) for rows in row_parts(len(outcome)))
        count = holdout_count(n_members, samples.holdout_fraction)
        edge, tied = smallest_keys_edge(member, lambda rows: keys[rows], count, len(outcome), tie_texts)
        for rows in row_parts(len(outcome)):  # marked in place, part by part: no row numbers of a whole class
            part = sample[rows]
            part[member(rows) & (keys[rows] < edge)] = HOLDOUT
        sample[tied] = HOLDOUT
    return sample


def smallest_keys(member: Callable[[slice], np.ndarray], keys_of: Callable[[slice], np.ndarray], count: int,
                  n_rows: int, tie_texts: TieTexts | None) -> np.ndarray:
    """The ``count`` rows of smallest key among the members, ascending; rows of equal key at the edge are ordered
    by their texts (see ``smallest_keys_edge``)."""
    edge, tied = smallest_keys_edge(member, keys_of, count, n_rows, tie_texts)
    pieces = [np.flatnonzero(member(rows) & (keys_of(rows) < edge)) + rows.start for rows in row_parts(n_rows)]
    return np.sort(np.concatenate([*pieces, tied]).astype(np.int64))


def smallest_keys_edge(member: Callable[[slice], np.ndarray], keys_of: Callable[[slice], np.ndarray], count: int,
                       n_rows: int, tie_texts: TieTexts | None) -> tuple[int, np.ndarray]:
    """Where the ``count`` members of smallest key end: every member whose key is below ``edge``, and the rows
    ``tied`` (ascending) of those whose key equals it, ordered by their texts.

    ``member(rows)`` and ``keys_of(rows)`` give the mask of members and every row's key (0 <= key < 2**60) of
    a slice of rows; the rows are gone through a part at a time, so no temporary holds 8 bytes of every row.
    The edge (the count-th smallest key) is found in two steps: the bucket of the top bits of the keys that
    holds it, from the buckets' counts, then the key itself among the few keys of that bucket. With no
    count, the edge is 0 (no key is below it); with every member wanted, 2**60 (every key is).
    """
    parts = row_parts(n_rows)
    if count <= 0:
        return 0, np.zeros(0, dtype=np.int64)
    buckets = np.zeros(2**_BUCKET_BITS, dtype=np.int64)
    for rows in parts:
        buckets += np.bincount(keys_of(rows)[member(rows)] >> _BUCKET_SHIFT, minlength=len(buckets))
    if count >= buckets.sum():
        return 2**60, np.zeros(0, dtype=np.int64)
    before = np.cumsum(buckets)
    bucket = int(np.searchsorted(before, count))  # the first bucket whose members reach the count
    among = np.concatenate([keys_of(rows)[member(rows) & (keys_of(rows) >> _BUCKET_SHIFT == bucket)] for rows in parts])
    wanted_in_bucket = count - (int(before[bucket - 1]) if bucket else 0)
    edge = int(np.partition(among, wanted_in_bucket - 1)[wanted_in_bucket - 1])
    n_below = int(before[bucket - 1]) if bucket else 0
    n_below += int(np.count_nonzero(among < edge))
    tied = np.concatenate([np.flatnonzero(member(rows) & (keys_of(rows) == edge)) + rows.start for rows in parts])
    wanted = count - n_below
    if len(tied) > wanted:
        if tie_texts is None:
            raise TypeError("smallest_keys: rows of equal key need their texts")  # our own invariant
        texts = tie_texts(tied)
        tied = tied[sorted(range(len(tied)), key=lambda i: texts[i])]  # str order is UTF-8 byte order
    return edge, np.sort(tied[:wanted]).astype(np.int64)


def row_parts(n_rows: int) -> list[slice]:
    """Slices of ``PART_ROWS`` rows covering 0 .. n_rows − 1: row work whose temporaries should stay small."""
    return [slice(first, min(first + PART_ROWS, n_rows)) for first in range(0, n_rows, PART_ROWS)]


def draw_subsamples(sample: np.ndarray, outcome: np.ndarray, keys: np.ndarray | None, settings: Settings, *,
                    tie_texts: TieTexts | None = None) -> dict[str, np.ndarray]:
    """The seeded sub-samples of a large development sample, as ascending row numbers.

    ``classing``: the rows fine cut points are taken from (``classing.fine_sample_rows``);
    ``selection``: the rows the choice of characteristics runs on (``selection.sample_rows``).
    Each is the wanted number of development rows with a good or bad outcome whose reordered
    keys (``subsample_keys``) are smallest; a sub-sample is left out when every such row is in it.
    ``comparison <sample>``: of each sample with more goods and bads than ``COMPARISON_ROWS``, as
    many of them, the rows the challenger is compared with the scorecard on.
    """
    def decided(sample_code: int) -> Callable[[slice], np.ndarray]:
        return lambda rows: (sample[rows] == sample_code) & ((outcome[rows] == GOOD) | (outcome[rows] == BAD))

    wanted = [("classing", DEVELOPMENT, settings.classing.fine_sample_rows),
              ("selection", DEVELOPMENT, settings.selection.sample_rows)]
    wanted += [(f"{COMPARISON} {name}", code, COMPARISON_ROWS) for code, name in enumerate(SAMPLE_NAMES)]
    drawn, n_decided = {}, {}
    for purpose, sample_code, limit in wanted:
        member = decided(sample_code)
        if sample_code not in n_decided:
            n_decided[sample_code] = sum(int(np.count_nonzero(member(rows))) for rows in row_parts(len(outcome)))
        if limit and n_decided[sample_code] > limit:
            reordered = purpose.split()[0]  # the comparisons of every sample reorder the keys alike (their rows differ)
            drawn[purpose] = smallest_keys(member, lambda rows, reordered=reordered: subsample_keys(keys[rows], reordered),
                                           limit, len(outcome), tie_texts)
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


def out_of_time(dates: np.ndarray | None, settings: Settings, *, n_rows: int, source: str, first_row: int = 0) -> np.ndarray:
    """int8 per row: out-of-time for rows dated on or after ``samples.out_of_time_from``, else development
    (``first_row``: the row number of the first of these rows in the ledger, for messages)."""
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
        rows = describe_rows((np.flatnonzero(undated) + 2 + first_row).tolist())
        raise LedgerError(
            f"{source}, column {settings.ledger.date_column!r}, {rows}: no date, so the row cannot be placed "
            "in or out of time. Fill the dates or remove the rows."
        )
    start = np.datetime64(datetime.date.fromisoformat(samples.out_of_time_from), "D")
    sample[dates >= start] = OUT_OF_TIME
    return sample
