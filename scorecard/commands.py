"""The work of each ``scorewright`` command, given its options (the parsing is in ``cli.py``).

Each ``run_*`` function does its work and catches nothing: ``cli.main`` turns our errors into
messages and exit codes. Heavy libraries are imported here, not in ``cli.py``, so that
``scorewright --help`` stays fast.
"""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path

from .build import ClassedLedger, class_ledger
from .classing import classing_settings_values
from .cli import EXIT_OK, InitOptions, Streams
from .errors import LedgerError, SettingsError
from .ledger import (
    NUMERIC, closest_names, default_outcome_mapping, detect_kind, fingerprint_of, looks_like_identifier_or_date,
    outcome_key, prepare_ledger, read_ledger,
)
from .settings import CharacteristicSettings, Settings, write_settings


def run_init(options: InitOptions, streams: Streams) -> int:
    """Read a ledger, propose a classing, write the settings file and print the IV table."""
    out = options.out
    if out.exists() and not options.force:
        raise SettingsError(f"{out}: the settings file exists already. Pass --force to overwrite it, or choose another name with --out.")
    frame = read_ledger(options.ledger)
    source = options.ledger.name
    settings = _initial_settings(frame, options, source)
    streams.note(f"read {len(frame):,} rows and {frame.shape[1]} columns from {source}")
    ledger = prepare_ledger(frame, settings, source=source, fingerprint=fingerprint_of(options.ledger, len(frame)))
    classed = class_ledger(ledger, settings, progress=lambda items: streams.progress(items, "classing"))
    characteristics, comments = _proposals(ledger, classed, settings)
    settings = replace(settings, characteristics=characteristics)
    header = (
        f"scorewright settings for {source}: the record of every analyst decision.\n"
        "Edit any value, then run: scorewright build " + str(out) + "\n"
        "Every classing below is a proposal (the grouping with the largest information value that meets the limits);\n"
        "change cuts or groups to decide yourself. Keys left out take their defaults."
    )
    write_settings(settings, out, comments=comments, header=header)
    streams.say(iv_table(classed, ledger.left_out))
    streams.say()
    streams.say(f"settings written to {out}")
    return EXIT_OK


def _initial_settings(frame, options: InitOptions, source: str) -> Settings:
    """Settings from the command line: outcome mapping, role columns, special values."""
    columns = [str(c) for c in frame.columns]
    if options.target not in columns:
        raise LedgerError(f"{source}: outcome column {options.target!r} not found.{closest_names(options.target, columns)}")
    bad, good = _outcome_lists(frame[options.target], options, source)
    id_column = options.id_column if options.id_column is not None else _detect_role(frame, options, "identifier")
    date_column = options.date_column if options.date_column is not None else _detect_role(frame, options, "dates")
    ledger_path = os.path.relpath(options.ledger.resolve(), options.out.resolve().parent)
    specials = _special_values(options.special, columns, source)
    return Settings().replace(
        ledger={"path": ledger_path, "id_column": id_column or "", "date_column": date_column or "",
                "weight_column": options.weight_column or ""},
        outcome={"column": options.target, "bad": bad, "good": good, "indeterminate": options.indeterminate},
        characteristics={name: CharacteristicSettings(special_values=values) for name, values in specials.items()},
    )


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
    absent = [v for v in named if v not in values]
    if absent:
        raise LedgerError(
            f"{source}, column {options.target!r}: value {absent[0]!r} given on the command line does not occur. "
            f"The column holds {', '.join(repr(v) for v in values[:10])}."
        )
    rest = tuple(v for v in values if v not in named)
    if options.bad and options.good:
        return tuple(options.bad), tuple(options.good)  # any value left over is named by prepare_ledger
    if options.bad:
        return tuple(options.bad), rest
    return rest, tuple(options.good)


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


def _special_values(entries, columns, source: str) -> dict[str, tuple[float, ...]]:
    specials = {}
    for entry in entries:
        name, _, text = entry.partition("=")
        if not text or name not in columns:
            raise SettingsError(
                f"--special {entry!r}: write COLUMN=VALUE[,VALUE], with COLUMN one of the ledger's columns, e.g. --special months_since_arrears=-1."
            )
        try:
            specials[name] = tuple(float(v) for v in text.split(","))
        except ValueError:
            raise SettingsError(f"--special {entry!r}: special values must be numbers, e.g. -1 or 999.") from None
    return specials


def _proposals(ledger, classed: ClassedLedger, settings: Settings):
    """Return the characteristics' settings (kind, classing) and a comment line for each."""
    characteristics, comments = {}, {}
    for char in classed.characteristics:
        spec = settings.characteristic(char.name)
        values = classing_settings_values(char.binning)
        characteristics[char.name] = replace(
            spec, kind=char.binning.kind, use=spec.use or "auto",
            special_values=ledger.characteristic(char.name).special_values, **values,
        )
        evidence = char.evidence
        comment = f"IV {evidence.iv:.4f} ({evidence.strength}) on the development sample; {char.binning.n_bins} bins"
        if evidence.leakage_flag:
            comment += (
                f"\nFLAGGED: IV above {settings.selection.leakage_iv} can mean the column is recorded after the "
                "decision (leakage). Check it is known at application time; if not, set use = \"never\"."
            )
        comments[char.name] = comment
    roles = {settings.ledger.id_column, settings.ledger.date_column}
    for name, why in ledger.left_out.items():
        if name in roles:
            continue
        characteristics[name] = CharacteristicSettings(use="never")
        comments[name] = f"left out: {why}"
    return characteristics, comments


def iv_table(classed: ClassedLedger, left_out: dict[str, str] | None = None) -> str:
    """Return an aligned text table of characteristics sorted by IV, strongest first."""
    rows = [("characteristic", "kind", "bins", "IV", "strength", "")]
    ranked = sorted(classed.characteristics, key=lambda c: -c.evidence.iv)
    for char in ranked:
        flag = "check for leakage" if char.evidence.leakage_flag else ""
        kind = "numeric" if char.binning.kind == NUMERIC else "categorical"
        rows.append((char.name, kind, str(char.binning.n_bins), f"{char.evidence.iv:.4f}", char.evidence.strength, flag))
    widths = [max(len(row[i]) for row in rows) for i in range(len(rows[0]))]
    aligned = ["  ".join(cell.rjust(w) if i in (2, 3) else cell.ljust(w) for i, (cell, w) in enumerate(zip(row, widths))).rstrip()
               for row in rows]
    lines = [aligned[0], "  ".join("-" * w for w in widths).rstrip(), *aligned[1:]]
    for name, why in (left_out or {}).items():
        lines.append(f"{name}: left out ({why})")
    return "\n".join(lines)

