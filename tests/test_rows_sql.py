"""Tests of scorecard/rows/sql.py and scorecard/rows/duckdb.py: DuckDB's SQL computes what the in-process engine computes.

The probes (tests/sqlprobes.py) compare texts, split keys and bins value by value; the same
probes run on Spark in tests/test_engines.py.
"""

from __future__ import annotations

import pytest

import sqlprobes  # tests/sqlprobes.py: values that break careless rules
from scorecard.errors import LedgerError
from scorecard.rows import RowPlace, connect, sql


@pytest.fixture(scope="module")
def engine():
    connection = connect(RowPlace("duckdb", query="SELECT 1 AS one"))
    yield connection
    connection.close()


def test_texts_and_keys_in_duckdb_equal_those_made_here(engine):
    rows = sqlprobes.probe_table()
    sqlprobes.check_keys(engine, sqlprobes.registered(engine, rows), rows)


def test_bins_in_duckdb_equal_those_made_here(engine):
    rows = sqlprobes.probe_table()
    sqlprobes.check_codes(engine, sqlprobes.registered(engine, rows), rows)


def test_literals_read_back_as_the_values_they_stand_for(engine):
    values = ["O'Brien", "back\\slash", "東京", "", "tab\tx"]
    found = engine.arrow("SELECT " + ", ".join(f"{sql.DUCKDB_SQL.text(v)} AS v{i}" for i, v in enumerate(values))).to_pylist()[0]
    assert list(found.values()) == values
    doubles = [0.1, 1e-300, 5e-324, -0.0, 2.0**63, float("inf")]
    found = engine.arrow("SELECT " + ", ".join(f"{sql.DUCKDB_SQL.double(v)} AS v{i}" for i, v in enumerate(doubles))).to_pylist()[0]
    assert list(found.values()) == doubles


def test_spark_literals_escape_what_spark_reads_as_escapes():
    # Spark's parser reads backslash escapes inside literals (its SQL reference, "String Literal")
    assert sql.SPARK_SQL.text("O'Brien") == "'O\\'Brien'" and sql.SPARK_SQL.text("a\\b") == "'a\\\\b'"
    assert sql.SPARK_SQL.identifier("odd`name") == "`odd``name`" and sql.DUCKDB_SQL.identifier('odd"name') == '"odd""name"'


def test_an_engine_error_is_our_error_with_the_engine_s_own_words(engine):
    with pytest.raises(LedgerError, match=r"DuckDB stopped: Catalog Error: Table with name nowhere does not exist"):
        engine.arrow("SELECT * FROM nowhere")
