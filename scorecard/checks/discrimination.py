"""Discrimination of a points scorecard, computed exactly from its score histogram.

Every check here takes a score histogram: three aligned 1-D arrays ``scores`` (strictly ascending),
``goods`` and ``bads`` (non-negative weighted counts of goods and of bads at each score). Weights are
frequency weights, so a histogram gives exactly the figures its expanded rows would give. Higher
scores mean lower risk; a cut-off ``s`` declines every application scored at or below ``s``.

Score bands (equal-population or given by edges) are defined here once and shared with
calibration and stability: :func:`score_bands` finds edges, :func:`band_of` assigns scores to them.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from numbers import Integral, Real

import numpy as np
import pandas as pd
from scipy import special

from scorecard.errors import ScorecardError, describe_rows

__all__ = [
    "AucResult",
    "AucShortfall",
    "PairedAucTest",
    "CapCurve",
    "GainsTable",
    "KsResult",
    "RocCurve",
    "auc",
    "auc_shortfall",
    "band_of",
    "paired_auc_test",
    "cap_points",
    "gains_table",
    "ks_statistic",
    "roc_points",
    "score_bands",
]

CONFIDENCE_SCALES = ("logit", "plain")


@dataclass(frozen=True, eq=False)  # eq=False: arrays have no single truth value to compare by
class AucResult:
    """Area under the ROC curve with its DeLong standard error and confidence interval.

    Attributes
    ----------
    auc : float
        P(a random good outscores a random bad) + ½ P(they tie).
    std_error : float
        DeLong's standard error; NaN when there are at most one good or one bad in weight.
    lower, upper : float
        Two-sided confidence interval for the AUC at ``level`` on ``scale``.
    gini, gini_lower, gini_upper : float
        Gini coefficient (accuracy ratio) ``2·AUC − 1`` and the same interval mapped to it.
    level : float
        Confidence level of the interval, e.g. 0.95.
    scale : str
        ``"logit"`` or ``"plain"``: the scale on which the normal interval was formed.
    n_goods, n_bads : float
        Total weight of goods and of bads.
    """

    auc: float
    std_error: float
    lower: float
    upper: float
    gini: float
    gini_lower: float
    gini_upper: float
    level: float
    scale: str
    n_goods: float
    n_bads: float


@dataclass(frozen=True, eq=False)
class AucShortfall:
    """One-sided test of whether the AUC has fallen below a baseline AUC.

    Attributes
    ----------
    auc, std_error : float
        The observed AUC and its DeLong standard error.
    reference, reference_std_error : float
        The baseline AUC and its standard error (0 for a fixed number, e.g. a target).
    z : float
        ``(auc − reference) / sqrt(std_error² + reference_std_error²)``; negative when the AUC is
        below the baseline.
    p_value : float
        ``Φ(z)``: small when the AUC is significantly below the baseline.
    """

    auc: float
    reference: float
    std_error: float
    reference_std_error: float
    z: float
    p_value: float

    @property
    def combined_std_error(self) -> float:
        """The standard error of the difference: ``sqrt(std_error² + reference_std_error²)``."""
        return float(np.hypot(self.std_error, self.reference_std_error))


@dataclass(frozen=True, eq=False)
class KsResult:
    """Kolmogorov–Smirnov statistic of the score distributions of goods and bads.

    Attributes
    ----------
    statistic : float
        ``max_s |F_bad(s) − F_good(s)|`` over the score levels.
    score : int or float
        The lowest score level at which the maximum is reached.
    bads_share, goods_share : float
        ``F_bad`` and ``F_good`` at that score: shares of all bads and of all goods scored at or below it.
    """

    statistic: float
    score: float
    bads_share: float
    goods_share: float


@dataclass(frozen=True, eq=False)
class RocCurve:
    """Points of the ROC curve, one per cut-off, from declining nothing up to declining everything.

    Attributes
    ----------
    cutoffs : numpy.ndarray
        ``-inf`` (decline nothing), then each score level: decline every application at or below it.
    goods_declined, bads_declined : numpy.ndarray
        Share of all goods and of all bads declined at each cut-off (x and y of the curve).
    """

    cutoffs: np.ndarray
    goods_declined: np.ndarray
    bads_declined: np.ndarray

    def __post_init__(self):
        freeze_arrays(self)

    def to_frame(self) -> pd.DataFrame:
        """Return one row per cut-off: cutoff, goods_declined, bads_declined."""
        return pd.DataFrame({"cutoff": self.cutoffs, "goods_declined": self.goods_declined,
                             "bads_declined": self.bads_declined})


@dataclass(frozen=True, eq=False)
class CapCurve:
    """Points of the cumulative accuracy profile, one per cut-off, from declining nothing upwards.

    Attributes
    ----------
    cutoffs : numpy.ndarray
        ``-inf`` (decline nothing), then each score level: decline every application at or below it.
    population_declined, bads_declined : numpy.ndarray
        Share of all applications and of all bads declined at each cut-off (x and y of the curve).
    bad_share : float
        Share of bads among all applications; the perfect model's curve bends at this x.
    """

    cutoffs: np.ndarray
    population_declined: np.ndarray
    bads_declined: np.ndarray
    bad_share: float

    def __post_init__(self):
        freeze_arrays(self)

    def to_frame(self) -> pd.DataFrame:
        """Return one row per cut-off: cutoff, population_declined, bads_declined."""
        return pd.DataFrame({"cutoff": self.cutoffs, "population_declined": self.population_declined,
                             "bads_declined": self.bads_declined})


@dataclass(frozen=True, eq=False)
class GainsTable:
    """Goods, bads and lift per score band, the riskiest (lowest-scoring) band first.

    Attributes
    ----------
    edges : numpy.ndarray
        Band edges: band ``k`` holds scores ``s`` with ``edges[k-1] <= s < edges[k]``.
    band : numpy.ndarray
        Band number of each row (as :func:`band_of` numbers them); bands without weight are left out.
    score_low, score_high : numpy.ndarray
        Lowest and highest score level of the histogram in the band.
    count, goods, bads : numpy.ndarray
        Weighted counts in the band.
    bad_rate : numpy.ndarray
        ``bads / count``.
    cumulative_count_share, cumulative_goods_share, cumulative_bads_share : numpy.ndarray
        Share of all applications, goods and bads in this band and the riskier ones above it.
    lift : numpy.ndarray
        Band bad rate divided by the overall bad rate.
    overall_bad_rate : float
        Bads over all applications.
    """

    edges: np.ndarray
    band: np.ndarray
    score_low: np.ndarray
    score_high: np.ndarray
    count: np.ndarray
    goods: np.ndarray
    bads: np.ndarray
    bad_rate: np.ndarray
    cumulative_count_share: np.ndarray
    cumulative_goods_share: np.ndarray
    cumulative_bads_share: np.ndarray
    lift: np.ndarray
    overall_bad_rate: float

    def __post_init__(self):
        freeze_arrays(self)

    def to_frame(self) -> pd.DataFrame:
        """Return one row per band, riskiest first, with every per-band column."""
        return pd.DataFrame({
            "band": self.band, "score_low": self.score_low, "score_high": self.score_high,
            "count": self.count, "goods": self.goods, "bads": self.bads, "bad_rate": self.bad_rate,
            "cumulative_count_share": self.cumulative_count_share,
            "cumulative_goods_share": self.cumulative_goods_share,
            "cumulative_bads_share": self.cumulative_bads_share, "lift": self.lift,
        })


def auc(scores, goods, bads, *, level: float = 0.95, scale: str = "logit") -> AucResult:
    """Return the AUC and Gini of a score histogram with DeLong's standard error and interval.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.
    level : float
        Confidence level of the two-sided interval, between 0 and 1.
    scale : {"logit", "plain"}
        ``"logit"`` (default) forms the normal interval for ``ln(AUC / (1 − AUC))``, with the
        delta-method standard error ``se / (AUC·(1 − AUC))``, and maps it back, so it stays inside
        (0, 1) and is asymmetric near 1 as the AUC's sampling distribution is. ``"plain"`` forms
        ``AUC ± z·se`` and clips it to [0, 1].

    Returns
    -------
    AucResult

    Raises
    ------
    ScorecardError
        If the histogram is malformed (shapes, order, counts), has no goods or no bads, or an
        option is out of range.

    Notes
    -----
    With ``B(<s)`` the weight of bads below level ``s`` and ``G(>s)`` that of goods above it, the
    placement of a good at ``s`` is ``V10(s) = (B(<s) + ½ b_s) / B`` and that of a bad is
    ``V01(s) = (G(>s) + ½ g_s) / G``. Then ``AUC = Σ g_s V10(s) / G``, exact with ties counted
    half, and DeLong's variance is ``S10 / G + S01 / B`` with
    ``S10 = Σ g_s (V10(s) − AUC)² / (G − 1)`` and ``S01 = Σ b_s (V01(s) − AUC)² / (B − 1)``
    (E. R. DeLong, D. M. DeLong, D. L. Clarke-Pearson, "Comparing the areas under two or more
    correlated receiver operating characteristic curves", Biometrics 44, 1988, 837–845). The
    Gini coefficient, or accuracy ratio, is ``2·AUC − 1`` (B. Engelmann, E. Hayden, D. Tasche,
    "Testing rating accuracy", Risk, January 2003). The logit-scale interval is the one
    M. S. Pepe recommends (The Statistical Evaluation of Medical Tests for Classification and
    Prediction, Oxford University Press, 2003, section 5.2 — from memory).

    Example
    -------
    >>> result = auc([500, 550, 600], [10, 30, 60], [6, 3, 1])
    >>> round(result.auc, 4), round(result.gini, 4)
    (0.825, 0.65)
    """
    scores, goods, bads = validated_histogram(scores, goods, bads, caller="auc")
    check_level(level, caller="auc")
    if scale not in CONFIDENCE_SCALES:
        raise ScorecardError(f"auc: scale {scale!r} is not known; choose 'logit' or 'plain'.")
    good_placements, bad_placements = _placements(goods, bads)
    area = float(goods @ good_placements / goods.sum())
    std_error = float(np.sqrt(_delong_variance(goods, bads, good_placements, bad_placements, area)))
    lower, upper = _auc_interval(area, std_error, level, scale)
    return AucResult(
        auc=area, std_error=std_error, lower=lower, upper=upper, gini=2 * area - 1,
        gini_lower=2 * lower - 1, gini_upper=2 * upper - 1, level=float(level), scale=scale,
        n_goods=float(goods.sum()), n_bads=float(bads.sum()),
    )


def auc_shortfall(result: AucResult, *, reference: float, reference_std_error: float = 0.0) -> AucShortfall:
    """Test one-sidedly whether an AUC has fallen below a baseline AUC measured on another sample.

    Parameters
    ----------
    result : AucResult
        The AUC on the sample being monitored, from :func:`auc`.
    reference : float
        The baseline AUC, e.g. the AUC on the build's out-of-time sample.
    reference_std_error : float
        The baseline's own DeLong standard error. Two AUCs on independent samples each carry
        sampling error, so both go into the test; 0 treats the baseline as a fixed number (a
        target), which flags a fall more readily than the data warrant.

    Returns
    -------
    AucShortfall
        ``z = (auc − reference) / sqrt(se² + se_reference²)`` and ``p = Φ(z)``. With a zero
        combined standard error, ``z`` is ±inf by the sign of the difference, or 0 when there is none.

    Raises
    ------
    ScorecardError
        If ``reference`` is not between 0 and 1, ``reference_std_error`` is negative or not
        finite, or the AUC has no standard error (NaN: the sample has at most one good or one bad
        in weight).

    Notes
    -----
    The samples are independent (different applications), so the variance of the difference is
    the sum of the two DeLong variances (E. R. DeLong, D. M. DeLong, D. L. Clarke-Pearson,
    "Comparing the areas under two or more correlated receiver operating characteristic curves",
    Biometrics 44, 1988, 837–845; their covariance term is zero for independent samples). Under
    the null hypothesis of equal AUCs the statistic is asymptotically standard normal.
    """
    if not (np.isfinite(reference) and 0 <= reference <= 1):
        raise ScorecardError(f"auc_shortfall: reference = {reference!r}; give an AUC between 0 and 1.")
    if not (np.isfinite(reference_std_error) and reference_std_error >= 0):
        raise ScorecardError(f"auc_shortfall: reference_std_error = {reference_std_error!r}; give a standard error >= 0.")
    if not np.isfinite(result.std_error):
        raise ScorecardError(
            f"auc_shortfall: the AUC has no standard error ({result.std_error!r}): the sample has "
            f"{result.n_goods:g} goods and {result.n_bads:g} bads in weight, and the test needs more "
            f"than one of each."
        )
    difference = result.auc - reference
    combined = float(np.hypot(result.std_error, reference_std_error))
    if combined > 0:
        z = difference / combined
    else:
        z = float(np.sign(difference) * np.inf) if difference else 0.0
    return AucShortfall(auc=result.auc, reference=float(reference), std_error=result.std_error,
                        reference_std_error=float(reference_std_error), z=float(z), p_value=float(special.ndtr(z)))


@dataclass(frozen=True, eq=False)
class PairedAucTest:
    """Two scores' AUCs on the same applications, and the two-sided test that they differ.

    Attributes
    ----------
    first, second : float
        The AUC of each score.
    difference : float
        ``second − first``.
    std_error : float
        DeLong's standard error of the difference, with the covariance of the two on the same rows.
    z, p_value : float
        ``difference / std_error`` and its two-sided p-value.
    """

    first: float
    second: float
    difference: float
    std_error: float
    z: float
    p_value: float


def paired_auc_test(first, second, goods, bads) -> PairedAucTest:
    """Test whether two scores of the same applications differ in AUC (DeLong's paired test).

    Parameters
    ----------
    first, second : array_like, shape (n,)
        Each application's (or each pattern's) two scores; higher means better.
    goods, bads : array_like, shape (n,)
        Weight of goods and of bads with those scores (a pattern may hold both).

    Returns
    -------
    PairedAucTest

    Raises
    ------
    ScorecardError
        The arrays are misaligned or there are not more than one good and one bad in weight.

    Notes
    -----
    With each good's placement ``V10_k`` (the share of bads it outscores on score k, ties half)
    and each bad's ``V01_k`` (the share of goods that outscore it), ``S10_kl = Σ g (V10_k − A_k)
    (V10_l − A_l) / (G − 1)`` and ``S01_kl`` alike over the bads; then ``var(A_2 − A_1) =
    (S10_11 + S10_22 − 2 S10_12) / G + (S01_11 + S01_22 − 2 S01_12) / B`` (E. R. DeLong, D. M.
    DeLong, D. L. Clarke-Pearson, Biometrics 44, 1988, the correlated case). Weights count as
    frequencies, so a pattern table gives exactly what its rows give.
    """
    first, second = (np.asarray(v, dtype=float) for v in (first, second))
    goods, bads = (np.asarray(v, dtype=float) for v in (goods, bads))
    if not (first.shape == second.shape == goods.shape == bads.shape and first.ndim == 1):
        raise ScorecardError("paired_auc_test: give four aligned 1-D arrays: two scores, goods and bads.")
    n_goods, n_bads = goods.sum(), bads.sum()
    if not (n_goods > 1 and n_bads > 1):
        raise ScorecardError(f"paired_auc_test: {n_goods:g} goods and {n_bads:g} bads in weight; the test needs more "
                             "than one of each.")
    placements = [_row_placements(score, goods, bads) for score in (first, second)]
    areas = [float(goods @ good_place / n_goods) for good_place, _ in placements]
    good_dev = [good_place - area for (good_place, _), area in zip(placements, areas)]
    bad_dev = [bad_place - area for (_, bad_place), area in zip(placements, areas)]

    def spread(weights, left, right, n):
        return float(weights @ (left * right) / (n - 1))

    variance = ((spread(goods, good_dev[0], good_dev[0], n_goods) + spread(goods, good_dev[1], good_dev[1], n_goods)
                 - 2 * spread(goods, good_dev[0], good_dev[1], n_goods)) / n_goods
                + (spread(bads, bad_dev[0], bad_dev[0], n_bads) + spread(bads, bad_dev[1], bad_dev[1], n_bads)
                   - 2 * spread(bads, bad_dev[0], bad_dev[1], n_bads)) / n_bads)
    difference = areas[1] - areas[0]
    std_error = float(np.sqrt(max(variance, 0.0)))
    z = difference / std_error if std_error > 0 else (float(np.sign(difference) * np.inf) if difference else 0.0)
    return PairedAucTest(areas[0], areas[1], difference, std_error, float(z), float(2 * special.ndtr(-abs(z))))


def _row_placements(scores: np.ndarray, goods: np.ndarray, bads: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each observation's placement as a good (share of bads below, ties half) and as a bad (share of goods above)."""
    levels, inverse = np.unique(scores, return_inverse=True)
    good_places, bad_places = _placements(np.bincount(inverse, weights=goods, minlength=len(levels)),
                                          np.bincount(inverse, weights=bads, minlength=len(levels)))
    return good_places[inverse], bad_places[inverse]


def ks_statistic(scores, goods, bads) -> KsResult:
    """Return the Kolmogorov–Smirnov statistic of goods against bads and the score where it peaks.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.

    Returns
    -------
    KsResult

    Raises
    ------
    ScorecardError
        If the histogram is malformed or has no goods or no bads.

    Notes
    -----
    ``KS = max_s |F_bad(s) − F_good(s)|`` with ``F`` the weighted empirical distribution functions
    at the score levels; both are step functions that jump only there, so the maximum over the
    levels is the supremum over all scores (the two-sample statistic of N. Smirnov, "On the
    estimation of the discrepancy between empirical curves of distribution for two independent
    samples", Bulletin of Moscow University 2, 1939 — from memory).
    """
    scores, goods, bads = validated_histogram(scores, goods, bads, caller="ks_statistic")
    bads_share, goods_share = cumulative_share(bads), cumulative_share(goods)
    gap = np.abs(bads_share - goods_share)
    peak = int(np.argmax(gap))
    return KsResult(statistic=float(gap[peak]), score=scores[peak].item(),
                    bads_share=float(bads_share[peak]), goods_share=float(goods_share[peak]))


def roc_points(scores, goods, bads) -> RocCurve:
    """Return the ROC curve: shares of goods and of bads declined at each cut-off.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.

    Returns
    -------
    RocCurve
        ``n + 1`` points from (0, 0) (cut-off ``-inf``: decline nothing) to (1, 1).

    Raises
    ------
    ScorecardError
        If the histogram is malformed or has no goods or no bads.

    Notes
    -----
    With straight lines between the points, the area under the curve is the AUC with ties
    counted half, i.e. the Mann–Whitney statistic over the number of good–bad pairs (D. Bamber,
    "The area above the ordinal dominance graph and the area below the receiver operating
    characteristic graph", Journal of Mathematical Psychology 12, 1975 — from memory).
    """
    scores, goods, bads = validated_histogram(scores, goods, bads, caller="roc_points")
    return RocCurve(cutoffs=_cutoffs_from_nothing(scores), goods_declined=_from_zero(cumulative_share(goods)),
                    bads_declined=_from_zero(cumulative_share(bads)))


def cap_points(scores, goods, bads) -> CapCurve:
    """Return the cumulative accuracy profile: shares of all applications and of bads declined.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.

    Returns
    -------
    CapCurve
        ``n + 1`` points from (0, 0) (cut-off ``-inf``: decline nothing) to (1, 1).

    Raises
    ------
    ScorecardError
        If the histogram is malformed or has no goods or no bads.

    Notes
    -----
    The accuracy ratio is the area between this curve and the diagonal over the same area for the
    perfect model, and equals ``2·AUC − 1`` (Engelmann, Hayden and Tasche, Risk, 2003).
    """
    scores, goods, bads = validated_histogram(scores, goods, bads, caller="cap_points")
    counts = goods + bads
    return CapCurve(cutoffs=_cutoffs_from_nothing(scores), population_declined=_from_zero(cumulative_share(counts)),
                    bads_declined=_from_zero(cumulative_share(bads)), bad_share=float(bads.sum() / counts.sum()))


def score_bands(scores, counts, *, n_bands: int = 10) -> np.ndarray:
    """Return edges of about equal-population score bands that never split a score level.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    counts : array_like, shape (n,)
        Non-negative weighted count of applications at each level (goods plus bads, or all
        applications when outcomes are not known yet).
    n_bands : int
        Number of bands aimed at, at least 1.

    Returns
    -------
    numpy.ndarray
        Read-only, strictly ascending edges, each a score level: the lowest score of every band
        but the first. Use :func:`band_of` to assign scores. There are at most ``n_bands − 1``.

    Raises
    ------
    ScorecardError
        If the histogram is malformed, has no weight, or ``n_bands`` is not a whole number >= 1.

    Notes
    -----
    A whole score level goes to the band that holds the midpoint of its share of the population:
    with ``c_s`` the cumulative share up to and including level ``s``, its band is
    ``floor(n_bands · (c_s − ½ p_s))`` with ``p_s`` its own share. A level that straddles a
    boundary thus goes to the side holding most of it, and bands are as equal as whole levels
    allow. When one level holds more than a band's share, the bands it covers merge and fewer
    than ``n_bands`` come out. A level with no weight goes where the cumulative share below it
    falls, so it may start the next band; it changes no band's weight.
    """
    scores, (counts,) = validated_levels(scores, {"counts": counts}, caller="score_bands")
    return band_edges(scores, counts, n_bands=n_bands, edges=None, caller="score_bands")


def band_of(scores, edges) -> np.ndarray:
    """Return the band number of each score: ``k`` for ``edges[k-1] <= score < edges[k]``.

    Parameters
    ----------
    scores : array_like
        Scores in any order, e.g. the score levels of a histogram from another sample.
    edges : array_like, shape (m,)
        Strictly ascending band edges, from :func:`score_bands` or chosen by the analyst.

    Returns
    -------
    numpy.ndarray
        Integers from 0 (below ``edges[0]``) to ``m`` (at or above ``edges[-1]``), shaped as ``scores``.

    Raises
    ------
    ScorecardError
        If the edges are not finite and strictly ascending, or a score is not finite.
    """
    edges = validated_edges(edges, caller="band_of")
    scores = np.asarray(scores, dtype=float)
    if not np.all(np.isfinite(scores)):
        raise ScorecardError("band_of: scores must be finite numbers; remove NaN and infinite values.")
    return _band_index(scores, edges)


def gains_table(scores, goods, bads, *, n_bands: int = 10, edges=None) -> GainsTable:
    """Return goods, bads, bad rate, cumulative shares and lift per score band.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.
    n_bands : int
        Number of equal-population bands (see :func:`score_bands`); not used when ``edges`` is given.
    edges : array_like, optional
        Strictly ascending band edges chosen by the analyst (see :func:`band_of`).

    Returns
    -------
    GainsTable
        One row per band that holds weight, the riskiest (lowest-scoring) band first; cumulative
        shares run from that band down.

    Raises
    ------
    ScorecardError
        If the histogram is malformed, has no goods or no bads, or the bands are malformed.

    Notes
    -----
    Lift of a band is its bad rate over the overall bad rate; the count-weighted mean lift is 1.
    """
    scores, goods, bads = validated_histogram(scores, goods, bads, caller="gains_table")
    edges = band_edges(scores, goods + bads, n_bands=n_bands, edges=edges, caller="gains_table")
    bands = band_totals(scores, edges, {"goods": goods, "bads": bads})
    count = bands["goods"] + bands["bads"]
    overall_bad_rate = float(bads.sum() / count.sum())
    return GainsTable(
        edges=edges, band=bands["band"], score_low=bands["score_low"], score_high=bands["score_high"],
        count=count, goods=bands["goods"], bads=bands["bads"], bad_rate=bands["bads"] / count,
        cumulative_count_share=cumulative_share(count), cumulative_goods_share=cumulative_share(bands["goods"]),
        cumulative_bads_share=cumulative_share(bands["bads"]), lift=bands["bads"] / count / overall_bad_rate,
        overall_bad_rate=overall_bad_rate,
    )


# ---------------------------------------------------------------------------------------------
# Helpers shared by the other checks modules (not part of the public API).


def validated_histogram(scores, goods, bads, *, caller: str, need_goods: bool = True,
                        need_bads: bool = True) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Check a score histogram once at entry and return it as arrays, the counts as floats."""
    scores, (goods, bads) = validated_levels(scores, {"goods": goods, "bads": bads}, caller=caller)
    for values, name, needed in ((goods, "goods", need_goods), (bads, "bads", need_bads)):
        if needed and not values.sum() > 0:
            raise ScorecardError(
                f"{caller}: the histogram has no {name} (every count of {name} is 0); the check compares "
                f"goods with bads and needs some weight of each. Check the outcome mapping and the sample."
            )
    return scores, goods, bads


def validated_levels(scores, counts: dict, *, caller: str) -> tuple[np.ndarray, list[np.ndarray]]:
    """Check strictly ascending finite scores and aligned, finite, non-negative counts."""
    scores = _numeric_vector(scores, "scores", caller)
    arrays = [_numeric_vector(values, name, caller).astype(float) for name, values in counts.items()]
    for values, name in zip(arrays, counts):
        if values.shape != scores.shape:
            raise ScorecardError(
                f"{caller}: {name} has {values.size} entries but scores has {scores.size}; give one "
                f"value per score level."
            )
    if scores.size == 0:
        raise ScorecardError(f"{caller}: the histogram is empty; give at least one score level.")
    _check_finite(scores, "scores", caller)
    _check_ascending(scores, caller)
    for values, name in zip(arrays, counts):
        _check_counts(values, name, caller)
    return scores, arrays


def band_edges(scores: np.ndarray, counts: np.ndarray, *, n_bands, edges, caller: str) -> np.ndarray:
    """Return the analyst's edges, checked, or equal-population edges of a checked histogram."""
    if edges is not None:
        return validated_edges(edges, caller=caller)
    if not (isinstance(n_bands, Integral) and not isinstance(n_bands, bool) and n_bands >= 1):
        raise ScorecardError(f"{caller}: n_bands = {n_bands!r}; give a whole number of bands >= 1.")
    if not counts.sum() > 0:
        raise ScorecardError(f"{caller}: every count is 0; bands need a histogram with some weight.")
    midpoints = cumulative_share(counts) - 0.5 * counts / counts.sum()
    band = np.minimum(np.floor(n_bands * midpoints), n_bands - 1)
    return read_only(scores[1:][np.diff(band) > 0])


def validated_edges(edges, *, caller: str) -> np.ndarray:
    """Check band edges given by the analyst: finite and strictly ascending."""
    edges = _numeric_vector(edges, "edges", caller).astype(float)
    _check_finite(edges, "edges", caller)
    steps = np.flatnonzero(np.diff(edges) <= 0)
    if steps.size:
        raise ScorecardError(
            f"{caller}: edges must be strictly ascending; edge {steps[0] + 2} (counted from 1), "
            f"{edges[steps[0] + 1]!r}, does not exceed the one before it, {edges[steps[0]]!r}."
        )
    return read_only(edges)


def band_totals(scores: np.ndarray, edges: np.ndarray, counts: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Sum each count array over the bands, keeping the bands that hold weight, with their score range."""
    band = _band_index(scores, edges)
    sums = {name: band_sums(scores, edges, values) for name, values in counts.items()}
    kept = np.flatnonzero(sum(sums.values()) > 0)
    # Scores ascend, so each band's levels are one run: its first and last positions bound it.
    first = np.searchsorted(band, kept, side="left")
    last = np.searchsorted(band, kept, side="right") - 1
    return {"band": kept, "score_low": scores[first], "score_high": scores[last],
            **{name: values[kept] for name, values in sums.items()}}


def band_sums(scores: np.ndarray, edges: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Sum counts over every band, empty bands included: ``len(edges) + 1`` entries."""
    return np.bincount(_band_index(scores, edges), weights=counts, minlength=edges.size + 1)


def band_labels(edges: np.ndarray, *, score_range: tuple[float, float, float] | None = None) -> tuple[str, ...]:
    """Name each band by the scores it holds.

    Parameters
    ----------
    edges : numpy.ndarray
        Band edges (band ``k`` holds ``edges[k-1] <= s < edges[k]``).
    score_range : (lowest, highest, step), optional
        The lowest and highest possible scores and the step between scores (1 for whole points,
        0.1 for one decimal). With it, each band is named by the first and last score it can hold,
        '418–515', '516–532', ..., '612–690': the same names on every sample, since the edges are
        fixed. Without it, by the interval: '< 520', '[520, 540)', '>= 600'.
    """
    if score_range is None:
        text = [f"{edge:g}" for edge in edges]
        if not text:
            return ("all scores",)
        middle = [f"[{low}, {high})" for low, high in zip(text[:-1], text[1:])]
        return (f"< {text[0]}", *middle, f">= {text[-1]}")
    lowest, highest, step = score_range
    digits = max(0, -int(np.floor(np.log10(step) + 1e-9)))
    # the first possible score at or above each edge starts a band; the one before it ends the band below
    starts = np.ceil(np.asarray(edges, float) / step - 1e-9) * step
    lows, highs = [lowest, *starts], [*(starts - step), highest]
    return tuple(_score_span(low, high, digits) for low, high in zip(lows, highs))


def _score_span(low: float, high: float, digits: int) -> str:
    if high < low:  # an analyst's grade edge outside the possible scores leaves a band no score can fall in
        return f"none between {low:.{digits}f} and {high + 10.0 ** -digits:.{digits}f}"
    return f"{low:.{digits}f}" if high == low else f"{low:.{digits}f}–{high:.{digits}f}"


def check_level(level, *, caller: str) -> None:
    """Reject a confidence level outside (0, 1)."""
    if isinstance(level, bool) or not (isinstance(level, (Real, np.floating)) and 0 < level < 1):
        raise ScorecardError(f"{caller}: level = {level!r}; give a confidence level between 0 and 1, e.g. 0.95.")


def read_only(values, dtype=None) -> np.ndarray:
    """Return a read-only copy of ``values``."""
    array = np.array(values, dtype=dtype)
    array.setflags(write=False)
    return array


def freeze_arrays(result) -> None:
    """Make every array field of a frozen result a read-only copy (called from ``__post_init__``)."""
    for field in fields(result):
        value = getattr(result, field.name)
        if isinstance(value, np.ndarray):
            object.__setattr__(result, field.name, read_only(value))


def cumulative_share(counts: np.ndarray) -> np.ndarray:
    """Running total over the grand total."""
    return np.cumsum(counts) / counts.sum()


def _numeric_vector(values, name: str, caller: str) -> np.ndarray:
    array = np.asarray(values)
    if array.dtype.kind not in "iuf":
        raise ScorecardError(f"{caller}: {name} must be numbers; got values of type {array.dtype}.")
    if array.ndim != 1:
        raise ScorecardError(f"{caller}: {name} must be a 1-D array; got shape {array.shape}.")
    return array


def _check_finite(values: np.ndarray, name: str, caller: str) -> None:
    rows = np.flatnonzero(~np.isfinite(values))
    if rows.size:
        raise ScorecardError(f"{caller}: {name}, {describe_rows(rows + 1)} (counted from 1): value "
                             f"{values[rows[0]].item()!r} is not a finite number.")


def _check_ascending(scores: np.ndarray, caller: str) -> None:
    steps = np.flatnonzero(np.diff(scores) <= 0)
    if steps.size:
        row = steps[0] + 1
        raise ScorecardError(
            f"{caller}: scores must be strictly ascending; score {row + 1} (counted from 1), "
            f"{scores[row].item()!r}, does not exceed the one before it, {scores[row - 1].item()!r}. Sort "
            f"the histogram by score and add up the counts of repeated scores."
        )


def _check_counts(counts: np.ndarray, name: str, caller: str) -> None:
    rows = np.flatnonzero(~(np.isfinite(counts) & (counts >= 0)))
    if rows.size:
        raise ScorecardError(
            f"{caller}: {name}, {describe_rows(rows + 1)} (counted from 1): value {counts[rows[0]].item()!r} "
            f"is not a finite, non-negative count. Counts are weighted numbers of applications, >= 0."
        )


def _placements(goods: np.ndarray, bads: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """DeLong's placements per level: share of bads a good outscores, share of goods that outscore a bad."""
    bads_below = np.cumsum(bads) - bads
    goods_above = goods.sum() - np.cumsum(goods)
    return (bads_below + 0.5 * bads) / bads.sum(), (goods_above + 0.5 * goods) / goods.sum()


def _delong_variance(goods, bads, good_placements, bad_placements, area) -> float:
    """S10 / G + S01 / B; NaN when either total weight is at most 1 (no spread to estimate)."""
    n_goods, n_bads = goods.sum(), bads.sum()
    if n_goods <= 1 or n_bads <= 1:
        return np.nan
    spread_goods = goods @ (good_placements - area) ** 2 / (n_goods - 1)
    spread_bads = bads @ (bad_placements - area) ** 2 / (n_bads - 1)
    return spread_goods / n_goods + spread_bads / n_bads


def _auc_interval(area: float, std_error: float, level: float, scale: str) -> tuple[float, float]:
    z = special.ndtri(0.5 + level / 2)
    if scale == "plain":
        return float(max(area - z * std_error, 0.0)), float(min(area + z * std_error, 1.0))
    if area in (0.0, 1.0):
        # The logit is infinite here; DeLong's variance is 0 too, so the interval is the point.
        return area, area
    half_width = z * std_error / (area * (1 - area))
    centre = special.logit(area)
    return float(special.expit(centre - half_width)), float(special.expit(centre + half_width))


def _band_index(scores: np.ndarray, edges: np.ndarray) -> np.ndarray:
    # side="right": a score equal to an edge is the lowest score of the band above it.
    return np.searchsorted(edges, scores, side="right")


def _from_zero(shares: np.ndarray) -> np.ndarray:
    return np.concatenate([[0.0], shares])


def _cutoffs_from_nothing(scores: np.ndarray) -> np.ndarray:
    return np.concatenate([[-np.inf], scores.astype(float)])
