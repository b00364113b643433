"""Tests of scorecard/scoring.py: a scorecard scores a frame by look-up and sum, with reasons."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from scorecard.classing import categorical_binning, numeric_binning
from scorecard.errors import LedgerError
from scorecard.rows import score_codes, score_units
from scorecard.scoring import Scorecard, probabilities, reasons

from tables import example_points_table as _table  # tests/tables.py


def test_score_is_the_sum_of_the_bins_points_for_every_row():
    rng = np.random.default_rng(1)
    table = _table()
    codes = np.column_stack([rng.integers(0, len(c.points), 5000) for c in table.characteristics])
    slow = [sum(c.points[codes[i, j]] for j, c in enumerate(table.characteristics)) for i in range(len(codes))]
    np.testing.assert_array_equal(score_codes(codes, table), slow)
    assert score_codes(codes, table).dtype == np.int64


def test_score_of_many_characteristics_looked_up_in_bundles_is_the_sum_of_their_points():
    # characteristics of 2 to 300 bins are looked up a few at a time (rows.coding.BUNDLE_ENTRIES): still the plain sum
    rng = np.random.default_rng(2)
    sizes = [2, 9, 7, 300, 3, 8, 9, 12, 5, 2, 40, 6]
    table = SimpleNamespace(decimals=0, characteristics=[
        SimpleNamespace(points=rng.integers(-60, 90, size).astype(float)) for size in sizes])
    codes = np.asfortranarray(np.column_stack([rng.integers(0, size, 3_000) for size in sizes]).astype(np.uint16))
    slow = [sum(int(c.points[codes[i, j]]) for j, c in enumerate(table.characteristics)) for i in range(len(codes))]
    np.testing.assert_array_equal(score_codes(codes, table), slow)


def test_probabilities_looked_up_per_score_equal_the_probability_of_each_row():
    # the probability is computed once per score in the rows' range and looked up: the same doubles, bit for bit
    table = _table(decimals=1)
    rng = np.random.default_rng(3)
    codes = np.column_stack([rng.integers(0, len(c.points), 20_000) for c in table.characteristics])
    units = score_units(codes, table)
    row_by_row = table.scaling.pd_of_score(score_codes(codes, table))
    assert probabilities(units, table).tobytes() == row_by_row.tobytes()
    assert probabilities(units[:1], table).tobytes() == row_by_row[:1].tobytes()


def test_probabilities_without_scipy_are_the_doubles_of_scipys_expit():
    # scoring computes 1 / (1 + e^x) with math.exp, the C library's exp that scipy.special.expit calls; the reference is
    # expit itself, bit for bit, on log-odds of every size (and past the largest double's exponent)
    from scipy import special

    from scorecard.scoring import _pd_of_log_odds

    log_odds = np.concatenate([np.random.default_rng(4).normal(0, 8, 100_000), [-800.0, 0.0, 709.7, 709.8, 800.0]])
    ours = np.array([_pd_of_log_odds(x) for x in log_odds.tolist()])
    assert ours.tobytes() == special.expit(-log_odds).tobytes()


def test_reasons_rank_the_points_lost_against_the_best_bin():
    table = _table()
    age, housing, enquiries = (c.points for c in table.characteristics)
    codes = np.array([[0, 0, 2], [2, 1, 0]])
    ranked = reasons(codes, table, count=3)
    lost = np.array([age.max() - age[0], housing.max() - housing[0], enquiries.max() - enquiries[2]])
    assert ranked[0].tolist() == list(np.argsort(-lost, kind="stable"))
    # the best bin everywhere costs nothing: no reasons
    assert ranked[1].tolist() == [-1, -1, -1]


@pytest.mark.parametrize("count", [1, 2, 3, 5])
def test_reasons_equal_a_sort_of_every_row_by_points_lost_then_position(count):
    # reference: each row's characteristics sorted by points lost (largest first, ties in table order), a loop over rows
    from scorecard.points import points_table

    from tables import scaling  # tests/tables.py

    rng = np.random.default_rng(7)
    woe = {f"c{i}": list(rng.choice([-0.5, 0.0, 0.5], size=4)) for i in range(5)}  # repeated values: many ties
    table = points_table({name: 1.0 for name in woe}, 0.2, woe, {n: [f"{n}{j}" for j in range(4)] for n in woe}, scaling())
    codes = rng.integers(0, 4, size=(400, 5))
    ranked = reasons(codes, table, count=count)
    for row, found in zip(codes, ranked):
        lost = [round(float(c.best - c.points[code])) for c, code in zip(table.characteristics, row)]
        expected = [j for j in sorted(range(5), key=lambda j: (-lost[j], j)) if lost[j] > 0][:count]
        assert found.tolist() == expected + [-1] * (min(count, 5) - len(expected))


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


def test_scores_with_decimals_are_the_nearest_double_to_their_decimal_value():
    # 0.1 + 0.2 as floats is 0.30000000000000004; summed as floats, 600.3 + 15.6 gave 615.9000000000001
    table = _table(decimals=1)
    codes = np.array([[i, j, k] for i in range(3) for j in range(2) for k in range(4)])
    scores = score_codes(codes, table)
    exact = [round(sum(float(c.points[code]) for c, code in zip(table.characteristics, row)), 1) for row in codes]
    assert scores.tolist() == exact  # Python's round(x, 1) is the double nearest the decimal value
    assert [repr(float(s)) for s in scores] == [f"{s:.1f}" for s in scores]  # no float noise in the text
    assert table.max_score == round(table.max_score, 1) and table.min_score == round(table.min_score, 1)
