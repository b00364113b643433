"""Checking a ledger that a SQL engine holds (DuckDB, Spark): the checks of a file's ledger, as queries.

The rows stay in the engine. What intake decides from a few rows it decides from the first
``HEAD_ROWS`` rows, as for a file read in batches (the kinds, the columns left out); what it
checks on every row it checks with an aggregate query (outcome values, weights, dates, infinite
values); the samples are drawn by the rules of ``scorecard.rows.keys``, as SQL, so that the same
ledger gives the same samples in every engine. Rows have no numbers in a table, so a message
names the offending rows by their ids (when the ledger has an id column) and says how many.

Passes over the rows at intake: the outcome's distinct values; one aggregate of every check; the
ledger kept in the engine with its outcome codes, weights and split keys (the one pass that reads
the source); and two small passes per class and per sub-sample to find where the smallest keys end.
"""

from __future__ import annotations

import hashlib
import io
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa

from ..errors import LedgerError, ScorecardWarning, describe_ids
from ..rows import RowPlace, connect
from ..rows import sql
from ..rows.keys import TWIN_SEED_STEP, holdout_count
from ..rows.sqlrows import LEDGER, PREFIX, SOURCE, TYPED_SOURCE as TYPED, SqlRows
from ..settings import Settings
from ..terms import (
    BAD, DEVELOPMENT, DUCKDB, GOOD, HOLDOUT, NUMERIC, OUT_OF_TIME, OUTCOME_NAMES, REJECTED, SAMPLE_NAMES, UNKNOWN,
)
from .kinds import choose_characteristics, role_columns, with_reading
from .ledger import Fingerprint, Ledger, fingerprint_of, summary_frame
from .read import EMPTY_WORDS, FALSE_WORDS, HEAD_ROWS, TRUE_WORDS, arrow_types, check_column_names
from .roles import check_both_classes, no_outcome_note, outcome_key, outcome_mapping, unmapped_outcome_message
from .samples import key_columns, needs_keys

BASE, SAMPLED = "sw__base", "sw__sampled"
BUCKET_BITS = 44  # keys are first counted in 2**16 buckets of their top bits; the edge's bucket is then read whole


def open_sql_ledger(place: RowPlace, settings: Settings, *, require_outcome: bool = True) -> tuple[Ledger, SqlRows]:
    """Check a ledger a SQL engine holds; return it with its rows (kept in the engine).

    Parameters
    ----------
    place : RowPlace
        The engine and the ledger's file, table or query.
    settings : Settings
    require_outcome : bool
        As for ``prepare_ledger`` (False when monitoring).

    Returns
    -------
    (Ledger, SqlRows)
        The ledger holds no row-level arrays; its sample summary was counted in the engine.

    Raises
    ------
    LedgerError
        As ``prepare_ledger``, with rows named by their ids; or the engine cannot read the ledger
        (the engine's own message is shown).
    """
    engine = connect(place)
    try:
        return _checked(engine, place, settings, require_outcome)
    except BaseException:
        engine.close()
        raise


def typed_source(engine, place: RowPlace, *, exact=()) -> tuple[pd.DataFrame, dict[str, pa.DataType]]:
    """Name the ledger with the types intake reads it with (view ``sw__typed``); return its first rows and its types.

    A CSV read by the engine comes as text: its first rows are parsed as a whole read would parse
    them, and every row is then cast to those types (numbers, true/false, text; the id column's
    whole numbers as integers), with the same words for an empty cell. Decimal columns become
    float64, as their values are used. A name we use for our own columns is refused.
    """
    name = engine.name
    schema = engine.schema(SOURCE)
    check_column_names([str(n) for n in schema.names], name)
    ours = [n for n in schema.names if str(n).startswith(PREFIX)]
    if ours:
        raise LedgerError(f"{name}: column {ours[0]!r} starts with {PREFIX!r}, which the tool keeps for its own columns. Rename it.")
    head = engine.arrow(f"SELECT * FROM {SOURCE} LIMIT {HEAD_ROWS}")
    dialect = engine.dialect
    if _is_text_file(place):
        buffer = io.BytesIO()
        import pyarrow.csv as pacsv

        pacsv.write_csv(head, buffer)
        frame = pd.read_csv(io.BytesIO(buffer.getvalue()), low_memory=False) if head.num_rows else \
            pd.DataFrame({n: pd.Series(dtype=object) for n in schema.names})
        types = arrow_types(frame, exact=exact)
        columns = [f"{_typed_text(dialect, dialect.identifier(n), types[n])} AS {dialect.identifier(n)}" for n in schema.names]
    else:
        types = {n: (pa.float64() if pa.types.is_decimal(t) else t) for n, t in zip(schema.names, schema.types)}
        head = head.cast(pa.schema([(n, types[n]) for n in schema.names]))
        frame = head.to_pandas()
        columns = [(f"CAST({dialect.identifier(n)} AS DOUBLE) AS {dialect.identifier(n)}" if pa.types.is_decimal(t)
                    else dialect.identifier(n)) for n, t in zip(schema.names, schema.types)]
    engine.view(TYPED, f"SELECT {', '.join(columns)} FROM {SOURCE}")
    typed = engine.schema(TYPED)
    return frame, dict(zip(typed.names, typed.types))


# --------------------------------------------------------------------------------------------
# The checks, in the order a file's ledger is checked


def _checked(engine, place: RowPlace, settings: Settings, require_outcome: bool) -> tuple[Ledger, SqlRows]:
    name, dialect = engine.name, engine.dialect
    head, types = typed_source(engine, place, exact=[settings.ledger.id_column])
    if head.empty:
        raise LedgerError(f"{name}: the ledger has no rows. Give a ledger with at least one application.")
    roles = role_columns(head, settings, name, require_outcome)
    characteristics, left_out = choose_characteristics(head, settings, roles, name)
    column = settings.outcome.column if settings.outcome.column in types else ""
    outcome = _outcome_code(engine, settings, column, types, name, require_outcome) if column else f"CAST({UNKNOWN} AS TINYINT)"
    _refuse_rejects(engine, settings, outcome, types, name, require_outcome)
    weight_column, date_column = settings.ledger.weight_column, settings.ledger.date_column
    weight = f"try_cast({dialect.identifier(weight_column)} AS DOUBLE)" if weight_column else "CAST(1.0 AS DOUBLE)"
    day = _day(dialect, date_column, types) if date_column and date_column in types else "CAST(NULL AS DATE)"
    numeric = [c.name for c in characteristics if c.kind == NUMERIC]
    found = _check_counts(engine, [c for c in characteristics if c.kind == NUMERIC], weight, day,
                          date_column if date_column in types else "")
    characteristics = [with_reading(c, (found[f"count{numeric.index(c.name)}"], found[f"low{numeric.index(c.name)}"],
                                        found[f"fraction{numeric.index(c.name)}"])) if c.name in numeric else c
                       for c in characteristics]
    ids = _ids_of(engine, settings.ledger.id_column if settings.ledger.id_column in types else "")
    for position, char_name in enumerate(numeric):
        if found[f"inf{position}"]:
            where = ids(dialect.is_infinite(f"CAST({dialect.identifier(char_name)} AS DOUBLE)"), found[f"inf{position}"])
            raise LedgerError(f"{name}, column {char_name!r}, {where}: {found[f'inf{position}']} infinite values. "
                              "Replace them with a number, leave them empty (missing), or declare a special value.")
    _check_weights(found, weight, weight_column, name, ids, dialect)
    _check_dates(found, day, date_column, name, ids, dialect)
    drawn = require_outcome and needs_keys(found["n"], settings)
    out_of_time = _out_of_time(settings, types, found, name, ids, dialect)
    engine.keep(BASE, _base_query(dialect, settings, outcome, weight, day, types, drawn))
    classes = _class_counts(engine, out_of_time)
    repairs = _role_notes(classes, settings, name, require_outcome, ids)
    sample, holdout = _samples(engine, settings, out_of_time, drawn, classes)
    engine.view(SAMPLED, f"SELECT *, {sample} AS sw__sample FROM {BASE}")
    n_fitting = sum(int(classes["in_time"][code]) - holdout[code] for code in (GOOD, BAD))
    flags, subsamples = _subsamples(engine, settings, drawn, n_fitting)
    engine.view(LEDGER, f"SELECT *, {', '.join(flags)} FROM {SAMPLED}")
    summary = _summary(engine)
    notes = [*repairs, *(f"{column_name!r} left out: {why}." for column_name, why in left_out.items())]
    for note in repairs:
        warnings.warn(note, ScorecardWarning, stacklevel=3)
    kinds = {c.name: sql.value_kind(types[c.name]) for c in characteristics}
    ledger = Ledger(
        source=name, frame=head.iloc[:0][[c.name for c in characteristics]], characteristics=tuple(characteristics),
        outcome=None, weight=None, sample=None, dates=None, ids=None, notes=tuple(notes),
        fingerprint=_fingerprint(engine, place, types, found["n"]), left_out=left_out, summary=summary,
    )
    return ledger, SqlRows(engine, kinds, subsamples, dated=bool(date_column) and date_column in types)


def _refuse_rejects(engine, settings: Settings, outcome: str, types, name: str, require_outcome: bool) -> None:
    """Rejected applications are set apart (and their outcomes inferred) only in process, from a ledger held whole."""
    column = settings.rejects.decision_column
    if not require_outcome or not (settings.outcome.rejected or (column and column in types)):
        return
    decided = ""
    if column and column in types:
        words = ", ".join(engine.dialect.text(word) for word in settings.rejects.rejected)
        decided = f" OR trim({engine.dialect.cast_text(engine.dialect.identifier(column))}) IN ({words})" if words else ""
    found = int(engine.arrow(f"SELECT count(*) AS n FROM {TYPED} WHERE {outcome} = {REJECTED}{decided}").column("n")[0].as_py())
    if found:
        raise LedgerError(
            f"{name}: {found:,} rejected applications, which are set apart (and their outcomes inferred) only by the in-process "
            "engine, from a ledger read whole. Build with ledger.engine = \"in-process\", or leave the rejected rows out "
            "(ledger.query can)."
        )


def _outcome_code(engine, settings: Settings, column: str, types, name: str, require_outcome: bool) -> str:
    """The SQL of every row's outcome code, from the column's distinct values mapped as a file's are (a rejected
    application has no outcome when scoring or monitoring)."""
    dialect = engine.dialect
    quoted = dialect.identifier(column)
    found = engine.arrow(f"SELECT {quoted} AS value, count(*) AS n FROM {TYPED} WHERE {quoted} IS NOT NULL GROUP BY {quoted}")
    values, counts = found.column("value").to_pylist(), found.column("n").to_pylist()
    floating = pa.types.is_floating(types[column])
    present = [(v, n) for v, n in zip(values, counts) if not (floating and v != v)]  # NaN is missing, as in a file
    keys = [outcome_key(v) for v, _ in present]
    mapping = outcome_mapping(settings, sorted(set(keys)))
    if not require_outcome:
        mapping = {key: UNKNOWN if code == REJECTED else code for key, code in mapping.items()}
    unmapped: dict[str, int] = {}
    for key, (_, n) in zip(keys, present):
        if key not in mapping:
            unmapped[key] = unmapped.get(key, 0) + int(n)
    if unmapped:
        shown = sorted(unmapped.items(), key=lambda pair: (-pair[1], pair[0]))
        bad = " OR ".join(f"{quoted} = {dialect.literal(v)}" for (v, _), key in zip(present, keys) if key in unmapped)
        where = _ids_of(engine, settings.ledger.id_column if settings.ledger.id_column in types else "")(bad, sum(unmapped.values()))
        raise LedgerError(unmapped_outcome_message(name, column, where, shown))
    missing = f"{quoted} IS NULL" + (f" OR isnan({quoted})" if floating else "")
    cases = " ".join(f"WHEN {quoted} = {dialect.literal(v)} THEN {mapping[key]}" for (v, _), key in zip(present, keys))
    return f"CAST(CASE WHEN {missing} THEN {UNKNOWN} {cases} ELSE {UNKNOWN} END AS TINYINT)"


def _check_counts(engine, numeric, weight: str, day: str, date_column: str) -> dict[str, int]:
    """One pass counting every row that breaks a check (infinite values, weights that are not numbers, dates that are
    not dates), and how each numeric characteristic's ordinary values read (how many, the lowest, how many not whole)."""
    dialect = engine.dialect
    raw = dialect.identifier(date_column) if date_column else "NULL"
    parts = ["count(*) AS n", f"sum(CASE WHEN {weight} IS NULL OR isnan({weight}) THEN 1 ELSE 0 END) AS weight_missing",
             f"sum(CASE WHEN {dialect.is_infinite(weight)} THEN 1 ELSE 0 END) AS weight_infinite",
             f"sum(CASE WHEN {weight} < 0 THEN 1 ELSE 0 END) AS weight_negative",
             f"sum(CASE WHEN {day} IS NULL AND {raw} IS NOT NULL THEN 1 ELSE 0 END) AS unreadable_dates",
             f"sum(CASE WHEN {day} IS NULL THEN 1 ELSE 0 END) AS undated"]
    for j, char in enumerate(numeric):
        x = f"CAST({dialect.identifier(char.name)} AS DOUBLE)"
        specials = "".join(f" AND {x} <> {dialect.double(v)}" for v in char.special_values)
        ordinary = f"{x} IS NOT NULL AND NOT isnan({x}){specials}"
        parts += [f"sum(CASE WHEN {dialect.is_infinite(x)} THEN 1 ELSE 0 END) AS inf{j}",
                  f"sum(CASE WHEN {ordinary} THEN 1 ELSE 0 END) AS count{j}",
                  f"min(CASE WHEN {ordinary} THEN {x} END) AS low{j}",
                  f"sum(CASE WHEN {ordinary} AND round({x}) <> {x} THEN 1 ELSE 0 END) AS fraction{j}"]
    row = engine.arrow(f"SELECT {', '.join(parts)} FROM {TYPED}").to_pylist()[0]
    return {key: (float(value) if value is not None else float("inf")) if key.startswith("low") else int(value or 0)
            for key, value in row.items()}


def _ids_of(engine, id_column: str):
    """A function naming the rows of a table that meet a condition: their count, and the first five ids in id order."""
    dialect = engine.dialect

    def where(condition: str, total: int, table: str = TYPED) -> str:
        if not id_column:
            return describe_ids([], total)
        quoted = dialect.identifier(id_column)
        found = engine.arrow(f"SELECT {quoted} AS id FROM {table} WHERE {condition} ORDER BY {quoted} LIMIT 5")
        return describe_ids(found.column("id").to_pylist(), total)

    return where


def _check_weights(found, weight: str, column: str, name: str, ids, dialect) -> None:
    if not column:
        return
    for what, key, condition in (("missing or not a number", "weight_missing", f"({weight} IS NULL OR isnan({weight}))"),
                                 ("not finite", "weight_infinite", dialect.is_infinite(weight)),
                                 ("negative", "weight_negative", f"{weight} < 0")):
        if found[key]:
            raise LedgerError(
                f"{name}, column {column!r}, {ids(condition, found[key])}: the weight is {what}. "
                "Every weight must be a finite number of 0 or more; fix those rows or remove weight_column from the settings."
            )


def _check_dates(found, day: str, column: str, name: str, ids, dialect) -> None:
    if found["unreadable_dates"]:
        condition = f"{day} IS NULL AND {dialect.identifier(column)} IS NOT NULL"
        raise LedgerError(f"{name}, column {column!r}, {ids(condition, found['unreadable_dates'])}: not a date. "
                          "Write dates as YYYY-MM-DD.")


def _day(dialect: sql.Dialect, column: str, types) -> str:
    """The application day of a date column: a date or timestamp as it is, text read as an ISO date (NULL when it is not one)."""
    quoted = dialect.identifier(column)
    kind = types[column]
    if pa.types.is_date(kind) or pa.types.is_timestamp(kind):
        return f"CAST({quoted} AS DATE)"
    if dialect.name == DUCKDB:
        return f"CAST(try_cast({quoted} AS TIMESTAMP) AS DATE)"
    return f"try_cast({quoted} AS DATE)"


def _typed_text(dialect: sql.Dialect, column: str, kind: pa.DataType) -> str:
    """A CSV cell (text) as the type a whole read gives its column, with the same words for an empty cell."""
    empty = ", ".join(dialect.text(word) for word in EMPTY_WORDS)
    if pa.types.is_boolean(kind):
        true, false = (", ".join(dialect.text(w) for w in words) for words in (TRUE_WORDS, FALSE_WORDS))
        return f"(CASE WHEN {column} IN ({true}) THEN TRUE WHEN {column} IN ({false}) THEN FALSE ELSE NULL END)"
    cell = f"(CASE WHEN {column} IS NULL OR {column} IN ({empty}) THEN NULL ELSE {column} END)"
    if pa.types.is_integer(kind):
        return f"CAST(trim({cell}) AS BIGINT)"
    if pa.types.is_floating(kind):
        return f"CAST(trim({cell}) AS DOUBLE)"
    return cell


def _is_text_file(place: RowPlace) -> bool:
    if place.query or place.table or not place.path:
        return False
    target = Path(place.path)
    if target.is_dir():
        return not any(target.rglob("*.parquet"))
    return target.suffix.lower() in (".csv", ".txt")


# --------------------------------------------------------------------------------------------
# The ledger kept in the engine, and its samples


def _base_query(dialect: sql.Dialect, settings: Settings, outcome: str, weight: str, day: str, types, drawn: bool) -> str:
    """Every column, and ours: outcome code, weight and its units, day and quarter, split keys, a row number."""
    columns = ["*", f"{outcome} AS sw__outcome", f"CAST({weight} AS DOUBLE) AS sw__weight",
               f"{sql.weight_units(weight)} AS sw__units", f"{day} AS sw__day", f"{_quarter(dialect, day)} AS sw__quarter"]
    seed = settings.samples.seed
    apart = drawn and not settings.ledger.id_column  # the key is the whole row's: its repeats are keyed apart
    if drawn:
        keyed = {c: sql.value_kind(types[c]) for c in key_columns(list(types), settings)}
        text = sql.row_text(dialect, keyed)
        columns.append(f"{sql.key(dialect, text, seed)} AS {'sw__key0' if apart else 'sw__key'}")
        if apart:
            columns.append(f"{sql.key(dialect, text, seed + TWIN_SEED_STEP)} AS sw__twin")
    columns.append(("row_number() OVER ()" if dialect.name == DUCKDB else "monotonically_increasing_id()") + " AS sw__row")
    query = f"SELECT {', '.join(columns)} FROM {TYPED}"
    return sql.repeats_apart(dialect, query, seed) if apart else query


def _quarter(dialect: sql.Dialect, day: str) -> str:
    """A day's calendar quarter, counted from 1970's first (as the in-process engine counts them)."""
    divide = "//" if dialect.name == DUCKDB else "div"
    return f"CAST((year({day}) - 1970) * 4 + (month({day}) - 1) {divide} 3 AS BIGINT)"


def _class_counts(engine, out_of_time: str) -> dict[str, np.ndarray]:
    """Rows and weight units per outcome code (in all), and rows per outcome code in time: one pass."""
    found = engine.arrow(f"SELECT sw__outcome, {out_of_time} AS late, count(*) AS n, sum(sw__units) AS units FROM {BASE} "
                         f"GROUP BY sw__outcome, {out_of_time}")
    rows = np.zeros(len(OUTCOME_NAMES), dtype=np.int64)
    in_time = np.zeros(len(OUTCOME_NAMES), dtype=np.int64)
    weight = np.zeros(len(OUTCOME_NAMES))
    for code, late, n, units in zip(found.column("sw__outcome").to_pylist(), found.column("late").to_pylist(),
                                    found.column("n").to_pylist(), found.column("units").cast(pa.float64()).to_pylist()):
        rows[code] += n
        weight[code] += units / sql.WEIGHT_UNIT
        if not late:
            in_time[code] += n
    return {"rows": rows, "weight": weight, "in_time": in_time}


def _role_notes(classes, settings: Settings, name: str, require_outcome: bool, ids) -> list[str]:
    """The checks of the whole ledger's outcomes and weights (as ``check_roles``); the note on rows with no outcome."""
    column = settings.outcome.column
    if settings.ledger.weight_column and classes["weight"].sum() <= 0:
        raise LedgerError(f"{name}, column {settings.ledger.weight_column!r}: every weight is 0. Give the rows positive weights.")
    if not require_outcome:
        return []
    check_both_classes(classes["rows"], name, column)
    unknown = int(classes["rows"][UNKNOWN])
    if not unknown:
        return []
    return [no_outcome_note(name, column, ids(f"sw__outcome = {UNKNOWN}", unknown, BASE), unknown)]


def _out_of_time(settings: Settings, types, found, name: str, ids, dialect) -> str:
    """The SQL condition of the out-of-time rows: dated on or after ``samples.out_of_time_from``."""
    samples = settings.samples
    if not samples.out_of_time_from:
        return "FALSE"
    column = settings.ledger.date_column
    if not column or column not in types:
        raise LedgerError(f"{name}: samples.out_of_time_from is set but the ledger has no date column. "
                          "Name it as date_column under [ledger], or clear out_of_time_from.")
    if found["undated"]:
        condition = f"{_day(dialect, column, types)} IS NULL"
        raise LedgerError(f"{name}, column {column!r}, {ids(condition, found['undated'])}: no date, so the row "
                          "cannot be placed in or out of time. Fill the dates or remove the rows.")
    return f"(sw__day >= DATE '{samples.out_of_time_from}')"


def _samples(engine, settings: Settings, out_of_time: str, drawn: bool, classes) -> tuple[str, dict[int, int]]:
    """The SQL of every row's sample (out-of-time by date; the hold-out, the rows of smallest key per outcome class),
    and the hold-out's rows per outcome code."""
    fraction = settings.samples.holdout_fraction
    counts = {code: holdout_count(int(n), fraction) if drawn else 0 for code, n in enumerate(classes["in_time"])}
    if not drawn or fraction == 0:
        return f"CAST(CASE WHEN {out_of_time} THEN {OUT_OF_TIME} ELSE {DEVELOPMENT} END AS TINYINT)", counts
    in_time = f"NOT {out_of_time}"
    conditions = smallest_keys_conditions(engine, BASE, "sw__key", in_time, "sw__outcome",
                                          {code: (counts[code], int(n)) for code, n in enumerate(classes["in_time"]) if n},
                                          settings)
    holdout = " OR ".join(f"(sw__outcome = {code} AND {rows})" for code, rows in conditions.items()) or "FALSE"
    sample = (f"CAST(CASE WHEN {out_of_time} THEN {OUT_OF_TIME} WHEN {in_time} AND ({holdout}) THEN {HOLDOUT} "
              f"ELSE {DEVELOPMENT} END AS TINYINT)")
    return sample, counts


def _subsamples(engine, settings: Settings, drawn: bool, n_fitting: int) -> tuple[list[str], tuple[str, ...]]:
    """The flags of the seeded sub-samples of a large development sample, and the names of those drawn."""
    limits = {"classing": settings.classing.fine_sample_rows, "selection": settings.selection.sample_rows}
    fitting = f"sw__sample = {DEVELOPMENT} AND (sw__outcome = {GOOD} OR sw__outcome = {BAD})"
    flags, drawn_names = [], []
    for purpose, limit in limits.items():
        if drawn and limit and n_fitting > limit:
            mixed = sql.subsample_key(engine.dialect, "sw__key", purpose)
            rows = smallest_keys_conditions(engine, SAMPLED, mixed, fitting, "", {0: (limit, n_fitting)}, settings)[0]
            flags.append(f"({fitting} AND {rows}) AS sw__{purpose}")
            drawn_names.append(purpose)
        else:
            flags.append(f"FALSE AS sw__{purpose}")
    return flags, tuple(drawn_names)


DIRECT_KEYS = 2_000_000  # up to this many rows the keys are read at once; above, their buckets are counted first


def smallest_keys_conditions(engine, table: str, key: str, condition: str, stratum: str, wanted: dict[int, tuple[int, int]],
                             settings: Settings) -> dict[int, str]:
    """Per stratum (an outcome code, or one stratum when ``stratum`` is ''), the SQL condition picking, of its rows
    meeting ``condition``, the given count with the smallest ``key``; ``wanted`` maps stratum to (count, rows in it).

    Up to ``DIRECT_KEYS`` rows the keys are read at once; above, they are first counted per bucket
    of their top 16 bits, and only the bucket where each count is reached is read. Rows of equal
    key at the edge are ordered as the in-process engine orders them: by the id's row text, then
    the whole row's text; rows whose texts are equal too are the same row twice, and any of them do.
    """
    label = stratum or "0"
    shift = f"({key} >> {BUCKET_BITS})" if engine.dialect.name == DUCKDB else f"shiftright({key}, {BUCKET_BITS})"
    read: dict[int, tuple[np.ndarray, int]] = {}
    if sum(n for _, n in wanted.values()) <= DIRECT_KEYS:
        found = engine.arrow(f"SELECT {label} AS g, {key} AS k FROM {table} WHERE {condition}")
        stratum_of, keys = found.column("g").to_numpy(), found.column("k").to_numpy()
        read = {code: (np.sort(keys[stratum_of == code]), 0) for code in wanted}
    else:
        # a number in GROUP BY would name a column by its place: with no stratum, the buckets alone are grouped
        by = f"{stratum}, {shift}" if stratum else shift
        buckets = engine.arrow(f"SELECT {label} AS g, {shift} AS bucket, count(*) AS n FROM {table} WHERE {condition} "
                               f"GROUP BY {by}")
        stratum_of, bucket, n = (buckets.column(c).to_numpy() for c in ("g", "bucket", "n"))
        for code, (count, _) in wanted.items():
            mine = stratum_of == code
            order = np.argsort(bucket[mine])
            ordered, cumulative = bucket[mine][order], np.cumsum(n[mine][order])
            at = min(int(np.searchsorted(cumulative, max(count, 1))), len(ordered) - 1)
            keys = engine.arrow(f"SELECT {key} AS k FROM {table} WHERE {condition} AND {label} = {code} "
                                f"AND {shift} = {int(ordered[at])}").column("k").to_numpy()
            read[code] = (np.sort(keys), int(cumulative[at - 1]) if at else 0)
    conditions = {}
    for code, (count, n_rows) in wanted.items():
        keys, below = read[code]
        if count <= 0:
            conditions[code] = "FALSE"
        elif count >= n_rows:
            conditions[code] = "TRUE"
        else:
            conditions[code] = _edge(engine, table, key, f"{condition} AND {label} = {code}", keys, count - below, settings)
    return conditions


def _edge(engine, table: str, key: str, condition: str, keys: np.ndarray, count: int, settings: Settings) -> str:
    """The condition for the ``count`` smallest of ``keys`` (sorted), naming the rows at the edge when keys are equal there."""
    edge = int(keys[count - 1])
    wanted = count - int(np.count_nonzero(keys < edge))
    if wanted == int(np.count_nonzero(keys == edge)):
        return f"({key} <= {edge})"
    dialect = engine.dialect
    schema = engine.schema(TYPED)
    types = dict(zip(schema.names, schema.types))
    own = {c: sql.value_kind(types[c]) for c in key_columns(schema.names, settings)}
    whole = {c: sql.value_kind(t) for c, t in types.items()}
    found = engine.arrow(f"SELECT sw__row, {sql.row_text(dialect, own)} AS own, {sql.row_text(dialect, whole)} AS whole "
                         f"FROM {table} WHERE {condition} AND {key} = {edge}")
    ranked = sorted(zip(found.column("own").to_pylist(), found.column("whole").to_pylist(), found.column("sw__row").to_pylist()))
    rows = ", ".join(str(int(row)) for _, _, row in ranked[:wanted])
    return f"({key} < {edge} OR ({key} = {edge} AND sw__row IN ({rows})))"


def _summary(engine) -> pd.DataFrame:
    """Rows and weight per (sample, outcome), counted in the engine: the ledger's sample summary."""
    found = engine.arrow(f"SELECT sw__sample, sw__outcome, count(*) AS n, sum(sw__units) AS units FROM {LEDGER} "
                         "GROUP BY sw__sample, sw__outcome")
    weighted = np.zeros((len(SAMPLE_NAMES), len(OUTCOME_NAMES)))
    rows = np.zeros(len(SAMPLE_NAMES), dtype=np.int64)
    for sample, outcome, n, units in zip(found.column("sw__sample").to_pylist(), found.column("sw__outcome").to_pylist(),
                                         found.column("n").to_pylist(), found.column("units").cast(pa.float64()).to_pylist()):
        weighted[sample, outcome] += units / sql.WEIGHT_UNIT
        rows[sample] += n
    return summary_frame(weighted, rows)


def _fingerprint(engine, place: RowPlace, types, n_rows: int) -> Fingerprint:
    """The file's bytes when the ledger is a local file (as in process); else an order-free hash of the rows' content."""
    path = Path(place.path) if place.path else None
    if path is not None and path.is_file() and not place.query and not place.table:
        return fingerprint_of(path, n_rows)
    whole = {c: sql.value_kind(types[c]) for c in types}
    dialect = engine.dialect
    key = sql.key(dialect, sql.row_text(dialect, whole), 0)
    total = engine.arrow(f"SELECT sum(CAST({key} AS {dialect.big})) AS total FROM {TYPED}").column("total")[0].as_py()
    digest = hashlib.sha256(f"{n_rows}:{int(total or 0)}:{','.join(sorted(types))}".encode()).hexdigest()
    return Fingerprint(n_rows, digest, "row content (order-free)")
