"""The same answer wherever the rows live: the demo ledger through the in-process engine, DuckDB and Spark.

Every engine must give the same model file from the same ledger (the content of ``model.json``,
to the last digit: weights are summed as whole units, so every count is exact in any order), the
same scores, probabilities of default and reasons, and the same monitoring report; and bad input
through an engine gets the same kind of message and exit code 2 as a file does. Spark runs in
local mode on this machine, one session for the module, with few queries.
"""

from __future__ import annotations

import io
import json
import warnings

import duckdb
import numpy as np
import pandas as pd
import pytest

import sqlprobes  # tests/sqlprobes.py: values that break careless rules
from scorecard.build import build_scorecard
from scorecard.cli import main
from scorecard.demo.generator import generate_ledger, write_ledger
from scorecard.errors import LedgerError
from scorecard.intake import open_ledger
from scorecard.intake.prepare import ledger_place
from scorecard.modelfile import model_document
from scorecard.rows import RowPlace, connect
from scorecard.settings import Settings

pytestmark = pytest.mark.slow  # end-to-end builds of the demo ledger, several engines

DEMO_ROWS, DEMO_SEED = 8_000, 2024  # the demo's own ledger at its smallest size


def _settings(**ledger) -> Settings:
    return Settings().replace(
        outcome={"column": "outcome", "bad": ("bad",), "good": ("good",), "indeterminate": ("indeterminate",)},
        ledger={"id_column": "application_id", "date_column": "application_date", "leave_out": ("collections_status",), **ledger},
        samples={"out_of_time_from": "2025-01-01"},
    )


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("engines")
    frame = generate_ledger(DEMO_ROWS, seed=DEMO_SEED)
    parquet, csv = write_ledger(frame, folder / "ledger.parquet"), write_ledger(frame, folder / "ledger.csv")
    database = folder / "warehouse.duckdb"
    with duckdb.connect(str(database)) as con:
        con.execute(f"CREATE TABLE applications AS SELECT * FROM read_parquet('{parquet}')")
    return {"folder": folder, "parquet": parquet, "csv": csv, "database": database}


def _document(place_or_path, settings: Settings) -> dict:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ledger, rows = open_ledger(place_or_path, settings)
        try:
            document = model_document(build_scorecard(ledger, settings, rows=rows))
        finally:
            rows.close()
    document["settings"]["ledger"].pop("engine")  # the one setting that says where the rows were counted
    # the challenger scores rows in this process: through an engine it is not fitted, and the build says so in a
    # note (the challenger itself is not part of the model file); every other field must be equal
    kept = [note for note in document["notes"] if not note.startswith("The challenger was not fitted")]
    assert len(kept) == len(document["notes"]) - (settings.ledger.engine != "in-process")
    document["notes"] = kept
    return document


def _same(first: dict, second: dict, *, apart_from_the_source: bool = False) -> None:
    if apart_from_the_source:  # another file of the same rows, or a table: its name and fingerprint differ
        first, second = (dict(d, ledger={k: v for k, v in d["ledger"].items() if k not in ("source", "fingerprint")})
                         for d in (first, second))
    assert json.dumps(first, sort_keys=True) == json.dumps(second, sort_keys=True)


@pytest.fixture(scope="module")
def in_process(demo):
    return _document(demo["parquet"], _settings())


def test_duckdb_gives_the_model_file_of_the_in_process_engine(demo, in_process):
    _same(_document(demo["parquet"], _settings(engine="duckdb")), in_process)
    # a CSV read by DuckDB (every cell as text, typed as a whole read types it) and read in process
    _same(_document(demo["csv"], _settings(engine="duckdb")), _document(demo["csv"], _settings()))
    # a table of a database, and a query that reads it in another row order: the same rows, the same model
    table = ledger_place(_settings(engine="duckdb", table="applications"), path=demo["database"])
    _same(_document(table, _settings(engine="duckdb")), in_process, apart_from_the_source=True)
    query = ledger_place(_settings(engine="duckdb"), path=demo["database"],
                         query="SELECT * FROM applications ORDER BY md5(application_id)")
    _same(_document(query, _settings(engine="duckdb")), in_process, apart_from_the_source=True)


def test_how_numbers_read_is_judged_on_every_row_through_an_engine(demo, in_process, monkeypatch):
    # the engine judges kinds on its first rows (here 500), the lowest value and whole numbers on every row
    import scorecard.intake.sql

    monkeypatch.setattr(scorecard.intake.sql, "HEAD_ROWS", 500)
    _same(_document(demo["parquet"], _settings(engine="duckdb")), in_process)


def test_keys_found_by_their_buckets_give_the_same_samples(demo, monkeypatch):
    # above DIRECT_KEYS rows, the edge of each class's hold-out (and of each sub-sample) is found by
    # counting the keys per bucket of their top bits and reading one bucket: lowered here to reach it
    import scorecard.intake.sql

    monkeypatch.setattr(scorecard.intake.sql, "DIRECT_KEYS", 100)
    settings = _settings(engine="duckdb").replace(selection={"sample_rows": 2_000})
    _same(_document(demo["parquet"], settings), _document(demo["parquet"], settings.replace(ledger={"engine": "in-process"})))


def test_spark_gives_the_model_file_of_the_in_process_engine(demo, in_process):
    _same(_document(demo["parquet"], _settings(engine="spark")), in_process)


def test_texts_keys_and_bins_in_spark_equal_those_made_here():
    # the probes of tests/test_rows_sql.py, on Spark: its float-to-text, literals and NULLs differ from DuckDB's
    engine = connect(RowPlace("spark", query="SELECT 1 AS one"))
    rows = sqlprobes.probe_table()
    table = sqlprobes.registered(engine, rows)
    sqlprobes.check_keys(engine, table, rows)
    sqlprobes.check_codes(engine, table, rows)


def test_without_an_id_the_row_hash_and_repeated_rows_split_alike(demo, tmp_path):
    # every row three times and no id column: rows of equal key meet at the edge of the hold-out,
    # where any of the equal rows will do; the counts, so the model, must not change
    frame = pd.read_parquet(demo["parquet"]).drop(columns=["application_id"]).head(3_000)
    path = write_ledger(pd.concat([frame] * 3, ignore_index=True), tmp_path / "repeated.parquet")
    settings = _settings(id_column="")
    _same(_document(path, settings.replace(ledger={"engine": "duckdb"})), _document(path, settings))


@pytest.mark.parametrize("engine", ["duckdb", "spark"])
def test_repeated_rows_are_keyed_apart_alike_in_every_engine(demo, tmp_path, monkeypatch, engine):
    # without an id, the repeats of a row take keys of their own (scorecard.rows.keys, rule 3): the engine's
    # split keys are those of the in-process engine, key for key (which of identical rows has which is no matter)
    import scorecard.intake.prepare as prepare

    frame = pd.read_parquet(demo["parquet"]).drop(columns=["application_id"]).head(150)
    path = write_ledger(pd.concat([frame] * 4, ignore_index=True), tmp_path / "repeated.parquet")
    settings = _settings(id_column="")
    made, sample_keys = [], prepare.sample_keys
    monkeypatch.setattr(prepare, "sample_keys", lambda *arguments: made.append(sample_keys(*arguments)) or made[-1])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        open_ledger(path, settings)
        _, rows = open_ledger(path, settings.replace(ledger={"engine": engine}))
    try:
        keys = rows.engine.arrow("SELECT sw__key FROM sw__base").column("sw__key").to_numpy()
    finally:
        rows.close()
    assert len(np.unique(made[0])) == len(made[0]) == 600  # every row its own key
    np.testing.assert_array_equal(np.sort(keys), np.sort(made[0]))


COEFFICIENT_RTOL = 1e-9  # the engine adds the Newton sums in its own order; both fits stop at the same tolerance


def test_a_final_table_too_large_to_bring_here_is_fitted_in_the_engine(demo, monkeypatch):
    # the limit lowered so that the demo's final table stays in DuckDB: each Newton step is one pass there
    import scorecard.rows.sqlrows

    monkeypatch.setattr(scorecard.rows.sqlrows, "ENGINE_PATTERNS", 100)
    settings = _settings().replace(selection={"sample_rows": 2_000})  # the choice on a sample: the final table apart
    builds = []
    for engine in ("in-process", "duckdb"):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ledger, rows = open_ledger(demo["parquet"], settings.replace(ledger={"engine": engine}))
            builds.append(build_scorecard(ledger, settings, rows=rows))
            rows.close()
    here, there = builds
    assert there.selection.fit.solver == "newton (in the engine)" and here.selection.chosen == there.selection.chosen
    np.testing.assert_allclose(there.selection.fit.coefficients, here.selection.fit.coefficients, rtol=COEFFICIENT_RTOL)
    np.testing.assert_allclose(there.selection.fit.std_errors, here.selection.fit.std_errors, rtol=COEFFICIENT_RTOL)
    for mine, theirs in zip(here.scorecard.table.characteristics, there.scorecard.table.characteristics):
        np.testing.assert_array_equal(mine.points, theirs.points)
    assert here.histograms["hold-out"].to_dict() == there.histograms["hold-out"].to_dict()


@pytest.fixture(scope="module")
def in_process_outputs(demo):
    """The in-process engine's scores and monitoring summary of the demo ledger, with the model built by the command line."""
    model = _cli_build(demo)
    _run("score", model, demo["parquet"], "--out", demo["folder"] / "in-process.parquet")
    summary = _run("monitor", model, demo["parquet"], "--out", demo["folder"] / "monitor-in-process")[0]
    return model, pd.read_parquet(demo["folder"] / "in-process.parquet"), summary.split("written:")[0]


@pytest.mark.parametrize("engine", ["duckdb", "spark"])
def test_scores_and_monitoring_through_an_engine_equal_the_in_process_ones(demo, in_process_outputs, tmp_path, engine):
    model, expected, summary = in_process_outputs
    scored = tmp_path / f"{engine}.parquet"
    _run("score", model, demo["parquet"], "--engine", engine, "--out", scored)
    found = pd.read_parquet(scored).set_index("application_id").loc[expected["application_id"]].reset_index()
    pd.testing.assert_frame_equal(found[expected.columns], expected, check_dtype=False)
    mine = _run("monitor", model, demo["parquet"], "--engine", engine, "--out", tmp_path / "monitor")[0].split("written:")[0]
    assert mine == summary and "per quarter: 2024Q1" in summary


def test_scores_are_written_back_as_a_table_of_the_database(demo, in_process_outputs):
    model, expected, _ = in_process_outputs
    _run("score", model, demo["database"], "--engine", "duckdb", "--table", "applications", "--out-table", "scores", "--force")
    with duckdb.connect(str(demo["database"]), read_only=True) as con:
        table = con.sql("SELECT * FROM scores ORDER BY application_id").df()
    expected = expected.sort_values("application_id", ignore_index=True)
    np.testing.assert_array_equal(table["score"].to_numpy(), expected["score"].to_numpy())
    assert list(table.columns) == list(expected.columns)
    code, _, err = _main("score", model, demo["database"], "--engine", "duckdb", "--table", "applications", "--out-table", "scores")
    assert code == 2 and "scores: the table exists" in err


@pytest.mark.parametrize("engine, arguments, message", [
    ("duckdb", ["--table", "loans"], r"table 'loans' in warehouse.duckdb: DuckDB cannot read the ledger: Catalog Error: Table with name loans does not exist"),
    ("duckdb", ["--query", "SELECT nothing FROM applications"], r'the query in warehouse.duckdb: DuckDB cannot read the ledger: Binder Error: Referenced column "nothing" not found'),
    ("duckdb", ["--query", "DELETE FROM applications"], r"the query must be one SELECT statement"),
    ("duckdb", ["--query", "SELECT application_id, outcome FROM applications"], r"columns 'worst_arrears_24m', .* of the scorecard are not in the ledger"),
    ("spark", ["--table", "loans"], r"table 'loans': Spark cannot read the ledger: \[TABLE_OR_VIEW_NOT_FOUND\]"),
    ("spark", ["--query", "DROP TABLE applications"], r"the query: Spark cannot read the ledger: \[PARSE_SYNTAX_ERROR\]"),
])
def test_bad_input_through_an_engine_is_one_clear_message_and_exit_2(demo, tmp_path, engine, arguments, message):
    model = _cli_build(demo)
    ledger = [demo["database"]] if engine == "duckdb" else []
    code, out, err = _main("score", model, *ledger, "--engine", engine, *arguments, "--out", tmp_path / "scored.parquet")
    assert code == 2, err
    assert pytest.approx(0) == len(out)
    assert err.count("\n") == 1 and "Traceback" not in err
    import re

    assert re.search(message, err), err
    assert not (tmp_path / "scored.parquet").exists()


def test_a_build_through_an_engine_names_bad_rows_by_their_ids(demo, tmp_path):
    frame = pd.read_parquet(demo["parquet"]).head(2_000)
    frame["outcome"] = frame["outcome"].astype(str)
    frame.loc[[7, 1500], "outcome"] = "maybe"
    path = write_ledger(frame, tmp_path / "odd.parquet")
    settings = tmp_path / "odd.toml"
    settings.write_text(f'[ledger]\npath = "{path}"\nengine = "duckdb"\nid_column = "application_id"\n'
                        '[outcome]\ncolumn = "outcome"\nbad = ["bad"]\ngood = ["good"]\nindeterminate = ["indeterminate"]\n')
    code, _, err = _main("build", settings, "--out", tmp_path / "out")
    assert code == 2
    assert "odd.parquet, column 'outcome', 2 rows (ids 'A000000008' and 'A000001501'): value 'maybe' (2 rows) is not a mapped outcome" in err


# --------------------------------------------------------------------------------------------


def _main(*argv):
    out, err = io.StringIO(), io.StringIO()
    code = main([str(a) for a in argv], stdout=out, stderr=err)
    return code, out.getvalue(), err.getvalue()


def _run(*argv):
    code, out, err = _main(*argv)
    assert code in (0, 1), err
    return out, err


def _cli_build(demo):
    """A model built from the demo ledger by the command line (in process), once per module."""
    model = demo["folder"] / "build" / "model.json"
    if not model.exists():
        settings = demo["folder"] / "scorecard.toml"
        _run("init", demo["parquet"], "--target", "outcome", "--bad", "bad", "--good", "good", "--indeterminate", "indeterminate",
             "--out-of-time-from", "2025-01-01", "--leave-out", "collections_status", "--out", settings, "--force")
        _run("build", settings, "--out", demo["folder"] / "build", "--no-reports", "--force")
    return model


def test_rejected_applications_through_an_engine_are_refused_with_what_to_do(demo, tmp_path):
    # reject inference sets the rejected rows apart in memory; an engine keeps every row where it is
    from scorecard.demo.generator import with_rejections

    frame, _ = with_rejections(pd.read_parquet(demo["parquet"]).head(3_000), seed=DEMO_SEED)
    path = write_ledger(frame, tmp_path / "decided.parquet")
    settings = _settings(engine="duckdb").replace(rejects={"decision_column": "decision", "rejected": ("declined",)})
    with pytest.raises(LedgerError, match=r"decided.parquet: \d[\d,]* rejected applications, which are set apart .* only by the "
                                        r"in-process engine"):
        _document(path, settings)
