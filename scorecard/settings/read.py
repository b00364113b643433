"""Reading and validating a settings file: every key is checked once, where it enters.

An unknown key, a wrong type or an impossible value is a ``SettingsError`` that names the key
and says what it must be.
"""

from __future__ import annotations

import dataclasses
import difflib
import math
import os
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..errors import SettingsError
from ..terms import IN_PROCESS
from .renamed import RENAMED_SHAPES, renamed_key, renamed_key_message
from .schema import SECTIONS, CharacteristicSettings, ProposalSettings, Settings


def read_settings(path: str | os.PathLike[str]) -> Settings:
    """Read and validate a settings file.

    Parameters
    ----------
    path : path-like
        The TOML settings file.

    Returns
    -------
    Settings
        The validated settings; ``folder`` is the file's folder.

    Raises
    ------
    SettingsError
        The file is missing or not valid TOML, or a key is unknown, of the wrong type or impossible.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise SettingsError(f"{path}: settings file not found. Create one with 'scorewright init LEDGER --target COLUMN'.") from None
    except (OSError, UnicodeDecodeError) as error:
        raise SettingsError(f"{path}: cannot read the settings file ({error}).") from None
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise SettingsError(f"{path}: not a valid TOML settings file: {error}. Fix that line and run again.") from None
    return settings_from_mapping(document, source=str(path), folder=str(path.parent))


def settings_from_mapping(document: Mapping[str, Any], *, source: str = "settings", folder: str = "") -> Settings:
    """Validate a nested mapping (as read from TOML) and return ``Settings``.

    Raises
    ------
    SettingsError
        A key is unknown, of the wrong type or impossible; the message names it.
    """
    allowed = [*SECTIONS, "characteristics"]
    sections: dict[str, Any] = {}
    for name, table in document.items():
        if name not in allowed:
            raise SettingsError(_unknown(source, name, allowed, where="section"))
        if not isinstance(table, Mapping):
            raise SettingsError(f"{source}: [{name}] must be a table of keys, not {_type_name(table)}.")
        if name == "characteristics":
            sections[name] = {
                str(char): _section(CharacteristicSettings, spec, source, f"characteristics.{char}")
                for char, spec in table.items()
            }
        else:
            sections[name] = _section(SECTIONS[name], table, source, name)
    settings = Settings(**sections, folder=folder)
    _check_consistency(settings, source)
    return settings


def _section(cls: type, table: Any, source: str, where: str) -> Any:
    """Validate one table against a settings dataclass."""
    if not isinstance(table, Mapping):
        raise SettingsError(f"{source}: [{where}] must be a table of keys, not {_type_name(table)}.")
    fields = {f.name: f for f in dataclasses.fields(cls)}
    values = {}
    for key, value in table.items():
        if key not in fields and (new := renamed_key(where, key)):
            raise SettingsError(renamed_key_message(source, where, key, new, value))
        if key not in fields:
            raise SettingsError(_unknown(source, key, list(fields), where=f"key in [{where}]"))
        if fields[key].type in ("ProposalSettings | None", ProposalSettings):  # a table of its own
            values[key] = _section(ProposalSettings, value, source, f"{where}.{key}")
            continue
        values[key] = _coerce(fields[key], value, source, f"{where}.{key}")
    return cls(**values)


def _coerce(spec: dataclasses.Field, value: Any, source: str, where: str) -> Any:
    """Check a value's type against its field and turn lists into tuples."""
    wanted = spec.type if isinstance(spec.type, str) else str(spec.type)
    converted = _convert(wanted, value)
    if converted is _WRONG:
        raise SettingsError(
            f"{source}: {where} = {value!r} has the wrong type: expected {_describe_type(wanted)}. Correct it in the settings file."
        )
    check, need = spec.metadata.get("check"), spec.metadata.get("need")
    if check is not None and not check(converted):
        raise SettingsError(f"{source}: {where} = {value!r} is not possible: it must be {need}.{_hint(spec.name, value)} "
                            "Correct it in the settings file.")
    return converted


def _hint(key: str, value: Any) -> str:
    """What an impossible bad_rate_shape most likely meant: an old value."""
    if key != "bad_rate_shape" or value not in RENAMED_SHAPES:
        return ""
    return f" {value!r} is the old word; the shape it meant is {RENAMED_SHAPES[value]!r}."


_WRONG = object()


def _convert(wanted: str, value: Any) -> Any:
    """Convert a TOML value to the field's type, or return _WRONG."""
    number = isinstance(value, (int, float)) and not isinstance(value, bool)
    if wanted == "str":
        return value if isinstance(value, str) else _WRONG
    if wanted == "int":
        return value if isinstance(value, int) and not isinstance(value, bool) else _WRONG
    if wanted == "float":
        return float(value) if number and math.isfinite(value) else _WRONG
    if wanted == "bool":
        return value if isinstance(value, bool) else _WRONG
    if wanted == "str | int":
        return value if isinstance(value, str) or (isinstance(value, int) and not isinstance(value, bool)) else _WRONG
    if wanted == "tuple[tuple[float, str], ...]" and isinstance(value, Mapping):
        return _special_values(value)
    if not isinstance(value, list):
        return _WRONG
    if wanted == "tuple[str, ...]":
        return tuple(str(v) for v in value) if all(isinstance(v, (str, int)) and not isinstance(v, bool) for v in value) else _WRONG
    if wanted in ("tuple[float, ...]", "tuple[float, ...] | None"):
        ok = all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in value)
        return tuple(float(v) for v in value) if ok else _WRONG
    if wanted == "tuple[tuple[str, ...], ...] | None":
        ok = all(isinstance(g, list) and all(isinstance(v, (str, int)) and not isinstance(v, bool) for v in g) for g in value)
        return tuple(tuple(str(v) for v in g) for g in value) if ok else _WRONG
    if wanted == "tuple[tuple[float, str], ...]":
        return _special_values(value)
    if wanted == "tuple[str | int, ...]":
        ok = all(isinstance(v, str) or (isinstance(v, int) and not isinstance(v, bool)) for v in value)
        return tuple(value) if ok else _WRONG
    raise TypeError(f"no converter for {wanted}")  # our own invariant: every field type is handled


def _special_values(value: Any) -> Any:
    """Special values with their meanings: from a table {-1 = "no record"}, a list of codes [-1, 999] (no
    meanings), or a list of [code, meaning] pairs (as a model file holds them); or _WRONG."""
    def number(item: Any) -> float | None:
        if isinstance(item, str):
            try:
                item = float(item)
            except ValueError:
                return None
        ok = isinstance(item, (int, float)) and not isinstance(item, bool) and math.isfinite(item)
        return float(item) if ok else None

    if isinstance(value, Mapping):
        pairs = [(number(code), meaning) for code, meaning in value.items()]
    else:
        pairs = [(number(item[0]), item[1]) if isinstance(item, list) and len(item) == 2 else (number(item), "")
                 for item in value]
    if any(code is None or not isinstance(meaning, str) for code, meaning in pairs):
        return _WRONG
    return tuple(pairs)


def _describe_type(wanted: str) -> str:
    return {
        "str": "text in quotes",
        "int": "a whole number",
        "float": "a number",
        "bool": "true or false",
        "str | int": "'own' or a class number",
        "tuple[str, ...]": "a list of values, e.g. [\"a\", \"b\"]",
        "tuple[float, ...]": "a list of numbers, e.g. [-1, 999]",
        "tuple[tuple[float, str], ...]": "a table of codes and their meanings, e.g. {-1 = \"no record\"}, or a list of codes",
        "tuple[float, ...] | None": "a list of numbers, e.g. [12, 36, 60]",
        "tuple[tuple[str, ...], ...] | None": "a list of lists of levels, e.g. [[\"own\"], [\"rent\", \"other\"]]",
        "tuple[str | int, ...]": "a list of 'own' or class numbers",
    }[wanted]


def _check_consistency(settings: Settings, source: str) -> None:
    """Checks that involve more than one key."""
    checks = settings.checks
    if checks.psi_act <= checks.psi_watch:
        raise SettingsError(f"{source}: checks.psi_act ({checks.psi_act}) must be larger than checks.psi_watch ({checks.psi_watch}).")
    if checks.p_act >= checks.p_watch:
        raise SettingsError(f"{source}: checks.p_act ({checks.p_act}) must be smaller than checks.p_watch ({checks.p_watch}).")
    if list(checks.grades) != sorted(set(checks.grades)):
        raise SettingsError(f"{source}: checks.grades must be strictly ascending score boundaries.")
    roles = {"outcome.column": settings.outcome.column, "ledger.id_column": settings.ledger.id_column,
             "ledger.date_column": settings.ledger.date_column, "ledger.weight_column": settings.ledger.weight_column,
             "rejects.decision_column": settings.rejects.decision_column}
    taken: dict[str, str] = {}
    for key, column in roles.items():
        if column and column in taken:
            raise SettingsError(f"{source}: {key} and {taken[column]} both name column {column!r}; each role needs its own column.")
        taken[column] = key
    ledger = settings.ledger
    if ledger.table and ledger.query:
        raise SettingsError(f"{source}: ledger.table and ledger.query are both set; give one (the query can read the table).")
    if ledger.engine == IN_PROCESS and (ledger.table or ledger.query):
        key = "ledger.table" if ledger.table else "ledger.query"
        raise SettingsError(f"{source}: {key} needs an engine that reads tables: set ledger.engine = \"duckdb\" or \"spark\".")
    if settings.selection.p_enter > settings.selection.p_remove:
        raise SettingsError(
            f"{source}: selection.p_enter ({settings.selection.p_enter}) is above selection.p_remove "
            f"({settings.selection.p_remove}): a characteristic could enter and be removed again for ever. "
            "Keep p_enter at or below p_remove."
        )
    outcome = settings.outcome
    seen: dict[str, str] = {}
    for role in ("bad", "good", "indeterminate", "rejected"):
        for value in getattr(outcome, role):
            if value in seen:
                raise SettingsError(f"{source}: outcome value {value!r} is listed both as {seen[value]} and as {role}. Keep it in one list.")
            seen[value] = role
    rejects = settings.rejects
    if bool(rejects.decision_column) != bool(rejects.rejected):
        raise SettingsError(
            f"{source}: rejects.decision_column and rejects.rejected go together: name the column that holds the "
            "decision and the values in it that mean rejected, or neither."
        )
    for name, char in settings.characteristics.items():
        where = f"characteristics.{name}"
        if char.cuts is not None:
            if list(char.cuts) != sorted(set(char.cuts)):
                raise SettingsError(f"{source}: {where}.cuts must be strictly ascending numbers, got {list(char.cuts)}.")
        if char.classes is not None:
            # one class is allowed, as cuts = [] is: the proposal of a characteristic whose levels do not differ
            if not char.classes or not all(char.classes):
                raise SettingsError(f"{source}: {where}.classes needs at least 1 class, and every class at least 1 level.")
            levels = [level for class_levels in char.classes for level in class_levels]
            repeated = _repeated(levels)
            if repeated:
                raise SettingsError(f"{source}: {where}.classes lists level {repeated[0]!r} in more than one class. Keep it in one.")
        if char.cuts is not None and char.classes is not None:
            raise SettingsError(f"{source}: {where} has both cuts and classes; a numeric characteristic takes cuts, a categorical one classes.")
        for key, value in [("missing", char.missing), ("unseen", char.unseen), *(("specials", v) for v in char.specials)]:
            if isinstance(value, str) and value not in ("own", "worst"):
                raise SettingsError(f"{source}: {where}.{key} = {value!r} is not possible: use 'own' or a class number (1 = first).")
            if isinstance(value, int) and value < 1:
                raise SettingsError(f"{source}: {where}.{key} = {value} is not possible: class numbers start at 1.")
        if char.specials and len(char.specials) != len(char.special_values):
            raise SettingsError(f"{source}: {where}.specials has {len(char.specials)} entries but special_values has {len(char.special_values)}; give one per special value.")


def _unknown(source: str, key: str, allowed: list[str], *, where: str) -> str:
    close = difflib.get_close_matches(key, allowed, n=1)
    hint = f" Did you mean {close[0]!r}?" if close else f" Known: {', '.join(allowed)}."
    return f"{source}: unknown {where} {key!r}.{hint}"


def _type_name(value: Any) -> str:
    return type(value).__name__


def _repeated(levels: list[str]) -> list[str]:
    """The levels listed more than once, sorted (one pass: a classing may list a million levels)."""
    seen, repeated = set(), set()
    for level in levels:
        (repeated if level in seen else seen).add(level)
    return sorted(repeated)
