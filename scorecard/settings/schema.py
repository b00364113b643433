"""The settings schema: every key of the settings file, its default, its meaning and its check.

Every key is a field of one of the frozen dataclasses below, with its default and a one-line
meaning in the field's metadata; the README's settings table is generated from the same metadata
(``settings_reference``), so the two cannot disagree. Defaults that are shared words of the trade
come from ``scorecard.terms``.
"""

from __future__ import annotations

import dataclasses
import datetime
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..terms import (
    ACT_P, ACT_PSI, BAD_RATE_SHAPES, COEFFICIENT_RANGE, ENGINES, FROM_DATA, GINI_DROP, GROUNDS_SOURCE, IN_PROCESS, LEAKAGE_IV, PROTECTED_GROUNDS,
    REJECT_METHODS,
    WATCH_P, WATCH_PSI,
)
from .text import toml_value


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


def _is_iso_date(text: str) -> bool:
    # only YYYY-MM-DD: fromisoformat also takes '20250701' and week dates, which numpy reads otherwise
    if len(text) != 10 or text[4] != "-" or text[7] != "-":
        return False
    try:
        datetime.date.fromisoformat(text)
    except (TypeError, ValueError):
        return False
    return True


@dataclass(frozen=True)
class LedgerSettings:
    """Where the ledger is and which of its columns play special roles."""

    path: str = _key("", "ledger file (CSV, Parquet or .xlsx), relative to the settings file; through an engine also a "
                         "folder of Parquet or CSV files, or a DuckDB database")
    engine: str = _key(
        IN_PROCESS, "where the rows are read and counted: in-process (this program), duckdb (an embedded SQL engine) or "
        "spark (a cluster, or Spark on this machine); the same ledger gives the same model file on each",
        _one_of(*ENGINES), "one of " + ", ".join(ENGINES),
    )
    table: str = _key("", "a table holding the ledger: in the DuckDB database at path, or in Spark's catalog")
    query: str = _key("", "a SQL SELECT whose rows are the ledger (duckdb: run in the database at path, if any; spark)")
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
class DuckDBSettings:
    """The DuckDB engine (ledger.engine = "duckdb")."""

    memory_limit: str = _key("", "most memory DuckDB may use, e.g. \"4GB\"; it spills the rest to a temporary folder (blank: its default)")
    threads: int = _key(0, "threads DuckDB may use (0: one per core)", lambda v: v >= 0, "a whole number >= 0")


@dataclass(frozen=True)
class SparkSettings:
    """The Spark engine (ledger.engine = "spark")."""

    master: str = _key("", "the Spark master, e.g. \"spark://host:7077\" or \"yarn\" (blank: $SPARK_MASTER, else this machine)")
    config: tuple[str, ...] = _key((), "other Spark settings as \"key=value\", e.g. [\"spark.executor.memory=8g\"]")


@dataclass(frozen=True)
class OutcomeSettings:
    """The outcome column and what its values mean."""

    column: str = _key("", "the outcome column (required)")
    bad: tuple[str, ...] = _key((), "values meaning bad (with a 0/1 column and nothing set: 1)")
    good: tuple[str, ...] = _key((), "values meaning good (with a 0/1 column and nothing set: 0)")
    indeterminate: tuple[str, ...] = _key((), "values meaning neither; kept for scoring, left out of fitting")
    rejected: tuple[str, ...] = _key(
        (), "values meaning the application was rejected, so its outcome was never known; set apart for reject inference",
    )


@dataclass(frozen=True)
class SampleSettings:
    """How the ledger is split into development, hold-out and out-of-time samples."""

    holdout_fraction: float = _key(
        0.3, "share of the in-time rows kept back as the hold-out sample (stratified by outcome)",
        lambda v: 0.0 <= v < 1.0, "a share from 0 up to (not including) 1",
    )
    seed: int = _key(20260101, "seed of the hold-out split (a seeded hash of each row's id, or of the row)",
                     lambda v: v >= 0, "a whole number >= 0")
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
    min_class_share: float = _key(
        0.05, "each class holds at least this share of rows", lambda v: 0 <= v <= 0.5, "a share between 0 and 0.5 (two classes must fit)",
    )
    min_goods: int = _key(10, "each class holds at least this many goods", lambda v: v >= 0, "a whole number >= 0")
    min_bads: int = _key(10, "each class holds at least this many bads", lambda v: v >= 0, "a whole number >= 0")
    max_classes: int = _key(8, "most classes per characteristic (missing and special bins not counted)", lambda v: v >= 2, "2 or more")
    min_special_share: float = _key(
        0.01, "a missing or special-value bin smaller than this share is merged into the class with the nearest WoE",
        _share, "a share between 0 and 1",
    )
    bad_rate_shape: str = _key(
        FROM_DATA, "how the bad rate may move as a numeric characteristic's value grows: from-data (the tool chooses), "
        "falls, rises, falls-then-rises or rises-then-falls (one bend, found exactly), or any (no order imposed)",
        _one_of(*BAD_RATE_SHAPES), "one of " + ", ".join(BAD_RATE_SHAPES),
    )
    merge_p: float = _key(
        0.05, "neighbouring classes whose bad rates do not differ significantly (likelihood-ratio test p-value at or above "
        "this) are merged, the least different first (0: never merge)", lambda v: 0 <= v < 1, "a p-value from 0 up to 1",
    )
    bend_min_gain: float = _key(
        0.1, "from-data takes a single-bend shape only when its IV is more than this share above the best one-way "
        "classing's (0.1: 10% more); a rule of thumb of ours, no source", lambda v: v >= 0, "a share >= 0",
    )


@dataclass(frozen=True)
class ProposalSettings:
    """What the tool proposed for one characteristic: written by init (and by every build), read by the build.

    The build compares the characteristic's classing with it, to say whether the tool proposed the
    classing, the analyst changed it (and what that cost or gained in IV) or wrote it.
    """

    cuts: tuple[float, ...] | None = _key(None, "the tool's proposed cut points (leave as written: the build compares your classing with it)")
    classes: tuple[tuple[str, ...], ...] | None = _key(None, "the tool's proposed classes of levels")
    missing: str | int = _key("own", "where the tool put missing values: 'own' or a class number")
    specials: tuple[str | int, ...] = _key((), "where the tool put each special value: 'own' or a class number")
    bad_rate_shape: str = _key("", "the shape of the bad rate the tool found (falls, rises; any for levels)",
                               _one_of("", *BAD_RATE_SHAPES), "one of " + ", ".join(BAD_RATE_SHAPES) + " or blank")
    notes: tuple[str, ...] = _key((), "what the tool did by its own rules when it proposed this classing (merges, pooled levels)")

    def classing(self) -> dict[str, object]:
        """The classing keys of the proposal, as a characteristic's settings hold them (for comparing the two)."""
        return {"cuts": self.cuts, "classes": self.classes, "missing": self.missing, "specials": tuple(self.specials)}


@dataclass(frozen=True)
class CharacteristicSettings:
    """One characteristic's decisions; any key left out takes the default or the proposal."""

    kind: str = _key("", "numeric or categorical (blank: detected)", _one_of("", "numeric", "categorical"), "numeric, categorical or blank")
    use: str = _key(
        "", "auto (selection decides), always (forced in), never (left out), protected (never in the model, kept for the "
        "fairness checks); blank: auto unless it looks like an identifier, a date or a protected ground",
        _one_of("", "auto", "always", "never", "protected"), "one of auto, always, never, protected",
    )
    special_values: tuple[tuple[float, str], ...] = _key(
        (), "numeric codes with a meaning of their own, each with its meaning: {-1 = \"no delinquency on record\"} (a list "
        "[-1, 999] leaves them unexplained); each gets its own bin, labelled by its meaning")
    bad_rate_shape: str = _key(
        "", "how the bad rate may move as this characteristic's value grows (blank: the [classing] default)",
        _one_of("", *BAD_RATE_SHAPES), "one of " + ", ".join(BAD_RATE_SHAPES) + " or blank",
    )
    cuts: tuple[float, ...] | None = _key(None, "numeric cut points, ascending: classes are 'under c1', 'c1 to under c2', ..., 'ck and over'")
    classes: tuple[tuple[str, ...], ...] | None = _key(None, "categorical classes: a list of lists of levels")
    missing: str | int = _key("own", "'own' (a bin of its own) or the number of the class it joins (1 = first)")
    specials: tuple[str | int, ...] = _key((), "per special value, 'own' or the number of the class it joins")
    unseen: str | int = _key("worst", "where levels never seen at build time go: 'worst' (lowest WoE) or a class number")
    label: str = _key("", "plain-language reason text for this characteristic (blank: made from its name)")
    note: str = _key("", "the analyst's reason for a decision about this characteristic; the reports show it")
    reason_code: str = _key("", "stable code of this characteristic's reason (blank: R01, R02, ... in ledger order)")
    proposal: ProposalSettings | None = _key(None, "what the tool proposed (init writes it as [characteristics.NAME.proposal])")

    def __post_init__(self):
        # from Python, special values may also be given as bare codes: (-1.0, 999.0) reads as codes without meanings
        pairs = tuple(tuple(item) if isinstance(item, (tuple, list)) else (float(item), "") for item in self.special_values)
        object.__setattr__(self, "special_values", pairs)

    @property
    def special_codes(self) -> tuple[float, ...]:
        """The special values, without their meanings."""
        return tuple(code for code, _ in self.special_values)

    @property
    def special_meanings(self) -> tuple[str, ...]:
        """What each special value means ('' where the settings do not say)."""
        return tuple(meaning for _, meaning in self.special_values)

    def classing(self) -> dict[str, object]:
        """The classing keys, as a proposal holds them (for comparing the two)."""
        return {"cuts": self.cuts, "classes": self.classes, "missing": self.missing, "specials": tuple(self.specials)}


@dataclass(frozen=True)
class SelectionSettings:
    """Which characteristics enter the model and why."""

    min_iv: float = _key(0.02, "characteristics with a lower information value are screened out", lambda v: v >= 0, "a number >= 0")
    screen: str = _key(
        "verdict", "what the IV screen does: verdict (characteristics under min_iv are left out) or proposal (they stay "
        "candidates and the stepwise choice decides); either way those left out are score-tested against the final model",
        _one_of("verdict", "proposal"), "verdict or proposal",
    )
    leakage_iv: float = _key(
        LEAKAGE_IV, "characteristics with a higher information value are flagged for a leakage check (set use = never to drop one)",
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
class RejectSettings:
    """Rejected applications and reject inference."""

    decision_column: str = _key("", "column holding the lending decision on each application (blank: none)")
    rejected: tuple[str, ...] = _key((), "values of decision_column meaning the application was rejected")
    method: str = _key(
        "none", "reject inference: none (the model is fitted on accepted applications only), fuzzy-augmentation, "
        "parcelling or hard-cutoff", _one_of(*REJECT_METHODS), "one of " + ", ".join(REJECT_METHODS),
    )
    factor: float = _key(
        2.0, "how many times the bad rate the accepted-only evidence gives them the rejects are taken to have: by score "
        "band (parcelling) or in all (hard-cutoff); common practice, no source", lambda v: v > 0, "a positive number",
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
    psi_watch: float = _key(WATCH_PSI, "PSI from which a shift is 'watch' (common practice)", lambda v: v > 0, "a positive number")
    psi_act: float = _key(ACT_PSI, "PSI from which a shift is 'act' (common practice)", lambda v: v > 0, "a positive number")
    p_watch: float = _key(WATCH_P, "test p-value below which a check is 'watch'", lambda v: 0 < v < 1, "a p-value in (0, 1)")
    p_act: float = _key(ACT_P, "test p-value below which a check is 'act'", lambda v: 0 < v < 1, "a p-value in (0, 1)")
    cutoff_step: float = _key(0.0, "step between candidate cut-off scores (0: every score that occurs)", lambda v: v >= 0, "a number >= 0")
    cutoff: float = _key(
        0.0, "the cut-off score the lender approves at (scores at or above it), for the adverse-impact checks (0: the "
        "first cut-off above the KS score, as the cut-off table marks it)", lambda v: v >= 0, "a score >= 0",
    )
    gini_drop: float = _key(
        GINI_DROP, "a relative fall of the Gini from development to hold-out or out-of-time above this is flagged for "
        "over-fitting (common practice)", lambda v: 0 < v < 1, "a share between 0 and 1",
    )
    coefficient_range: tuple[float, ...] = _key(
        COEFFICIENT_RANGE, "coefficients of the WoE-coded characteristics outside this range are flagged: collinearity "
        "or over-fitting (common practice)", lambda v: len(v) == 2 and 0 <= v[0] < v[1], "two numbers, low then high, e.g. [0.5, 1.5]",
    )


@dataclass(frozen=True)
class FairnessSettings:
    """Protected grounds: what a column that looks like one is, and the thresholds of the fairness checks."""

    grounds: tuple[str, ...] = _key(
        PROTECTED_GROUNDS, "grounds fair-lending law commonly protects, each 'NAME: words a column's name or levels may "
        "hold'; a ground whose name says 'check local law' is flagged, never refused",
    )
    grounds_source: str = _key(GROUNDS_SOURCE, "where the list of grounds comes from")
    proxy_cramers_v: float = _key(
        0.3, "a model characteristic whose Cramér's V with a protected attribute is above this is flagged as a proxy "
        "for it (common practice, no source)", lambda v: 0 < v < 1, "a number between 0 and 1",
    )
    impact_ratio: float = _key(
        0.8, "a level approved at less than this share of the reference level's rate is flagged (the four-fifths "
        "rule of thumb: common practice, no source; a guide, not a verdict)", lambda v: 0 < v <= 1, "a share in (0, 1]",
    )
    reference_share: float = _key(
        0.05, "the reference level of the adverse impact ratio is the most-approved level among those holding at "
        "least this share of the attribute's applications (the largest level always can be), so that a handful of "
        "applications cannot set the bar (common practice, no source)", lambda v: 0 <= v < 1, "a share in [0, 1)",
    )


@dataclass(frozen=True)
class ChallengerSettings:
    """The benchmark fitted beside the scorecard, to show what the scorecard's format costs."""

    l2: float = _key(
        10.0, "ridge penalty of the challenger: fine bins, one indicator per bin, each pulled toward its "
        "characteristic's average (a normal prior of standard deviation 1/sqrt(l2) on each bin's effect)",
        lambda v: v > 0, "a positive number",
    )
    auc_gap: float = _key(
        0.02, "a challenger AUC above the scorecard's by more than this, on an honest sample, is flagged (common "
        "practice, no source)", lambda v: v > 0, "a positive number",
    )


@dataclass(frozen=True)
class ReportSettings:
    """What the reports say about themselves, and what the model document asks the analyst to write."""

    title: str = _key("Application scorecard", "title of the reports")
    lender: str = _key("", "name of the lending organisation shown in the reports")
    purpose: str = _key("", "model document: the business purpose of the scorecard (blank: a placeholder to fill in)")
    intended_use: str = _key("", "model document: the decisions it is meant for, the products and the applicants")
    owner: str = _key("", "model document: who owns the model")
    approval: str = _key("", "model document: who approved it, and when (blank: a placeholder for the sign-off)")


SECTIONS: dict[str, type] = {
    "ledger": LedgerSettings,
    "duckdb": DuckDBSettings,
    "spark": SparkSettings,
    "outcome": OutcomeSettings,
    "samples": SampleSettings,
    "classing": ClassingSettings,
    "selection": SelectionSettings,
    "fit": FitSettings,
    "rejects": RejectSettings,
    "scaling": ScalingSettings,
    "reasons": ReasonSettings,
    "checks": CheckSettings,
    "fairness": FairnessSettings,
    "challenger": ChallengerSettings,
    "report": ReportSettings,
}


@dataclass(frozen=True)
class Settings:
    """Every decision of one scorecard build."""

    ledger: LedgerSettings = field(default_factory=LedgerSettings)
    duckdb: DuckDBSettings = field(default_factory=DuckDBSettings)
    spark: SparkSettings = field(default_factory=SparkSettings)
    outcome: OutcomeSettings = field(default_factory=OutcomeSettings)
    samples: SampleSettings = field(default_factory=SampleSettings)
    classing: ClassingSettings = field(default_factory=ClassingSettings)
    selection: SelectionSettings = field(default_factory=SelectionSettings)
    fit: FitSettings = field(default_factory=FitSettings)
    rejects: RejectSettings = field(default_factory=RejectSettings)
    scaling: ScalingSettings = field(default_factory=ScalingSettings)
    reasons: ReasonSettings = field(default_factory=ReasonSettings)
    checks: CheckSettings = field(default_factory=CheckSettings)
    fairness: FairnessSettings = field(default_factory=FairnessSettings)
    challenger: ChallengerSettings = field(default_factory=ChallengerSettings)
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


def settings_reference() -> list[tuple[str, str, str]]:
    """Return (key, default, meaning) for every settings key, in file order."""
    rows = []
    for name, cls in SECTIONS.items():
        for spec in dataclasses.fields(cls):
            rows.append((f"{name}.{spec.name}", toml_value(spec.default), spec.metadata["meaning"]))
    for spec in dataclasses.fields(CharacteristicSettings):
        if spec.name == "proposal":
            continue
        default = "(none)" if spec.default is None else toml_value(spec.default)
        rows.append((f"characteristics.NAME.{spec.name}", default, spec.metadata["meaning"]))
    for spec in dataclasses.fields(ProposalSettings):
        default = "(none)" if spec.default is None else toml_value(spec.default)
        rows.append((f"characteristics.NAME.proposal.{spec.name}", default, spec.metadata["meaning"]))
    return rows
