"""Names the tool used before and the names it uses now: the one place the old words are kept.

A settings file with an old key is refused with a message that names the new key (the user's
decision is never read under a guess); a model file of format 1 is read by carrying its old names
over to the new ones (our own file, whose content is checked by its checksum first).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from .text import toml_value

# (section, old key) -> new key; "characteristics" stands for every [characteristics.NAME] table
RENAMED_KEYS = {
    ("classing", "trend"): "bad_rate_shape",
    ("classing", "max_groups"): "max_classes",
    ("classing", "min_group_share"): "min_class_share",
    ("characteristics", "trend"): "bad_rate_shape",
    ("characteristics", "groups"): "classes",
}

# the old option's values (the WoE order across the value) -> the bad-rate shape they meant;
# WoE = ln(good share / bad share), so a WoE that ascends is a bad rate that falls
RENAMED_SHAPES = {"auto": "from-data", "ascending": "falls", "descending": "rises", "none": "any", "": ""}

# keys of a binning in a model file of format 1 -> format 2
RENAMED_BINNING_KEYS = {"groups": "classes", "fallback_bin": "unseen_bin", "trend": "bad_rate_shape"}


def renamed_key(section: str, key: str) -> str | None:
    """The key's new name when ``key`` is an old one in ``[section]`` (or any ``[characteristics.NAME]``)."""
    return RENAMED_KEYS.get((section.split(".")[0], key))


def renamed_key_message(source: str, where: str, key: str, new: str, value: Any) -> str:
    """Say that a key was renamed, and write the line as it reads now."""
    shown = RENAMED_SHAPES.get(value, value) if new == "bad_rate_shape" else value
    try:
        line = f"{new} = {toml_value(shown)}"
    except TypeError:  # a value of no TOML type: the new key is what the message is about
        line = f"{new} = ..."
    meaning = f" ({value!r} there means {shown!r})" if new == "bad_rate_shape" and shown != value else ""
    return (f"{source}: [{where}] {key} is an old name: the key is now {new}. Write {line} instead{meaning}, "
            "then run again.")


def upgrade_settings(document: Mapping[str, Any]) -> dict[str, Any]:
    """Carry the settings of a format-1 model file over to the present names and values."""
    upgraded = {}
    for section, table in document.items():
        if section == "characteristics":
            upgraded[section] = {name: _upgraded_table("characteristics", spec) for name, spec in table.items()}
        else:
            upgraded[section] = _upgraded_table(section, table)
    return upgraded


def upgrade_binning(data: Mapping[str, Any]) -> dict[str, Any]:
    """Carry a format-1 binning (model file) over to the present keys and values."""
    upgraded = {RENAMED_BINNING_KEYS.get(key, key): value for key, value in data.items()}
    upgraded["bad_rate_shape"] = RENAMED_SHAPES[upgraded["bad_rate_shape"]]
    return upgraded


def _upgraded_table(section: str, table: Mapping[str, Any]) -> dict[str, Any]:
    upgraded = {}
    for key, value in table.items():
        new = RENAMED_KEYS.get((section, key), key)
        upgraded[new] = RENAMED_SHAPES.get(value, value) if new == "bad_rate_shape" else value
    return upgraded
