"""Tests of scorecard/monitor.py and the monitor command: statuses on known shifts, false alarms."""

from __future__ import annotations

import io
import json
import warnings

import numpy as np
import pandas as pd
import pytest

from scipy import stats
from sklearn.metrics import roc_auc_score

from scorecard.build import build_scorecard
from scorecard.cli import main
from scorecard.intake import prepare_ledger
from scorecard.terms import BAD, GOOD, UNKNOWN
from scorecard.modelfile import load_model, model_document, save_model
from scorecard.monitor import check_period, monitor_ledger
from scorecard.rows import ScoreHistogram
from scorecard.settings import Settings
from scorecard.validation import band_edges

import ledgers  # tests/ledgers.py: the invented process these tests monitor

N_DEVELOPMENT = 30_000
N_QUARTER = 8_000
EXACT_RTOL = 1e-9  # the same sums over rows and over a histogram, in another order


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    folder = tmp_path_factory.mktemp("monitor")
    settings = Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)},
                                  ledger={"date_column": "date"})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        build = build_scorecard(ledgers.monitor_frame(N_DEVELOPMENT, 1, days=360), settings)
    path = save_model(model_document(build), folder / "model.json")
    return load_model(path), path


def _monitor(saved_model, frame):
    outcome = np.where(frame["outcome"] == "bad", BAD, GOOD) if "outcome" in frame else np.full(len(frame), UNKNOWN)
    return monitor_ledger(saved_model, frame, outcome.astype(np.int8), np.ones(len(frame)), None, source="quarter")


def _status(period, check):
    return next(s.status for s in period.statuses if s.check == check)


def delong_on_rows(scores, is_good):
    """AUC and DeLong's variance from the placement values of the rows, one row at a time (slow oracle).

    Source: E. R. DeLong, D. M. DeLong, D. L. Clarke-Pearson, Biometrics 44 (1988): V10 of a good is
    the share of bads it outscores (ties half), V01 of a bad the share of goods that outscore it;
    the variance is var(V10)/m + var(V01)/n.
    """
    goods, bads = scores[is_good], scores[~is_good]
    v10 = np.array([np.mean((good > bads) + 0.5 * (good == bads)) for good in goods])
    v01 = np.array([np.mean((goods > bad) + 0.5 * (goods == bad)) for bad in bads])
    return v10.mean(), np.var(v10, ddof=1) / len(goods) + np.var(v01, ddof=1) / len(bads)


def test_the_auc_fall_test_weighs_the_sampling_error_of_both_samples(saved):
    # The new quarter's AUC against the hold-out's at build time (the build drew no out-of-time
    # sample): z = difference / sqrt(var_new + var_baseline). References: AUCs by scikit-learn's
    # roc_auc_score, each variance by the placement-value oracle above, p by scipy.stats.norm.
    model, _ = saved
    built = ledgers.monitor_frame(N_DEVELOPMENT, 1, days=360)
    ledger = prepare_ledger(built, model.settings)
    holdout = (ledger.sample == 1) & (ledger.outcome <= BAD)
    base_scores = model.scorecard.score(built)["score"].to_numpy()[holdout]
    base_good = ledger.outcome[holdout] == GOOD
    quarter = ledgers.monitor_frame(N_QUARTER, 4, bad_factor=1.3)
    new_scores = model.scorecard.score(quarter)["score"].to_numpy()
    new_good = (quarter["outcome"] == "good").to_numpy()
    base_auc, base_variance = delong_on_rows(base_scores, base_good)
    new_auc, new_variance = delong_on_rows(new_scores, new_good)
    assert base_auc == pytest.approx(roc_auc_score(base_good, base_scores), rel=EXACT_RTOL)
    assert new_auc == pytest.approx(roc_auc_score(new_good, new_scores), rel=EXACT_RTOL)
    z = (new_auc - base_auc) / np.sqrt(new_variance + base_variance)
    # the model file saved the baseline's figures; the quarter is checked against them
    assert model.performance["hold-out"]["auc_std_error"] ** 2 == pytest.approx(base_variance, rel=EXACT_RTOL)
    fall = _monitor(model, quarter).overall.auc_fall
    assert (fall.reference, fall.reference_std_error ** 2) == pytest.approx((base_auc, base_variance), rel=EXACT_RTOL)
    assert fall.z == pytest.approx(z, rel=EXACT_RTOL)
    assert fall.p_value == pytest.approx(stats.norm.cdf(z), rel=EXACT_RTOL)


def test_a_model_file_without_the_baseline_standard_error_has_it_computed_from_its_histogram(saved, tmp_path):
    model, path = saved
    document = json.loads(path.read_text())
    for figures in document["performance"].values():
        del figures["auc_std_error"]  # as a model file of an earlier version holds them
    older = load_model(save_model(document, tmp_path / "older.json"))
    quarter = ledgers.monitor_frame(N_QUARTER, 4)
    assert _monitor(older, quarter).overall.auc_fall.z == _monitor(model, quarter).overall.auc_fall.z


def test_a_quarter_from_the_same_process_is_ok(saved):
    result = _monitor(saved[0], ledgers.monitor_frame(N_QUARTER, 2))
    assert _status(result.overall, "score stability") == "ok"
    assert all(_status(result.overall, f"stability of {n}") == "ok" for n in saved[0].scorecard.table.names)
    assert _status(result.overall, "calibration") == "ok"
    assert _status(result.overall, "discrimination") == "ok"


def test_a_shifted_population_is_act_on_its_characteristic_and_the_score(saved):
    result = _monitor(saved[0], ledgers.monitor_frame(N_QUARTER, 3, shift=0.5))
    assert _status(result.overall, "stability of income") == "act"
    assert _status(result.overall, "score stability") == "act"
    assert _status(result.overall, "stability of enquiries") == "ok"


def test_a_doubled_bad_rate_is_act_on_calibration_but_not_discrimination(saved):
    result = _monitor(saved[0], ledgers.monitor_frame(N_QUARTER, 4, bad_factor=2.0))
    assert _status(result.overall, "calibration") == "act"
    assert _status(result.overall, "discrimination") == "ok"
    large = result.overall.outcomes.in_the_large
    assert large.observed_bads > 1.6 * large.expected_bads


@pytest.mark.slow
def test_false_alarm_rate_of_calibration_is_at_most_the_nominal_level(saved):
    # A property of the tests, not of one draw: quarters whose outcomes are drawn from the model's
    # own PD at each score satisfy every null hypothesis, so the Holm-adjusted family raises
    # 'watch' (p below 0.05) at most 5% of the time (S. Holm, Scandinavian Journal of Statistics 1979).
    model = saved[0]
    baseline = model.baseline["development"]
    edges = band_edges(baseline, model.settings.checks)
    shares = baseline.everyone / baseline.everyone.sum()
    pd_ = model.scorecard.table.scaling.pd_of_score(baseline.scores)
    counts = {name: model.bin_counts[name]["development"]["everyone"] for name in model.scorecard.table.names}
    rng = np.random.default_rng(2026)
    draws, alarms = 400, 0
    for _ in range(draws):
        rows = rng.multinomial(4000, shares)
        bads = rng.binomial(rows, pd_)
        histogram = ScoreHistogram("draw", baseline.scores, (rows - bads).astype(float), bads.astype(float),
                                   np.zeros(len(rows)))
        period = check_period("draw", histogram, counts, model, edges, unseen={})
        alarms += _status(period, "calibration") != "ok"
    rate = alarms / draws
    print(f"calibration false-alarm rate over {draws} draws: {rate:.3f}")
    tolerance = 3 * np.sqrt(0.05 * 0.95 / draws)  # three binomial standard errors of a 5% rate
    assert rate <= 0.05 + tolerance


def _run(*argv):
    out, err = io.StringIO(), io.StringIO()
    return main(list(argv), stdout=out, stderr=err), out.getvalue(), err.getvalue()


def test_quarter_without_outcomes_checks_stability_only(saved, tmp_path):
    frame = ledgers.monitor_frame(2000, 5).drop(columns="outcome")
    frame.to_csv(tmp_path / "q.csv", index=False)
    code, out, err = _run("monitor", str(saved[1]), str(tmp_path / "q.csv"), "--out", str(tmp_path / "out"))
    assert code == 0, err
    assert "stability only" in out
    assert "calibration" not in out.split("stability only")[0]


def test_per_quarter_statuses_and_fail_on(saved, tmp_path):
    frame = pd.concat([ledgers.monitor_frame(3000, 6, start="2025-01-01"), ledgers.monitor_frame(3000, 7, start="2025-04-01", bad_factor=2.0)])
    frame.to_csv(tmp_path / "q.csv", index=False)
    code, out, err = _run("monitor", str(saved[1]), str(tmp_path / "q.csv"), "--out", str(tmp_path / "out"), "--fail-on", "act")
    assert code == 1, err
    assert "per quarter: 2025Q1 ok, 2025Q2 act" in out


def test_a_gap_between_quarters_is_bad_input(saved, tmp_path):
    frame = pd.concat([ledgers.monitor_frame(500, 8, start="2025-01-01"), ledgers.monitor_frame(500, 9, start="2025-07-01")])
    frame.to_csv(tmp_path / "q.csv", index=False)
    code, _, err = _run("monitor", str(saved[1]), str(tmp_path / "q.csv"), "--out", str(tmp_path / "out"))
    assert code == 2
    assert "quarter 2025Q2 has no rows" in err and "Traceback" not in err


def test_a_missing_characteristic_is_named(saved, tmp_path):
    ledgers.monitor_frame(500, 10).drop(columns="enquiries").to_csv(tmp_path / "q.csv", index=False)
    code, _, err = _run("monitor", str(saved[1]), str(tmp_path / "q.csv"), "--out", str(tmp_path / "out"))
    assert code == 2 and "column 'enquiries' of the scorecard is not in the ledger" in err


@pytest.mark.parametrize("damage", ["corrupt", "newer"])
def test_a_damaged_or_newer_model_file_is_bad_input(saved, tmp_path, damage):
    document = json.loads(saved[1].read_text())
    if damage == "corrupt":
        (tmp_path / "model.json").write_text(saved[1].read_text()[:-200])
    else:
        document["format_version"] = 99
        save_model(document, tmp_path / "model.json")
    ledgers.monitor_frame(500, 11).to_csv(tmp_path / "q.csv", index=False)
    code, _, err = _run("monitor", str(tmp_path / "model.json"), str(tmp_path / "q.csv"), "--out", str(tmp_path / "out"))
    assert code == 2 and "Traceback" not in err
    assert ("not a valid model file" if damage == "corrupt" else "newer than this tool reads") in err


def test_adverse_impact_is_repeated_per_quarter_at_the_builds_cut_off(tmp_path):
    # an invented ledger with a protected attribute; the reference is the scored rows counted by hand
    import openpyxl

    from scorecard.settings import CharacteristicSettings

    def with_sex(frame, seed):
        rng = np.random.default_rng(seed)
        return frame.assign(sex=np.where(rng.random(len(frame)) < 0.5 + 0.1 * (frame["income"] > 3000), "f", "m"))

    settings = Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)},
                                  ledger={"date_column": "date"},
                                  characteristics={"sex": CharacteristicSettings(use="protected")})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        build = build_scorecard(with_sex(ledgers.monitor_frame(6000, 21, days=360), 1), settings)
    path = save_model(model_document(build), tmp_path / "model.json")
    model = load_model(path)
    assert "sex" not in model.scorecard.table.names and model.document["fairness"]["attributes"] == {"sex": ["f", "m"]}
    cutoff = model.document["fairness"]["cutoff"]
    frame = pd.concat([with_sex(ledgers.monitor_frame(1500, 22, start="2025-01-01"), 2),
                       with_sex(ledgers.monitor_frame(1500, 23, start="2025-04-01"), 3)], ignore_index=True)
    frame.to_csv(tmp_path / "q.csv", index=False)
    code, _, err = _run("monitor", str(path), str(tmp_path / "q.csv"), "--out", str(tmp_path / "out"))
    assert code == 0, err
    sheet = openpyxl.load_workbook(tmp_path / "out" / "monitor.xlsx")["Fairness"]
    rows = list(sheet.iter_rows(min_row=5, values_only=True))
    scores = model.scorecard.score(frame)["score"].to_numpy()
    quarter = np.where(frame["date"] < "2025-04-01", "2025Q1", "2025Q2")
    for attribute, period, level, applications, approved, *_ in rows:
        inside = (frame["sex"] == level).to_numpy() & ((quarter == period) | (period == "whole ledger"))
        assert (applications, approved) == (inside.sum(), (inside & (scores >= cutoff)).sum()), (period, level)
    assert {row[1] for row in rows} == {"whole ledger", "2025Q1", "2025Q2"}
    page = (tmp_path / "out" / "monitor.html").read_text(encoding="utf-8")
    assert "ratio, 2025Q2" in page and f"cut-off {cutoff:.0f}" in page
