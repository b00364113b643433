"""Tests of scorecard.checks.stability: PSI, its status words, score PSI and points shift."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from scorecard.checks import ACT_PSI, WATCH_PSI, band_of, points_shift, psi, psi_status, score_bands, score_psi
from scorecard.errors import ScorecardError

# Same sums in another order: rounding only.
EXACT_RTOL = 1e-12
# A PSI of identical distributions is 0 up to the rounding of shares that should be equal.
ZERO_ATOL = 1e-15


def psi_by_loop(expected, actual) -> float:
    """The index written out bin by bin, on counts with no empty cell."""
    total_expected, total_actual = sum(expected), sum(actual)
    value = 0.0
    for e, a in zip(expected, actual):
        e_share, a_share = e / total_expected, a / total_actual
        value += (a_share - e_share) * np.log(a_share / e_share)
    return value


def test_psi_matches_a_loop_over_the_bins():
    # Source: PSI = Σ (a − e)·ln(a / e) over shares, written out in a loop.
    expected = np.array([120, 340, 410, 280, 150, 60])
    actual = np.array([90, 300, 420, 330, 200, 95])
    result = psi(expected, actual)
    assert result.value == pytest.approx(psi_by_loop(expected, actual), rel=EXACT_RTOL)
    assert result.contributions.sum() == pytest.approx(result.value, rel=EXACT_RTOL)
    assert not result.adjusted.any()


def test_psi_is_the_symmetrised_kullback_leibler_divergence():
    # Source: Kullback and Leibler (Annals of Mathematical Statistics 22, 1951), J = KL(a‖e) + KL(e‖a),
    # with KL from scipy.stats.entropy (reference library).
    expected, actual = np.array([5.0, 10, 20, 40, 25]), np.array([8.0, 12, 25, 30, 25])
    kullback_leibler = stats.entropy(actual, expected) + stats.entropy(expected, actual)
    assert psi(expected, actual).value == pytest.approx(kullback_leibler, rel=EXACT_RTOL)


def test_psi_does_not_depend_on_sample_sizes_and_is_zero_for_equal_shares():
    expected, actual = np.array([30, 50, 20]), np.array([25, 55, 20])
    assert psi(expected, 7 * actual).value == pytest.approx(psi(expected, actual).value, rel=EXACT_RTOL)
    assert psi(expected, 3 * expected).value == pytest.approx(0.0, abs=ZERO_ATOL)


def test_a_bin_empty_in_one_sample_gets_half_added_in_both():
    # By hand: 0.5 added to bin 2 in both samples, then shares of the adjusted counts (rule of DESIGN.md).
    result = psi([40, 0, 60], [30, 10, 60])
    expected_share = np.array([40, 0.5, 60]) / 100.5
    actual_share = np.array([30, 10.5, 60]) / 100.5
    assert result.adjusted.tolist() == [False, True, False]
    assert result.adjusted_labels == ("2",)
    np.testing.assert_allclose(result.expected_share, expected_share, rtol=EXACT_RTOL)
    by_hand = np.sum((actual_share - expected_share) * np.log(actual_share / expected_share))
    assert result.value == pytest.approx(by_hand, rel=EXACT_RTOL)


def test_a_bin_empty_in_both_samples_adds_nothing():
    with_empty = psi([40, 0, 60], [30, 0, 70])
    assert with_empty.value == pytest.approx(psi([40, 60], [30, 70]).value, rel=EXACT_RTOL)
    assert not with_empty.adjusted.any() and with_empty.contributions[1] == 0.0


@pytest.mark.parametrize(("value", "status"), [(0.0, "ok"), (0.0999, "ok"), (0.10, "watch"), (0.2499, "watch"),
                                               (0.25, "act"), (3.0, "act")])
def test_status_words_follow_the_thresholds(value, status):
    # Thresholds 0.10 and 0.25: common practice, no source.
    assert psi_status(value) == status
    assert (WATCH_PSI, ACT_PSI) == (0.10, 0.25)


def test_status_thresholds_can_be_moved_and_are_checked():
    assert psi_status(0.07, watch=0.05, act=0.2) == "watch"
    assert psi([1, 2], [2, 1], watch=0.01, act=0.02).status == "act"
    with pytest.raises(ScorecardError, match="0 < watch < act"):
        psi_status(0.1, watch=0.3, act=0.2)
    with pytest.raises(ScorecardError, match="a PSI is a number >= 0"):
        psi_status(float("nan"))


def test_psi_table_view_has_one_row_per_bin():
    frame = psi([1, 2, 3], [3, 2, 1], labels=["low", "mid", "high"]).to_frame()
    assert frame["bin"].tolist() == ["low", "mid", "high"]
    assert frame["contribution"].sum() == pytest.approx(psi([1, 2, 3], [3, 2, 1]).value, rel=EXACT_RTOL)


# --- Score PSI ---------------------------------------------------------------------------------


def test_score_psi_bins_both_samples_on_baseline_bands():
    # Source: the index on bands binned independently with numpy.digitize and summed in a loop.
    rng = np.random.default_rng(30)
    baseline_scores, baseline_counts = np.arange(400, 700, 5), rng.poisson(50, 60)
    new_scores, new_counts = np.arange(380, 720, 5), rng.poisson(50, 68)  # wider range than the baseline
    result = score_psi(baseline_scores, baseline_counts, new_scores, new_counts)
    edges = score_bands(baseline_scores, baseline_counts)
    expected = np.bincount(np.digitize(baseline_scores, edges), weights=baseline_counts)
    actual = np.bincount(np.digitize(new_scores, edges), weights=new_counts)
    assert result.value == pytest.approx(psi_by_loop(expected, actual), rel=EXACT_RTOL)
    assert result.actual_counts.sum() == new_counts.sum()  # scores outside the baseline fall in the end bands
    assert result.labels[0] == f"< {edges[0]:g}" and result.labels[-1] == f">= {edges[-1]:g}"


def test_score_psi_of_a_sample_against_itself_is_zero_and_a_shift_shows():
    scores, counts = np.arange(300, 700, 10), np.random.default_rng(31).poisson(40, 40)
    assert score_psi(scores, counts, scores, 2 * counts).value == pytest.approx(0.0, abs=ZERO_ATOL)
    shifted = score_psi(scores, counts, scores - 60, counts)
    assert shifted.status == "act"


def test_score_psi_takes_explicit_edges():
    result = score_psi([1, 2, 3, 4], [1, 1, 1, 1], [1, 2, 3, 4], [2, 1, 1, 0], edges=[2, 4])
    assert result.labels == ("< 2", "[2, 4)", ">= 4")
    assert result.actual_counts.tolist() == [2.0, 2.0, 0.0] and result.adjusted.tolist() == [False, False, True]
    assert band_of([4], [2, 4]).tolist() == [2]


# --- Points shift ------------------------------------------------------------------------------


def test_points_shift_is_the_difference_of_mean_points_on_rows():
    # Source: mean points per application, computed on rows expanded from the bin counts.
    expected, actual, points = np.array([30, 50, 20]), np.array([10, 40, 50]), np.array([-12, 5, 31])
    result = points_shift(expected, actual, points)
    expected_mean = np.repeat(points, expected).mean()
    actual_mean = np.repeat(points, actual).mean()
    assert result.expected_mean == pytest.approx(expected_mean, rel=EXACT_RTOL)
    assert result.actual_mean == pytest.approx(actual_mean, rel=EXACT_RTOL)
    assert result.shift == pytest.approx(actual_mean - expected_mean, rel=EXACT_RTOL)
    assert result.contributions.sum() == pytest.approx(result.shift, rel=EXACT_RTOL)


def test_points_shift_checks_the_points():
    with pytest.raises(ScorecardError, match="points must be 2 finite numbers"):
        points_shift([1, 1], [1, 1], [1, 2, 3])


# --- Errors ------------------------------------------------------------------------------------


def test_bins_must_align_and_counts_must_be_non_negative():
    with pytest.raises(ScorecardError, match="expected has 3 bins but actual has 2"):
        psi([1, 2, 3], [1, 2])
    with pytest.raises(ScorecardError, match=r"actual, bin 2 \(counted from 1; 1 bin\(s\) in all\): value -4"):
        psi([1, 2, 3], [1, -4, 3])
    with pytest.raises(ScorecardError, match="every expected count is 0"):
        psi([0, 0], [1, 2])
    with pytest.raises(ScorecardError, match="labels has 1 entries but there are 2 bins"):
        psi([1, 2], [2, 1], labels=["a"])
    with pytest.raises(ScorecardError, match="empty_cell = 0"):
        psi([1, 2], [2, 1], empty_cell=0)


def test_score_histograms_are_checked():
    with pytest.raises(ScorecardError, match="score_psi: scores must be strictly ascending"):
        score_psi([1, 2], [1, 1], [2, 1], [1, 1])
    with pytest.raises(ScorecardError, match=r"score_psi: expected_counts, row 1 \(counted from 1\): value -1"):
        score_psi([1, 2], [-1, 1], [1, 2], [1, 1])
    with pytest.raises(ScorecardError, match="score_psi: every count of the newer histogram is 0"):
        score_psi([1, 2], [1, 1], [1, 2], [0, 0])
    with pytest.raises(ScorecardError, match="score_psi: n_bands = 2.5"):
        score_psi([1, 2], [1, 1], [1, 2], [1, 1], n_bands=2.5)
