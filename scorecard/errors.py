"""Errors and warnings of scorewright.

Every error a user can cause is a ``ValueError`` subclass defined here. The command line turns
each of them into one message on stderr and exit code 2; a traceback is only shown with
``--traceback``. Messages say what is wrong, where it is, and what to do about it.
"""

from __future__ import annotations

from collections.abc import Sequence


class ScorecardError(ValueError):
    """Bad input or settings: the message says what, where and what to do."""


class LedgerError(ScorecardError):
    """The ledger cannot be read or does not fit the settings."""


class SettingsError(ScorecardError):
    """The settings file or a settings value is wrong."""


class ClassingError(ScorecardError):
    """A classing override or constraint cannot be applied."""


class FitError(ScorecardError):
    """The logistic fit cannot produce trustworthy estimates (separation, singular design)."""


class ModelFileError(ScorecardError):
    """A model file is missing, corrupt, edited or of a newer format."""


class OutputError(ScorecardError):
    """An output cannot be written where asked: it is an input of the run, or another run is writing it."""


class ScorecardWarning(UserWarning):
    """Something was repaired or left out; the message says what and how to avoid it."""


def describe_rows(rows: Sequence[int], *, limit: int = 5, total: int | None = None) -> str:
    """Name rows as the user sees them: 'row 17', 'rows 17 and 203', 'rows 2, 5, 9, 11, 12 and 40 more'.

    ``rows`` are row numbers as a spreadsheet shows them (the header is row 1); give them all, so
    that the message can say how many more there are, or the first ``limit`` of them and ``total``.
    """
    total = len(rows) if total is None else total
    shown = [str(int(r)) for r in rows[:limit]]
    if total == 1:
        return f"row {shown[0]}"
    if total > limit:
        return f"rows {', '.join(shown)} and {total - limit} more"
    return f"rows {', '.join(shown[:-1])} and {shown[-1]}"


def describe_ids(ids: Sequence[object], total: int, *, limit: int = 5) -> str:
    """Name rows by their ids, for rows that have no row numbers (a table in a database): '2 rows (ids 'A1' and 'B7')'.

    ``ids`` are the first few rows' ids (none when the ledger has no id column); ``total`` is how many rows there are.
    """
    count = "1 row" if total == 1 else f"{total:,} rows"
    shown = [repr(i.item() if hasattr(i, "item") else i) for i in list(ids)[:limit]]
    if not shown:
        return count
    if total == 1:
        return f"{count} (id {shown[0]})"
    more = f" and {total - len(shown):,} more" if total > len(shown) else ""
    listed = ", ".join(shown) if more else (", ".join(shown[:-1]) + f" and {shown[-1]}" if len(shown) > 1 else shown[0])
    return f"{count} (ids {listed}{more})"
