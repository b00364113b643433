"""Tests of scorecard/selection.py: screening, correlation, stepwise choice and reversals."""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest

from scorecard.rows import pattern_table
from scorecard.evidence import evidence_table
from scorecard.errors import FitError, ScorecardWarning
from scorecard.selection import (
    _WoeDesign, score_test, select_characteristics, variance_inflation, weighted_correlation,
)
from scorecard.settings import FitSettings, SelectionSettings

SCORE_TEST_RTOL = 1e-5  # p-values of two fits stopped at their own tolerances; tiny p-values magnify the gap


def _synthetic(n=20_000, seed=7):
    """Invented process: 'strong' and 'twin' (a noisy copy of it) drive the outcome, 'noise' does not."""
    rng = np.random.default_rng(seed)
    strong = rng.integers(0, 8, n)
    twin = np.clip(strong + rng.integers(-1, 2, n), 0, 7)
    weak = rng.integers(0, 5, n)
    noise = rng.integers(0, 6, n)
    log_odds_good = 1.5 + 0.35 * (strong - 3.5) + 0.15 * (weak - 2)
    good = rng.random(n) < 1 / (1 + np.exp(-log_odds_good))
    codes = np.column_stack([strong, twin, weak, noise]).astype(np.uint8)
    names = ("strong", "twin", "weak", "noise")
    woe, iv = {}, {}
    for column, name in enumerate(names):
        goods = np.bincount(codes[good, column], minlength=codes[:, column].max() + 1).astype(float)
        bads = np.bincount(codes[~good, column], minlength=codes[:, column].max() + 1).astype(float)
        table = evidence_table(goods, bads, labels=[str(i) for i in range(len(goods))], characteristic=name)
        woe[name], iv[name] = table.woe, table.iv
    patterns = pattern_table(codes, good.astype(float), (~good).astype(float), characteristics=names)
    return patterns, woe, iv, codes, good


def test_screen_correlation_and_stepwise_are_logged_with_reasons():
    patterns, woe, iv, _, _ = _synthetic()
    result = select_characteristics(patterns, woe, iv)
    log = result.to_frame()
    assert result.chosen[:2] == ("strong", "weak")
    twin = log[log.characteristic == "twin"].iloc[0]
    assert twin.step == "correlation" and twin.action == "left out"
    assert "'strong' has the larger IV" in twin.reason
    noise = log[log.characteristic == "noise"].iloc[0]
    assert noise.action == "left out"
    assert (result.fit.coefficients[1:] > 0).all()


@pytest.mark.filterwarnings("ignore:'weak' was left out by the IV screen")
def test_forced_characteristic_skips_the_screen():
    patterns, woe, iv, _, _ = _synthetic()
    result = select_characteristics(patterns, woe, iv, forced=["noise"], selection=SelectionSettings(min_iv=0.5))
    assert "noise" in result.chosen
    assert result.to_frame().iloc[0].action == "forced in"


def test_a_reversal_is_removed_and_the_model_refitted():
    # With correlation allowed, 'twin' enters beside 'strong'; as a noisy copy it can only pick up
    # a small coefficient, and when it comes out negative the reversal check must remove it.
    patterns, woe, iv, _, _ = _synthetic(seed=3)
    woe = dict(woe, twin=-woe["twin"])  # flip the twin's WoE so that its joint coefficient is negative
    iv = dict(iv)
    result = select_characteristics(patterns, woe, iv, selection=SelectionSettings(max_correlation=1.0, stepwise="none"))
    log = result.to_frame()
    removed = log[(log.step == "reversal") & (log.action == "removed")]
    assert removed.characteristic.tolist() == ["twin"]
    assert "twin" not in result.chosen and (result.fit.coefficients[1:] > 0).all()


def test_nothing_entering_is_a_clear_error():
    patterns, woe, iv, _, _ = _synthetic()
    with pytest.raises(FitError, match="no characteristic entered the model"):
        select_characteristics(patterns, woe, iv, selection=SelectionSettings(min_iv=10.0))


def test_bic_stepwise_chooses_the_true_drivers():
    patterns, woe, iv, _, _ = _synthetic()
    result = select_characteristics(patterns, woe, iv, selection=SelectionSettings(criterion="bic"))
    assert set(result.chosen) == {"strong", "weak"}


def test_weighted_correlation_equals_numpy_on_expanded_rows():
    # reference: numpy.corrcoef on the rows the frequency weights stand for
    rng = np.random.default_rng(2)
    matrix = rng.normal(size=(40, 3))
    weights = rng.integers(1, 5, 40).astype(float)
    expanded = np.repeat(matrix, weights.astype(int), axis=0)
    np.testing.assert_allclose(weighted_correlation(matrix, weights), np.corrcoef(expanded.T), rtol=1e-12)


def test_variance_inflation_equals_statsmodels():
    # reference: statsmodels.stats.outliers_influence.variance_inflation_factor (regression of each
    # column on the others with a constant)
    outliers = pytest.importorskip("statsmodels.stats.outliers_influence")
    rng = np.random.default_rng(4)
    a = rng.normal(size=500)
    matrix = np.column_stack([a, a + rng.normal(scale=0.5, size=500), rng.normal(size=500)])
    correlation = pd.DataFrame(np.corrcoef(matrix.T), index=list("abc"), columns=list("abc"))
    ours = variance_inflation(correlation)
    exog = np.column_stack([np.ones(500), matrix])
    for column, name in enumerate("abc", start=1):
        assert ours[name] == pytest.approx(outliers.variance_inflation_factor(exog, column), rel=1e-10)


def test_score_test_equals_statsmodels():
    # reference: statsmodels GLM (binomial) score_test of adding the candidate columns one at a time
    sm = pytest.importorskip("statsmodels.api")
    patterns, woe, iv, codes, good = _synthetic(n=4000, seed=9)
    design = _WoeDesign(patterns, woe, FitSettings())
    fit = design.fit(["strong"])
    ours = score_test(design, fit, ["weak", "noise"])
    rows = np.column_stack([np.asarray(woe[name])[codes[:, i]] for i, name in enumerate(patterns.characteristics)])
    exog = sm.add_constant(rows[:, [0]])
    reference = sm.GLM(good.astype(float), exog, family=sm.families.Binomial()).fit()
    for position, column in enumerate([2, 3]):
        result = reference.score_test(exog_extra=rows[:, [column]])
        assert ours[position] == pytest.approx(float(result.pvalue[0]), rel=SCORE_TEST_RTOL)


# ---------------------------------------------------------------------------------------------
# The IV screen: a verdict or a proposal, and the score test of what it leaves out

SCREEN_MIN_IV = 0.05  # between 'weak' (IV about 0.035, a real driver) and 'strong' (about 0.56)


def test_a_screened_out_characteristic_that_still_adds_discrimination_is_tested_and_said():
    patterns, woe, iv, codes, good = _synthetic()
    assert iv["noise"] < iv["weak"] < SCREEN_MIN_IV < iv["strong"]  # counted on the invented process
    with pytest.warns(ScorecardWarning, match=r"'weak' was left out by the IV screen .* selection.screen = \"proposal\""):
        result = select_characteristics(patterns, woe, iv, selection=SelectionSettings(min_iv=SCREEN_MIN_IV))
    assert result.chosen == ("strong",)
    tests = {t.characteristic: t for t in result.screen_tests}
    assert set(tests) == {"weak", "noise"} and result.screened_significant == ("weak",)
    assert tests["weak"].left_out_by == "screen" and not tests["weak"].reverses and tests["noise"].p_value > 0.05
    # reference: statsmodels GLM (binomial) score_test of adding each column to the final model on the rows
    sm = pytest.importorskip("statsmodels.api")
    rows = np.column_stack([np.asarray(woe[name])[codes[:, i]] for i, name in enumerate(patterns.characteristics)])
    exog = sm.add_constant(rows[:, [0]])
    reference = sm.GLM(good.astype(float), exog, family=sm.families.Binomial()).fit()
    for name, column in (("weak", 2), ("noise", 3)):
        expected = reference.score_test(exog_extra=rows[:, [column]])
        assert tests[name].statistic == pytest.approx(float(expected.statistic[0]), rel=SCORE_TEST_RTOL)
    log = result.to_frame()
    entry = log[(log.step == "screen test") & (log.characteristic == "weak")].iloc[0]
    assert entry.action == "tested" and "would add significant discrimination" in entry.reason


def test_a_screen_that_is_a_proposal_lets_the_stepwise_choice_decide():
    patterns, woe, iv, _, _ = _synthetic()
    with warnings.catch_warnings():
        warnings.simplefilter("error", ScorecardWarning)  # nothing is left out silently, so nothing to warn of
        result = select_characteristics(patterns, woe, iv, selection=SelectionSettings(min_iv=SCREEN_MIN_IV, screen="proposal"))
    assert result.chosen == ("strong", "weak")
    log = result.to_frame()
    assert log[(log.step == "screen") & (log.characteristic == "weak")].action.tolist() == ["proposed out"]
    assert [(t.characteristic, t.left_out_by, t.significant) for t in result.screen_tests] == [("noise", "stepwise", False)]


def test_nothing_under_the_screen_means_no_screen_tests():
    patterns, woe, iv, _, _ = _synthetic()
    result = select_characteristics(patterns, woe, iv, selection=SelectionSettings(min_iv=0.0))
    assert result.screen_tests == () and result.screened_significant == ()


def test_a_screened_out_characteristic_that_would_come_in_reversed_is_no_help():
    patterns, woe, iv, _, _ = _synthetic()
    woe = dict(woe, weak=-np.asarray(woe["weak"]))  # its WoE now runs against its bad rate
    with warnings.catch_warnings():
        warnings.simplefilter("error", ScorecardWarning)
        result = select_characteristics(patterns, woe, iv, selection=SelectionSettings(min_iv=SCREEN_MIN_IV))
    weak = next(t for t in result.screen_tests if t.characteristic == "weak")
    assert weak.p_value < 1e-20 and weak.reverses and not weak.significant
    assert "weak" not in result.screened_significant
