"""Time every way of applying a scorecard to the same applications: scorewright score and its exports.

``python -m benchmarks.exports [--rows 1000000] [--model-rows 40000]``

The model is the demo's (``scorewright demo --rows MODEL_ROWS``, built once into
benchmarks/runs/exports/demo-MODEL_ROWS/); the applications are ``--rows`` more of the demo generator's (another
seed), written once as Parquet into benchmarks/data/. Then, each once, one after the other:

- ``scorewright score`` (a whole process: read the Parquet file, score, write Parquet);
- the Python file: ``score(record)`` on each application, the records already in memory;
- the SQL query on DuckDB: the table loaded from the Parquet file, then ``CREATE TABLE ... AS``
  the query (so the engine's time, not fetching rows into Python);
- the SQL query on SQLite (the standard library's): the table loaded by ``executemany``, then
  the same ``CREATE TABLE ... AS``, once as standard SQL and once with ``--materialize``;
- the PMML file in JPMML-Evaluator (jpype backend), started once, ``evaluateAll`` in blocks of
  100,000 rows.

Loading and scoring are timed apart. The figures go to stdout and to benchmarks/EXPORTS.md. Every
path's scores are checked against scorewright's on the first 10,000 rows, so a fast wrong answer
cannot pass as a figure.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import platform
import sqlite3
import subprocess
import sys
import time
from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd

from . import DATA, HERE, RUNS

CHECKED_ROWS = 10_000
PMML_BLOCK = 100_000


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.exports", description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000, help="applications to score (default 1000000)")
    parser.add_argument("--model-rows", type=int, default=40_000, help="rows of the demo that builds the model (default 40000)")
    options = parser.parse_args(argv)
    folder = RUNS / "exports"
    model = _demo_model(folder, options.model_rows)
    applications = _applications(options.rows)
    frame = pd.read_parquet(applications)
    figures: dict[str, dict[str, float]] = {}
    expected = _score_command(model, applications, folder, figures)
    files = _exports(model, folder)
    from scorecard.exports import export_model
    from scorecard.modelfile import load_model

    rules = export_model(load_model(model))
    columns = _typed_columns(frame, rules)
    figures["Python file"], got = _python(files["py"], columns)
    _check("Python file", expected, got)
    figures["SQL on DuckDB"], got = _duckdb(files["sql"], applications, columns["application_id"])
    _check("SQL on DuckDB", expected, got)
    for name, key in (("SQL on SQLite", "sql"), ("SQL on SQLite, --materialize", "materialized")):
        figures[name], got = _sqlite(files[key], columns, rules)
        _check(name, expected, got)
    figures["PMML in JPMML-Evaluator"], got = _pmml(files["pmml"], columns)
    _check("PMML in JPMML-Evaluator", expected, got)
    text = _markdown(figures, options, len(frame))
    print(text)
    (HERE / "EXPORTS.md").write_text(text, encoding="utf-8")
    return 0


def _log(text: str) -> None:
    print(f"[{datetime.now():%H:%M:%S}] {text}", file=sys.stderr, flush=True)


def _demo_model(folder: Path, rows: int) -> Path:
    model = folder / f"demo-{rows}" / "build" / "model.json"
    if not model.exists():
        _log(f"building the demo's model on {rows:,} rows ...")
        subprocess.run([sys.executable, "-m", "scorecard", "demo", "--rows", str(rows), "--out", str(model.parent.parent),
                        "--force", "--quiet"], check=True, stdout=subprocess.DEVNULL)
    return model


def _applications(rows: int) -> Path:
    path = DATA / f"applications-{rows}.parquet"
    if not path.exists():
        _log(f"generating {rows:,} applications ...")
        from scorecard.demo.generator import generate_ledger

        DATA.mkdir(parents=True, exist_ok=True)
        frame = generate_ledger(rows, seed=11).drop(columns=["outcome", "collections_status"])
        frame.to_parquet(path)
    return path


def _score_command(model: Path, applications: Path, folder: Path, figures) -> pd.DataFrame:
    out = folder / "scored.parquet"
    _log("scorewright score ...")
    start = time.perf_counter()
    subprocess.run([sys.executable, "-m", "scorecard", "score", str(model), str(applications), "--out", str(out),
                    "--force", "--quiet"], check=True)
    figures["scorewright score"] = {"whole process (read, score, write)": time.perf_counter() - start}
    scored = pd.read_parquet(out).head(CHECKED_ROWS)
    return scored


def _exports(model: Path, folder: Path) -> dict[str, Path]:
    files = {}
    for key, name, extra in (("pmml", "scorecard.pmml", []), ("sql", "scorecard.sql", []),
                             ("materialized", "materialized.sql", ["--materialize"]), ("py", "scorecard.py", [])):
        files[key] = folder / name
        subprocess.run([sys.executable, "-m", "scorecard", "export", str(model), "--out", str(files[key]), "--force",
                        "--quiet", *extra], check=True, stdout=subprocess.DEVNULL)
    return files


def _typed_columns(frame: pd.DataFrame, rules) -> dict[str, list]:
    from scorecard.terms import NUMERIC, value_text

    columns = {"application_id": frame["application_id"].astype(str).tolist()}
    for c in rules.characteristics:
        values = frame[c.name]
        missing = values.isna().to_numpy()
        if c.kind == NUMERIC:
            columns[c.name] = [None if gone else float(x) for x, gone in zip(values.to_numpy(float, na_value=np.nan), missing)]
        else:
            columns[c.name] = [None if gone else value_text(v) for v, gone in zip(values.to_numpy(object), missing)]
    return columns


def _python(path: Path, columns) -> tuple[dict[str, float], list]:
    _log("the Python file ...")
    start = time.perf_counter()
    spec = importlib.util.spec_from_file_location("exported_scorecard", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    names = list(columns)
    records = [dict(zip(names, values)) for values in zip(*columns.values())]
    loaded = time.perf_counter()
    score = module.score
    results = [score(record) for record in records]
    done = time.perf_counter()
    return {"import and make records": loaded - start, "score": done - loaded}, [r[0] for r in results[:CHECKED_ROWS]]


def _create_as(query_file: Path) -> str:
    body = "\n".join(line for line in query_file.read_text(encoding="utf-8").splitlines() if not line.startswith("--"))
    return "CREATE TABLE scored AS " + body.rstrip().rstrip(";")


def _duckdb(query_file: Path, applications: Path, ids: list) -> tuple[dict[str, float], list]:
    import duckdb

    _log("SQL on DuckDB ...")
    connection = duckdb.connect(":memory:")
    start = time.perf_counter()
    connection.execute(f"CREATE TABLE applications AS SELECT * FROM read_parquet('{applications}')")
    loaded = time.perf_counter()
    connection.execute(_create_as(query_file))
    done = time.perf_counter()
    by_id = dict(connection.execute("SELECT application_id, score FROM scored").fetchall())
    connection.close()
    return {"load the table": loaded - start, "query": done - loaded}, [by_id[i] for i in ids[:CHECKED_ROWS]]


def _sqlite(query_file: Path, columns, rules) -> tuple[dict[str, float], list]:
    from scorecard.terms import NUMERIC

    _log(f"SQL on SQLite ({query_file.name}) ...")
    connection = sqlite3.connect(":memory:")
    names = list(columns)
    types = ["TEXT", *("DOUBLE PRECISION" if c.kind == NUMERIC else "TEXT" for c in rules.characteristics)]
    start = time.perf_counter()
    connection.execute("CREATE TABLE applications (" + ", ".join(f'"{n}" {t}' for n, t in zip(names, types)) + ")")
    connection.executemany(f"INSERT INTO applications VALUES ({', '.join('?' for _ in names)})", zip(*columns.values()))
    loaded = time.perf_counter()
    connection.execute(_create_as(query_file))
    done = time.perf_counter()
    by_id = dict(connection.execute("SELECT application_id, score FROM scored").fetchall())
    connection.close()
    return {"load the table": loaded - start, "query": done - loaded}, [by_id[i] for i in columns["application_id"][:CHECKED_ROWS]]


def _pmml(path: Path, columns) -> tuple[dict[str, float], list]:
    _log("PMML in JPMML-Evaluator ...")
    start = time.perf_counter()
    from jpmml_evaluator import make_evaluator

    evaluator = make_evaluator(str(path), backend="jpype").verify()
    started = time.perf_counter()
    inputs = pd.DataFrame({k: v for k, v in columns.items() if k != "application_id"}, dtype=object)
    made = time.perf_counter()
    scores = []
    for first in range(0, len(inputs), PMML_BLOCK):
        results = evaluator.evaluateAll(inputs.iloc[first:first + PMML_BLOCK], nan_as_missing=False)
        scores += results["Score"].tolist()
    done = time.perf_counter()
    return {"start the JVM and load": started - start, "make the input frame": made - started,
            "evaluate": done - made}, scores[:CHECKED_ROWS]


def _check(name: str, expected: pd.DataFrame, got: list) -> None:
    wrong = int(np.sum(np.asarray(got, dtype=float) != expected["score"].to_numpy(float)))
    if wrong:
        raise SystemExit(f"{name}: {wrong} of the first {CHECKED_ROWS:,} scores differ from scorewright's")


def _markdown(figures, options, rows: int) -> str:
    lines = [
        "# Applying the scorecard: scorewright score and its exports",
        "",
        f"`python -m benchmarks.exports --rows {options.rows} --model-rows {options.model_rows}`, run "
        f"{datetime.now():%Y-%m-%d %H:%M}, {platform.python_implementation()} {platform.python_version()}, "
        "2 cores shared with other work. One run each; seconds of wall time.",
        f"{rows:,} applications of the demo scenario (another seed than the model's), the demo's model. "
        f"Each path's scores equal scorewright's on the first {CHECKED_ROWS:,} rows (checked by the script).",
        "",
        "| path | step | seconds | total |",
        "| --- | --- | ---: | ---: |",
    ]
    for path, steps in figures.items():
        total = sum(steps.values())
        for i, (step, seconds) in enumerate(steps.items()):
            lines.append(f"| {path if i == 0 else ''} | {step} | {seconds:.2f} | {f'{total:.1f}' if i == 0 else ''} |")
    lines += ["", "Figures as JSON: " + json.dumps({p: {k: round(v, 3) for k, v in s.items()} for p, s in figures.items()}), ""]
    return "\n".join(lines)


if __name__ == "__main__":
    raise SystemExit(main())
