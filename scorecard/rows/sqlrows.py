"""Rows that a SQL engine keeps (DuckDB, Spark): every pass is one query, and only count tables come back.

``SqlEngine`` is what an engine provides: run a query and hand back an Arrow table, keep a table
for later passes, write a result out. ``SqlRows`` is the row source over it, with the methods of
``scorecard.rows.engine.RowSource``; the SQL is ``scorecard.rows.sql``'s, the same text for both
engines but for their dialects.

The ledger the passes read is the engine's table ``sw__ledger``: the characteristic columns as
read, and the columns intake adds (``scorecard.intake.sql``): outcome code, weight and weight units,
sample, the flags of the sub-samples of development, the application day.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa

from ..terms import BAD, CATEGORICAL, DEVELOPMENT, DUCKDB, GOOD, OUTCOME_NAMES, SAMPLE_NAMES, UNKNOWN, frozen
from . import sql
from .coding import UNSEEN_LABEL, ordered_levels
from .tables import MERGE_LIMIT, BinCounts, PatternTable, ScoreHistogram, pattern_table

PREFIX = "sw__"  # the columns and tables we add; a ledger column may not start with it
LEDGER = "sw__ledger"
SOURCE = "sw__source"
TYPED_SOURCE = "sw__typed"  # the source with the types intake reads it with (``scorecard.intake.sql.typed_source``)
N_SAMPLES, N_OUTCOMES = len(SAMPLE_NAMES), len(OUTCOME_NAMES)


ENGINE_PATTERNS = MERGE_LIMIT  # a pattern table of more patterns stays in the engine, and is fitted there


class SqlEngine:
    """A connection to an engine that runs our SQL (``scorecard.rows.duckdb``, ``scorecard.rows.spark``).

    Attributes
    ----------
    dialect : Dialect
    name : str
        The ledger's name in messages ('warehouse.duckdb, table applications', 'loans.parquet').
    """

    dialect: sql.Dialect
    name: str

    def arrow(self, query: str) -> pa.Table:
        """Run a query; return its result (a small table)."""
        raise NotImplementedError

    def keep(self, table: str, query: str) -> None:
        """Keep a query's result as a table that later queries read (materialised once)."""
        raise NotImplementedError

    def schema(self, table: str) -> pa.Schema:
        """The column names and types of a table or view, without reading its rows."""
        return self.arrow(f"SELECT * FROM {table} LIMIT 0").schema

    def view(self, table: str, query: str) -> None:
        """Name a query, evaluated again by every query that reads it."""
        raise NotImplementedError

    def register(self, table: str, rows: pa.Table) -> None:
        """Name a small table of ours (a look-up) so that queries can join it."""
        raise NotImplementedError

    def write(self, query: str, *, path=None, table: str = "", force: bool = False) -> None:
        """Write a query's rows to a Parquet (or CSV) file, or to a table of the engine."""
        raise NotImplementedError

    def close(self) -> None:
        """Release what the connection holds (temporary tables and files)."""


@dataclass(eq=False)
class SqlRows:
    """The rows of one ledger kept in a SQL engine, as a row source.

    Attributes
    ----------
    engine : SqlEngine
    kinds : mapping of str to str
        Per characteristic column, its canonical-text kind (``scorecard.rows.sql.value_kind``):
        how a level's text is made from its value.
    subsamples : tuple of str
        The sub-samples of development drawn for this ledger ('classing', 'selection'); a name
        not listed means every development row with a good or bad outcome.
    dated : bool
        Whether the ledger has the date column (monitoring then counts per calendar quarter).
    """

    engine: SqlEngine
    kinds: Mapping[str, str]
    subsamples: tuple[str, ...] = ()
    dated: bool = False
    in_memory: bool = field(default=False, init=False)
    _patterns: list = field(default_factory=list, init=False, repr=False)

    def close(self) -> None:
        """Release the engine's tables and temporary files."""
        self.engine.close()

    # ----------------------------------------------------------------------------------------
    # Classing

    def gather(self, subsample: str, columns: Sequence[str]) -> tuple[pd.DataFrame, np.ndarray]:
        """The values of the named columns on a sub-sample of development (the fine cut points' sample), and the weights."""
        dialect = self.engine.dialect
        chosen = ", ".join([*(dialect.identifier(c) for c in columns), "sw__weight"])
        table = self.engine.arrow(f"SELECT {chosen} FROM {LEDGER} WHERE {self.where(subsample)}")
        frame = table.select(list(columns)).to_pandas() if columns else pd.DataFrame(index=range(table.num_rows))
        return frame, table.column("sw__weight").to_numpy()

    def count_bins(self, binnings: Mapping[str, object], *, keep_codes: bool = False,
                   progress: Callable[[Iterable], Iterable] = lambda items: items):
        """One query: every characteristic's bins × (sample, outcome), plus a bin for values its binning lacks.

        Returns the same (counts, codes, unseen levels) as ``InProcessRows.count_bins``; no codes are kept.
        """
        names = list(binnings)
        codes = {name: self._code(name, binnings[name], unseen_code=binnings[name].n_bins) for name in names}
        found = self._grouped(codes, "sw__sample", "sw__outcome")
        counts = {}
        for name in progress(names):
            binning = binnings[name]
            labels = (*binning.labels, UNSEEN_LABEL)
            weighted = np.zeros((N_SAMPLES, N_OUTCOMES, len(labels)))
            rows = np.zeros_like(weighted)
            part = found.get(name)
            if part is not None:
                index = (part["sw__sample"], part["sw__outcome"], part["code"])
                np.add.at(weighted, index, part["weight"])
                np.add.at(rows, index, part["rows"])
            weighted.setflags(write=False)
            rows.setflags(write=False)
            counts[name] = BinCounts(name, labels, weighted, rows)
        unseen = {}
        for name in names:
            binning = binnings[name]
            held = counts[name].n_goods()[-1] + counts[name].n_bads()[-1]
            if binning.kind == CATEGORICAL and held > 0:
                unseen[name] = levels_in(self.engine, LEDGER, binning, self.kinds, where=self.where("fitting"))
        return counts, {}, unseen

    # ----------------------------------------------------------------------------------------
    # Selection and the fit

    def pattern_table(self, subsample: str, binnings: Sequence, *, kept=None, final: bool = False) -> PatternTable | EngineTable:
        """The distinct bin-code patterns of a sub-sample of development, with their goods and bads, grouped in the engine.

        The table is kept in the engine; the final fit's table (``final``) of more than
        ``ENGINE_PATTERNS`` patterns stays there (an ``EngineTable``: the fit adds up its sums
        where it is), any other comes here.
        """
        names = [b.characteristic for b in binnings]
        codes = [f"{self._code(b.characteristic, b)} AS c{j}" for j, b in enumerate(binnings)]
        columns = ", ".join(f"c{j}" for j in range(len(binnings)))
        query = (
            f"SELECT {columns}{', ' if columns else ''}{_units_sum(f'sw__outcome = {GOOD}')} AS goods, "
            f"{_units_sum(f'sw__outcome = {BAD}')} AS bads FROM (SELECT {', '.join([*codes, 'sw__outcome', 'sw__units'])} "
            f"FROM {LEDGER} WHERE {self.where(subsample)}) coded{' GROUP BY ' + columns if columns else ''}"
        )
        kept_table = f"sw__patterns{len(self._patterns)}"
        self._patterns.append(kept_table)
        self.engine.keep(kept_table, query)
        found = self.engine.arrow(f"SELECT count(*) AS n, sum(goods) AS goods, sum(bads) AS bads FROM {kept_table}").to_pylist()[0]
        if final and found["n"] > ENGINE_PATTERNS:
            return EngineTable(self.engine, kept_table, {name: f"c{j}" for j, name in enumerate(names)}, tuple(names),
                               int(found["n"]), float(found["goods"]) / sql.WEIGHT_UNIT, float(found["bads"]) / sql.WEIGHT_UNIT)
        table = self.engine.arrow(f"SELECT * FROM {kept_table}")
        matrix = np.column_stack([table.column(f"c{j}").to_numpy().astype(np.uint16) for j in range(len(binnings))]) \
            if binnings else np.zeros((table.num_rows, 0), np.uint16)
        if all(b.n_bins <= 255 for b in binnings):
            matrix = matrix.astype(np.uint8)
        return pattern_table(matrix, _weights(table, "goods"), _weights(table, "bads"), characteristics=names)

    # ----------------------------------------------------------------------------------------
    # Scores

    def score_histograms(self, binnings: Sequence, table, *, kept=None) -> dict[str, ScoreHistogram]:
        """Score histogram per sample, grouped in the engine by sample and score."""
        codes = [self._code(b.characteristic, b) for b in binnings]
        score = sql.score(self.engine.dialect, codes, table)
        found = self.engine.arrow(
            f"SELECT sw__sample, score, {_units_sum(f'sw__outcome = {GOOD}')} AS goods, {_units_sum(f'sw__outcome = {BAD}')} AS bads, "
            f"{_units_sum(f'sw__outcome <> {GOOD} AND sw__outcome <> {BAD}')} AS others "
            f"FROM (SELECT sw__sample, sw__outcome, sw__units, {score} AS score FROM {LEDGER}) scored GROUP BY sw__sample, score"
        )
        sample = found.column("sw__sample").to_numpy()
        histograms = {}
        for index, name in enumerate(SAMPLE_NAMES):
            inside = sample == index
            if inside.any():
                histograms[name] = _histogram(found, inside, name, table.decimals)
        return histograms

    def period_counts(self, scorecard, *, by_quarter: bool):
        """Per period ('all', and each calendar quarter, as its number since 1970, when ``by_quarter``): the score
        histogram, every model characteristic's weighted rows per bin and the weight of rows with no outcome; and
        the levels never seen at build time. Grouped in the engine by quarter; 'all' is their sum.

        Returns (parts, unseen, undated rows), as ``InProcessRows.period_counts``.
        """
        table = scorecard.table
        codes = {b.characteristic: self._code(b.characteristic, b) for b in scorecard.binnings}
        quarter = "sw__quarter" if by_quarter else "CAST(NULL AS BIGINT)"
        score = sql.score(self.engine.dialect, list(codes.values()), table)
        histograms = self.engine.arrow(
            f"SELECT period, score, {_units_sum(f'sw__outcome = {GOOD}')} AS goods, {_units_sum(f'sw__outcome = {BAD}')} AS bads, "
            f"{_units_sum(f'sw__outcome <> {GOOD} AND sw__outcome <> {BAD}')} AS others, "
            f"{_units_sum(f'sw__outcome = {UNKNOWN}')} AS unknown, count(*) AS n "
            f"FROM (SELECT {quarter} AS period, sw__outcome, sw__units, {score} AS score FROM {LEDGER}) scored "
            f"GROUP BY period, score"
        )
        bins = self._grouped(codes, period=quarter)
        period = np.array(histograms.column("period").to_pylist(), dtype=object)
        dated = np.array([p is not None for p in period], dtype=bool)
        keys = ["all", *sorted(set(period[dated].tolist()))]
        parts = {}
        for key in keys:
            inside = np.ones(len(period), bool) if key == "all" else dated & (period == key)
            counts = {}
            for char in table.characteristics:
                counts[char.name] = np.zeros(len(char.points))
                part = bins[char.name]
                mask = np.ones(len(part["code"]), bool) if key == "all" else part["dated"] & (part["period"] == key)
                np.add.at(counts[char.name], part["code"][mask], part["weight"][mask])
            parts[key] = {"histogram": _histogram(histograms, inside, "all" if key == "all" else str(key), table.decimals),
                          "counts": counts, "unknown": float(_weights(histograms, "unknown")[inside].sum())}
        undated = int(histograms.column("n").to_numpy()[~dated].sum()) if by_quarter else 0
        unseen = {}
        for binning in scorecard.binnings:
            levels = levels_in(self.engine, LEDGER, binning, self.kinds)
            if levels:
                unseen[binning.characteristic] = levels
        return parts, unseen, undated

    # ----------------------------------------------------------------------------------------
    # What every pass shares

    def where(self, subsample: str) -> str:
        """The condition of a sub-sample: development rows with a good or bad outcome, or a drawn sub-sample of them."""
        fitting = f"sw__sample = {DEVELOPMENT} AND (sw__outcome = {GOOD} OR sw__outcome = {BAD})"
        if subsample in self.subsamples:
            return f"{fitting} AND sw__{subsample}"
        return fitting

    def _code(self, name: str, binning, *, unseen_code: int | None = None) -> str:
        return sql.code(self.engine.dialect, self.engine.dialect.identifier(name), binning,
                        value_kind_=self.kinds.get(name, "text"), unseen_code=unseen_code)

    def _grouped(self, codes: Mapping[str, str], *keys: str, period: str = "") -> dict[str, dict]:
        """Weighted rows and rows per code of each characteristic and per value of ``keys`` (or of a period), in one query.

        One set of keys per characteristic (SQL's GROUPING SETS): a row of the result belongs to the characteristic whose
        code is not NULL (a code never is).
        """
        if not codes:
            return {}
        names = list(codes)
        aliases = [f"c{j}" for j in range(len(names))]
        by = [*keys, *(("period",) if period else ())]
        inner = ", ".join([*(f"{codes[n]} AS {a}" for n, a in zip(names, aliases)), *keys,
                           *((f"{period} AS period",) if period else ()), "sw__units"])
        sets = ", ".join(f"({', '.join([*by, a])})" for a in aliases)
        found = self.engine.arrow(
            f"SELECT {', '.join([*by, *aliases])}, sum(sw__units) AS weight, count(*) AS n "
            f"FROM (SELECT {inner} FROM {LEDGER}) coded GROUP BY GROUPING SETS ({sets})"
        )
        weight, n = _weights(found, "weight"), found.column("n").to_numpy().astype(float)
        result = {}
        for name, alias in zip(names, aliases):
            code = np.array(found.column(alias).to_pylist(), dtype=object)
            present = np.array([c is not None for c in code], dtype=bool)
            grouped = {key: np.array(found.column(key).to_pylist(), dtype=object)[present].astype(np.int64) for key in keys}
            if period:
                values = np.array(found.column("period").to_pylist(), dtype=object)[present]
                grouped["period"] = values
                grouped["dated"] = np.array([v is not None for v in values], dtype=bool)
            grouped.update(code=code[present].astype(np.int64), weight=weight[present], rows=n[present])
            result[name] = grouped
        return result


def levels_in(engine: SqlEngine, table: str, binning, kinds: Mapping[str, str], *, where: str = "TRUE") -> dict[str, int]:
    """The levels of a categorical characteristic its binning never saw, with their rows (most first), on some rows of a table."""
    if binning.kind != CATEGORICAL:
        return {}
    dialect = engine.dialect
    column = dialect.identifier(binning.characteristic)
    level = sql.level_text(dialect, column, kinds.get(binning.characteristic, "text"))
    code = sql.code(dialect, column, binning, value_kind_=kinds.get(binning.characteristic, "text"), unseen_code=-1)
    found = engine.arrow(f"SELECT {level} AS level, count(*) AS n FROM {table} WHERE ({where}) AND {level} IS NOT NULL "
                         f"AND {code} = -1 GROUP BY {level}")
    return ordered_levels(dict(zip(found.column("level").to_pylist(), found.column("n").to_pylist())))


def _units_sum(condition: str) -> str:
    return f"sum(CASE WHEN {condition} THEN sw__units ELSE 0 END)"


def _weights(table: pa.Table, column: str) -> np.ndarray:
    """Summed weight units back to weights: the sum is exact; the division by 2**32 is too."""
    values = table.column(column).cast(pa.float64()).to_numpy(zero_copy_only=False)
    return np.nan_to_num(values) / sql.WEIGHT_UNIT


def _histogram(found: pa.Table, inside: np.ndarray, sample: str, decimals: int) -> ScoreHistogram:
    scores = found.column("score").to_numpy(zero_copy_only=False)[inside]
    distinct, inverse = np.unique(scores.astype(np.int64 if decimals == 0 else np.float64), return_inverse=True)
    columns = {name: np.bincount(inverse, weights=_weights(found, name)[inside], minlength=len(distinct))
               for name in ("goods", "bads", "others")}  # whole numbers of weight units: exact in any order
    return ScoreHistogram(sample, frozen(distinct), frozen(columns["goods"]), frozen(columns["bads"]),
                          frozen(columns["others"]))


# --------------------------------------------------------------------------------------------
# Scoring in the engine


def scored_query(engine: SqlEngine, scorecard, kinds: Mapping[str, str], *, reason_count: int, id_column: str,
                 source: str = "sw__typed") -> str:
    """The query of every row's id, score, probability of default and reasons, as ``Scorecard.score`` gives them.

    The probability of default of each distinct score is computed here, as in process, and joined
    (a look-up ``sw__pd``); the reasons are the positions of the smallest of the integer keys
    ``scoring.reasons`` sorts by, found by sorting each row's keys in the engine.
    """
    dialect = engine.dialect
    table = scorecard.table
    codes = [sql.code(dialect, dialect.identifier(b.characteristic), b, value_kind_=kinds.get(b.characteristic, "text"))
             for b in scorecard.binnings]
    score = sql.score(dialect, codes, table)
    keys = sql.reason_keys(dialect, codes, table)
    count = min(reason_count, len(keys))
    sorted_keys = (f"list_sort([{', '.join(keys)}])" if dialect.name == DUCKDB else f"array_sort(array({', '.join(keys)}))") \
        if count else "NULL"
    scored = f"SELECT {dialect.identifier(id_column)} AS sw__id, {score} AS score, {sorted_keys} AS sw__keys FROM {source}"
    distinct = engine.arrow(f"SELECT DISTINCT score FROM ({scored}) scores").column("score").to_numpy(zero_copy_only=False)
    scores = distinct.astype(np.int64 if table.decimals == 0 else np.float64)
    engine.register("sw__pd", pa.table({"sw__score": scores, "pd": table.scaling.pd_of_score(scores)}))
    columns = [f"sw__id AS {dialect.identifier(id_column)}", "score", "pd"]
    k = len(keys)
    code_texts = [c.reason_code for c in table.characteristics]
    label_texts = [c.reason_label for c in table.characteristics]
    for rank in range(1, count + 1):
        key = f"list_extract(sw__keys, {rank})" if dialect.name == DUCKDB else f"element_at(sw__keys, {rank})"
        position = f"((({key}) % {k} + {k}) % {k})"
        lost = f"(({position} - {key}) / {k})"
        for suffix, texts in (("", code_texts), ("_text", label_texts)):
            cases = " ".join(f"WHEN {j} THEN {dialect.text(text)}" for j, text in enumerate(texts))
            columns.append(f"(CASE WHEN {lost} > 0 THEN (CASE {position} {cases} END) ELSE '' END) AS reason_{rank}{suffix}")
    return f"SELECT {', '.join(columns)} FROM ({scored}) scored JOIN sw__pd ON scored.score = sw__pd.sw__score"


# --------------------------------------------------------------------------------------------
# A pattern table too large to bring here: the fit's sums are added up in the engine


@dataclass(frozen=True, eq=False)
class EngineTable:
    """A pattern table kept in the engine (columns c0, c1, ..., goods, bads), fitted where it is.

    Each Newton step of the fit is one pass over it (``sums``); a fit on fewer characteristics
    reads fewer of its columns (``subset``), which has the same likelihood as their own table.
    """

    engine: SqlEngine
    table: str
    columns: Mapping[str, str]  # characteristic -> its column of codes
    characteristics: tuple[str, ...]
    n_patterns: int
    goods_total: float
    bads_total: float

    def subset(self, characteristics: Sequence[str]) -> EngineTable:
        """The same table, read for fewer characteristics."""
        return EngineTable(self.engine, self.table, self.columns, tuple(characteristics), self.n_patterns,
                           self.goods_total, self.bads_total)

    def sums(self, names: Sequence[str], woe: Mapping[str, np.ndarray], beta: np.ndarray):
        """One pass: the negative log-likelihood, score and information at ``beta`` (intercept first), as a tuple."""
        features = self._features(names, woe)
        eta = " + ".join([self.engine.dialect.double(float(beta[0])),
                          *(f"{self.engine.dialect.double(float(b))} * x{j}" for j, b in enumerate(beta[1:], start=1))])
        x = ["1.0", *(f"x{j}" for j in range(1, len(beta)))]
        total = self.engine.dialect.float_sum
        aggregates = [f"{total}(goods * (greatest(-eta, 0.0) + ln(1.0 + exp(-abs(eta)))) "
                      "+ bads * (greatest(eta, 0.0) + ln(1.0 + exp(-abs(eta))))) AS loss"]
        aggregates += [f"{total}(r * {x[i]}) AS s{i}" for i in range(len(x))]
        aggregates += [f"{total}(w * {x[i]} * {x[j]}) AS h{i}_{j}" for i in range(len(x)) for j in range(i, len(x))]
        # p and 1 - p from exp of a number never above 0, so that nothing overflows
        probabilities = ("CASE WHEN eta >= 0 THEN 1.0 / (1.0 + exp(-eta)) ELSE exp(eta) / (1.0 + exp(eta)) END AS p, "
                         "CASE WHEN eta >= 0 THEN exp(-eta) / (1.0 + exp(-eta)) ELSE 1.0 / (1.0 + exp(eta)) END AS q")
        found = self.engine.arrow(
            f"SELECT {', '.join(aggregates)} FROM (SELECT *, goods * q - bads * p AS r, (goods + bads) * p * q AS w FROM "
            f"(SELECT *, {probabilities} FROM (SELECT goods, bads, {features}, {eta} AS eta FROM "
            f"(SELECT {self._inner(names, woe)} FROM {self.table}) coded) linear) fitted) terms"
        ).to_pylist()[0]
        size = len(x)
        information = np.zeros((size, size))
        for i in range(size):
            for j in range(i, size):
                information[i, j] = information[j, i] = found[f"h{i}_{j}"]
        return float(found["loss"]), np.array([found[f"s{i}"] for i in range(size)], dtype=float), information

    def spread(self, names: Sequence[str], woe: Mapping[str, np.ndarray]) -> np.ndarray:
        """One pass: the weighted standard deviation of each characteristic's WoE column."""
        features = self._features(names, woe)
        total = self.engine.dialect.float_sum
        moments = ", ".join(f"{total}((goods + bads) * x{j}) AS m{j}, {total}((goods + bads) * x{j} * x{j}) AS v{j}"
                            for j in range(1, len(names) + 1))
        found = self.engine.arrow(
            f"SELECT {total}(goods + bads) AS n{', ' + moments if moments else ''} FROM "
            f"(SELECT goods, bads, {features} FROM (SELECT {self._inner(names, woe)} FROM {self.table}) coded) columns"
        ).to_pylist()[0]
        n = float(found["n"])
        means = np.array([found[f"m{j}"] / n for j in range(1, len(names) + 1)])
        squares = np.array([found[f"v{j}"] / n for j in range(1, len(names) + 1)])
        return np.sqrt(np.clip(squares - means**2, 0.0, None))

    def _inner(self, names: Sequence[str], woe: Mapping[str, np.ndarray]) -> str:
        weights = f"CAST(goods AS DOUBLE) / {sql.WEIGHT_UNIT!r} AS goods, CAST(bads AS DOUBLE) / {sql.WEIGHT_UNIT!r} AS bads"
        return ", ".join([weights, *(f"{self.columns[name]} AS k{j}" for j, name in enumerate(names, start=1))])

    def _features(self, names: Sequence[str], woe: Mapping[str, np.ndarray]) -> str:
        dialect = self.engine.dialect
        columns = []
        for j, name in enumerate(names, start=1):
            cases = " ".join(f"WHEN {code} THEN {dialect.double(float(value))}" for code, value in enumerate(woe[name]))
            columns.append(f"(CASE k{j} {cases} END) AS x{j}")
        return ", ".join(columns) if columns else "0 AS x0"
