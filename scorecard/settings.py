"""The settings file: the record of every analyst decision.

A settings file is TOML. ``scorewright init`` writes one with proposals; the analyst edits it;
``scorewright build`` is then reproducible from it. Every key is a field of one of the frozen
dataclasses below, with its default and a one-line meaning in the field's metadata; the README's
settings table is generated from the same metadata (``settings_reference``), so the two cannot
disagree. Loading validates every key once: an unknown key, a wrong type or an impossible value is
a ``SettingsError`` that names the key.
"""

from __future__ import annotations

import dataclasses
import datetime
import difflib
import math
import os
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import SettingsError
from .files import write_text_atomically

# --------------------------------------------------------------------------------------------
# The schema


def _key(default: Any, meaning: str, check: Callable[[Any], bool] | None = None, need: str = "") -> Any:
    """A settings key: its default, its meaning, and an optional check with what it needs."""
    metadata = {"meaning": meaning, "check": check, "need": need}
    if isinstance(default, (list, dict)):
        raise TypeError("use tuples for sequence defaults")  # our own invariant: frozen values only
    return field(default=default, metadata=metadata)


def _share(value: float) -> bool:
    return 0.0 <= value <= 1.0


def _one_of(*words: str) -> Callable[[Any], bool]:
    return lambda value: value in words


@dataclass(frozen=True)
class LedgerSettings:
    """Where the ledger is and which of its columns play special roles."""

    path: str = _key("", "ledger file (CSV, Parquet or .xlsx), relative to the settings file")
    id_column: str = _key("", "column identifying an application; never a characteristic, never in a report")
    date_column: str = _key("", "application date; used for the out-of-time sample and quarterly monitoring")
    weight_column: str = _key("", "case weight of each row (blank: every row weighs 1)")
    leave_out: tuple[str, ...] = _key((), "columns that are not characteristics (e.g. recorded after the decision)")
    stream_above_mb: float = _key(
        2048.0, "ledger files larger than this many MB are read in batches, never whole",
        lambda v: v > 0, "a positive size in MB",
    )
    batch_rows: int = _key(500_000, "rows per batch when a ledger is read in batches", lambda v: v >= 100, "at least 100")


@dataclass(frozen=True)
class OutcomeSettings:
    """The outcome column and what its values mean."""

    column: str = _key("", "the outcome column (required)")
    bad: tuple[str, ...] = _key((), "values meaning bad (with a 0/1 column and nothing set: 1)")
    good: tuple[str, ...] = _key((), "values meaning good (with a 0/1 column and nothing set: 0)")
    indeterminate: tuple[str, ...] = _key((), "values meaning neither; kept for scoring, left out of fitting")


@dataclass(frozen=True)
class SampleSettings:
    """How the ledger is split into development, hold-out and out-of-time samples."""

    holdout_fraction: float = _key(
        0.3, "share of the in-time rows kept back as the hold-out sample (stratified by outcome)",
        lambda v: 0.0 <= v < 1.0, "a share from 0 up to (not including) 1",
    )
    seed: int = _key(20260101, "seed of the random hold-out split", lambda v: v >= 0, "a whole number >= 0")
    out_of_time_from: str = _key(
        "", "rows dated on or after this ISO date form the out-of-time sample (blank: none)",
        lambda v: v == "" or _is_iso_date(v), "an ISO date such as 2025-07-01, or blank",
    )


@dataclass(frozen=True)
class ClassingSettings:
    """Defaults of fine and coarse classing, for characteristics that do not fix their own."""

    max_fine_bins: int = _key(20, "most candidate bins of a numeric characteristic", lambda v: 2 <= v <= 250, "2 to 250")
    fine_sample_rows: int = _key(
        500_000, "cut points are taken from a seeded sample of this many rows when the ledger is larger",
        lambda v: v >= 1000, "at least 1000",
    )
    rare_level_share: float = _key(
        0.01, "categorical levels rarer than this share of rows are pooled into one bin for rare levels",
        _share, "a share between 0 and 1",
    )
    min_group_share: float = _key(
        0.05, "each group holds at least this share of rows", lambda v: 0 <= v <= 0.5, "a share between 0 and 0.5 (two groups must fit)",
    )
    min_goods: int = _key(10, "each group holds at least this many goods", lambda v: v >= 0, "a whole number >= 0")
    min_bads: int = _key(10, "each group holds at least this many bads", lambda v: v >= 0, "a whole number >= 0")
    max_groups: int = _key(8, "most groups per characteristic (missing and special bins not counted)", lambda v: v >= 2, "2 or more")
    min_special_share: float = _key(
        0.01, "a missing or special-value bin smaller than this share is merged into the group with the nearest WoE",
        _share, "a share between 0 and 1",
    )
    trend: str = _key(
        "auto", "WoE trend across a numeric characteristic: auto, ascending, descending or none",
        _one_of("auto", "ascending", "descending", "none"), "one of auto, ascending, descending, none",
    )


@dataclass(frozen=True)
class CharacteristicSettings:
    """One characteristic's decisions; any key left out takes the default or the proposal."""

    kind: str = _key("", "numeric or categorical (blank: detected)", _one_of("", "numeric", "categorical"), "numeric, categorical or blank")
    use: str = _key(
        "", "auto (selection decides), always (forced in), never (left out); blank: auto unless it looks like an identifier or date",
        _one_of("", "auto", "always", "never"), "one of auto, always, never",
    )
    special_values: tuple[float, ...] = _key((), "numeric codes with a meaning of their own (e.g. -1 = no record); each gets its own bin")
    trend: str = _key("", "WoE trend for this characteristic (blank: the [classing] default)", _one_of("", "auto", "ascending", "descending", "none"), "one of auto, ascending, descending, none or blank")
    cuts: tuple[float, ...] | None = _key(None, "numeric cut points, ascending: groups are 'under c1', 'c1 to under c2', ..., 'ck and over'")
    groups: tuple[tuple[str, ...], ...] | None = _key(None, "categorical groups: a list of lists of levels")
    missing: str | int = _key("own", "'own' (a bin of its own) or the number of the group it joins (1 = first)")
    specials: tuple[str | int, ...] = _key((), "per special value, 'own' or the number of the group it joins")
    unseen: str | int = _key("worst", "where levels never seen at build time go: 'worst' (lowest WoE) or a group number")
    label: str = _key("", "plain-language reason text for this characteristic (blank: made from its name)")
    note: str = _key("", "the analyst's reason for a decision about this characteristic; the reports show it")
    reason_code: str = _key("", "stable code of this characteristic's reason (blank: R01, R02, ... in ledger order)")


@dataclass(frozen=True)
class SelectionSettings:
    """Which characteristics enter the model and why."""

    min_iv: float = _key(0.02, "characteristics with a lower information value are screened out", lambda v: v >= 0, "a number >= 0")
    leakage_iv: float = _key(
        0.5, "characteristics with a higher information value are flagged for a leakage check (set use = never to drop one)",
        lambda v: v > 0, "a positive number",
    )
    max_correlation: float = _key(
        0.6, "of two WoE columns correlated above this, the one with the lower IV is left out",
        lambda v: 0 < v <= 1, "a number in (0, 1]",
    )
    stepwise: str = _key("both", "stepwise choice: forward, backward, both or none", _one_of("forward", "backward", "both", "none"), "one of forward, backward, both, none")
    criterion: str = _key("p_value", "stepwise criterion: p_value (score test to enter, Wald to stay) or bic", _one_of("p_value", "bic"), "p_value or bic")
    p_enter: float = _key(0.05, "p-value below which a characteristic may enter", lambda v: 0 < v < 1, "a p-value in (0, 1)")
    p_remove: float = _key(0.10, "p-value above which a characteristic is removed", lambda v: 0 < v < 1, "a p-value in (0, 1)")
    max_characteristics: int = _key(0, "most characteristics in the model (0: no limit)", lambda v: v >= 0, "a whole number >= 0")
    sample_rows: int = _key(
        200_000, "the choice runs on a seeded sample of this many development rows when there are more; the final fit uses them all (0: always all)",
        lambda v: v >= 0, "a whole number >= 0",
    )


@dataclass(frozen=True)
class FitSettings:
    """The logistic fit."""

    solver: str = _key(
        "newton", "newton (Newton-Raphson with step-halving), gradient (gradient descent on standardised inputs) or lbfgs",
        _one_of("newton", "gradient", "lbfgs"), "newton, gradient or lbfgs",
    )
    l2: float = _key(0.0, "ridge penalty on the coefficients (0: plain maximum likelihood)", lambda v: v >= 0, "a number >= 0")
    max_iterations: int = _key(
        0, "most iterations of the solver (0: its own default, 100 for newton, 100000 for gradient, 10000 for lbfgs)",
        lambda v: v >= 0, "a whole number >= 0",
    )


@dataclass(frozen=True)
class ScalingSettings:
    """How log-odds become points."""

    base_score: float = _key(600.0, "score at the base odds")
    base_odds: float = _key(50.0, "odds good:bad at the base score", lambda v: v > 0, "a positive number")
    pdo: float = _key(20.0, "points to double the odds (scores rise with creditworthiness)", lambda v: v > 0, "a positive number")
    decimals: int = _key(0, "decimals kept in each bin's points (0: whole points)", lambda v: 0 <= v <= 6, "0 to 6")


@dataclass(frozen=True)
class ReasonSettings:
    """Reasons given with each score."""

    count: int = _key(4, "reasons listed per scored application", lambda v: 0 <= v <= 20, "0 to 20")


@dataclass(frozen=True)
class CheckSettings:
    """Validation and monitoring thresholds."""

    bands: int = _key(10, "equal-population score bands for gains, calibration and stability", lambda v: 2 <= v <= 100, "2 to 100")
    grades: tuple[float, ...] = _key((), "score boundaries of grades, ascending (replaces equal-population bands)")
    psi_watch: float = _key(0.10, "PSI from which a shift is 'watch' (common practice)", lambda v: v > 0, "a positive number")
    psi_act: float = _key(0.25, "PSI from which a shift is 'act' (common practice)", lambda v: v > 0, "a positive number")
    p_watch: float = _key(0.05, "test p-value below which a check is 'watch'", lambda v: 0 < v < 1, "a p-value in (0, 1)")
    p_act: float = _key(0.01, "test p-value below which a check is 'act'", lambda v: 0 < v < 1, "a p-value in (0, 1)")
    cutoff_step: float = _key(0.0, "step between candidate cut-off scores (0: every score that occurs)", lambda v: v >= 0, "a number >= 0")


@dataclass(frozen=True)
class ReportSettings:
    """What the reports say about themselves."""

    title: str = _key("Application scorecard", "title of the reports")
    lender: str = _key("", "name of the lending organisation shown in the reports")


SECTIONS: dict[str, type] = {
    "ledger": LedgerSettings,
    "outcome": OutcomeSettings,
    "samples": SampleSettings,
    "classing": ClassingSettings,
    "selection": SelectionSettings,
    "fit": FitSettings,
    "scaling": ScalingSettings,
    "reasons": ReasonSettings,
    "checks": CheckSettings,
    "report": ReportSettings,
}


@dataclass(frozen=True)
class Settings:
    """Every decision of one scorecard build."""

    ledger: LedgerSettings = field(default_factory=LedgerSettings)
    outcome: OutcomeSettings = field(default_factory=OutcomeSettings)
    samples: SampleSettings = field(default_factory=SampleSettings)
    classing: ClassingSettings = field(default_factory=ClassingSettings)
    selection: SelectionSettings = field(default_factory=SelectionSettings)
    fit: FitSettings = field(default_factory=FitSettings)
    scaling: ScalingSettings = field(default_factory=ScalingSettings)
    reasons: ReasonSettings = field(default_factory=ReasonSettings)
    checks: CheckSettings = field(default_factory=CheckSettings)
    report: ReportSettings = field(default_factory=ReportSettings)
    characteristics: Mapping[str, CharacteristicSettings] = field(default_factory=dict)
    folder: str = ""  # where the settings file lives; relative ledger paths start here

    def characteristic(self, name: str) -> CharacteristicSettings:
        """Return the settings of one characteristic (defaults when it has none)."""
        return self.characteristics.get(name, CharacteristicSettings())

    def ledger_path(self) -> Path:
        """Return the ledger path, resolved against the settings file's folder."""
        path = Path(self.ledger.path)
        return path if path.is_absolute() or not self.folder else Path(self.folder) / path

    def replace(self, **sections: Any) -> Settings:
        """Return a copy with some sections or section keys replaced: ``replace(outcome={"column": "y"})``."""
        changes = {}
        for name, value in sections.items():
            if isinstance(value, Mapping) and name in SECTIONS:
                changes[name] = dataclasses.replace(getattr(self, name), **value)
            else:
                changes[name] = value
        return dataclasses.replace(self, **changes)


# --------------------------------------------------------------------------------------------
# Reading and validating


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
        if key not in fields:
            raise SettingsError(_unknown(source, key, list(fields), where=f"key in [{where}]"))
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
        raise SettingsError(f"{source}: {where} = {value!r} is not possible: it must be {need}. Correct it in the settings file.")
    return converted


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
    if wanted == "tuple[str | int, ...]":
        ok = all(isinstance(v, str) or (isinstance(v, int) and not isinstance(v, bool)) for v in value)
        return tuple(value) if ok else _WRONG
    raise TypeError(f"no converter for {wanted}")  # our own invariant: every field type is handled


def _describe_type(wanted: str) -> str:
    return {
        "str": "text in quotes",
        "int": "a whole number",
        "float": "a number",
        "bool": "true or false",
        "str | int": "'own' or a group number",
        "tuple[str, ...]": "a list of values, e.g. [\"a\", \"b\"]",
        "tuple[float, ...]": "a list of numbers, e.g. [-1, 999]",
        "tuple[float, ...] | None": "a list of numbers, e.g. [12, 36, 60]",
        "tuple[tuple[str, ...], ...] | None": "a list of lists of levels, e.g. [[\"own\"], [\"rent\", \"other\"]]",
        "tuple[str | int, ...]": "a list of 'own' or group numbers",
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
             "ledger.date_column": settings.ledger.date_column, "ledger.weight_column": settings.ledger.weight_column}
    taken: dict[str, str] = {}
    for key, column in roles.items():
        if column and column in taken:
            raise SettingsError(f"{source}: {key} and {taken[column]} both name column {column!r}; each role needs its own column.")
        taken[column] = key
    if settings.selection.p_enter > settings.selection.p_remove:
        raise SettingsError(
            f"{source}: selection.p_enter ({settings.selection.p_enter}) is above selection.p_remove "
            f"({settings.selection.p_remove}): a characteristic could enter and be removed again for ever. "
            "Keep p_enter at or below p_remove."
        )
    outcome = settings.outcome
    seen: dict[str, str] = {}
    for role in ("bad", "good", "indeterminate"):
        for value in getattr(outcome, role):
            if value in seen:
                raise SettingsError(f"{source}: outcome value {value!r} is listed both as {seen[value]} and as {role}. Keep it in one list.")
            seen[value] = role
    for name, char in settings.characteristics.items():
        where = f"characteristics.{name}"
        if char.cuts is not None:
            if list(char.cuts) != sorted(set(char.cuts)):
                raise SettingsError(f"{source}: {where}.cuts must be strictly ascending numbers, got {list(char.cuts)}.")
        if char.groups is not None:
            if len(char.groups) < 2:
                raise SettingsError(f"{source}: {where}.groups needs at least 2 groups, got {len(char.groups)}.")
            levels = [level for group in char.groups for level in group]
            repeated = sorted({level for level in levels if levels.count(level) > 1})
            if repeated:
                raise SettingsError(f"{source}: {where}.groups lists level {repeated[0]!r} in more than one group. Keep it in one.")
        if char.cuts is not None and char.groups is not None:
            raise SettingsError(f"{source}: {where} has both cuts and groups; a numeric characteristic takes cuts, a categorical one groups.")
        for key, value in [("missing", char.missing), ("unseen", char.unseen), *(("specials", v) for v in char.specials)]:
            if isinstance(value, str) and value not in ("own", "worst"):
                raise SettingsError(f"{source}: {where}.{key} = {value!r} is not possible: use 'own' or a group number (1 = first).")
            if isinstance(value, int) and value < 1:
                raise SettingsError(f"{source}: {where}.{key} = {value} is not possible: group numbers start at 1.")
        if char.specials and len(char.specials) != len(char.special_values):
            raise SettingsError(f"{source}: {where}.specials has {len(char.specials)} entries but special_values has {len(char.special_values)}; give one per special value.")


def _unknown(source: str, key: str, allowed: list[str], *, where: str) -> str:
    close = difflib.get_close_matches(key, allowed, n=1)
    hint = f" Did you mean {close[0]!r}?" if close else f" Known: {', '.join(allowed)}."
    return f"{source}: unknown {where} {key!r}.{hint}"


def _type_name(value: Any) -> str:
    return type(value).__name__


def _is_iso_date(text: str) -> bool:
    # only YYYY-MM-DD: fromisoformat also takes '20250701' and week dates, which numpy reads otherwise
    if len(text) != 10 or text[4] != "-" or text[7] != "-":
        return False
    try:
        datetime.date.fromisoformat(text)
    except (TypeError, ValueError):
        return False
    return True


# --------------------------------------------------------------------------------------------
# Writing


def settings_to_mapping(settings: Settings) -> dict[str, Any]:
    """Return the settings as nested plain values, the shape of the TOML file (None values left out)."""
    document: dict[str, Any] = {name: dataclasses.asdict(getattr(settings, name)) for name in SECTIONS}
    document["characteristics"] = {
        name: {key: value for key, value in dataclasses.asdict(spec).items() if value is not None}
        for name, spec in settings.characteristics.items()
    }
    return _as_lists(document)


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
    """Return the TOML text of ``settings`` (round-trips through ``settings_from_mapping``)."""
    comments = comments or {}
    lines = [f"# {line}".rstrip() for line in header.splitlines()] if header else []
    for name, cls in SECTIONS.items():
        section = getattr(settings, name)
        lines += ["", f"[{name}]"]
        for spec in dataclasses.fields(cls):
            lines.append(f"{spec.name} = {toml_value(getattr(section, spec.name))}  # {spec.metadata['meaning']}")
    for name, char in settings.characteristics.items():
        lines += ["", f"[characteristics.{_toml_key(name)}]"]
        if name in comments:
            lines += [f"# {line}" for line in comments[name].splitlines()]
        defaults = CharacteristicSettings()
        for spec in dataclasses.fields(CharacteristicSettings):
            value = getattr(char, spec.name)
            if value is None or (value == getattr(defaults, spec.name) and spec.name not in ("kind", "use")):
                continue
            lines.append(f"{spec.name} = {toml_value(value)}")
    return "\n".join(lines).lstrip("\n") + "\n"


def toml_value(value: Any) -> str:
    """Return a value as TOML text: "text", 12, 0.5, true, [1, 2]."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return _toml_float(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, (tuple, list)):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    raise TypeError(f"cannot write {value!r} to TOML")  # our own invariant


def _toml_float(value: float) -> str:
    # repr round-trips exactly; whole numbers are written without ".0" so hand-edited files stay tidy
    return repr(float(value)).removesuffix(".0")


def _toml_string(text: str) -> str:
    escaped = text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n").replace("\t", "\\t")
    # TOML allows no raw control characters in a basic string: U+0000 to U+001F and U+007F
    escaped = "".join(ch if ch >= " " and ch != "\x7f" else f"\\u{ord(ch):04x}" for ch in escaped)
    return f'"{escaped}"'


def _toml_key(name: str) -> str:
    bare = name and all(ch.isascii() and (ch.isalnum() or ch in "-_") for ch in name)
    return name if bare else _toml_string(name)


# --------------------------------------------------------------------------------------------
# The reference table of every key (README and --help use it)


def settings_reference() -> list[tuple[str, str, str]]:
    """Return (key, default, meaning) for every settings key, in file order."""
    rows = []
    for name, cls in SECTIONS.items():
        for spec in dataclasses.fields(cls):
            rows.append((f"{name}.{spec.name}", toml_value(spec.default), spec.metadata["meaning"]))
    for spec in dataclasses.fields(CharacteristicSettings):
        default = "(none)" if spec.default is None else toml_value(spec.default)
        rows.append((f"characteristics.NAME.{spec.name}", default, spec.metadata["meaning"]))
    return rows


# --------------------------------------------------------------------------------------------
# Editing a settings file in place, as an analyst would (comments kept)


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
        The edited file does not validate (an unknown key or an impossible value).
    """
    path = Path(path)
    lines = path.read_text(encoding="utf-8").splitlines()
    for dotted, value in changes.items():
        section, _, key = dotted.rpartition(".")
        lines = _set_line(lines, section, key, toml_value(value))
    text = "\n".join(lines) + "\n"
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise SettingsError(f"{path}: editing made the file invalid TOML ({error}).") from None
    settings_from_mapping(document, source=str(path), folder=str(path.parent))
    return write_text_atomically(path, text)


def _set_line(lines: list[str], section: str, key: str, value: str) -> list[str]:
    """Replace ``key = ...`` inside ``[section]`` (keeping a trailing comment), or add it."""
    header = "[" + ".".join(_toml_key(part) for part in _split_section(section)) + "]"
    start = next((i for i, line in enumerate(lines) if line.strip() == header), None)
    if start is None:
        return [*lines, "", header, f"{key} = {value}"]
    end = next((i for i in range(start + 1, len(lines)) if lines[i].lstrip().startswith("[")), len(lines))
    for i in range(start + 1, end):
        name, equals, rest = lines[i].partition("=")
        if equals and name.strip() == key:
            comment = rest[rest.index("  #"):] if "  #" in rest else ""
            lines[i] = f"{key} = {value}{comment}"
            return lines
    insert = end
    while insert > start + 1 and not lines[insert - 1].strip():
        insert -= 1
    return [*lines[:insert], f"{key} = {value}", *lines[insert:]]


def _split_section(section: str) -> list[str]:
    """Split 'characteristics.name' into its parts; a characteristic's name may itself hold dots,
    and may be quoted as the file writes it ('characteristics."a b"')."""
    first, _, rest = section.partition(".")
    if first != "characteristics" or not rest:
        return [first]
    if len(rest) >= 2 and rest[0] == rest[-1] and rest[0] in "\"'":
        rest = tomllib.loads(f"name = {rest}")["name"] if rest[0] == '"' else rest[1:-1]
    return [first, rest]
