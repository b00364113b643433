"""The challenger: its design, its ridge fit against scikit-learn's, its paired test on the build's rows, its flag."""

import warnings

import numpy as np
import pytest
from scipy import stats

from ledgers import monitor_frame
from scorecard.build import build_scorecard
from scorecard.challenger import bin_effects, challenger_log_odds, fit_challenger, indicator_design
from scorecard.settings import Settings
from scorecard.validation import review_flags, validate_build


def _settings(**changes):
    return Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)},
                              ledger={"date_column": "date"}, samples={"out_of_time_from": "2024-03-01"}, **changes)


def test_the_design_has_one_indicator_per_bin_of_each_characteristic():
    design = indicator_design([np.array([0, 2, 1]), np.array([1, 0, 1])], [3, 2])
    np.testing.assert_array_equal(design, [[1, 0, 0, 0, 1], [0, 0, 1, 1, 0], [0, 1, 0, 0, 1]])


def test_the_ridge_fit_matches_scikit_learn_and_the_log_odds_follow_the_bins():
    # reference: sklearn's L2 logistic regression, loss Σ w·log-loss + ||b||²/(2C), intercept not penalised: C = 1 / l2
    linear_model = pytest.importorskip("sklearn.linear_model")
    rng = np.random.default_rng(5)
    first, second = rng.integers(0, 4, 3000), rng.integers(0, 3, 3000)
    bad = rng.random(3000) < 1 / (1 + np.exp(1.5 - 0.4 * first + 0.3 * second))
    goods, bads = (~bad).astype(float), bad.astype(float)
    fit = fit_challenger([first, second], [4, 3], goods, bads, names=["a", "b"], l2=5.0)
    model = linear_model.LogisticRegression(C=1 / 5.0, tol=1e-12, max_iter=10_000)
    model.fit(indicator_design([first, second], [4, 3]), ~bad)
    np.testing.assert_allclose(fit.coefficients[1:], model.coef_[0], atol=1e-5)
    assert fit.coefficients[0] == pytest.approx(model.intercept_[0], abs=1e-5)
    log_odds = challenger_log_odds(np.column_stack([first, second]), fit, bin_effects(fit, [4, 3]))
    np.testing.assert_allclose(log_odds, model.decision_function(indicator_design([first, second], [4, 3])), atol=1e-5)


@pytest.fixture(scope="module")
def builds():
    frame = monitor_frame(4_000, 41)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        plain = build_scorecard(frame, _settings())
        # the scorecard held to one characteristic, the challenger keeping all three: it is ahead, and flagged
        held = build_scorecard(frame, _settings(selection={"max_characteristics": 1}, challenger={"auc_gap": 0.005}))
    return plain, held


def test_the_paired_test_is_on_the_samples_rows_and_agrees_with_the_build(builds):
    plain, _ = builds
    challenger = plain.challenger
    assert challenger.characteristics == ("income", "enquiries", "housing")
    assert set(challenger.comparisons) == {"development", "hold-out", "out-of-time"}
    for name, comparison in challenger.comparisons.items():
        # the scorecard's AUC here is the one of the build's score histograms
        assert comparison.scorecard.auc == pytest.approx(validate_build(plain).samples[name].auc.auc, abs=1e-12)
        paired = comparison.paired
        assert paired.difference == pytest.approx(comparison.challenger.auc - comparison.scorecard.auc, abs=1e-12)
        assert paired.z == pytest.approx(paired.difference / paired.std_error)
        assert paired.p_value == pytest.approx(2 * stats.norm.sf(abs(paired.z)))
        # the paired standard error is below the unpaired one: the two scores rank the same rows much alike
        assert paired.std_error < np.hypot(comparison.scorecard.std_error, comparison.challenger.std_error)


def test_a_challenger_well_ahead_on_an_honest_sample_is_flagged(builds):
    plain, held = builds
    assert len(held.scorecard.table.names) == 1
    flags = [flag for flag in review_flags(held, validate_build(held)) if flag.kind == "challenger"]
    assert flags and all(flag.section == "discrimination" for flag in flags)
    assert any("out-of-time" in flag.text or "hold-out" in flag.text for flag in flags)
    assert not [flag for flag in review_flags(plain, validate_build(plain)) if flag.kind == "challenger"]
