"""Tests of scorecard/classing/: fine classing, the best classing, overrides and coding rows."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings, strategies as st

from scorecard.classing import (
    Binning, ClassLimits, binning_from_settings, categorical_binning, check_constraints, coarse_classing,
    fine_classing, interval_labels, keeps_shape, merge_alike_neighbours, neighbour_p_values, numeric_binning,
    best_classing, quantile_cuts, roundest_between,
)
from scorecard.classing.fine import ROUNDING_SHARE, distinct_weights, rounded_cuts
from scorecard.rows import code_rows, unseen_levels
from scorecard.terms import CATEGORICAL, NUMERIC
from scorecard.errors import ClassingError
from scorecard.evidence import information_value, woe_values

IV_ATOL = 1e-12  # the programme and the enumeration add the same floats in a different order
SHAPES = ["falls", "rises", "falls-then-rises", "rises-then-falls", "any"]
HYPOTHESIS = settings(max_examples=200, deadline=None, derandomize=True)


# ---------------------------------------------------------------------------------------------
# Coding rows


@given(
    cuts=st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=1, max_size=12, unique=True).map(sorted),
    values=st.lists(st.floats(-2e6, 2e6, allow_nan=False), min_size=1, max_size=60),
)
@HYPOTHESIS
def test_numeric_codes_equal_pandas_cut_with_the_same_edges(cuts, values):
    # reference: pandas.cut with right=False gives the same left-closed intervals [c_i, c_i+1)
    binning = numeric_binning("x", cuts, has_missing=False)
    codes = code_rows(np.array(values), binning)
    expected = pd.cut(values, [-np.inf, *cuts, np.inf], right=False, labels=False)
    np.testing.assert_array_equal(codes, np.asarray(expected, dtype=int))


@given(
    cuts=st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=1, max_size=12, unique=True).map(sorted),
    values=st.lists(st.integers(-2_000_000, 2_000_000), min_size=1, max_size=60),
    dtype=st.sampled_from(["int64", "int32"]),
    special=st.sampled_from([-1.0, 999.0, 2.5]),
)
@HYPOTHESIS
def test_whole_numbers_are_coded_in_their_own_dtype_as_the_same_values_read_as_floats(cuts, values, dtype, special):
    # a column of whole numbers is compared with the cuts as integers (x >= c exactly when x >= ceil(c));
    # the reference is the column read as floats, as a ledger read in batches reads it
    values = [v if v % 7 else int(special) for v in values]
    binning = numeric_binning("x", cuts, special_values=[special], has_missing=False)
    whole = code_rows(pd.Series(np.array(values, dtype=dtype)), binning)
    floats = code_rows(pd.Series(np.array(values, dtype=float)), binning)
    expected = np.asarray(pd.cut(values, [-np.inf, *cuts, np.inf], right=False, labels=False), dtype=int)
    expected[np.array(values, dtype=float) == special] = binning.special_bins[0]
    np.testing.assert_array_equal(whole, expected)
    np.testing.assert_array_equal(floats, expected)
    assert whole.dtype == np.uint8


def test_whole_numbers_beyond_two_to_the_53_are_coded_as_the_doubles_they_read_as():
    # 2**54 - 1 reads as the double 2**54: coded as a float column would code it, so streamed and in-memory reads agree
    binning = numeric_binning("x", [2.0**54], has_missing=False)
    np.testing.assert_array_equal(code_rows(pd.Series(np.array([2**54 - 1, 5], dtype=np.int64)), binning), [1, 0])


def test_missing_and_special_values_go_to_their_own_bins():
    binning = numeric_binning("months", [6, 12], special_values=[-1, 999], special_meanings=["no record"])
    # a special value reads as its meaning, never as a bare code; one without a meaning says so
    assert binning.labels == ("under 6", "6 to under 12", "12 and over", "no record", "code 999 (meaning not given)",
                              "missing")
    codes = code_rows(pd.Series([0, 6, 11.99, 12, -1, 999, None, -2]), binning)
    np.testing.assert_array_equal(codes, [0, 1, 1, 2, 3, 4, 5, 0])
    assert codes.dtype == np.uint8


def test_unseen_levels_go_to_the_unseen_bin_and_are_counted():
    binning = categorical_binning("housing", [("own",), ("rent", "other")], has_missing=True)
    binning = Binning(**{**binning.__dict__, "unseen_bin": 1})
    values = pd.Series(["own", "rent", "boat", None, "other", "boat"])
    np.testing.assert_array_equal(code_rows(values, binning), [0, 1, 1, 2, 1, 1])
    assert unseen_levels(values, binning) == {"boat": 2}


def test_text_held_in_arrow_is_coded_as_the_same_text_held_as_python_objects():
    # pandas 3 reads text as Arrow strings, which are looked up among the levels in Arrow; the reference is the
    # same values as Python objects (factorized); two pieces joined make a column of two Arrow chunks
    binning = categorical_binning("housing", [("own",), ("rent", "other")], has_missing=True)
    binning = Binning(**{**binning.__dict__, "unseen_bin": 0})
    rng = np.random.default_rng(8)
    arrow_text = pd.StringDtype("pyarrow", na_value=np.nan)
    pieces = [pd.Series(rng.choice(np.array(["own", "rent", "other", "boat", "", "Own", None], dtype=object), n),
                        dtype=arrow_text) for n in (3_000, 2_000)]
    for values in (pieces[0], pd.concat(pieces, ignore_index=True)):
        assert values.dtype.storage == "pyarrow"
        np.testing.assert_array_equal(code_rows(values, binning), code_rows(values.astype(object), binning))
        assert unseen_levels(values, binning) == unseen_levels(values.astype(object), binning)
        assert set(unseen_levels(values, binning)) == {"boat", "", "Own"}
    known = pd.Series(["own", "rent", None], dtype=arrow_text)
    np.testing.assert_array_equal(code_rows(known, binning), [0, 1, 2])
    assert unseen_levels(known, binning) == {}


def test_numbers_coded_block_by_block_equal_pandas_cut_with_special_and_missing_values():
    # more rows than one block (rows.coding.BLOCK_ROWS), and a last block shorter than the others
    rng = np.random.default_rng(9)
    values = rng.normal(0, 10, 150_001).round(1)
    values[::97] = np.nan
    values[::89] = -1.0
    binning = numeric_binning("x", [-5.0, 0.0, 2.5, 10.0], special_values=[-1.0], has_missing=True)
    expected = np.asarray(pd.cut(values, [-np.inf, -5.0, 0.0, 2.5, 10.0, np.inf], right=False, labels=False))
    expected[values == -1.0] = binning.special_bins[0]
    expected[np.isnan(values)] = binning.missing_bin
    np.testing.assert_array_equal(code_rows(pd.Series(values), binning), expected.astype(int))


def test_integer_and_float_levels_are_the_same_level():
    binning = categorical_binning("region", [("1",), ("2", "3")], has_missing=False)
    np.testing.assert_array_equal(code_rows(pd.Series([1.0, 2.0, 3.0]), binning), [0, 1, 1])
    np.testing.assert_array_equal(code_rows(pd.Series([1, 2, 3]), binning), [0, 1, 1])


def test_missing_goes_to_the_unseen_bin_when_development_had_none():
    binning = Binning(**{**numeric_binning("x", [5], has_missing=False).__dict__, "unseen_bin": 1})
    assert binning.missing_bin == -1
    np.testing.assert_array_equal(code_rows(np.array([1.0, np.nan]), binning), [0, 1])


# ---------------------------------------------------------------------------------------------
# Fine classing


def test_a_bin_that_holds_missing_or_special_values_says_so_in_its_label():
    binning = numeric_binning("months", [9, 24], special_values=[-1, 999], special_bins=[0, None],
                              special_meanings=["no delinquency on record", "no enquiry on record"], missing_bin=0)
    assert binning.labels == ("under 9 or no delinquency on record or missing", "9 to under 24", "24 and over",
                              "no enquiry on record")
    joined = categorical_binning("home", [["own"], ["rent", "other"]], missing_bin=1)
    assert joined.labels == ("own", "rent, other or missing")
    # the classing a settings file fixes reads the same way
    fixed = binning_from_settings("months", NUMERIC, cuts=[9], special_values=[-1], specials=[2], missing=1,
                                  special_meanings=["no record"])
    assert fixed.labels == ("under 9 or missing", "9 and over or no record")


def test_whole_numbers_read_as_whole_numbers():
    # counts and months: '0', '1', '2 to 4', '5 and over', not 'under 1', '1 to under 2'
    binning = numeric_binning("enquiries", [1, 2, 5], whole_numbers=True, lowest=0, has_missing=False)
    assert binning.labels == ("0", "1", "2 to 4", "5 and over")
    assert numeric_binning("age", [25, 40], whole_numbers=True, lowest=18, has_missing=False).labels == (
        "18 to 24", "25 to 39", "40 and over")
    assert interval_labels([3], whole_numbers=True) == ["2 or less", "3 and over"]  # the lowest value unknown
    # a cut between whole numbers is not a whole number: the intervals then read as intervals
    assert interval_labels([2.5], whole_numbers=True, lowest=0) == ["under 2.5", "2.5 and over"]


def test_quantile_cuts_leave_no_empty_bin_and_are_round_numbers():
    rng = np.random.default_rng(3)
    x = np.round(rng.lognormal(8, 1, size=5000), 2)
    cuts = quantile_cuts(x, np.ones_like(x), max_bins=20)
    assert 15 <= len(cuts) <= 19
    counts = np.bincount(np.searchsorted(cuts, x, side="right"), minlength=len(cuts) + 1)
    assert counts.min() > 0
    # each bin holds about a twentieth of the rows (common practice, no source: equal-frequency bins)
    assert counts.max() / len(x) < 0.12
    # the data have two decimals; the roundest number in each gap needs at most one
    assert all(round(c, 1) == c for c in cuts)


def test_a_cut_point_is_rounded_as_far_as_half_a_percent_of_the_rows_allows():
    # hand-worked: 10,000 values 0.00 to 99.99, each 0.01% of the rows; the quantile cut 16.455 rounded
    # to one digit (20) would move 3.55% of the rows, to two digits (16) 0.455%: within 0.5%, so 16
    distinct = np.round(np.arange(10_000) * 0.01, 2)
    mass = np.ones(10_000)
    assert rounded_cuts([16.455], distinct, mass, share=0.005) == (16.0,)
    assert rounded_cuts([16.455], distinct, mass, share=0.004) == (16.5,)  # 16 moves 0.455%: too far
    assert rounded_cuts([16.455], distinct, mass, share=0.0) == (16.455,)  # no row may move: as it was


@pytest.mark.parametrize("seed", range(6))
def test_rounding_moves_no_row_more_than_one_bin_and_at_most_the_stated_share_across_each_cut(seed):
    # the one rule for every characteristic: each cut carries at most ROUNDING_SHARE of the development
    # rows (by weight) into the bin beside it, and no row changes by more than one bin (our rule)
    rng = np.random.default_rng(seed)
    decimals = seed % 3
    x = np.round(rng.lognormal(6 + seed, 0.8, 6000), decimals)
    weights = rng.choice([1.0, 2.5], size=6000)
    distinct, inverse = np.unique(x, return_inverse=True)
    mass = np.bincount(inverse, weights=weights)
    exact = quantile_cuts(x, weights, max_bins=20, rounding_share=0.0)
    rounded = quantile_cuts(x, weights, max_bins=20)
    assert rounded == rounded_cuts(exact, distinct, mass, share=ROUNDING_SHARE)
    assert len(rounded) == len(exact)  # on these data no cut had to go
    assert rounded != exact  # something was rounded
    before, after = np.searchsorted(exact, x, side="right"), np.searchsorted(rounded, x, side="right")
    assert np.abs(after - before).max() <= 1
    for cut, (old, new) in enumerate(zip(exact, rounded)):
        moved = weights[(x >= min(old, new)) & (x < max(old, new))].sum()
        assert moved <= ROUNDING_SHARE * weights.sum() + 1e-9, (cut, old, new)
    assert np.all(np.bincount(after, minlength=len(rounded) + 1) > 0)  # no bin is empty


@pytest.mark.parametrize("values", [
    np.array([30.0, 18.0, 45.0, 18.0, 30.0, 71.0]),  # ages: counted per value
    np.arange(-50.0, 50.0).repeat(3)[::-1],  # negative whole numbers, in falling order
    np.array([0.0, -0.0, 3.0, 2.0, 2.0]),  # zero of both signs
    np.array([1.0, 1e9, 2.0]),  # whole numbers spread far wider than the rows: sorted
    np.array([1.5, 2.0, 1.5, 7.25]),  # not whole numbers: sorted
    np.array([2.0**60, 2.0**60 + 2**10, 2.0**60]),  # whole numbers beyond 2**53
])
def test_distinct_values_and_counts_are_the_same_counted_or_sorted(values):
    """Whole numbers counted per value give what a sort and its run lengths give, to the bit."""
    distinct, mass = distinct_weights(values, np.ones(len(values)))
    expected, counts = np.unique(values, return_counts=True)
    assert distinct.tolist() == expected.tolist() and distinct.dtype == expected.dtype
    assert mass.tolist() == counts.astype(float).tolist()


def test_quantile_cuts_on_few_distinct_values_use_each_value():
    x = np.repeat([0.0, 1, 2, 3], [500, 300, 150, 50])
    assert quantile_cuts(x, np.ones_like(x), max_bins=20) == (1.0, 2.0, 3.0)


@pytest.mark.parametrize(("low", "high", "expected"), [
    (1523.37, 1600.2, 1600.0), (0.0, 1.0, 1.0), (5.0, 5000.0, 1000.0), (-1500.0, -1200.0, -1400.0),
    (0.123, 0.1231, 0.1231), (-0.5, 0.0, 0.0), (99.0, 100.0, 100.0), (12.0, 13.0, 13.0),
])
def test_roundest_between(low, high, expected):
    assert roundest_between(low, high) == expected
    assert low < roundest_between(low, high) <= high


def test_fine_classing_pools_rare_levels():
    values = pd.Series(["a"] * 500 + ["b"] * 480 + ["c"] * 15 + ["d"] * 5)
    fine = fine_classing(values, np.ones(len(values)), name="x", kind=CATEGORICAL, rare_level_share=0.02)
    assert fine.classes == (("a",), ("b",), ("c", "d"))
    assert fine.labels[-1] == "rare levels (2)"


def test_fine_classing_weights_the_quantiles():
    # hand-worked: total weight 50 + 10·50 = 550; the weighted median (275) is first reached at
    # x = 72 (50 + 10·23 = 280), so the cut sits between 72 and 73
    x = np.arange(100, dtype=float)
    weights = np.where(x >= 50, 10.0, 1.0)
    assert quantile_cuts(x, weights, max_bins=2) == (73.0,)
    assert quantile_cuts(x, np.ones_like(x), max_bins=2) == (50.0,)


# ---------------------------------------------------------------------------------------------
# The best classing against brute force


def _all_partitions(n):
    for k in range(n):
        for inner in itertools.combinations(range(1, n), k):
            yield (0, *inner)


def _moves_as_asked(woe, shape):
    """The oracle of a shape, step by step: WoE rises where the bad rate falls (and the other way round)."""
    steps = [1 if b > a else -1 if b < a else 0 for a, b in zip(woe, woe[1:])]
    if shape == "any":
        return True
    if shape in ("falls", "rises"):
        return all(step == (1 if shape == "falls" else -1) for step in steps)
    first, second = (1, -1) if shape == "falls-then-rises" else (-1, 1)
    # one bend after any number of steps (none, or all of them: the bend at an end)
    return any(all(step == first for step in steps[:bend]) and all(step == second for step in steps[bend:])
               for bend in range(len(steps) + 1))


def _class_counts(starts, goods, bads):
    ends = [*starts[1:], len(goods)]
    g = np.array([goods[s:e].sum() for s, e in zip(starts, ends)])
    b = np.array([bads[s:e].sum() for s, e in zip(starts, ends)])
    return g, b


def _meets(starts, goods, bads, limits, shape):
    g, b = _class_counts(starts, goods, bads)
    if len(starts) > limits.max_classes:
        return False
    if ((g + b) < limits.min_rows - 1e-9).any() or (g < limits.min_goods).any() or (b < limits.min_bads).any():
        return False
    return _moves_as_asked(woe_values(g, b, goods.sum(), bads.sum()), shape)


def _brute_force(goods, bads, limits, shape):
    best, best_iv = None, -np.inf
    for starts in _all_partitions(len(goods)):
        if not _meets(starts, goods, bads, limits, shape):
            continue
        g, b = _class_counts(starts, goods, bads)
        iv = information_value(g, b, total_goods=goods.sum(), total_bads=bads.sum())
        if iv > best_iv + 1e-15:
            best, best_iv = starts, iv
    return best, best_iv


def _partition_iv(starts, goods, bads):
    ends = [*starts[1:], len(goods)]
    g = np.array([goods[s:e].sum() for s, e in zip(starts, ends)])
    b = np.array([bads[s:e].sum() for s, e in zip(starts, ends)])
    return information_value(g, b, total_goods=goods.sum(), total_bads=bads.sum())


@given(
    counts=st.lists(st.tuples(st.integers(0, 60), st.integers(0, 20)), min_size=1, max_size=9),
    min_rows=st.integers(0, 40), min_goods=st.integers(0, 10), min_bads=st.integers(0, 5),
    max_classes=st.integers(2, 6), shape=st.sampled_from(SHAPES),
)
@HYPOTHESIS
def test_best_classing_equals_brute_force_enumeration(counts, min_rows, min_goods, min_bads, max_classes, shape):
    # the exact optimum of W. D. Fisher, "On grouping for maximum homogeneity", JASA 1958, with
    # constraints added (the single-bend shapes as one more state), checked against enumerating
    # every partition of the ordered bins and keeping those the step-by-step oracle accepts
    goods = np.array([c[0] for c in counts], float)
    bads = np.array([c[1] for c in counts], float)
    if goods.sum() == 0 or bads.sum() == 0:
        return
    limits = ClassLimits(min_rows, min_goods, min_bads, max_classes)
    starts = best_classing(goods, bads, total_goods=goods.sum(), total_bads=bads.sum(), limits=limits, shape=shape)
    expected, expected_iv = _brute_force(goods, bads, limits, shape)
    if expected is None:
        assert starts == (0,)
    else:
        assert _meets(starts, goods, bads, limits, shape)
        assert _partition_iv(starts, goods, bads) == pytest.approx(expected_iv, abs=IV_ATOL)


@given(woe=st.lists(st.integers(-3, 3), min_size=1, max_size=7), shape=st.sampled_from(SHAPES + ["from-data"]))
@HYPOTHESIS
def test_keeps_shape_equals_the_step_by_step_oracle(woe, shape):
    expected = (any(_moves_as_asked(woe, option) for option in SHAPES[:4]) if shape == "from-data"
                else _moves_as_asked(woe, shape))
    assert keeps_shape(np.array(woe, float), shape) == expected


def test_a_bend_classing_finds_the_bend_where_the_data_turn():
    # bad rates 30, 20, 10, 5, 10, 20, 30 % over seven bins of 100 rows: falls, then rises; with
    # no limits, one way can keep at most a falling or a rising chain, the bend keeps every bin
    bads = np.array([30.0, 20, 10, 5, 10, 20, 30])
    goods = 100 - bads
    totals = dict(total_goods=goods.sum(), total_bads=bads.sum(), limits=ClassLimits(max_classes=8))
    assert best_classing(goods, bads, shape="falls-then-rises", **totals) == (0, 1, 2, 3, 4, 5, 6)
    assert len(best_classing(goods, bads, shape="falls", **totals)) < 7
    assert best_classing(goods, bads, shape="rises-then-falls", **totals) != (0, 1, 2, 3, 4, 5, 6)


def test_unconstrained_classing_keeps_every_bin_of_a_monotone_sequence():
    # merging bins never raises IV (it is a divergence), so with no limits nothing is merged
    goods = np.array([10.0, 20, 30, 40, 50])
    bads = np.array([10.0, 8, 6, 4, 2])
    starts = best_classing(goods, bads, total_goods=150, total_bads=30, limits=ClassLimits(max_classes=8))
    assert starts == (0, 1, 2, 3, 4)


def test_classing_respects_max_classes():
    goods = np.arange(1, 11, dtype=float) * 10
    bads = np.full(10, 10.0)
    starts = best_classing(goods, bads, total_goods=goods.sum(), total_bads=bads.sum(), limits=ClassLimits(max_classes=3))
    assert len(starts) == 3


# ---------------------------------------------------------------------------------------------
# Coarse classing


def _synthetic(n=6000, seed=11):
    rng = np.random.default_rng(seed)
    x = rng.gamma(2.0, 50.0, size=n)
    p_bad = 1 / (1 + np.exp(-(-1.0 - 0.01 * x)))
    bad = rng.random(n) < p_bad
    x[rng.random(n) < 0.05] = np.nan
    x[rng.random(n) < 0.04] = -1
    return x, bad


def _fine_counts(fine, x, bad):
    codes = code_rows(x, fine)
    goods = np.bincount(codes[~bad], minlength=fine.n_bins).astype(float)
    bads = np.bincount(codes[bad], minlength=fine.n_bins).astype(float)
    return goods, bads


def test_coarse_classing_is_monotone_and_meets_every_limit():
    x, bad = _synthetic()
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC, special_values=[-1])
    goods, bads = _fine_counts(fine, x, bad)
    result = coarse_classing(fine, goods, bads, min_class_share=0.05, min_goods=10, min_bads=10, max_classes=8)
    binning = result.binning
    assert binning.bad_rate_shape == "falls"  # higher x, fewer bads in this invented process
    coarse_goods = np.bincount(result.fine_to_coarse, weights=goods, minlength=binning.n_bins)
    coarse_bads = np.bincount(result.fine_to_coarse, weights=bads, minlength=binning.n_bins)
    woe = woe_values(coarse_goods, coarse_bads, goods.sum(), bads.sum())
    assert (np.diff(woe[: binning.n_chain]) > 0).all()
    assert check_constraints(binning, coarse_goods, coarse_bads, min_class_share=0.05, min_goods=10, min_bads=10,
                             max_classes=8, bad_rate_shape="falls") == []
    assert "missing" in binning.labels and "code -1 (meaning not given)" in binning.labels
    assert result.iv == pytest.approx(information_value(coarse_goods, coarse_bads))
    # coding the rows with the coarse binning gives the counts aggregated from the fine bins
    codes = code_rows(x, binning)
    np.testing.assert_array_equal(np.bincount(codes[~bad], minlength=binning.n_bins), coarse_goods)


@given(seed=st.integers(0, 10_000), share=st.sampled_from([0.02, 0.05, 0.1]), classes=st.integers(2, 8))
@settings(max_examples=30, deadline=None, derandomize=True)
def test_coarse_classing_property_monotone_and_within_limits(seed, share, classes):
    x, bad = _synthetic(n=2000, seed=seed)
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC, special_values=[-1])
    goods, bads = _fine_counts(fine, x, bad)
    result = coarse_classing(fine, goods, bads, min_class_share=share, min_goods=5, min_bads=5, max_classes=classes)
    binning = result.binning
    if binning.n_chain == 1:
        return
    codes = code_rows(x, binning)
    g = np.bincount(codes[~bad], minlength=binning.n_bins).astype(float)
    b = np.bincount(codes[bad], minlength=binning.n_bins).astype(float)
    chain_woe = woe_values(g, b, g.sum(), b.sum())[: binning.n_chain]
    assert (np.diff(chain_woe) > 0).all() or (np.diff(chain_woe) < 0).all() or result.notes
    assert binning.n_chain <= classes
    rows = (g + b)[: binning.n_chain]
    assert (rows >= share * (g.sum() + b.sum()) - 1e-9).all()
    # counts over bins sum to the sample totals
    assert g.sum() == (~bad).sum() and b.sum() == bad.sum()


def test_small_missing_bin_joins_the_class_with_the_nearest_woe():
    x, bad = _synthetic()
    x[np.isnan(x)] = 5.0
    x[:20] = np.nan  # 20 rows: too small to stand
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC)
    goods, bads = _fine_counts(fine, x, bad)
    result = coarse_classing(fine, goods, bads, min_special_share=0.01)
    assert "missing" not in result.binning.labels
    assert 0 <= result.binning.missing_bin < result.binning.n_chain
    assert any("missing bin (20 rows" in note for note in result.notes)


def test_categorical_levels_are_classed_in_bad_rate_order():
    rng = np.random.default_rng(5)
    levels = np.array(list("abcdefgh"))
    rate = dict(zip(levels, [0.02, 0.30, 0.05, 0.25, 0.10, 0.15, 0.04, 0.28]))
    values = rng.choice(levels, size=8000)
    bad = rng.random(8000) < np.vectorize(rate.get)(values)
    fine = fine_classing(pd.Series(values), np.ones(8000), name="c", kind=CATEGORICAL)
    goods, bads = _fine_counts(fine, pd.Series(values), bad)
    binning = coarse_classing(fine, goods, bads, max_classes=4).binning
    assert binning.n_chain <= 4
    order = [level for levels in binning.classes for level in levels]
    bad_rates = [rate[level] for level in order]
    assert bad_rates == sorted(bad_rates, reverse=True)  # worst first: WoE ascends along the chain


def test_levels_pooled_as_rare_are_named_in_a_note_with_the_class_they_went_to():
    rng = np.random.default_rng(8)
    values = pd.Series(rng.choice(["a", "b", "c", "d", "e"], size=6000, p=[0.5, 0.45, 0.03, 0.012, 0.008]))
    bad = rng.random(6000) < np.where(values == "a", 0.05, 0.2)
    fine = fine_classing(values, np.ones(6000), name="district", kind=CATEGORICAL, rare_level_share=0.02)
    assert fine.labels[-1] == "rare levels (2)"
    goods, bads = _fine_counts(fine, values, bad)
    result = coarse_classing(fine, goods, bads, min_class_share=0.01, min_goods=1, min_bads=1)
    home = next(i for i, levels in enumerate(result.binning.classes) if "d" in levels)
    assert f"'district': 2 levels too rare to class on their own (d, e; each under classing.rare_level_share of " \
           f"the development rows) were pooled into one bin; they are in class {home + 1} ({result.binning.labels[home]})." \
        in result.notes


# ---------------------------------------------------------------------------------------------
# Overrides


def test_override_cuts_are_used_as_given_and_breaks_are_reported():
    binning = binning_from_settings("x", NUMERIC, cuts=[10, 20], special_values=[-1], specials=["own"], missing=2)
    assert binning.cuts == (10.0, 20.0)
    assert binning.missing_bin == 1
    assert binning.labels == ("under 10", "10 to under 20 or missing", "20 and over", "code -1 (meaning not given)")
    goods = np.array([5.0, 50, 500, 40])
    bads = np.array([5.0, 20, 10, 30])
    problems = check_constraints(binning, goods, bads, min_class_share=0.05, min_goods=10, min_bads=10,
                                 max_classes=8, bad_rate_shape="falls")
    assert any("class 1 (under 10)" in p and "5 goods" in p for p in problems)


def test_override_class_number_out_of_range_is_an_error():
    with pytest.raises(ClassingError, match="characteristics.x.missing = 4: there are only 3 classes"):
        binning_from_settings("x", NUMERIC, cuts=[1, 2], missing=4)


def test_override_of_the_wrong_kind_is_an_error():
    with pytest.raises(ClassingError, match="'x' is categorical: fix its classing with classes"):
        binning_from_settings("x", CATEGORICAL, cuts=[1, 2])


def test_special_value_absent_in_development_goes_to_the_unseen_bin():
    binning = binning_from_settings("x", NUMERIC, cuts=[1], special_values=[-1, 999], present_specials=[-1])
    assert binning.special_bins == (2, -1)
    assert binning.labels == ("under 1", "1 and over", "code -1 (meaning not given)", "missing")


def test_binning_round_trips_through_plain_values():
    binning = binning_from_settings("x", NUMERIC, cuts=[1.5, 7], special_values=[-1], missing=1)
    assert Binning.from_dict("x", binning.to_dict()) == binning
    assert math.isclose(binning.cuts[0], 1.5)


@pytest.mark.parametrize("shape, sign", [("falls", -1), ("rises", 1)])
def test_a_bad_rate_shape_is_how_the_bad_rate_moves_as_the_value_grows(shape, sign):
    # the words are the analyst's: 'falls' is a bad rate that falls from class to class as the
    # value grows (so a WoE that rises), whatever the data; 'rises' the other way round
    x, bad = _synthetic()
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC, special_values=[-1])
    goods, bads = _fine_counts(fine, x, bad)
    binning = coarse_classing(fine, goods, bads, min_class_share=0.02, min_goods=5, min_bads=5, max_classes=8,
                              bad_rate_shape=shape).binning
    codes = code_rows(x, binning)
    chain = binning.n_chain
    bad_rate = np.bincount(codes, weights=bad, minlength=binning.n_bins)[:chain] / np.bincount(codes, minlength=binning.n_bins)[:chain]
    assert binning.bad_rate_shape == shape
    if chain > 1:
        assert (np.sign(np.diff(bad_rate)) == sign).all()


def test_from_data_picks_the_shape_the_data_have():
    x, bad = _synthetic()  # an invented process in which the bad rate falls as x grows
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC, special_values=[-1])
    goods, bads = _fine_counts(fine, x, bad)
    chosen = coarse_classing(fine, goods, bads, bad_rate_shape="from-data").binning
    assert chosen.bad_rate_shape == "falls" and chosen.n_chain > 2


# ---------------------------------------------------------------------------------------------
# Single-bend shapes in the coarse classing


def _bent(n=8000, seed=21, bend=1.0):
    """Invented process: the bad rate falls as x grows to 50, then rises again (one bend); ``bend=-1``
    turns it over (rises, then falls)."""
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 100, size=n)
    p_bad = 1 / (1 + np.exp(-(-2.0 + bend * (0.0012 * (x - 50) ** 2 - 1.0))))
    return x, rng.random(n) < p_bad


def _class_bad_rates(binning, x, bad):
    codes = code_rows(x, binning)
    chain = binning.n_chain
    return np.bincount(codes, weights=bad, minlength=binning.n_bins)[:chain] / np.bincount(codes, minlength=binning.n_bins)[:chain]


def test_from_data_takes_a_bend_where_it_buys_a_clear_gain():
    x, bad = _bent()
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC)
    goods, bads = _fine_counts(fine, x, bad)
    result = coarse_classing(fine, goods, bads, bad_rate_shape="from-data")
    assert result.binning.bad_rate_shape == "falls-then-rises"
    one_way = max(coarse_classing(fine, goods, bads, bad_rate_shape=shape).iv for shape in ("falls", "rises"))
    assert result.iv > 1.1 * one_way  # more than bend_min_gain (0.1) above the best one-way IV
    assert any("so from-data takes it" in note for note in result.notes)
    # counted on the rows: the class bad rates fall to one class and rise after it
    steps = np.sign(np.diff(_class_bad_rates(result.binning, x, bad)))
    bend = int(np.argmax(steps > 0))
    assert 0 < bend < len(steps) and (steps[:bend] < 0).all() and (steps[bend:] > 0).all()


def test_from_data_keeps_one_way_when_the_bend_buys_too_little():
    x, bad = _bent()
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC)
    goods, bads = _fine_counts(fine, x, bad)
    assert coarse_classing(fine, goods, bads, bend_min_gain=1e6).binning.bad_rate_shape in ("falls", "rises")
    # and on a process whose bad rate only falls, the default never bends
    x, bad = _synthetic()
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC, special_values=[-1])
    goods, bads = _fine_counts(fine, x, bad)
    assert coarse_classing(fine, goods, bads).binning.bad_rate_shape == "falls"


@pytest.mark.parametrize("shape, first, second", [("falls-then-rises", -1, 1), ("rises-then-falls", 1, -1)])
def test_a_single_bend_shape_asked_for_is_kept_by_the_class_bad_rates(shape, first, second):
    x, bad = _bent(bend=1.0 if shape == "falls-then-rises" else -1.0)
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC)
    goods, bads = _fine_counts(fine, x, bad)
    binning = coarse_classing(fine, goods, bads, bad_rate_shape=shape).binning
    assert binning.bad_rate_shape == shape
    # counted on the rows: the class bad rates move the first way, turn once, and move the other way
    steps = np.sign(np.diff(_class_bad_rates(binning, x, bad)))
    turn = int(np.argmax(steps != first))
    assert 0 < turn < len(steps) and (steps[:turn] == first).all() and (steps[turn:] == second).all()


def test_a_fixed_classing_with_a_bend_breaks_a_one_way_shape_only():
    binning = binning_from_settings("x", NUMERIC, cuts=[10, 20], has_missing=False)
    goods = np.array([60.0, 90, 60])
    bads = np.array([40.0, 10, 40])  # bad rates 40, 10, 40 %: falls, then rises
    limits = dict(min_class_share=0.05, min_goods=10, min_bads=10, max_classes=8)
    assert any("asks that the bad rate falls as the value grows" in p
               for p in check_constraints(binning, goods, bads, bad_rate_shape="falls", **limits))
    assert check_constraints(binning, goods, bads, bad_rate_shape="falls-then-rises", **limits) == []
    assert check_constraints(binning, goods, bads, bad_rate_shape="from-data", **limits) == []
    assert check_constraints(binning, goods, bads, bad_rate_shape="rises-then-falls", **limits) != []


# ---------------------------------------------------------------------------------------------
# Merging neighbouring classes that do not differ significantly

P_VALUE_RTOL = 1e-9  # the same statistic computed two ways


@given(cells=st.lists(st.integers(0, 400), min_size=4, max_size=4))
@settings(max_examples=50, deadline=None, derandomize=True)
def test_neighbour_p_values_equal_scipys_likelihood_ratio_test(cells):
    # reference: scipy.stats.chi2_contingency with lambda_="log-likelihood" (the G-test), no continuity correction
    stats = pytest.importorskip("scipy.stats")
    table = np.array(cells, float).reshape(2, 2)
    if (table.sum(axis=0) == 0).any() or (table.sum(axis=1) == 0).any():
        return  # scipy refuses a table with an empty row or column; ours gives p = 1 (nothing to tell apart)
    expected = stats.chi2_contingency(table, correction=False, lambda_="log-likelihood").pvalue
    assert neighbour_p_values(table[:, 0], table[:, 1])[0] == pytest.approx(expected, rel=P_VALUE_RTOL)


def test_neighbours_that_do_not_differ_are_merged_the_least_different_first():
    # bad rates 10 %, 11 %, 30 % and 31 % in four classes of 400 rows: 10 against 11 % and 30 against
    # 31 % are far from significant, 10.5 against 30.5 % is not chance (hand-worked: G² ≈ 102)
    n_bads = np.array([40.0, 44, 120, 124])
    n_goods = 400 - n_bads
    assert merge_alike_neighbours((0, 1, 2, 3), n_goods, n_bads, merge_p=0.05) == (0, 2)
    assert merge_alike_neighbours((0, 1, 2, 3), n_goods, n_bads, merge_p=0.0) == (0, 1, 2, 3)


@given(seed=st.integers(0, 10_000), merge_p=st.sampled_from([0.01, 0.05, 0.2]), bend=st.sampled_from([0.0, 1.0]))
@settings(max_examples=20, deadline=None, derandomize=True)
def test_merged_neighbours_of_the_result_differ_significantly(seed, merge_p, bend):
    # every pair of neighbouring classes the tool proposes, counted again on the rows, differs at merge_p
    # by scipy's likelihood-ratio test; a monotone process (bend 0) and a bent one (bend 1)
    stats = pytest.importorskip("scipy.stats")
    x, bad = _synthetic(n=3000, seed=seed) if bend == 0 else _bent(n=3000, seed=seed)
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC, special_values=[-1])
    goods, bads = _fine_counts(fine, x, bad)
    result = coarse_classing(fine, goods, bads, min_class_share=0.02, min_goods=5, min_bads=5, merge_p=merge_p)
    codes = code_rows(x, result.binning)
    chain = result.binning.n_chain
    class_bads = np.bincount(codes, weights=bad, minlength=result.binning.n_bins)[:chain]
    class_goods = np.bincount(codes, minlength=result.binning.n_bins)[:chain] - class_bads
    for k in range(chain - 1):
        table = np.array([[class_goods[k], class_bads[k]], [class_goods[k + 1], class_bads[k + 1]]])
        assert stats.chi2_contingency(table, correction=False, lambda_="log-likelihood").pvalue < merge_p


def test_merging_says_how_many_classes_and_how_much_iv_it_cost():
    x, bad = _synthetic()
    fine = fine_classing(x, np.ones(len(x)), name="x", kind=NUMERIC, special_values=[-1])
    goods, bads = _fine_counts(fine, x, bad)
    unmerged = coarse_classing(fine, goods, bads, merge_p=0.0)
    merged = coarse_classing(fine, goods, bads, merge_p=0.05)
    assert unmerged.merging is None and merged.merging is not None
    record = merged.merging
    assert record.classes_before == unmerged.binning.n_chain > record.classes_after == merged.binning.n_chain
    # merging classes never raises an IV (a divergence: joining cells loses information)
    assert record.iv_before == pytest.approx(unmerged.iv, rel=1e-12) and record.iv_after == merged.iv < unmerged.iv
    assert any(f"{record.classes_before} classes became {record.classes_after}" in note for note in merged.notes)
