"""Writing and editing settings files, with the style-preserving TOML library ``tomlkit``.

``write_settings`` writes a whole file (every key, its meaning as a comment); ``edit_settings``
changes some keys of an existing file as an analyst would by hand: every comment, blank line
and layout is kept, and the result is checked before it replaces the file.
"""

from __future__ import annotations

import dataclasses
import os
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import tomlkit
from tomlkit.items import Item, Table

from ..errors import SettingsError
from ..files import write_text_atomically
from .read import settings_from_mapping
from .schema import SECTIONS, CharacteristicSettings, ProposalSettings, Settings
from .text import toml_value


def settings_to_mapping(settings: Settings) -> dict[str, Any]:
    """Return the settings as nested plain values, the shape of the TOML file (None values left out)."""
    document: dict[str, Any] = {name: dataclasses.asdict(getattr(settings, name)) for name in SECTIONS}
    document["characteristics"] = {name: _without_none(dataclasses.asdict(spec)) for name, spec in settings.characteristics.items()}
    return _as_lists(document)


def _without_none(table: dict[str, Any]) -> dict[str, Any]:
    """A characteristic's keys (and its proposal's) without those that are None (TOML has no None)."""
    return {key: _without_none(value) if isinstance(value, dict) else value for key, value in table.items()
            if value is not None}


def _as_lists(value: Any) -> Any:
    """Turn tuples into lists throughout, as TOML reading gives them."""
    if isinstance(value, Mapping):
        return {key: _as_lists(item) for key, item in value.items()}
    if isinstance(value, (tuple, list)):
        return [_as_lists(item) for item in value]
    return value


def write_settings(settings: Settings, path: str | os.PathLike[str], *, comments: Mapping[str, str] | None = None,
                   header: str = "") -> Path:
    """Write settings as TOML, atomically, every key spelled out.

    Parameters
    ----------
    settings : Settings
        What to write.
    path : path-like
        Destination; written under a temporary name in the same folder, then renamed.
    comments : mapping, optional
        A comment line per characteristic (its IV, why it was left out, ...), keyed by name.
    header : str
        Comment lines put at the top of the file.

    Returns
    -------
    Path
        The path written.
    """
    text = settings_to_toml(settings, comments=comments, header=header)
    # read back before writing, so that no file this tool writes can be refused when it is read
    settings_from_mapping(tomllib.loads(text), source=str(path))
    return write_text_atomically(Path(path), text)


def settings_to_toml(settings: Settings, *, comments: Mapping[str, str] | None = None, header: str = "") -> str:
    """Return the TOML text of ``settings`` (round-trips through ``settings_from_mapping``).

    Every section key is written with its meaning as a comment; a characteristic's keys only
    where they differ from the defaults (kind and use always), after its comment lines.
    """
    comments = comments or {}
    document = tomlkit.document()
    for line in header.splitlines():
        document.add(tomlkit.comment(line))
    for name, cls in SECTIONS.items():
        section = getattr(settings, name)
        table = _table()
        for spec in dataclasses.fields(cls):
            table.add(spec.name, _item(getattr(section, spec.name), comment=spec.metadata["meaning"]))
        document.add(name, table)
    characteristics = tomlkit.table(is_super_table=True)
    defaults = CharacteristicSettings()
    for name, char in settings.characteristics.items():
        # the first table follows the line the super table opens; the others get a blank line of their own
        table = _table(indent="\n" if len(characteristics) else "")
        for line in comments.get(name, "").splitlines():
            table.add(tomlkit.comment(line))
        for spec in dataclasses.fields(CharacteristicSettings):
            value = getattr(char, spec.name)
            if value is None or spec.name == "proposal" or (value == getattr(defaults, spec.name) and spec.name not in ("kind", "use")):
                continue
            table.add(spec.name, _special_values_item(value) if spec.name == "special_values" else _item(value))
        if char.proposal is not None:
            table.add("proposal", _proposal_table(char.proposal))
        characteristics.add(name, table)
    if len(characteristics):
        document.add("characteristics", characteristics)
    return document.as_string().strip("\n") + "\n"


def _special_values_item(pairs) -> Item:
    """Special values as the file writes them: {"-1" = "no delinquency on record"}, or [-1, 999] when none has a meaning."""
    if not any(meaning for _, meaning in pairs):
        return _item([code for code, _ in pairs])
    body = ", ".join(f"{toml_value(toml_value(code))} = {toml_value(meaning)}" for code, meaning in pairs)
    item = tomlkit.parse(f"value = {{{body}}}")["value"]
    item.trivia.trail = "\n"
    return item


def _proposal_table(proposal: ProposalSettings) -> Table:
    """The [characteristics.NAME.proposal] table: the keys the tool proposed, under a line that says what it is."""
    table = _table()
    table.add(tomlkit.comment("what the tool proposed; leave it as written: the build compares your classing with it"))
    defaults = ProposalSettings()
    for spec in dataclasses.fields(ProposalSettings):
        value = getattr(proposal, spec.name)
        if value is None or (value == getattr(defaults, spec.name) and spec.name in ("missing", "specials", "notes")):
            continue
        item = _item(value)
        if spec.name == "notes":
            item.multiline(True)  # one sentence a line
        table.add(spec.name, item)
    return table


def edit_settings(path: str | os.PathLike[str], changes: Mapping[str, Any]) -> Path:
    """Set keys of a settings file, keeping its comments and layout, and check the result.

    Parameters
    ----------
    path : path-like
        The settings file; rewritten atomically.
    changes : mapping
        Dotted keys to new values, e.g. ``{"samples.out_of_time_from": "2025-01-01",
        "characteristics.collections_status.use": "never"}``.

    Returns
    -------
    Path

    Raises
    ------
    SettingsError
        The file is not valid TOML, or the edited file does not validate (an unknown key or an
        impossible value).
    """
    path = Path(path)
    try:
        document = tomlkit.parse(path.read_text(encoding="utf-8"))
    except tomlkit.exceptions.ParseError as error:
        raise SettingsError(f"{path}: not a valid TOML settings file: {error}. Fix that line and run again.") from None
    for dotted, value in changes.items():
        section, _, key = dotted.rpartition(".")
        _set(_section_table(document, _split_section(section)), key, value)
    text = document.as_string()
    settings_from_mapping(tomllib.loads(text), source=str(path), folder=str(path.parent))
    return write_text_atomically(path, text)


def _set(table: Table, key: str, value: Any) -> None:
    """Set ``key`` in ``table``; a key already there keeps its comment."""
    new = _item(value)
    old = table.get(key)
    if isinstance(old, Item) and old.trivia.comment:
        new.trivia.comment_ws, new.trivia.comment = old.trivia.comment_ws, old.trivia.comment
    if key in table:
        table[key] = new
    else:
        table.add(key, new)


def _section_table(document: tomlkit.TOMLDocument, parts: list[str]) -> Table:
    """The table of ``[section]`` or ``[characteristics.NAME]``, added at the end of the file when missing."""
    container: Any = document
    for depth, part in enumerate(parts):
        if part not in container:
            last = depth == len(parts) - 1
            container.add(part, _table(indent="\n") if last else tomlkit.table(is_super_table=True))
        container = container[part]
    return container


def _split_section(section: str) -> list[str]:
    """Split 'characteristics.name' into its parts; a characteristic's name may itself hold dots,
    and may be quoted as the file writes it ('characteristics."a b"')."""
    first, _, rest = section.partition(".")
    if first != "characteristics" or not rest:
        return [first]
    if len(rest) >= 2 and rest[0] == rest[-1] and rest[0] in "\"'":
        rest = tomllib.loads(f"name = {rest}")["name"] if rest[0] == '"' else rest[1:-1]
    return [first, rest]


def _item(value: Any, *, comment: str = "") -> Item:
    """A TOML item whose text is ``toml_value(value)``, on a line of its own, with a comment after two spaces."""
    item = tomlkit.parse(f"value = {toml_value(value)}")["value"]
    item.trivia.trail = "\n"
    if comment:
        item.comment(comment)
        item.trivia.comment_ws = "  "
    return item


def _table(*, indent: str = "\n") -> Table:
    """A new table with a blank line before its header."""
    table = tomlkit.table()
    table.trivia.indent = indent
    return table
