"""Tests of scorecard/rows/: count tables, score histograms, the rule for reading in batches, the in-process rows.

Every table is checked against a slow, obvious oracle written here (a loop over rows, or a
pandas group-by), and the in-process source against itself: the same rows in memory and in
batches must give the same tables to the last bit (integer weights make every sum exact).
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd

from scorecard.classing import categorical_binning, numeric_binning
from scorecard.rows import (
    UNSEEN_LABEL, InProcessRows, count_bins, merge_histograms, merge_pattern_tables, pattern_keys, pattern_table,
    reads_in_batches, row_table, score_histogram, tally_unseen,
)
from scorecard.rows.tables import score_histograms_by_part
from scorecard.terms import BAD, GOOD, INDETERMINATE, OUTCOME_NAMES, SAMPLE_NAMES, UNKNOWN


def _rows(n, seed):
    rng = np.random.default_rng(seed)
    return (rng.integers(0, 5, n).astype(np.uint8), rng.integers(0, 4, n).astype(np.int8),
            rng.integers(1, 4, n).astype(float), rng.integers(0, 3, n).astype(np.int8))


# --------------------------------------------------------------------------------------------
# Count tables


def test_bin_counts_equal_a_loop_over_rows():
    codes, outcome, weight, sample = _rows(2_000, 1)
    counts = count_bins(codes, outcome, weight, sample, characteristic="x", labels=list("abcde"))
    weighted = np.zeros((len(SAMPLE_NAMES), len(OUTCOME_NAMES), 5))
    rows = np.zeros_like(weighted)
    for code, o, w, s in zip(codes, outcome, weight, sample):  # the slow oracle
        weighted[s, o, code] += w
        rows[s, o, code] += 1
    np.testing.assert_array_equal(counts.weighted, weighted)
    np.testing.assert_array_equal(counts.rows, rows)
    np.testing.assert_array_equal(counts.goods(1), weighted[1, GOOD])
    np.testing.assert_array_equal(counts.everyone(2), weighted[2].sum(axis=0))
    assert not counts.weighted.flags.writeable


def test_counts_of_two_batches_add_up_and_regroup_into_fewer_bins():
    codes, outcome, weight, sample = _rows(3_000, 2)
    whole = count_bins(codes, outcome, weight, sample, characteristic="x", labels=list("abcde"))
    first = count_bins(codes[:1_234], outcome[:1_234], weight[:1_234], sample[:1_234], characteristic="x", labels=list("abcde"))
    rest = count_bins(codes[1_234:], outcome[1_234:], weight[1_234:], sample[1_234:], characteristic="x", labels=list("abcde"))
    np.testing.assert_array_equal((first + rest).weighted, whole.weighted)
    merged = whole.regroup(np.array([0, 0, 1, 1, 1]), ["ab", "cde"])
    np.testing.assert_array_equal(merged.weighted[:, :, 0], whole.weighted[:, :, :2].sum(axis=2))
    assert merged.labels == ("ab", "cde")


def test_pattern_table_equals_a_group_by_and_drops_rows_with_no_outcome():
    rng = np.random.default_rng(3)
    codes = rng.integers(0, 3, (1_000, 3)).astype(np.uint8)
    goods = rng.integers(0, 3, 1_000).astype(float)
    bads = np.where(goods == 0, rng.integers(0, 2, 1_000), 0).astype(float)
    table = pattern_table(codes, goods, bads, characteristics=["a", "b", "c"])
    frame = pd.DataFrame(codes, columns=["a", "b", "c"]).assign(goods=goods, bads=bads)
    oracle = frame[(frame.goods > 0) | (frame.bads > 0)].groupby(["a", "b", "c"]).sum().reset_index()
    np.testing.assert_array_equal(table.codes, oracle[["a", "b", "c"]].to_numpy())
    np.testing.assert_array_equal(table.goods, oracle.goods)
    np.testing.assert_array_equal(table.bads, oracle.bads)
    np.testing.assert_array_equal(table.column("b"), oracle.b)
    subset = table.subset(["c"])
    np.testing.assert_array_equal(subset.goods, frame.groupby("c").goods.sum())


def test_pattern_tables_of_batches_merge_into_the_whole_table():
    rng = np.random.default_rng(4)
    codes = rng.integers(0, 4, (900, 2)).astype(np.uint8)
    goods = rng.integers(0, 2, 900).astype(float)
    bads = 1.0 - goods
    whole = pattern_table(codes, goods, bads, characteristics=["a", "b"])
    parts = [pattern_table(codes[i:i + 300], goods[i:i + 300], bads[i:i + 300], characteristics=["a", "b"])
             for i in range(0, 900, 300)]
    merged = merge_pattern_tables(parts)
    np.testing.assert_array_equal(merged.codes, whole.codes)
    np.testing.assert_array_equal(merged.goods, whole.goods)
    rows = row_table(codes.copy(), goods.copy(), bads.copy(), characteristics=["a", "b"])
    assert rows.n_patterns == 900 and rows.goods.sum() == whole.goods.sum()


def test_pattern_keys_stay_exact_when_the_columns_would_overflow_int64():
    # eight columns of up to 65536 codes: 2^128 combinations, so the keys are compacted on the way
    rng = np.random.default_rng(5)
    codes = rng.integers(0, 2**16, (400, 8)).astype(np.uint16)
    codes[200:] = codes[:200]  # every row twice
    codes[:, 0][::50] = 2**16 - 1
    keys = pattern_keys(codes)
    for i, j in itertools.combinations(range(0, 400, 7), 2):  # equal keys exactly for equal rows
        assert (keys[i] == keys[j]) == bool((codes[i] == codes[j]).all())
    assert len(np.unique(keys)) == len(np.unique(codes, axis=0))


# --------------------------------------------------------------------------------------------
# Score histograms


def test_score_histogram_counts_every_row_once():
    scores = np.array([500, 510, 500, 520, 510])
    good = np.array([True, False, True, False, False])
    bad = np.array([False, True, False, True, False])
    histogram = score_histogram(scores, good, bad, np.ones(5), sample="development")
    assert histogram.scores.tolist() == [500, 510, 520]
    assert histogram.goods.tolist() == [2, 0, 0]
    assert histogram.bads.tolist() == [0, 1, 1]
    assert histogram.others.tolist() == [0, 1, 0]


def test_histograms_of_batches_merge_into_the_histogram_of_all_rows():
    rng = np.random.default_rng(6)
    scores = rng.integers(400, 700, 5_000)
    outcome = rng.integers(0, 4, 5_000)
    weight = rng.integers(1, 5, 5_000).astype(float)
    whole = score_histogram(scores, outcome == GOOD, outcome == BAD, weight, sample="hold-out")
    parts = [score_histogram(scores[i:i + 1_000], outcome[i:i + 1_000] == GOOD, outcome[i:i + 1_000] == BAD,
                             weight[i:i + 1_000], sample="hold-out") for i in range(0, 5_000, 1_000)]
    merged = merge_histograms(parts)
    for field in ("scores", "goods", "bads", "others"):
        np.testing.assert_array_equal(getattr(merged, field), getattr(whole, field))
    assert merged.everyone.sum() == weight.sum()


def test_histograms_by_part_are_each_parts_own_histogram_to_the_bit():
    rng = np.random.default_rng(18)
    n = 20_000
    scores = rng.integers(380, 720, n).astype(float)
    outcome = rng.integers(0, 4, n)
    weight = rng.uniform(0.1, 3.0, n)  # uneven weights: any change in the order of the sums would show
    part = rng.integers(-1, 7, n)
    part[part == 5] = -1  # part 5 has no rows
    names = [f"p{p}" for p in range(7)]
    found = score_histograms_by_part(scores, part, 7, outcome == GOOD, outcome == BAD, weight, names=names)
    assert sorted(found) == [0, 1, 2, 3, 4, 6]
    for p, histogram in found.items():
        inside = part == p
        alone = score_histogram(scores[inside], outcome[inside] == GOOD, outcome[inside] == BAD, weight[inside], sample=names[p])
        assert histogram.sample == alone.sample
        for field in ("scores", "goods", "bads", "others"):
            assert getattr(histogram, field).tobytes() == getattr(alone, field).tobytes()


# --------------------------------------------------------------------------------------------
# The rule for reading in batches, and the in-process rows


def test_a_ledger_is_read_in_batches_when_asked_or_when_large(tmp_path):
    csv = tmp_path / "ledger.csv"
    csv.write_text("a,b\n" + "1,2\n" * 1_000, encoding="utf-8")
    workbook = tmp_path / "ledger.xlsx"
    workbook.write_bytes(b"x" * 10_000)
    size_mb = csv.stat().st_size / 2**20
    assert reads_in_batches(csv, size_mb * 2) is False
    assert reads_in_batches(csv, size_mb / 2) is True
    assert reads_in_batches(csv, size_mb * 2, asked=True) is True
    assert reads_in_batches(csv, size_mb / 2, asked=False) is False
    assert reads_in_batches(workbook, 0.0001) is False  # a workbook is always read whole


def _frame_and_binnings():
    rng = np.random.default_rng(7)
    n = 3_000
    frame = pd.DataFrame({"income": rng.normal(2_000, 500, n).round(), "housing": rng.choice(["own", "rent", "boat"], n)})
    frame.loc[::97, "income"] = np.nan
    binnings = {"income": numeric_binning("income", [1_500, 2_500], has_missing=True),
                "housing": categorical_binning("housing", [("own",), ("rent",)], has_missing=False)}
    outcome = rng.choice([GOOD, BAD, INDETERMINATE, UNKNOWN], n, p=[0.7, 0.2, 0.05, 0.05]).astype(np.int8)
    return frame, binnings, outcome, rng.integers(1, 3, n).astype(float), rng.integers(0, 3, n).astype(np.int8)


def test_rows_in_batches_count_what_the_same_rows_in_memory_count():
    frame, binnings, outcome, weight, sample = _frame_and_binnings()
    memory = InProcessRows.from_frame(frame, outcome, weight, sample)

    def batches(columns):
        return ((first, frame.iloc[first:first + 700][list(columns)]) for first in range(0, len(frame), 700))

    streamed = InProcessRows(outcome, weight, sample, batches)
    assert memory.in_memory and not streamed.in_memory
    counts, codes, unseen = memory.count_bins(binnings, keep_codes=True)
    counts_b, codes_b, unseen_b = streamed.count_bins(binnings, keep_codes=False)
    for name in binnings:
        np.testing.assert_array_equal(counts[name].weighted, counts_b[name].weighted)
        assert counts[name].labels[-1] == UNSEEN_LABEL
    assert codes_b == {} and len(codes["income"]) == len(frame)
    # 'boat' is in no class: counted on the development rows with a good or bad outcome
    fitting = (sample == 0) & ((outcome == GOOD) | (outcome == BAD))
    expected = int(((frame["housing"] == "boat").to_numpy() & fitting).sum())
    assert unseen == unseen_b == {"housing": {"boat": expected}}
    rows = memory.fitting_rows()
    np.testing.assert_array_equal(rows, np.flatnonzero(fitting))
    ordered = [binnings["income"], binnings["housing"]]
    a, b = memory.pattern_table("fitting", ordered), streamed.pattern_table("fitting", ordered)
    np.testing.assert_array_equal(a.codes, b.codes)
    np.testing.assert_array_equal(a.goods, b.goods)
    drawn = {"classing": rows[:50]}  # a sub-sample drawn at intake: these rows, not every fitting row
    streamed = InProcessRows(outcome, weight, sample, batches, subsamples=drawn)
    gathered, weights = streamed.gather("classing", ["income"])
    np.testing.assert_array_equal(gathered["income"].to_numpy(), frame["income"].to_numpy()[rows[:50]])
    np.testing.assert_array_equal(weights, weight[rows[:50]])
    assert len(streamed.gather("fitting", ["income"])[0]) == len(rows)


def test_the_unseen_tally_adds_batch_after_batch():
    tally: dict[str, dict[str, int]] = {}
    tally_unseen(tally, {"housing": {"boat": 2}, "region": {}})
    tally_unseen(tally, {"housing": {"boat": 3, "tent": 1}})
    assert tally == {"housing": {"boat": 5, "tent": 1}}
