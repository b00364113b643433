"""Count tables: the small tables every stage after intake works on, made from coded rows.

Everything after intake works on count tables, so the statistics never see rows. The functions
here turn bin codes (and scores) into those tables with ``numpy.bincount`` and ``numpy.unique``;
an engine that counts elsewhere (an embedded SQL engine, a cluster) only has to
produce the same tables (see ``scorecard.rows``).

- ``BinCounts``: one characteristic's bins × (sample, outcome), weighted and raw.
- ``PatternTable``: distinct patterns of bin codes across characteristics, with goods and bads;
  ``RowsOnDisk``: a large table of rows of unit weight kept in a temporary file.
- ``ScoreHistogram``: goods, bads and others at each distinct score of one sample.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..terms import BAD, GOOD, OUTCOME_NAMES, SAMPLE_NAMES, frozen

N_SAMPLES = len(SAMPLE_NAMES)
N_OUTCOMES = len(OUTCOME_NAMES)
KEY_LIMIT = 2**62  # pattern keys are compacted before they could overflow int64
MERGE_LIMIT = 1_000_000  # tables of more rows are kept as rows (see row_table)


@dataclass(frozen=True)
class BinCounts:
    """Weighted and raw counts of one characteristic's bins, per sample and outcome.

    ``weighted[s, o, b]`` and ``rows[s, o, b]`` hold, for sample s (development, hold-out,
    out-of-time), outcome o (good, bad, indeterminate, unknown) and bin b, the summed case weight
    and the number of rows.
    """

    characteristic: str
    labels: tuple[str, ...]
    weighted: np.ndarray
    rows: np.ndarray

    def goods(self, sample: int = 0) -> np.ndarray:
        """Weighted goods per bin in one sample."""
        return self.weighted[sample, GOOD]

    def bads(self, sample: int = 0) -> np.ndarray:
        """Weighted bads per bin in one sample."""
        return self.weighted[sample, BAD]

    def n_goods(self, sample: int = 0) -> np.ndarray:
        """Rows of goods per bin in one sample."""
        return self.rows[sample, GOOD]

    def n_bads(self, sample: int = 0) -> np.ndarray:
        """Rows of bads per bin in one sample."""
        return self.rows[sample, BAD]

    def everyone(self, sample: int = 0) -> np.ndarray:
        """Weighted rows of any outcome per bin in one sample (what stability compares)."""
        return self.weighted[sample].sum(axis=0)

    def __add__(self, other: BinCounts) -> BinCounts:
        """Add the counts of two batches of the same characteristic."""
        return BinCounts(self.characteristic, self.labels, self.weighted + other.weighted, self.rows + other.rows)

    def regroup(self, mapping: np.ndarray, labels: Sequence[str]) -> BinCounts:
        """Return the counts with bin ``i`` added into bin ``mapping[i]`` of a new set of bins."""
        merge = np.zeros((len(mapping), len(labels)))
        merge[np.arange(len(mapping)), mapping] = 1.0  # each old bin goes wholly into one new bin
        weighted, rows = self.weighted @ merge, self.rows @ merge
        weighted.setflags(write=False)
        rows.setflags(write=False)
        return BinCounts(self.characteristic, tuple(labels), weighted, rows)


def count_bins(codes: np.ndarray, outcome: np.ndarray, weight: np.ndarray, sample: np.ndarray, *,
               characteristic: str, labels: Sequence[str]) -> BinCounts:
    """Return the counts of one characteristic's bins per sample and outcome.

    Parameters
    ----------
    codes : numpy.ndarray
        Bin of each row.
    outcome, weight, sample : numpy.ndarray
        Per row: outcome code, case weight, sample code (as in ``Ledger``).
    characteristic : str
    labels : sequence of str
        One label per bin.

    Returns
    -------
    BinCounts
    """
    n_bins = len(labels)
    key = (sample.astype(np.int64) * N_OUTCOMES + outcome) * n_bins + codes
    size = N_SAMPLES * N_OUTCOMES * n_bins
    shape = (N_SAMPLES, N_OUTCOMES, n_bins)
    weighted = np.bincount(key, weights=weight, minlength=size).reshape(shape)
    rows = np.bincount(key, minlength=size).reshape(shape).astype(float)
    weighted.setflags(write=False)
    rows.setflags(write=False)
    return BinCounts(characteristic, tuple(labels), weighted, rows)


@dataclass(frozen=True)
class PatternTable:
    """Distinct patterns of bin codes across characteristics, with their goods and bads.

    A logistic fit on WoE-coded characteristics depends on the rows only through this table, so
    fitting it with the goods and bads as weights gives exactly the estimates of a fit on the rows.
    """

    characteristics: tuple[str, ...]
    codes: np.ndarray  # n_patterns × n_characteristics bin codes
    goods: np.ndarray  # weighted goods per pattern
    bads: np.ndarray   # weighted bads per pattern

    @property
    def n_patterns(self) -> int:
        """Number of distinct patterns."""
        return len(self.goods)

    def column(self, characteristic: str) -> np.ndarray:
        """Return the bin codes of one characteristic across the patterns."""
        return self.codes[:, self.characteristics.index(characteristic)]

    def part(self, characteristics: Sequence[str], rows: slice = slice(None)) -> np.ndarray:
        """Return the bin codes of some patterns (a slice) of the named characteristics, patterns × characteristics."""
        return self.codes[rows, [self.characteristics.index(c) for c in characteristics]]

    def subset(self, characteristics: Sequence[str]) -> PatternTable:
        """Return the pattern table of fewer characteristics (patterns merged, counts added; not above ``MERGE_LIMIT``)."""
        columns = [self.characteristics.index(c) for c in characteristics]
        if self.n_patterns > MERGE_LIMIT:
            return row_table(self.codes[:, columns], self.goods, self.bads, characteristics=characteristics)
        return pattern_table(self.codes[:, columns], self.goods, self.bads, characteristics=characteristics)


def row_table(codes: np.ndarray, goods: np.ndarray, bads: np.ndarray, *, characteristics: Sequence[str]) -> PatternTable:
    """Return a table of rows as they are, not merged into distinct patterns.

    Fitting it gives the same likelihood, so the same estimates, as fitting its pattern table.
    Above ``MERGE_LIMIT`` rows the patterns are nearly all distinct, and merging them would only
    cost memory (sorting keys of every row) without making the fit any cheaper.
    """
    for array in (codes, goods, bads):
        array.setflags(write=False)
    return PatternTable(tuple(characteristics), codes, goods, bads)


@dataclass(frozen=True, eq=False)
class RowsOnDisk:
    """A table of rows as they are (``row_table``) kept in a temporary file, not in memory, and read a part at a time.

    Each row is its bin codes (one byte per characteristic) and one byte that is 1 for a good and
    0 for a bad, every row of unit weight: the final fit's table of a large ledger, about k + 1
    bytes a row on disk and a part of the rows in memory at a time. The file has no name (it is
    gone when closed, or when the process ends however it ends).

    Attributes
    ----------
    characteristics : tuple of str
        The columns this table shows, in order.
    file : file object
        The open temporary file.
    n_rows : int
    width : int
        Bytes per row in the file.
    positions : tuple of int
        Each characteristic's column in the file.
    goods_total, bads_total : float
        The goods and the bads: counts of rows.
    """

    characteristics: tuple[str, ...]
    file: object
    n_rows: int
    width: int
    positions: tuple[int, ...]
    goods_total: float
    bads_total: float
    last_read: dict = field(default_factory=dict, repr=False)  # the part read last: a pass asks for its codes and counts

    @property
    def n_patterns(self) -> int:
        """Number of rows (each its own pattern)."""
        return self.n_rows

    def part(self, characteristics: Sequence[str], rows: slice = slice(None)) -> np.ndarray:
        """Return the bin codes of some rows (a slice) of the named characteristics, rows × characteristics."""
        columns = [self.positions[self.characteristics.index(c)] for c in characteristics]
        return self._read(rows)[:, columns]

    def goods_of(self, rows: slice = slice(None)) -> np.ndarray:
        """Goods of some rows (1.0 or 0.0 each)."""
        return (self._read(rows)[:, -1] == 1).astype(float)

    def bads_of(self, rows: slice = slice(None)) -> np.ndarray:
        """Bads of some rows (1.0 or 0.0 each)."""
        return (self._read(rows)[:, -1] == 0).astype(float)

    def subset(self, characteristics: Sequence[str]) -> RowsOnDisk:
        """The same rows showing fewer characteristics (nothing is read or copied)."""
        positions = tuple(self.positions[self.characteristics.index(c)] for c in characteristics)
        return RowsOnDisk(tuple(characteristics), self.file, self.n_rows, self.width, positions, self.goods_total,
                          self.bads_total, self.last_read)

    def _read(self, rows: slice) -> np.ndarray:
        first, last, _ = rows.indices(self.n_rows)
        if self.last_read.get("rows") != (first, last):
            data = _read_exactly(self.file.fileno(), max(last - first, 0) * self.width, first * self.width)
            self.last_read.update(rows=(first, last), data=np.frombuffer(data, dtype=np.uint8).reshape(-1, self.width))
        return self.last_read["data"]


def _read_exactly(descriptor: int, size: int, offset: int) -> bytearray:
    """``size`` bytes of a file from ``offset`` (one read returns at most about 2 GB, so as many as it takes)."""
    data = bytearray(size)
    view, done = memoryview(data), 0
    while done < size:
        count = os.preadv(descriptor, [view[done:]], offset + done)
        if count == 0:
            raise OSError(f"a temporary file of rows ended {size - done} bytes early")  # our own invariant
        done += count
    return data


def goods_and_bads(table: PatternTable | RowsOnDisk) -> tuple[np.ndarray, np.ndarray]:
    """The goods and the bads of every pattern (row) of a table, as arrays in memory."""
    if isinstance(table, RowsOnDisk):
        return table.goods_of(), table.bads_of()
    return table.goods, table.bads


def rows_on_disk(parts: Iterable[tuple[np.ndarray, np.ndarray]], *, characteristics: Sequence[str]) -> RowsOnDisk:
    """Write rows to a temporary file as they come, part by part: (bin codes rows × characteristics, is good per row).

    The codes must fit in a byte (bins 0 to 255) and every row must weigh 1; the order of the rows
    is the order they come in, as ``row_table`` keeps it.
    """
    file = tempfile.TemporaryFile(prefix="scorewright-rows-")
    n_rows = n_goods = 0
    width = len(characteristics) + 1
    try:
        for codes, good in parts:
            block = np.empty((len(good), width), dtype=np.uint8)
            block[:, :-1] = codes
            block[:, -1] = good
            file.write(block.tobytes())
            n_rows, n_goods = n_rows + len(good), n_goods + int(np.count_nonzero(good))
        file.flush()
    except BaseException:
        file.close()
        raise
    return RowsOnDisk(tuple(characteristics), file, n_rows, width, tuple(range(len(characteristics))),
                      float(n_goods), float(n_rows - n_goods))


def pattern_table(codes: np.ndarray, goods: np.ndarray, bads: np.ndarray, *,
                  characteristics: Sequence[str]) -> PatternTable:
    """Return the distinct rows of ``codes`` with summed goods and bads.

    Parameters
    ----------
    codes : numpy.ndarray
        Rows × characteristics bin codes (any unsigned integer type).
    goods, bads : numpy.ndarray
        Weighted goods and bads carried by each row (a good row of weight w: goods w, bads 0).
    characteristics : sequence of str
        The column names of ``codes``.

    Returns
    -------
    PatternTable
        Patterns in ascending order of their codes; rows with no goods and no bads are dropped.
    """
    keep = (goods > 0) | (bads > 0)
    codes, goods, bads = codes[keep], goods[keep], bads[keep]
    key = pattern_keys(codes)
    unique_keys, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    pattern_goods = np.bincount(inverse, weights=goods, minlength=len(unique_keys))
    pattern_bads = np.bincount(inverse, weights=bads, minlength=len(unique_keys))
    pattern_codes = codes[first]
    for array in (pattern_codes, pattern_goods, pattern_bads):
        array.setflags(write=False)
    return PatternTable(tuple(characteristics), pattern_codes, pattern_goods, pattern_bads)


def merge_pattern_tables(tables: Sequence[PatternTable]) -> PatternTable:
    """Return the pattern table of several batches' tables together (patterns merged, counts added)."""
    if len(tables) == 1:
        return tables[0]
    return pattern_table(np.concatenate([t.codes for t in tables]), np.concatenate([t.goods for t in tables]),
                         np.concatenate([t.bads for t in tables]), characteristics=tables[0].characteristics)


def pattern_keys(codes: np.ndarray) -> np.ndarray:
    """Return one int64 key per row that is equal exactly when the rows' codes are equal.

    Columns are combined in mixed radix; when the next column could overflow, the keys so far
    are replaced by their rank among the distinct keys (which keeps equality and order).
    """
    n_rows, n_columns = codes.shape
    key = np.zeros(n_rows, dtype=np.int64)
    span = 1
    for column in range(n_columns):
        radix = int(codes[:, column].max(initial=0)) + 1
        if span * radix >= KEY_LIMIT:
            distinct, key = np.unique(key, return_inverse=True)
            key = key.astype(np.int64)
            span = len(distinct)
        key = key * radix + codes[:, column]
        span *= radix
    return key


# --------------------------------------------------------------------------------------------
# Score histograms: what every check is computed from


@dataclass(frozen=True)
class ScoreHistogram:
    """Weighted goods, bads and other rows at each distinct score of one sample.

    Scores of a points scorecard come from a finite set, so every discrimination, calibration
    and stability figure is computed exactly from this table.
    """

    sample: str
    scores: np.ndarray
    goods: np.ndarray
    bads: np.ndarray
    others: np.ndarray  # indeterminate and unknown outcomes: counted for stability only

    @property
    def everyone(self) -> np.ndarray:
        """Weighted rows of any outcome at each score."""
        return self.goods + self.bads + self.others

    def to_dict(self) -> dict[str, list[float]]:
        """Return the histogram as plain lists (for the model file)."""
        return {"scores": self.scores.tolist(), "goods": self.goods.tolist(), "bads": self.bads.tolist(),
                "others": self.others.tolist()}

    @classmethod
    def from_dict(cls, sample: str, data: Mapping[str, Sequence[float]]) -> ScoreHistogram:
        """Rebuild a histogram from ``to_dict`` output."""
        return cls(sample, *(frozen(data[key]) for key in ("scores", "goods", "bads", "others")))


def score_histogram(scores: np.ndarray, is_good: np.ndarray, is_bad: np.ndarray, weight: np.ndarray, *,
                    sample: str) -> ScoreHistogram:
    """Return the histogram of the given rows' scores, split by outcome.

    Parameters
    ----------
    scores : numpy.ndarray
        Score of each row.
    is_good, is_bad : numpy.ndarray
        Boolean outcome of each row (neither: indeterminate or unknown).
    weight : numpy.ndarray
        Case weight of each row.
    sample : str
        The sample's name.
    """
    distinct, inverse = np.unique(scores, return_inverse=True)
    size = len(distinct)
    goods = np.bincount(inverse, weights=weight * is_good, minlength=size)
    bads = np.bincount(inverse, weights=weight * is_bad, minlength=size)
    others = np.bincount(inverse, weights=weight * ~(is_good | is_bad), minlength=size)
    return ScoreHistogram(sample, frozen(distinct), frozen(goods), frozen(bads), frozen(others))


def score_histograms_by_part(scores: np.ndarray, part: np.ndarray, n_parts: int, is_good: np.ndarray,
                             is_bad: np.ndarray, weight: np.ndarray, *, names: Sequence[str]) -> dict[int, ScoreHistogram]:
    """Return ``score_histogram`` of the rows of each part that has any, from one sort and one count per outcome.

    ``part`` is each row's part (0 .. n_parts − 1; -1: in none); ``names`` the parts' sample
    names. Equal, bit for bit, to ``score_histogram`` of each part's rows: every cell's weights
    are added in row order, as there.
    """
    distinct, inverse = np.unique(scores, return_inverse=True)
    size = len(distinct)
    inside = part >= 0
    cell = part[inside].astype(np.int64) * size + inverse[inside]
    weight, is_good, is_bad = weight[inside], is_good[inside], is_bad[inside]

    def counted(weights: np.ndarray | None) -> np.ndarray:
        return np.bincount(cell, weights=weights, minlength=n_parts * size).reshape(n_parts, size)

    rows = counted(None)
    goods, bads, others = counted(weight * is_good), counted(weight * is_bad), counted(weight * ~(is_good | is_bad))
    found = {}
    for p in np.flatnonzero(rows.sum(axis=1)):
        present = rows[p] > 0
        found[int(p)] = ScoreHistogram(names[p], frozen(distinct[present]), frozen(goods[p][present]),
                                       frozen(bads[p][present]), frozen(others[p][present]))
    return found


def merge_histograms(histograms: Sequence[ScoreHistogram]) -> ScoreHistogram:
    """Return the histogram of several batches of one sample together."""
    if len(histograms) == 1:
        return histograms[0]
    distinct, inverse = np.unique(np.concatenate([h.scores for h in histograms]), return_inverse=True)

    def added(field: str) -> np.ndarray:
        return frozen(np.bincount(inverse, weights=np.concatenate([getattr(h, field) for h in histograms]), minlength=len(distinct)))

    return ScoreHistogram(histograms[0].sample, frozen(distinct), added("goods"), added("bads"), added("others"))
