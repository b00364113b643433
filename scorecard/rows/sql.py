"""SQL for the engines that keep the rows (DuckDB, Spark): one text generator, two dialects.

Every expression here computes, row by row inside the engine, exactly what the in-process engine
computes with numpy, so the count tables that come back are the same:

- ``canonical_text`` / ``key`` / ``repeats_apart``: the split key of ``scorecard.rows.keys`` (the
  canonical text of a value by its type, the row text, the first 60 bits of its MD5, the repeats of
  a row keyed apart), and the sub-sample keys;
- ``numeric_code`` / ``categorical_code``: a value's bin, as ``scorecard.rows.coding.code_rows``
  puts it (``searchsorted(cuts, x, side='right')``, then special values, then missing);
- ``score`` and ``reason_keys``: the points of a row's bins added in the points table's order (the
  same floating-point additions as ``score_codes``), and the integer keys ``scoring.reasons``
  sorts by.

Numbers are written as ``CAST('<repr>' AS DOUBLE)``, never as bare literals (``0.1`` is a decimal
in SQL), and text literals are escaped per dialect (Spark reads backslash escapes, DuckDB does not).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import pyarrow as pa

from ..terms import DUCKDB, NUMERIC, SPARK
from .keys import FIELD_SEPARATOR, KEY_BITS, MISSING_FIELD, REPEAT_MARK, SUBSAMPLE_MULTIPLIERS

if TYPE_CHECKING:  # data handed in; rows import no stage
    from ..classing import Binning
    from ..points import PointsTable

WEIGHT_UNIT = 2.0**32  # weights are summed as whole multiples of 2**-32: exact, in any order, on any engine
TWO_64 = "18446744073709551616"


@dataclass(frozen=True)
class Dialect:
    """What differs between the SQL of two engines."""

    name: str
    text_type: str       # the engine's text type
    byte_length: str     # length of a text in UTF-8 bytes
    big: str             # an exact integer type wider than 64 bits
    quote: str           # identifier quote
    float_sum: str       # the most accurate sum of doubles the engine has (DuckDB: Kahan's), so that the
                         # fit's sums do not depend on the order its threads add them in

    def identifier(self, name: str) -> str:
        """A column or table name, quoted."""
        return self.quote + name.replace(self.quote, self.quote * 2) + self.quote

    def text(self, value: str) -> str:
        """A text literal."""
        if self.name == SPARK:  # Spark's parser reads backslash escapes in literals
            return "'" + value.replace("\\", "\\\\").replace("'", "\\'") + "'"
        return "'" + value.replace("'", "''") + "'"

    def double(self, value: float) -> str:
        """A float64 literal, exactly (``repr`` is the shortest text that reads back as the same double)."""
        if math.isnan(value):
            return "CAST('NaN' AS DOUBLE)"
        if math.isinf(value):
            return f"CAST('{'-' if value < 0 else ''}Infinity' AS DOUBLE)"
        return f"CAST('{float(value)!r}' AS DOUBLE)"

    def literal(self, value: object) -> str:
        """A literal of a Python value as it came back from the engine (for the outcome mapping)."""
        if value is None:
            return "NULL"
        if isinstance(value, bool):
            return "TRUE" if value else "FALSE"
        if isinstance(value, int):
            return f"CAST({value} AS BIGINT)"
        if isinstance(value, float):
            return self.double(value)
        return self.text(str(value))

    def cast_text(self, expression: str) -> str:
        return f"CAST({expression} AS {self.text_type})"

    def is_infinite(self, x: str) -> str:
        """Whether a float64 is +inf or -inf (Spark has no isinf)."""
        return f"({x} = CAST('Infinity' AS DOUBLE) OR {x} = CAST('-Infinity' AS DOUBLE))"


DUCKDB_SQL = Dialect(DUCKDB, "VARCHAR", "strlen", "HUGEINT", '"', "fsum")
SPARK_SQL = Dialect(SPARK, "STRING", "octet_length", "DECIMAL(38,0)", "`", "sum")


# --------------------------------------------------------------------------------------------
# The split key


def value_kind(arrow_type: pa.DataType) -> str:
    """Which canonical-text rule a column of this type follows (see ``scorecard.rows.keys``)."""
    if pa.types.is_boolean(arrow_type):
        return "bool"
    if pa.types.is_integer(arrow_type):
        return "int"
    if pa.types.is_floating(arrow_type) or pa.types.is_decimal(arrow_type):
        return "float"
    if pa.types.is_date(arrow_type):
        return "date"
    if pa.types.is_timestamp(arrow_type):
        return "timestamp"
    return "text"


def canonical_text(dialect: Dialect, column: str, kind: str) -> str:
    """The canonical text of a column's value (NULL when missing), by the rules of ``scorecard.rows.keys``."""
    if kind in ("int", "text", "date"):
        return dialect.cast_text(column)
    if kind == "bool":
        return f"(CASE WHEN {column} IS NULL THEN NULL WHEN {column} THEN 'true' ELSE 'false' END)"
    if kind == "timestamp":
        micros = f"epoch_us({column})" if dialect.name == DUCKDB else f"unix_micros(CAST({column} AS TIMESTAMP))"
        return dialect.cast_text(micros)
    return _float_text(dialect, f"CAST({column} AS DOUBLE)")


def _float_text(dialect: Dialect, x: str) -> str:
    """x = m·2**e with 2**52 <= m < 2**53 (fewer for subnormals), unless x is NaN, infinite or whole."""
    size = f"abs({x})"
    # log2 can be one off next to a power of two: corrected by an exact power-of-two scaling
    first = f"GREATEST(CAST(floor(log2({size})) AS BIGINT), -1022)"
    scaled = f"({size} * pow(2.0, -{first}))"
    exponent = f"(CASE WHEN {scaled} >= 2.0 THEN {first} + 1 WHEN {scaled} < 1.0 AND {first} > -1022 THEN {first} - 1 ELSE {first} END)"
    mantissa = f"CAST(({size} * pow(2.0, -{exponent})) * pow(2.0, 52) AS BIGINT)"
    sign = f"(CASE WHEN {x} < 0 THEN '-' ELSE '' END)"
    return (
        f"(CASE WHEN {x} IS NULL OR isnan({x}) THEN NULL"
        f" WHEN {x} = CAST('Infinity' AS DOUBLE) THEN 'inf' WHEN {x} = CAST('-Infinity' AS DOUBLE) THEN '-inf'"
        f" WHEN abs({x}) < 9.223372036854775808E18 AND round({x}) = {x} THEN {dialect.cast_text(f'CAST({x} AS BIGINT)')}"
        f" ELSE concat({sign}, {dialect.cast_text(mantissa)}, 'p', {dialect.cast_text(f'{exponent} - 52')}) END)"
    )


def row_text(dialect: Dialect, columns: dict[str, str]) -> str:
    """The row text over some columns (name -> kind): sorted by name, '-' or '<bytes>:<text>', joined by '|'."""
    fields = []
    for name in sorted(columns):
        text = canonical_text(dialect, dialect.identifier(name), columns[name])
        # an explicit CASE: DuckDB's concat() skips NULLs where Spark's returns NULL
        fields.append(f"(CASE WHEN {text} IS NULL THEN '{MISSING_FIELD}' "
                      f"ELSE concat({dialect.cast_text(f'{dialect.byte_length}({text})')}, ':', {text}) END)")
    if not fields:
        return "''"
    return fields[0] if len(fields) == 1 else f"concat_ws('{FIELD_SEPARATOR}', {', '.join(fields)})"


def key(dialect: Dialect, text: str, seed: int) -> str:
    """The split key of a row text: the first 15 hex digits of md5('<seed>:' + text), as a BIGINT."""
    digits = f"substr(md5(concat('{int(seed)}:', {text})), 1, {KEY_BITS // 4})"
    if dialect.name == DUCKDB:
        return f"CAST(concat('0x', {digits}) AS BIGINT)"
    return f"CAST(conv({digits}, 16, 10) AS BIGINT)"


def repeats_apart(dialect: Dialect, query: str, seed: int) -> str:
    """The rows of ``query`` (whose columns include ``sw__key0``, the key of the whole row, ``sw__twin``, its twin
    key, and ``sw__row``) with their split key ``sw__key``: the repeats of a row keyed apart, as
    ``scorecard.rows.keys.repeat_keys`` keys them (the n-th repeat takes the key of ``"<key>#<n>"``)."""
    # which of identical rows counts as the first does not matter; Spark needs an order to number them
    numbered = (f"SELECT *, row_number() OVER (PARTITION BY sw__key0, sw__twin ORDER BY sw__row) - 1 AS sw__repeat "
                f"FROM ({query}) sw__unnumbered")
    text = f"concat({dialect.cast_text('sw__key0')}, '{REPEAT_MARK}', {dialect.cast_text('sw__repeat')})"
    return (f"SELECT *, CASE WHEN sw__repeat = 0 THEN sw__key0 ELSE {key(dialect, text, seed)} END AS sw__key "
            f"FROM ({numbered}) sw__numbered")


def subsample_key(dialect: Dialect, split_key: str, purpose: str) -> str:
    """The split key reordered for a sub-sample: top 60 bits of key × multiplier modulo 2**64 (exact)."""
    big = dialect.big
    product = f"CAST({split_key} AS {big}) * CAST('{SUBSAMPLE_MULTIPLIERS[purpose]}' AS {big})"
    if dialect.name == DUCKDB:
        return f"CAST(({product} % CAST('{TWO_64}' AS {big})) // 16 AS BIGINT)"
    return f"CAST(pmod({product}, CAST('{TWO_64}' AS {big})) DIV 16 AS BIGINT)"


def weight_units(weight: str) -> str:
    """A weight as a whole number of 2**-32: floor(w·2**32 + 1/2), the same IEEE steps in every engine."""
    return f"CAST(floor({weight} * {WEIGHT_UNIT!r} + 0.5) AS BIGINT)"


# --------------------------------------------------------------------------------------------
# Values to bins, bins to scores


def code(dialect: Dialect, column: str, binning: Binning, *, value_kind_: str, unseen_code: int | None = None) -> str:
    """The bin of a column's value, as ``code_rows`` gives it (``unseen_code``: for values the binning lacks)."""
    unseen = binning.unseen_bin if unseen_code is None else unseen_code
    missing = unseen if binning.missing_bin < 0 else binning.missing_bin
    if binning.kind == NUMERIC:
        return numeric_code(dialect, f"CAST({column} AS DOUBLE)", binning, unseen=unseen, missing=missing)
    return categorical_code(dialect, level_text(dialect, column, value_kind_), binning, unseen=unseen, missing=missing)


def numeric_code(dialect: Dialect, x: str, binning: Binning, *, unseen: int, missing: int) -> str:
    """x in [c_(i-1), c_i) is bin i; a special value's own bin; NaN and NULL the missing bin."""
    parts = [f"WHEN {x} IS NULL OR isnan({x}) THEN {missing}"]
    parts += [f"WHEN {x} = {dialect.double(value)} THEN {unseen if target < 0 else target}"
              for value, target in zip(binning.special_values, binning.special_bins)]
    parts += [f"WHEN {x} < {dialect.double(cut)} THEN {i}" for i, cut in enumerate(binning.cuts)]
    return f"(CASE {' '.join(parts)} ELSE {len(binning.cuts)} END)"


def categorical_code(dialect: Dialect, level: str, binning: Binning, *, unseen: int, missing: int) -> str:
    """A level's class; a level in no class the unseen bin; a missing value the missing bin."""
    parts = [f"WHEN {level} IS NULL THEN {missing}"]
    parts += [f"WHEN {level} IN ({', '.join(dialect.text(v) for v in levels)}) THEN {i}"
              for i, levels in enumerate(binning.classes) if levels]
    return f"(CASE {' '.join(parts)} ELSE {unseen} END)"


def level_text(dialect: Dialect, column: str, kind: str) -> str:
    """A value's text as a level, as ``terms.value_text`` gives it: '1' for 1 and 1.0, 'true' for True."""
    if kind == "bool":
        return canonical_text(dialect, column, "bool")
    if kind == "float":
        x = f"CAST({column} AS DOUBLE)"
        return (f"(CASE WHEN {x} IS NULL OR isnan({x}) THEN NULL WHEN abs({x}) < 9.223372036854775808E18 AND round({x}) = {x} "
                f"THEN {dialect.cast_text(f'CAST({x} AS BIGINT)')} ELSE {dialect.cast_text(x)} END)")
    return dialect.cast_text(column)


def score(dialect: Dialect, codes: Sequence[str], table: PointsTable) -> str:
    """A row's score: its bins' points added one characteristic after another, in the table's order."""
    terms = [_points(dialect, code_sql, char.points, table.decimals) for code_sql, char in zip(codes, table.characteristics)]
    zero = "CAST(0 AS BIGINT)" if table.decimals == 0 else dialect.double(0.0)
    return "(" + " + ".join([zero, *terms]) + ")"


def _points(dialect: Dialect, code_sql: str, points, decimals: int) -> str:
    values = [f"CAST({int(p)} AS BIGINT)" if decimals == 0 else dialect.double(float(p)) for p in points]
    return f"(CASE {code_sql} {' '.join(f'WHEN {i} THEN {v}' for i, v in enumerate(values))} END)"


def reason_keys(dialect: Dialect, codes: Sequence[str], table: PointsTable) -> list[str]:
    """Per characteristic, the integer key ``scoring.reasons`` sorts by: −(points lost in units)·k + position."""
    k = len(table.characteristics)
    unit = 10.0**table.decimals
    keys = []
    for position, (code_sql, char) in enumerate(zip(codes, table.characteristics)):
        lost = [int(round((char.best - p) * unit)) for p in char.points]
        cases = " ".join(f"WHEN {i} THEN CAST({-n * k + position} AS BIGINT)" for i, n in enumerate(lost))
        keys.append(f"(CASE {code_sql} {cases} END)")
    return keys
