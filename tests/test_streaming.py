"""A ledger read in batches gives exactly the model of the same ledger read whole."""

from __future__ import annotations

import io
import json
import warnings

import numpy as np
import pandas as pd
import pytest

from scorecard.build import build_scorecard
from scorecard.cli import main
from scorecard.demo.generator import generate_ledger, write_ledger
from scorecard.errors import LedgerError
from scorecard.intake import open_ledger, stream_ledger
from scorecard.modelfile import model_document
from scorecard.settings import Settings
from scorecard.terms import BAD, DEVELOPMENT, GOOD, HOLDOUT

# every test here builds or reads a generated ledger of thousands of rows, several times
pytestmark = pytest.mark.slow

BATCH_ROWS = 1_700  # small, so that a 9000-row ledger is read in several batches, the last one short


def _settings(id_column="application_id"):
    return Settings().replace(
        outcome={"column": "outcome", "bad": ("bad",), "good": ("good",), "indeterminate": ("indeterminate",)},
        ledger={"id_column": id_column, "date_column": "application_date", "leave_out": ("collections_status",),
                "batch_rows": BATCH_ROWS},
        samples={"out_of_time_from": "2025-07-01"},
        selection={"sample_rows": 2_000},  # the choice on a sample: its rows must be the same ones too
    )


@pytest.fixture(scope="module")
def ledgers(tmp_path_factory):
    folder = tmp_path_factory.mktemp("stream")
    frame = generate_ledger(9000, seed=11)
    return write_ledger(frame, folder / "ledger.csv"), write_ledger(frame, folder / "ledger.parquet")


@pytest.mark.parametrize("kind, id_column", [("csv", "application_id"), ("parquet", "application_id"), ("csv", "")])
def test_streamed_build_equals_the_build_in_memory(ledgers, kind, id_column):
    # without an id column the hold-out is drawn from a hash of every value of the row
    path = ledgers[0] if kind == "csv" else ledgers[1]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        whole = model_document(build_scorecard(path, _settings(id_column), stream=False))
        streamed = model_document(build_scorecard(path, _settings(id_column), stream=True))
    # the model file's content, to the last decimal (integer weights make every sum exact)
    assert json.dumps(streamed, sort_keys=True) == json.dumps(whole, sort_keys=True)


def test_how_numbers_read_is_judged_on_every_row_not_on_the_first(ledgers, monkeypatch):
    # kinds and left-out columns are judged on the first rows of a streamed ledger (here 500 of
    # them), but the lowest value and whole-numberness that the bin labels show come from every row
    import scorecard.intake.prepare
    import scorecard.intake.read

    for module in (scorecard.intake.prepare, scorecard.intake.read):
        monkeypatch.setattr(module, "HEAD_ROWS", 500)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        whole = model_document(build_scorecard(ledgers[1], _settings(), stream=False))
        streamed = model_document(build_scorecard(ledgers[1], _settings(), stream=True))
    assert json.dumps(streamed, sort_keys=True) == json.dumps(whole, sort_keys=True)


def test_rows_of_equal_key_are_split_alike_in_memory_and_in_batches(ledgers, monkeypatch):
    # keys cut to 4 bits: every class's hold-out edge falls among hundreds of rows of equal key,
    # which are then ordered by their texts (the id's, then the whole row's)
    import scorecard.intake.prepare
    import scorecard.intake.samples
    from scorecard.rows.keys import split_keys

    def coarse(frame, columns, seed):
        return split_keys(frame, columns, seed) >> 56

    for module in (scorecard.intake.prepare, scorecard.intake.samples):
        monkeypatch.setattr(module, "split_keys", coarse)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        samples = [open_ledger(ledgers[0], _settings(), stream=stream)[0].sample for stream in (False, True)]
    np.testing.assert_array_equal(samples[0], samples[1])


def test_repeated_rows_without_an_id_are_split_by_the_holdout_share_alike_in_memory_and_in_batches(ledgers, tmp_path):
    # 40 kinds of row, each 50 times, and no id column: identical rows hash alike, so they once went to one
    # sample all together; their repeats are now keyed apart, and each kind is split near the hold-out share
    from scorecard.rows.keys import holdout_count
    from scorecard.terms import HOLDOUT

    frame = pd.read_csv(ledgers[0]).drop(columns=["application_id"])
    kinds = frame[frame["application_date"] < "2025-07-01"].head(40)  # in time: every row may go to the hold-out
    settings = _settings("")
    share = settings.samples.holdout_fraction
    found = []
    for order in (1, 2):
        repeated = kinds.loc[kinds.index.repeat(50)].sample(frac=1.0, random_state=order)
        path = write_ledger(repeated, tmp_path / f"repeated{order}.csv")
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ledgers_read = [open_ledger(path, settings, stream=stream)[0] for stream in (False, True)]
        whole, streamed = ledgers_read
        np.testing.assert_array_equal(whole.sample, streamed.sample)  # two batches of 1,700 and 300 rows
        for code in np.unique(whole.outcome):  # each outcome class gives exactly its share
            assert np.sum((whole.outcome == code) & (whole.sample == HOLDOUT)) == holdout_count(np.sum(whole.outcome == code), share)
        held = pd.Series(whole.sample == HOLDOUT).groupby(repeated.index.to_numpy()).mean()
        assert len(held) == 40 and held.between(0.08, 0.52).all(), held.describe()  # 50 rows each: 15 expected, ±11
        found.append(held)
    pd.testing.assert_series_equal(found[0], found[1])  # in another row order, each kind splits the same


@pytest.mark.parametrize("stream", [False, True])
def test_a_ledger_in_another_row_order_gives_the_same_model(ledgers, tmp_path, stream):
    frame = pd.read_csv(ledgers[0])
    shuffled = write_ledger(frame.sample(frac=1.0, random_state=5), tmp_path / ledgers[0].name)  # the same name
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        documents = [model_document(build_scorecard(path, _settings(), stream=stream)) for path in (ledgers[0], shuffled)]
    for document in documents:  # the file's bytes differ, so does their hash; everything else must not
        del document["ledger"]["fingerprint"]["sha256"]
    assert json.dumps(documents[0], sort_keys=True) == json.dumps(documents[1], sort_keys=True)


def test_the_ledger_is_really_read_in_several_batches(ledgers):
    for path in ledgers:
        ledger, batches = stream_ledger(path, _settings())
        sizes = [len(frame) for _, frame in batches(["monthly_income"])]
        assert len(sizes) >= 3 and sum(sizes) == ledger.n_rows == 9000
        assert ledger.frame.empty  # no characteristic values are held


def test_bad_values_in_a_later_batch_name_their_rows(tmp_path):
    frame = generate_ledger(6000, seed=3)
    frame["outcome"] = frame["outcome"].astype(str)
    frame.loc[5000, "outcome"] = "maybe"
    path = write_ledger(frame, tmp_path / "ledger.parquet")
    with pytest.raises(LedgerError, match=r"column 'outcome', row 5002: value 'maybe' \(1 row\)"):
        stream_ledger(path, _settings())


def test_build_command_streams_on_request(ledgers, tmp_path):
    settings = tmp_path / "scorecard.toml"
    out, err = io.StringIO(), io.StringIO()
    assert main(["init", str(ledgers[0]), "--target", "outcome", "--bad", "bad", "--good", "good", "--indeterminate",
                 "indeterminate", "--leave-out", "collections_status", "--out", str(settings)], stdout=out, stderr=err) == 0
    codes = [main(["build", str(settings), "--out", str(tmp_path / name), "--no-reports", "-q", *extra],
                  stdout=io.StringIO(), stderr=io.StringIO()) for name, extra in (("whole", []), ("streamed", ["--stream"]))]
    assert codes == [0, 0]
    assert (tmp_path / "whole" / "model.json").read_bytes() == (tmp_path / "streamed" / "model.json").read_bytes()
    assert np.isfinite(json.loads((tmp_path / "streamed" / "model.json").read_text())["performance"]["hold-out"]["auc"])


def test_score_and_monitor_stream_the_same_way(ledgers, tmp_path):
    settings = tmp_path / "scorecard.toml"
    quiet = {"stdout": io.StringIO(), "stderr": io.StringIO()}
    main(["init", str(ledgers[1]), "--target", "outcome", "--bad", "bad", "--good", "good", "--indeterminate",
          "indeterminate", "--leave-out", "collections_status", "--out", str(settings)], **quiet)
    main(["set", str(settings), f"ledger.batch_rows={BATCH_ROWS}"], **quiet)  # several batches in every pass
    assert main(["build", str(settings), "--out", str(tmp_path / "build"), "--no-reports", "-q"], **quiet) == 0
    model = str(tmp_path / "build" / "model.json")
    for suffix in ("csv", "parquet"):
        for mode in ([], ["--stream"]):
            out = tmp_path / f"scored{''.join(mode)}.{suffix}"
            assert main(["score", model, str(ledgers[1]), "--out", str(out), *mode], **quiet) == 0
    import pandas as pd

    whole, streamed = pd.read_csv(tmp_path / "scored.csv"), pd.read_csv(tmp_path / "scored--stream.csv")
    pd.testing.assert_frame_equal(whole, streamed)
    pd.testing.assert_frame_equal(pd.read_parquet(tmp_path / "scored.parquet"), pd.read_parquet(tmp_path / "scored--stream.parquet"))
    summaries = []
    for mode in ([], ["--stream"]):
        out = io.StringIO()
        assert main(["monitor", model, str(ledgers[0]), "--out", str(tmp_path / f"monitor{''.join(mode)}"), *mode],
                    stdout=out, stderr=io.StringIO()) == 0
        summaries.append(out.getvalue().split("written:")[0].replace("monitor--stream", "monitor"))
    assert summaries[0] == summaries[1]


def test_large_tables_kept_as_rows_and_fitted_by_parts_give_the_same_model(ledgers, monkeypatch):
    # Above MERGE_LIMIT rows the final table stays rows and the fit runs part by part; lowered
    # here so a small ledger takes that path. Same likelihood, so the same estimates to rounding.
    import scorecard.rows.inprocess
    import scorecard.rows.tables
    import scorecard.selection

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        merged = build_scorecard(ledgers[1], _settings(), stream=False)
        for module, name in ((scorecard.rows.inprocess, "MERGE_LIMIT"), (scorecard.rows.tables, "MERGE_LIMIT"),
                             (scorecard.selection, "MERGE_LIMIT")):
            monkeypatch.setattr(module, name, 1_000)
        rows = build_scorecard(ledgers[1], _settings(), stream=False)
        streamed = build_scorecard(ledgers[1], _settings(), stream=True)
        written = []
        monkeypatch.setattr(scorecard.rows.inprocess, "rows_on_disk",
                            lambda *args, **kwargs: written.append(1) or scorecard.rows.tables.rows_on_disk(*args, **kwargs))
        on_disk = build_scorecard(ledgers[1], _settings(), stream=True)
        # the final table of rows held in memory instead of on disk (as for weighted rows): the same bytes
        monkeypatch.setattr(scorecard.rows.inprocess.InProcessRows, "unit_weights", property(lambda self: False))
        in_memory = build_scorecard(ledgers[1], _settings(), stream=True)
    assert rows.selection.fit.solver == "newton (by parts)"
    assert written == [1]  # the final table went to disk
    assert json.dumps(model_document(rows), sort_keys=True) == json.dumps(model_document(streamed), sort_keys=True)
    assert json.dumps(model_document(on_disk), sort_keys=True) == json.dumps(model_document(in_memory), sort_keys=True)
    assert rows.selection.chosen == merged.selection.chosen
    np.testing.assert_allclose(rows.selection.fit.coefficients, merged.selection.fit.coefficients, rtol=1e-8)
    np.testing.assert_allclose(rows.selection.fit.std_errors, merged.selection.fit.std_errors, rtol=1e-8)


def test_a_large_sample_compares_the_challenger_on_the_same_seeded_rows_whole_streamed_and_shuffled(ledgers, tmp_path,
                                                                                                      monkeypatch):
    # the challenger's comparison needs every compared row's two scores, so a sample with more goods and bads
    # than COMPARISON_ROWS is compared on a seeded sub-sample of them (lowered here so a small ledger has one)
    import scorecard.intake.samples

    monkeypatch.setattr(scorecard.intake.samples, "COMPARISON_ROWS", 1_500)
    frame = pd.read_csv(ledgers[0])
    shuffled = write_ledger(frame.sample(frac=1.0, random_state=5), tmp_path / ledgers[0].name)
    ledger, _ = stream_ledger(ledgers[0], _settings())
    for name, code in (("development", DEVELOPMENT), ("hold-out", HOLDOUT)):
        drawn = ledger.subsamples[f"comparison {name}"]
        assert len(drawn) == 1_500 and np.all(np.diff(drawn) > 0)
        assert np.all(ledger.sample[drawn] == code) and np.all(np.isin(ledger.outcome[drawn], [GOOD, BAD]))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        builds = [build_scorecard(ledgers[0], _settings(), stream=False), build_scorecard(ledgers[0], _settings(), stream=True),
                  build_scorecard(shuffled, _settings(), stream=True)]
    comparisons = [build.challenger.comparisons for build in builds]
    assert set(comparisons[0]) >= {"development", "hold-out"}
    assert repr(comparisons[0]) == repr(comparisons[1])
    # in another row order the same rows are compared; their sums run in another order (the challenger is in the
    # reports, not in the model file), so the figures agree to rounding
    for name, comparison in comparisons[0].items():
        shuffled_comparison = comparisons[2][name]
        assert comparison.scorecard.n_goods == shuffled_comparison.scorecard.n_goods
        assert comparison.scorecard.auc == pytest.approx(shuffled_comparison.scorecard.auc, rel=1e-12)
        assert comparison.challenger.auc == pytest.approx(shuffled_comparison.challenger.auc, rel=1e-12)
