"""Coding rows: each value to its bin, each row's bins to its score (vectorised; no loop over rows).

The two pieces of row work every engine shares with the stages: ``code_rows`` puts every value
of a characteristic in its bin of a ``scorecard.classing.Binning``, and ``score_codes`` adds up
the points of each row's bins. Levels a binning never saw (``unseen_levels``) are counted as they
are met, batch by batch (``tally_unseen``).
"""

from __future__ import annotations

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
        codes = np.zeros(len(x), dtype=dtype)
        above = np.empty(len(x), dtype=bool)
        for cut in (np.ceil(cuts).astype(np.int64) if whole else cuts).tolist():  # whole x: x >= c exactly when x >= ceil(c)
            np.greater_equal(x, cut, out=above)
            np.add(codes, above, out=codes, casting="unsafe")
        for value, target in zip(binning.special_values, binning.special_bins):
            if whole and not float(value).is_integer():
                continue  # a whole number never equals it
            np.putmask(codes, x == (int(value) if whole else value), unseen if target < 0 else target)
        if not whole:
            np.putmask(codes, np.isnan(x), missing)
        return codes
    level_codes, uniques = factorize_levels(values)
    known = {level: bin_ for bin_, levels in enumerate(binning.classes) for level in levels}
    lookup = np.array([known.get(level, unseen) for level in uniques] + [missing], dtype=dtype)
    return lookup[level_codes]  # the missing sentinel -1 picks the last entry


def unseen_levels(values: pd.Series | np.ndarray, binning: Binning) -> dict[str, int]:
    """Return the levels of a categorical column that the binning does not know, with row counts."""
    if binning.kind != CATEGORICAL:
        return {}
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
    unit = 10**table.decimals
    points = [np.rint(char.points * unit).astype(np.int64) for char in table.characteristics]
    # added in 32-bit integers when no sum can overflow them (half the memory to move), else in 64-bit
    narrow = sum(int(np.abs(p).max()) for p in points if p.size) < 2**31 - 1
    units = np.zeros(codes.shape[0], dtype=np.int32 if narrow else np.int64)
    for column, lookup in enumerate(points):
        units += np.take(lookup.astype(units.dtype), codes[:, column])
    units = units.astype(np.int64, copy=False)
    return units if table.decimals == 0 else units / unit
