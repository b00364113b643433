"""The Spark engine: the same counts as Spark SQL, run where the data lives, collected as small tables.

A ledger through Spark is a Parquet or CSV path Spark can read (a file, a folder, a data lake's
URI), a table of Spark's catalog (``ledger.table``) or a query (``ledger.query``). The session is
Spark's own: ``spark.master`` comes from ``[spark] master`` in the settings, else from the
``SPARK_MASTER`` environment variable, else Spark runs on this machine (``local[*]``);
``[spark] config`` adds any other Spark setting. One session serves the whole process.

On this machine (a ``local`` master) the session is kept quiet and small: it binds to the
loopback address, starts no web page, logs only what Python raises, and uses as many shuffle
partitions as cores. Spark needs Java 17 or newer; without it the message says so.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
import tempfile
import warnings
from pathlib import Path

import pyarrow as pa

from ..errors import LedgerError, SettingsError
from ..files import replacing_folder
from .engine import RowPlace, csv_delimiter
from .sql import SPARK_SQL
from .sqlrows import SOURCE, SqlEngine

JAVA_NEEDED = 17
# the JVM's log: errors reach Python as exceptions, so Spark's own log stays silent
QUIET_LOG = """rootLogger.level = off
rootLogger.appenderRef.stderr.ref = console
appender.console.type = Console
appender.console.name = console
appender.console.target = SYSTEM_ERR
appender.console.layout.type = PatternLayout
appender.console.layout.pattern = %d{HH:mm:ss} %p %c{1}: %m%n
"""


class SparkEngine(SqlEngine):
    """The process's Spark session, holding one ledger as the temporary view ``sw__source``."""

    dialect = SPARK_SQL

    def __init__(self, place: RowPlace):
        self.place, self.name = place, place.name
        self.spark = spark_session(place.options)
        from pyspark.errors import PySparkException

        self._error = PySparkException
        self._kept: list = []
        try:
            self._source(place).createOrReplaceTempView(SOURCE)
        except self._error as error:
            raise LedgerError(f"{self.name}: Spark cannot read the ledger: {_first_line(error)} "
                              "Check the path, the table's name or the query.") from None

    def arrow(self, query: str) -> pa.Table:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", FutureWarning)
                return self.spark.sql(query).toArrow()
        except self._error as error:
            raise LedgerError(f"{self.name}: Spark stopped: {_first_line(error)}") from None

    def keep(self, table: str, query: str) -> None:
        from pyspark import StorageLevel

        try:
            frame = self.spark.sql(query).persist(StorageLevel.MEMORY_AND_DISK)
        except self._error as error:
            raise LedgerError(f"{self.name}: Spark stopped: {_first_line(error)}") from None
        self._kept.append(frame)
        frame.createOrReplaceTempView(table)

    def schema(self, table: str) -> pa.Schema:
        from pyspark.sql.pandas.types import to_arrow_schema

        return to_arrow_schema(self.spark.table(table).schema)

    def register(self, table: str, rows: pa.Table) -> None:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FutureWarning)
            self.spark.createDataFrame(rows).createOrReplaceTempView(table)

    def view(self, table: str, query: str) -> None:
        try:
            self.spark.sql(query).createOrReplaceTempView(table)
        except self._error as error:
            raise LedgerError(f"{self.name}: Spark stopped: {_first_line(error)}") from None

    def write(self, query: str, *, path=None, table: str = "", force: bool = False) -> None:
        """Write the rows of ``query`` to a table of the catalog, or as Parquet to a folder (switched in whole when local)."""
        try:
            frame = self.spark.sql(query)
            if table:
                if self.spark.catalog.tableExists(table) and not force:
                    raise SettingsError(f"{table}: the table exists. Pass --force to replace it, or choose another name.")
                frame.write.mode("overwrite").saveAsTable(table)
                return
            target = str(path)
            if "://" in target:  # a data lake's path: Spark writes it as Spark does
                frame.write.mode("overwrite" if force else "errorifexists").parquet(target)
                return
            with replacing_folder(target) as folder:
                frame.write.mode("overwrite").parquet(str(folder))
        except self._error as error:
            raise LedgerError(f"{self.name}: Spark stopped: {_first_line(error)}") from None

    def close(self) -> None:
        for frame in self._kept:
            frame.unpersist()
        self._kept.clear()

    # ----------------------------------------------------------------------------------------

    def _source(self, place: RowPlace):
        reader = self.spark.read
        if place.query:
            # read as a sub-query: anything but one SELECT is refused by Spark's parser, never run
            return self.spark.sql(f"SELECT * FROM ({place.query.strip().rstrip(';')}) AS sw__query")
        if place.table:
            return self.spark.table(place.table)
        path = place.path
        local = "://" not in path
        if local and not Path(path).exists():
            raise LedgerError(f"{path}: ledger file not found. Check the path (in a settings file, a relative path starts at the file's folder).")
        if _is_csv(path):
            first = _first_csv(path) if local else None
            return reader.csv(path, header=True, sep=csv_delimiter(first) if first else ",", mode="FAILFAST",
                              inferSchema=False, enforceSchema=False)
        return reader.parquet(path)


def spark_session(options):
    """The process's Spark session: started on first use with the settings' master and config, then shared."""
    _check_java()
    pyspark = _pyspark()
    master = str(options.get("master") or os.environ.get("SPARK_MASTER") or "local[*]")
    local = master.startswith("local")
    os.environ.setdefault("PYSPARK_PYTHON", sys.executable)
    os.environ.setdefault("PYSPARK_DRIVER_PYTHON", sys.executable)
    if local:
        os.environ.setdefault("SPARK_LOCAL_IP", "127.0.0.1")  # no look-up of the machine's name
    builder = pyspark.sql.SparkSession.builder.master(master).appName("scorewright")
    cores = os.cpu_count() or 2
    settings = {
        "spark.sql.session.timeZone": "UTC",
        "spark.sql.ansi.enabled": "true",
        "spark.sql.execution.arrow.pyspark.enabled": "true",
        "spark.sql.parquet.datetimeRebaseModeInRead": "CORRECTED",
        "spark.sql.parquet.int96RebaseModeInRead": "CORRECTED",
        "spark.ui.showConsoleProgress": "false",
        "spark.driver.extraJavaOptions": f"-Dlog4j2.configurationFile={_quiet_log()}",
    }
    if local:
        settings.update({
            "spark.driver.host": "127.0.0.1", "spark.driver.bindAddress": "127.0.0.1", "spark.ui.enabled": "false",
            "spark.eventLog.enabled": "false", "spark.sql.shuffle.partitions": str(cores),
            "spark.default.parallelism": str(cores),
            "spark.driver.extraJavaOptions": f"-Dlog4j2.configurationFile={_quiet_log()} -XX:+UseSerialGC -XX:TieredStopAtLevel=1",
        })
    for entry in options.get("config", ()):
        key, _, value = str(entry).partition("=")
        settings[key.strip()] = value.strip()
    for key, value in settings.items():
        builder = builder.config(key, value)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)
        session = builder.getOrCreate()
    session.sparkContext.setLogLevel("ERROR")
    try:  # pyspark 4 also logs every query error from Python; we raise them instead
        from pyspark.logger import PySparkLogger

        for name in ("SQLQueryContextLogger", "DataFrameQueryContextLogger"):
            PySparkLogger.getLogger(name).disabled = True
    except ImportError:
        pass
    return session


def java_version() -> int | None:
    """The major version of the Java that Spark would start (JAVA_HOME's, else the one on PATH), or None."""
    home = os.environ.get("JAVA_HOME")
    java = str(Path(home) / "bin" / "java") if home else shutil.which("java")
    if not java or not Path(java).exists():
        return None
    try:
        text = subprocess.run([java, "-version"], capture_output=True, text=True, timeout=30).stderr
    except (OSError, subprocess.SubprocessError):
        return None
    found = re.findall(r'version "(\d+)(?:\.(\d+))?', text)
    if not found:
        return None
    major, minor = found[0]
    return int(minor) if major == "1" and minor else int(major)  # Java 8 calls itself 1.8


_JAVA_FOUND: list[int | None] = []


def _check_java() -> None:
    if not _JAVA_FOUND:  # once a process: each look starts a JVM
        _JAVA_FOUND.append(java_version())
    version = _JAVA_FOUND[0]
    if version is None:
        raise SettingsError(f"ledger.engine = \"spark\" needs Java {JAVA_NEEDED} or newer, and no java was found. "
                            "Install it (on Debian or Ubuntu: make system-deps, or apt-get install openjdk-17-jre-headless) "
                            "or set JAVA_HOME.")
    if version < JAVA_NEEDED:
        raise SettingsError(f"ledger.engine = \"spark\" needs Java {JAVA_NEEDED} or newer; the java found is version {version}. "
                            "Install a newer one or point JAVA_HOME at it.")


_QUIET_LOG_PATH: list[str] = []


def _quiet_log() -> str:
    if not _QUIET_LOG_PATH:
        folder = tempfile.mkdtemp(prefix="scorewright-spark-")
        path = Path(folder) / "log4j2.properties"
        path.write_text(QUIET_LOG, encoding="utf-8")
        _QUIET_LOG_PATH.append(str(path))
    return _QUIET_LOG_PATH[0]


def _is_csv(path: str) -> bool:
    target = Path(path)
    if target.is_dir():
        return not any(target.rglob("*.parquet")) and any(target.rglob("*.csv"))
    return target.suffix.lower() in (".csv", ".txt")


def _first_csv(path: str) -> Path | None:
    target = Path(path)
    return target if target.is_file() else next(iter(sorted(target.rglob("*.csv"))), None)


def _first_line(error: BaseException) -> str:
    text = str(getattr(error, "getMessage", lambda: str(error))() or error)
    return (text.strip().splitlines() or [type(error).__name__])[0]


def _pyspark():
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FutureWarning)
            import pyspark.sql
    except ImportError:
        raise SettingsError("ledger.engine = \"spark\" needs the pyspark package: pip install 'scorewright[spark]'.") from None
    return pyspark
