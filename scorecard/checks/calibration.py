"""Calibration of predicted probabilities of default against observed bads, from a score histogram.

The data are a score histogram (``scores`` strictly ascending, ``goods`` and ``bads`` weighted
counts at each score) and an aligned array ``pd``: the predicted probability of default of each
score level, strictly between 0 and 1. A bad is a default. Bands are the equal-population bands of
:func:`scorecard.checks.discrimination.score_bands`, or edges the analyst gives.

Of the two binomial p-values per band, the one-sided one ("more bads than predicted") is the one to
act on: a band whose risk is underpredicted is what costs money, and it is what monitoring flags.
The two-sided one also catches overprediction and is for diagnosis while a model is developed.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas
from scipy import special

from scorecard.checks.discrimination import (
    band_edges,
    band_totals,
    check_level,
    freeze_arrays,
    validated_histogram,
)
from scorecard.checks.distributions import (
    beta_cdf,
    beta_ppf,
    binomial_cdf,
    binomial_pmf,
    binomial_sf,
    chi_square_sf,
    normal_sf,
)
from scorecard.errors import FitError, ScorecardError, ScorecardWarning, describe_rows
from scorecard.fitter import fit_logistic

__all__ = [
    "CalibrationInTheLarge",
    "CalibrationLine",
    "CalibrationTable",
    "HosmerLemeshow",
    "brier_score",
    "calibration_in_the_large",
    "calibration_line",
    "calibration_table",
    "holm",
    "hosmer_lemeshow",
]

# Outcomes whose probability is within this relative distance of the observed outcome's count as
# "as likely" in the two-sided binomial test; the same guard against rounding that R's binom.test
# and scipy.stats.binomtest use.
_AS_LIKELY = 1e-7


@dataclass(frozen=True, eq=False)  # eq=False: arrays have no single truth value to compare by
class CalibrationTable:
    """Observed against predicted defaults per score band, with tests and intervals.

    Attributes
    ----------
    edges : numpy.ndarray
        Band edges: band ``k`` holds scores ``s`` with ``edges[k-1] <= s < edges[k]``.
    band : numpy.ndarray
        Band number of each row (as :func:`~scorecard.checks.discrimination.band_of` numbers
        them), lowest scores first; bands without weight are left out.
    score_low, score_high : numpy.ndarray
        Lowest and highest score level of the histogram in the band.
    count, goods, bads : numpy.ndarray
        Weighted counts in the band.
    observed_rate : numpy.ndarray
        ``bads / count``.
    mean_pd : numpy.ndarray
        Count-weighted mean predicted PD of the band.
    expected_bads : numpy.ndarray
        ``count · mean_pd``.
    binomial_p_two_sided : numpy.ndarray
        Exact binomial p-value against ``mean_pd``, both directions.
    binomial_p_excess : numpy.ndarray
        Exact binomial p-value of ``P(X >= bads)``: small when there are more bads than predicted.
    jeffreys_p : numpy.ndarray
        Jeffreys test p-value, one-sided: small when the default rate exceeds ``mean_pd``.
    jeffreys_lower, jeffreys_upper : numpy.ndarray
        Jeffreys interval for the band's default rate at ``level``.
    level : float
        Confidence level of the Jeffreys interval.
    rounded_counts : bool
        Whether band counts were rounded to whole numbers for the exact binomial tests.
    """

    edges: np.ndarray
    band: np.ndarray
    score_low: np.ndarray
    score_high: np.ndarray
    count: np.ndarray
    goods: np.ndarray
    bads: np.ndarray
    observed_rate: np.ndarray
    mean_pd: np.ndarray
    expected_bads: np.ndarray
    binomial_p_two_sided: np.ndarray
    binomial_p_excess: np.ndarray
    jeffreys_p: np.ndarray
    jeffreys_lower: np.ndarray
    jeffreys_upper: np.ndarray
    level: float
    rounded_counts: bool

    def __post_init__(self):
        freeze_arrays(self)

    def to_frame(self) -> pandas.DataFrame:
        """Return one row per band, lowest scores first, with every per-band column."""
        columns = ("band", "score_low", "score_high", "count", "goods", "bads", "observed_rate", "mean_pd",
                   "expected_bads", "binomial_p_two_sided", "binomial_p_excess", "jeffreys_p",
                   "jeffreys_lower", "jeffreys_upper")
        return pandas.DataFrame({name: getattr(self, name) for name in columns})


@dataclass(frozen=True, eq=False)
class HosmerLemeshow:
    """Hosmer–Lemeshow goodness-of-fit statistic over score bands.

    Attributes
    ----------
    statistic : float
        ``Σ (O − E)² / (E·(1 − E/n))`` over the bands.
    df : int
        Degrees of freedom of the chi-square reference distribution.
    p_value : float
        Upper tail of that distribution at ``statistic``.
    n_bands : int
        Bands summed over.
    in_sample : bool
        Whether the PDs were fitted on this sample (``df = n_bands − 2``) or not (``df = n_bands``).
    """

    statistic: float
    df: int
    p_value: float
    n_bands: int
    in_sample: bool


@dataclass(frozen=True, eq=False)
class CalibrationInTheLarge:
    """Observed against expected bads over the whole sample.

    Attributes
    ----------
    count, observed_bads, expected_bads : float
        Total weight, weighted bads, and ``Σ count·pd``.
    observed_rate, expected_rate : float
        ``observed_bads / count`` and ``expected_bads / count``.
    z : float
        ``(observed_bads − expected_bads) / sqrt(Σ count·pd·(1 − pd))``.
    p_two_sided, p_excess : float
        Normal-approximation p-values: both directions, and "more bads than predicted" (``1 − Φ(z)``).
    """

    count: float
    observed_bads: float
    expected_bads: float
    observed_rate: float
    expected_rate: float
    z: float
    p_two_sided: float
    p_excess: float


@dataclass(frozen=True, eq=False)
class CalibrationLine:
    """Cox's calibration intercept and slope: logit P(bad) = intercept + slope · logit(pd).

    A perfectly calibrated model has intercept 0 and slope 1; a slope below 1 means predictions
    are too extreme (too low for the good scores, too high for the bad ones).

    Attributes
    ----------
    intercept, slope : float
    intercept_std_error, slope_std_error : float
        Standard errors from the inverse information matrix.
    intercept_p_value, slope_p_value : float
        Two-sided Wald p-values for intercept = 0 and for slope = 1.
    """

    intercept: float
    slope: float
    intercept_std_error: float
    slope_std_error: float
    intercept_p_value: float
    slope_p_value: float


def calibration_table(scores, goods, bads, pd, *, n_bands: int = 10, edges=None,
                      level: float = 0.95) -> CalibrationTable:
    """Compare observed with predicted defaults per score band, with exact and Jeffreys tests.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.
    pd : array_like, shape (n,)
        Predicted probability of default of each score level, strictly between 0 and 1.
    n_bands : int
        Number of equal-population bands; not used when ``edges`` is given.
    edges : array_like, optional
        Strictly ascending band edges chosen by the analyst.
    level : float
        Confidence level of the Jeffreys interval.

    Returns
    -------
    CalibrationTable
        One row per band that holds weight, lowest scores first.

    Raises
    ------
    ScorecardError
        If the histogram or ``pd`` is malformed, the histogram has no weight, or an option is out
        of range.

    Warns
    -----
    ScorecardWarning
        If a band's count or bads are not whole numbers: the exact binomial tests round them to the
        nearest whole number. The Jeffreys test and interval use the weighted counts as they are.

    Notes
    -----
    Binomial p-values treat the band's bads as Binomial(count, mean_pd). The one-sided value is
    ``P(X >= bads)``; the two-sided one sums the probabilities of all outcomes no more likely than
    the one observed (the convention of R's ``binom.test``; C. J. Clopper, E. S. Pearson, "The use
    of confidence or fiducial limits illustrated in the case of the binomial", Biometrika 26, 1934,
    discusses the tails — from memory).

    The Jeffreys test p-value is the Beta(bads + ½, goods + ½) distribution function at
    ``mean_pd``: the posterior probability, under the Jeffreys prior, that the default rate is at
    most the prediction, so a small value says the rate exceeds it (European Central Bank,
    "Instructions for reporting the validation results of internal models", 2019 — from memory).
    The interval takes the ``(1 − level)/2`` and ``(1 + level)/2`` quantiles of that Beta
    distribution, with the lower end 0 when there are no bads and the upper end 1 when there are no
    goods (L. D. Brown, T. T. Cai, A. DasGupta, "Interval estimation for a binomial proportion",
    Statistical Science 16, 2001).
    """
    scores, goods, bads, pd = _validated_inputs(scores, goods, bads, pd, caller="calibration_table")
    check_level(level, caller="calibration_table")
    edges = band_edges(scores, goods + bads, n_bands=n_bands, edges=edges, caller="calibration_table")
    bands = band_totals(scores, edges, {"goods": goods, "bads": bads, "expected_bads": (goods + bads) * pd})
    count = bands["goods"] + bands["bads"]
    mean_pd = bands["expected_bads"] / count
    whole_count, whole_bads, rounded = _whole_counts(count, bands["bads"], bands["band"])
    lower, upper = _jeffreys_interval(bands["bads"], bands["goods"], level)
    return CalibrationTable(
        edges=edges, band=bands["band"], score_low=bands["score_low"], score_high=bands["score_high"],
        count=count, goods=bands["goods"], bads=bands["bads"], observed_rate=bands["bads"] / count,
        mean_pd=mean_pd, expected_bads=bands["expected_bads"],
        binomial_p_two_sided=_binomial_two_sided(whole_bads, whole_count, mean_pd),
        binomial_p_excess=binomial_sf(whole_bads - 1, whole_count, mean_pd),
        jeffreys_p=beta_cdf(mean_pd, bands["bads"] + 0.5, bands["goods"] + 0.5),
        jeffreys_lower=lower, jeffreys_upper=upper, level=float(level), rounded_counts=rounded,
    )


def hosmer_lemeshow(table: CalibrationTable, *, in_sample: bool = True) -> HosmerLemeshow:
    """Return the Hosmer–Lemeshow statistic over the bands of a calibration table.

    Parameters
    ----------
    table : CalibrationTable
        From :func:`calibration_table`; ten equal-population bands is the classic choice.
    in_sample : bool
        True when the PDs were fitted on the same sample: ``df = bands − 2`` (Hosmer and
        Lemeshow). False for a sample not used in the fit, e.g. hold-out or out-of-time:
        ``df = bands``, since no parameters were estimated from it (common practice, no source).

    Returns
    -------
    HosmerLemeshow

    Raises
    ------
    ScorecardError
        If the table has too few bands to leave at least one degree of freedom.

    Notes
    -----
    ``C = Σ_k (O_k − E_k)² / (E_k·(1 − E_k/n_k))`` with observed bads ``O``, expected bads ``E``
    and count ``n`` of band ``k``, referred to a chi-square distribution (D. W. Hosmer,
    S. Lemeshow, "Goodness of fit tests for the multiple logistic regression model",
    Communications in Statistics — Theory and Methods 9, 1980, 1043–1069). Their simulations
    support ``bands − 2`` degrees of freedom for the sample the model was fitted on.
    """
    n_bands = int(table.band.size)
    df = n_bands - 2 if in_sample else n_bands
    if df < 1:
        raise ScorecardError(
            f"hosmer_lemeshow: the table has {n_bands} band(s), which leaves {df} degrees of freedom; "
            f"use more bands (n_bands=10 is usual)."
        )
    expected = table.expected_bads
    statistic = float(np.sum((table.bads - expected) ** 2 / (expected * (1 - expected / table.count))))
    return HosmerLemeshow(statistic=statistic, df=df, p_value=float(chi_square_sf(statistic, df)),
                          n_bands=n_bands, in_sample=bool(in_sample))


def calibration_in_the_large(scores, goods, bads, pd) -> CalibrationInTheLarge:
    """Compare the total of observed bads with the total the PDs predict.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.
    pd : array_like, shape (n,)
        Predicted probability of default of each score level, strictly between 0 and 1.

    Returns
    -------
    CalibrationInTheLarge

    Raises
    ------
    ScorecardError
        If the histogram or ``pd`` is malformed or the histogram has no weight.

    Notes
    -----
    Under the predictions, the number of bads is a sum of independent Bernoulli variables with mean
    ``E = Σ n_s·pd_s`` and variance ``V = Σ n_s·pd_s·(1 − pd_s)`` (a Poisson-binomial
    distribution). The test is the normal approximation ``z = (O − E)/√V`` by the central limit
    theorem (Lindeberg's condition holds since every term is bounded), which is accurate when ``V``
    is large; for a handful of expected bads use the per-band exact tests instead.
    """
    scores, goods, bads, pd = _validated_inputs(scores, goods, bads, pd, caller="calibration_in_the_large")
    count = goods + bads
    total, observed, expected = float(count.sum()), float(bads.sum()), float(count @ pd)
    z = (observed - expected) / np.sqrt(count @ (pd * (1 - pd)))
    return CalibrationInTheLarge(
        count=total, observed_bads=observed, expected_bads=expected, observed_rate=observed / total,
        expected_rate=expected / total, z=float(z), p_two_sided=float(2 * normal_sf(abs(z))),
        p_excess=float(normal_sf(z)),
    )


def calibration_line(scores, goods, bads, pd) -> CalibrationLine:
    """Fit Cox's calibration line: logit P(bad) = intercept + slope · logit(pd), weighted by counts.

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.
    pd : array_like, shape (n,)
        Predicted probability of default of each score level, strictly between 0 and 1.

    Returns
    -------
    CalibrationLine

    Raises
    ------
    ScorecardError
        If the histogram or ``pd`` is malformed or has no goods or no bads.
    FitError
        If no finite line exists: fewer than two distinct PDs carry weight, or the PDs separate
        goods from bads.

    Notes
    -----
    The joint fit of intercept and slope of D. R. Cox, "Two further applications of a model for
    binary regression", Biometrika 45, 1958, 562–565; its intercept is that of the joint fit, not
    the intercept with the slope fixed at 1. The fitter models the log-odds of good:bad, so it is
    given ``x = logit(1 − pd)``: then ``logit P(good) = a + b·x`` is the same line as
    ``logit P(bad) = −a + b·logit(pd)``, and the line reports ``intercept = −a`` and ``slope = b``
    with the same standard errors.
    """
    scores, goods, bads, pd = _validated_inputs(scores, goods, bads, pd, caller="calibration_line",
                                                need_goods=True, need_bads=True)
    predicted_good_log_odds = special.logit(1 - pd)
    _check_line_exists(pd, goods, bads)
    fit = fit_logistic(predicted_good_log_odds[:, None], goods, bads, names=["logit of predicted PD"])
    intercept, slope = -fit.coefficients[0], fit.coefficients[1]
    intercept_se, slope_se = fit.std_errors
    return CalibrationLine(
        intercept=float(intercept), slope=float(slope), intercept_std_error=float(intercept_se),
        slope_std_error=float(slope_se), intercept_p_value=float(2 * normal_sf(abs(intercept) / intercept_se)),
        slope_p_value=float(2 * normal_sf(abs(slope - 1) / slope_se)),
    )


def brier_score(scores, goods, bads, pd) -> float:
    """Return the Brier score of the predicted PDs: the mean squared error of P(bad).

    Parameters
    ----------
    scores : array_like, shape (n,)
        Score levels, strictly ascending.
    goods, bads : array_like, shape (n,)
        Non-negative weighted counts of goods and of bads at each score level.
    pd : array_like, shape (n,)
        Predicted probability of default of each score level, strictly between 0 and 1.

    Returns
    -------
    float
        ``Σ [bads·(1 − pd)² + goods·pd²] / Σ (goods + bads)``; 0 is perfect, lower is better.

    Raises
    ------
    ScorecardError
        If the histogram or ``pd`` is malformed or the histogram has no weight.

    Notes
    -----
    G. W. Brier, "Verification of forecasts expressed in terms of probability", Monthly Weather
    Review 78, 1950, 1–3, with outcome 1 for a bad.

    Example
    -------
    >>> round(brier_score([500, 600], [8, 9], [2, 1], [0.2, 0.1]), 6)
    0.125
    """
    scores, goods, bads, pd = _validated_inputs(scores, goods, bads, pd, caller="brier_score")
    return float((bads @ (1 - pd) ** 2 + goods @ pd**2) / (goods + bads).sum())


def holm(p_values) -> np.ndarray:
    """Adjust p-values for testing several hypotheses at once by Holm's step-down method.

    Parameters
    ----------
    p_values : array_like, shape (m,)
        p-values between 0 and 1, in any order.

    Returns
    -------
    numpy.ndarray
        Adjusted p-values in the same order: reject hypothesis ``i`` at family-wise level ``α``
        when its adjusted value is at most ``α``.

    Raises
    ------
    ScorecardError
        If ``p_values`` is not 1-D or holds a value outside [0, 1] or NaN.

    Notes
    -----
    With the p-values sorted, ``p_(1) <= … <= p_(m)``, the adjusted value of ``p_(i)`` is
    ``max_{j <= i} min(1, (m − j + 1)·p_(j))`` (S. Holm, "A simple sequentially rejective multiple
    test procedure", Scandinavian Journal of Statistics 6, 1979, 65–70).

    Example
    -------
    >>> holm([0.01, 0.04, 0.03])
    array([0.03, 0.06, 0.06])
    """
    p_values = np.asarray(p_values, dtype=float)
    if p_values.ndim != 1:
        raise ScorecardError(f"holm: p_values must be a 1-D array; got shape {p_values.shape}.")
    rows = np.flatnonzero(~((p_values >= 0) & (p_values <= 1)))
    if rows.size:
        raise ScorecardError(f"holm: p_values, {describe_rows(rows + 1)} (counted from 1): value "
                             f"{p_values[rows[0]].item()!r} is not a probability between 0 and 1.")
    order = np.argsort(p_values, kind="stable")
    multipliers = p_values.size - np.arange(p_values.size)
    adjusted = np.empty_like(p_values)
    adjusted[order] = np.maximum.accumulate(np.minimum(1.0, multipliers * p_values[order]))
    return adjusted


# ---------------------------------------------------------------------------------------------
# Private helpers.


def _validated_inputs(scores, goods, bads, pd, *, caller: str, need_goods: bool = False, need_bads: bool = False):
    """Check the histogram and its PDs once at entry."""
    scores, goods, bads = validated_histogram(scores, goods, bads, caller=caller, need_goods=need_goods,
                                              need_bads=need_bads)
    if not (goods + bads).sum() > 0:
        raise ScorecardError(f"{caller}: every count is 0; calibration needs a histogram with some weight.")
    pd = np.asarray(pd)
    if pd.dtype.kind not in "iuf" or pd.shape != scores.shape:
        raise ScorecardError(
            f"{caller}: pd must be {scores.size} numbers, one predicted PD per score level; got "
            f"shape {pd.shape} of type {pd.dtype}."
        )
    rows = np.flatnonzero(~((pd > 0) & (pd < 1)))
    if rows.size:
        raise ScorecardError(
            f"{caller}: pd, {describe_rows(rows + 1)} (counted from 1): value {pd[rows[0]].item()!r} is "
            f"not a probability strictly between 0 and 1. A points scorecard's PD, 1 / (1 + odds), always is."
        )
    return scores, goods, bads, pd.astype(float)


def _check_line_exists(pd: np.ndarray, goods: np.ndarray, bads: np.ndarray) -> None:
    """Raise FitError where no finite maximum-likelihood line exists, in this problem's words."""
    weighted = goods + bads > 0
    if np.unique(pd[weighted]).size < 2:
        raise FitError(
            f"calibration_line: every application has the same predicted PD ({pd[weighted][0]!r}), so no "
            f"slope can be fitted; the line needs weight at two or more distinct PDs."
        )
    bad_pd, good_pd = pd[bads > 0], pd[goods > 0]
    # With one covariate, goods and bads are (quasi-)separated exactly when the PDs of one outcome all lie
    # on one side of the other's (A. Albert, J. A. Anderson, Biometrika 71, 1984).
    if bad_pd.min() >= good_pd.max() or bad_pd.max() <= good_pd.min():
        raise FitError(
            "calibration_line: the predicted PDs separate goods from bads (no PD of a bad lies strictly "
            "inside the range of the goods' PDs or the other way round), so the slope grows without "
            "bound and no finite line exists. This happens on very small samples; check the sample."
        )


def _whole_counts(count: np.ndarray, bads: np.ndarray, band: np.ndarray) -> tuple[np.ndarray, np.ndarray, bool]:
    """Round band counts for the exact tests, warning when that changes anything."""
    whole_count, whole_bads = np.rint(count), np.rint(bads)
    changed = np.flatnonzero((whole_count != count) | (whole_bads != bads))
    if changed.size:
        first = changed[0]
        warnings.warn(
            f"calibration_table: the exact binomial tests need whole numbers of applications, so band "
            f"counts were rounded to the nearest whole number ({changed.size} band(s); e.g. band "
            f"{band[first]}: {count[first]:g} applications and {bads[first]:g} bads). Use whole "
            f"frequency weights to avoid this; the Jeffreys columns use the counts as they are.",
            ScorecardWarning,
            stacklevel=3,
        )
    return whole_count, whole_bads, bool(changed.size)


def _binomial_two_sided(bads: np.ndarray, count: np.ndarray, pd: np.ndarray) -> np.ndarray:
    """Sum of the probabilities of all outcomes no more likely than the observed one, per band."""
    expected = count * pd
    threshold = binomial_pmf(bads, count, pd) * (1 + _AS_LIKELY)

    def pmf_at_most(j):
        return binomial_pmf(j, count, pd) <= threshold

    def pmf_above(j):
        return binomial_pmf(j, count, pd) > threshold

    # The pmf falls on each side of the mean, so the unlikely outcomes on the far side form a tail.
    upper_tail_start = _first_true(pmf_at_most, np.ceil(expected), count + 1)
    lower_tail_end = _first_true(pmf_above, np.zeros_like(count), np.floor(expected) + 1) - 1
    below_mean = binomial_cdf(bads, count, pd) + binomial_sf(upper_tail_start - 1, count, pd)
    above_mean = binomial_cdf(lower_tail_end, count, pd) + binomial_sf(bads - 1, count, pd)
    p_value = np.where(bads < expected, below_mean, above_mean)
    return np.minimum(1.0, np.where(bads == expected, 1.0, p_value))


def _first_true(predicate, low: np.ndarray, high: np.ndarray) -> np.ndarray:
    """Smallest whole j in [low, high) where a monotone predicate (False, then True) holds; high if none."""
    low, high = low.astype(float).copy(), high.astype(float).copy()
    while np.any(low < high):
        middle = np.floor((low + high) / 2)
        holds = predicate(middle)
        searching = low < high
        high = np.where(searching & holds, middle, high)
        low = np.where(searching & ~holds, middle + 1, low)
    return low


def _jeffreys_interval(bads: np.ndarray, goods: np.ndarray, level: float) -> tuple[np.ndarray, np.ndarray]:
    tail = (1 - level) / 2
    lower = np.where(bads > 0, beta_ppf(tail, bads + 0.5, goods + 0.5), 0.0)
    upper = np.where(goods > 0, beta_ppf(1 - tail, bads + 0.5, goods + 0.5), 1.0)
    return lower, upper
