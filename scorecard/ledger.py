"""Intake: read a ledger, check it, map the outcome, weigh the rows and split the samples.

This is one of the three places that see rows (with coding and scoring). Everything here is
checked once, where the data enters, with messages that name the file, the column and the rows
as the user sees them: row numbers count the header as row 1, as a spreadsheet shows them.
"""

from __future__ import annotations

import csv
import datetime
import difflib
import hashlib
import os
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from .errors import LedgerError, ScorecardWarning, describe_rows
from .settings import Settings

GOOD, BAD, INDETERMINATE, UNKNOWN = 0, 1, 2, 3
OUTCOME_NAMES = ("good", "bad", "indeterminate", "unknown")
DEVELOPMENT, HOLDOUT, OUT_OF_TIME = 0, 1, 2
SAMPLE_NAMES = ("development", "hold-out", "out-of-time")
NUMERIC, CATEGORICAL = "numeric", "categorical"

# a column with a distinct value on at least this share of its rows looks like an identifier
# (common practice, no source)
IDENTIFIER_SHARE = 0.95
IDENTIFIER_MIN_ROWS = 20
SUFFIXES = (".csv", ".txt", ".parquet", ".pq", ".xlsx", ".xlsm")


@dataclass(frozen=True)
class Characteristic:
    """A column used as a characteristic: its name, kind and declared special values."""

    name: str
    kind: str
    special_values: tuple[float, ...] = ()


@dataclass(frozen=True)
class Fingerprint:
    """What identifies a ledger: its row count and a SHA-256 of its content."""

    n_rows: int
    sha256: str
    of: str  # "file bytes" or "frame values"

    def to_dict(self) -> dict[str, object]:
        """Return the fingerprint as plain values (for the model file)."""
        return {"rows": self.n_rows, "sha256": self.sha256, "of": self.of}


@dataclass(frozen=True)
class Ledger:
    """A checked ledger: characteristic columns, outcome, weights and samples, aligned by row.

    Attributes
    ----------
    source : str
        The file name, or "DataFrame".
    frame : pandas.DataFrame
        The characteristic columns only (ids, dates, outcome and weights are held apart).
    characteristics : tuple of Characteristic
        The characteristics, in ledger order.
    outcome : numpy.ndarray
        int8 per row: 0 good, 1 bad, 2 indeterminate, 3 unknown (no outcome recorded).
    weight : numpy.ndarray
        float64 case weight per row.
    sample : numpy.ndarray
        int8 per row: 0 development, 1 hold-out, 2 out-of-time.
    dates : numpy.ndarray or None
        datetime64[D] per row when the ledger has a date column.
    ids : numpy.ndarray or None
        The id column's values, for output files only.
    notes : tuple of str
        What intake left out or repaired, and why (the reports list them).
    fingerprint : Fingerprint
    """

    source: str
    frame: pd.DataFrame
    characteristics: tuple[Characteristic, ...]
    outcome: np.ndarray
    weight: np.ndarray
    sample: np.ndarray
    dates: np.ndarray | None
    ids: np.ndarray | None
    notes: tuple[str, ...]
    fingerprint: Fingerprint
    left_out: Mapping[str, str] = field(default_factory=dict)

    @property
    def n_rows(self) -> int:
        """Number of rows."""
        return len(self.outcome)

    def characteristic(self, name: str) -> Characteristic:
        """Return the characteristic called ``name``."""
        return next(c for c in self.characteristics if c.name == name)

    def sample_summary(self) -> pd.DataFrame:
        """Return rows, goods, bads, indeterminates and unknowns (weighted) per sample."""
        table = np.zeros((len(SAMPLE_NAMES), len(OUTCOME_NAMES)))
        np.add.at(table, (self.sample, self.outcome), self.weight)
        frame = pd.DataFrame(table, index=list(SAMPLE_NAMES), columns=list(OUTCOME_NAMES))
        frame.insert(0, "rows", np.bincount(self.sample, minlength=len(SAMPLE_NAMES)))
        frame["bad rate"] = frame["bad"] / (frame["good"] + frame["bad"]).where(lambda s: s > 0)
        return frame


# --------------------------------------------------------------------------------------------
# Reading


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
        _check_column_names([str(c) for c in source.columns], "DataFrame")
        if len(source) == 0:
            raise LedgerError("DataFrame: the ledger has no rows. Pass a ledger with at least one application.")
        return source
    path, suffix = _checked_file(source)
    frame = _read_frame(path, suffix, columns)
    if len(frame) == 0:
        raise LedgerError(f"{path.name}: the file has a header but no data rows. Export the ledger again with its data.")
    return frame


def _checked_file(source: str | os.PathLike[str]) -> tuple[Path, str]:
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
    _check_column_names(_read_header(path, suffix), name)
    return path, suffix


def csv_delimiter(path: Path) -> str:
    """The CSV file's delimiter: a comma, or the ';', tab or '|' its header uses instead (as some exports do)."""
    with path.open(encoding="utf-8-sig", errors="replace") as stream:
        header = stream.readline()
    if "," in header:
        return ","
    return next((candidate for candidate in (";", "\t", "|") if candidate in header), ",")


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
    try:
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
        raise LedgerError(f"{path.name}: cannot read the file ({type(error).__name__}: {error}). Check it opens and is not damaged.") from None


def _check_column_names(names: list[str], source: str) -> None:
    if not names or all(not n.strip() for n in names):
        raise LedgerError(f"{source}: no header row with column names. The first row must name the columns.")
    seen: dict[str, int] = {}
    for position, column in enumerate(names, start=1):
        if column in seen:
            raise LedgerError(
                f"{source}: column name {column!r} appears twice (columns {seen[column]} and {position}). Rename one so every column name is unique."
            )
        seen[column] = position


def fingerprint_of(source: str | os.PathLike[str] | pd.DataFrame, n_rows: int) -> Fingerprint:
    """Return a ledger's fingerprint: row count and SHA-256 of the file's bytes or the frame's values."""
    digest = hashlib.sha256()
    if isinstance(source, pd.DataFrame):
        digest.update(pd.util.hash_pandas_object(source, index=False).to_numpy().tobytes())
        digest.update("\x1f".join(map(str, source.columns)).encode())
        return Fingerprint(n_rows, digest.hexdigest(), "frame values")
    with open(source, "rb") as stream:
        for block in iter(lambda: stream.read(1 << 22), b""):
            digest.update(block)
    return Fingerprint(n_rows, digest.hexdigest(), "file bytes")


# --------------------------------------------------------------------------------------------
# Checking and preparing


def prepare_ledger(frame: pd.DataFrame, settings: Settings, *, source: str = "DataFrame",
                   fingerprint: Fingerprint | None = None, require_outcome: bool = True) -> Ledger:
    """Check a ledger against the settings and return it ready for classing.

    Parameters
    ----------
    frame : pandas.DataFrame
        The ledger as read; it is not modified.
    settings : Settings
        Outcome mapping, special columns, kinds, special values and samples.
    source : str
        The ledger's name for messages (file name or "DataFrame").
    fingerprint : Fingerprint, optional
        Computed from the frame when not given.
    require_outcome : bool
        False when scoring or monitoring: the outcome column may then be absent or partly empty.

    Returns
    -------
    Ledger

    Raises
    ------
    LedgerError
        The outcome column is missing or holds unmapped values, only one class is present,
        weights are negative, missing or not finite, a characteristic holds infinite values, or
        the special columns are wrong.
    """
    roles = _role_columns(frame, settings, source, require_outcome)
    characteristics, left_out = _choose_characteristics(frame, settings, roles, source)
    check_finite(frame, characteristics, source)
    outcome, weight, dates = role_values(frame, settings, source)
    repairs = check_roles(outcome, weight, settings, source, require_outcome=require_outcome)
    sample = split_samples(outcome, dates, settings, source=source)
    ids = frame[settings.ledger.id_column].to_numpy() if settings.ledger.id_column else None
    kept = frame[[c.name for c in characteristics]]
    if fingerprint is None:
        fingerprint = fingerprint_of(frame, len(frame))
    notes = [*repairs, *(f"{name!r} left out: {why}." for name, why in left_out.items())]
    for note in repairs:
        warnings.warn(note, ScorecardWarning, stacklevel=2)
    return Ledger(
        source=source, frame=kept, characteristics=tuple(characteristics), outcome=outcome, weight=weight,
        sample=sample, dates=dates, ids=ids, notes=tuple(notes), fingerprint=fingerprint, left_out=left_out,
    )


def role_values(frame: pd.DataFrame, settings: Settings, source: str, *, first_row: int = 0):
    """Return the outcome code, weight and date (or None) of every row, checking each value."""
    outcome = map_outcome(frame, settings, source, first_row=first_row)
    weight = _weights(frame, settings.ledger.weight_column, source, first_row=first_row)
    column = settings.ledger.date_column
    dates = _dates(frame, column, source, first_row=first_row) if column and column in frame.columns else None
    return outcome, weight, dates


def check_roles(outcome: np.ndarray, weight: np.ndarray, settings: Settings, source: str, *,
                require_outcome: bool) -> list[str]:
    """Check the whole ledger's outcomes and weights; return the notes of what was repaired."""
    column = settings.outcome.column
    if settings.ledger.weight_column and len(weight) and weight.sum() <= 0:
        raise LedgerError(f"{source}, column {settings.ledger.weight_column!r}: every weight is 0. Give the rows positive weights.")
    if not require_outcome:
        return []
    _check_both_classes(outcome, source, column)
    note = unknown_outcome_note(outcome, source, column)
    return [note] if note else []


def _role_columns(frame: pd.DataFrame, settings: Settings, source: str, require_outcome: bool) -> set[str]:
    """Check the columns named in settings exist; return the names that are not characteristics."""
    columns = [str(c) for c in frame.columns]
    ledger = settings.ledger
    target = settings.outcome.column
    if not target and require_outcome:
        raise LedgerError(f"{source}: no outcome column named. Give it with --target COLUMN or as column under [outcome] in the settings file.")
    named = {"outcome column": target if require_outcome else "", "id column": ledger.id_column,
             "date column": ledger.date_column, "weight column": ledger.weight_column}
    for role, column in named.items():
        if column and column not in columns:
            raise LedgerError(f"{source}: {role} {column!r} not found.{closest_names(column, columns)}")
    for column in ledger.leave_out:
        if column not in columns:
            raise LedgerError(f"{source}: column {column!r} listed under ledger.leave_out not found.{closest_names(column, columns)}")
    for name in settings.characteristics:
        # a misspelt name would otherwise be ignored in silence, and its decision with it
        if name not in columns:
            raise LedgerError(
                f"{source}: [characteristics.{name}] in the settings names no column of the ledger.{closest_names(name, columns)} "
                "Correct the name in the settings file (or remove the section)."
            )
    return {c for c in (target, ledger.id_column, ledger.date_column, ledger.weight_column, *ledger.leave_out) if c}


def closest_names(name: str, columns: Sequence[str]) -> str:
    """Return ' Did you mean ...?' with the closest column names, or the list of columns."""
    close = difflib.get_close_matches(name, columns, n=3, cutoff=0.5)
    if not close:
        lowered = {c.lower(): c for c in columns}
        close = [lowered[name.lower()]] if name.lower() in lowered else []
    if close:
        return " Did you mean " + " or ".join(repr(c) for c in close) + "?"
    shown = ", ".join(repr(c) for c in columns[:12]) + (", ..." if len(columns) > 12 else "")
    return f" The ledger's columns are: {shown}."


def value_text(value: object) -> str:
    """Return the text a value is known by: '1' for 1 and 1.0 (a column read as numbers or as text
    gives the same levels), 'true' for True, else ``str(value)``."""
    if isinstance(value, (bool, np.bool_)):
        return str(bool(value)).lower()
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)) and float(value).is_integer():
        return str(int(value))
    return str(value)


def outcome_key(value: object) -> str:
    """Return the text an outcome value is matched by: '1' for 1 and 1.0, 'bad' for ' bad '."""
    return value_text(value).strip()


def default_outcome_mapping(values: Sequence[str]) -> tuple[tuple[str, ...], tuple[str, ...]] | None:
    """Return (bad, good) for a 0/1 outcome (1 = bad), else None."""
    if set(values) <= {"0", "1"} and len(set(values)) == 2:
        return ("1",), ("0",)
    if set(values) <= {"true", "false"} and len(set(values)) == 2:
        return ("true",), ("false",)
    return None


def map_outcome(frame: pd.DataFrame, settings: Settings, source: str, *, first_row: int = 0) -> np.ndarray:
    """Return the outcome code of every row (unknown where the column is absent or empty).

    Raises
    ------
    LedgerError
        A value is not in the outcome mapping; the message names the values, their counts and
        the first rows (``first_row`` is the position of the frame's first row in the ledger).
    """
    column = settings.outcome.column
    if not column or column not in frame.columns:
        return np.full(len(frame), UNKNOWN, dtype=np.int8)
    codes, uniques = pd.factorize(frame[column], use_na_sentinel=True)
    keys = [outcome_key(u) for u in uniques]
    mapping = _outcome_mapping(settings, keys)
    unmapped = [(k, int(np.count_nonzero(codes == i))) for i, k in enumerate(keys) if k not in mapping]
    if unmapped:
        shown = ", ".join(f"{k!r} ({_n_rows(n)})" for k, n in unmapped[:8]) + (f" and {len(unmapped) - 8} more" if len(unmapped) > 8 else "")
        first_rows = np.flatnonzero(np.isin(codes, [keys.index(k) for k, _ in unmapped])) + 2 + first_row
        raise LedgerError(
            f"{source}, column {column!r}, {describe_rows(first_rows.tolist())}: "
            f"value{'s' if len(unmapped) > 1 else ''} {shown} {'are' if len(unmapped) > 1 else 'is'} not a mapped outcome. "
            "Add each under [outcome] in the settings file as good, bad or indeterminate (or use --bad/--good)."
        )
    lookup = np.array([mapping[k] for k in keys] + [UNKNOWN], dtype=np.int8)
    return lookup[codes]  # the sentinel -1 picks the last entry: unknown


def unknown_outcome_note(outcome: np.ndarray, source: str, column: str) -> str:
    """Say how many rows have no outcome (and which), or return ''."""
    unknown = np.flatnonzero(outcome == UNKNOWN)
    if not len(unknown):
        return ""
    n_unknown = len(unknown)
    return (
        f"{source}, column {column!r}, {describe_rows((unknown + 2).tolist())}: {_n_rows(n_unknown)} "
        f"{'has' if n_unknown == 1 else 'have'} no outcome; they are left out of fitting and the checks that need "
        "outcomes, and kept for stability checks."
    )


def _outcome_mapping(settings: Settings, keys: Sequence[str]) -> dict[str, int]:
    outcome = settings.outcome
    bad, good = outcome.bad, outcome.good
    if not bad and not good:
        default = default_outcome_mapping(list(keys))
        if default is not None:
            bad, good = default
    mapping = {value: BAD for value in bad}
    mapping.update({value: GOOD for value in good})
    mapping.update({value: INDETERMINATE for value in outcome.indeterminate})
    return mapping


def _check_both_classes(outcome: np.ndarray, source: str, column: str) -> None:
    counts = np.bincount(outcome, minlength=4)
    if counts[GOOD] == 0 or counts[BAD] == 0:
        present = "good" if counts[GOOD] else "bad"
        missing = "bad" if counts[GOOD] else "good"
        raise LedgerError(
            f"{source}, column {column!r}: every mapped outcome is {present}; there are no {missing}s. "
            f"A scorecard needs both. Check the outcome mapping under [outcome] (which values mean {missing}?)."
        )


def unit_weights(n_rows: int) -> np.ndarray:
    """Weight 1 for every row, as a read-only view of one number (no memory per row)."""
    return np.broadcast_to(np.float64(1.0), (n_rows,))


def _weights(frame: pd.DataFrame, column: str, source: str, *, first_row: int = 0) -> np.ndarray:
    if not column:
        return unit_weights(len(frame))
    values = pd.to_numeric(frame[column], errors="coerce").to_numpy(dtype=float)
    problems = [
        ("missing or not a number", np.isnan(values)),
        ("not finite", np.isinf(values)),
        ("negative", values < 0),
    ]
    for what, bad in problems:
        if bad.any():
            rows = describe_rows((np.flatnonzero(bad) + 2 + first_row).tolist())
            shown = _plain(frame[column].iloc[int(np.flatnonzero(bad)[0])])
            raise LedgerError(
                f"{source}, column {column!r}, {rows}: weight {shown!r} is {what} ({_n_rows(int(bad.sum()))}). "
                "Every weight must be a finite number of 0 or more; fix those rows or remove weight_column from the settings."
            )
    return values


def _dates(frame: pd.DataFrame, column: str, source: str, *, first_row: int = 0) -> np.ndarray:
    raw = frame[column]
    parsed = pd.to_datetime(raw, errors="coerce", format="ISO8601") if not pd.api.types.is_datetime64_any_dtype(raw) else raw
    bad = parsed.isna().to_numpy() & raw.notna().to_numpy()
    if bad.any():
        rows = describe_rows((np.flatnonzero(bad) + 2 + first_row).tolist())
        raise LedgerError(
            f"{source}, column {column!r}, {rows}: {_plain(raw.iloc[int(np.flatnonzero(bad)[0])])!r} is not a date "
            f"({_n_rows(int(bad.sum()))}). Write dates as YYYY-MM-DD."
        )
    return parsed.to_numpy().astype("datetime64[D]")


def _choose_characteristics(frame: pd.DataFrame, settings: Settings, roles: set[str],
                            source: str) -> tuple[list[Characteristic], dict[str, str]]:
    """Detect each remaining column's kind; leave out identifiers, dates, constants, and 'never'."""
    chosen, left_out = [], {}
    for column in frame.columns:
        name = str(column)
        if name in roles:
            continue
        spec = settings.characteristic(name)
        series = frame[column]
        if spec.use == "never":
            left_out[name] = "use = never in the settings" + (f" ({spec.note})" if spec.note else "")
            continue
        reason = unusable_reason(series)
        if reason:
            left_out[name] = reason
            continue
        kind = spec.kind or detect_kind(series)
        if not spec.kind and kind == CATEGORICAL:
            _refuse_numbers_with_stray_text(series, name, source)
        if spec.use == "" and (why := looks_like_identifier_or_date(series, kind)):
            left_out[name] = f"{why}; set use = \"auto\" under [characteristics.{name}] to keep it"
            continue
        if kind == NUMERIC and not _numeric_or_empty(series):
            raise LedgerError(
                f"{source}, column {name!r}: kind is numeric in the settings but the column holds text "
                f"(e.g. {_plain(series.dropna().iloc[0])!r}). Set kind = \"categorical\" or clean the column."
            )
        chosen.append(Characteristic(name, kind, tuple(spec.special_values) if kind == NUMERIC else ()))
    return chosen, left_out


NUMBERS_SHARE = 0.95  # a text column whose values are nearly all numbers is numbers with stray text


def _refuse_numbers_with_stray_text(series: pd.Series, name: str, source: str) -> None:
    """Raise LedgerError when a text column holds numbers but for a few values (typed in by hand, say).

    Read as text, such a column would become a category with a level per number: a silent, wrong
    classing. The first rows holding text are named.
    """
    present = series.dropna()
    if present.empty or pd.api.types.is_bool_dtype(series):
        return
    sample = present.iloc[:10_000]
    if pd.to_numeric(sample, errors="coerce").notna().mean() < NUMBERS_SHARE:
        return
    numbers = pd.to_numeric(series, errors="coerce")
    stray = (numbers.isna() & series.notna()).to_numpy()
    if stray.mean() > 1 - NUMBERS_SHARE or not stray.any():
        return
    rows = np.flatnonzero(stray)
    shown = ", ".join(repr(_plain(v)) for v in pd.unique(series.iloc[rows[:50]])[:3])
    raise LedgerError(
        f"{source}, column {name!r}, {describe_rows((rows + 2).tolist())}: the column holds numbers, but these rows "
        f"hold text ({shown}). Correct them (leave a cell empty for missing), "
        f"or set kind = \"categorical\" under [characteristics.{name}] if the column is a category."
    )


def detect_kind(series: pd.Series) -> str:
    """Return 'numeric' for number columns (not booleans), else 'categorical'."""
    if pd.api.types.is_bool_dtype(series) or not pd.api.types.is_numeric_dtype(series):
        return CATEGORICAL
    return NUMERIC


def unusable_reason(series: pd.Series) -> str:
    """Say why a column cannot be a characteristic (all missing, constant), or return ''."""
    missing = series.isna().to_numpy()
    if missing.all():
        return "every value is missing"
    if detect_kind(series) == NUMERIC:  # two comparisons, not a hash of every value
        values = series.to_numpy(dtype=float, na_value=np.nan)
        constant = np.nanmin(values) == np.nanmax(values)
        first = series.iloc[int(np.flatnonzero(~missing)[0])]
    else:
        present = series[~missing]
        first = present.iloc[0]
        constant = not bool((present != first).any())
    if not constant:
        return ""
    if missing.any():
        return f"every value present is the same ({_plain(first)!r}); only missingness varies"
    return f"every row has the same value ({_plain(first)!r})"


def looks_like_identifier_or_date(series: pd.Series, kind: str) -> str:
    """Say why a column looks like an identifier or a date, or return ''."""
    if pd.api.types.is_datetime64_any_dtype(series):
        return "it holds dates"
    present = series.dropna()
    if present.empty:
        return ""
    if kind == CATEGORICAL and _looks_like_dates(present):
        return "it holds dates"
    n_distinct = present.nunique()
    if len(present) >= IDENTIFIER_MIN_ROWS and n_distinct >= IDENTIFIER_SHARE * len(present):
        integer_valued = kind == NUMERIC and bool(np.all(np.mod(present.to_numpy(dtype=float), 1) == 0))
        if kind == CATEGORICAL or integer_valued:
            return f"it looks like an identifier ({n_distinct} distinct values in {len(present)} rows)"
    return ""


def _looks_like_dates(present: pd.Series) -> bool:
    head = present.astype(str).head(200)
    if not head.str.contains(r"^\d{4}-\d{2}-\d{2}|^\d{1,2}/\d{1,2}/\d{2,4}", regex=True).all():
        return False
    return bool(pd.to_datetime(head, errors="coerce", format="mixed").notna().all())


def _plain(value: object) -> object:
    """A numpy scalar as the plain Python value, so messages show 7 rather than np.int64(7)."""
    return value.item() if isinstance(value, np.generic) else value


def _n_rows(count: int) -> str:
    return "1 row" if count == 1 else f"{count} rows"


def _numeric_or_empty(series: pd.Series) -> bool:
    return pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series)


def check_finite(frame: pd.DataFrame, characteristics: Sequence[Characteristic], source: str, *, first_row: int = 0) -> None:
    """Raise LedgerError naming a numeric characteristic with infinite values, its count and first rows."""
    for char in characteristics:
        if char.kind != NUMERIC:
            continue
        values = frame[char.name].to_numpy(dtype=float, na_value=np.nan)
        infinite = np.isinf(values)
        if infinite.any():
            rows = describe_rows((np.flatnonzero(infinite) + 2 + first_row).tolist())
            raise LedgerError(
                f"{source}, column {char.name!r}, {rows}: {int(infinite.sum())} infinite values. "
                "Replace them with a number, leave them empty (missing), or declare a special value."
            )


# --------------------------------------------------------------------------------------------
# Ledgers read in batches (larger than memory)

HEAD_ROWS = 20_000  # kinds and left-out columns are judged on the first rows of a streamed ledger
STREAM_BATCH_ROWS = 500_000
STREAMABLE = (".csv", ".txt", ".parquet", ".pq")


def should_stream(path: str | os.PathLike[str], settings: Settings) -> bool:
    """Whether a ledger file is large enough (``ledger.stream_above_mb``) to be read in batches."""
    path = Path(path)
    return path.suffix.lower() in STREAMABLE and path.exists() and path.stat().st_size > settings.ledger.stream_above_mb * 2**20


def stream_ledger(source: str | os.PathLike[str], settings: Settings, *, batch_rows: int = STREAM_BATCH_ROWS,
                  require_outcome: bool = True):
    """Check a ledger read in batches; return the ledger's row-level roles and a way to read its batches.

    Parameters
    ----------
    source : path-like
        A CSV or Parquet file.
    settings : Settings
    batch_rows : int
        Rows per batch (Parquet; CSV batches are about that size).
    require_outcome : bool
        As for ``prepare_ledger``.

    Returns
    -------
    (Ledger, callable)
        The ledger holds outcome, weight, sample and date per row but no characteristic values
        (its frame has no rows); ``batches(columns)`` returns a fresh iterator of ``(first row,
        frame)`` over the file, each batch checked as it is read.

    Notes
    -----
    Pass 1 reads the outcome, weight and date columns only; the characteristics' kinds and
    left-out columns are judged on the first ``HEAD_ROWS`` rows (set them in the settings file to
    decide yourself). The samples are split exactly as for a ledger held in memory.
    """
    path, suffix = _checked_file(source)
    if suffix not in STREAMABLE:
        raise LedgerError(f"{path.name}: only CSV and Parquet ledgers can be read in batches. Convert it, or read it whole.")
    source_name = path.name
    head = _read_head(path, suffix)
    if len(head) == 0:
        raise LedgerError(f"{source_name}: the file has a header but no data rows. Export the ledger again with its data.")
    roles = _role_columns(head, settings, source_name, require_outcome)
    characteristics, left_out = _choose_characteristics(head, settings, roles, source_name)
    types = _arrow_types(head)
    role_columns = [c for c in (settings.outcome.column, settings.ledger.weight_column, settings.ledger.date_column)
                    if c and c in head.columns]

    def batches(columns: Sequence[str]):
        read = [c for c in characteristics if c.name in columns]
        for first_row, frame in _file_batches(path, suffix, list(columns), types, batch_rows):
            check_finite(frame, read, source_name, first_row=first_row)
            yield first_row, frame

    parts = [role_values(frame, settings, source_name, first_row=first_row)
             for first_row, frame in _file_batches(path, suffix, role_columns or list(head.columns[:1]), types, batch_rows)]
    outcome = np.concatenate([p[0] for p in parts])
    weight = np.concatenate([p[1] for p in parts]) if settings.ledger.weight_column else unit_weights(len(outcome))
    dates = np.concatenate([p[2] for p in parts]) if settings.ledger.date_column else None
    repairs = check_roles(outcome, weight, settings, source_name, require_outcome=require_outcome)
    sample = split_samples(outcome, dates, settings, source=source_name)
    notes = [*repairs, *(f"{name!r} left out: {why}." for name, why in left_out.items())]
    for note in repairs:
        warnings.warn(note, ScorecardWarning, stacklevel=2)
    ledger = Ledger(
        source=source_name, frame=head.iloc[:0][[c.name for c in characteristics]], characteristics=tuple(characteristics),
        outcome=outcome, weight=weight, sample=sample, dates=dates, ids=None, notes=tuple(notes),
        fingerprint=fingerprint_of(path, len(outcome)), left_out=left_out,
    )
    return ledger, batches


def ledger_columns(source: str | os.PathLike[str]) -> list[str]:
    """Return a ledger file's column names, checking the file as ``read_ledger`` does."""
    path, suffix = _checked_file(source)
    return _read_header(path, suffix)


def read_batches(source: str | os.PathLike[str], columns: Sequence[str], *, batch_rows: int = STREAM_BATCH_ROWS):
    """Yield (first row, frame) over a CSV or Parquet ledger, reading only ``columns``, checked as a whole read is.

    Raises
    ------
    LedgerError
        The file cannot be read, or a named column is not in it.
    """
    path, suffix = _checked_file(source)
    if suffix not in STREAMABLE:
        raise LedgerError(f"{path.name}: only CSV and Parquet ledgers can be read in batches. Convert it, or read it whole.")
    head = _read_head(path, suffix)
    absent = [c for c in columns if c not in head.columns]
    if absent:
        raise LedgerError(f"{path.name}: column {absent[0]!r} not found.{closest_names(absent[0], [str(c) for c in head.columns])}")
    yield from _file_batches(path, suffix, list(columns), _arrow_types(head), batch_rows)


def _read_head(path: Path, suffix: str) -> pd.DataFrame:
    if suffix in (".parquet", ".pq"):
        import pyarrow.parquet as pq

        batch = next(pq.ParquetFile(path).iter_batches(batch_size=HEAD_ROWS), None)
        return batch.to_pandas() if batch is not None else pd.read_parquet(path)
    return pd.read_csv(path, nrows=HEAD_ROWS, encoding="utf-8-sig", low_memory=False, sep=csv_delimiter(path))


def _arrow_types(head: pd.DataFrame) -> dict[str, object]:
    """Column types for reading batches: numbers as float64, everything else as text."""
    import pyarrow as pa

    return {str(c): pa.float64() if detect_kind(head[c]) == NUMERIC else pa.string() for c in head.columns}


def _file_batches(path: Path, suffix: str, columns: list[str], types: dict[str, object], batch_rows: int):
    """Yield (first row, frame) over a CSV or Parquet file, reading only ``columns``."""
    first_row = 0
    try:
        for batch in _arrow_batches(path, suffix, columns, types, batch_rows):
            frame = batch.to_pandas()
            yield first_row, frame
            first_row += len(frame)
    except LedgerError:
        raise
    except Exception as error:  # a reader failure part-way is the file's fault here
        raise LedgerError(
            f"{path.name}, after row {first_row + 1}: cannot read the next rows ({type(error).__name__}: {error}). "
            "A column may hold text where the first rows hold numbers; fix the file or set the column's kind."
        ) from None


def _block_bytes(path: Path, batch_rows: int) -> int:
    """Bytes of CSV that hold about ``batch_rows`` rows, judged from the first megabyte."""
    with path.open("rb") as stream:
        start = stream.read(1 << 20)
    per_row = len(start) / max(start.count(b"\n"), 1)
    return int(min(max(batch_rows * per_row, 1 << 16), 1 << 30))


def _arrow_batches(path: Path, suffix: str, columns: list[str], types: dict[str, object], batch_rows: int):
    if suffix in (".parquet", ".pq"):
        import pyarrow.parquet as pq

        yield from pq.ParquetFile(path).iter_batches(batch_size=batch_rows, columns=columns)
        return
    import pyarrow.csv as pacsv

    from pandas._libs.parsers import STR_NA_VALUES  # the same empty-value words as a whole read

    reader = pacsv.open_csv(
        path, parse_options=pacsv.ParseOptions(delimiter=csv_delimiter(path)), read_options=pacsv.ReadOptions(block_size=_block_bytes(path, batch_rows), encoding="utf8"),
        convert_options=pacsv.ConvertOptions(
            include_columns=columns, column_types={c: types[c] for c in columns},
            null_values=sorted(STR_NA_VALUES), strings_can_be_null=True, quoted_strings_can_be_null=True,
        ),
    )
    yield from reader


# --------------------------------------------------------------------------------------------
# Samples


def split_samples(outcome: np.ndarray, dates: np.ndarray | None, settings: Settings, *, source: str = "ledger") -> np.ndarray:
    """Assign each row to the development, hold-out or out-of-time sample.

    Rows dated on or after ``samples.out_of_time_from`` form the out-of-time sample. Of the rest,
    a seeded random ``holdout_fraction`` of each outcome class (good, bad, indeterminate, unknown)
    forms the hold-out sample, so that both samples have the same bad rate to within one row.

    Returns
    -------
    numpy.ndarray
        int8 per row: 0 development, 1 hold-out, 2 out-of-time.

    Raises
    ------
    LedgerError
        An out-of-time date is set but the ledger has no date column, or rows have no date.
    """
    samples = settings.samples
    sample = np.zeros(len(outcome), dtype=np.int8)
    if samples.out_of_time_from:
        if dates is None:
            raise LedgerError(
                f"{source}: samples.out_of_time_from is set but the ledger has no date column. "
                "Name it as date_column under [ledger], or clear out_of_time_from."
            )
        undated = np.isnat(dates)
        if undated.any():
            rows = describe_rows((np.flatnonzero(undated)+ 2).tolist())
            raise LedgerError(
                f"{source}, column {settings.ledger.date_column!r}, {rows}: no date, so the row cannot be placed "
                "in or out of time. Fill the dates or remove the rows."
            )
        start = np.datetime64(datetime.date.fromisoformat(samples.out_of_time_from), "D")
        sample[dates >= start] = OUT_OF_TIME
    rng = np.random.default_rng(samples.seed)
    in_time = sample != OUT_OF_TIME
    for outcome_class in range(len(OUTCOME_NAMES)):
        rows = np.flatnonzero(in_time & (outcome == outcome_class))
        n_holdout = int(round(samples.holdout_fraction * len(rows)))
        sample[rng.choice(rows, size=n_holdout, replace=False)] = HOLDOUT
    return sample
