"""Scoring: a scorecard scores a frame by look-up and sum, and names the reasons that cost each row the most.

Scoring is a look-up and a sum: one ``take`` per characteristic (``scorecard.rows.score_codes``),
no loop over rows.
"""

from __future__ import annotations

import concurrent.futures
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .classing import Binning
from .errors import LedgerError
from .intake import check_finite_values, check_numbers
from .points import PointsTable
from .rows import code_rows, score_units, scores_of_units, unseen_levels
from .rows.inprocess import THREADS
from .terms import NUMERIC


def reasons(codes: np.ndarray, table: PointsTable, *, count: int = 4) -> np.ndarray:
    """Return, per row, the positions of the characteristics that cost it the most points.

    A characteristic's cost is the points of its best bin minus the points the row got. The
    ``count`` costliest are the row's reasons, largest first (ties in table order); a
    characteristic that cost nothing is not a reason (-1).

    Returns
    -------
    numpy.ndarray
        Rows × count positions into ``table.characteristics``; -1 where there is no reason.
    """
    n_rows, k = codes.shape
    count = min(count, k)
    if count == 0:
        return np.zeros((n_rows, 0), dtype=np.int64)
    # points lost in whole units of the table's last decimal, so that one integer key per cell
    # sorts by loss (largest first) and, within a loss, by position: ties stay in table order
    unit = 10.0**table.decimals
    losses = [np.rint((char.best - char.points) * unit).astype(np.int64) for char in table.characteristics]
    largest = max((int(lost.max()) for lost in losses if lost.size), default=0)
    dtype = np.int32 if (largest + 1) * k < 2**31 - 1 else np.int64  # half the memory to move when it fits
    keys = [(-lost * k + column).astype(dtype) for column, lost in enumerate(losses)]
    smallest = np.empty((count, n_rows), dtype=dtype)
    for start in range(0, n_rows, REASON_BLOCK_ROWS):
        rows = slice(start, start + REASON_BLOCK_ROWS)
        _smallest_keys(codes[rows], keys, smallest[:, rows])
    position = np.mod(smallest, k)  # keys are distinct in a row, so each names its characteristic
    lost_most = (position - smallest) // k
    return np.where(lost_most > 0, position, -1).T.astype(np.int64)


# rows whose keys are ranked at a time: the running ranks stay in the processor's cache
REASON_BLOCK_ROWS = 32_768


def _smallest_keys(codes: np.ndarray, keys: list[np.ndarray], smallest: np.ndarray) -> None:
    """Write each row's ``len(smallest)`` smallest keys, smallest first, into ``smallest`` (ranks × rows).

    Each characteristic's key is passed down the running ranks (a sorting network: the smaller
    stays, the larger moves on), so every row is ranked with whole-column minimum and maximum.
    """
    smallest.fill(np.iinfo(smallest.dtype).max)
    spare = np.empty(smallest.shape[1], dtype=smallest.dtype)
    for column, key in enumerate(keys):
        moving = np.take(key, codes[:, column])
        for rank in smallest:
            np.maximum(rank, moving, out=spare)
            np.minimum(rank, moving, out=rank)
            moving, spare = spare, moving


def probabilities(units: np.ndarray, table: PointsTable) -> np.ndarray:
    """Return the probability of default of every row's score (``units``: whole units of the table's last decimal).

    Scores come from a short range of whole units, so the probability is computed once per
    score in the range and looked up: the same function on the same values as computing it
    row by row, so the same doubles.
    """
    if not len(units):
        return table.scaling.pd_of_score(scores_of_units(units, table))
    low, high = int(units.min()), int(units.max())
    if high - low >= len(units):  # a range wider than the rows: row by row is cheaper
        return table.scaling.pd_of_score(scores_of_units(units, table))
    scores = scores_of_units(np.arange(low, high + 1, dtype=np.int64), table)
    if high - low < FEW_SCORES:
        each = np.array([_pd_of_log_odds(odds) for odds in table.scaling.log_odds_of_score(scores).tolist()])
    else:
        each = table.scaling.pd_of_score(scores)
    return np.take(each, units - low)


# distinct scores whose probabilities are computed one by one in Python (a few milliseconds)
FEW_SCORES = 20_000


def _pd_of_log_odds(log_odds: float) -> float:
    """1 / (1 + e^log_odds), as ``Scaling.pd_of_score``'s ``scipy.special.expit`` computes it: ``math.exp`` is the
    C library's exp, the one expit calls (the tests compare them bit for bit), without importing scipy (0.1-0.2 s
    of a score process)."""
    try:
        return 1.0 / (1.0 + math.exp(log_odds))
    except OverflowError:  # e^log_odds beyond the largest double: expit gives 1 / (1 + inf)
        return 0.0


@dataclass(frozen=True)
class Scorecard:
    """A fitted, scaled scorecard: the binnings of its characteristics and their points.

    ``scorecard.score(frame)`` codes each row's characteristics to bins, looks up the points,
    sums them, and returns score, probability of default and reasons.
    """

    table: PointsTable
    binnings: tuple[Binning, ...]  # aligned with table.characteristics
    id_column: str = ""

    def codes(self, frame: pd.DataFrame, *, source: str = "ledger", first_row: int = 0) -> np.ndarray:
        """Return the bin codes of the model's characteristics for every row.

        Raises
        ------
        LedgerError
            A characteristic of the model is not a column of ``frame``.
        """
        missing = [b.characteristic for b in self.binnings if b.characteristic not in frame.columns]
        if missing:
            raise LedgerError(
                f"{source}: column{'s' if len(missing) > 1 else ''} {', '.join(map(repr, missing))} "
                f"of the scorecard {'are' if len(missing) > 1 else 'is'} not in the ledger. "
                "Every characteristic in the model is needed to score; add the column(s) with the same names."
            )
        for binning in self.binnings:
            if binning.kind == NUMERIC:
                column = frame[binning.characteristic]
                check_numbers(column, name=binning.characteristic, source=source, first_row=first_row)
                check_finite_values(column, name=binning.characteristic, source=source, first_row=first_row)
        wide = any(max(b.n_bins, b.unseen_bin + 1) > 255 for b in self.binnings)
        codes = np.empty((len(frame), len(self.binnings)), dtype=np.uint16 if wide else np.uint8, order="F")
        if len(self.binnings):
            # one column per characteristic, stored column after column; coded on two threads, since
            # numpy and pyarrow release the interpreter lock while they search
            with concurrent.futures.ThreadPoolExecutor(max_workers=THREADS) as pool:
                for column, coded in enumerate(pool.map(lambda b: code_rows(frame[b.characteristic], b), self.binnings)):
                    codes[:, column] = coded
        return codes

    def unseen(self, frame: pd.DataFrame) -> dict[str, dict[str, int]]:
        """Return, per categorical characteristic, the levels the scorecard never saw, with row counts."""
        found = {b.characteristic: unseen_levels(frame[b.characteristic], b) for b in self.binnings}
        return {name: levels for name, levels in found.items() if levels}

    def score(self, frame: pd.DataFrame, *, reason_count: int = 0, source: str = "DataFrame", first_row: int = 0) -> pd.DataFrame:
        """Score every row of ``frame``.

        Parameters
        ----------
        frame : pandas.DataFrame
            Holds at least the model's characteristics (same column names as at build time).
        reason_count : int
            Reasons per row (0: none).
        source : str
            Name of the data, for messages.
        first_row : int
            Position of the frame's first row in its file, for messages (0 for a whole read).

        Returns
        -------
        pandas.DataFrame
            ``score`` and ``pd`` per row, then ``reason_1`` … with codes and ``reason_1_text`` …
            with their text, aligned with ``frame``'s index.
        """
        codes = self.codes(frame, source=source, first_row=first_row)
        units = score_units(codes, self.table)
        scores = scores_of_units(units, self.table)
        result = pd.DataFrame({"score": scores, "pd": probabilities(units, self.table)}, index=frame.index)
        if reason_count:
            positions = reasons(codes, self.table, count=reason_count)
            texts = {"": [c.reason_code for c in self.table.characteristics],
                     "_text": [c.reason_label for c in self.table.characteristics]}
            columns = {}
            for rank in range(positions.shape[1]):
                for suffix, words in texts.items():
                    columns[f"reason_{rank + 1}{suffix}"] = _texts_of(positions[:, rank], words)  # -1: the blank
            result = result.assign(**columns)
        return result


def _texts_of(positions: np.ndarray, words: list[str]):
    """The text of each row's position (-1: blank) as a categorical column: a code per row into a few texts."""
    categories = [*words, ""]
    if len(set(categories)) < len(categories):  # texts given twice: plain text per row
        return np.array(categories, dtype=object)[positions]
    return pd.Categorical.from_codes(np.where(positions < 0, len(words), positions), categories=categories)
