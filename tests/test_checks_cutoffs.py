"""Tests of scorecard.checks.cutoffs: approvals and bad rates at candidate cut-offs."""

from __future__ import annotations

import numpy as np
import pytest

from scorecard.checks import cutoff_table
from scorecard.errors import ScorecardError

# Same sums in another order: rounding only.
EXACT_RTOL = 1e-12


def random_histogram(seed: int):
    rng = np.random.default_rng(seed)
    scores = np.arange(350, 750, 8)
    goods = rng.poisson(np.linspace(2, 40, scores.size))
    bads = rng.poisson(np.linspace(12, 1, scores.size))
    return scores, goods, bads


def test_cutoff_table_matches_a_loop_over_cutoffs():
    # Source: the definitions, applied at each cut-off with a mask "score >= cut-off" on the levels.
    scores, goods, bads = random_histogram(40)
    table = cutoff_table(scores, goods, bads)
    assert table.cutoffs.tolist() == scores.tolist()
    for row, cutoff in enumerate(scores):
        approved = scores >= cutoff
        n_goods, n_bads = goods[approved].sum(), bads[approved].sum()
        assert (table.goods_approved[row], table.bads_approved[row]) == (n_goods, n_bads)
        assert (table.goods_declined[row], table.bads_declined[row]) == (goods[~approved].sum(), bads[~approved].sum())
        total = goods.sum() + bads.sum()
        assert table.approval_rate[row] == pytest.approx((n_goods + n_bads) / total, rel=EXACT_RTOL)
        assert table.approved_bad_rate[row] == pytest.approx(n_bads / (n_goods + n_bads), rel=EXACT_RTOL)
        assert table.bads_declined_share[row] == pytest.approx(bads[~approved].sum() / bads.sum(), rel=EXACT_RTOL)


def test_the_lowest_cutoff_approves_everything_and_rates_move_one_way():
    scores, goods, bads = random_histogram(41)
    table = cutoff_table(scores, goods, bads)
    assert (table.approval_rate[0], table.bads_declined_share[0], table.goods_declined[0]) == (1.0, 0.0, 0.0)
    assert np.all(np.diff(table.approval_rate) <= 0) and np.all(np.diff(table.bads_declined_share) >= 0)


def test_step_spaces_cutoffs_from_the_lowest_score():
    # Cut-offs 500, 530, 560, 590 between levels: "score >= cut-off" approves from the next level up.
    table = cutoff_table([500, 550, 600], [10, 30, 60], [6, 3, 1], step=30)
    assert table.cutoffs.tolist() == [500, 530, 560, 590]
    assert table.bads_approved.tolist() == [10.0, 4.0, 1.0, 1.0]


def test_no_weight_approved_gives_a_missing_bad_rate():
    table = cutoff_table([1, 2, 3], [5, 5, 0], [5, 1, 0])
    assert np.isnan(table.approved_bad_rate[-1]) and table.approval_rate[-1] == 0.0


def test_table_view_and_read_only_arrays():
    table = cutoff_table([1, 2], [1, 1], [1, 1])
    assert list(table.to_frame().columns) == ["cutoff", "approval_rate", "approved_bad_rate", "goods_approved",
                                              "goods_declined", "bads_approved", "bads_declined", "bads_declined_share"]
    with pytest.raises(ValueError):
        table.approval_rate[0] = 0.5


def test_bad_input_is_rejected_with_a_clear_message():
    with pytest.raises(ScorecardError, match="step = 0"):
        cutoff_table([1, 2], [1, 1], [1, 1], step=0)
    with pytest.raises(ScorecardError, match="cutoff_table: scores must be strictly ascending"):
        cutoff_table([2, 1], [1, 1], [1, 1])
    with pytest.raises(ScorecardError, match="cutoff_table: the histogram has no goods"):
        cutoff_table([1, 2], [0, 0], [1, 1])
