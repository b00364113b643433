"""The scorecard as one SQL query: a ``SELECT`` with ``CASE`` expressions over a table of applications.

The query is standard SQL (``WITH``, ``VALUES``, ``CASE``, ``CAST``), with no window function and
no aggregate, so that it runs row by row on any engine and the id need not be unique:

- ``points``: one ``CASE`` per characteristic, its rules in order (``IS NULL``, ``=`` each special
  value, ``<`` each cut, ``IN`` each class's levels, ``ELSE`` the last interval or unseen levels),
  giving whole units of the last decimal;
- ``scored``: the sum and, per characteristic, the units lost against its best bin;
- ``ranked``: each characteristic's rank by units lost, ties to the earlier one, counted with
  ``CASE`` (1 + the characteristics that lost more);
- the final ``SELECT``: id, score, probability of default (looked up in a ``VALUES`` table of
  every reachable score, which holds scorewright's own doubles and needs no ``EXP``), and the
  reasons with their texts.

Dialect notes are written into the query's header.
"""

from __future__ import annotations

import textwrap

from .rules import INTERVAL, LEVELS, MISSING, SPECIAL, CharacteristicRules, ExportModel, Rule, number_text

DEFAULT_TABLE = "applications"


def sql_text(model: ExportModel, *, table: str = DEFAULT_TABLE, id_column: str, materialize: bool = False) -> str:
    """Return the query that scores every row of ``table``.

    Parameters
    ----------
    model : ExportModel
    table : str
        The table (or view) of applications, one row per application.
    id_column : str
        Its id column; the output keeps the name.
    materialize : bool
        Mark the ``points`` step ``MATERIALIZED`` (not standard SQL; SQLite ≥ 3.35, DuckDB and
        PostgreSQL ≥ 12 accept it). SQLite otherwise works out each points ``CASE`` again
        wherever a rank or a reason uses it, an order of magnitude slower.

    Returns
    -------
    str
        The query, with a header of comments.
    """
    k = len(model.characteristics)
    pd_rows = model.pd_table()
    steps = []
    if pd_rows is not None:
        values = ",\n    ".join(f"({units}, {_real(pd)})" for units, pd in pd_rows)
        steps.append(f"pd_of_score (units, pd) AS (VALUES\n    {values})")
    cases = ",\n    ".join(f"{_points_case(c)} AS p{j}" for j, c in enumerate(model.characteristics, 1))
    steps.append(f"points AS {'MATERIALIZED ' if materialize else ''}(SELECT {_identifier(id_column)} AS id,\n    {cases}\n"
                 f"  FROM {_identifier(table)})")
    total = " + ".join(f"p{j}" for j in range(1, k + 1)) or "0"
    lost = "".join(f", {c.best_units} - p{j} AS l{j}" for j, c in enumerate(model.characteristics, 1))
    steps.append(f"scored AS (SELECT id, {total} AS units{lost} FROM points)")
    ranks = "".join(f",\n    {_rank(j, k)} AS r{j}" for j in range(1, k + 1))
    steps.append(f"ranked AS (SELECT scored.*{ranks}\n  FROM scored)")
    score = "s.units" if model.decimals == 0 else f"CAST(s.units AS DOUBLE PRECISION) / {model.unit}"
    if pd_rows is not None:
        pd, join = "p.pd", "\nLEFT JOIN pd_of_score p ON p.units = s.units"
    else:
        scale = model.scaling
        pd = (f"1.0E0 / (1.0E0 + EXP(({score} - {_real(scale.offset)}) / {_real(scale.factor)}))")
        join = ""
    columns = [f"s.id AS {_identifier(id_column)}", f"{score} AS score", f"{pd} AS pd"]
    for rank in range(1, model.reason_count + 1):
        columns.append(_pick(model, rank, lambda c: c.reason_code) + f" AS reason_{rank}")
        columns.append(_pick(model, rank, lambda c: c.reason_label) + f" AS reason_{rank}_text")
    query = "WITH\n" + ",\n".join(steps) + "\nSELECT " + ",\n  ".join(columns) + "\nFROM ranked s" + join + ";\n"
    return _header(model, table, id_column, materialize, pd_rows is not None) + query


def _header(model: ExportModel, table: str, id_column: str, materialize: bool, looked_up: bool) -> str:
    provenance, scaling, warning = model.statement()
    reasons = f"reason_1 .. reason_{model.reason_count} and their texts reason_1_text ..., NULL where there is none"
    paragraphs = [
        provenance, scaling,
        f"Input: the table {_identifier(table)}, one row per application, with the id column {_identifier(id_column)}. "
        "Numeric characteristics must be in a numeric column (DOUBLE PRECISION, REAL or an integer type; in "
        "SQLite a text column compares as text), categorical ones in a text column, and a missing value must be NULL "
        "(an empty text is a level, and in some engines a floating-point NaN is a number).",
        f"Output: per application, {_identifier(id_column)}, score, pd (probability of default) and "
        + (reasons if model.reason_count else "no reasons") + ". Reasons are the characteristics that cost the most "
        "points below their best, largest first, ties in the scorecard's order.",
        "Dialect: standard SQL (WITH, VALUES, CASE, CAST); identifiers in double quotes (MySQL needs "
        "sql_mode ANSI_QUOTES), texts in single quotes, numbers as approximate literals (1.5E0) so that every "
        "engine reads a double rather than a decimal. Tested on DuckDB and SQLite."
        + ("" if looked_up else " The probability uses EXP, which some SQLite builds lack; it agrees with "
           "scorewright's to about 1e-15 (relative) rather than to the last bit.")
        + (" Generated with MATERIALIZED on the points step: not standard SQL (SQLite 3.35 and later, DuckDB and "
           "PostgreSQL 12 and later accept it); remove the word for other engines." if materialize else ""),
        warning,
    ]
    lines = []
    for paragraph in paragraphs:
        lines += ["-- " + line for line in textwrap.wrap(paragraph, 96)]
    return "\n".join(lines) + "\n"


def _points_case(c: CharacteristicRules) -> str:
    column = _identifier(c.name)
    # WHENs are tried in order, so an interval needs only its upper end: the ones below it failed
    whens = " ".join(f"WHEN {_condition(column, rule)} THEN {rule.units}" for rule in c.rules[:-1])
    return f"CASE {whens} ELSE {c.rules[-1].units} END"


def _condition(column: str, rule: Rule) -> str:
    if rule.kind == MISSING:
        return f"{column} IS NULL"
    if rule.kind == SPECIAL:
        return f"{column} = {_real(rule.value)}"
    if rule.kind == INTERVAL:
        return f"{column} < {_real(rule.upper)}"
    assert rule.kind == LEVELS, rule.kind  # the otherwise rule is the ELSE
    return f"{column} IN ({', '.join(_string(level) for level in rule.levels)})"


def _rank(j: int, k: int) -> str:
    # 1 + the characteristics that lost more; an earlier one that lost as much comes first
    terms = [f"CASE WHEN l{i} {'>=' if i < j else '>'} l{j} THEN 1 ELSE 0 END" for i in range(1, k + 1) if i != j]
    return " + ".join(["1", *terms])


def _pick(model: ExportModel, rank: int, text) -> str:
    whens = " ".join(f"WHEN r{j} = {rank} AND l{j} > 0 THEN {_string(text(c))}"
                     for j, c in enumerate(model.characteristics, 1))
    return f"CASE {whens} END"


def _identifier(name: str) -> str:
    """A delimited identifier, "name", with any " doubled (the SQL standard)."""
    return '"' + name.replace('"', '""') + '"'


def _string(value: str) -> str:
    return "'" + value.replace("'", "''") + "'"


def _real(value: float) -> str:
    """An approximate numeric literal (mantissa E exponent): a double in every engine, never a decimal."""
    text = number_text(value)
    return text.upper() if "e" in text else text + "E0"
