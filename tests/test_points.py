"""Tests of scorecard/points.py: scaling and the points table."""

from __future__ import annotations

import math

import numpy as np
import pytest

from scorecard.errors import ScorecardError
from scorecard.points import default_reason_label, scaling
from scorecard.rows import score_codes

from tables import example_points_table as _table  # tests/tables.py

SCALING_ATOL = 5e-5  # the published figures are printed to four or three decimals
POINTS_ATOL = 0.5  # points are rounded to whole numbers


def test_scaling_matches_the_published_example():
    # 600 points at 50:1 with 20 PDO: factor 28.8539 and offset 487.123
    # (N. Siddiqi, Credit Risk Scorecards, Wiley 2006, chapter on scaling — from memory)
    scale = scaling(base_score=600, base_odds=50, pdo=20)
    assert scale.factor == pytest.approx(28.8539, abs=SCALING_ATOL)
    assert scale.offset == pytest.approx(487.123, abs=5e-4)


def test_scaling_puts_the_base_score_at_the_base_odds_and_doubles_every_pdo():
    scale = scaling(base_score=600, base_odds=50, pdo=20)
    assert scale.score_of_log_odds(math.log(50)) == pytest.approx(600)
    assert scale.score_of_log_odds(math.log(100)) == pytest.approx(620)
    # probability of default of a score = 1 / (1 + odds): at 600 the odds are 50:1
    assert scale.pd_of_score(600) == pytest.approx(1 / 51)
    assert scale.pd_of_score(620) == pytest.approx(1 / 101)


@pytest.mark.parametrize(("kwargs", "match"), [({"base_odds": 0}, "base_odds = 0"), ({"pdo": 0}, "pdo = 0")])
def test_impossible_scaling_is_a_clear_error(kwargs, match):
    with pytest.raises(ScorecardError, match=match):
        scaling(**kwargs)


def test_points_follow_the_formula_of_the_trade():
    # points = factor × (β_j × WoE + β_0 / k) + offset / k, rounded (DESIGN.md; common practice)
    table = _table()
    scale = scaling()
    expected = scale.factor * (0.8 * -0.6 + 1.3 / 3) + scale.offset / 3
    assert table.get("age").exact_points[0] == pytest.approx(expected)
    assert table.get("age").points[0] == round(expected)


def test_unrounded_points_sum_to_the_scaled_log_odds():
    table = _table(decimals=6)
    codes = np.array([[0, 1, 2], [2, 0, 0]])
    log_odds = 1.3 + np.array([0.8 * -0.6 + 1.1 * 0.5 + 0.6 * -1.2, 0.8 * 0.7 + 1.1 * -0.4 + 0.6 * 0.9])
    np.testing.assert_allclose(score_codes(codes, table), scaling().score_of_log_odds(log_odds), atol=1e-5)


def test_default_reason_labels_read_as_text():
    assert default_reason_label("time_at_address") == "Time at address"
    assert default_reason_label("MonthsSinceArrears") == "Months since arrears"


def test_points_round_halves_away_from_zero_like_a_spreadsheet():
    # spreadsheets' ROUND takes 2.5 to 3 and -2.5 to -3 (numpy would give 2 and -2); the workbook
    # recomputes points with ROUND, so the tool rounds the same way (common practice, no source)
    from scorecard.points import round_half_away

    np.testing.assert_array_equal(round_half_away(np.array([2.5, -2.5, 0.49, 3.5, 4.5])), [3, -3, 0, 4, 5])
