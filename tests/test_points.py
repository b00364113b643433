"""Tests of scorecard/points.py: scaling, the points table, scoring and reasons."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from scorecard.classing import numeric_binning, categorical_binning
from scorecard.errors import LedgerError, ScorecardError
from scorecard.points import default_reason_label, points_table, scaling
from scorecard.rows import score_codes, score_histogram
from scorecard.scoring import Scorecard, reasons

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


def _table(decimals=0):
    coefficients = {"age": 0.8, "housing": 1.1, "enquiries": 0.6}
    woe = {"age": [-0.6, 0.1, 0.7], "housing": [-0.4, 0.5], "enquiries": [0.9, 0.0, -1.2, -0.3]}
    labels = {name: [f"{name}{i}" for i in range(len(values))] for name, values in woe.items()}
    return points_table(coefficients, 1.3, woe, labels, scaling(), decimals=decimals)


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


def test_score_is_the_sum_of_the_bins_points_for_every_row():
    rng = np.random.default_rng(1)
    table = _table()
    codes = np.column_stack([rng.integers(0, len(c.points), 5000) for c in table.characteristics])
    slow = [sum(c.points[codes[i, j]] for j, c in enumerate(table.characteristics)) for i in range(len(codes))]
    np.testing.assert_array_equal(score_codes(codes, table), slow)
    assert score_codes(codes, table).dtype == np.int64


def test_reasons_rank_the_points_lost_against_the_best_bin():
    table = _table()
    age, housing, enquiries = (c.points for c in table.characteristics)
    codes = np.array([[0, 0, 2], [2, 1, 0]])
    ranked = reasons(codes, table, count=3)
    lost = np.array([age.max() - age[0], housing.max() - housing[0], enquiries.max() - enquiries[2]])
    assert ranked[0].tolist() == list(np.argsort(-lost, kind="stable"))
    # the best bin everywhere costs nothing: no reasons
    assert ranked[1].tolist() == [-1, -1, -1]


def test_default_reason_labels_read_as_text():
    assert default_reason_label("time_at_address") == "Time at address"
    assert default_reason_label("MonthsSinceArrears") == "Months since arrears"


def test_score_histogram_counts_every_row_once():
    scores = np.array([500, 510, 500, 520, 510])
    good = np.array([True, False, True, False, False])
    bad = np.array([False, True, False, True, False])
    histogram = score_histogram(scores, good, bad, np.ones(5), sample="development")
    assert histogram.scores.tolist() == [500, 510, 520]
    assert histogram.goods.tolist() == [2, 0, 0]
    assert histogram.bads.tolist() == [0, 1, 1]
    assert histogram.others.tolist() == [0, 1, 0]


def test_scorecard_scores_a_frame_and_names_a_missing_column():
    binnings = (numeric_binning("age", [30, 50], has_missing=False),
                categorical_binning("housing", [("rent",), ("own",)], has_missing=False),
                numeric_binning("enquiries", [1, 2, 4], has_missing=False))
    card = Scorecard(_table(), binnings)
    frame = pd.DataFrame({"age": [25, 60], "housing": ["rent", "own"], "enquiries": [0, 5]})
    scored = card.score(frame, reason_count=2)
    assert list(scored.columns) == ["score", "pd", "reason_1", "reason_1_text", "reason_2", "reason_2_text"]
    expected = score_codes(np.array([[0, 0, 0], [2, 1, 3]]), card.table)
    assert scored["score"].tolist() == expected.tolist()
    with pytest.raises(LedgerError, match="column 'housing' of the scorecard is not in the ledger"):
        card.score(frame.drop(columns="housing"), source="new.csv")


def test_points_round_halves_away_from_zero_like_a_spreadsheet():
    # spreadsheets' ROUND takes 2.5 to 3 and -2.5 to -3 (numpy would give 2 and -2); the workbook
    # recomputes points with ROUND, so the tool rounds the same way (common practice, no source)
    from scorecard.points import round_half_away

    np.testing.assert_array_equal(round_half_away(np.array([2.5, -2.5, 0.49, 3.5, 4.5])), [3, -3, 0, 4, 5])
