"""Checking a ledger against the settings: whole in memory, or in batches when it is larger than memory.

``open_ledger`` is the one entry the commands and the build use: it reads (or begins to read) a
ledger, checks it, and returns it with the source of its rows (``scorecard.rows``).
"""

from __future__ import annotations

import dataclasses
import os
import warnings
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import LedgerError, ScorecardWarning
from ..rows import BATCH_READABLE, InProcessRows, RowPlace, reads_in_batches
from ..rows.coding import factorize_levels
from ..rows.keys import split_keys
from ..settings import Settings
from ..terms import BAD, COMPARISON, DEVELOPMENT, DUCKDB, GOOD, IN_PROCESS, NUMERIC, OUT_OF_TIME, REJECTED, SPARK, UNKNOWN
from .kinds import added_readings, check_finite, choose_characteristics, role_columns, value_reading, with_reading
from .ledger import Fingerprint, Ledger, RejectedRows, fingerprint_of
from .read import (
    HEAD_ROWS, arrow_types, checked_file, file_batches, ledger_columns, read_batches, read_head, read_ledger,
    release_freed_memory,
)
from .roles import (
    check_roles, joined_levels, level_dtype, protected_columns, protected_levels, role_values, unit_weights,
)
from .samples import (
    draw_subsamples, frame_tie_texts, key_columns, needs_keys, out_of_time, repeats_apart, sample_keys, split_samples,
)


def open_ledger(data: pd.DataFrame | str | os.PathLike[str] | RowPlace, settings: Settings, *, stream: bool | None = None,
                require_outcome: bool = True, already_read: pd.DataFrame | None = None):
    """Read (or begin to read) and check a ledger; return it with the source of its rows.

    This is where every command decides how a ledger is read: by the engine the settings name
    (``ledger.engine``), and in this process whole or in batches (``reads_in_batches``).

    Parameters
    ----------
    data : pandas.DataFrame, path or RowPlace
        The ledger: a frame, a file (read by the settings' engine, ``ledger_place``), or a place.
    settings : Settings
    stream : bool, optional
        In this process: read a file in batches (True), whole (False), or as
        ``scorecard.rows.reads_in_batches`` decides from its size (None, the default). A
        DataFrame is always in memory.
    require_outcome : bool
        As for ``prepare_ledger``.
    already_read : pandas.DataFrame, optional
        The file read whole already (by ``read_ledger``, as a build straight from a ledger reads it to
        propose its settings): used instead of reading the file again when it is to be read whole.

    Returns
    -------
    (Ledger, row source)
        ``InProcessRows``, or ``scorecard.rows.sqlrows.SqlRows`` when an engine keeps the rows (close
        it with ``close()`` when done). A streamed ledger holds the roles of every row but no
        characteristic values; its rows are read again, batch by batch, by each pass.
    """
    if not isinstance(data, (pd.DataFrame, RowPlace)):
        data = ledger_place(settings, path=data)
    if isinstance(data, RowPlace):
        if data.engine != IN_PROCESS:
            from .sql import open_sql_ledger

            return open_sql_ledger(data, settings, require_outcome=require_outcome)
        data = Path(data.path)
    if not isinstance(data, pd.DataFrame) and reads_in_batches(data, settings.ledger.stream_above_mb, asked=stream):
        ledger, batches = stream_ledger(data, settings, require_outcome=require_outcome)
        return ledger, InProcessRows(ledger.outcome, ledger.weight, ledger.sample, batches, subsamples=ledger.subsamples,
                                     dates=ledger.dates)
    frame = already_read if already_read is not None and not isinstance(data, pd.DataFrame) else read_ledger(data)
    if isinstance(data, pd.DataFrame):
        ledger = prepare_ledger(frame, settings, require_outcome=require_outcome)
    else:
        ledger = prepare_ledger(frame, settings, source=Path(data).name, fingerprint=fingerprint_of(data, len(frame)),
                                require_outcome=require_outcome)
    return ledger, rows_in_memory(ledger)


def ledger_place(settings: Settings, *, path: str | os.PathLike[str] | None = None, engine: str | None = None,
                 table: str | None = None, query: str | None = None) -> RowPlace:
    """Where a ledger's rows are: the settings' ``[ledger]`` (path resolved against the settings file's folder), with
    any of its keys given on the command line instead."""
    ledger = settings.ledger
    engine = engine or ledger.engine
    location = str(path) if path is not None else (str(settings.ledger_path()) if ledger.path else "")
    options = {IN_PROCESS: {}, DUCKDB: dataclasses.asdict(settings.duckdb), SPARK: dataclasses.asdict(settings.spark)}[engine]
    return RowPlace(engine, location, ledger.table if table is None else table, ledger.query if query is None else query, options)


def open_batches(path: str | os.PathLike[str], columns: Sequence[str], settings: Settings, *, stream: bool | None = None):
    """The named columns of a ledger file, for scoring in this process: in batches of ``ledger.batch_rows`` when
    ``reads_in_batches`` says so (as ``open_ledger`` decides), else whole; an iterator of (first row, frame)."""
    if reads_in_batches(path, settings.ledger.stream_above_mb, asked=stream):
        return read_batches(path, columns, batch_rows=settings.ledger.batch_rows)
    return iter([(0, read_ledger(path, columns=columns))])


def columns_of(place: RowPlace) -> list[str]:
    """A ledger's column names: a file's header in process, or the engine's view of the file, table or query."""
    if place.engine == IN_PROCESS:
        return ledger_columns(place.path)
    from ..rows import connect
    from ..rows.sqlrows import SOURCE

    engine = connect(place)
    try:
        return [str(name) for name in engine.schema(SOURCE).names]
    finally:
        engine.close()


def rows_in_memory(ledger: Ledger) -> InProcessRows:
    """The row source of a ledger held in memory."""
    return InProcessRows.from_frame(ledger.frame, ledger.outcome, ledger.weight, ledger.sample, subsamples=ledger.subsamples,
                                    dates=ledger.dates)


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
    roles = role_columns(frame, settings, source, require_outcome)
    characteristics, left_out = choose_characteristics(frame, settings, roles, source)
    check_finite(frame, characteristics, source)
    read_notes = list(frame.attrs.get("notes", ()))  # how the file was read (numbers written with separators)
    outcome, weight, dates = role_values(frame, settings, source)
    repairs = check_roles(outcome, weight, settings, source, require_outcome=require_outcome)
    if fingerprint is None:
        fingerprint = fingerprint_of(frame, len(frame))
    rejects = None
    if (outcome == REJECTED).any() and require_outcome:
        in_time = out_of_time(dates, settings, n_rows=len(frame), source=source) != OUT_OF_TIME  # dates checked on every row
        frame, outcome, weight, dates, rejects = _set_rejects_apart(frame, outcome, weight, dates, in_time, characteristics)
    elif not require_outcome:
        outcome = np.where(outcome == REJECTED, UNKNOWN, outcome).astype(np.int8)  # scored and monitored like any other
    keys = sample_keys(frame, settings) if require_outcome and needs_keys(len(frame), settings) else None
    tie_texts = frame_tie_texts(frame, settings)
    sample = split_samples(outcome, dates, settings, keys=keys, tie_texts=tie_texts, source=source)
    subsamples = draw_subsamples(sample, outcome, keys, settings, tie_texts=tie_texts) if keys is not None else {}
    ids = frame[settings.ledger.id_column].to_numpy() if settings.ledger.id_column else None
    protected = {name: protected_levels(frame[name]) for name in protected_columns(settings, frame.columns)}
    kept = frame[[c.name for c in characteristics]]
    notes = [*read_notes, *repairs, *(f"{name!r} left out: {why}." for name, why in left_out.items())]
    if rejects is not None:
        notes.append(f"{source}: {rejects.n_rows:,} rejected applications set apart from the samples "
                     f"({int(rejects.in_time.sum()):,} made in time); reject inference: {settings.rejects.method}.")
    for note in repairs:
        warnings.warn(note, ScorecardWarning, stacklevel=2)
    return Ledger(
        source=source, frame=kept, characteristics=tuple(characteristics), outcome=outcome, weight=weight,
        sample=sample, dates=dates, ids=ids, notes=tuple(notes), fingerprint=fingerprint, left_out=left_out,
        subsamples=subsamples, rejects=rejects, protected=protected,
    )


def _set_rejects_apart(frame, outcome, weight, dates, in_time, characteristics):
    """The booked applications alone (frame, outcome, weight, dates), and the rejected ones apart."""
    rejected = outcome == REJECTED
    rows = np.flatnonzero(rejected)
    rejects = RejectedRows(frame.iloc[rows][[c.name for c in characteristics]].reset_index(drop=True),
                           np.array(weight[rows], dtype=float), in_time[rows], rows)
    booked = np.flatnonzero(~rejected)
    weight = unit_weights(len(booked)) if weight.strides == (0,) else weight[booked]
    return (frame.iloc[booked].reset_index(drop=True), outcome[booked], weight,
            None if dates is None else dates[booked], rejects)


def stream_ledger(source: str | os.PathLike[str], settings: Settings, *, require_outcome: bool = True):
    """Check a ledger read in batches; return the ledger's row-level roles and a way to read its batches.

    Parameters
    ----------
    source : path-like
        A CSV or Parquet file.
    settings : Settings
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
    Pass 1 reads the outcome, weight and date columns, and the columns of the split key (the id
    column, or every column when there is none); the characteristics' kinds and left-out columns
    are judged on the first ``scorecard.intake.read.HEAD_ROWS`` rows (set them in the settings
    file to decide yourself). The samples are split exactly as for a ledger held in memory.
    """
    path, suffix = checked_file(source)
    batch_rows = settings.ledger.batch_rows  # rows per batch (Parquet; CSV batches are about that size)
    if suffix not in BATCH_READABLE:
        raise LedgerError(f"{path.name}: only CSV and Parquet ledgers can be read in batches. Convert it, or read it whole.")
    source_name = path.name
    head = read_head(path, suffix)
    if len(head) == 0:
        raise LedgerError(f"{source_name}: the file has a header but no data rows. Export the ledger again with its data.")
    read_notes = list(head.attrs.get("notes", ()))
    roles = role_columns(head, settings, source_name, require_outcome)
    characteristics, left_out = choose_characteristics(head, settings, roles, source_name)
    types = arrow_types(head, exact=[settings.ledger.id_column])
    role_names = [c for c in (settings.outcome.column, settings.ledger.weight_column, settings.ledger.date_column,
                              settings.rejects.decision_column) if c and c in head.columns]
    drawn = require_outcome and needs_keys(len(head) if len(head) < HEAD_ROWS else None, settings)
    keyed = key_columns(head.columns, settings) if drawn else []
    protected_names = protected_columns(settings, head.columns)
    # how every numeric characteristic's values read (whole numbers, the lowest) is judged on every row, as in memory
    numeric = [c for c in characteristics if c.kind == NUMERIC] if require_outcome else []
    first_pass = list(dict.fromkeys([*role_names, *keyed, *protected_names, *(c.name for c in numeric)])) \
        or list(head.columns[:1])

    def batches(columns: Sequence[str]):
        read = [c for c in characteristics if c.name in columns]
        for first_row, frame in file_batches(path, suffix, list(columns), types, batch_rows):
            check_finite(frame, read, source_name, first_row=first_row)
            yield first_row, frame

    # per batch; each field's parts are joined at the end, each part released as it is copied
    parts: dict[str, list] = {"outcome": [], "weight": [], "out of time": [], "dates": [], "keys": [], "protected": []}
    readings = {c.name: (0, np.inf, 0) for c in numeric}
    for first_row, frame in file_batches(path, suffix, first_pass, types, batch_rows):
        outcome, weight, dates = role_values(frame, settings, source_name, first_row=first_row)
        parts["outcome"].append(outcome)
        parts["weight"].append(weight)
        # a build needs the dates only to set the out-of-time rows apart: 1 byte a row, not 8
        parts["out of time"].append(out_of_time(dates, settings, n_rows=len(frame), source=source_name, first_row=first_row))
        if dates is not None and not require_outcome:  # monitoring counts by calendar quarter
            parts["dates"].append(dates)
        if drawn:
            parts["keys"].append(split_keys(frame, keyed, settings.samples.seed))
        parts["protected"].append([(codes.astype(level_dtype(len(texts))), texts)
                                   for codes, texts in map(factorize_levels, map(frame.get, protected_names))])
        for char in numeric:
            values = frame[char.name].to_numpy(dtype=float, na_value=np.nan)
            readings[char.name] = added_readings(readings[char.name], value_reading(values, char.special_values))
    characteristics = [with_reading(c, readings[c.name]) if c.name in readings else c for c in characteristics]
    protected = {name: joined_levels([p[i] for p in parts["protected"]]) for i, name in enumerate(protected_names)}
    outcome = joined(parts["outcome"])
    if (outcome == REJECTED).any():
        if require_outcome:
            raise LedgerError(
                f"{source_name}: rejected applications can be set apart only from a ledger read whole, and this one is read "
                "in batches. Build without --stream (ledger.stream_above_mb larger than the file), or leave the rejected "
                "rows out of the file."
            )
        outcome = np.where(outcome == REJECTED, UNKNOWN, outcome).astype(np.int8)
    weight = joined(parts["weight"]) if settings.ledger.weight_column else unit_weights(len(outcome))
    dates = joined(parts["dates"]) if parts["dates"] else None
    in_time = joined(parts["out of time"])
    keys = joined(parts["keys"]) if drawn else None
    del parts
    repairs = check_roles(outcome, weight, settings, source_name, require_outcome=require_outcome)

    def rows_of(rows: np.ndarray, columns: Sequence[str]) -> pd.DataFrame:  # the file read again for a few rows
        order = np.argsort(rows, kind="stable")
        ascending, found = rows[order], []
        for first_row, frame in file_batches(path, suffix, list(columns), types, batch_rows):
            inside = ascending[(ascending >= first_row) & (ascending < first_row + len(frame))]
            found.append(frame.iloc[inside - first_row])
        return pd.concat(found, ignore_index=True).iloc[np.argsort(order)].reset_index(drop=True)

    def tie_texts(rows: np.ndarray):  # for the few rows of equal key at an edge
        return frame_tie_texts(rows_of(rows, head.columns), settings)(np.arange(len(rows)))

    if drawn:  # without an id column, the repeats of a row keyed apart (their rows read again)
        keys = repeats_apart(keys, lambda rows: rows_of(rows, keyed), keyed, settings)
    sample = split_samples(outcome, dates, settings, keys=keys, tie_texts=tie_texts, source=source_name,
                           out_of_time_sample=in_time)
    subsamples = draw_subsamples(sample, outcome, keys, settings, tie_texts=tie_texts) if drawn else {}
    del keys
    release_freed_memory()  # the batches' parts and the keys
    notes = [*read_notes, *repairs, *(f"{name!r} left out: {why}." for name, why in left_out.items())]
    for note in repairs:
        warnings.warn(note, ScorecardWarning, stacklevel=2)
    ledger = Ledger(
        source=source_name, frame=head.iloc[:0][[c.name for c in characteristics]], characteristics=tuple(characteristics),
        outcome=outcome, weight=weight, sample=sample, dates=dates, ids=None, notes=tuple(notes),
        fingerprint=fingerprint_of(path, len(outcome)), left_out=left_out, subsamples=subsamples, protected=protected,
    )
    return ledger, batches


def joined(parts: list[np.ndarray]) -> np.ndarray:
    """The parts one after another in one array; each part is taken from the list and released once copied,
    and the memory of the parts copied is given back to the system as it goes (``RELEASE_BYTES`` at a time),
    so that the parts and the whole are never both held."""
    whole = np.empty(sum(len(part) for part in parts), dtype=parts[0].dtype)
    filled = released = 0
    while parts:
        part = parts.pop(0)
        whole[filled:filled + len(part)] = part
        filled += len(part)
        del part
        if (filled - released) * whole.itemsize >= RELEASE_BYTES:
            release_freed_memory()  # freed parts would otherwise stay in the heap beside the whole
            released = filled
    return whole


RELEASE_BYTES = 64_000_000


def with_inferred_rejects(ledger: Ledger, bad_share: np.ndarray) -> Ledger:
    """Return the booked applications with every in-time reject added twice to the development sample: once as a
    good, once as a bad, weighted by its weight times one minus its share of bad, and times its share of bad.

    Parameters
    ----------
    ledger : Ledger
        A ledger held in memory, with rejected applications set apart.
    bad_share : numpy.ndarray
        The inferred share of bad of each in-time reject, in ledger order.

    Returns
    -------
    Ledger
        A part of no weight is left out (it is not a row). Sub-samples of a large ledger keep their
        booked rows and take in every added one; the rejects are no longer apart.
    """
    rejected = ledger.rejects
    in_time = np.flatnonzero(rejected.in_time)
    weight = rejected.weight[in_time]
    good_weight, bad_weight = weight * (1.0 - bad_share), weight * bad_share
    good, bad = in_time[good_weight > 0], in_time[bad_weight > 0]
    frame = pd.concat([ledger.frame, rejected.frame.iloc[good], rejected.frame.iloc[bad]], ignore_index=True)
    n_booked, n_added = ledger.n_rows, len(good) + len(bad)
    outcome = np.concatenate([ledger.outcome, np.full(len(good), GOOD, np.int8), np.full(len(bad), BAD, np.int8)])
    weights = np.concatenate([ledger.weight, good_weight[good_weight > 0], bad_weight[bad_weight > 0]])
    sample = np.concatenate([ledger.sample, np.full(n_added, DEVELOPMENT, np.int8)])
    added = np.arange(n_booked, n_booked + n_added)
    subsamples = {purpose: drawn if purpose.startswith(COMPARISON) else np.concatenate([drawn, added])
                  for purpose, drawn in ledger.subsamples.items()}  # the challenger is compared on booked rows
    return replace(ledger, frame=frame, outcome=outcome, weight=weights, sample=sample, dates=None, ids=None,
                   subsamples=subsamples, rejects=None)
