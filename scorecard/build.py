"""The analyst's flow, stage by stage: class the ledger's characteristics, then (later stages) fit,
scale, check and package the scorecard.

This module only wires the stages together; each stage's arithmetic lives in its own module.
"""

from __future__ import annotations

import contextlib
import os
import time
import warnings
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pandas as pd

from .checks.discrimination import auc, ks_statistic
from .classing import (
    NUMERIC, Binning, binning_from_settings, check_constraints, classing_settings_values, code_rows, coarse_classing,
    fine_classing, resolve_fallback, unseen_levels,
)
from .counting import BinCounts, count_bins, pattern_table
from .errors import ScorecardWarning
from .evidence import EvidenceTable, evidence_table
from .ledger import BAD, DEVELOPMENT, GOOD, SAMPLE_NAMES, Fingerprint, Ledger, fingerprint_of, prepare_ledger, read_ledger
from .points import PointsTable, Scorecard, ScoreHistogram, points_table, scaling, score_codes, score_histogram
from .selection import SelectionResult, select_characteristics
from .settings import Settings


@dataclass(frozen=True)
class ClassedCharacteristic:
    """One characteristic after classing: its bins, counts per sample, and development WoE."""

    binning: Binning
    counts: BinCounts
    evidence: EvidenceTable
    origin: str  # "settings" (fixed by the analyst) or "proposed" (optimal grouping)
    notes: tuple[str, ...]

    @property
    def name(self) -> str:
        """The characteristic's name."""
        return self.binning.characteristic

    def evidence_on(self, sample: int, *, leakage_iv: float = 0.5) -> EvidenceTable:
        """Return the WoE table on another sample (hold-out, out-of-time)."""
        return evidence_table(
            self.counts.goods(sample), self.counts.bads(sample), labels=self.binning.labels,
            characteristic=self.name, n_goods=self.counts.n_goods(sample), n_bads=self.counts.n_bads(sample),
            sample=SAMPLE_NAMES[sample], leakage_iv=leakage_iv,
        )


@dataclass(frozen=True)
class ClassedLedger:
    """Every characteristic classed, with the bin code of every row."""

    characteristics: tuple[ClassedCharacteristic, ...]
    codes: np.ndarray  # rows × characteristics
    notes: tuple[str, ...]

    def get(self, name: str) -> ClassedCharacteristic:
        """Return one classed characteristic by name."""
        return next(c for c in self.characteristics if c.name == name)

    @property
    def names(self) -> tuple[str, ...]:
        """Characteristic names, in ledger order."""
        return tuple(c.name for c in self.characteristics)


def class_ledger(ledger: Ledger, settings: Settings, *,
                 progress: Callable[[Iterable], Iterable] = lambda items: items) -> ClassedLedger:
    """Class every characteristic: the settings' fixed classing where given, else the optimal one.

    Parameters
    ----------
    ledger : Ledger
    settings : Settings
    progress : callable
        Wraps the loop over characteristics (a progress bar in a terminal).

    Returns
    -------
    ClassedLedger
        Development WoE per characteristic; notes of every repair and broken constraint.
    """
    fitting = ledger.sample == DEVELOPMENT
    fitting &= (ledger.outcome == GOOD) | (ledger.outcome == BAD)
    sample_rows = _fine_sample(np.flatnonzero(fitting), settings)
    classed, columns, notes = [], [], []
    for char in progress(ledger.characteristics):
        values = ledger.frame[char.name]
        spec = settings.characteristic(char.name)
        if spec.cuts is not None or spec.groups is not None:
            result, codes = _fixed_classing(values, char, ledger, fitting, settings)
        else:
            result, codes = _proposed_classing(values, char, ledger, fitting, sample_rows, settings)
        classed.append(result)
        columns.append(codes)
        notes.extend(result.notes)
    codes = np.column_stack(columns) if columns else np.zeros((ledger.n_rows, 0), dtype=np.uint8)
    for note in notes:
        warnings.warn(note, ScorecardWarning, stacklevel=2)
    return ClassedLedger(tuple(classed), codes, tuple(notes))


def _fine_sample(rows: np.ndarray, settings: Settings) -> np.ndarray:
    """Rows the fine cut points are taken from: all, or a seeded sample when the ledger is large."""
    limit = settings.classing.fine_sample_rows
    if len(rows) <= limit:
        return rows
    rng = np.random.default_rng(settings.samples.seed + 1)
    return np.sort(rng.choice(rows, size=limit, replace=False))


def _proposed_classing(values, char, ledger: Ledger, fitting, sample_rows, settings: Settings):
    classing = settings.classing
    spec = settings.characteristic(char.name)
    fine = fine_classing(
        values.iloc[sample_rows], ledger.weight[sample_rows], name=char.name, kind=char.kind,
        special_values=char.special_values, max_bins=classing.max_fine_bins, rare_level_share=classing.rare_level_share,
    )
    fine_codes = code_rows(values, fine)
    fine_counts = count_bins(fine_codes, ledger.outcome, ledger.weight, ledger.sample, characteristic=char.name, labels=fine.labels)
    trend = spec.trend or classing.trend
    coarse = coarse_classing(
        fine, fine_counts.goods(), fine_counts.bads(), n_goods=fine_counts.n_goods(), n_bads=fine_counts.n_bads(),
        min_group_share=classing.min_group_share, min_goods=classing.min_goods, min_bads=classing.min_bads,
        max_groups=classing.max_groups, min_special_share=classing.min_special_share, trend=trend,
    )
    binning = coarse.binning
    if spec.unseen != "worst":
        binning = resolve_fallback(binning, [], [], spec.unseen)
    codes = code_rows(values, binning)
    counts = count_bins(codes, ledger.outcome, ledger.weight, ledger.sample, characteristic=char.name, labels=binning.labels)
    return _classed(binning, counts, "proposed", coarse.notes, settings), codes


def _fixed_classing(values, char, ledger: Ledger, fitting, settings: Settings):
    spec = settings.characteristic(char.name)
    notes = []
    development = values[fitting]
    if char.kind == NUMERIC:
        x = development.to_numpy(dtype=float, na_value=np.nan)
        present = [v for v in char.special_values if np.any(x == v)]
        has_missing = bool(np.isnan(x).any())
    else:
        present, has_missing = [], bool(development.isna().any())
    binning = binning_from_settings(
        char.name, char.kind, cuts=spec.cuts, groups=spec.groups, special_values=char.special_values,
        specials=spec.specials, missing=spec.missing, present_specials=present, has_missing=has_missing,
        trend=spec.trend or settings.classing.trend,
    )
    stray = unseen_levels(development, binning)
    codes = code_rows(values, binning, unseen_code=binning.n_bins)
    labels = (*binning.labels, "(not in any group)")
    provisional = count_bins(codes, ledger.outcome, ledger.weight, ledger.sample, characteristic=char.name, labels=labels)
    goods, bads = provisional.goods()[:-1], provisional.bads()[:-1]
    binning = resolve_fallback(binning, goods, bads, spec.unseen)
    if stray:
        shown = ", ".join(f"{level!r} ({n} rows)" for level, n in list(stray.items())[:5])
        notes.append(
            f"{char.name!r}: levels {shown} are in no group of the settings; they go to group "
            f"{binning.fallback_bin + 1} ({binning.labels[binning.fallback_bin]}). Add them to a group to decide yourself."
        )
    codes = code_rows(values, binning)
    counts = count_bins(codes, ledger.outcome, ledger.weight, ledger.sample, characteristic=char.name, labels=binning.labels)
    classing = settings.classing
    trend = spec.trend or classing.trend
    broken = check_constraints(
        binning, counts.goods(), counts.bads(), n_goods=counts.n_goods(), n_bads=counts.n_bads(),
        min_group_share=classing.min_group_share, min_goods=classing.min_goods, min_bads=classing.min_bads,
        max_groups=classing.max_groups, trend=trend,
    )
    notes += [f"classing fixed in the settings breaks a constraint: {problem}." for problem in broken]
    return _classed(binning, counts, "settings", tuple(notes), settings), codes


def _classed(binning: Binning, counts: BinCounts, origin: str, notes, settings: Settings) -> ClassedCharacteristic:
    evidence = evidence_table(
        counts.goods(), counts.bads(), labels=binning.labels, characteristic=binning.characteristic,
        n_goods=counts.n_goods(), n_bads=counts.n_bads(), leakage_iv=settings.selection.leakage_iv,
    )
    adjusted = [label for label, flag in zip(binning.labels, evidence.adjusted) if flag]
    notes = list(notes)
    if adjusted:
        notes.append(
            f"{binning.characteristic!r}: bins {', '.join(map(repr, adjusted))} have no goods or no bads in development; "
            "0.5 was added to both counts to keep their WoE finite. Group them with a neighbour to avoid this."
        )
    return ClassedCharacteristic(binning, counts, evidence, origin, tuple(notes))


# --------------------------------------------------------------------------------------------
# The whole build


@dataclass(frozen=True)
class Build:
    """Everything one build produced: the scorecard and the evidence behind it.

    Attributes
    ----------
    settings : Settings
        The settings used, with every characteristic's classing written out (so that the next
        build is reproducible from them).
    source : str
        The ledger's name.
    fingerprint : Fingerprint
    samples : pandas.DataFrame
        Rows, goods, bads, indeterminates and unknowns per sample.
    characteristics : tuple of ClassedCharacteristic
        Every characteristic classed, with its counts per sample.
    selection : SelectionResult
    scorecard : Scorecard
    histograms : dict of str to ScoreHistogram
        Score histogram per sample name.
    notes : tuple of str
        Every repair, left-out column and broken constraint, for the report.
    """

    settings: Settings
    source: str
    fingerprint: Fingerprint
    samples: pd.DataFrame
    characteristics: tuple[ClassedCharacteristic, ...]
    selection: SelectionResult
    scorecard: Scorecard
    histograms: Mapping[str, ScoreHistogram]
    notes: tuple[str, ...]

    def characteristic(self, name: str) -> ClassedCharacteristic:
        """Return one classed characteristic by name."""
        return next(c for c in self.characteristics if c.name == name)

    def performance(self) -> dict[str, dict[str, float]]:
        """Return AUC, Gini and KS per sample that has goods and bads."""
        figures = {}
        for sample, histogram in self.histograms.items():
            if histogram.goods.sum() > 0 and histogram.bads.sum() > 0:
                area = auc(histogram.scores, histogram.goods, histogram.bads)
                ks = ks_statistic(histogram.scores, histogram.goods, histogram.bads)
                figures[sample] = {"auc": area.auc, "gini": area.gini, "ks": ks.statistic}
        return figures


def build_scorecard(data: Ledger | pd.DataFrame | str | os.PathLike[str], settings: Settings, *,
                    progress: Callable[[Iterable], Iterable] = lambda items: items,
                    timings: dict[str, float] | None = None) -> Build:
    """Run the whole build: classing, selection, fit, points, histograms.

    Parameters
    ----------
    data : Ledger, pandas.DataFrame or path
        A checked ledger, or a DataFrame or file to read and check with the settings.
    settings : Settings
    progress : callable
        Wraps the loop over characteristics (a progress bar in a terminal).
    timings : dict, optional
        Receives the seconds spent in each stage (for the benchmarks).

    Returns
    -------
    Build

    Raises
    ------
    FitError
        The model cannot be fitted; the message names the characteristics involved.
    LedgerError
        The data do not fit the settings.

    Example
    -------
    >>> build = build_scorecard(frame, Settings().replace(outcome={"column": "outcome", "bad": ["bad"]}))  # doctest: +SKIP
    >>> build.scorecard.score(new_applications, reason_count=4)  # doctest: +SKIP
    """
    clock = Stopwatch(timings)
    with clock("intake"):
        ledger = data if isinstance(data, Ledger) else load_ledger(data, settings)
    with clock("classing"):
        classed = class_ledger(ledger, settings, progress=progress)
    names = classed.names
    with clock("pattern table"):
        fitting = (ledger.sample == DEVELOPMENT) & ((ledger.outcome == GOOD) | (ledger.outcome == BAD))
        goods = np.where(ledger.outcome == GOOD, ledger.weight, 0.0)
        bads = np.where(ledger.outcome == BAD, ledger.weight, 0.0)
        patterns = pattern_table(classed.codes[fitting], goods[fitting], bads[fitting], characteristics=names)
    with clock("selection and fit"):
        forced = [name for name in names if settings.characteristic(name).use == "always"]
        selection = select_characteristics(
            patterns, {c.name: c.evidence.woe for c in classed.characteristics},
            {c.name: c.evidence.iv for c in classed.characteristics},
            forced=forced, selection=settings.selection, fit=settings.fit,
        )
    with clock("points and scoring"):
        table = _points(selection, classed, settings)
        binnings = tuple(classed.get(name).binning for name in table.names)
        scorecard = Scorecard(table, binnings, settings.ledger.id_column)
        columns = [names.index(name) for name in table.names]
        scores = score_codes(classed.codes[:, columns], table)
        histograms = {
            SAMPLE_NAMES[s]: score_histogram(scores[rows], ledger.outcome[rows] == GOOD, ledger.outcome[rows] == BAD,
                                             ledger.weight[rows], sample=SAMPLE_NAMES[s])
            for s in range(len(SAMPLE_NAMES)) if (rows := ledger.sample == s).any()
        }
    resolved = _resolved_settings(settings, classed)
    notes = (*ledger.notes, *classed.notes)
    return Build(resolved, ledger.source, ledger.fingerprint, ledger.sample_summary(), classed.characteristics,
                 selection, scorecard, histograms, notes)


class Stopwatch:
    """Adds the seconds spent in named stages to a dict (or does nothing without one)."""

    def __init__(self, timings: dict[str, float] | None):
        self.timings = timings

    @contextlib.contextmanager
    def __call__(self, stage: str):
        started = time.perf_counter()
        try:
            yield
        finally:
            if self.timings is not None:
                self.timings[stage] = self.timings.get(stage, 0.0) + time.perf_counter() - started


def load_ledger(data: pd.DataFrame | str | os.PathLike[str], settings: Settings, *, require_outcome: bool = True) -> Ledger:
    """Read (if a path) and check a ledger against the settings."""
    frame = read_ledger(data)
    if isinstance(data, pd.DataFrame):
        return prepare_ledger(frame, settings, require_outcome=require_outcome)
    return prepare_ledger(frame, settings, source=Path(data).name, fingerprint=fingerprint_of(data, len(frame)),
                          require_outcome=require_outcome)


def _points(selection: SelectionResult, classed: ClassedLedger, settings: Settings) -> PointsTable:
    fit = selection.fit
    coefficients = dict(zip(fit.names[1:], fit.coefficients[1:]))
    position = {name: i for i, name in enumerate(classed.names, start=1)}
    specs = {name: settings.characteristic(name) for name in coefficients}
    return points_table(
        coefficients, float(fit.coefficients[0]),
        {name: classed.get(name).evidence.woe for name in coefficients},
        {name: classed.get(name).binning.labels for name in coefficients},
        scaling(base_score=settings.scaling.base_score, base_odds=settings.scaling.base_odds, pdo=settings.scaling.pdo),
        decimals=settings.scaling.decimals,
        reason_codes={name: specs[name].reason_code or f"R{position[name]:02d}" for name in coefficients},
        reason_labels={name: specs[name].label for name in coefficients if specs[name].label},
    )


def _resolved_settings(settings: Settings, classed: ClassedLedger) -> Settings:
    """Return the settings with every characteristic's classing written out."""
    characteristics = dict(settings.characteristics)
    for char in classed.characteristics:
        spec = settings.characteristic(char.name)
        characteristics[char.name] = replace(spec, kind=char.binning.kind, use=spec.use or "auto",
                                             **classing_settings_values(char.binning))
    return replace(settings, characteristics=characteristics)
