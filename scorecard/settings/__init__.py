"""The settings file: the record of every analyst decision.

A settings file is TOML. ``scorewright init`` writes one with proposals; the analyst edits it
(by hand or with ``scorewright set``); ``scorewright build`` is then reproducible from it.

- ``schema``: every key with its default, meaning and check (the README's table is made from it);
- ``read``: reading and validating a file, once, where it enters;
- ``write``: writing a whole file and editing keys in place, with ``tomlkit`` (comments kept);
- ``text``: the text form of a value in the file.
"""

from .read import read_settings, settings_from_mapping
from .schema import (
    SECTIONS, CharacteristicSettings, CheckSettings, ClassingSettings, FitSettings, LedgerSettings, OutcomeSettings,
    ProposalSettings, ReasonSettings, RejectSettings, ReportSettings, SampleSettings, ScalingSettings, SelectionSettings,
    Settings, settings_reference,
)
from .text import toml_value
from .write import edit_settings, settings_to_mapping, settings_to_toml, write_settings

__all__ = [
    "SECTIONS", "CharacteristicSettings", "CheckSettings", "ClassingSettings", "FitSettings", "LedgerSettings",
    "OutcomeSettings", "ProposalSettings", "ReasonSettings", "RejectSettings", "ReportSettings", "SampleSettings",
    "ScalingSettings", "SelectionSettings",
    "Settings", "edit_settings", "read_settings", "settings_from_mapping", "settings_reference", "settings_to_mapping",
    "settings_to_toml", "toml_value", "write_settings",
]
