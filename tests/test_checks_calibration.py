"""Tests of scorecard.checks.calibration: band tests, Hosmer–Lemeshow, totals, Cox's line, Brier, Holm."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import special, stats
from statsmodels.stats.multitest import multipletests

from scorecard.checks import (
    brier_score,
    calibration_in_the_large,
    calibration_line,
    calibration_table,
    holm,
    hosmer_lemeshow,
)
from scorecard.errors import FitError, ScorecardError, ScorecardWarning

# Same sums in another order, or the same special function called another way: rounding only.
EXACT_RTOL = 1e-12
# Exact binomial tails summed by scipy in another grouping; tiny tails lose relative digits.
BINOMIAL_ATOL = 1e-12
# Two Newton fits stopped by different rules (ours: change in cost <= 1e-10 per unit weight).
FIT_RTOL = 1e-6
FIT_ATOL = 1e-7


def calibrated_histogram(seed: int, *, shift: float = 0.0):
    """Whole counts per score level drawn from the predicted PD (moved by ``shift`` on the logit scale)."""
    rng = np.random.default_rng(seed)
    scores = np.arange(300, 700, 5)
    pd = special.expit(-(scores - 420) / 45)
    count = rng.poisson(60, scores.size)
    bads = rng.binomial(count, special.expit(special.logit(pd) + shift))
    return scores, count - bads, bads, pd


def expanded_rows(goods, bads, pd):
    """One row per application: its predicted PD and 1 for a bad, 0 for a good."""
    row_pd = np.concatenate([np.repeat(pd, goods), np.repeat(pd, bads)])
    is_bad = np.concatenate([np.zeros(int(goods.sum())), np.ones(int(bads.sum()))])
    return row_pd, is_bad


# --- Per-band tests ----------------------------------------------------------------------------


@pytest.mark.parametrize("shift", [0.0, 0.4, -0.4])
def test_binomial_p_values_match_scipy_binomtest(shift):
    # Source: scipy.stats.binomtest, two-sided and alternative="greater" (reference library).
    table = calibration_table(*calibrated_histogram(11, shift=shift))
    for row in range(table.band.size):
        k, n, p = int(table.bads[row]), int(table.count[row]), table.mean_pd[row]
        assert table.binomial_p_two_sided[row] == pytest.approx(stats.binomtest(k, n, p).pvalue, abs=BINOMIAL_ATOL)
        assert table.binomial_p_excess[row] == pytest.approx(
            stats.binomtest(k, n, p, alternative="greater").pvalue, abs=BINOMIAL_ATOL)


def test_two_sided_binomial_on_hand_picked_bands_matches_binomtest():
    # Source: scipy.stats.binomtest; bands where the observed count is at, just off and far off the mean.
    scores, goods, bads, pd = [1, 2, 3, 4], [8, 80, 993, 5], [2, 20, 7, 0], [0.2, 0.3, 0.001, 0.05]
    table = calibration_table(scores, goods, bads, pd, edges=[2, 3, 4])
    expected = [stats.binomtest(k, k + g, p).pvalue for k, g, p in zip(bads, goods, pd)]
    np.testing.assert_allclose(table.binomial_p_two_sided, expected, rtol=0, atol=BINOMIAL_ATOL)
    assert table.binomial_p_two_sided[0] == 1.0  # 2 bads of 10 at PD 0.2 is exactly the mean


def test_jeffreys_p_value_and_interval_match_the_beta_distribution():
    # Source: scipy.stats.beta directly; p = Beta(bads + ½, goods + ½) CDF at the PD (ECB 2019 — from memory);
    # interval ends 0 with no bads and 1 with no goods (Brown, Cai, DasGupta, Statistical Science 16, 2001).
    scores, goods, bads, pd = calibrated_histogram(12, shift=0.3)
    table = calibration_table(scores, goods, bads, pd, level=0.9)
    posterior = stats.beta(table.bads + 0.5, table.goods + 0.5)
    np.testing.assert_allclose(table.jeffreys_p, posterior.cdf(table.mean_pd), rtol=EXACT_RTOL)
    lower = np.where(table.bads > 0, posterior.ppf(0.05), 0.0)
    upper = np.where(table.goods > 0, posterior.ppf(0.95), 1.0)
    np.testing.assert_allclose(table.jeffreys_lower, lower, rtol=EXACT_RTOL)
    np.testing.assert_allclose(table.jeffreys_upper, upper, rtol=EXACT_RTOL)


def test_jeffreys_interval_ends_at_zero_without_bads():
    table = calibration_table([1, 2], [10, 10], [0, 3], [0.05, 0.2], edges=[2])
    assert table.jeffreys_lower[0] == 0.0 and table.jeffreys_upper[0] > 0
    assert table.jeffreys_p[0] > 0.5  # no bads: no evidence the rate exceeds the prediction


def test_band_counts_and_means_match_a_loop_over_the_bands():
    # Source: the definitions band by band: count-weighted mean PD and expected bads.
    scores, goods, bads, pd = calibrated_histogram(13)
    edges = [350, 420, 500]
    table = calibration_table(scores, goods, bads, pd, edges=edges)
    bounds = [-np.inf, *edges, np.inf]
    for row, (low, high) in enumerate(zip(bounds[:-1], bounds[1:])):
        inside = (scores >= low) & (scores < high)
        count = goods[inside] + bads[inside]
        assert table.count[row] == count.sum()
        assert table.mean_pd[row] == pytest.approx(np.average(pd[inside], weights=count), rel=EXACT_RTOL)
        assert table.expected_bads[row] == pytest.approx(count @ pd[inside], rel=EXACT_RTOL)
        assert table.observed_rate[row] == pytest.approx(bads[inside].sum() / count.sum(), rel=EXACT_RTOL)
    assert not table.rounded_counts and len(table.to_frame()) == 4


def test_fractional_counts_are_rounded_for_the_exact_tests_with_a_warning():
    with pytest.warns(ScorecardWarning, match="rounded to the nearest whole number"):
        table = calibration_table([1, 2], [9.6, 20.0], [2.2, 3.0], [0.1, 0.2], edges=[2])
    assert table.rounded_counts
    assert table.binomial_p_excess[0] == pytest.approx(stats.binomtest(2, 12, 0.1, alternative="greater").pvalue)


def test_whole_counts_give_no_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        calibration_table(*calibrated_histogram(14))


# --- Hosmer–Lemeshow ---------------------------------------------------------------------------


def hosmer_lemeshow_by_loop(scores, goods, bads, pd, edges):
    """Hosmer and Lemeshow (1980): Σ (O − E)² / (n·p̄·(1 − p̄)) over bands, one band at a time."""
    bounds = [-np.inf, *edges, np.inf]
    statistic = 0.0
    for low, high in zip(bounds[:-1], bounds[1:]):
        inside = (scores >= low) & (scores < high)
        n = goods[inside].sum() + bads[inside].sum()
        observed, expected = bads[inside].sum(), (goods[inside] + bads[inside]) @ pd[inside]
        mean_pd = expected / n
        statistic += (observed - expected) ** 2 / (n * mean_pd * (1 - mean_pd))
    return statistic


@pytest.mark.parametrize("shift", [0.0, 0.3])
def test_hosmer_lemeshow_matches_a_loop_and_the_chi_square_tail(shift):
    # Source: Hosmer and Lemeshow (1980) statistic, written out; chi-square tail from scipy.stats.chi2.
    scores, goods, bads, pd = calibrated_histogram(15, shift=shift)
    edges = [330, 360, 390, 420, 450, 480, 520, 570, 630]
    table = calibration_table(scores, goods, bads, pd, edges=edges)
    expected = hosmer_lemeshow_by_loop(scores, goods, bads, pd, edges)
    in_sample, out_of_sample = hosmer_lemeshow(table), hosmer_lemeshow(table, in_sample=False)
    assert in_sample.statistic == pytest.approx(expected, rel=EXACT_RTOL)
    assert (in_sample.df, out_of_sample.df) == (8, 10)
    assert in_sample.p_value == pytest.approx(stats.chi2.sf(expected, 8), rel=EXACT_RTOL)
    assert out_of_sample.p_value == pytest.approx(stats.chi2.sf(expected, 10), rel=EXACT_RTOL)


def test_hosmer_lemeshow_flags_a_strongly_miscalibrated_sample():
    table = calibration_table(*calibrated_histogram(16, shift=1.0))
    assert hosmer_lemeshow(table).p_value < 1e-6


def test_hosmer_lemeshow_needs_a_degree_of_freedom():
    table = calibration_table([1, 2], [10, 10], [1, 3], [0.05, 0.2], edges=[2])
    with pytest.raises(ScorecardError, match="2 band\\(s\\), which leaves 0 degrees of freedom"):
        hosmer_lemeshow(table)
    assert hosmer_lemeshow(table, in_sample=False).df == 2


# --- Calibration in the large, Cox's line, Brier -----------------------------------------------


def test_calibration_in_the_large_matches_row_sums():
    # Source: mean and variance of a sum of independent Bernoulli variables, summed over the rows.
    scores, goods, bads, pd = calibrated_histogram(17, shift=0.2)
    row_pd, is_bad = expanded_rows(goods, bads, pd)
    z = (is_bad.sum() - row_pd.sum()) / np.sqrt(np.sum(row_pd * (1 - row_pd)))
    result = calibration_in_the_large(scores, goods, bads, pd)
    assert result.expected_bads == pytest.approx(row_pd.sum(), rel=EXACT_RTOL)
    assert result.z == pytest.approx(z, rel=EXACT_RTOL)
    assert result.p_excess == pytest.approx(stats.norm.sf(z), rel=EXACT_RTOL)
    assert result.p_two_sided == pytest.approx(2 * stats.norm.sf(abs(z)), rel=EXACT_RTOL)


@pytest.mark.parametrize("shift", [0.0, 0.5])
def test_calibration_line_matches_statsmodels_logit_on_rows(shift):
    # Source: statsmodels Logit of outcome = bad on [1, logit(pd)] over the expanded rows (reference library).
    scores, goods, bads, pd = calibrated_histogram(18, shift=shift)
    row_pd, is_bad = expanded_rows(goods, bads, pd)
    reference = sm.Logit(is_bad, sm.add_constant(special.logit(row_pd))).fit(disp=0, tol=1e-12)
    line = calibration_line(scores, goods, bads, pd)
    np.testing.assert_allclose([line.intercept, line.slope], reference.params, rtol=FIT_RTOL, atol=FIT_ATOL)
    np.testing.assert_allclose([line.intercept_std_error, line.slope_std_error], reference.bse, rtol=FIT_RTOL)


def test_counts_equal_to_their_expectation_give_intercept_zero_and_slope_one():
    # Cox (Biometrika 45, 1958): when bads = count·pd at every level, (0, 1) solves the likelihood equations.
    scores = np.arange(400, 700, 10)
    pd = special.expit(-(scores - 500) / 40)
    count = np.full(scores.size, 250.0)
    line = calibration_line(scores, count * (1 - pd), count * pd, pd)
    assert (line.intercept, line.slope) == (pytest.approx(0.0, abs=FIT_ATOL), pytest.approx(1.0, abs=FIT_ATOL))
    assert line.slope_p_value == pytest.approx(1.0, abs=FIT_ATOL)


def test_calibration_line_needs_two_distinct_pds_and_no_separation():
    with pytest.raises(FitError, match="calibration_line: every application has the same predicted PD"):
        calibration_line([1, 2], [10, 10], [2, 3], [0.2, 0.2])
    # Quasi-complete separation: bads only at PDs at or above every good's (Albert and Anderson, 1984).
    with pytest.raises(FitError, match="calibration_line: the predicted PDs separate goods from bads"):
        calibration_line([1, 2, 3], [0, 4, 5], [3, 1, 0], [0.4, 0.3, 0.2])


def test_brier_score_is_the_mean_squared_error_on_rows():
    # Source: G. W. Brier, Monthly Weather Review 78 (1950): mean of (outcome − forecast)² over the rows.
    scores, goods, bads, pd = calibrated_histogram(19)
    row_pd, is_bad = expanded_rows(goods, bads, pd)
    assert brier_score(scores, goods, bads, pd) == pytest.approx(np.mean((is_bad - row_pd) ** 2), rel=EXACT_RTOL)


# --- Holm --------------------------------------------------------------------------------------


def test_holm_matches_statsmodels_multipletests():
    # Source: statsmodels.stats.multitest.multipletests(method="holm") (reference library).
    p_values = np.random.default_rng(20).uniform(0, 0.2, 12)
    p_values[[3, 7]] = p_values[5]  # tied p-values must come out with equal adjusted values
    np.testing.assert_allclose(holm(p_values), multipletests(p_values, method="holm")[1], rtol=EXACT_RTOL)


def test_holm_by_hand():
    # Holm (Scandinavian Journal of Statistics 6, 1979): sorted 0.01, 0.03, 0.04 times 3, 2, 1, running maximum.
    np.testing.assert_allclose(holm([0.01, 0.04, 0.03]), [0.03, 0.06, 0.06], rtol=EXACT_RTOL)
    assert holm([]).size == 0


def test_holm_rejects_values_that_are_not_probabilities():
    with pytest.raises(ScorecardError, match=r"p_values, row 2 \(counted from 1\): value 1.5"):
        holm([0.1, 1.5])
    with pytest.raises(ScorecardError, match="value nan"):
        holm([np.nan])


# --- Errors ------------------------------------------------------------------------------------


def test_pd_outside_zero_one_is_named_with_its_row():
    with pytest.raises(ScorecardError, match=r"pd, row 2 \(counted from 1\): value 1.0 is not a probability"):
        brier_score([1, 2], [1, 1], [1, 1], [0.5, 1.0])


def test_pd_of_the_wrong_length_is_rejected():
    with pytest.raises(ScorecardError, match="pd must be 2 numbers"):
        calibration_in_the_large([1, 2], [1, 1], [1, 1], [0.5])


def test_unsorted_scores_and_negative_counts_are_rejected():
    with pytest.raises(ScorecardError, match="calibration_table: scores must be strictly ascending"):
        calibration_table([2, 1], [1, 1], [1, 1], [0.1, 0.2])
    with pytest.raises(ScorecardError, match=r"goods, row 1 \(counted from 1\): value -1"):
        calibration_table([1, 2], [-1, 1], [1, 1], [0.1, 0.2])


def test_an_empty_histogram_is_rejected_and_no_bads_is_allowed_for_the_table():
    with pytest.raises(ScorecardError, match="every count is 0"):
        calibration_table([1, 2], [0, 0], [0, 0], [0.1, 0.2])
    table = calibration_table([1, 2], [10, 10], [0, 0], [0.1, 0.2], edges=[2])
    assert table.binomial_p_excess.tolist() == [1.0, 1.0]
    with pytest.raises(ScorecardError, match="calibration_line: the histogram has no bads"):
        calibration_line([1, 2], [10, 10], [0, 0], [0.1, 0.2])
