"""Weight of evidence and information value tables.

Conventions (kept everywhere in the tool):

- WoE of a bin = ln(share of all goods in the bin / share of all bads in it); positive means
  better than average.
- A bin with no goods or no bads gets 0.5 added to both its counts before the shares are taken
  (the totals are not changed), which keeps WoE finite; the table marks such bins.
- IV = Σ (share of goods − share of bads) × WoE, with the unadjusted shares.
- Strength of an IV: under 0.02 unpredictive, 0.02 to 0.1 weak, 0.1 to 0.3 medium, 0.3 and over
  strong; over 0.5 is flagged for a leakage check (N. Siddiqi, Credit Risk Scorecards, Wiley
  2006 — from memory).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .terms import EMPTY_CELL, LEAKAGE_IV, frozen

STRENGTH_BOUNDS = ((0.02, "unpredictive"), (0.1, "weak"), (0.3, "medium"), (np.inf, "strong"))


def woe_values(goods: np.ndarray, bads: np.ndarray, total_goods: float, total_bads: float,
               *, empty_cell: float = EMPTY_CELL) -> np.ndarray:
    """Return ln(share of goods / share of bads) per bin, adding ``empty_cell`` to a cell with a zero.

    Example
    -------
    >>> woe_values(np.array([60., 30., 10.]), np.array([5., 5., 10.]), 100., 20.).round(4)
    array([ 0.8755,  0.1823, -1.6094])
    """
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    adjust = np.where((goods <= 0) | (bads <= 0), empty_cell, 0.0)
    return np.log(((goods + adjust) / total_goods) / ((bads + adjust) / total_bads))


def information_value(goods: np.ndarray, bads: np.ndarray, *, total_goods: float | None = None,
                      total_bads: float | None = None, empty_cell: float = EMPTY_CELL) -> float:
    """Return Σ (share of goods − share of bads) × WoE over the bins."""
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    total_goods = goods.sum() if total_goods is None else total_goods
    total_bads = bads.sum() if total_bads is None else total_bads
    woe = woe_values(goods, bads, total_goods, total_bads, empty_cell=empty_cell)
    return float(np.sum((goods / total_goods - bads / total_bads) * woe))


def iv_strength(iv: float) -> str:
    """Return the strength label of an information value (Siddiqi 2006 — from memory)."""
    return next(label for bound, label in STRENGTH_BOUNDS if iv < bound)


@dataclass(frozen=True)
class EvidenceTable:
    """Weight of evidence of every bin of one characteristic, on one sample.

    Attributes
    ----------
    characteristic, sample : str
    labels : tuple of str
    goods, bads : numpy.ndarray
        Weighted counts per bin.
    n_goods, n_bads : numpy.ndarray
        Raw counts (rows) per bin.
    share_goods, share_bads, bad_rate, woe, iv_contributions : numpy.ndarray
    adjusted : numpy.ndarray
        True where 0.5 was added to the bin's counts.
    iv : float
    strength : str
    leakage_flag : bool
        IV above the leakage threshold: check the characteristic is known at application time.
    """

    characteristic: str
    sample: str
    labels: tuple[str, ...]
    goods: np.ndarray
    bads: np.ndarray
    n_goods: np.ndarray
    n_bads: np.ndarray
    share_goods: np.ndarray
    share_bads: np.ndarray
    bad_rate: np.ndarray
    woe: np.ndarray
    iv_contributions: np.ndarray
    adjusted: np.ndarray
    iv: float
    strength: str
    leakage_flag: bool

    def to_frame(self) -> pd.DataFrame:
        """Return one row per bin: counts, shares, bad rate, WoE, IV contribution, adjusted."""
        return pd.DataFrame({
            "bin": self.labels, "goods": self.goods, "bads": self.bads, "n_goods": self.n_goods,
            "n_bads": self.n_bads, "share_goods": self.share_goods, "share_bads": self.share_bads,
            "bad_rate": self.bad_rate, "woe": self.woe, "iv": self.iv_contributions, "adjusted": self.adjusted,
        })


def evidence_table(goods: Sequence[float], bads: Sequence[float], *, labels: Sequence[str], characteristic: str,
                   n_goods: Sequence[float] | None = None, n_bads: Sequence[float] | None = None,
                   sample: str = "development", empty_cell: float = EMPTY_CELL,
                   leakage_iv: float = LEAKAGE_IV) -> EvidenceTable:
    """Return the WoE table of one characteristic from its bins' goods and bads.

    Parameters
    ----------
    goods, bads : sequence of float
        Weighted goods and bads of each bin.
    labels : sequence of str
        Bin labels.
    characteristic : str
    n_goods, n_bads : sequence of float, optional
        Raw row counts (default: the weighted counts).
    sample : str
        Which sample the counts are from; every figure says so.
    empty_cell : float
        Added to both counts of a bin with no goods or no bads.
    leakage_iv : float
        IV above which the table flags the characteristic for a leakage check.

    Returns
    -------
    EvidenceTable

    Notes
    -----
    WoE_i = ln((g_i / G) / (b_i / B)); IV = Σ (g_i / G − b_i / B) · WoE_i (N. Siddiqi, Credit Risk
    Scorecards, Wiley 2006 — from memory).

    Example
    -------
    >>> t = evidence_table([60, 30, 10], [5, 5, 10], labels=["a", "b", "c"], characteristic="x")
    >>> round(t.iv, 4)
    0.9593
    """
    goods, bads = frozen(goods), frozen(bads)
    total_goods, total_bads = goods.sum(), bads.sum()
    woe = woe_values(goods, bads, total_goods, total_bads, empty_cell=empty_cell)
    share_goods, share_bads = goods / total_goods, bads / total_bads
    contributions = (share_goods - share_bads) * woe
    rows = goods + bads
    bad_rate = np.divide(bads, rows, out=np.full_like(rows, np.nan), where=rows > 0)
    iv = float(contributions.sum())
    return EvidenceTable(
        characteristic=characteristic, sample=sample, labels=tuple(labels), goods=goods, bads=bads,
        n_goods=frozen(goods if n_goods is None else n_goods), n_bads=frozen(bads if n_bads is None else n_bads),
        share_goods=frozen(share_goods), share_bads=frozen(share_bads), bad_rate=frozen(bad_rate),
        woe=frozen(woe), iv_contributions=frozen(contributions), adjusted=frozen((goods <= 0) | (bads <= 0)),
        iv=iv, strength=iv_strength(iv), leakage_flag=iv > leakage_iv,
    )

