"""The analyst's flow, stage by stage: class the ledger's characteristics, then (later stages) fit,
scale, check and package the scorecard.

This module only wires the stages together; each stage's arithmetic lives in its own module.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Iterable
from dataclasses import dataclass

import numpy as np

from .classing import (
    NUMERIC, Binning, binning_from_settings, check_constraints, code_rows, coarse_classing, fine_classing,
    resolve_fallback, unseen_levels,
)
from .counting import BinCounts, count_bins
from .errors import ScorecardWarning
from .evidence import EvidenceTable, evidence_table
from .ledger import BAD, DEVELOPMENT, GOOD, SAMPLE_NAMES, Ledger
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
