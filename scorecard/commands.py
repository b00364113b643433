"""The work of each ``scorewright`` command, given its options (the parsing is in ``cli.py``).

Each ``run_*`` function does its work and catches nothing: ``cli.main`` turns our errors into
messages and exit codes. Heavy libraries are imported here, not in ``cli.py``, so that
``scorewright --help`` stays fast; the stages only one command needs (classing, the build, the
reports) are imported inside that command, so that ``score`` loads only the scoring path.
"""

from __future__ import annotations

import collections
import json
import os
import re
import shlex
import tomllib
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .errors import LedgerError, SettingsError
from .files import check_not_an_input, claiming, replacing, replacing_folder, write_text_atomically
from .intake import (
    closest_names, columns_of, default_outcome_mapping, detect_kind, fingerprint_of, ledger_columns, ledger_place,
    looks_like_identifier_or_date, open_batches, open_ledger, outcome_key, prepare_ledger, protected_ground, read_ledger,
)
from .modelfile import document_checksum, load_model, model_document, save_model
from .options import (
    EXIT_CHECK_FAILED, EXIT_OK, BuildOptions, ExportOptions, InitOptions, MonitorOptions, ScoreOptions, SetOptions, Streams,
)
from .terms import ENGINES, IN_PROCESS, SPARK
from .rows import ordered_levels, tally_unseen
from .settings import (
    CharacteristicSettings, Settings, edit_settings, read_settings, settings_from_mapping, settings_to_mapping, write_settings,
)

if TYPE_CHECKING:  # named in a signature only; classing is imported by the commands that class
    from .classing import ClassedLedger


def run_init(options: InitOptions, streams: Streams) -> int:
    """Read a ledger, propose a classing, write the settings file and print the IV table."""
    check_not_an_input(options.out, {"the ledger": options.ledger})
    with claiming(options.out):
        return _init(options, streams)


def _init(options: InitOptions, streams: Streams) -> int:
    from .classing import class_ledger
    from .report.text import iv_table

    out = options.out
    if out.is_dir():
        raise SettingsError(f"{out}: is a folder. Give --out the name of the settings file to write, e.g. {out / 'scorecard.toml'}.")
    if out.exists() and not options.force:
        raise SettingsError(f"{out}: the settings file exists already. Pass --force to overwrite it, or choose another name with --out.")
    frame = read_ledger(options.ledger)
    source = options.ledger.name
    chosen: list[str] = []
    settings = _initial_settings(frame, options, source, chosen)
    streams.note(f"read {len(frame):,} rows and {frame.shape[1]} columns from {source}")
    for note in (*frame.attrs.get("notes", ()), *chosen):
        streams.note(note)
    outcome = settings.outcome
    streams.note(f"outcome {outcome.column!r}: bad = {list(outcome.bad)}, good = {list(outcome.good)}"
                 + (f", indeterminate = {list(outcome.indeterminate)}" if outcome.indeterminate else "")
                 + "; check this mapping in the settings file")
    ledger = prepare_ledger(frame, settings, source=source, fingerprint=fingerprint_of(options.ledger, len(frame)))
    classed = class_ledger(ledger, settings, progress=lambda items: streams.progress(items, "classing"))
    characteristics, comments = _proposals(ledger, classed, settings)
    settings = replace(settings, characteristics=characteristics)
    header = (
        f"scorewright settings for {source}: the record of every analyst decision.\n"
        "Edit any value, then run: scorewright build " + str(out) + "\n"
        "Every classing below is a proposal (the classing with the largest information value that meets the limits);\n"
        "change cuts or classes to decide yourself. Keys left out take their defaults."
        + "".join(f"\n{note}" for note in chosen)
    )
    write_settings(settings, out, comments=comments, header=header)
    streams.say(iv_table(classed, ledger.left_out))
    streams.say()
    streams.say(f"settings written to {out}")
    return EXIT_OK


def _initial_settings(frame, options: InitOptions, source: str, chosen: list[str]) -> Settings:
    """Settings from the command line: outcome mapping, role columns, special values."""
    return command_line_settings(
        frame, ledger=options.ledger, target=options.target, bad=options.bad, good=options.good,
        indeterminate=options.indeterminate, id_column=options.id_column, date_column=options.date_column,
        weight_column=options.weight_column, special=options.special, folder=options.out.resolve().parent, source=source,
        leave_out=options.leave_out, out_of_time_from=options.out_of_time_from, holdout=options.holdout,
        rejected=options.rejected, chosen=chosen,
    )


def command_line_settings(frame, *, ledger: Path, target: str, bad=(), good=(), indeterminate=(), id_column=None,
                          date_column=None, weight_column=None, special=(), folder: Path, source: str, leave_out=(),
                          out_of_time_from: str = "", holdout: float | None = None, rejected: str = "",
                          chosen: list[str] | None = None) -> Settings:
    """Return settings for a ledger from command-line choices, detecting the id and date columns.

    A column the tool takes as the id or the date column is never taken silently: ``chosen``
    receives a sentence for each, which the commands say on the terminal and in the report.
    """
    columns = [str(c) for c in frame.columns]
    if target not in columns:
        raise LedgerError(f"{source}: outcome column {target!r} not found.{closest_names(target, columns)}")
    choice = InitOptions(ledger=ledger, target=target, bad=tuple(bad), good=tuple(good), indeterminate=tuple(indeterminate),
                         id_column=id_column, date_column=date_column, weight_column=weight_column)
    bad, good = _outcome_lists(frame[target], choice, source)
    said = [] if chosen is None else chosen
    if id_column is None:
        id_column = _detect_role(frame, choice, "identifier")
        if id_column:
            why = looks_like_identifier_or_date(frame[id_column], detect_kind(frame[id_column]))
            said.append(f"column {id_column!r} was taken as the id column ({why}): it is never a characteristic. "
                        "Name another with --id COLUMN if it is not the applications' id.")
    if date_column is None:
        date_column = _detect_role(frame, choice, "dates")
        if date_column:
            said.append(f"column {date_column!r} was taken as the date column: it is never a characteristic. "
                        "Name another with --date COLUMN if it is not the application date.")
    specials = _special_values(special, columns, source)
    samples = {"out_of_time_from": out_of_time_from}
    if holdout is not None:
        samples["holdout_fraction"] = holdout
    document = settings_to_mapping(Settings().replace(
        ledger={"path": os.path.relpath(ledger.resolve(), folder), "id_column": id_column or "",
                "date_column": date_column or "", "weight_column": weight_column or "", "leave_out": tuple(leave_out)},
        outcome={"column": target, "bad": bad, "good": good, "indeterminate": tuple(indeterminate)},
        samples=samples, rejects=_rejected_option(rejected, columns),
        characteristics={name: CharacteristicSettings(special_values=values) for name, values in specials.items()},
    ))
    # validated like a settings file, so that a wrong option gets the same clear message
    return settings_from_mapping(document, source="the command line", folder=str(folder))


def _outcome_lists(column, options: InitOptions, source: str) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Return the bad and good values: as given; 0/1 by default; values not named take the other side."""
    values = sorted({outcome_key(v) for v in column.dropna().unique()})
    if not options.bad and not options.good:
        default = default_outcome_mapping(values)
        if default is None:
            shown = ", ".join(repr(v) for v in values[:10])
            raise LedgerError(f"{source}, column {options.target!r}: say which outcome values mean bad with --bad (the column holds {shown}).")
        return default
    named = [*options.bad, *options.good, *options.indeterminate]
    repeated = [v for v, n in collections.Counter(named).items() if n > 1]
    if repeated:
        raise SettingsError(
            f"outcome value {repeated[0]!r} is given more than once among --bad, --good and --indeterminate. Give each value once."
        )
    absent = [v for v in named if v not in values]
    if absent:
        raise LedgerError(
            f"{source}, column {options.target!r}: value {absent[0]!r} given on the command line does not occur. "
            f"The column holds {', '.join(repr(v) for v in values[:10])}."
        )
    rest = tuple(v for v in values if v not in named)
    if options.bad and options.good:
        return tuple(options.bad), tuple(options.good)  # any value left over is named by prepare_ledger
    if not options.bad:
        raise LedgerError(
            f"{source}, column {options.target!r}: name the bad values with --bad as well; every value not named "
            "is then good (or indeterminate with --indeterminate)."
        )
    return tuple(options.bad), rest


def _detect_role(frame, options: InitOptions, what: str) -> str | None:
    """Return the one column that looks like an identifier (or holds dates), if exactly one does."""
    taken = {options.target, options.weight_column, options.id_column, options.date_column}
    found = []
    for column in frame.columns:
        if column in taken:
            continue
        why = looks_like_identifier_or_date(frame[column], detect_kind(frame[column]))
        if what in why:
            found.append(str(column))
    return found[0] if len(found) == 1 else None


def _special_values(entries, columns, source: str) -> dict[str, tuple[tuple[float, str], ...]]:
    """Read --special COLUMN=VALUE[:MEANING][,VALUE[:MEANING]]: each column's special values with their meanings."""
    specials = {}
    for entry in entries:
        name, _, text = entry.partition("=")
        if not text or name not in columns:
            raise SettingsError(
                f"--special {entry!r}: write COLUMN=VALUE[:MEANING][,VALUE[:MEANING]], with COLUMN one of the ledger's "
                "columns, e.g. --special 'months_since_arrears=-1:no arrears on record'."
            )
        pairs = [part.partition(":") for part in text.split(",")]
        try:
            specials[name] = tuple((float(value), meaning.strip()) for value, _, meaning in pairs)
        except ValueError:
            raise SettingsError(f"--special {entry!r}: special values must be numbers, e.g. -1 or 999, each "
                                "with its meaning after a colon.") from None
    return specials


def _rejected_option(entry: str, columns) -> dict[str, object]:
    """The rejects section of ``--rejected COLUMN=V[,V]``: the decision column and its values meaning rejected."""
    if not entry:
        return {}
    name, _, text = entry.partition("=")
    if not text or name not in columns:
        raise SettingsError(
            f"--rejected {entry!r}: write COLUMN=VALUE[,VALUE], with COLUMN the ledger's decision column and the values "
            "that mean rejected, e.g. --rejected decision=declined."
        )
    return {"decision_column": name, "rejected": tuple(value.strip() for value in text.split(","))}


def _proposals(ledger, classed: ClassedLedger, settings: Settings):
    """Return the characteristics' settings (kind, classing) and a comment line for each."""
    from .classing import classing_settings_values

    characteristics, comments = {}, {}
    for char in classed.characteristics:
        spec = settings.characteristic(char.name)
        values = classing_settings_values(char.binning)
        characteristics[char.name] = replace(
            spec, kind=char.binning.kind, use=spec.use or "auto",
            special_values=tuple(zip(ledger.characteristic(char.name).special_values,
                                     ledger.characteristic(char.name).special_meanings)), **values, proposal=char.proposal,
        )
        evidence = char.evidence
        comment = f"IV {evidence.iv:.4f} ({evidence.strength}) on the development sample; {char.binning.n_bins} bins"
        if evidence.leakage_flag:
            comment += (
                f"\nFLAGGED: IV above {settings.selection.leakage_iv} can mean the column is recorded after the "
                "decision (leakage). Check it is known at application time; if not, set use = \"never\"."
            )
        ground = ledger_ground(ledger, char.name, settings)
        if ground:  # a ground lawful in some places, with conditions: flagged, never refused
            comment += (f"\nFLAGGED: it looks like {ground}. Check local law before using it; if it may not be used "
                        "where you lend, set use = \"protected\" (kept for the fairness checks, never in the model).")
        comments[char.name] = comment
    roles = {settings.ledger.id_column, settings.ledger.date_column}
    for name, why in ledger.left_out.items():
        if name in roles:
            continue
        if why.startswith("it looks like") and "fair-lending law" in why:  # proposed protected
            characteristics[name] = CharacteristicSettings(use="protected")
            comments[name] = (f"FLAGGED: {why.split(';')[0]}. Proposed: protected, never in the model and kept for the "
                              "fairness checks (proxies, adverse impact). If the law where you lend allows it, set use "
                              "= \"auto\" with a note saying why; the reports show the note.")
            continue
        characteristics[name] = CharacteristicSettings(use="never", note=why.split(";")[0])
        comments[name] = f"left out: {why}"
    return characteristics, comments


def ledger_ground(ledger, name: str, settings: Settings) -> str:
    """The protected ground a characteristic of the ledger looks like ('' for none), from its name and levels."""
    if ledger.frame.empty and ledger.frame.columns.size == 0:
        return ""
    return protected_ground(name, ledger.frame[name], settings.fairness.grounds)


# --------------------------------------------------------------------------------------------
# build


# What a build writes, and what a monitoring run writes: each set replaces the one before it whole.
BUILD_OUTPUTS = ("model.json", "settings.toml", "summary.txt", "report.html", "workbook.xlsx", "model-document.html")
MONITOR_OUTPUTS = ("monitor.txt", "monitor.html", "monitor.xlsx")


def run_build(options: BuildOptions, streams: Streams) -> int:
    """Build the scorecard and write the model file, the resolved settings and the reports, as one set."""
    from .build import Stopwatch

    timings: dict[str, float] = {}
    clock = Stopwatch(timings)
    chosen: list[str] = []  # what the quick path took by itself (the id, the date column): said, never silent
    settings, ledger_path, frame = _build_settings(options, chosen)
    if options.engine:
        if options.engine not in ENGINES:
            raise SettingsError(f"--engine {options.engine}: not an engine; use one of {', '.join(ENGINES)}.")
        settings = replace(settings, ledger=replace(settings.ledger, engine=options.engine))
    place = ledger_place(settings, path=ledger_path)
    folder = ledger_path.parent if ledger_path else options.source.resolve().parent
    out = options.out or folder / f"{options.source.stem}-build"
    inputs = {**({"the ledger": ledger_path} if ledger_path else {}),
              **({"the settings file": options.source} if options.source != ledger_path else {})}
    check_not_an_input(out, inputs, replaces_folder=True)
    read_whole = [frame] if frame is not None else []  # handed over whole, so that intake can let it go
    del frame
    with claiming(out):
        return _build(options, streams, settings, ledger_path, place, out, clock, timings, read_whole, chosen)


def _build(options: BuildOptions, streams: Streams, settings: Settings, ledger_path: Path | None, place, out: Path, clock,
           timings: dict[str, float], read_whole: list[pd.DataFrame], chosen: list[str]) -> int:
    from .build import build_scorecard
    from .report.text import build_summary

    check_output_folder(out, options.force, outputs=BUILD_OUTPUTS)
    previous = load_model(options.previous) if options.previous else None  # refused before the build, not after
    with clock("intake"):  # a ledger read whole to propose the settings is not read again (and not held after intake)
        ledger, rows = open_ledger(place, settings, stream=options.stream or None,
                                   already_read=read_whole.pop() if read_whole else None)
    try:
        _say_read(streams, ledger, place, rows, settings)
        build = build_scorecard(ledger, settings, rows=rows, progress=lambda items: streams.progress(items, "classing"),
                                timings=timings)
    finally:
        rows.close()
    for note in chosen:
        streams.note(note)
    path = os.path.relpath(ledger_path.resolve(), out.resolve()) if ledger_path else ""
    resolved = replace(build.settings, ledger=replace(build.settings.ledger, path=path))
    summary = build_summary(build)
    # every output goes into a folder beside --out that replaces it whole at the end: a build that
    # fails at any step leaves the folder as it was
    with replacing_folder(out) as folder:
        with clock("model file"):
            document = model_document(replace(build, settings=resolved))
            written = [
                save_model(document, folder / "model.json"),
                write_settings(resolved, folder / "settings.toml", header=(
                    "The settings this build used, every classing written out: 'scorewright build' on this file\n"
                    "reproduces the same model file."
                ) + "".join(f"\n{note}" for note in chosen)),
                write_text_atomically(folder / "summary.txt", summary + "\n"),
            ]
        if options.reports:
            # what the quick path took by itself is said in the reports too; the model file stays a function
            # of the settings and the ledger, so that a build from the settings written here gives the same bytes
            written += _write_build_reports(replace(build, settings=resolved, notes=(*chosen, *build.notes)), folder,
                                            clock, options, out,
                                            document_checksum(document), previous)
    if options.timings:
        print(json.dumps({stage: round(seconds, 4) for stage, seconds in timings.items()}), file=streams.err)
    streams.say(summary)
    streams.say()
    streams.say("written: " + ", ".join(str(out / path.name) for path in written))
    return EXIT_OK


def _say_read(streams: Streams, ledger, place, rows, settings: Settings) -> None:
    """Say what was read, how (whole or in batches), and where the rows are counted."""
    if place.engine != IN_PROCESS:
        streams.note(f"{ledger.n_rows:,} rows of {ledger.source} are kept and counted by {place.engine}")
    elif rows.in_memory:
        streams.note(f"read {ledger.n_rows:,} rows and {len(ledger.frame.columns)} columns from {ledger.source}")
    else:
        streams.note(f"{ledger.source}: {ledger.n_rows:,} rows, read in batches of about {settings.ledger.batch_rows:,} rows")
    for note in ledger.notes:
        if note.endswith("were read as numbers."):  # how the file was read is said as it is read
            streams.note(note)


def _write_build_reports(build, folder: Path, clock, options: BuildOptions, out: Path, model_checksum: str,
                         previous=None) -> list[Path]:
    """Run every validation check and write the HTML report, the workbook and the model document into ``folder``."""
    from .report.build_page import write_report
    from .report.build_sheets import write_workbook
    from .report.model_document import write_model_document
    from .validation import validate_build

    with clock("checks"):
        validation = validate_build(build)
    command = "scorewright build " + " ".join(shlex.quote(str(a)) for a in (options.source, "--out", out))
    with clock("report"):
        report = write_report(build, validation, folder / "report.html", generated_by=command, model_checksum=model_checksum)
    with clock("workbook"):
        book = write_workbook(build, validation, folder / "workbook.xlsx", model_checksum=model_checksum)
    with clock("model document"):
        paper = write_model_document(build, validation, folder / "model-document.html", previous=previous,
                                     previous_name=str(options.previous) if options.previous else "",
                                     model_checksum=model_checksum)
    return [report, book, paper]


def _build_settings(options: BuildOptions, chosen: list[str]) -> tuple[Settings, Path | None, pd.DataFrame | None]:
    """The build's settings, the ledger file they name, and the ledger when it was read whole to propose them."""
    source = options.source
    if source.is_dir():
        raise SettingsError(f"{source}: is a folder. Give a settings file (.toml) or a ledger file.")
    if source.suffix.lower() == ".toml":
        given = [flag for flag, value in _ledger_flags(options).items() if value]
        if given:
            raise SettingsError(f"{source}: {', '.join(given)} {'is' if len(given) == 1 else 'are'} for building straight "
                                "from a ledger; with a settings file, set them in the file (scorewright set).")
        settings = read_settings(source)
        ledger = settings.ledger
        if not ledger.path and not (ledger.table or ledger.query):
            raise SettingsError(f"{source}: no ledger named. Set path under [ledger] to the ledger file "
                                "(or, with an engine, table or query).")
        return settings, settings.ledger_path() if ledger.path else None, None
    if not options.target:
        raise SettingsError(f"{source}: building straight from a ledger needs --target COLUMN (or give a settings file written by 'scorewright init').")
    frame = read_ledger(source)
    settings = command_line_settings(
        frame, ledger=source, target=options.target, bad=options.bad, good=options.good,
        indeterminate=options.indeterminate, id_column=options.id_column, date_column=options.date_column,
        weight_column=options.weight_column, special=options.special, folder=source.resolve().parent, source=source.name,
        leave_out=options.leave_out, out_of_time_from=options.out_of_time_from, holdout=options.holdout,
        rejected=options.rejected, chosen=chosen,
    )
    return settings, source, frame


def _ledger_flags(options: BuildOptions) -> dict[str, object]:
    """The options of the quick path, by the flag that sets each."""
    return {"--target": options.target, "--bad": options.bad, "--good": options.good,
            "--indeterminate": options.indeterminate, "--id": options.id_column, "--date": options.date_column,
            "--weight": options.weight_column, "--special": options.special, "--leave-out": options.leave_out,
            "--out-of-time-from": options.out_of_time_from, "--holdout": options.holdout is not None,
            "--rejected": options.rejected}


def check_output_folder(out: Path, force: bool, *, outputs: tuple[str, ...] | None = None) -> None:
    """Refuse to write into an existing folder without --force; refuse a file in its place.

    With ``outputs`` (the names of a set that replaces the folder whole), also refuse a folder that
    holds anything else: it would be lost with the earlier set.
    """
    if out.exists() and not out.is_dir():
        raise SettingsError(f"{out}: exists and is not a folder. Choose another --out.")
    if out.exists() and any(out.iterdir()) and not force:
        raise SettingsError(f"{out}: the output folder exists and is not empty. Pass --force to write into it, or choose another --out.")
    if outputs is not None and out.is_dir():
        foreign = sorted(entry.name for entry in out.iterdir() if entry.name not in outputs and not _temporary(entry.name))
        if foreign:
            shown = ", ".join(repr(name) for name in foreign[:5]) + (f" and {len(foreign) - 5} more" if len(foreign) > 5 else "")
            raise SettingsError(
                f"{out}: the output folder holds {shown} besides the outputs of an earlier run. The new outputs "
                f"replace the folder whole, so these would be lost: move them, or choose another --out."
            )


def _temporary(name: str) -> bool:
    """A temporary file or folder this tool leaves beside its outputs (from a run that was killed)."""
    return name.startswith(".") and name.endswith((".part", ".old"))


# --------------------------------------------------------------------------------------------
# score


def run_score(options: ScoreOptions, streams: Streams) -> int:
    """Score a ledger with a saved model and write the scored file (batch by batch for a large ledger), or, through
    an engine, write the scores where the engine writes (a Parquet or CSV file, or a table)."""
    if options.out is None:  # a table an engine writes
        return _score(options, streams)
    check_not_an_input(options.out, {**({"the ledger": options.ledger} if options.ledger else {}), "the model file": options.model})
    with claiming(options.out):
        return _score(options, streams)


def _score(options: ScoreOptions, streams: Streams) -> int:
    saved = load_model(options.model)
    place = command_place(options, saved.settings)
    if bool(options.out) == bool(options.out_table):
        raise SettingsError("give where to write the scores: --out FILE, or --out-table NAME through an engine.")
    if options.out_table and place.engine == IN_PROCESS:
        raise SettingsError(f"--out-table {options.out_table}: a table is written through an engine; add --engine duckdb or --engine spark.")
    if options.out:
        if options.out.is_dir() and not (place.engine == SPARK and options.force):
            raise SettingsError(f"{options.out}: is a folder. Give --out a file name ending in .csv or .parquet.")
        if options.out.exists() and not options.force:
            raise SettingsError(f"{options.out}: the file exists. Pass --force to overwrite it, or choose another --out.")
        allowed = (".parquet",) if place.engine == SPARK else (".csv", ".parquet")
        if options.out.suffix.lower() not in allowed:
            raise SettingsError(f"{options.out}: write the scored file as {' or '.join(allowed)}"
                                f"{' (Spark writes a folder of Parquet files)' if place.engine == SPARK else ''}.")
    scorecard = saved.scorecard
    count = saved.settings.reasons.count if options.reasons is None else options.reasons
    if count < 0:
        raise SettingsError(f"--reasons {count}: give 0 or more reasons.")
    if place.engine != IN_PROCESS:
        return _score_in_engine(options, saved, count, place, streams)
    source = options.ledger.name
    columns = ledger_columns(options.ledger)
    wanted = [b.characteristic for b in scorecard.binnings] + ([scorecard.id_column] if scorecard.id_column in columns else [])
    if any(b.characteristic not in columns for b in scorecard.binnings):
        scorecard.codes(pd.DataFrame(columns=columns), source=source)  # raises, naming the missing columns
    batches = open_batches(options.ledger, wanted, saved.settings, stream=options.stream or None)
    unseen: dict[str, dict[str, int]] = {}
    summary = {"rows": 0, "low": np.inf, "high": -np.inf}

    def scored_batches():
        for first_row, frame in batches:
            scored = scorecard.score(frame, reason_count=count, source=source, first_row=first_row)
            tally_unseen(unseen, scorecard.unseen(frame))
            if scorecard.id_column and scorecard.id_column in frame.columns:
                scored.insert(0, scorecard.id_column, frame[scorecard.id_column].array)  # its own array: no Python object per id
            else:  # as a spreadsheet numbers them: the header is row 1
                scored.insert(0, "row", np.arange(first_row + 2, first_row + len(frame) + 2))
            summary["rows"] += len(scored)
            summary["low"] = min(summary["low"], scored["score"].min())
            summary["high"] = max(summary["high"], scored["score"].max())
            yield scored

    write_tables_atomically(scored_batches(), options.out)
    for name, levels in unseen.items():
        _warn_unseen(streams, source, next(b for b in scorecard.binnings if b.characteristic == name), ordered_levels(levels))
    _say_scored(streams, summary, options.out)
    return EXIT_OK


def _score_in_engine(options: ScoreOptions, saved, count: int, place, streams: Streams) -> int:
    """Score every row where the engine holds it, and write the scores through the engine."""
    from .intake.sql import typed_source
    from .rows import connect, sql
    from .rows.sqlrows import TYPED_SOURCE, levels_in, scored_query

    scorecard = saved.scorecard
    engine = connect(place, writable=bool(options.out_table))
    try:
        _, types = typed_source(engine, place, exact=[scorecard.id_column])
        scorecard.codes(pd.DataFrame(columns=list(types)), source=engine.name)  # names a missing characteristic
        if not scorecard.id_column or scorecard.id_column not in types:
            raise LedgerError(
                f"{engine.name}: scores written through an engine are keyed by the application's id, and the ledger has no "
                f"column {scorecard.id_column or '(the model names no id column)'!r}. Add the id column (ledger.id_column of the model)."
            )
        kinds = {b.characteristic: sql.value_kind(types[b.characteristic]) for b in scorecard.binnings}
        query = scored_query(engine, scorecard, kinds, reason_count=count, id_column=scorecard.id_column)
        engine.write(query, path=options.out, table=options.out_table, force=options.force)
        found = engine.arrow(f"SELECT count(*) AS n, min(score) AS low, max(score) AS high FROM ({query}) written").to_pylist()[0]
        for binning in scorecard.binnings:
            levels = levels_in(engine, TYPED_SOURCE, binning, kinds)
            if levels:
                _warn_unseen(streams, engine.name, binning, levels)
    finally:
        engine.close()
    _say_scored(streams, {"rows": found["n"], "low": found["low"], "high": found["high"]},
                options.out or f"table {options.out_table}")
    return EXIT_OK


def _warn_unseen(streams: Streams, source: str, binning, levels) -> None:
    shown = ", ".join(f"{level!r} ({n} rows)" for level, n in list(levels.items())[:5])
    streams.warn(f"{source}, column {binning.characteristic!r}: levels never seen at build time: {shown}"
                 f"{' and more' if len(levels) > 5 else ''}; scored as {binning.labels[binning.unseen_bin]!r}.")


def _say_scored(streams: Streams, summary, written) -> None:
    streams.note(f"scored {summary['rows']:,} applications; scores from {summary['low']:g} to {summary['high']:g}")
    streams.say(f"written: {written}")


def command_place(options, settings: Settings):
    """Where the ledger of score or monitor is: a file in process, or a file, table or query through an engine
    (with the engine's settings of the model's settings file)."""
    engine = options.engine or IN_PROCESS
    if engine not in ENGINES:
        raise SettingsError(f"--engine {engine}: not an engine; use one of {', '.join(ENGINES)}.")
    if (options.table or options.query) and engine == IN_PROCESS:
        flag = "--table" if options.table else "--query"
        raise SettingsError(f"{flag} reads through an engine: add --engine duckdb or --engine spark.")
    if options.table and options.query:
        raise SettingsError("--table and --query are both given; give one (the query can read the table).")
    if options.ledger is None and not (options.table or options.query):
        raise SettingsError("give the ledger: a file, or --table NAME or --query SQL with --engine duckdb or spark.")
    return ledger_place(settings, path="" if options.ledger is None else options.ledger, engine=engine,
                        table=options.table, query=options.query)


def write_tables_atomically(frames, path: Path) -> Path:
    """Write a sequence of tables (same columns) as one CSV or Parquet file, under a temporary name, then rename.

    Both are written with pyarrow (its CSV writer is about ten times faster than pandas'); text
    values are quoted in the CSV, and a text that a spreadsheet would take for a formula gets a
    quote in front (``neutralised``).
    """
    import pyarrow as pa
    import pyarrow.csv as pacsv

    with replacing(path) as temporary:
        writer, schema = None, None
        try:
            for frame in frames:
                if path.suffix.lower() == ".csv":
                    frame = neutralised(frame)
                table = pa.Table.from_pandas(frame, preserve_index=False)
                if writer is None:  # in Parquet a categorical column (reason texts) is the plain text it holds
                    schema = table.schema if path.suffix.lower() == ".csv" else pa.schema(
                        [pa.field(f.name, f.type.value_type if pa.types.is_dictionary(f.type) else f.type)
                         for f in table.schema], metadata=table.schema.metadata)
                    if path.suffix.lower() == ".parquet":
                        import pyarrow.parquet as pq

                        writer = pq.ParquetWriter(temporary, schema)
                    else:
                        writer = pacsv.CSVWriter(temporary, schema)
                writer.write_table(table.cast(schema))
        finally:
            if writer is not None:
                writer.close()
    return path


# A text a spreadsheet opens as a formula starts with one of these (OWASP, "CSV Injection", from memory);
# a plain signed number ('-5', '+1.5e3') stays as it is
FORMULA_START = re.compile(r"[=+\-@\t\r]")
PLAIN_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")


def neutralised(frame: pd.DataFrame) -> pd.DataFrame:
    """Return ``frame`` with a quote (') put before every text a spreadsheet would run as a formula.

    Only text columns change; numbers stay numbers. The usual guard of a CSV file that people open
    in a spreadsheet (the README says so): ``=HYPERLINK(...)`` is written ``'=HYPERLINK(...)``.
    """
    changed = {}
    for name in frame.columns:
        column = frame[name]
        if pd.api.types.is_numeric_dtype(column) or pd.api.types.is_bool_dtype(column):
            continue
        if isinstance(column.dtype, pd.CategoricalDtype):  # a few texts, each judged once
            categories = pd.Series(column.cat.categories)
            fixed = neutralised(pd.DataFrame({name: categories}))[name]
            if not fixed.equals(categories):
                changed[name] = column.cat.rename_categories(fixed.tolist())
            continue
        text = column.astype("string")
        starts = text.str.match(FORMULA_START.pattern, na=False)
        if not starts.any():  # the common case (ids, names): no text starts like a formula, and no number is looked for
            continue
        risky = starts & ~text.str.fullmatch(PLAIN_NUMBER.pattern, na=False)
        if risky.any():
            changed[name] = column.astype(object).where(~risky.to_numpy(), "'" + text.astype(object))
    return frame.assign(**changed) if changed else frame


# --------------------------------------------------------------------------------------------
# monitor


def run_monitor(options: MonitorOptions, streams: Streams) -> int:
    """Check a new ledger against a saved model's baseline; write the monitoring reports."""
    if options.out is None and options.ledger is None:
        raise SettingsError("give the output folder with --out when the ledger is a table or a query.")
    out = options.out or options.ledger.parent / f"{options.ledger.stem}-monitor"
    inputs = {**({"the ledger": options.ledger} if options.ledger else {}), "the model file": options.model}
    check_not_an_input(out, inputs, replaces_folder=True)
    with claiming(out):
        return _monitor(options, streams, out)


def _monitor(options: MonitorOptions, streams: Streams, out: Path) -> int:
    from .monitor import monitor_rows
    from .report.monitor_page import write_monitor
    from .report.monitor_sheets import write_monitor_workbook
    from .report.text import monitor_summary

    check_output_folder(out, options.force, outputs=MONITOR_OUTPUTS)
    saved = load_model(options.model)
    place = command_place(options, saved.settings)
    settings = monitoring_settings(saved.settings, columns_of(place))
    ledger, rows = open_ledger(place, settings, stream=options.stream or None, require_outcome=False)
    source = ledger.source
    try:
        _say_read(streams, ledger, place, rows, settings)
        result = monitor_rows(saved, rows, by_quarter=rows.dated, source=source, protected=ledger.protected)
    finally:
        rows.close()
    for note in (*ledger.notes, *result.notes):
        if note not in ledger.left_out.values() and "left out:" not in note:
            streams.note(note)
    summary = monitor_summary(result, model=options.model)
    command = "scorewright monitor " + " ".join(shlex.quote(str(a)) for a in (options.model, options.ledger or place.name, "--out", out))
    with replacing_folder(out) as folder:  # the set replaces the folder whole, or not at all
        written = [
            write_text_atomically(folder / "monitor.txt", summary + "\n"),
            write_monitor(result, saved, folder / "monitor.html", model_path=options.model,
                          ledger_fingerprint=ledger.fingerprint, generated_by=command),
            write_monitor_workbook(result, saved, folder / "monitor.xlsx", model_path=options.model,
                                   ledger_fingerprint=ledger.fingerprint),
        ]
    streams.say(summary)
    streams.say()
    streams.say("written: " + ", ".join(str(out / path.name) for path in written))
    failing = {"watch": ("watch", "act"), "act": ("act",)}.get(options.fail_on or "", ())
    return EXIT_CHECK_FAILED if result.status in failing else EXIT_OK


def monitoring_settings(settings: Settings, columns) -> Settings:
    """Return the model's settings fitted to a new ledger: no samples, role columns only where present."""
    columns = {str(c) for c in columns}
    ledger = settings.ledger

    def present(column: str) -> str:
        return column if column in columns else ""

    return settings.replace(
        ledger={"id_column": present(ledger.id_column), "date_column": present(ledger.date_column),
                "weight_column": present(ledger.weight_column),
                "leave_out": tuple(c for c in ledger.leave_out if c in columns)},
        outcome={"column": present(settings.outcome.column)},
        samples={"holdout_fraction": 0.0, "out_of_time_from": ""},
        # a characteristic the new ledger lacks is named by the scorecard's own check, which says why it matters
        characteristics={name: spec for name, spec in settings.characteristics.items() if name in columns},
    )


# --------------------------------------------------------------------------------------------
# export

EXPORT_FORMS = {".pmml": "pmml", ".xml": "pmml", ".sql": "sql", ".py": "python"}


def run_export(options: ExportOptions, streams: Streams) -> int:
    """Write a saved scorecard as PMML, one SQL query or a standard-library Python file."""
    out = options.out
    form = options.form or EXPORT_FORMS.get(out.suffix.lower())
    if form is None:
        raise SettingsError(f"{out}: say the form with --form pmml, sql or python, or end the file name in "
                            ".pmml, .sql or .py.")
    if out.is_dir():
        raise SettingsError(f"{out}: is a folder. Give --out the name of the file to write, e.g. {out / ('scorecard.' + form.replace('python', 'py'))}.")
    check_not_an_input(out, {"the model file": options.model})
    with claiming(out):
        return _export(options, streams, form)


def _export(options: ExportOptions, streams: Streams, form: str) -> int:
    from .exports import export_model, pmml_text, python_text, sql_text

    out = options.out
    if out.exists() and not options.force:
        raise SettingsError(f"{out}: the file exists. Pass --force to overwrite it, or choose another --out.")
    saved = load_model(options.model)
    model = export_model(saved, reasons=options.reasons)
    if form == "pmml":
        text = pmml_text(model)
    elif form == "python":
        text = python_text(model)
    else:
        id_column = options.id_column or model.id_column
        if not id_column:
            raise SettingsError(f"{options.model}: the model has no id column. Name the id column of the table of "
                                "applications with --id COLUMN.")
        text = sql_text(model, table=options.table, id_column=id_column, materialize=options.materialize)
    write_text_atomically(out, text)
    streams.note(f"{form} scorecard of {len(model.characteristics)} characteristics, model checksum {model.fingerprint[:12]}…")
    streams.say(f"written: {out}")
    return EXIT_OK


# --------------------------------------------------------------------------------------------
# set


def run_set(options: SetOptions, streams: Streams) -> int:
    """Set keys of a settings file, keeping its comments; the result is validated before writing."""
    if not options.settings.exists():
        raise SettingsError(f"{options.settings}: settings file not found. Create one with 'scorewright init LEDGER --target COLUMN'.")
    changes = dict(parse_assignment(text) for text in options.assignments)
    edit_settings(options.settings, changes)
    for key, value in changes.items():
        streams.say(f"{options.settings}: {key} = {value!r}")
    return EXIT_OK


def parse_assignment(text: str) -> tuple[str, object]:
    """Split 'key=value' and read the value as a TOML value (a bare word is text)."""
    key, equals, value = text.partition("=")
    if not equals or not key.strip() or "." not in key:
        raise SettingsError(f"{text!r}: write KEY=VALUE with a dotted key, e.g. samples.holdout_fraction=0.25.")
    try:
        parsed = tomllib.loads(f"value = {value.strip()}")["value"]
    except tomllib.TOMLDecodeError:
        parsed = value.strip()
    return key.strip(), parsed
