"""Reject inference: rejected applications given inferred goods and bads, from their accepted-only scores.

A scorecard is fitted on booked applications only: a rejected applicant was never lent to, so
never went good or bad, and a model of the accepted population is biased for the through-the-door
population it will score. Reject inference gives every rejected application a share of bad (the
rest good) and fits the model again on the accepted and the rejected applications together. Each
method here sets the share from the rejected application's score on the accepted-only scorecard
alone, so it works on the rejects' score histogram; no rows are read.

- fuzzy augmentation: each reject enters twice, as a good and as a bad, weighted by the
  accepted-only probabilities of good and of bad at its score;
- parcelling: the rejects of each score band (equal-population bands of the development accepts)
  are bad at the accepts' bad rate in that band times ``factor``;
- hard cut-off: the rejects are bad below a cut-off score and good above it, the cut-off placed so
  that their bads number ``factor`` times what the accepted-only scorecard expects of them (rejects
  at the cut-off score itself are split, so that no row order decides).

Every method rests on what the data cannot show: how the rejected applicants would have behaved
(common practice, no source: rejects are often taken to be two to four times as risky as the
accepted-only model says, from memory). The report says so beside the figures.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .checks.discrimination import band_labels, band_of, score_bands
from .rows import ScoreHistogram
from .terms import FUZZY_AUGMENTATION, HARD_CUTOFF, PARCELLING, frozen


@dataclass(frozen=True)
class InferredRejects:
    """How reject inference split the in-time rejected applications into goods and bads.

    Attributes
    ----------
    method : str
        'fuzzy-augmentation', 'parcelling' or 'hard-cutoff'.
    factor : float
        The settings' ``rejects.factor`` (not used by fuzzy augmentation).
    scores : numpy.ndarray
        The distinct accepted-only scores of the rejects, ascending.
    rejects : numpy.ndarray
        Weighted rejects at each score.
    bad_share : numpy.ndarray
        The inferred share of bad at each score (the rest is good).
    """

    method: str
    factor: float
    scores: np.ndarray
    rejects: np.ndarray
    bad_share: np.ndarray

    @property
    def bads(self) -> np.ndarray:
        """Inferred bads at each score."""
        return self.rejects * self.bad_share

    @property
    def goods(self) -> np.ndarray:
        """Inferred goods at each score."""
        return self.rejects * (1.0 - self.bad_share)

    @property
    def bad_rate(self) -> float:
        """The inferred bad rate of all the rejects."""
        return float(self.bads.sum() / self.rejects.sum())

    def bad_share_of(self, scores: np.ndarray) -> np.ndarray:
        """Return the inferred share of bad of rejects with these accepted-only scores (each one of ``self.scores``)."""
        return self.bad_share[np.searchsorted(self.scores, scores)]


def infer_rejects(rejects: ScoreHistogram, accepts: ScoreHistogram, pd_of_score, *, method: str, factor: float = 2.0,
                  n_bands: int = 10) -> InferredRejects:
    """Give the rejected applications inferred shares of bad, from their accepted-only scores.

    Parameters
    ----------
    rejects : ScoreHistogram
        The in-time rejects' accepted-only scores (their weight in ``everyone``).
    accepts : ScoreHistogram
        The development accepts' accepted-only scores, with goods and bads.
    pd_of_score : callable
        The accepted-only scorecard's probability of default of a score.
    method : {'fuzzy-augmentation', 'parcelling', 'hard-cutoff'}
    factor : float
        How many times riskier than the accepted-only evidence the rejects are taken to be.
    n_bands : int
        Bands of the development accepts for parcelling.

    Returns
    -------
    InferredRejects
    """
    count, pd = rejects.everyone, np.asarray(pd_of_score(rejects.scores), float)
    if method == FUZZY_AUGMENTATION:
        share = fuzzy_bad_shares(pd)
    elif method == PARCELLING:
        share = parcel_bad_shares(rejects.scores, accepts, factor=factor, n_bands=n_bands)
    elif method == HARD_CUTOFF:
        share = cutoff_bad_shares(count, pd, factor=factor)
    else:
        raise ValueError(f"infer_rejects: unknown method {method!r}")  # our own invariant: the settings check it
    return InferredRejects(method, float(factor), frozen(rejects.scores), frozen(count), frozen(share))


def fuzzy_bad_shares(pd: np.ndarray) -> np.ndarray:
    """Fuzzy augmentation: the share of bad of a reject is the accepted-only probability of default at its score."""
    return np.asarray(pd, float).copy()


def parcel_bad_shares(scores: np.ndarray, accepts: ScoreHistogram, *, factor: float, n_bands: int = 10) -> np.ndarray:
    """Parcelling: the rejects of a score band are bad at the band's accepted bad rate times ``factor`` (at most 1).

    The bands are equal-population bands of the development accepts; a reject scoring below the
    lowest (or above the highest) accept falls in the first (or last) band.
    """
    edges = score_bands(accepts.scores, accepts.goods + accepts.bads, n_bands=n_bands)
    band = band_of(accepts.scores, edges)
    size = edges.size + 1
    bads = np.bincount(band, weights=accepts.bads, minlength=size)
    booked = np.bincount(band, weights=accepts.goods + accepts.bads, minlength=size)
    rate = np.divide(bads, booked, out=np.zeros(size), where=booked > 0)
    return np.minimum(rate[band_of(scores, edges)] * factor, 1.0)


def cutoff_bad_shares(count: np.ndarray, pd: np.ndarray, *, factor: float) -> np.ndarray:
    """Hard cut-off: the lowest-scoring rejects are bad, as many as ``factor`` times their expected bads.

    Parameters
    ----------
    count : numpy.ndarray
        Weighted rejects at each score, scores ascending.
    pd : numpy.ndarray
        The accepted-only probability of default at each score.

    Returns
    -------
    numpy.ndarray
        1 below the cut-off score, 0 above it, and at the cut-off score the share that makes the
        bads exactly ``min(factor × Σ count × pd, Σ count)``.
    """
    count = np.asarray(count, float)
    wanted = min(factor * float(count @ np.asarray(pd, float)), float(count.sum()))
    below = np.concatenate([[0.0], np.cumsum(count)[:-1]])  # rejects scoring lower than each score
    return np.clip(np.divide(wanted - below, count, out=np.zeros_like(count), where=count > 0), 0.0, 1.0)


@dataclass(frozen=True)
class BandRates:
    """Bad rates by accepted-only score band: development accepts as observed, in-time rejects as inferred.

    The bands are the parcelling bands: equal-population bands of the development accepts.
    """

    labels: tuple[str, ...]
    accepts: np.ndarray
    accept_bads: np.ndarray
    rejects: np.ndarray
    reject_bads: np.ndarray

    @property
    def accept_bad_rate(self) -> np.ndarray:
        """Observed bad rate of the accepts in each band."""
        return np.divide(self.accept_bads, self.accepts, out=np.full(len(self.accepts), np.nan), where=self.accepts > 0)

    @property
    def reject_bad_rate(self) -> np.ndarray:
        """Inferred bad rate of the rejects in each band (NaN where a band holds none)."""
        return np.divide(self.reject_bads, self.rejects, out=np.full(len(self.rejects), np.nan), where=self.rejects > 0)


def band_rates(accepts: ScoreHistogram, inferred: InferredRejects, *, n_bands: int = 10) -> BandRates:
    """Return accepts, their bads, rejects and their inferred bads in each band of the development accepts."""
    edges = score_bands(accepts.scores, accepts.goods + accepts.bads, n_bands=n_bands)
    size = edges.size + 1
    accept_band, reject_band = band_of(accepts.scores, edges), band_of(inferred.scores, edges)

    def summed(band, values):
        return frozen(np.bincount(band, weights=values, minlength=size))

    return BandRates(band_labels(edges), summed(accept_band, accepts.goods + accepts.bads),
                     summed(accept_band, accepts.bads), summed(reject_band, inferred.rejects),
                     summed(reject_band, inferred.bads))
