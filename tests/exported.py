"""Run an exported scorecard in the programs it is written for, and put the results side by side.

Each runner takes the model's rules and a frame of applications (as scorewright reads a ledger:
missing values are NaN or None) and returns a frame with ``score``, ``pd`` and ``reasons`` (a
tuple of codes per row, empty when there is none), in the frame's row order:

- ``run_python``: the generated file, imported from disk, ``score(record)`` on each row;
- ``run_sql``: the query on SQLite (the standard library's) or DuckDB, the applications loaded
  as typed columns (DOUBLE PRECISION for numeric, text for categorical, NULL for missing);
- ``run_pmml``: the PMML file in JPMML-Evaluator (``jpmml_evaluator``, a general-purpose PMML
  evaluator from PyPI, AGPL-3.0: a test-only dependency, never imported by ``scorecard`` and not
  shipped in its wheel), started in this process through JPype.
"""

from __future__ import annotations

import importlib.util
import sqlite3
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard.exports import ExportModel
from scorecard.terms import NUMERIC, value_text

ID = "application_id"
TABLE = "applications"
PD_RTOL = 1e-14  # Java's Math.exp is specified to 1 ulp only; every probability we met was bit-identical


def typed_columns(frame: pd.DataFrame, model: ExportModel) -> dict[str, list]:
    """The model's columns as the exports take them: floats or None; level text (scorewright's) or None."""
    columns = {}
    for c in model.characteristics:
        values = frame[c.name]
        missing = values.isna().to_numpy()
        if c.kind == NUMERIC:
            numbers = values.to_numpy(dtype=float, na_value=np.nan)
            columns[c.name] = [None if gone else float(x) for x, gone in zip(numbers, missing)]
        else:
            columns[c.name] = [None if gone else value_text(v) for v, gone in zip(values.to_numpy(dtype=object), missing)]
    return columns


def reasons_of(frame: pd.DataFrame, count: int) -> list[tuple[str, ...]]:
    """Reason codes per row of a scored frame (columns reason_1 ...): '', None and NaN mean none."""
    columns = [frame[f"reason_{rank}"].tolist() for rank in range(1, count + 1)]
    return [tuple(str(v) for v in row if isinstance(v, str) and v) for row in zip(*columns)] if columns else [()] * len(frame)


def run_python(path: Path, frame: pd.DataFrame, model: ExportModel) -> pd.DataFrame:
    spec = importlib.util.spec_from_file_location(f"exported_{abs(hash(str(path)))}", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    columns = typed_columns(frame, model)
    names = list(columns)
    results = [module.score(dict(zip(names, values))) for values in zip(*columns.values())]
    return pd.DataFrame({"score": [r[0] for r in results], "pd": [r[1] for r in results],
                         "reasons": [r[2] for r in results]})


def connect(engine: str):
    if engine == "sqlite":
        return sqlite3.connect(":memory:")
    import duckdb

    return duckdb.connect(":memory:")


def load_applications(connection, frame: pd.DataFrame, model: ExportModel, *, table: str = TABLE, id_column: str = ID) -> None:
    """Create the table of applications, typed, with a numeric id (the row's position)."""
    columns = typed_columns(frame, model)
    names = [id_column, *columns]
    types = ["INTEGER", *("DOUBLE PRECISION" if c.kind == NUMERIC else "VARCHAR" for c in model.characteristics)]
    quoted = [_identifier(n) for n in names]
    connection.execute(f"CREATE TABLE {_identifier(table)} ({', '.join(f'{q} {t}' for q, t in zip(quoted, types))})")
    rows = list(zip(range(len(frame)), *columns.values()))
    if isinstance(connection, sqlite3.Connection):
        connection.executemany(f"INSERT INTO {_identifier(table)} VALUES ({', '.join('?' for _ in names)})", rows)
    else:  # DuckDB inserts row by row slowly; it reads a frame of Python objects by name instead
        staged = pd.DataFrame(rows, columns=names, dtype=object)
        connection.register("staged", staged)
        connection.execute(f"INSERT INTO {_identifier(table)} SELECT * FROM staged")
        connection.unregister("staged")


def sql_rows(engine: str, query: str, frame: pd.DataFrame, model: ExportModel, *, id_column: str = ID) -> pd.DataFrame:
    """The query's result on the applications, as the engine returns it, in the frame's row order."""
    connection = connect(engine)
    try:
        load_applications(connection, frame, model, id_column=id_column)
        cursor = connection.execute(query)
        names = [d[0] for d in cursor.description]
        rows = cursor.fetchall()
    finally:
        connection.close()
    return pd.DataFrame(rows, columns=names).sort_values(id_column, kind="stable").reset_index(drop=True)


def run_sql(engine: str, query: str, frame: pd.DataFrame, model: ExportModel, *, id_column: str = ID) -> pd.DataFrame:
    result = sql_rows(engine, query, frame, model, id_column=id_column)
    return pd.DataFrame({"score": result["score"], "pd": result["pd"].astype(float),
                         "reasons": reasons_of(result, model.reason_count)})


def pmml_evaluator(path: Path):
    """JPMML-Evaluator on a PMML file, in this process (JPype); verify() checks the file's own examples."""
    from jpmml_evaluator import make_evaluator

    return make_evaluator(str(path), backend="jpype").verify()


def run_pmml(evaluator, frame: pd.DataFrame, model: ExportModel) -> pd.DataFrame:
    inputs = pd.DataFrame(typed_columns(frame, model), dtype=object)
    results = evaluator.evaluateAll(inputs, nan_as_missing=False)  # missing is None already
    reasons = pd.DataFrame({f"reason_{rank}": results[f"Reason{rank}"] for rank in range(1, model.reason_count + 1)})
    return pd.DataFrame({"score": results["Score"].astype(float), "pd": results["Probability"].astype(float),
                         "reasons": reasons_of(reasons, model.reason_count)})


def differences(expected: pd.DataFrame, got: pd.DataFrame, *, pd_rtol: float = 0.0) -> list[str]:
    """Rows where score, pd or reasons differ (score and reasons exactly; pd within ``pd_rtol``), the first ten."""
    found = []
    close = np.isclose(got["pd"].to_numpy(float), expected["pd"].to_numpy(float), rtol=pd_rtol, atol=0.0)
    for i, (a, b, same_pd) in enumerate(zip(expected.itertuples(index=False), got.itertuples(index=False), close)):
        if a.score != b.score or not same_pd or tuple(a.reasons) != tuple(b.reasons):
            found.append(f"row {i}: expected {a.score!r} {a.pd!r} {a.reasons}, got {b.score!r} {b.pd!r} {b.reasons}")
            if len(found) == 10:
                break
    return found


def _identifier(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def edge_values(c) -> list:
    """Values that hit every rule of a characteristic: missing, each special value, each cut exactly
    and one double below it, each level, and a level never seen."""
    import math

    from scorecard.exports.rules import INTERVAL, LEVELS, SPECIAL

    values: list = [None]
    for rule in c.rules:
        if rule.kind == SPECIAL:
            values.append(rule.value)
        elif rule.kind == INTERVAL:
            values += [rule.upper, math.nextafter(rule.upper, -math.inf)]
        elif rule.kind == LEVELS:
            values += list(rule.levels)
    if c.kind != NUMERIC:
        values += ["never seen level", ""]
    return values


def edge_frame(model: ExportModel) -> pd.DataFrame:
    """Applications that between them hit every rule of every characteristic (columns rotated so
    that rows mix the edges of different characteristics)."""
    columns = [edge_values(c) for c in model.characteristics]
    n = max(len(v) for v in columns)
    data = {c.name: [values[(i + j) % len(values)] for i in range(n)]
            for j, (c, values) in enumerate(zip(model.characteristics, columns))}
    frame = pd.DataFrame({name: pd.Series(values, dtype=float if c.kind == NUMERIC else object)
                          for (name, values), c in zip(data.items(), model.characteristics)})
    return frame


# Levels an export must carry exactly: quotes of both kinds, backslashes, spaces at the ends, a
# tab, text XML escapes, a number-like level and letters beyond ASCII (invented, no source)
AWKWARD_LEVELS = ("O'Brien \"North\"", "back\\slash\\", "  spaced  ", "Ünïcödé ✓", "comma, semi;colon", "1", "tab\there",
                  "<&amp;>")
AWKWARD_COLUMN = 'months at "address"'


def awkward_model(path: Path) -> Path:
    """Build and save a model the demo's does not cover: points with 1 decimal, 3 reasons, the
    awkward levels above in 'region', a column name with a space and quotes, a special value in a
    bin of its own and one that joins a class, and a characteristic with no missing value in
    development (so a missing value at scoring time goes to the unseen bin)."""
    from scorecard import Settings, build_scorecard
    from scorecard.demo.generator import generate_ledger
    from scorecard.modelfile import model_document, save_model
    from scorecard.settings import CharacteristicSettings

    frame = generate_ledger(6000, seed=7)
    frame["region"] = frame["region"].map(dict(zip(frame["region"].cat.categories, AWKWARD_LEVELS))).astype(object)
    frame = frame.rename(columns={"months_at_address": AWKWARD_COLUMN})
    always = CharacteristicSettings(use="always")
    settings = Settings().replace(
        outcome={"column": "outcome", "bad": ["bad"], "good": ["good"], "indeterminate": ["indeterminate"]},
        ledger={"id_column": "application_id", "date_column": "application_date", "leave_out": ["collections_status"]},
        scaling={"decimals": 1}, reasons={"count": 3},
        characteristics={
            "region": always, AWKWARD_COLUMN: always, "applicant_age": always,
            "months_since_delinquency": CharacteristicSettings(special_values=(-1.0,)),
            "months_since_last_enquiry": CharacteristicSettings(special_values=(999.0,), cuts=(1.0, 3.0, 12.0), specials=(1,),
                                                                bad_rate_shape="any", use="always"),
        },
    )
    save_model(model_document(build_scorecard(frame, settings)), path)
    return path
