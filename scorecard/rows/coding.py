"""Coding rows: each value to its bin, each row's bins to its score (vectorised; no loop over rows).

The two pieces of row work every engine shares with the stages: ``code_rows`` puts every value
of a characteristic in its bin of a ``scorecard.classing.Binning``, and ``score_codes`` adds up
the points of each row's bins. Levels a binning never saw (``unseen_levels``) are counted as they
are met, batch by batch (``tally_unseen``).
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from ..terms import CATEGORICAL, NUMERIC, value_text

if TYPE_CHECKING:  # the binning and the points table are data handed in; rows import no stage
    from ..classing import Binning
    from ..points import PointsTable

# the label of the bin a counting pass adds after a binning's own, for values the binning does not know
UNSEEN_LABEL = "(not in any class)"


def code_rows(values: pd.Series | np.ndarray, binning: Binning, *, unseen_code: int | None = None) -> np.ndarray:
    """Return the bin of every row as small unsigned integers.

    Parameters
    ----------
    values : pandas.Series or numpy.ndarray
        The characteristic's column.
    binning : Binning
    unseen_code : int, optional
        Code given to values the binning has never seen (default: ``binning.unseen_bin``).

    Returns
    -------
    numpy.ndarray
        uint8 codes (uint16 when there are more than 255 bins).

    Notes
    -----
    Numeric: x goes to ``[cuts[i-1], cuts[i])``, the same intervals as ``searchsorted(cuts, x,
    side='right')`` and ``pandas.cut(x, [-inf, *cuts, inf], right=False)``: its bin is the number
    of cuts at or below it, counted with one comparison per cut in the column's own dtype (a few
    passes over the column, several times faster than a binary search per value).
    """
    unseen = binning.unseen_bin if unseen_code is None else unseen_code
    dtype = np.uint8 if max(binning.n_bins, unseen + 1) <= 255 else np.uint16
    missing = unseen if binning.missing_bin < 0 else binning.missing_bin
    if binning.kind == NUMERIC:
        x, whole = _numbers(values, binning)
        cuts = np.asarray(binning.cuts, dtype=float)
        marks = (np.ceil(cuts).astype(np.int64) if whole else cuts).tolist()  # whole x: x >= c exactly when x >= ceil(c)
        specials = [(int(value) if whole else value, unseen if target < 0 else target)
                    for value, target in zip(binning.special_values, binning.special_bins)
                    if not whole or float(value).is_integer()]  # a whole number never equals a fraction
        codes = np.zeros(len(x), dtype=dtype)
        above = np.empty(min(len(x), BLOCK_ROWS), dtype=bool)
        # block by block, so that every comparison reads the block from the processor's cache, not from memory
        for start in range(0, len(x), BLOCK_ROWS):
            _code_block(x[start:start + BLOCK_ROWS], codes[start:start + BLOCK_ROWS], above, marks, specials,
                        None if whole else missing)
        return codes
    known = {level: bin_ for bin_, levels in enumerate(binning.classes) for level in levels}
    text = _arrow_text(values)
    if text is not None:  # the text looked up among the binning's few levels, in Arrow: no Python object per row
        positions = _positions_among(text, list(known))
        lookup = np.array([*known.values(), unseen, missing], dtype=dtype)
        return lookup[positions]
    level_codes, uniques = factorize_levels(values)
    lookup = np.array([known.get(level, unseen) for level in uniques] + [missing], dtype=dtype)
    return lookup[level_codes]  # the missing sentinel -1 picks the last entry


# rows coded at a time: a block of float64 values (512 KB) stays in the processor's cache while every cut is compared
BLOCK_ROWS = 65_536


def _code_block(x: np.ndarray, codes: np.ndarray, above: np.ndarray, marks: list, specials: list, missing: int | None) -> None:
    """Code one block of numbers in place: the count of cuts at or below each value, then special values, then missing."""
    above = above[:len(x)]
    counted = above.view(np.uint8)
    for mark in marks:
        np.greater_equal(x, mark, out=above)
        np.add(codes, counted, out=codes, casting="unsafe")
    for value, target in specials:
        np.equal(x, value, out=above)
        np.putmask(codes, above, target)
    if missing is not None:
        np.isnan(x, out=above)
        np.putmask(codes, above, missing)


def unseen_levels(values: pd.Series | np.ndarray, binning: Binning) -> dict[str, int]:
    """Return the levels of a categorical column that the binning does not know, with row counts."""
    if binning.kind != CATEGORICAL:
        return {}
    text = _arrow_text(values)
    if text is not None:  # only the rows holding a level the binning does not know are hashed
        levels = list(binning.levels)
        positions = _positions_among(text, levels)
        others = np.flatnonzero(positions == len(levels))
        if not len(others):
            return {}
        values = values.iloc[others]
    level_codes, uniques = factorize_levels(values)
    known = set(binning.levels)
    counts = np.bincount(level_codes[level_codes >= 0], minlength=len(uniques))
    return {level: int(n) for level, n in zip(uniques, counts) if level not in known and n > 0}


def tally_unseen(tally: dict[str, dict[str, int]], found: Mapping[str, Mapping[str, int]]) -> None:
    """Add levels never seen at build time (per characteristic, with row counts) into a running tally."""
    for name, levels in found.items():
        for level, n in levels.items():
            counts = tally.setdefault(name, {})
            counts[level] = counts.get(level, 0) + n


def ordered_levels(levels: Mapping[str, int]) -> dict[str, int]:
    """Levels with their row counts, most rows first, then by text: an order no engine's row order decides."""
    return dict(sorted(((str(level), int(n)) for level, n in levels.items()), key=lambda pair: (-pair[1], pair[0])))


def factorize_levels(values: pd.Series | np.ndarray) -> tuple[np.ndarray, list[str]]:
    """Return (codes, levels as text): -1 marks a missing value; 1 and 1.0 are both the level '1'."""
    codes, uniques = pd.factorize(pd.Series(values) if not isinstance(values, pd.Series) else values, use_na_sentinel=True)
    return codes, [value_text(u) for u in uniques]


def _arrow_text(values: pd.Series | np.ndarray):
    """The Arrow array under a column of text stored in Arrow (pandas 3 reads text so), or None."""
    if isinstance(values, pd.Series) and isinstance(values.dtype, pd.StringDtype) and values.dtype.storage == "pyarrow":
        import pyarrow as pa

        return pa.array(values.array)  # the column's own Arrow data, not a copy
    return None


def _positions_among(text, levels: list[str]) -> np.ndarray:
    """Each row's position in ``levels``; ``len(levels)`` for a text not among them, ``len(levels) + 1`` for a
    missing value. Arrow looks each text up in a hash table of the few levels."""
    import pyarrow as pa
    import pyarrow.compute as pc

    found = pc.index_in(text, value_set=pa.array(levels, type=text.type))
    if text.null_count:
        found = pc.if_else(text.is_null(), pa.scalar(len(levels) + 1, found.type), found)
    return pc.fill_null(found, len(levels)).to_numpy()


# whole numbers up to 2**53 compare with the cuts as the doubles they read as: the same bins as a column read as floats
EXACT_WHOLE = 2**53


def _numbers(values: pd.Series | np.ndarray, binning: Binning) -> tuple[np.ndarray, bool]:
    """The column as an array in its own dtype when it holds whole numbers that compare with the cuts exactly
    (and True), else as float64 (and False)."""
    array = values.to_numpy() if isinstance(values, pd.Series) and not isinstance(values.dtype, pd.api.extensions.ExtensionDtype) \
        else values if isinstance(values, np.ndarray) else None
    if array is not None and array.dtype.kind == "i" and len(array) and all(abs(c) < EXACT_WHOLE for c in binning.cuts) \
            and -EXACT_WHOLE <= array.min() and array.max() <= EXACT_WHOLE:
        return array.astype(np.int64, copy=False), True
    if array is not None and array.dtype == np.float64:
        return array, False
    return as_float(values), False


def as_float(values: pd.Series | np.ndarray) -> np.ndarray:
    if isinstance(values, pd.Series):
        return values.to_numpy(dtype=float, na_value=np.nan)
    return np.asarray(values, dtype=float)


def score_codes(codes: np.ndarray, table: PointsTable) -> np.ndarray:
    """Return every row's score: the sum of the points of its bins.

    Parameters
    ----------
    codes : numpy.ndarray
        Rows × characteristics bin codes, columns in the table's order.
    table : PointsTable

    Returns
    -------
    numpy.ndarray
        int64 scores when points are whole, else float64 scores rounded to the table's decimals.

    Notes
    -----
    Points are added as whole units of the table's last decimal and divided once at the end, so
    a score is the double nearest its decimal value (615.9, never the 615.9000000000001 a sum of
    floats can give) and equals what the exported SQL and Python forms compute.
    """
    return scores_of_units(score_units(codes, table), table)


def score_units(codes: np.ndarray, table: PointsTable) -> np.ndarray:
    """Return every row's score in whole units of the table's last decimal (int64), as ``score_codes`` adds them.

    Characteristics are taken a few at a time: their codes make one index into a small table of
    every combination's points, so a row costs one look-up per bundle rather than one per
    characteristic (whole numbers, so the sums are the same however they are bundled).
    """
    unit = 10**table.decimals
    points = [np.rint(char.points * unit).astype(np.int64) for char in table.characteristics]
    # added in 32-bit integers when no sum can overflow them (half the memory to move), else in 64-bit
    narrow = sum(int(np.abs(p).max()) for p in points if p.size) < 2**31 - 1
    units = np.zeros(codes.shape[0], dtype=np.int32 if narrow else np.int64)
    for columns in _bundles([len(p) for p in points]):
        combined = functools.reduce(np.add.outer, (points[c] for c in columns)).ravel().astype(units.dtype)
        index = codes[:, columns[0]].astype(np.uint16)
        for column in columns[1:]:
            index *= len(points[column])
            np.add(index, codes[:, column], out=index, casting="unsafe")  # codes of any integer type, each below its size
        units += np.take(combined, index)
    return units.astype(np.int64, copy=False)


# entries of a bundle's table of combined points: small enough to stay in the processor's nearest cache
BUNDLE_ENTRIES = 4096


def _bundles(sizes: list[int]) -> list[list[int]]:
    """Consecutive characteristics whose numbers of bins multiply to at most BUNDLE_ENTRIES (one alone if larger)."""
    bundles: list[list[int]] = []
    entries = BUNDLE_ENTRIES + 1
    for column, size in enumerate(sizes):
        if entries * max(size, 1) > BUNDLE_ENTRIES:
            bundles.append([])
            entries = 1
        bundles[-1].append(column)
        entries *= max(size, 1)
    return bundles


def scores_of_units(units: np.ndarray, table: PointsTable) -> np.ndarray:
    """Scores from whole units: the units themselves when points are whole, else divided once by 10**decimals."""
    return units if table.decimals == 0 else units / 10**table.decimals
