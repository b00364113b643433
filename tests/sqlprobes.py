"""Probes of the engines' SQL against the in-process row work: the same values must give the same texts, keys and bins.

Each probe builds a small table of values chosen to break a careless rule (floats at powers of
two, subnormals, -0.0, infinities, NaN beside NULL, whole numbers beyond 2**53, multi-byte and
quoted text, levels with quotes and backslashes), hands it to an engine, and compares what the
engine's SQL computes with what ``scorecard.rows.keys`` and ``scorecard.rows.coding`` compute here.
Used by tests/test_rows_sql.py (DuckDB) and tests/test_engines.py (Spark).
"""

from __future__ import annotations

import datetime

import numpy as np
import pandas as pd
import pyarrow as pa

from scorecard.classing import categorical_binning, numeric_binning
from scorecard.rows import code_rows, sql
from scorecard.rows.keys import row_texts, split_keys, subsample_keys

FLOATS = [0.0, -0.0, 1.0, -1.0, 0.1, 1 / 3, 2.0**52, 2.0**53 + 2, 2.0**63, -(2.0**63), 2.0**62, 1e23, 1e-300, 5e-324,
          2.2250738585072014e-308, 2.225073858507201e-308, np.inf, -np.inf, np.nan, None, 123.456, -7.25e-5,
          np.nextafter(1.0, 2.0), np.nextafter(1.0, 0.0), 4.0, np.nextafter(4.0, 0.0)]
TEXTS = ["", "a", "naïve", "東京", "🙂", "e\u0301", "O'Brien", "back\\slash", "tab\tx", " padded ", "x" * 80, None]


def probe_table(n: int = 52) -> pa.Table:
    """One row per probe value, every column filled by cycling its values."""
    pick = lambda values: [values[i % len(values)] for i in range(n)]  # noqa: E731
    return pa.table({
        "id": pa.array(pick([f"ID-{i}" for i in range(n)]), pa.string()),
        "whole": pa.array(pick([0, -1, 2**53 + 1, -(2**63), 2**63 - 1, 42]), pa.int64()),
        # pandas holds whole numbers with gaps as floats: exact below 2**53 only (so the values here are small)
        "sparse": pa.array(pick([1, None, -5, 2**40]), pa.int64()),
        "real": pa.array(pick(FLOATS), pa.float64()),
        "text": pa.array(pick(TEXTS), pa.string()),
        "flag": pa.array(pick([True, False, None]), pa.bool_()),
        "day": pa.array(pick([datetime.date(2024, 2, 29), datetime.date(1, 1, 1), datetime.date(9999, 12, 31), None]), pa.date32()),
        "stamp": pa.array(pick([datetime.datetime(1970, 1, 1, 0, 0, 1), datetime.datetime(1969, 12, 31, 23, 59, 59, 999999),
                                datetime.datetime(2025, 7, 1, 12, 30), None]), pa.timestamp("us")),
    })


def check_keys(engine, table: str, rows: pa.Table, seed: int = 20260101) -> None:
    """Row texts and split keys in the engine equal those made here, for every column and for the id alone."""
    dialect = engine.dialect
    kinds = {name: sql.value_kind(kind) for name, kind in zip(rows.schema.names, rows.schema.types)}
    frame = rows.to_pandas()
    for columns in (list(kinds), ["id"], ["real"], ["text"]):
        chosen = {c: kinds[c] for c in columns}
        text = sql.row_text(dialect, chosen)
        found = engine.arrow(f"SELECT id, {text} AS t, {sql.key(dialect, text, seed)} AS k FROM {table}").to_pandas()
        found = found.set_index("id").loc[frame["id"]]
        assert found["t"].tolist() == row_texts(frame, columns).to_pylist(), columns
        assert found["k"].tolist() == split_keys(frame, columns, seed).tolist(), columns
    keys = split_keys(frame, ["id"], seed)
    mixed = engine.arrow(f"SELECT id, {sql.subsample_key(dialect, sql.key(dialect, sql.row_text(dialect, {'id': 'text'}), seed), 'classing')} "
                         f"AS m FROM {table}").to_pandas().set_index("id").loc[frame["id"]]
    assert mixed["m"].tolist() == subsample_keys(keys, "classing").tolist()


def check_codes(engine, table: str, rows: pa.Table) -> None:
    """Bins made by the engine's CASE expressions equal ``code_rows``'s, on and beside every cut."""
    dialect = engine.dialect
    frame = rows.to_pandas()
    numeric = numeric_binning("real", [-1.0, 0.0, 0.1, 1.0, 4.0, 1e23], special_values=[2.0**62, 123.456],
                              special_bins=[None, 2], has_missing=True)
    levels = categorical_binning("text", [("a", "O'Brien"), ("back\\slash", "tab\tx", "東京"), ("naïve", "")], has_missing=False)
    for binning, column, kind in ((numeric, "real", "float"), (levels, "text", "text")):
        code = sql.code(dialect, dialect.identifier(column), binning, value_kind_=kind)
        found = engine.arrow(f"SELECT id, {code} AS c FROM {table}").to_pandas().set_index("id").loc[frame["id"]]
        expected = code_rows(frame[column] if kind == "text" else frame[column].astype(float), binning)
        np.testing.assert_array_equal(found["c"].to_numpy(), expected, err_msg=column)


def registered(engine, rows: pa.Table, name: str = "sw__probe") -> str:
    """The probe table, named in the engine."""
    engine.register(name, rows)
    return name


