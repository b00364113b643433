"""What each candidate cut-off score would approve and decline, from a score histogram.

An application is approved when its score is at or above the cut-off, and declined below it.
"""

from __future__ import annotations

from dataclasses import dataclass
from numbers import Real

import numpy as np
import pandas as pd

from scorecard.checks.discrimination import freeze_arrays, validated_histogram
from scorecard.errors import ScorecardError

__all__ = ["CutoffTable", "cutoff_table"]


@dataclass(frozen=True, eq=False)  # eq=False: arrays have no single truth value to compare by
class CutoffTable:
    """Approvals, declines and bad rates at each candidate cut-off, lowest cut-off first.

    Attributes
    ----------
    cutoffs : numpy.ndarray
        Candidate cut-off scores; applications scoring at or above one are approved.
    approval_rate : numpy.ndarray
        Share of all applications approved.
    approved_bad_rate : numpy.ndarray
        Bads among the approved over all approved; NaN where no weight is approved.
    goods_approved, goods_declined, bads_approved, bads_declined : numpy.ndarray
        Weighted counts on each side of the cut-off.
    bads_declined_share : numpy.ndarray
        Share of all bads declined.
    """

    cutoffs: np.ndarray
    approval_rate: np.ndarray
    approved_bad_rate: np.ndarray
    goods_approved: np.ndarray
    goods_declined: np.ndarray
    bads_approved: np.ndarray
    bads_declined: np.ndarray
    bads_declined_share: np.ndarray

    def __post_init__(self):
        freeze_arrays(self)

    def to_frame(self) -> pd.DataFrame:
        """Return one row per candidate cut-off with every column."""
        columns = ("cutoffs", "approval_rate", "approved_bad_rate", "goods_approved", "goods_declined",
                   "bads_approved", "bads_declined", "bads_declined_share")
        frame = pd.DataFrame({name: getattr(self, name) for name in columns})
        return frame.rename(columns={"cutoffs": "cutoff"})


def cutoff_table(scores, goods, bads, *, step: float | None = None) -> CutoffTable:
    """Tabulate approvals and bad rates for candidate cut-offs across the score range.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.
    step : float, optional
        Distance between candidate cut-offs, starting at the lowest score level and not passing
        the highest. By default every score level is a candidate.

    Returns
    -------
    CutoffTable
        The first candidate (the lowest score level) approves everything.

    Raises
    ------
    ScorecardError
        If the histogram is malformed, has no goods or no bads, or ``step`` is not positive.

    Example
    -------
    >>> table = cutoff_table([500, 550, 600], [10, 30, 60], [6, 3, 1])
    >>> table.approval_rate.round(3).tolist(), table.approved_bad_rate.round(3).tolist()
    ([1.0, 0.855, 0.555], [0.091, 0.043, 0.016])
    """
    scores, goods, bads = validated_histogram(scores, goods, bads, caller="cutoff_table")
    cutoffs = scores if step is None else _stepped_cutoffs(scores, step)
    # A cut-off approves from its first level at or above it; levels before that are declined.
    first_approved = np.searchsorted(scores, cutoffs, side="left")
    goods_declined, goods_approved = _split_at(goods, first_approved)
    bads_declined, bads_approved = _split_at(bads, first_approved)
    approved = goods_approved + bads_approved
    return CutoffTable(
        cutoffs=cutoffs, approval_rate=approved / (goods.sum() + bads.sum()),
        approved_bad_rate=np.divide(bads_approved, approved, out=np.full_like(approved, np.nan), where=approved > 0),
        goods_approved=goods_approved, goods_declined=goods_declined, bads_approved=bads_approved,
        bads_declined=bads_declined, bads_declined_share=bads_declined / bads.sum(),
    )


def _stepped_cutoffs(scores: np.ndarray, step) -> np.ndarray:
    if isinstance(step, bool) or not (isinstance(step, (Real, np.number)) and np.isfinite(step) and step > 0):
        raise ScorecardError(f"cutoff_table: step = {step!r}; give a positive distance between cut-offs, e.g. 5.")
    n_steps = int(np.floor((scores[-1] - scores[0]) / step))
    return scores[0] + step * np.arange(n_steps + 1)


def _split_at(counts: np.ndarray, first: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sums of counts before and from each position in ``first``, each summed on its own side."""
    before = np.concatenate([[0.0], np.cumsum(counts)])
    from_here = np.concatenate([np.cumsum(counts[::-1])[::-1], [0.0]])
    return before[first], from_here[first]
