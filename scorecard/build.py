"""The analyst's flow, stage by stage: class the ledger's characteristics, then (later stages) fit,
scale, check and package the scorecard.

This module only wires the stages together; each stage's arithmetic lives in its own module.
"""

from __future__ import annotations

import concurrent.futures
import contextlib
import os
import time
import warnings
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pandas as pd

from .checks.discrimination import auc, ks_statistic
from .classing import (
    NUMERIC, Binning, binning_from_settings, check_constraints, classing_settings_values, code_rows, coarse_classing,
    fine_classing, resolve_fallback, unseen_levels,
)
from .counting import MERGE_LIMIT, BinCounts, PatternTable, count_bins, merge_pattern_tables, pattern_table, row_table
from .errors import ScorecardWarning
from .evidence import EvidenceTable, evidence_table
from .ledger import (
    BAD, DEVELOPMENT, GOOD, SAMPLE_NAMES, STREAM_BATCH_ROWS, Characteristic, Fingerprint, Ledger, fingerprint_of,
    prepare_ledger, read_ledger, should_stream, stream_ledger,
)
from .points import (
    PointsTable, Scorecard, ScoreHistogram, merge_histograms, points_table, scaling, score_codes, score_histogram,
)
from .selection import Decision, SelectionResult, select_characteristics
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
        Development WoE per characteristic, the bin code of every row, and notes of every repair
        and broken constraint.
    """
    fine_rows, fine_weights = _fine_rows(ledger, _whole(ledger), _fitting_rows(ledger), settings, in_memory=True)
    return class_batches(_whole(ledger), ledger.characteristics, ledger.outcome, ledger.weight, ledger.sample, settings,
                         fine_rows=fine_rows, fine_weights=fine_weights, keep_codes=True, progress=progress)


def _fitting_rows(ledger: Ledger) -> np.ndarray:
    """The development rows with a good or bad outcome: the rows every fit and classing is made on."""
    return np.flatnonzero((ledger.sample == DEVELOPMENT) & ((ledger.outcome == GOOD) | (ledger.outcome == BAD)))


Batches = Callable[[Sequence[str]], Iterator[tuple[int, pd.DataFrame]]]
UNSEEN_LABEL = "(not in any group)"
THREADS = 2  # the machines this is built for have two cores or more; more threads gain little here


def class_batches(batches: Batches, characteristics: Sequence[Characteristic], outcome: np.ndarray, weight: np.ndarray,
                  sample: np.ndarray, settings: Settings, *, fine_rows: pd.DataFrame, fine_weights: np.ndarray,
                  keep_codes: bool, progress: Callable[[Iterable], Iterable] = lambda items: items) -> ClassedLedger:
    """Class every characteristic in passes over batches of rows; only count tables are kept.

    Parameters
    ----------
    batches : callable
        ``batches(columns)`` returns a fresh iterator of ``(first row, frame)``: one pass over the
        ledger reading those columns. In memory it yields the whole frame once.
    characteristics : sequence of Characteristic
    outcome, weight, sample : numpy.ndarray
        Per row of the whole ledger.
    settings : Settings
    fine_rows, fine_weights : pandas.DataFrame, numpy.ndarray
        The development rows fine cut points are taken from, and their weights.
    keep_codes : bool
        Keep every row's bin codes (in memory); a streamed build does not.
    progress : callable
        Wraps the loop over characteristics within a batch.

    Returns
    -------
    ClassedLedger

    Notes
    -----
    Pass 1 (only for characteristics without a fixed classing) counts fine bins; coarse classing
    follows from those counts. Pass 2 codes every characteristic and counts its bins, with a bin
    of its own for values the binning does not know; the settings' classing is then completed
    from the counts alone: empty missing and special-value bins go, and unknown values join the
    fallback bin.
    """
    fitting = (sample == DEVELOPMENT) & ((outcome == GOOD) | (outcome == BAD))
    proposed = [c for c in characteristics if not _is_fixed(settings, c.name)]
    fine = {c.name: _fine_binning(fine_rows[c.name], fine_weights, c, settings) for c in proposed}
    binnings, coarse_notes = {}, {}
    if fine:
        fine_counts, _, _ = _count_pass(batches, fine, outcome, weight, sample, fitting, keep_codes=False, progress=progress)
        for name in fine:
            binnings[name], coarse_notes[name] = _coarse(fine[name], fine_counts[name], settings)
    binnings.update({c.name: _provisional(c, settings) for c in characteristics if c.name not in fine})
    binnings = {c.name: binnings[c.name] for c in characteristics}
    counts, codes, stray = _count_pass(batches, binnings, outcome, weight, sample, fitting, keep_codes=keep_codes,
                                       progress=progress)
    classed, columns, notes = [], [], []
    for char in characteristics:
        origin = "settings" if char.name not in fine else "proposed"
        result, mapping = _finish(binnings[char.name], counts[char.name], stray.get(char.name, {}), origin, settings,
                                  notes=coarse_notes.get(char.name, ()))
        classed.append(result)
        notes.extend(result.notes)
        if keep_codes:
            columns.append(mapping.astype(codes[char.name].dtype)[codes[char.name]])
    n_rows = len(outcome)
    matrix = np.column_stack(columns) if columns else np.zeros((n_rows if keep_codes else 0, 0), dtype=np.uint8)
    routine = {note for routine_notes in coarse_notes.values() for note in routine_notes}
    for note in notes:
        # what the proposal did by its own rules (a small missing bin merged) goes to the report's
        # notes only; a warning is for what the analyst should act on
        if note not in routine:
            warnings.warn(note, ScorecardWarning, stacklevel=3)
    return ClassedLedger(tuple(classed), matrix, tuple(notes))


def _is_fixed(settings: Settings, name: str) -> bool:
    spec = settings.characteristic(name)
    return spec.cuts is not None or spec.groups is not None


def selection_rows(rows: np.ndarray, settings: Settings) -> np.ndarray:
    """Development rows the choice of characteristics runs on: all, or a seeded sample of a large ledger."""
    limit = settings.selection.sample_rows
    if not limit or len(rows) <= limit:
        return rows
    rng = np.random.default_rng(settings.samples.seed + 2)
    return np.sort(rng.choice(rows, size=limit, replace=False))


def _fine_sample(rows: np.ndarray, settings: Settings) -> np.ndarray:
    """Rows the fine cut points are taken from: all, or a seeded sample when the ledger is large."""
    limit = settings.classing.fine_sample_rows
    if len(rows) <= limit:
        return rows
    rng = np.random.default_rng(settings.samples.seed + 1)
    return np.sort(rng.choice(rows, size=limit, replace=False))


def _fine_binning(values, weights, char: Characteristic, settings: Settings) -> Binning:
    classing = settings.classing
    return fine_classing(values, weights, name=char.name, kind=char.kind, special_values=char.special_values,
                         max_bins=classing.max_fine_bins, rare_level_share=classing.rare_level_share)


def _coarse(fine: Binning, counts: BinCounts, settings: Settings) -> tuple[Binning, tuple[str, ...]]:
    """The optimal grouping of a fine binning, from its development counts (the unknown bin left aside)."""
    classing = settings.classing
    spec = settings.characteristic(fine.characteristic)
    known = slice(0, fine.n_bins)
    coarse = coarse_classing(
        fine, counts.goods()[known], counts.bads()[known], n_goods=counts.n_goods()[known], n_bads=counts.n_bads()[known],
        min_group_share=classing.min_group_share, min_goods=classing.min_goods, min_bads=classing.min_bads,
        max_groups=classing.max_groups, min_special_share=classing.min_special_share, trend=spec.trend or classing.trend,
    )
    binning = coarse.binning
    if spec.unseen != "worst":
        binning = resolve_fallback(binning, [], [], spec.unseen)
    return binning, coarse.notes


def _provisional(char: Characteristic, settings: Settings) -> Binning:
    """The settings' classing with own bins for every special value and for missing values."""
    spec = settings.characteristic(char.name)
    return binning_from_settings(
        char.name, char.kind, cuts=spec.cuts, groups=spec.groups, special_values=char.special_values,
        specials=spec.specials, missing=spec.missing, present_specials=char.special_values, has_missing=True,
        trend=spec.trend or settings.classing.trend,
    )


def _count_pass(batches: Batches, binnings: Mapping[str, Binning], outcome, weight, sample, fitting, *,
                keep_codes: bool, progress):
    """One pass: code every row of each characteristic and count its bins (plus a bin for unknown values).

    Characteristics are coded on two threads: numpy and pyarrow release the interpreter lock
    while they search and count, so both cores work.
    """
    counts: dict[str, BinCounts] = {}
    codes: dict[str, list[np.ndarray]] = {name: [] for name in binnings}
    stray: dict[str, dict[str, int]] = {}
    names = list(binnings)
    with concurrent.futures.ThreadPoolExecutor(max_workers=THREADS) as pool:
        for start, frame in batches(names):
            rows = slice(start, start + len(frame))

            def code_and_count(name):
                binning = binnings[name]
                column = code_rows(frame[name], binning, unseen_code=binning.n_bins)
                batch = count_bins(column, outcome[rows], weight[rows], sample[rows], characteristic=name,
                                   labels=(*binning.labels, UNSEEN_LABEL))
                unknown_in_development = batch.n_goods()[-1] + batch.n_bads()[-1] > 0
                levels = unseen_levels(frame[name][fitting[rows]], binning) if unknown_in_development else {}
                return name, column, batch, levels

            for name, column, batch, levels in progress(pool.map(code_and_count, names)):
                counts[name] = counts[name] + batch if name in counts else batch
                if keep_codes:
                    codes[name].append(column)
                for level, n in levels.items():
                    stray.setdefault(name, {})[level] = stray.get(name, {}).get(level, 0) + n
    joined = {name: np.concatenate(parts) if len(parts) != 1 else parts[0] for name, parts in codes.items() if parts}
    return counts, joined, stray


def _finish(binning: Binning, counts: BinCounts, stray: Mapping[str, int], origin: str, settings: Settings, *,
            notes: Sequence[str] = ()):
    """Complete a binning from its counts; return the classed characteristic and the code mapping."""
    spec = settings.characteristic(binning.characteristic)
    notes = list(notes)
    if origin == "settings":
        final = _without_empty_bins(binning, counts)
        final = resolve_fallback(final, *_dev_counts(counts, binning, final), spec.unseen)
    else:
        final = binning
    mapping = _code_mapping(binning, final)
    final_counts = counts.regroup(mapping, final.labels)
    if stray and origin == "settings":
        shown = ", ".join(f"{level!r} ({n} rows)" for level, n in list(stray.items())[:5])
        notes.append(
            f"{binning.characteristic!r}: levels {shown} are in no group of the settings; they go to group "
            f"{final.fallback_bin + 1} ({final.labels[final.fallback_bin]}). Add them to a group to decide yourself."
        )
    if origin == "settings":
        classing = settings.classing
        broken = check_constraints(
            final, final_counts.goods(), final_counts.bads(), n_goods=final_counts.n_goods(), n_bads=final_counts.n_bads(),
            min_group_share=classing.min_group_share, min_goods=classing.min_goods, min_bads=classing.min_bads,
            max_groups=classing.max_groups, trend=spec.trend or classing.trend,
        )
        notes += [f"the classing written in the settings breaks a constraint on this development sample: {problem}. "
                  "Change its cuts or groups, or remove them for a new proposal." for problem in broken]
    return _classed(final, final_counts, origin, tuple(notes), settings), mapping


def _without_empty_bins(binning: Binning, counts: BinCounts) -> Binning:
    """Drop own bins of special values and of missing values that no development good or bad fell in."""
    rows = counts.n_goods() + counts.n_bads()
    n_chain = binning.n_chain
    present = [v for v, b in zip(binning.special_values, binning.special_bins) if b >= n_chain and rows[b] > 0]
    has_missing = binning.missing_bin >= n_chain and rows[binning.missing_bin] > 0
    spec_missing = binning.missing_bin + 1 if 0 <= binning.missing_bin < n_chain else "own"
    specials = ["own" if b >= n_chain or b < 0 else b + 1 for b in binning.special_bins]
    return binning_from_settings(
        binning.characteristic, binning.kind, cuts=binning.cuts if binning.kind == NUMERIC else None,
        groups=binning.groups if binning.kind != NUMERIC else None, special_values=binning.special_values,
        specials=specials, missing=spec_missing, present_specials=present,
        has_missing=has_missing or binning.missing_bin < n_chain, trend=binning.trend,
    )


def _dev_counts(counts: BinCounts, provisional: Binning, final: Binning):
    """Development goods and bads of the final bins, leaving out values nothing is known about yet."""
    mapping = _code_mapping(provisional, final, fallback=final.n_bins)
    merged = counts.regroup(mapping, (*final.labels, UNSEEN_LABEL))
    return merged.goods()[: final.n_bins], merged.bads()[: final.n_bins]


def _code_mapping(provisional: Binning, final: Binning, *, fallback: int | None = None) -> np.ndarray:
    """Where each provisional bin (and the unknown-value bin after them) goes among the final bins."""
    fallback = final.fallback_bin if fallback is None else fallback
    mapping = np.full(provisional.n_bins + 1, fallback, dtype=np.int64)
    mapping[: provisional.n_chain] = np.arange(provisional.n_chain)
    for value, old in zip(provisional.special_values, provisional.special_bins):
        if old >= provisional.n_chain:
            new = final.special_bins[final.special_values.index(value)]
            mapping[old] = new if new >= 0 else fallback
    if provisional.missing_bin >= provisional.n_chain:
        mapping[provisional.missing_bin] = final.missing_bin if final.missing_bin >= 0 else fallback
    return mapping


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
                    timings: dict[str, float] | None = None, stream: bool | None = None,
                    batch_rows: int = STREAM_BATCH_ROWS) -> Build:
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
    stream : bool, optional
        Read a ledger file in batches, never whole (default: when it is larger than
        ``ledger.stream_above_mb``). Only count tables are kept; the result is the same.
    batch_rows : int
        Rows per batch when streaming.

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
        if isinstance(data, Ledger):
            ledger, batches, in_memory = data, _whole(data), True
        elif stream or (stream is None and not isinstance(data, pd.DataFrame) and should_stream(data, settings)):
            ledger, batches = stream_ledger(data, settings, batch_rows=batch_rows)
            in_memory = False
        else:
            ledger = load_ledger(data, settings)
            batches, in_memory = _whole(ledger), True
    fitting = _fitting_rows(ledger)
    with clock("classing"):
        fine_rows, fine_weights = _fine_rows(ledger, batches, fitting, settings, in_memory=in_memory)
        classed = class_batches(batches, ledger.characteristics, ledger.outcome, ledger.weight, ledger.sample, settings,
                                fine_rows=fine_rows, fine_weights=fine_weights, keep_codes=in_memory, progress=progress)
    names = classed.names
    with clock("pattern table"):
        chosen_rows = selection_rows(fitting, settings)
        choice, final_table = _pattern_tables(classed, ledger, batches, fitting, chosen_rows)
    with clock("selection and fit"):
        forced = [name for name in names if settings.characteristic(name).use == "always"]
        selection = select_characteristics(
            choice, {c.name: c.evidence.woe for c in classed.characteristics},
            {c.name: c.evidence.iv for c in classed.characteristics},
            forced=forced, selection=settings.selection, fit=settings.fit, final_patterns=final_table,
        )
    # every column's fate is on record: those intake or the analyst left out come first in the log
    left_out = tuple(Decision("settings" if why.startswith("use = never") else "intake", name, "left out", why)
                     for name, why in ledger.left_out.items())
    selection = replace(selection, log=left_out + selection.log)
    for name in selection.chosen:
        if classed.get(name).evidence.leakage_flag:
            warnings.warn(
                f"{name!r} is in the model with an IV above {settings.selection.leakage_iv} (flagged for a leakage check): "
                "check it is known at the time of application; if not, set use = \"never\" under "
                f"[characteristics.{name}] and build again.", ScorecardWarning, stacklevel=2,
            )
    with clock("points and scoring"):
        table = _points(selection, classed, settings)
        binnings = tuple(classed.get(name).binning for name in table.names)
        scorecard = Scorecard(table, binnings, settings.ledger.id_column)
        histograms = _histograms(scorecard, classed, ledger, batches)
    resolved = _resolved_settings(settings, classed)
    notes = (*ledger.notes, *classed.notes)
    return Build(resolved, ledger.source, ledger.fingerprint, ledger.sample_summary(), classed.characteristics,
                 selection, scorecard, histograms, notes)


def _whole(ledger: Ledger) -> Batches:
    """The batches of a ledger held in memory: the whole frame, once per pass."""
    return lambda columns: iter([(0, ledger.frame)])


def _fine_rows(ledger: Ledger, batches: Batches, fitting: np.ndarray, settings: Settings, *, in_memory: bool):
    """The development rows fine cut points are taken from (a pass gathers them from a streamed ledger)."""
    rows = _fine_sample(fitting, settings)
    proposed = [c.name for c in ledger.characteristics if not _is_fixed(settings, c.name)]
    if in_memory:
        return ledger.frame.iloc[rows], ledger.weight[rows]
    if not proposed:
        return ledger.frame, ledger.weight[:0]
    parts = []
    for first_row, frame in batches(proposed):
        inside = rows[(rows >= first_row) & (rows < first_row + len(frame))]
        parts.append(frame.iloc[inside - first_row])
    return pd.concat(parts, ignore_index=True), ledger.weight[rows]


def _pattern_tables(classed: ClassedLedger, ledger: Ledger, batches: Batches, fitting: np.ndarray, chosen: np.ndarray):
    """The pattern table the choice runs on, and a function making the final fit's table for some characteristics.

    When the choice runs on every development row, the final table is a subset of its table;
    otherwise the development rows are counted again for the chosen characteristics only, so
    that a large ledger's table never holds every candidate.
    """
    names = classed.names

    def table(rows: np.ndarray, columns: Sequence[str]) -> PatternTable:
        if len(rows) > MERGE_LIMIT:  # a larger table stays rows: merging would only cost memory
            return _row_table(classed, ledger, batches, rows, columns)
        parts = []
        for first_row, codes in _coded_batches(classed, batches, columns):
            inside = rows[(rows >= first_row) & (rows < first_row + len(codes))]
            outcome, weight = ledger.outcome[inside], ledger.weight[inside]
            parts.append(pattern_table(codes[inside - first_row], np.where(outcome == GOOD, weight, 0.0),
                                       np.where(outcome == BAD, weight, 0.0), characteristics=columns))
        return merge_pattern_tables(parts)

    choice = table(chosen, names)
    if len(chosen) == len(fitting):
        return choice, choice.subset
    return choice, lambda columns: table(fitting, tuple(columns))


def _row_table(classed: ClassedLedger, ledger: Ledger, batches: Batches, rows: np.ndarray,
               columns: Sequence[str]) -> PatternTable:
    """The rows' codes, goods and bads, filled in batch by batch into arrays made once."""
    outcome, weight = ledger.outcome[rows], ledger.weight[rows]
    codes = np.empty((len(rows), len(columns)), dtype=np.uint16 if any(
        classed.get(name).binning.n_bins > 255 for name in columns) else np.uint8)
    filled = 0
    for first_row, batch in _coded_batches(classed, batches, columns):
        inside = rows[filled:np.searchsorted(rows, first_row + len(batch))]  # rows are ascending
        codes[filled:filled + len(inside)] = batch[inside - first_row]
        filled += len(inside)
    return row_table(codes, np.where(outcome == GOOD, weight, 0.0), np.where(outcome == BAD, weight, 0.0),
                     characteristics=columns)


def _coded_batches(classed: ClassedLedger, batches: Batches, names: Sequence[str]):
    """Yield (first row, codes) of the named characteristics: kept codes, or coded again batch by batch."""
    if classed.codes.shape[0]:
        yield 0, classed.codes[:, [classed.names.index(n) for n in names]]
        return
    binnings = [classed.get(name).binning for name in names]
    for first_row, frame in batches(list(names)):
        yield first_row, np.column_stack([code_rows(frame[b.characteristic], b) for b in binnings])


def _histograms(scorecard: Scorecard, classed: ClassedLedger, ledger: Ledger, batches: Batches) -> dict[str, ScoreHistogram]:
    """Score histogram per sample, from every row's score."""
    parts: dict[str, list[ScoreHistogram]] = {}
    for first_row, codes in _coded_batches(classed, batches, scorecard.table.names):
        scores = score_codes(codes, scorecard.table)
        rows = slice(first_row, first_row + len(scores))
        outcome, weight, sample = ledger.outcome[rows], ledger.weight[rows], ledger.sample[rows]
        for index, name in enumerate(SAMPLE_NAMES):
            inside = sample == index
            if inside.any():
                parts.setdefault(name, []).append(score_histogram(
                    scores[inside], outcome[inside] == GOOD, outcome[inside] == BAD, weight[inside], sample=name))
    return {name: merge_histograms(pieces) for name, pieces in parts.items()}


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
