"""The in-process row source: rows in a frame in memory, or in a file read in batches, counted with numpy.

Every method makes one pass over the rows (or over the codes kept from an earlier pass) and
returns count tables; the arithmetic is the same whether the rows are in memory or read batch by
batch, so a streamed build gives the same model file, byte for byte, as one held in memory.
"""

from __future__ import annotations

import concurrent.futures
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..terms import BAD, DEVELOPMENT, GOOD, SAMPLE_NAMES, UNKNOWN
from .coding import UNSEEN_LABEL, code_rows, ordered_levels, score_codes, tally_unseen, unseen_levels
from .engine import Batches
from .tables import (
    MERGE_LIMIT, BinCounts, PatternTable, RowsOnDisk, ScoreHistogram, count_bins, merge_histograms, merge_pattern_tables,
    pattern_table, row_table, rows_on_disk, score_histogram, score_histograms_by_part,
)

THREADS = 2  # the machines this is built for have two cores or more; more threads gain little here
COUNT_ROWS = 1_000_000  # rows worked on at a time where a pass over every row would make temporaries of its size


@dataclass(frozen=True)
class KeptCodes:
    """The final bin codes of every row, kept from the classing pass of a ledger held in memory."""

    names: tuple[str, ...]
    codes: np.ndarray  # rows × characteristics


@dataclass(frozen=True, eq=False)
class InProcessRows:
    """The rows of one ledger in this process.

    Attributes
    ----------
    outcome, weight, sample : numpy.ndarray
        Per row of the whole ledger (as in ``scorecard.intake.Ledger``).
    batches : callable
        ``batches(columns)``: one pass over the ledger reading those columns, as (first row, frame).
    frame : pandas.DataFrame or None
        The characteristic columns when the ledger is held in memory; None when it is read in batches.
    subsamples : mapping of str to numpy.ndarray
        The seeded sub-samples of a large development sample (see ``fitting_rows``).
    dates : numpy.ndarray or None
        datetime64[D] per row, when the ledger has a date column (monitoring counts per quarter).
    """

    outcome: np.ndarray
    weight: np.ndarray
    sample: np.ndarray
    batches: Batches
    frame: pd.DataFrame | None = None
    subsamples: Mapping[str, np.ndarray] = field(default_factory=dict)
    dates: np.ndarray | None = None

    @classmethod
    def from_frame(cls, frame: pd.DataFrame, outcome: np.ndarray, weight: np.ndarray, sample: np.ndarray, *,
                   subsamples: Mapping[str, np.ndarray] | None = None, dates: np.ndarray | None = None) -> InProcessRows:
        """Rows held in memory: every pass sees the whole frame at once."""
        return cls(outcome, weight, sample, lambda columns: iter([(0, frame)]), frame, dict(subsamples or {}), dates)

    @property
    def dated(self) -> bool:
        """Whether the rows have the date column (monitoring then counts per calendar quarter)."""
        return self.dates is not None

    def close(self) -> None:
        """Nothing to release: the rows are this process's."""

    @property
    def in_memory(self) -> bool:
        """Whether the rows are held in memory (codes can then be kept between passes)."""
        return self.frame is not None

    @property
    def fitting(self) -> np.ndarray:
        """Mask of the development rows with a good or bad outcome: the rows every fit and classing is made on."""
        return self._fitting_in(slice(None))

    @property
    def unit_weights(self) -> bool:
        """Whether every row weighs 1 (the weights are then one number, not an array)."""
        return self.weight.strides == (0,) and float(self.weight[:1].sum()) == 1.0

    def fitting_rows(self, subsample: str = "") -> np.ndarray:
        """Row numbers of the development rows with a good or bad outcome, or of their seeded sub-sample
        ('classing' or 'selection', drawn at intake when the development sample is large)."""
        if subsample in self.subsamples:
            return self.subsamples[subsample]
        return np.flatnonzero(self.fitting)

    def n_fitting(self, subsample: str = "") -> int:
        """The number of ``fitting_rows(subsample)``, counted a part at a time (not 8 bytes a row)."""
        if subsample in self.subsamples:
            return len(self.subsamples[subsample])
        return sum(int(np.count_nonzero(self._fitting_in(rows))) for rows in _parts(len(self.outcome)))

    def _fitting_in(self, rows: slice) -> np.ndarray:
        outcome = self.outcome[rows]
        return (self.sample[rows] == DEVELOPMENT) & ((outcome == GOOD) | (outcome == BAD))

    def _fitting_in_batch(self, subsample: str, first_row: int, n_rows: int) -> np.ndarray:
        """Positions, within the rows first_row .. first_row + n_rows − 1, of those among ``fitting_rows(subsample)``."""
        if subsample in self.subsamples:
            rows = self.subsamples[subsample]  # ascending
            return rows[np.searchsorted(rows, first_row):np.searchsorted(rows, first_row + n_rows)] - first_row
        return np.flatnonzero(self._fitting_in(slice(first_row, first_row + n_rows)))

    # ----------------------------------------------------------------------------------------
    # Classing

    def gather(self, subsample: str, columns: Sequence[str]) -> tuple[pd.DataFrame, np.ndarray]:
        """Return the values of a sub-sample of development (``fitting_rows``) in the named columns, and their weights."""
        rows = self.fitting_rows(subsample)
        if self.frame is not None:
            return self.frame.iloc[rows][list(columns)], self.weight[rows]
        if not columns:
            return pd.DataFrame(index=range(len(rows))), self.weight[rows]
        parts = []
        for first_row, frame in self.batches(list(columns)):
            inside = rows[(rows >= first_row) & (rows < first_row + len(frame))]
            parts.append(frame.iloc[inside - first_row])
        return pd.concat(parts, ignore_index=True), self.weight[rows]

    def count_bins(self, binnings: Mapping[str, object], *, keep_codes: bool,
                   progress: Callable[[Iterable], Iterable] = lambda items: items):
        """One pass: code every row of each characteristic and count its bins, plus a bin for unseen values.

        Returns
        -------
        (dict of BinCounts, dict of codes, dict of unseen levels)
            Counts per characteristic, with one bin more than its binning (``UNSEEN_LABEL``) for
            values the binning does not know; every row's codes when ``keep_codes``; and per
            characteristic the levels that fell in that bin on development rows, with row counts.

        Notes
        -----
        Characteristics are coded on two threads: numpy and pyarrow release the interpreter lock
        while they search and count, so both cores work.
        """
        outcome, weight, sample, fitting = self.outcome, self.weight, self.sample, self.fitting
        counts: dict[str, BinCounts] = {}
        codes: dict[str, list[np.ndarray]] = {name: [] for name in binnings}
        unseen: dict[str, dict[str, int]] = {}
        names = list(binnings)
        with concurrent.futures.ThreadPoolExecutor(max_workers=THREADS) as pool:
            for start, frame in self.batches(names):
                rows = slice(start, start + len(frame))

                def code_and_count(name):
                    binning = binnings[name]
                    column = code_rows(frame[name], binning, unseen_code=binning.n_bins)
                    batch = count_bins(column, outcome[rows], weight[rows], sample[rows], characteristic=name,
                                       labels=(*binning.labels, UNSEEN_LABEL))
                    unseen_in_development = batch.n_goods()[-1] + batch.n_bads()[-1] > 0
                    levels = unseen_levels(frame[name][fitting[rows]], binning) if unseen_in_development else {}
                    return name, column, batch, levels

                for name, column, batch, levels in progress(pool.map(code_and_count, names)):
                    counts[name] = counts[name] + batch if name in counts else batch
                    if keep_codes:
                        codes[name].append(column)
                    tally_unseen(unseen, {name: levels})
        joined = {name: np.concatenate(parts) if len(parts) != 1 else parts[0] for name, parts in codes.items() if parts}
        return counts, joined, {name: ordered_levels(levels) for name, levels in unseen.items()}

    # ----------------------------------------------------------------------------------------
    # Selection and the fit

    def pattern_table(self, subsample: str, binnings: Sequence, *, kept: KeptCodes | None = None,
                      final: bool = False) -> PatternTable | RowsOnDisk:
        """The pattern table of a sub-sample of development (``fitting_rows``) over the given characteristics.

        Above ``MERGE_LIMIT`` rows the table stays rows: merging would only cost memory. The final
        fit's table (``final``), read a part at a time by the fit, is then kept in a temporary file
        (``RowsOnDisk``) when its rows weigh 1 and its codes fit in a byte; any other stays in memory.
        """
        columns = tuple(b.characteristic for b in binnings)
        if self.n_fitting(subsample) > MERGE_LIMIT:
            if final and self.unit_weights and all(b.n_bins <= 255 for b in binnings):
                return rows_on_disk(self._fitting_codes(subsample, binnings, kept), characteristics=columns)
            return self._row_table(self.fitting_rows(subsample), binnings, kept)
        rows = self.fitting_rows(subsample)
        if self.frame is not None and (kept is None or not kept.codes.shape[0]):
            # in memory and not coded yet: code the sub-sample's rows only, not every row of the ledger
            frame = self.frame.iloc[rows]
            codes = np.column_stack([code_rows(frame[b.characteristic], b) for b in binnings])
            outcome, weight = self.outcome[rows], self.weight[rows]
            return pattern_table(codes, np.where(outcome == GOOD, weight, 0.0), np.where(outcome == BAD, weight, 0.0),
                                 characteristics=columns)
        parts = []
        for first_row, codes in self.coded_batches(binnings, kept):
            inside = rows[(rows >= first_row) & (rows < first_row + len(codes))]
            outcome, weight = self.outcome[inside], self.weight[inside]
            parts.append(pattern_table(codes[inside - first_row], np.where(outcome == GOOD, weight, 0.0),
                                       np.where(outcome == BAD, weight, 0.0), characteristics=columns))
        return merge_pattern_tables(parts)

    def _fitting_codes(self, subsample: str, binnings: Sequence, kept: KeptCodes | None):
        """Yield (codes, is good) of the rows of ``fitting_rows(subsample)``, in row order, a part at a time."""
        for first_row, batch in self.coded_batches(binnings, kept):
            for rows in _parts(len(batch)):  # kept codes come as one batch of every row
                inside = self._fitting_in_batch(subsample, first_row + rows.start, rows.stop - rows.start) + rows.start
                yield batch[inside], self.outcome[first_row + inside] == GOOD

    def _row_table(self, rows: np.ndarray, binnings: Sequence, kept: KeptCodes | None) -> PatternTable:
        """The rows' codes, goods and bads, filled in batch by batch into arrays made once."""
        outcome, weight = self.outcome[rows], self.weight[rows]
        codes = np.empty((len(rows), len(binnings)), dtype=np.uint16 if any(b.n_bins > 255 for b in binnings) else np.uint8)
        filled = 0
        for first_row, batch in self.coded_batches(binnings, kept):
            inside = rows[filled:np.searchsorted(rows, first_row + len(batch))]  # rows are ascending
            codes[filled:filled + len(inside)] = batch[inside - first_row]
            filled += len(inside)
        return row_table(codes, np.where(outcome == GOOD, weight, 0.0), np.where(outcome == BAD, weight, 0.0),
                         characteristics=[b.characteristic for b in binnings])

    def coded_batches(self, binnings: Sequence, kept: KeptCodes | None = None):
        """Yield (first row, codes) of the given characteristics: the kept codes, or coded again batch by batch."""
        if kept is not None and kept.codes.shape[0]:
            yield 0, kept.codes[:, [kept.names.index(b.characteristic) for b in binnings]]
            return
        for first_row, frame in self.batches([b.characteristic for b in binnings]):
            yield first_row, np.column_stack([code_rows(frame[b.characteristic], b) for b in binnings])

    # ----------------------------------------------------------------------------------------
    # Scores

    def score_histograms(self, binnings: Sequence, table, *, kept: KeptCodes | None = None) -> dict[str, ScoreHistogram]:
        """Score histogram per sample, from every row's score (points ``table``, characteristics in its order)."""
        parts: dict[str, list[ScoreHistogram]] = {}
        for first_row, codes in self.coded_batches(binnings, kept):
            scores = score_codes(codes, table)
            rows = slice(first_row, first_row + len(scores))
            outcome = self.outcome[rows]
            found = score_histograms_by_part(scores, self.sample[rows], len(SAMPLE_NAMES), outcome == GOOD, outcome == BAD,
                                             self.weight[rows], names=SAMPLE_NAMES)
            for index, histogram in found.items():
                parts.setdefault(SAMPLE_NAMES[index], []).append(histogram)
        return {name: merge_histograms(pieces) for name, pieces in parts.items()}

    def level_tables(self, binnings: Sequence, table, levels: np.ndarray, parts: np.ndarray, *, n_levels: int,
                     n_parts: int, kept: KeptCodes | None = None):
        """One pass for the fairness checks: per part of the rows and level of one protected attribute, the score
        histogram; and per characteristic, its weighted rows per bin and level.

        Parameters
        ----------
        binnings, table
            The model's binnings and points table (characteristics in its order).
        levels : numpy.ndarray
            Each row's level (0 .. n_levels − 1; -1: not recorded, left out).
        parts : numpy.ndarray
            Each row's part (0 .. n_parts − 1: a sample, or a calendar quarter; -1: in none).

        Returns
        -------
        (dict of (part, level) to ScoreHistogram, dict of (part, characteristic) to array bins × levels)
        """
        histograms: dict[tuple[int, int], list[ScoreHistogram]] = {}
        crossed: dict[tuple[int, str], np.ndarray] = {}
        names = [f"{number}:{g}" for number in range(n_parts) for g in range(n_levels)]
        for first_row, codes in self.coded_batches(binnings, kept):
            scores = score_codes(codes, table)
            rows = slice(first_row, first_row + len(scores))
            outcome, weight, level, part = self.outcome[rows], self.weight[rows], levels[rows], parts[rows]
            known = (part >= 0) & (level >= 0)
            slot = np.where(known, part.astype(np.int64) * n_levels + level, -1)  # a part and a level together
            found = score_histograms_by_part(scores, slot, n_parts * n_levels, outcome == GOOD, outcome == BAD, weight,
                                             names=names)
            for both, histogram in found.items():
                histograms.setdefault(divmod(both, n_levels), []).append(histogram)
            part, level, weight, codes = part[known].astype(np.int64), level[known], weight[known], codes[known]
            for j, binning in enumerate(binnings):
                cell = (part * binning.n_bins + codes[:, j]) * n_levels + level
                counts = np.bincount(cell, weights=weight, minlength=n_parts * binning.n_bins * n_levels)
                for number, table_part in enumerate(counts.reshape(n_parts, binning.n_bins, n_levels)):
                    key = (number, binning.characteristic)
                    crossed[key] = crossed.get(key, 0) + table_part
        return ({key: merge_histograms(pieces) for key, pieces in histograms.items()}, crossed)

    def quarter_of_rows(self) -> np.ndarray:
        """Each row's calendar quarter, counted from 1970 (-1: no date)."""
        return _absolute_quarters(self.dates)

    def period_counts(self, scorecard, *, by_quarter: bool):
        """One pass over a new ledger: per period ('all', and each calendar quarter as its number since 1970
        when ``by_quarter``), the score histogram, every model characteristic's weighted rows per bin, and the
        weight of rows with no outcome; the levels never seen at build time; and the number of undated rows.
        """
        table = scorecard.table
        outcome, weight = self.outcome, self.weight
        quarter = _absolute_quarters(self.dates) if by_quarter and self.dates is not None else None
        labels = sorted(set(quarter[quarter >= 0].tolist())) if quarter is not None else []
        parts = {label: {"histograms": [], "counts": {c.name: np.zeros(len(c.points)) for c in table.characteristics},
                         "unknown": 0.0} for label in ("all", *labels)}
        unseen: dict[str, dict[str, int]] = {}
        for first_row, frame in self.batches([b.characteristic for b in scorecard.binnings]):
            codes = scorecard.codes(frame)
            scores = score_codes(codes, table)
            rows = slice(first_row, first_row + len(frame))
            tally_unseen(unseen, scorecard.unseen(frame))
            periods = [("all", np.ones(len(frame), bool))]
            if quarter is not None:
                periods += [(label, quarter[rows] == label) for label in labels]
            for label, inside in periods:
                o, w = outcome[rows][inside], weight[rows][inside]
                part = parts[label]
                part["histograms"].append(score_histogram(scores[inside], o == GOOD, o == BAD, w, sample=str(label)))
                for j, char in enumerate(table.characteristics):
                    part["counts"][char.name] += np.bincount(codes[inside, j], weights=w, minlength=len(char.points))
                part["unknown"] += float(w[o == UNKNOWN].sum())
        merged = {label: {"histogram": merge_histograms(part["histograms"]), "counts": part["counts"],
                          "unknown": part["unknown"]} for label, part in parts.items()}
        undated = int((quarter < 0).sum()) if quarter is not None else 0
        return merged, {name: ordered_levels(levels) for name, levels in unseen.items()}, undated


def _parts(n_rows: int, size: int = COUNT_ROWS):
    """Slices of ``size`` rows covering 0 .. n_rows − 1: for row work whose temporaries should stay small."""
    return [slice(first, min(first + size, n_rows)) for first in range(0, n_rows, size)]


def _absolute_quarters(dates: np.ndarray) -> np.ndarray:
    """Each date's calendar quarter counted from 1970's first (-1: no date)."""
    quarter = np.full(len(dates), -1, dtype=np.int64)
    dated = ~np.isnat(dates)
    quarter[dated] = dates[dated].astype("datetime64[M]").astype(np.int64) // 3
    return quarter
