"""Tests of the demo ledger generator (``scorecard.demo.generator``).

Everything checked here is a property of our own invented process (invented scenario, no outside
source): the ranges are the design choices written in the generator, with tolerances wide enough
for sampling noise at the sizes used.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest

from scorecard.demo import generator
from scorecard.demo.generator import (
    CATEGORICAL_CHARACTERISTICS,
    CHARACTERISTICS,
    COLUMNS,
    PROTECTED,
    CORRELATED_PAIR,
    DATE_COLUMN,
    DRIFTING,
    ID_COLUMN,
    LAST_QUARTER_SHIFT,
    LEAKING,
    MISSING_CATEGORICAL,
    MISSING_NUMERIC,
    MISSING_SHARE,
    NUMERIC_CHARACTERISTICS,
    SCENARIO_NAME,
    SPECIAL_CODES,
    TARGET,
    generate_ledger,
    iter_chunks,
    main,
    quarter_index,
    quarter_names,
    true_bad_probability,
    true_log_odds,
    write_ledger,
)
from scorecard.errors import ScorecardError

N_ROWS = 20_000
SEED = 11
# Two-sided band for a share estimated from N_ROWS rows: about 4 binomial standard errors at 5 %.
SHARE_ATOL = 0.007
LOG_ODDS_ATOL = 1e-12  # the slip is one added constant; only rounding of sums can differ


@pytest.fixture(scope="module")
def ledger() -> pd.DataFrame:
    return generate_ledger(N_ROWS, seed=SEED)


@pytest.fixture(scope="module")
def quarter(ledger) -> np.ndarray:
    return quarter_index(ledger)


def _assert_same_ledger(left: pd.DataFrame, right: pd.DataFrame) -> None:
    """Assert two ledgers are equal; categoricals are compared by dtype and codes, which is fast."""
    pd.testing.assert_series_equal(left.dtypes, right.dtypes)
    categorical = [name for name in left.columns if isinstance(left[name].dtype, pd.CategoricalDtype)]
    as_codes = {name: lambda frame, name=name: frame[name].cat.codes for name in categorical}
    pd.testing.assert_frame_equal(left.assign(**as_codes), right.assign(**as_codes))


def _bad_share(frame: pd.DataFrame) -> float:
    """Bads among goods and bads (indeterminates left out, as a scorecard would)."""
    decided = frame[TARGET] != "indeterminate"
    return float((frame.loc[decided, TARGET] == "bad").mean())


def _auc_by_pairs(bad_score: np.ndarray, is_bad: np.ndarray) -> float:
    """AUC as the share of bad-good pairs the score orders right (ties count half): the slow oracle."""
    goods = np.sort(bad_score[~is_bad])
    below = np.searchsorted(goods, bad_score[is_bad], side="left")
    ties = np.searchsorted(goods, bad_score[is_bad], side="right") - below
    return float((below + 0.5 * ties).sum() / (goods.size * is_bad.sum()))


def _information_value(levels: pd.Series, is_bad: np.ndarray) -> float:
    """IV by a plain loop over levels, 0.5 added to each cell."""
    goods_total, bads_total = (~is_bad).sum(), is_bad.sum()
    total = 0.0
    for level in levels.astype(str).unique():
        inside = (levels.astype(str) == level).to_numpy()
        good_share = ((~is_bad & inside).sum() + 0.5) / goods_total
        bad_share = ((is_bad & inside).sum() + 0.5) / bads_total
        total += (good_share - bad_share) * np.log(good_share / bad_share)
    return total


def test_scenario_names_are_consistent():
    assert SCENARIO_NAME and "Cooperative" in SCENARIO_NAME
    assert len(NUMERIC_CHARACTERISTICS) == 20 and len(CATEGORICAL_CHARACTERISTICS) == 10
    assert len(set(CHARACTERISTICS)) == 30
    assert LEAKING in CHARACTERISTICS and DRIFTING in CATEGORICAL_CHARACTERISTICS
    assert set(CORRELATED_PAIR) <= set(NUMERIC_CHARACTERISTICS)
    assert COLUMNS == (ID_COLUMN, DATE_COLUMN, *CHARACTERISTICS, *PROTECTED, TARGET)


def test_columns_and_kinds(ledger):
    assert ledger.shape == (N_ROWS, 35)
    assert tuple(ledger.columns) == COLUMNS
    assert all(pd.api.types.is_numeric_dtype(ledger[name]) for name in NUMERIC_CHARACTERISTICS)
    assert not any(pd.api.types.is_numeric_dtype(ledger[name]) for name in CATEGORICAL_CHARACTERISTICS)
    assert pd.api.types.is_datetime64_any_dtype(ledger[DATE_COLUMN])
    assert set(ledger[TARGET].unique()) == {"good", "bad", "indeterminate"}


def test_integer_columns_stay_integers(ledger):
    fractional = {"verified_income", "revolving_utilisation_pct", "debt_to_income", "savings_balance"}
    for name in sorted(set(NUMERIC_CHARACTERISTICS) - fractional):
        values = ledger[name].dropna().to_numpy()
        assert np.all(values == np.round(values)), name
        # Holes force floats; a column without holes keeps an integer dtype.
        assert pd.api.types.is_integer_dtype(ledger[name]) == (name not in MISSING_NUMERIC), name


def test_identifiers_are_unique_and_dates_in_order(ledger):
    ids = ledger[ID_COLUMN]
    assert ids.is_unique
    assert ids.iloc[0] == "A000000001" and ids.str.fullmatch(r"A\d{9}").all()
    dates = ledger[DATE_COLUMN]
    assert dates.is_monotonic_increasing
    assert dates.min() >= pd.Timestamp("2024-01-01") and dates.max() <= pd.Timestamp("2025-12-31")


def test_quarters_are_filled_evenly(quarter):
    shares = np.bincount(quarter, minlength=8) / quarter.size
    assert quarter.min() == 0 and quarter.max() == 7
    # Quarters have 90 to 92 days and rows spread evenly over days.
    np.testing.assert_allclose(shares, 1 / 8, atol=0.003)
    assert quarter_names()[0] == "2024Q1" and quarter_names()[-1] == "2025Q4"


def test_same_seed_gives_the_same_frame_and_another_seed_does_not():
    first = generate_ledger(3_000, seed=5)
    _assert_same_ledger(first, generate_ledger(3_000, seed=5))
    other = generate_ledger(3_000, seed=6)
    assert not first["bureau_score"].equals(other["bureau_score"])


def test_bad_rate_of_the_first_six_quarters_is_about_ten_percent(ledger, quarter):
    # Invented scenario, no outside source: the intercept was set for a 10 % bad rate.
    assert 0.08 <= _bad_share(ledger[quarter < 6]) <= 0.12


def test_indeterminate_share_is_three_to_five_percent(ledger):
    share = float((ledger[TARGET] == "indeterminate").mean())
    assert 0.03 <= share <= 0.05


def test_special_codes_are_present(ledger):
    no_delinquency = ledger["months_since_delinquency"] == SPECIAL_CODES["months_since_delinquency"]
    assert 0.5 <= no_delinquency.mean() <= 0.8
    assert (ledger["months_since_delinquency"] >= -1).all()
    no_enquiry = ledger["months_since_last_enquiry"] == SPECIAL_CODES["months_since_last_enquiry"]
    assert 0.05 <= no_enquiry.mean() <= 0.3
    # An applicant with a recent enquiry cannot carry the "no enquiry" code.
    assert not (no_enquiry & (ledger["enquiries_6m"] > 0)).any()


def test_messy_shapes_are_there(ledger):
    utilisation = ledger["revolving_utilisation_pct"]
    assert (utilisation == 0).mean() > 0.1 and (utilisation > 100).any()
    assert (ledger["savings_balance"] == 0).mean() > 0.2
    income = ledger["monthly_income"].dropna()
    assert income.max() > 10 * income.median()
    assert set(ledger["loan_term_months"].unique()) == {12, 24, 36, 48, 60}
    assert ledger["worst_arrears_24m"].between(0, 6).all()


def test_missing_values_are_where_intended(ledger):
    missing = ledger.isna().mean()
    for name in MISSING_NUMERIC:
        assert missing[name] == pytest.approx(MISSING_SHARE, abs=SHARE_ATOL), name
    for name, share in MISSING_CATEGORICAL.items():
        assert missing[name] == pytest.approx(share, abs=SHARE_ATOL), name
    complete = set(COLUMNS) - set(MISSING_NUMERIC) - set(MISSING_CATEGORICAL)
    assert not missing[sorted(complete)].any()


def test_many_level_column_has_forty_levels(ledger):
    assert ledger["home_district"].nunique() == 40
    assert ledger["region"].nunique() == 8


def test_correlated_pair_is_strongly_correlated(ledger):
    first, second = CORRELATED_PAIR
    assert ledger[first].corr(ledger[second]) > 0.85


def test_leaking_column_nearly_gives_the_outcome_away(ledger):
    decided = ledger[ledger[TARGET] != "indeterminate"]
    is_bad = (decided[TARGET] == "bad").to_numpy()
    bad_rate = pd.Series(is_bad).groupby(decided[LEAKING].to_numpy()).mean()
    assert bad_rate["none"] < 0.01 and bad_rate["referred"] > 0.9
    # 0.5 is the usual "too good to be true" line for IV (common practice, no source).
    assert _information_value(decided[LEAKING], is_bad) > 0.5


def test_leak_is_not_in_the_true_model(ledger):
    changed = ledger.assign(**{LEAKING: "none"})
    np.testing.assert_array_equal(true_log_odds(changed), true_log_odds(ledger))


def test_drifting_column_mix_moves_in_the_last_two_quarters(ledger, quarter):
    broker_early = (ledger.loc[quarter < 6, DRIFTING] == "broker").mean()
    broker_late = (ledger.loc[quarter >= 6, DRIFTING] == "broker").mean()
    assert broker_early < 0.2 and broker_late > 0.3


def test_no_drift_keeps_the_mix():
    frame = generate_ledger(8_000, seed=SEED, drift=False)
    late = quarter_index(frame) >= 6
    broker = frame[DRIFTING] == "broker"
    assert abs(broker[late].mean() - broker[~late].mean()) < 0.03


def test_last_quarter_is_riskier_at_fixed_characteristics(ledger, quarter):
    sample = ledger[quarter < 6].head(500)
    seventh = true_log_odds(sample.assign(**{DATE_COLUMN: pd.Timestamp("2025-08-15")}))
    eighth = true_log_odds(sample.assign(**{DATE_COLUMN: pd.Timestamp("2025-11-15")}))
    first = true_log_odds(sample.assign(**{DATE_COLUMN: pd.Timestamp("2024-02-15")}))
    np.testing.assert_allclose(eighth - seventh, LAST_QUARTER_SHIFT, atol=LOG_ODDS_ATOL)
    np.testing.assert_allclose(seventh, first, atol=LOG_ODDS_ATOL)
    # Ranking stays: the same order of applicants in both quarters.
    np.testing.assert_array_equal(np.argsort(eighth, kind="stable"), np.argsort(seventh, kind="stable"))
    assert _bad_share(ledger[quarter == 7]) > _bad_share(ledger[quarter < 6]) + 0.03


def test_true_probability_matches_the_drawn_outcomes(ledger, quarter):
    probability = true_bad_probability(ledger)
    is_bad = (ledger[TARGET] == "bad").to_numpy()
    standard_error = np.sqrt(np.sum(probability * (1 - probability))) / probability.size
    assert abs(is_bad.mean() - probability.mean()) < 4 * standard_error
    early = quarter < 6
    # Invented scenario, no outside source: the model was tuned to an AUC of about 0.80.
    assert 0.75 <= _auc_by_pairs(probability[early], is_bad[early]) <= 0.86


def test_true_model_reads_a_ledger_back_from_csv(ledger):
    buffer = io.StringIO()
    ledger.head(2_000).to_csv(buffer, index=False)
    buffer.seek(0)
    np.testing.assert_allclose(true_log_odds(pd.read_csv(buffer)), true_log_odds(ledger.head(2_000)))


def test_true_model_refuses_an_unknown_level(ledger):
    odd = ledger.head(3).astype({"channel": "str"}).assign(channel=["branch", "kiosk", "online"])
    with pytest.raises(ScorecardError, match="column 'channel': value 'kiosk'"):
        true_log_odds(odd)


@pytest.mark.parametrize("chunk_rows", [333, 1_000, 2_500, 10_000])
def test_chunks_do_not_change_the_ledger(monkeypatch, chunk_rows):
    # Small blocks so that several of them are crossed in well under a second.
    monkeypatch.setattr(generator, "BLOCK_ROWS", 1_000)
    whole = generate_ledger(4_500, seed=SEED)
    chunks = list(iter_chunks(4_500, chunk_rows, seed=SEED))
    assert all(len(chunk) == chunk_rows for chunk in chunks[:-1])
    _assert_same_ledger(pd.concat(chunks, ignore_index=True), whole)


@pytest.mark.parametrize(
    "arguments",
    [
        dict(n_rows=0),
        dict(n_rows=10, chunk_rows=0),
        dict(n_rows=10, quarters=2),
        dict(n_rows=10, quarters=0, drift=False),
    ],
)
def test_bad_arguments_are_refused(arguments):
    with pytest.raises(ScorecardError):
        next(iter_chunks(**arguments))


def test_two_quarters_without_drift_are_allowed():
    frame = generate_ledger(500, seed=SEED, quarters=2, drift=False)
    assert set(quarter_index(frame)) == {0, 1}


def test_write_ledger_round_trips_csv(tmp_path, ledger):
    path = write_ledger(ledger, tmp_path / "ledger.csv")
    back = pd.read_csv(path, parse_dates=[DATE_COLUMN])
    text_columns = {name: "str" for name in (*CATEGORICAL_CHARACTERISTICS, *PROTECTED, TARGET)}
    pd.testing.assert_frame_equal(back, ledger.astype(text_columns))
    assert [p.name for p in tmp_path.iterdir()] == ["ledger.csv"]


def test_write_ledger_round_trips_parquet(tmp_path, ledger):
    path = write_ledger(ledger, tmp_path / "ledger.parquet")
    _assert_same_ledger(pd.read_parquet(path), ledger)


@pytest.mark.parametrize("suffix", [".csv", ".parquet"])
def test_write_ledger_takes_chunks(tmp_path, monkeypatch, suffix):
    monkeypatch.setattr(generator, "BLOCK_ROWS", 1_000)
    path = write_ledger(iter_chunks(2_500, 700, seed=SEED), tmp_path / f"ledger{suffix}")
    back = pd.read_csv(path, parse_dates=[DATE_COLUMN]) if suffix == ".csv" else pd.read_parquet(path)
    expected = generate_ledger(2_500, seed=SEED)
    if suffix == ".csv":
        expected = expected.astype({name: "str" for name in (*CATEGORICAL_CHARACTERISTICS, *PROTECTED, TARGET)})
    _assert_same_ledger(back, expected)


def test_write_ledger_refuses_an_unknown_suffix_and_leaves_nothing(tmp_path, ledger):
    with pytest.raises(ScorecardError, match=r"suffix '\.xlsx'"):
        write_ledger(ledger, tmp_path / "ledger.xlsx")
    assert list(tmp_path.iterdir()) == []


def test_failed_write_leaves_no_file(tmp_path, ledger):
    def broken_chunks():
        yield ledger.head(10)
        raise RuntimeError("interrupted")

    with pytest.raises(RuntimeError):
        write_ledger(broken_chunks(), tmp_path / "ledger.parquet")
    assert list(tmp_path.iterdir()) == []


def test_main_writes_the_file(tmp_path):
    out, err = io.StringIO(), io.StringIO()
    target = tmp_path / "small.parquet"
    code = main(["--rows", "1500", "--seed", "3", "--out", str(target)], stdout=out, stderr=err)
    assert code == 0 and out.getvalue().strip() == str(target) and err.getvalue() == ""
    _assert_same_ledger(pd.read_parquet(target), generate_ledger(1_500, seed=3))


def test_main_reports_bad_input_with_exit_code_2(tmp_path):
    out, err = io.StringIO(), io.StringIO()
    code = main(["--rows", "10", "--out", str(tmp_path / "ledger.txt")], stdout=out, stderr=err)
    assert code == 2 and out.getvalue() == ""
    assert err.getvalue().startswith("scorewright: error:") and "'.txt'" in err.getvalue()


# ---------------------------------------------------------------------------------------------
# The rejected population (invented: the cooperative's earlier policy)


@pytest.fixture(scope="module")
def rejected(ledger):
    return generator.with_rejections(ledger, seed=SEED)


def test_the_earlier_policy_declines_its_share_and_they_keep_no_outcome(ledger, rejected):
    decided, truth = rejected
    declined = decided[generator.DECISION_COLUMN].eq("declined").to_numpy()
    assert declined.sum() == round(generator.REJECT_SHARE * N_ROWS)  # the riskiest share, by the policy's risk
    assert decided.loc[declined, TARGET].isna().all() and decided.loc[declined, LEAKING].isna().all()
    assert decided.loc[~declined, TARGET].astype(str).eq(ledger.loc[~declined, TARGET].astype(str)).all()
    np.testing.assert_array_equal(truth, ledger[TARGET].astype(str).to_numpy())  # what each would have done
    assert ledger[TARGET].notna().all() and generator.DECISION_COLUMN not in ledger  # the input is not changed


def test_the_declined_are_worse_than_their_characteristics_say(ledger, rejected):
    # the loan officer's judgement saw some of what was to come, so the declined went bad more often than
    # the true model of their characteristics predicts; the booked less often (invented, no source)
    decided, truth = rejected
    declined = decided[generator.DECISION_COLUMN].eq("declined").to_numpy()
    probability = true_bad_probability(ledger)
    went_bad = truth == "bad"
    assert went_bad[declined].mean() > probability[declined].mean() + 0.05
    assert went_bad[~declined].mean() < probability[~declined].mean()
    assert probability[declined].mean() > 1.5 * probability[~declined].mean()  # and worse on paper, too


def test_rejections_are_the_same_for_the_same_seed(ledger, rejected):
    again, _ = generator.with_rejections(ledger, seed=SEED)
    pd.testing.assert_frame_equal(again, rejected[0])

def test_national_origin_gathers_in_the_riskier_districts_and_sex_does_not():
    # invented scenario: home_district stands in for national origin, so the fairness checks have a proxy to find
    from scipy.stats.contingency import association

    frame = generate_ledger(20_000, seed=5)
    origin = pd.crosstab(frame["home_district"], frame["national_origin"]).to_numpy()
    sex = pd.crosstab(frame["home_district"], frame["applicant_sex"]).to_numpy()
    assert association(origin, method="cramer") > 0.3 > 0.05 > association(sex, method="cramer")
    assert abs((frame["applicant_sex"] == "female").mean() - 0.48) < 0.02
