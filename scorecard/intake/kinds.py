"""Which columns are characteristics, and of which kind: numeric or categorical.

Identifiers, dates, constant columns and those the settings leave out are set aside with the
reason; a text column that is numbers but for a few typed-in values is refused, naming the rows.
"""

from __future__ import annotations

import dataclasses
import difflib
import re
from collections.abc import Sequence

import numpy as np
import pandas as pd

from ..errors import LedgerError, describe_rows
from ..settings import Settings
from ..terms import CATEGORICAL, CHECK_LOCAL_LAW, NUMERIC
from .ledger import Characteristic
from .roles import plain


# a column with a distinct value on at least this share of its rows looks like an identifier
# (common practice, no source)
IDENTIFIER_SHARE = 0.95


IDENTIFIER_MIN_ROWS = 20
ROLE_SAMPLE_ROWS = 20_000  # identifiers are judged on this many first rows (a streamed ledger's kinds on as many)
NUMBERS_SHARE = 0.95  # a text column whose values are nearly all numbers is numbers with a few values typed as text
# A text column is free text, left out unless the settings keep it, when a level is longer than
# LONGEST_LEVEL characters, or it has more than MOST_LEVELS levels, or at least FREE_TEXT_MIN_LEVELS
# that are FREE_TEXT_SHARE of its rows or more (common practice, no source)
LONGEST_LEVEL = 200
MOST_LEVELS = 5_000
FREE_TEXT_MIN_LEVELS, FREE_TEXT_SHARE = 50, 0.5


def role_columns(frame: pd.DataFrame, settings: Settings, source: str, require_outcome: bool) -> set[str]:
    """Check the columns named in settings exist; return the names that are not characteristics."""
    columns = [str(c) for c in frame.columns]
    ledger = settings.ledger
    target = settings.outcome.column
    if not target and require_outcome:
        raise LedgerError(f"{source}: no outcome column named. Give it with --target COLUMN or as column under [outcome] in the settings file.")
    decision = settings.rejects.decision_column
    # new applications have no decision yet: the decision column is needed to build only
    named = {"outcome column": target if require_outcome else "", "id column": ledger.id_column,
             "date column": ledger.date_column, "weight column": ledger.weight_column,
             "decision column (rejects.decision_column)": decision if require_outcome else ""}
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
    return {c for c in (target, ledger.id_column, ledger.date_column, ledger.weight_column, decision, *ledger.leave_out) if c}


def choose_characteristics(frame: pd.DataFrame, settings: Settings, roles: set[str],
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
        if spec.use == "protected":
            left_out[name] = PROTECTED_REASON + (f" ({spec.note})" if spec.note else "")
            continue
        ground = protected_ground(name, series, settings.fairness.grounds)
        if ground and CHECK_LOCAL_LAW not in ground and not (spec.use in ("auto", "always") and spec.note):
            left_out[name] = (f"it looks like {ground}, a ground fair-lending law commonly protects; declare it "
                              f"protected (use = \"protected\" under [characteristics.{name}]), or set use = \"auto\" "
                              "with a note saying why it may be used where you lend")
            continue
        reason = unusable_reason(series)
        if reason:
            left_out[name] = reason
            continue
        kind = spec.kind or detect_kind(series)
        if not spec.kind and kind == CATEGORICAL:
            _refuse_numbers_with_some_text(series, name, source)
        if spec.use == "" and (why := looks_like_identifier_or_date(series, kind)):
            left_out[name] = f"{why}; set use = \"auto\" under [characteristics.{name}] to keep it"
            continue
        if spec.use == "" and kind == CATEGORICAL and (why := free_text_reason(series)):
            left_out[name] = f"{why}; set use = \"auto\" under [characteristics.{name}] to class it anyway"
            continue
        if kind == NUMERIC:
            check_numbers(series, name=name, source=source)
        chosen.append(_characteristic(name, kind, series, spec) if kind == NUMERIC else Characteristic(name, kind))
    return chosen, left_out


def _characteristic(name: str, kind: str, series: pd.Series, spec) -> Characteristic:
    """A numeric characteristic with its special values and how its ordinary values read (whole numbers, the lowest)."""
    codes = spec.special_codes
    reading = value_reading(series.to_numpy(dtype=float, na_value=np.nan), codes)
    return with_reading(Characteristic(name, kind, codes, spec.special_meanings), reading)


# how a numeric column's ordinary values (neither missing nor special) read: (how many, the lowest, how many not whole)
Reading = tuple[int, float, int]


def value_reading(values: np.ndarray, special_codes) -> Reading:
    """Count the ordinary values of some rows, their lowest, and those that are not whole numbers (a part of a ledger will do)."""
    ordinary = values[~np.isnan(values) & ~np.isin(values, special_codes)]
    lowest = float(ordinary.min()) if ordinary.size else np.inf
    return int(ordinary.size), lowest, int(np.count_nonzero(ordinary != np.floor(ordinary)))


def added_readings(first: Reading, second: Reading) -> Reading:
    """The reading of two parts of a ledger together."""
    return first[0] + second[0], min(first[1], second[1]), first[2] + second[2]


def with_reading(char: Characteristic, reading: Reading) -> Characteristic:
    """The characteristic with ``whole_numbers`` and ``lowest`` from the reading of every row."""
    count, lowest, fractional = reading
    return dataclasses.replace(char, whole_numbers=count > 0 and fractional == 0, lowest=lowest if count else None)


PROTECTED_REASON = "use = protected in the settings: never in the model, kept for the fairness checks"


def protected_ground(name: str, series: pd.Series, grounds: Sequence[str]) -> str:
    """Return the protected ground a column looks like, by the words of its name or of its levels, or ''.

    Each ground is 'NAME: word, word'; a column matches when a word of its name (split at anything
    but letters and digits) or, for text columns, one of its levels is one of the ground's words.
    """
    levels = ()
    if not pd.api.types.is_numeric_dtype(series) or pd.api.types.is_bool_dtype(series):
        levels = series.dropna().astype(str).unique()[:200]
    return ground_of(name, levels, grounds)


def ground_of(name: str, levels, grounds: Sequence[str]) -> str:
    """Return the protected ground a characteristic looks like by the words of its name and levels, or ''."""
    texts = [str(name), *(str(level) for level in levels)]
    words = {word for text in texts for word in (text.lower(), *_words(text))}  # the whole text, and each word of it
    for ground in grounds:
        label, _, listed = ground.rpartition(":")  # a label may hold a colon of its own
        if words & {word.strip().lower() for word in listed.split(",")}:
            return label.strip()
    return ""


def _words(text: str) -> list[str]:
    return [word for word in re.split(r"[^0-9a-z]+", str(text).lower()) if word]


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
        return f"every value present is the same ({plain(first)!r}); only missingness varies"
    return f"every row has the same value ({plain(first)!r})"


def looks_like_identifier_or_date(series: pd.Series, kind: str) -> str:
    """Say why a column looks like an identifier or a date, or return ''."""
    if pd.api.types.is_datetime64_any_dtype(series):
        return "it holds dates"
    present = series.iloc[:4 * ROLE_SAMPLE_ROWS].dropna()  # enough first rows with a value, without copying them all
    if len(present) < ROLE_SAMPLE_ROWS and len(series) > 4 * ROLE_SAMPLE_ROWS:
        present = series.dropna()
    if present.empty:
        return ""
    if kind == CATEGORICAL and _looks_like_dates(present):
        return "it holds dates"
    if kind == CATEGORICAL and _mostly_numbers(present):
        return ""  # numbers with a few values typed as text: refused by name where it is read, never an id
    # judged on the first rows with a value, as a ledger read in batches is judged on its first rows: the same
    # answer both ways, and no hash of every value of every column
    sample = present.iloc[:ROLE_SAMPLE_ROWS]
    n_distinct = sample.nunique()
    if len(sample) >= IDENTIFIER_MIN_ROWS and n_distinct >= IDENTIFIER_SHARE * len(sample):
        integer_valued = kind == NUMERIC and bool(np.all(np.mod(sample.to_numpy(dtype=float), 1) == 0))
        if kind == CATEGORICAL or integer_valued:
            rows = f"{len(sample)} rows" if len(sample) == len(present) else f"the first {len(sample):,} rows with a value"
            return f"it looks like an identifier ({n_distinct} distinct values in {rows})"
    return ""


def check_finite(frame: pd.DataFrame, characteristics: Sequence[Characteristic], source: str, *, first_row: int = 0) -> None:
    """Raise LedgerError naming a numeric characteristic with infinite values, its count and first rows."""
    for char in characteristics:
        if char.kind == NUMERIC:
            check_finite_values(frame[char.name], name=char.name, source=source, first_row=first_row)


def check_finite_values(series: pd.Series, *, name: str, source: str, first_row: int = 0) -> None:
    """Raise LedgerError when a numeric column holds infinite values (every command says the same)."""
    if pd.api.types.is_integer_dtype(series) or pd.api.types.is_bool_dtype(series):
        return  # whole numbers and true/false are never infinite
    infinite = np.isinf(series.to_numpy(dtype=float, na_value=np.nan))
    if infinite.any():
        rows = describe_rows((np.flatnonzero(infinite) + 2 + first_row).tolist())
        raise LedgerError(
            f"{source}, column {name!r}, {rows}: {int(infinite.sum())} infinite values. "
            "Replace them with a number, leave them empty (missing), or declare a special value."
        )


def _refuse_numbers_with_some_text(series: pd.Series, name: str, source: str) -> None:
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
    texts = (numbers.isna() & series.notna()).to_numpy()
    if texts.mean() > 1 - NUMBERS_SHARE or not texts.any():
        return
    raise _text_in_numbers(series, np.flatnonzero(texts), name, source)


def _looks_like_dates(present: pd.Series) -> bool:
    head = present.head(200).astype(str)  # the first rows as text, not every row
    if not head.str.contains(r"^\d{4}-\d{2}-\d{2}|^\d{1,2}/\d{1,2}/\d{2,4}", regex=True).all():
        return False
    return bool(pd.to_datetime(head, errors="coerce", format="mixed").notna().all())


def check_numbers(series: pd.Series, *, name: str, source: str, first_row: int = 0) -> None:
    """Refuse text in a column read as numbers, naming the cells as a spreadsheet numbers them.

    Every command says the same of the same column (build, score and monitor). ``first_row`` is
    the position of the series' first row in the file (0 for a whole read).

    Raises
    ------
    LedgerError
    """
    if _numeric_or_empty(series):
        return
    present = series.notna().to_numpy()
    if pd.api.types.is_bool_dtype(series):
        wrong = np.flatnonzero(present)
    else:
        wrong = np.flatnonzero(present & pd.to_numeric(series.astype(object), errors="coerce").isna().to_numpy())
    if len(wrong):
        raise _text_in_numbers(series, wrong, name, source, first_row)


def _text_in_numbers(series: pd.Series, rows: np.ndarray, name: str, source: str, first_row: int = 0) -> LedgerError:
    """The one message for text in a column of numbers, whichever command meets it."""
    shown = ", ".join(repr(plain(v)) for v in pd.unique(series.iloc[rows[:50]])[:3])
    return LedgerError(
        f"{source}, column {name!r}, {describe_rows((rows + 2 + first_row).tolist())}: the column is read as numbers, but "
        f"these rows hold text ({shown}). Correct them (leave a cell empty for missing), or set kind = \"categorical\" "
        f"under [characteristics.{name}] if the column is a category (and build again)."
    )


def _mostly_numbers(present: pd.Series) -> bool:
    sample = present.iloc[:10_000]
    return not pd.api.types.is_bool_dtype(sample) and pd.to_numeric(sample, errors="coerce").notna().mean() >= NUMBERS_SHARE


def free_text_reason(series: pd.Series) -> str:
    """Say why a text column is free text rather than a category (too many levels, or long values), or return ''.

    Classing it would put each applicant's own words into the model file, the settings and every
    report; it is left out unless the settings keep it.
    """
    present = series.dropna()
    if present.empty or pd.api.types.is_bool_dtype(series):
        return ""
    longest = int(present.astype(str).str.len().max())
    if longest > LONGEST_LEVEL:
        return f"free text: values up to {longest:,} characters long (a category's levels are short)"
    n_levels = int(present.nunique())
    if n_levels > MOST_LEVELS or (n_levels >= FREE_TEXT_MIN_LEVELS and n_levels >= FREE_TEXT_SHARE * len(present)):
        return f"free text: {n_levels:,} different values in {len(present):,} rows (too many levels to class)"
    return ""


def _numeric_or_empty(series: pd.Series) -> bool:
    return pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series)
