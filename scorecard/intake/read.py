"""Reading ledger files: CSV, Parquet or Excel, whole or in batches, checked as they are read.

Messages name the file, the column and the rows as the user sees them: row numbers count the
header as row 1, as a spreadsheet shows them.
"""

from __future__ import annotations

import csv
import ctypes
import ctypes.util
import os
import re
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import LedgerError
from ..rows import BATCH_READABLE, csv_delimiter
from ..terms import NUMERIC
from .kinds import ROLE_SAMPLE_ROWS, closest_names, detect_kind

SUFFIXES = (".csv", ".txt", ".parquet", ".pq", ".xlsx", ".xlsm")
HEAD_ROWS = ROLE_SAMPLE_ROWS  # kinds and left-out columns are judged on the first rows of a streamed ledger


# the words a whole read with pandas takes for an empty cell, so that batches read with pyarrow
# take the same ones (pandas' read_csv documentation, na_values)
EMPTY_WORDS = (
    "", "#N/A", "#N/A N/A", "#NA", "-1.#IND", "-1.#QNAN", "-NaN", "-nan", "1.#IND", "1.#QNAN", "<NA>", "N/A", "NA",
    "NULL", "NaN", "None", "n/a", "nan", "null",
)


# the words pandas reads as true and false (its read_csv documentation, true_values), for batches read with pyarrow
TRUE_WORDS = ("True", "TRUE", "true")
FALSE_WORDS = ("False", "FALSE", "false")


def read_ledger(source: str | os.PathLike[str] | pd.DataFrame, *, columns: Sequence[str] | None = None) -> pd.DataFrame:
    """Read a ledger file (CSV, Parquet or Excel) into a DataFrame, checking it can be used.

    Parameters
    ----------
    source : path-like or pandas.DataFrame
        The ledger. A DataFrame is checked and returned unchanged (never modified).
    columns : sequence of str, optional
        Read only these columns.

    Returns
    -------
    pandas.DataFrame

    Raises
    ------
    LedgerError
        The file is missing, unreadable, of an unknown type, empty, has only a header, or has
        duplicate column names.
    """
    if isinstance(source, pd.DataFrame):
        check_column_names([str(c) for c in source.columns], "DataFrame")
        if len(source) == 0:
            raise LedgerError("DataFrame: the ledger has no rows. Pass a ledger with at least one application.")
        return source
    path, suffix = checked_file(source)
    frame = _read_frame(path, suffix, columns)
    if len(frame) == 0:
        raise LedgerError(f"{path.name}: the file has a header but no data rows. Export the ledger again with its data.")
    return with_numbers_read(frame, separator_styles(frame, path.name))


def ledger_columns(source: str | os.PathLike[str]) -> list[str]:
    """Return a ledger file's column names, checking the file as ``read_ledger`` does."""
    path, suffix = checked_file(source)
    return _read_header(path, suffix)


def read_batches(source: str | os.PathLike[str], columns: Sequence[str], *, batch_rows: int):
    """Yield (first row, frame) over a CSV or Parquet ledger, reading only ``columns``, checked as a whole read is.

    Raises
    ------
    LedgerError
        The file cannot be read, or a named column is not in it.
    """
    path, suffix = checked_file(source)
    if suffix not in BATCH_READABLE:
        raise LedgerError(f"{path.name}: only CSV and Parquet ledgers can be read in batches. Convert it, or read it whole.")
    head = read_head(path, suffix)
    absent = [c for c in columns if c not in head.columns]
    if absent:
        raise LedgerError(f"{path.name}: column {absent[0]!r} not found.{closest_names(absent[0], [str(c) for c in head.columns])}")
    yield from file_batches(path, suffix, list(columns), arrow_types(head), batch_rows)


def checked_file(source: str | os.PathLike[str]) -> tuple[Path, str]:
    """Check a ledger file exists, has a known type, is not empty and has unique column names."""
    path = Path(source)
    name = path.name
    if not path.exists():
        raise LedgerError(f"{path}: ledger file not found. Check the path (in a settings file, a relative path starts at the file's folder).")
    if path.is_dir():
        raise LedgerError(f"{path}: is a folder, not a ledger file. Give the path of a CSV, Parquet or .xlsx file.")
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        raise LedgerError(f"{path}: unknown ledger file type {suffix or '(no suffix)'!r}. Use a .csv, .parquet or .xlsx file.")
    if path.stat().st_size == 0:
        raise LedgerError(f"{name}: the file is empty. Export the ledger again with a header row and data rows.")
    check_column_names(_read_header(path, suffix), name)
    return path, suffix


def _read_header(path: Path, suffix: str) -> list[str]:
    """Read the column names as they are in the file (pandas would rename duplicates)."""
    try:
        if suffix in (".csv", ".txt"):
            with path.open(newline="", encoding="utf-8-sig") as stream:
                return next(csv.reader(stream, delimiter=csv_delimiter(path)), [])
        if suffix in (".parquet", ".pq"):
            import pyarrow.parquet as pq

            return list(pq.read_schema(path).names)
        import openpyxl

        book = openpyxl.load_workbook(path, read_only=True)
        try:
            first = next(book.worksheets[0].iter_rows(max_row=1, values_only=True), ())
        finally:
            book.close()
        return ["" if value is None else str(value) for value in first]
    except UnicodeDecodeError as error:
        raise LedgerError(f"{path.name}: not UTF-8 text (byte {error.start}). Save the ledger as UTF-8 CSV.") from None
    except Exception as error:  # any reader failure is the file's fault here
        raise LedgerError(f"{path.name}: cannot read the file as {suffix[1:]} ({type(error).__name__}: {error}). Check it opens and is not damaged.") from None


def _read_frame(path: Path, suffix: str, columns: Sequence[str] | None) -> pd.DataFrame:
    usecols = list(columns) if columns is not None else None
    if suffix in (".parquet", ".pq"):
        _refuse_nested(path, usecols)
    try:
        if suffix in (".csv", ".txt") and usecols is not None:
            # pyarrow's parser checks every row's fields even when it keeps a few columns (pandas' own lets
            # a row with an extra field pass), so a ledger gets the same verdict read whole or in part
            return pd.read_csv(path, usecols=usecols, encoding="utf-8-sig", sep=csv_delimiter(path), engine="pyarrow")
        if suffix in (".csv", ".txt"):
            return pd.read_csv(path, usecols=usecols, encoding="utf-8-sig", low_memory=False, sep=csv_delimiter(path))
        if suffix in (".parquet", ".pq"):
            return pd.read_parquet(path, columns=usecols)
        return pd.read_excel(path, usecols=usecols, engine="openpyxl")
    except pd.errors.EmptyDataError:
        raise LedgerError(f"{path.name}: the file is empty. Export the ledger again with a header row and data rows.") from None
    except UnicodeDecodeError as error:
        raise LedgerError(f"{path.name}: not UTF-8 text (byte {error.start}). Save the ledger as UTF-8 CSV.") from None
    except Exception as error:  # a reader failure is the file's fault here
        raise _unreadable(path, error) from None


def _unreadable(path: Path, error: Exception) -> LedgerError:
    """Say why a reader failed, on one line; a row with too many fields by its row number."""
    text = " ".join(str(error).split())
    fields = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", text)
    arrow = re.search(r"Expected (\d+) columns, got (\d+): (.*)", str(error))  # pyarrow names the row by its text
    if arrow:
        line = next((number for number, row in enumerate(_lines(path), start=1) if row == arrow[3]), "?")
        fields = {1: arrow[1], 2: str(line), 3: arrow[2]}
    if fields:
        expected, line, saw = fields[1], fields[2], fields[3]
        return LedgerError(f"{path.name}, row {line}: {saw} fields where the header names {expected}. A value may hold "
                           "the separator without quotes: quote it, or remove the extra field.")
    return LedgerError(f"{path.name}: cannot read the file ({type(error).__name__}: {text}). Check it opens and is not damaged.")


def _lines(path: Path):
    with path.open(encoding="utf-8-sig", errors="replace", newline="") as stream:
        for row in stream:
            yield row.rstrip("\r\n")


def check_column_names(names: list[str], source: str) -> None:
    """Refuse a ledger without column names, with a column without a name, or with a name given twice."""
    if not names or all(not n.strip() for n in names):
        raise LedgerError(f"{source}: no header row with column names. The first row must name the columns.")
    seen: dict[str, int] = {}
    for position, column in enumerate(names, start=1):
        if not column.strip():
            raise LedgerError(
                f"{source}: column {position} of the header has no name. Name it, or remove the column (a spreadsheet's "
                "or pandas' row index is often written so)."
            )
        if column in seen:
            raise LedgerError(
                f"{source}: column name {column!r} appears twice (columns {seen[column]} and {position}). Rename one so every column name is unique."
            )
        seen[column] = position


def read_head(path: Path, suffix: str) -> pd.DataFrame:
    """The first ``HEAD_ROWS`` rows, numbers written with separators read as numbers (``separator_styles``)."""
    head = _raw_head(path, suffix)
    return with_numbers_read(head, separator_styles(head, path.name))


def _raw_head(path: Path, suffix: str) -> pd.DataFrame:
    try:
        if suffix in (".parquet", ".pq"):
            import pyarrow.parquet as pq

            _refuse_nested(path, None)
            batch = next(pq.ParquetFile(path, pre_buffer=False).iter_batches(batch_size=HEAD_ROWS), None)
            return batch.to_pandas() if batch is not None else pd.read_parquet(path)
        return pd.read_csv(path, nrows=HEAD_ROWS, encoding="utf-8-sig", low_memory=False, sep=csv_delimiter(path))
    except LedgerError:
        raise
    except UnicodeDecodeError as error:
        raise LedgerError(f"{path.name}: not UTF-8 text (byte {error.start}). Save the ledger as UTF-8 CSV.") from None
    except Exception as error:  # a reader failure is the file's fault here
        raise _unreadable(path, error) from None


def _refuse_nested(path: Path, columns: Sequence[str] | None) -> None:
    """Refuse Parquet columns of lists, records or maps: a ledger holds one value per cell."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        schema = pq.read_schema(path)
    except Exception as error:  # a reader failure is the file's fault here
        raise LedgerError(f"{path.name}: cannot read the file as parquet ({type(error).__name__}: {error}). Check it opens and is not damaged.") from None
    nested = [field.name for field in schema if pa.types.is_nested(field.type) and (columns is None or field.name in columns)]
    if nested:
        shown = ", ".join(repr(name) for name in nested[:5]) + (f" and {len(nested) - 5} more" if len(nested) > 5 else "")
        raise LedgerError(
            f"{path.name}: column{'s' if len(nested) > 1 else ''} {shown} hold{'' if len(nested) > 1 else 's'} lists or "
            "records in each cell, and a ledger holds one value per cell. Flatten them into columns of their own, "
            "or write the file without them."
        )


def arrow_types(head: pd.DataFrame, *, exact: Sequence[str] = ()) -> dict[str, object]:
    """Column types for reading batches: numbers as float64, true/false as booleans, everything else as text.

    A column named in ``exact`` (the id column) keeps whole numbers as 64-bit integers, since a
    float64 would round a long number and change the row's split key.
    """
    import pyarrow as pa

    def kind(column) -> object:
        series = head[column]
        if pd.api.types.is_bool_dtype(series) or _true_or_false(series):
            return pa.bool_()
        if str(column) in exact and pd.api.types.is_integer_dtype(series):
            return pa.int64()
        return pa.float64() if detect_kind(series) == NUMERIC else pa.string()

    return {str(c): kind(c) for c in head.columns}


def _true_or_false(series: pd.Series) -> bool:
    """Whether a column read whole holds only True, False and missing (pandas keeps it as objects)."""
    if not pd.api.types.is_object_dtype(series):
        return False
    present = series.dropna()
    return len(present) > 0 and all(isinstance(v, (bool, np.bool_)) for v in present.iloc[:1000]) and \
        present.isin([True, False]).all()


def file_batches(path: Path, suffix: str, columns: list[str], types: dict[str, object], batch_rows: int):
    """Yield (first row, frame) over a CSV or Parquet file, reading only ``columns``.

    Columns of numbers written with separators (judged on the first rows, as ``read_head`` does)
    are read as text and turned into numbers batch by batch.
    """
    styles = {name: style for name, style in separator_styles(_raw_head(path, suffix), path.name).items() if name in columns}
    types = {**types, **{name: _text_type() for name in styles}}
    first_row = 0
    try:
        for batch in _arrow_batches(path, suffix, columns, types, batch_rows):
            frame = with_numbers_read(batch.to_pandas(), styles, notes=False)
            yield first_row, frame
            first_row += len(frame)
            del frame, batch
            _release_arrow()  # the pages of batches before this one (the caller may still hold this one)
    except LedgerError:
        raise
    except Exception as error:  # a reader failure part-way is the file's fault here
        raise LedgerError(
            f"{path.name}, after row {first_row + 1}: cannot read the next rows ({type(error).__name__}: {error}). "
            "A column may hold text where the first rows hold numbers; fix the file or set the column's kind."
        ) from None
    finally:
        release_freed_memory()


def release_freed_memory() -> None:
    """Give the memory a pass over the rows freed back to the system.

    Arrow's allocator keeps the pages of freed batches for its next ones, and the C heap keeps freed
    blocks that lie below live ones (the parts of a streamed ledger's row-level arrays, say): memory
    the process holds but no longer uses, which otherwise adds up from pass to pass.
    """
    _release_arrow()
    if _C_LIBRARY is not None:
        _C_LIBRARY.malloc_trim(0)


def _release_arrow() -> None:
    import pyarrow

    pyarrow.default_memory_pool().release_unused()


def _c_library():
    """The C library when it can trim its heap (glibc), else None."""
    found = ctypes.util.find_library("c")
    try:
        library = ctypes.CDLL(found) if found else None
    except OSError:
        return None
    return library if library is not None and hasattr(library, "malloc_trim") else None


_C_LIBRARY = _c_library()


# The two ways a ledger writes numbers with separators (common practice, no source): the name said
# to the user, the mark between thousands, the mark before decimals
SEPARATOR_STYLES = (("',' between thousands and '.' before decimals", ",", "."),
                    ("'.' between thousands and ',' before decimals", ".", ","))
SEPARATED_SHARE = 0.95  # of a text column's values written so, for the column to be read as numbers
STYLE_SAMPLE = 20_000  # values a column's style is judged on


def separator_styles(frame: pd.DataFrame, source: str) -> dict[str, tuple[str, str, str]]:
    """Return the text columns that hold numbers written with separators ('31,082.90', '31.082,90'), with the style.

    A column qualifies when nearly all its values (``SEPARATED_SHARE``) are numbers in one style and
    some of them carry a separator; the rest are left as they are (text in a column of numbers is
    then refused by name, as anywhere). Never a silent guess: a column whose values fit both styles
    with different values ('1,234') is refused.

    Raises
    ------
    LedgerError
        The style of a column cannot be told.
    """
    found = {}
    for name in frame.columns:
        column = frame[name]
        if pd.api.types.is_numeric_dtype(column) or pd.api.types.is_bool_dtype(column) or \
                pd.api.types.is_datetime64_any_dtype(column):
            continue
        values = column.dropna().head(STYLE_SAMPLE).astype(str).str.strip()
        if values.empty or not values.str.contains(r"\d[.,]\d", regex=True).any():
            continue
        fitting = [style for style in SEPARATOR_STYLES
                   if values.str.fullmatch(_separated(style)).mean() >= SEPARATED_SHARE and
                   values.str.contains(re.escape(style[1]) + "|" + re.escape(style[2]), regex=True).any()]
        if len(fitting) == 2:
            differ = values[_as_numbers(values, fitting[0]) != _as_numbers(values, fitting[1])]
            if not differ.empty:
                raise LedgerError(
                    f"{source}, column {str(name)!r}: numbers such as {differ.iloc[0]!r} read one way with "
                    f"{fitting[0][0]} and another with {fitting[1][0]}. Write the numbers without a mark between "
                    "thousands, with '.' before decimals."
                )
        if fitting:
            found[str(name)] = fitting[0]
    return found


def with_numbers_read(frame: pd.DataFrame, styles: dict[str, tuple[str, str, str]], *, notes: bool = True) -> pd.DataFrame:
    """Return ``frame`` with the columns of ``styles`` read as numbers; a value that is no number stays as it is.

    With ``notes``, the frame's ``attrs['notes']`` say which columns were read so and how.
    """
    if not styles:
        return frame
    changed = {}
    for name, style in styles.items():
        column = frame[name]
        numbers = _as_numbers(column.astype(str).str.strip(), style)
        text = numbers.isna() & column.notna()
        changed[name] = column.astype(object).where(text, numbers) if text.any() else numbers.astype(float)
    read = frame.assign(**changed)
    read.attrs = {**frame.attrs}
    if notes:
        read.attrs["notes"] = [*frame.attrs.get("notes", ()), *(
            f"column {name!r}: numbers written with {style[0]} (as {_example(frame[name])!r}) were read as numbers."
            for name, style in styles.items())]
    return read


def _separated(style: tuple[str, str, str]) -> str:
    _, thousands, decimal = style
    return rf"[+-]?(\d{{1,3}}({re.escape(thousands)}\d{{3}})+|\d+)({re.escape(decimal)}\d+)?"


def _as_numbers(values: pd.Series, style: tuple[str, str, str]) -> pd.Series:
    _, thousands, decimal = style
    fitting = values.str.fullmatch(_separated(style)).fillna(False).astype(bool)
    plain = values.str.replace(thousands, "", regex=False).str.replace(decimal, ".", regex=False)
    return pd.to_numeric(plain.where(fitting), errors="coerce")


def _example(column: pd.Series) -> str:
    values = column.dropna().astype(str)
    separated = values[values.str.contains(r"\d[.,]\d", regex=True)]
    return str(separated.iloc[0] if not separated.empty else values.iloc[0])


def _text_type():
    import pyarrow as pa

    return pa.string()


def _block_bytes(path: Path, batch_rows: int) -> int:
    """Bytes of CSV that hold about ``batch_rows`` rows, judged from the first megabyte."""
    with path.open("rb") as stream:
        start = stream.read(1 << 20)
    per_row = len(start) / max(start.count(b"\n"), 1)
    return int(min(max(batch_rows * per_row, 1 << 16), 1 << 30))


def _arrow_batches(path: Path, suffix: str, columns: list[str], types: dict[str, object], batch_rows: int):
    if suffix in (".parquet", ".pq"):
        import pyarrow.parquet as pq

        # without pre-buffering: pyarrow's read cache would keep every column chunk it read until the pass ends,
        # so a pass over a 10M-row file held about 450 MB more than one over 1M rows (memory grew with rows)
        yield from pq.ParquetFile(path, pre_buffer=False).iter_batches(batch_size=batch_rows, columns=columns)
        return
    import pyarrow.csv as pacsv

    reader = pacsv.open_csv(
        path, parse_options=pacsv.ParseOptions(delimiter=csv_delimiter(path)), read_options=pacsv.ReadOptions(block_size=_block_bytes(path, batch_rows), encoding="utf8"),
        convert_options=pacsv.ConvertOptions(
            include_columns=columns, column_types={c: types[c] for c in columns},
            null_values=sorted(EMPTY_WORDS), strings_can_be_null=True, quoted_strings_can_be_null=True,
            true_values=list(TRUE_WORDS), false_values=list(FALSE_WORDS),
        ),
    )
    yield from reader
