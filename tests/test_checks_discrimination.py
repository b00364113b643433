"""Tests of scorecard.checks.discrimination: AUC, DeLong, Gini, KS, ROC and CAP, bands, gains."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special, stats
from sklearn.metrics import roc_auc_score

from scorecard.checks import (
    auc,
    auc_shortfall,
    paired_auc_test,
    band_of,
    cap_points,
    gains_table,
    ks_statistic,
    roc_points,
    score_bands,
)
from scorecard.errors import ScorecardError

# Histogram and rows sum the same numbers in a different order; only rounding can differ.
EXACT_RTOL = 1e-12
# Trapezoid areas and cumulative shares add a few hundred terms; rounding grows with their number.
AREA_ATOL = 1e-12
HYPOTHESIS = settings(derandomize=True, max_examples=60, deadline=None)
# Two-sided 95 % normal quantile, 1.959964 (M. Abramowitz, I. A. Stegun, Handbook of Mathematical
# Functions, 1964, table 26.5); six decimals given there.
Z_975 = 1.959964
Z_ATOL = 1e-6


def random_histogram(seed: int, n_levels: int = 40, scale: float = 30.0):
    """Integer counts on scores 300, 310, ...: goods rise with score, bads fall, with ties and empties."""
    rng = np.random.default_rng(seed)
    scores = 300 + 10 * np.arange(n_levels)
    goods = rng.poisson(np.linspace(0.2, 2.0, n_levels) * scale)
    bads = rng.poisson(np.linspace(1.0, 0.1, n_levels) * scale / 4)
    return scores, goods, bads


def expanded_rows(scores, goods, bads):
    """One row per application: its score and 1 for a good, 0 for a bad."""
    row_scores = np.concatenate([np.repeat(scores, goods), np.repeat(scores, bads)])
    is_good = np.concatenate([np.ones(int(np.sum(goods))), np.zeros(int(np.sum(bads)))])
    return row_scores, is_good


def pair_count_auc(scores, goods, bads) -> float:
    """Slow oracle: compare every good with every bad, ties count half."""
    good_scores, bad_scores = np.repeat(scores, goods), np.repeat(scores, bads)
    wins = 0.0
    for good in good_scores:
        for bad in bad_scores:
            wins += 1.0 if good > bad else 0.5 if good == bad else 0.0
    return wins / (good_scores.size * bad_scores.size)


def delong_variance_on_rows(row_scores, is_good) -> float:
    """DeLong et al. (Biometrics 44, 1988): V10, V01 placements of rows, then S10/m + S01/n."""
    goods, bads = row_scores[is_good == 1], row_scores[is_good == 0]
    kernel = (goods[:, None] > bads[None, :]) + 0.5 * (goods[:, None] == bads[None, :])
    v10, v01 = kernel.mean(axis=1), kernel.mean(axis=0)
    s10, s01 = np.var(v10, ddof=1), np.var(v01, ddof=1)
    return s10 / goods.size + s01 / bads.size


# --- AUC ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_auc_matches_sklearn_on_expanded_rows(seed):
    # Source: scikit-learn's roc_auc_score, which counts ties half (reference library).
    scores, goods, bads = random_histogram(seed)
    row_scores, is_good = expanded_rows(scores, goods, bads)
    assert auc(scores, goods, bads).auc == pytest.approx(roc_auc_score(is_good, row_scores), rel=EXACT_RTOL)


def test_auc_with_fractional_weights_matches_sklearn_sample_weight():
    # Source: scikit-learn's roc_auc_score with sample_weight (reference library).
    rng = np.random.default_rng(7)
    scores = np.arange(20) * 7.5
    goods, bads = rng.uniform(0, 5, 20), rng.uniform(0, 5, 20)[::-1]
    goods[3] = 0.0
    labels = np.concatenate([np.ones(20), np.zeros(20)])
    expected = roc_auc_score(labels, np.concatenate([scores, scores]), sample_weight=np.concatenate([goods, bads]))
    assert auc(scores, goods, bads).auc == pytest.approx(expected, rel=EXACT_RTOL)


def test_auc_matches_pair_count_oracle_on_small_histogram():
    # Source: the definition P(good > bad) + ½ P(tie), by counting every good–bad pair.
    scores, goods, bads = [500, 520, 540, 560], [1, 4, 0, 6], [3, 2, 1, 0]
    assert auc(scores, goods, bads).auc == pytest.approx(pair_count_auc(scores, goods, bads), rel=EXACT_RTOL)


def test_auc_of_the_docstring_example_by_hand():
    # By hand: goods at 500, 550, 600 beat 0.3, 0.75, 0.95 of the bads (ties half): (3 + 22.5 + 57) / 100.
    result = auc([500, 550, 600], [10, 30, 60], [6, 3, 1])
    assert result.auc == pytest.approx(0.825, rel=EXACT_RTOL)
    assert result.gini == pytest.approx(0.65, rel=EXACT_RTOL)


@pytest.mark.parametrize("seed", [0, 5])
def test_delong_variance_matches_structural_components_on_rows(seed):
    # Source: DeLong, DeLong, Clarke-Pearson, Biometrics 44 (1988), the V10/V01 structural components.
    scores, goods, bads = random_histogram(seed, n_levels=15, scale=6.0)
    expected = delong_variance_on_rows(*expanded_rows(scores, goods, bads))
    assert auc(scores, goods, bads).std_error ** 2 == pytest.approx(expected, rel=EXACT_RTOL)


def test_plain_interval_is_auc_plus_minus_normal_quantile_times_se():
    # Source: z of 1.959964 from Abramowitz and Stegun (1964), table 26.5.
    result = auc(*random_histogram(3), level=0.95, scale="plain")
    assert result.upper - result.auc == pytest.approx(Z_975 * result.std_error, abs=Z_ATOL * result.std_error)
    assert result.auc - result.lower == pytest.approx(Z_975 * result.std_error, abs=Z_ATOL * result.std_error)


def test_logit_interval_is_symmetric_on_the_logit_scale_and_inside_zero_one():
    # Delta method: se of logit(AUC) = se / (AUC (1 - AUC)); interval symmetric about logit(AUC).
    result = auc(*random_histogram(3), level=0.95)
    half_width = Z_975 * result.std_error / (result.auc * (1 - result.auc))
    assert special.logit(result.upper) - special.logit(result.auc) == pytest.approx(half_width, rel=Z_ATOL)
    assert special.logit(result.auc) - special.logit(result.lower) == pytest.approx(half_width, rel=Z_ATOL)
    assert 0 < result.lower < result.auc < result.upper < 1
    assert result.gini_lower == pytest.approx(2 * result.lower - 1)


def test_perfect_separation_gives_auc_one_and_a_point_interval():
    result = auc([1, 2, 3, 4], [0, 0, 5, 5], [4, 4, 0, 0])
    assert (result.auc, result.std_error, result.lower, result.upper) == (1.0, 0.0, 1.0, 1.0)


def test_single_bad_leaves_the_standard_error_undefined():
    result = auc([1, 2, 3], [3, 4, 5], [1, 0, 0])
    assert np.isnan(result.std_error) and np.isnan(result.lower)


def test_auc_shortfall_is_a_one_sided_normal_test():
    # Source: p = Φ(z) with the normal distribution function of scipy.stats.norm (reference library).
    result = auc(*random_histogram(4))
    reference = result.auc + 0.03
    shortfall = auc_shortfall(result, reference=reference)
    assert shortfall.z == pytest.approx(-0.03 / result.std_error, rel=EXACT_RTOL)
    assert shortfall.p_value == pytest.approx(stats.norm.cdf(shortfall.z), rel=EXACT_RTOL)
    assert shortfall.p_value < 0.5
    assert auc_shortfall(result, reference=result.auc - 0.03).p_value > 0.5


def test_auc_shortfall_of_two_independent_samples_adds_their_variances():
    # Source: DeLong, DeLong and Clarke-Pearson (Biometrics 44, 1988): for independent samples the
    # covariance term vanishes, so var(difference) = var1 + var2; p = Φ(z) by scipy.stats.norm.
    new, baseline = auc(*random_histogram(4)), auc(*random_histogram(9))
    shortfall = auc_shortfall(new, reference=baseline.auc, reference_std_error=baseline.std_error)
    z = (new.auc - baseline.auc) / np.sqrt(new.std_error ** 2 + baseline.std_error ** 2)
    assert shortfall.z == pytest.approx(z, rel=EXACT_RTOL)
    assert shortfall.p_value == pytest.approx(stats.norm.cdf(z), rel=EXACT_RTOL)
    assert shortfall.combined_std_error ** 2 == pytest.approx(new.std_error ** 2 + baseline.std_error ** 2, rel=EXACT_RTOL)
    fixed = auc_shortfall(new, reference=baseline.auc)  # a baseline taken as exact overstates the evidence
    assert abs(fixed.z) > abs(shortfall.z)
    with pytest.raises(ScorecardError, match="reference_std_error = -0.1"):
        auc_shortfall(new, reference=0.7, reference_std_error=-0.1)


def test_auc_shortfall_rejects_a_reference_outside_zero_one_and_a_missing_se():
    result = auc(*random_histogram(4))
    with pytest.raises(ScorecardError, match="reference = 1.2"):
        auc_shortfall(result, reference=1.2)
    with pytest.raises(ScorecardError, match="more than one of each"):
        auc_shortfall(auc([1, 2, 3], [3, 4, 5], [1, 0, 0]), reference=0.7)


# --- Properties (hypothesis, derandomised) -----------------------------------------------------

rows = st.lists(st.tuples(st.integers(0, 8), st.booleans(), st.integers(1, 3)), min_size=2, max_size=40)


def histogram_of_rows(data):
    """Merge rows with the same score into one level: (scores, goods, bads)."""
    row_scores = np.array([score for score, _, _ in data])
    good = np.array([is_good for _, is_good, _ in data])
    weight = np.array([w for _, _, w in data], dtype=float)
    scores, level = np.unique(row_scores, return_inverse=True)
    goods = np.bincount(level, weights=weight * good, minlength=scores.size)
    bads = np.bincount(level, weights=weight * ~good, minlength=scores.size)
    return scores, goods, bads


def has_both(data) -> bool:
    return any(good for _, good, _ in data) and not all(good for _, good, _ in data)


@HYPOTHESIS
@given(rows.filter(has_both))
def test_merging_repeated_scores_keeps_the_pair_count_auc(data):
    # Source: pair-count definition on the rows, with weights expanded into repeated rows.
    scores, goods, bads = histogram_of_rows(data)
    expected = pair_count_auc(scores, goods.astype(int), bads.astype(int))
    assert auc(scores, goods, bads).auc == pytest.approx(expected, rel=EXACT_RTOL)


@HYPOTHESIS
@given(rows.filter(has_both), st.sampled_from([0.25, 3.0, 1000.0]))
def test_auc_is_invariant_to_multiplying_all_counts(data, factor):
    scores, goods, bads = histogram_of_rows(data)
    assert auc(scores, factor * goods, factor * bads).auc == pytest.approx(auc(scores, goods, bads).auc, rel=EXACT_RTOL)


@HYPOTHESIS
@given(rows.filter(has_both))
def test_auc_of_reversed_scores_is_one_minus_auc(data):
    scores, goods, bads = histogram_of_rows(data)
    reversed_auc = auc(-scores[::-1], goods[::-1], bads[::-1]).auc
    assert reversed_auc == pytest.approx(1 - auc(scores, goods, bads).auc, abs=AREA_ATOL)


@HYPOTHESIS
@given(rows.filter(has_both))
def test_empty_levels_and_rescaled_scores_change_nothing(data):
    scores, goods, bads = histogram_of_rows(data)
    # Interleave an empty level after each one and map scores by an increasing function.
    wide_scores = np.exp(np.arange(2 * scores.size) / 4.0)
    wide_goods, wide_bads = np.zeros(2 * scores.size), np.zeros(2 * scores.size)
    wide_goods[::2], wide_bads[::2] = goods, bads
    original, widened = auc(scores, goods, bads), auc(wide_scores, wide_goods, wide_bads)
    assert widened.auc == pytest.approx(original.auc, rel=EXACT_RTOL)
    assert widened.std_error == pytest.approx(original.std_error, rel=EXACT_RTOL, nan_ok=True)


# --- KS, ROC, CAP ------------------------------------------------------------------------------


@pytest.mark.parametrize("seed", [0, 1])
def test_ks_matches_scipy_ks_2samp_on_expanded_rows(seed):
    # Source: scipy.stats.ks_2samp, the two-sample Kolmogorov–Smirnov statistic (reference library).
    scores, goods, bads = random_histogram(seed)
    result = ks_statistic(scores, goods, bads)
    expected = stats.ks_2samp(np.repeat(scores, goods), np.repeat(scores, bads), method="asymp").statistic
    assert result.statistic == pytest.approx(expected, rel=EXACT_RTOL)
    at_peak = scores <= result.score
    assert result.bads_share == pytest.approx(bads[at_peak].sum() / bads.sum(), rel=EXACT_RTOL)
    assert result.goods_share == pytest.approx(goods[at_peak].sum() / goods.sum(), rel=EXACT_RTOL)


def test_ks_peaks_at_the_first_best_score():
    # By hand: F_bad = 0.5, 0.75, 1 and F_good = 0.25, 0.5, 1, so the gap is 0.25, 0.25, 0: first peak at 1.
    result = ks_statistic([1, 2, 3], [1, 1, 2], [2, 1, 1])
    assert (result.statistic, result.score) == (pytest.approx(0.25, rel=EXACT_RTOL), 1)


def test_roc_area_by_trapezoids_is_the_auc():
    # Source: Bamber (J. Mathematical Psychology 12, 1975 — from memory): the trapezoid area is the AUC, ties half.
    scores, goods, bads = random_histogram(2)
    curve = roc_points(scores, goods, bads)
    area = np.trapezoid(curve.bads_declined, curve.goods_declined)
    assert area == pytest.approx(auc(scores, goods, bads).auc, abs=AREA_ATOL)
    assert (curve.cutoffs[0], curve.goods_declined[0], curve.bads_declined[-1]) == (-np.inf, 0.0, 1.0)


def test_cap_accuracy_ratio_is_the_gini():
    # Source: Engelmann, Hayden, Tasche, "Testing rating accuracy", Risk (2003): AR = a_R / a_P = 2 AUC - 1,
    # where a_R is the area between the CAP and the diagonal and a_P = (1 - bad share) / 2 the perfect one.
    scores, goods, bads = random_histogram(6)
    curve = cap_points(scores, goods, bads)
    area_over_diagonal = np.trapezoid(curve.bads_declined, curve.population_declined) - 0.5
    accuracy_ratio = area_over_diagonal / ((1 - curve.bad_share) / 2)
    assert accuracy_ratio == pytest.approx(auc(scores, goods, bads).gini, abs=AREA_ATOL)


def test_curve_arrays_are_read_only_and_tabulate():
    curve = roc_points([1, 2], [1, 1], [1, 1])
    with pytest.raises(ValueError):
        curve.goods_declined[0] = 0.5
    assert list(curve.to_frame().columns) == ["cutoff", "goods_declined", "bads_declined"]


# --- Bands and gains ---------------------------------------------------------------------------


def test_equal_population_bands_on_uniform_levels_are_exact_deciles():
    edges = score_bands(np.arange(100), np.ones(100))
    assert edges.tolist() == list(range(10, 100, 10))
    assert np.bincount(band_of(np.arange(100), edges)).tolist() == [10] * 10


def test_a_level_goes_to_the_band_holding_the_midpoint_of_its_share():
    # Shares 0.35, 0.05, 0.5, 0.1 have midpoints 0.175, 0.375, 0.65, 0.95: bands 1, 3, 6, 9 of ten.
    edges = score_bands([1, 2, 3, 4], [35, 5, 50, 10], n_bands=10)
    assert edges.tolist() == [2, 3, 4]


def test_a_heavy_level_merges_bands_instead_of_being_split():
    counts = np.array([5, 5, 80, 5, 5])
    edges = score_bands(np.arange(5), counts, n_bands=10)
    band = band_of(np.arange(5), edges)
    assert np.all(np.diff(band) >= 0) and len(np.unique(band)) < 10
    assert band[2] != band[1] and band[2] != band[3]


def test_band_of_puts_a_score_equal_to_an_edge_in_the_upper_band():
    assert band_of([499, 500, 501, 600, 700], [500, 600]).tolist() == [0, 1, 1, 2, 2]


def test_gains_table_matches_a_loop_over_explicit_bands():
    # Source: the definitions, band by band in a loop: bad rate, cumulative shares, lift.
    scores, goods, bads = random_histogram(8)
    edges = [400, 500, 550, 620]
    table = gains_table(scores, goods, bads, edges=edges)
    bounds = [-np.inf, *edges, np.inf]
    overall = bads.sum() / (goods.sum() + bads.sum())
    cumulative_goods = cumulative_bads = 0.0
    for row, (low, high) in enumerate(zip(bounds[:-1], bounds[1:])):
        inside = (scores >= low) & (scores < high)
        n_goods, n_bads = goods[inside].sum(), bads[inside].sum()
        cumulative_goods += n_goods / goods.sum()
        cumulative_bads += n_bads / bads.sum()
        assert (table.score_low[row], table.score_high[row]) == (scores[inside][0], scores[inside][-1])
        assert (table.goods[row], table.bads[row]) == (n_goods, n_bads)
        assert table.bad_rate[row] == pytest.approx(n_bads / (n_goods + n_bads), rel=EXACT_RTOL)
        assert table.lift[row] == pytest.approx(n_bads / (n_goods + n_bads) / overall, rel=EXACT_RTOL)
        assert table.cumulative_goods_share[row] == pytest.approx(cumulative_goods, rel=EXACT_RTOL)
        assert table.cumulative_bads_share[row] == pytest.approx(cumulative_bads, rel=EXACT_RTOL)


def test_gains_deciles_put_the_riskiest_band_first_with_mean_lift_one():
    scores, goods, bads = random_histogram(9)
    table = gains_table(scores, goods, bads)
    assert table.band.size == 10 and np.all(np.diff(table.score_low) > 0)
    assert table.lift[0] > 1 > table.lift[-1]
    assert table.count @ table.lift / table.count.sum() == pytest.approx(1.0, rel=EXACT_RTOL)
    assert table.cumulative_bads_share[-1] == pytest.approx(1.0, rel=EXACT_RTOL)
    assert len(table.to_frame()) == 10


def test_gains_leaves_out_bands_without_weight():
    table = gains_table([1, 2, 3], [1, 1, 1], [1, 0, 1], edges=[0, 2, 10, 20])
    assert table.band.tolist() == [1, 2]


# --- Errors ------------------------------------------------------------------------------------


def test_unsorted_scores_are_named_with_their_position():
    with pytest.raises(ScorecardError, match=r"strictly ascending; score 3 \(counted from 1\), 510"):
        auc([500, 520, 510], [1, 1, 1], [1, 1, 1])


def test_repeated_scores_are_rejected():
    with pytest.raises(ScorecardError, match="add up the counts of repeated scores"):
        ks_statistic([500, 500, 510], [1, 1, 1], [1, 1, 1])


def test_negative_counts_are_named_with_their_row():
    with pytest.raises(ScorecardError, match=r"bads, row 2 \(counted from 1\): value -2.0 is not a finite, non-neg"):
        auc([500, 510, 520], [1, 1, 1], [1, -2, 1])


def test_a_histogram_without_bads_is_rejected():
    with pytest.raises(ScorecardError, match="auc: the histogram has no bads"):
        auc([500, 510], [3, 4], [0, 0])


def test_misaligned_and_non_numeric_inputs_are_rejected():
    with pytest.raises(ScorecardError, match="goods has 2 entries but scores has 3"):
        gains_table([1, 2, 3], [1, 1], [1, 1, 1])
    with pytest.raises(ScorecardError, match="scores must be numbers"):
        roc_points(["a", "b"], [1, 1], [1, 1])
    with pytest.raises(ScorecardError, match=r"goods, row 1 \(counted from 1\): value nan"):
        cap_points([1, 2], [np.nan, 1], [1, 1])


def test_bad_options_are_rejected():
    with pytest.raises(ScorecardError, match="level = 95"):
        auc([1, 2], [1, 1], [1, 1], level=95)
    with pytest.raises(ScorecardError, match="scale 'probit'"):
        auc([1, 2], [1, 1], [1, 1], scale="probit")
    with pytest.raises(ScorecardError, match="n_bands = 0"):
        score_bands([1, 2], [1, 1], n_bands=0)
    with pytest.raises(ScorecardError, match=r"edges must be strictly ascending; edge 2 \(counted from 1\)"):
        band_of([1, 2], [5, 5])


def test_paired_auc_test_equals_delongs_correlated_components_on_rows():
    # Source: DeLong, DeLong and Clarke-Pearson (Biometrics 44, 1988), the correlated case: the covariance
    # of the two AUCs from the structural components, each worked out here by a loop over good–bad pairs
    rng = np.random.default_rng(12)
    n = 300
    is_good = rng.random(n) < 0.7
    first = np.round(rng.normal(size=n) + 0.8 * is_good, 1)
    second = np.round(first + rng.normal(scale=0.7, size=n) + 0.3 * is_good, 1)
    goods, bads = first[is_good], first[~is_good]

    def components(score):
        good, bad = score[is_good], score[~is_good]
        kernel = (good[:, None] > bad[None, :]) + 0.5 * (good[:, None] == bad[None, :])
        return kernel.mean(axis=1), kernel.mean(axis=0), kernel.mean()

    v10_1, v01_1, a1 = components(first)
    v10_2, v01_2, a2 = components(second)
    s10 = np.cov(np.vstack([v10_1, v10_2]))
    s01 = np.cov(np.vstack([v01_1, v01_2]))
    variance = (s10[0, 0] + s10[1, 1] - 2 * s10[0, 1]) / goods.size + (s01[0, 0] + s01[1, 1] - 2 * s01[0, 1]) / bads.size
    test = paired_auc_test(first, second, is_good.astype(float), (~is_good).astype(float))
    assert (test.first, test.second) == pytest.approx((a1, a2), rel=EXACT_RTOL)
    assert test.std_error ** 2 == pytest.approx(variance, rel=1e-10)
    assert test.p_value == pytest.approx(2 * stats.norm.sf(abs((a2 - a1) / np.sqrt(variance))), rel=1e-9)
    # one score against itself: no difference, and the first AUC's own variance is DeLong's of that score
    assert paired_auc_test(first, first, is_good.astype(float), (~is_good).astype(float)).std_error == 0.0
