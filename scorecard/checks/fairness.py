"""Fair-lending checks from count tables: how well a characteristic stands in for a protected attribute,
and what a cut-off does to each level of one.

- :func:`cramers_v`: the association of two categorical variables from their cross-table (a model
  characteristic's bins against a protected attribute's levels), 0 none to 1 one determines the other.
- :func:`adverse_impact`: per level, the share approved at a cut-off and its ratio to the reference
  level's (the adverse impact ratio): the most-approved level among those large enough to set the bar.
  With the bad rate among the approved.

Applications scoring at or above the cut-off are approved. Whether a gap is lawful, and what to do
about it, is for the lender and the law where it lends: these figures only show the gap.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.checks.discrimination import freeze_arrays
from scorecard.errors import ScorecardError

__all__ = ["ImpactTable", "adverse_impact", "cramers_v"]


def cramers_v(table) -> float:
    """Return Cramér's V of a cross-table of weighted counts (rows × columns).

    Parameters
    ----------
    table : array_like, shape (r, c)
        Non-negative weighted counts; rows and columns without weight are left out.

    Returns
    -------
    float
        ``sqrt(χ² / (n · (min(r, c) − 1)))`` with Pearson's χ² of independence; 0 when fewer than
        two rows or two columns hold weight.

    Notes
    -----
    H. Cramér, Mathematical Methods of Statistics, Princeton 1946, section 21.9 (from memory).

    Example
    -------
    >>> round(cramers_v([[30, 10], [10, 30]]), 4)
    0.5
    """
    table = np.asarray(table, dtype=float)
    if table.ndim != 2 or not np.all(np.isfinite(table)) or (table < 0).any():
        raise ScorecardError("cramers_v: give a 2-D table of finite, non-negative counts.")
    table = table[table.sum(axis=1) > 0][:, table.sum(axis=0) > 0]
    if min(table.shape) < 2:
        return 0.0
    total = table.sum()
    expected = np.outer(table.sum(axis=1), table.sum(axis=0)) / total
    chi_square = float(((table - expected) ** 2 / expected).sum())
    return float(np.sqrt(chi_square / (total * (min(table.shape) - 1))))


@dataclass(frozen=True, eq=False)  # eq=False: arrays have no single truth value to compare by
class ImpactTable:
    """What one cut-off does to each level of a protected attribute.

    Attributes
    ----------
    cutoff : float
        Applications scoring at or above it are approved.
    levels : tuple of str
    applications, approved : numpy.ndarray
        Weighted applications of each level, and those approved.
    approval_rate : numpy.ndarray
        ``approved / applications``.
    ratio : numpy.ndarray
        The adverse impact ratio: each level's approval rate over the reference level's.
    can_be_reference : numpy.ndarray of bool
        Levels holding at least the smallest share of the attribute's applications that may set the bar
        (and always the largest level).
    reference : str
        The most-approved level among those that can be the reference.
    goods_approved, bads_approved : numpy.ndarray
        Approved goods and bads (outcomes known).
    approved_bad_rate : numpy.ndarray
        ``bads_approved / (goods_approved + bads_approved)``; NaN where no approved outcome is known.
    """

    cutoff: float
    levels: tuple[str, ...]
    applications: np.ndarray
    approved: np.ndarray
    approval_rate: np.ndarray
    ratio: np.ndarray
    goods_approved: np.ndarray
    bads_approved: np.ndarray
    approved_bad_rate: np.ndarray
    can_be_reference: np.ndarray
    reference: str

    def __post_init__(self):
        freeze_arrays(self)

    def to_frame(self) -> pd.DataFrame:
        """Return one row per level."""
        return pd.DataFrame({"level": self.levels, "applications": self.applications, "approved": self.approved,
                             "approval_rate": self.approval_rate, "ratio": self.ratio,
                             "goods_approved": self.goods_approved, "bads_approved": self.bads_approved,
                             "approved_bad_rate": self.approved_bad_rate, "can_be_reference": self.can_be_reference,
                             "reference": [level == self.reference for level in self.levels]})


def adverse_impact(histograms: Mapping[str, object], cutoff: float, reference_share: float = 0.0) -> ImpactTable:
    """Return, per level, the approvals at a cut-off and the adverse impact ratio.

    Parameters
    ----------
    histograms : mapping of level name to ScoreHistogram
        Each level's scores (``scores``, ``goods``, ``bads``, ``everyone``); every application counts
        in the approval rates, whatever its outcome.
    cutoff : float
        Applications scoring at or above it are approved.
    reference_share : float
        The smallest share of the attribute's applications a level must hold to be the reference; the
        largest level always may. A level of a few dozen applications approved by chance at a high
        rate would otherwise set the bar for every other level.

    Returns
    -------
    ImpactTable

    Raises
    ------
    ScorecardError
        No level holds any application.

    Notes
    -----
    The ratio of a level's approval rate to the most-approved level's is the adverse impact ratio
    (here the most-approved among the levels that can be the reference);
    the four-fifths rule of thumb reads a ratio under 0.8 as a sign of adverse impact (US Uniform
    Guidelines on Employee Selection Procedures, 29 CFR 1607.4(D), 1978, from memory). It is a
    guide for a closer look, not a verdict.
    """
    levels = tuple(histograms)
    applications = np.array([float(np.sum(h.everyone)) for h in histograms.values()])
    if not applications.sum() > 0:
        raise ScorecardError("adverse_impact: no level holds any application.")
    approved = np.array([float(np.sum(h.everyone[h.scores >= cutoff])) for h in histograms.values()])
    goods = np.array([float(np.sum(h.goods[h.scores >= cutoff])) for h in histograms.values()])
    bads = np.array([float(np.sum(h.bads[h.scores >= cutoff])) for h in histograms.values()])
    rate = np.divide(approved, applications, out=np.full_like(approved, np.nan), where=applications > 0)
    eligible = (applications >= reference_share * applications.sum()) | (applications == applications.max())
    reference = int(np.nanargmax(np.where(eligible, rate, np.nan)))
    top = rate[reference]
    ratio = np.divide(rate, top, out=np.full_like(rate, np.nan), where=np.isfinite(rate) & (top > 0))
    bad_rate = np.divide(bads, goods + bads, out=np.full_like(bads, np.nan), where=goods + bads > 0)
    return ImpactTable(float(cutoff), levels, applications, approved, rate, ratio, goods, bads, bad_rate, eligible,
                       levels[reference])
