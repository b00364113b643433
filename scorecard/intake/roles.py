"""The columns with a role: the outcome mapped to good, bad, indeterminate or unknown; weights; dates.

Each value is checked where it enters; a message names the column, the rows and what to do.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from ..errors import LedgerError, describe_rows
from ..settings import Settings
from ..terms import BAD, GOOD, INDETERMINATE, REJECTED, UNKNOWN, value_text
from ..rows.coding import factorize_levels
from .ledger import PART_ROWS, AttributeLevels

ROWS_NAMED = 5  # rows a message names before it says how many more


def role_values(frame: pd.DataFrame, settings: Settings, source: str, *, first_row: int = 0):
    """Return the outcome code, weight and date (or None) of every row, checking each value."""
    outcome = mark_rejected(frame, map_outcome(frame, settings, source, first_row=first_row), settings, source,
                            first_row=first_row)
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
    mapping = outcome_mapping(settings, keys)
    unmapped = [(k, int(np.count_nonzero(codes == i))) for i, k in enumerate(keys) if k not in mapping]
    if unmapped:
        first_rows = np.flatnonzero(np.isin(codes, [keys.index(k) for k, _ in unmapped])) + 2 + first_row
        raise LedgerError(unmapped_outcome_message(source, column, describe_rows(first_rows.tolist()), unmapped))
    lookup = np.array([mapping[k] for k in keys] + [UNKNOWN], dtype=np.int8)
    return lookup[codes]  # the sentinel -1 picks the last entry: unknown


def unmapped_outcome_message(source: str, column: str, where: str, unmapped: Sequence[tuple[str, int]]) -> str:
    """Say which outcome values are not mapped (with their row counts), where, and what to do."""
    shown = ", ".join(f"{k!r} ({n_rows_text(n)})" for k, n in unmapped[:8]) + (f" and {len(unmapped) - 8} more" if len(unmapped) > 8 else "")
    return (
        f"{source}, column {column!r}, {where}: "
        f"value{'s' if len(unmapped) > 1 else ''} {shown} {'are' if len(unmapped) > 1 else 'is'} not a mapped outcome. "
        "Add each under [outcome] in the settings file as good, bad, indeterminate or rejected (or use --bad/--good)."
    )


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


def unknown_outcome_note(outcome: np.ndarray, source: str, column: str) -> str:
    """Say how many rows have no outcome (and which), or return ''."""
    # a million rows at a time: on a streamed ledger of 100M rows, the positions of every unknown row
    # (and a list of them) would be the largest thing the build holds
    count, first = 0, []
    for start in range(0, len(outcome), PART_ROWS):
        unknown = np.flatnonzero(outcome[start:start + PART_ROWS] == UNKNOWN)
        count += len(unknown)
        first.extend((unknown[:ROWS_NAMED - len(first)] + start + 2).tolist())
    if not count:
        return ""
    return no_outcome_note(source, column, describe_rows(first, limit=ROWS_NAMED, total=count), count)


def no_outcome_note(source: str, column: str, where: str, n_unknown: int) -> str:
    """The note on rows with no outcome: how many, where, and what is done with them."""
    return (
        f"{source}, column {column!r}, {where}: {n_rows_text(n_unknown)} "
        f"{'has' if n_unknown == 1 else 'have'} no outcome; they are left out of fitting and the checks that need "
        "outcomes, and kept for stability checks."
    )


def outcome_mapping(settings: Settings, keys: Sequence[str]) -> dict[str, int]:
    """The outcome code of each outcome key: the settings' lists, or the 0/1 default when they are empty."""
    outcome = settings.outcome
    bad, good = outcome.bad, outcome.good
    if not bad and not good:
        default = default_outcome_mapping(list(keys))
        if default is not None:
            bad, good = default
    mapping = {value: BAD for value in bad}
    mapping.update({value: GOOD for value in good})
    mapping.update({value: INDETERMINATE for value in outcome.indeterminate})
    mapping.update({value: REJECTED for value in outcome.rejected})
    return mapping


def mark_rejected(frame: pd.DataFrame, outcome: np.ndarray, settings: Settings, source: str, *, first_row: int = 0) -> np.ndarray:
    """Return the outcome codes with every application the decision column calls rejected marked ``REJECTED``.

    Raises
    ------
    LedgerError
        A rejected application has a good, bad or indeterminate outcome: one that was never booked
        cannot have one. The message names the rows.
    """
    column = settings.rejects.decision_column
    if not column or column not in frame.columns:
        return outcome
    rejected = frame[column].map(outcome_key, na_action="ignore").isin(settings.rejects.rejected).to_numpy()
    booked = rejected & np.isin(outcome, (GOOD, BAD, INDETERMINATE))
    if booked.any():
        rows = np.flatnonzero(booked) + 2 + first_row
        raise LedgerError(
            f"{source}, column {column!r}, {describe_rows(rows.tolist())}: the decision says rejected, but column "
            f"{settings.outcome.column!r} gives an outcome ({n_rows_text(int(booked.sum()))}). A rejected application has no "
            "outcome: correct the decision or the outcome, or check rejects.rejected in the settings file."
        )
    return np.where(rejected, REJECTED, outcome).astype(np.int8)


def _check_both_classes(outcome: np.ndarray, source: str, column: str) -> None:
    # counted a million rows at a time: bincount widens one-byte codes to 8-byte indexes
    codes = REJECTED + 1  # good, bad, indeterminate, unknown, rejected
    counts = sum((np.bincount(outcome[start:start + PART_ROWS], minlength=codes) for start in range(0, len(outcome), PART_ROWS)),
                 np.zeros(codes, dtype=np.int64))
    check_both_classes(counts, source, column)


def check_both_classes(counts: np.ndarray, source: str, column: str) -> None:
    """Raise LedgerError when the rows per outcome code hold no goods or no bads."""
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
            shown = plain(frame[column].iloc[int(np.flatnonzero(bad)[0])])
            raise LedgerError(
                f"{source}, column {column!r}, {rows}: weight {shown!r} is {what} ({n_rows_text(int(bad.sum()))}). "
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
            f"{source}, column {column!r}, {rows}: {plain(raw.iloc[int(np.flatnonzero(bad)[0])])!r} is not a date "
            f"({n_rows_text(int(bad.sum()))}). Write dates as YYYY-MM-DD."
        )
    return parsed.to_numpy().astype("datetime64[D]")


def plain(value: object) -> object:
    """A numpy scalar as the plain Python value, so messages show 7 rather than np.int64(7)."""
    return value.item() if isinstance(value, np.generic) else value


def n_rows_text(count: int) -> str:
    return "1 row" if count == 1 else f"{count} rows"


def protected_columns(settings: Settings, columns) -> list[str]:
    """The columns the settings declare protected (``use = "protected"``) that the ledger has."""
    present = {str(c) for c in columns}
    return [name for name, spec in settings.characteristics.items() if spec.use == "protected" and name in present]


def protected_levels(values: pd.Series) -> AttributeLevels:
    """Return each row's level of a protected attribute (-1 where it is not recorded) and the levels, sorted."""
    return joined_levels([factorize_levels(values)])


def joined_levels(parts: Sequence[tuple[np.ndarray, list[str]]]) -> AttributeLevels:
    """The levels of a protected attribute read in parts (batches): each part's codes into its own levels as
    ``factorize_levels`` gives them, joined into one set of sorted levels. Each distinct value is read as text
    once per part, and a part keeps its codes (a byte or two a row), not its values."""
    levels = tuple(sorted({text for _, texts in parts for text in texts}))
    index = pd.Index(levels)
    dtype = level_dtype(len(levels))
    joined = [np.append(index.get_indexer(texts), -1).astype(dtype)[codes] for codes, texts in parts]  # -1 picks the last
    return AttributeLevels(np.concatenate(joined) if len(joined) != 1 else joined[0], levels)


def level_dtype(n_levels: int) -> np.dtype:
    """The smallest signed integer type holding the codes -1 .. n_levels − 1 (one byte a row for up to 127 levels)."""
    return np.dtype(np.int8 if n_levels <= 127 else np.int16 if n_levels <= 32_767 else np.int32)
