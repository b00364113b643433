"""The DuckDB engine: an embedded SQL engine that counts the rows where they are.

A ledger through DuckDB is a table of a DuckDB database (``ledger.path`` a ``.duckdb`` file and
``ledger.table``), a query (``ledger.query``, run in that database when there is one), or files
DuckDB reads itself: a Parquet or CSV file, or a folder of them, larger than memory if need be.
The database is opened read-only unless scores are written back into it. DuckDB keeps what it
cannot hold in memory in a temporary folder of its own, removed when the run ends; it never
fetches anything (extensions are neither installed nor loaded at run time).
"""

from __future__ import annotations

import shutil
import tempfile
from pathlib import Path

import pyarrow as pa

from ..errors import LedgerError, SettingsError
from ..files import replacing
from .engine import RowPlace, csv_delimiter
from .sql import DUCKDB_SQL
from .sqlrows import SOURCE, SqlEngine

DATABASE_SUFFIXES = (".duckdb", ".db", ".ddb")
ATTACHED = "sw__db"


class DuckDBEngine(SqlEngine):
    """A DuckDB connection holding one ledger as the view ``sw__source``."""

    dialect = DUCKDB_SQL

    def __init__(self, place: RowPlace, *, writable: bool = False):
        duckdb = _duckdb()
        self.place, self.name = place, place.name
        self._error = duckdb.Error
        self._spill = tempfile.mkdtemp(prefix="scorewright-duckdb-")
        self.con = duckdb.connect(config={"autoinstall_known_extensions": False, "autoload_known_extensions": False})
        try:
            self._settings(place)
            self._attach(place, writable)
            self.con.execute(f"CREATE TEMP VIEW {SOURCE} AS SELECT * FROM {self._source(place)}")
        except self._error as error:
            self.close()
            raise LedgerError(f"{self.name}: DuckDB cannot read the ledger: {_first_line(error)} "
                              "Check the path, the table's name or the query.") from None
        except BaseException:
            self.close()
            raise

    def arrow(self, query: str) -> pa.Table:
        try:
            return self.con.sql(query).to_arrow_table()
        except self._error as error:
            raise LedgerError(f"{self.name}: DuckDB stopped: {_first_line(error)}") from None

    def keep(self, table: str, query: str) -> None:
        self._run(f"CREATE OR REPLACE TEMP TABLE {table} AS {query}")

    def register(self, table: str, rows: pa.Table) -> None:
        self.con.register(table, rows)

    def view(self, table: str, query: str) -> None:
        self._run(f"CREATE OR REPLACE TEMP VIEW {table} AS {query}")

    def write(self, query: str, *, path=None, table: str = "", force: bool = False) -> None:
        """Write the rows of ``query`` to a Parquet or CSV file (under a temporary name, then renamed) or to a table."""
        if table:
            if not self._attached:
                raise SettingsError(f"{table}: a table is written into the DuckDB database the ledger is in; "
                                    "give the ledger as a .duckdb file.")
            exists = self.arrow(f"SELECT count(*) AS n FROM duckdb_tables() WHERE database_name = '{ATTACHED}' "
                                f"AND table_name = {DUCKDB_SQL.text(table)}").column("n")[0].as_py()
            if exists and not force:
                raise SettingsError(f"{table}: the table exists in {self.place.path}. Pass --force to replace it, or choose another name.")
            self._run(f"CREATE OR REPLACE TABLE {ATTACHED}.main.{DUCKDB_SQL.identifier(table)} AS {query}")
            return
        path = Path(path)
        form = "(FORMAT PARQUET)" if path.suffix.lower() == ".parquet" else "(FORMAT CSV, HEADER)"
        with replacing(path) as temporary:
            self._run(f"COPY ({query}) TO {DUCKDB_SQL.text(str(temporary))} {form}")

    def close(self) -> None:
        try:
            self.con.close()
        except Exception:  # a connection half made: nothing more to release
            pass
        shutil.rmtree(self._spill, ignore_errors=True)

    # ----------------------------------------------------------------------------------------

    def _run(self, statement: str) -> None:
        try:
            self.con.execute(statement)
        except self._error as error:
            raise LedgerError(f"{self.name}: DuckDB stopped: {_first_line(error)}") from None

    def _settings(self, place: RowPlace) -> None:
        options = place.options
        self.con.execute(f"SET temp_directory = {DUCKDB_SQL.text(self._spill)}")
        self.con.execute("SET enable_progress_bar = false")
        if options.get("memory_limit"):
            self.con.execute(f"SET memory_limit = {DUCKDB_SQL.text(str(options['memory_limit']))}")
        if options.get("threads"):
            self.con.execute(f"SET threads = {int(options['threads'])}")

    def _attach(self, place: RowPlace, writable: bool) -> None:
        self._attached = bool(place.path) and Path(place.path).suffix.lower() in DATABASE_SUFFIXES
        if not self._attached:
            return
        if not Path(place.path).is_file():
            raise LedgerError(f"{place.path}: DuckDB database not found. Check the path (ledger.path in a settings file).")
        mode = "" if writable else " (READ_ONLY)"
        self.con.execute(f"ATTACH {DUCKDB_SQL.text(str(place.path))} AS {ATTACHED}{mode}")
        self.con.execute(f"USE {ATTACHED}")

    def _source(self, place: RowPlace) -> str:
        if place.query:
            _one_select(self.con, place.query, self.name, self._error)
            return f"({place.query}) AS sw__query"
        if place.table:
            if not self._attached and place.path:
                raise SettingsError(f"{place.path}: ledger.table names a table of a DuckDB database; "
                                    "ledger.path must then be the database file (.duckdb).")
            return ".".join(DUCKDB_SQL.identifier(part) for part in place.table.split("."))
        if self._attached:
            raise SettingsError(f"{place.path}: a DuckDB database; name the table holding the ledger with ledger.table "
                                "(or give ledger.query).")
        return files_source(place.path)


def files_source(path: str) -> str:
    """DuckDB's reader of a Parquet or CSV file, or of a folder of them (every column of a CSV read as text)."""
    target = Path(path)
    if target.is_dir():
        parquet = sorted(target.rglob("*.parquet"))
        pattern = str(target / "**" / ("*.parquet" if parquet else "*.csv"))
        if not parquet and not sorted(target.rglob("*.csv")):
            raise LedgerError(f"{path}: the folder holds no .parquet or .csv files.")
        suffix = ".parquet" if parquet else ".csv"
    elif target.exists():
        pattern, suffix = str(target), target.suffix.lower()
    else:
        raise LedgerError(f"{path}: ledger file not found. Check the path (in a settings file, a relative path starts at the file's folder).")
    if suffix in (".parquet", ".pq"):
        return f"read_parquet({DUCKDB_SQL.text(pattern)}, union_by_name = true)"
    if suffix in (".csv", ".txt"):
        first = target if target.is_file() else sorted(target.rglob("*.csv"))[0]
        return (f"read_csv({DUCKDB_SQL.text(pattern)}, header = true, all_varchar = true, union_by_name = true, "
                f"delim = {DUCKDB_SQL.text(csv_delimiter(first))}, quote = '\"', escape = '\"')")
    raise LedgerError(f"{path}: DuckDB reads Parquet and CSV files, a folder of them, or a .duckdb database.")


def _one_select(con, query: str, name: str, error_type) -> None:
    """Refuse anything but one SELECT: the ledger is read, never changed."""
    try:
        statements = con.extract_statements(query)
    except error_type as error:
        raise LedgerError(f"{name}: the query cannot be read: {_first_line(error)}") from None
    if len(statements) != 1 or str(statements[0].type).rsplit(".", 1)[-1] != "SELECT":
        raise SettingsError(f"{name}: the query must be one SELECT statement (it reads the ledger, never changes it).")


def _first_line(error: BaseException) -> str:
    return (str(error).strip().splitlines() or [type(error).__name__])[0]


def _duckdb():
    try:
        import duckdb
    except ImportError:
        raise SettingsError("ledger.engine = \"duckdb\" needs the duckdb package: pip install 'scorewright[duckdb]'.") from None
    return duckdb
