"""The build, stage by stage: intake, classing, selection and fit, points, score histograms; and, with reject
inference, the same again on the booked applications and the inferred rejects.

This module only wires the stages together; each stage's arithmetic lives in its own room, and
the rows are the row source's (``scorecard.rows``).
"""

from __future__ import annotations

import contextlib
import os
import time
import warnings
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from .challenger import DESIGN_CELLS_LIMIT, Challenger, bin_effects, challenger_log_odds, compare, fit_challenger
from .checks.discrimination import auc, ks_statistic
from .classing import ClassedCharacteristic, ClassedLedger, class_ledger, classing_settings_values, fine_binnings
from .errors import ScorecardWarning
from .intake import Fingerprint, Ledger, open_ledger, rows_in_memory, with_inferred_rejects
from .points import PointsTable, points_table, scaling
from .rejects import BandRates, InferredRejects, band_rates, infer_rejects
from .rows import InProcessRows, PatternTable, RowSource, ScoreHistogram, goods_and_bads, score_codes, score_histogram
from .scoring import Scorecard
from .selection import Decision, SelectionResult, select_characteristics
from .settings import Settings
from .terms import BAD, COMPARISON, DEVELOPMENT, DEVELOPMENT_NAME, GOOD, NO_INFERENCE, SAMPLE_NAMES

PART_ROWS = 1_000_000  # rows looked at a time where a temporary of every row would do the same


@dataclass(frozen=True)
class RejectInference:
    """Reject inference in a build: the accepted-only model beside the one delivered, and the rejects' figures.

    Attributes
    ----------
    inferred : InferredRejects
        The in-time rejects' accepted-only scores and their inferred shares of bad.
    accepted_selection : SelectionResult
        The choice and fit of the accepted-only model.
    accepted_scorecard : Scorecard
        The accepted-only scorecard.
    accepted_histograms : dict of str to ScoreHistogram
        The accepted-only scorecard's score histogram of the booked applications, per sample.
    bands : BandRates
        Bad rates by band: development accepts as observed, in-time rejects as inferred.
    rejected : ScoreHistogram
        The in-time rejects' scores on the scorecard delivered (their weight among the others).
    n_rejects : int
        Rejected applications in the ledger, in time or not.
    """

    inferred: InferredRejects
    accepted_selection: SelectionResult
    accepted_scorecard: Scorecard
    accepted_histograms: Mapping[str, ScoreHistogram]
    bands: BandRates
    rejected: ScoreHistogram
    n_rejects: int

    def accepted_performance(self) -> dict[str, dict[str, float]]:
        """AUC, Gini and KS of the accepted-only scorecard per sample of booked applications."""
        return performance_of(self.accepted_histograms)


@dataclass(frozen=True)
class ProtectedAttribute:
    """A protected attribute's levels, and what the fairness checks need of them (counted in one pass).

    Attributes
    ----------
    name : str
    levels : tuple of str
    histograms : dict of sample name to (dict of level to ScoreHistogram)
        Each level's scores, per sample.
    crosstabs : dict of characteristic to numpy.ndarray
        Per model characteristic, the development sample's weighted rows per bin (rows) and level (columns).
    """

    name: str
    levels: tuple[str, ...]
    histograms: Mapping[str, Mapping[str, ScoreHistogram]]
    crosstabs: Mapping[str, np.ndarray]


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
    rejects : RejectInference or None
        With reject inference: the accepted-only model and the rejects' figures (the scorecard
        above is the one fitted with the inferred rejects; its histograms are of booked
        applications only, whose outcomes are known).
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
    rejects: RejectInference | None = None
    protected: tuple[ProtectedAttribute, ...] = ()
    challenger: Challenger | None = None

    def characteristic(self, name: str) -> ClassedCharacteristic:
        """Return one classed characteristic by name."""
        return next(c for c in self.characteristics if c.name == name)

    def selection_left_out(self) -> dict[str, str]:
        """The columns left out before selection (by intake or the settings), with the reason."""
        return {d.characteristic: d.reason for d in self.selection.log if d.step in ("intake", "settings")}

    def performance(self) -> dict[str, dict[str, float]]:
        """Return AUC (with its DeLong standard error), Gini and KS per sample that has goods and bads.

        The model file keeps them: monitoring tests a new quarter's AUC against the most honest
        sample's, with the variances of both.
        """
        return performance_of(self.histograms)


def performance_of(histograms: Mapping[str, ScoreHistogram]) -> dict[str, dict[str, float]]:
    """Return AUC (with its DeLong standard error), Gini and KS per sample whose histogram has goods and bads."""
    figures = {}
    for sample, histogram in histograms.items():
        if histogram.goods.sum() > 0 and histogram.bads.sum() > 0:
            area = auc(histogram.scores, histogram.goods, histogram.bads)
            ks = ks_statistic(histogram.scores, histogram.goods, histogram.bads)
            figures[sample] = {"auc": area.auc, "auc_std_error": area.std_error, "gini": area.gini, "ks": ks.statistic}
    return figures


def build_scorecard(data: Ledger | pd.DataFrame | str | os.PathLike[str], settings: Settings, *,
                    progress: Callable[[Iterable], Iterable] = lambda items: items,
                    timings: dict[str, float] | None = None, stream: bool | None = None,
                    rows: RowSource | None = None) -> Build:
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
        Read a ledger file in batches of ``ledger.batch_rows``, never whole (True), whole
        (False), or as ``scorecard.rows.reads_in_batches`` decides from its size (None). Only
        count tables are kept; the result is the same.
    rows : RowSource, optional
        The rows of ``data`` when it is a ``Ledger`` already opened with ``open_ledger`` (in this
        process, or kept by an engine; default: the ledger's own frame, held in memory).

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
            ledger, rows = data, rows or rows_in_memory(data)
        else:
            ledger, rows = open_ledger(data, settings, stream=stream)
    model = _model(ledger, rows, settings, clock, progress)
    with clock("points and scoring"):
        histograms = rows.score_histograms(model.binnings, model.table, kept=model.classed.kept)
    rejects, notes = None, ()
    if ledger.rejects is not None and ledger.rejects.in_time.any() and settings.rejects.method != NO_INFERENCE:
        with clock("reject inference"):
            model, rejects, notes = _infer_rejects(ledger, settings, model, histograms, clock, progress)
            histograms = rows.score_histograms(model.binnings, model.table)  # booked rows, with their known outcomes
    for name in model.selection.chosen:
        if model.classed.get(name).evidence.leakage_flag:
            warnings.warn(
                f"{name!r} is in the model with an IV above {settings.selection.leakage_iv} (flagged for a leakage check): "
                "check it is known at the time of application; if not, set use = \"never\" under "
                f"[characteristics.{name}] and build again.", ScorecardWarning, stacklevel=2,
            )
    with clock("fairness"):
        protected, fairness_notes = _protected_attributes(ledger, rows, model, kept=None if rejects else model.classed.kept)
    with clock("challenger"):
        challenger, challenger_notes = _challenger(ledger, rows, model, settings)
    resolved = _resolved_settings(settings, model.classed)
    notes = (*ledger.notes, *model.classed.notes, *notes, *fairness_notes, *challenger_notes)
    return Build(resolved, ledger.source, ledger.fingerprint, ledger.sample_summary(), model.classed.characteristics,
                 model.selection, model.scorecard, histograms, notes, rejects, protected, challenger)


def _challenger(ledger: Ledger, rows, model: _Model, settings: Settings) -> tuple[Challenger | None, tuple[str, ...]]:
    """Fit the challenger on the fine bins of every candidate and compare it with the scorecard on the same rows."""
    names = model.classed.names
    if not hasattr(rows, "coded_batches"):
        return None, ("The challenger was not fitted: it scores the rows in this process, and this ledger's rows are "
                      "kept by an engine (build it in process to have it).",)
    fine = fine_binnings(ledger, rows, settings, names)
    n_bins = [fine[name].n_bins for name in names]
    # every development row, as the scorecard's final fit; its seeded selection sub-sample when that is too many
    too_many = rows.n_fitting() * sum(n_bins) > DESIGN_CELLS_LIMIT
    table = rows.pattern_table("selection" if too_many else "", [fine[name] for name in names])
    if table.n_patterns * sum(n_bins) > DESIGN_CELLS_LIMIT:
        return None, (f"The challenger was not fitted: its design would hold {table.n_patterns:,} patterns × "
                      f"{sum(n_bins):,} indicators, more than this build keeps in memory.",)
    codes = table.part(names)
    fit = fit_challenger(list(codes.T), n_bins, *goods_and_bads(table), names=names, l2=settings.challenger.l2)
    effects = bin_effects(fit, n_bins)
    compared = {index: _compared_rows(rows, index) for index in range(len(SAMPLE_NAMES))}
    challenger_scores = _row_scores(rows, [fine[name] for name in names], compared,
                                    lambda codes: challenger_log_odds(codes, fit, effects))
    scorecard_scores = _row_scores(rows, model.binnings, compared, lambda codes: score_codes(codes, model.table))
    comparisons = {}
    for index, name in enumerate(SAMPLE_NAMES):
        inside = compared[index]
        outcome, weight = rows.outcome[inside], rows.weight[inside]
        goods, bads = np.where(outcome == GOOD, weight, 0.0), np.where(outcome == BAD, weight, 0.0)
        if goods.sum() > 1 and bads.sum() > 1:
            comparisons[name] = compare(name, scorecard_scores[index], challenger_scores[index], goods, bads)
    return Challenger(tuple(names), sum(n_bins), settings.challenger.l2, fit, comparisons), ()


def _compared_rows(rows, sample: int) -> np.ndarray:
    """The rows of a sample the challenger is compared on: every row, or the seeded sub-sample of its goods and
    bads drawn at intake when it has more than ``COMPARISON_ROWS`` (ascending row numbers either way)."""
    drawn = rows.subsamples.get(f"{COMPARISON} {SAMPLE_NAMES[sample]}")
    if drawn is not None:
        return drawn
    parts = [np.flatnonzero(rows.sample[first:first + PART_ROWS] == sample) + first
             for first in range(0, len(rows.sample), PART_ROWS)]
    return np.concatenate(parts) if parts else np.zeros(0, dtype=np.int64)


def _row_scores(rows, binnings: Sequence, compared: Mapping[int, np.ndarray],
                score: Callable[[np.ndarray], np.ndarray]) -> dict[int, np.ndarray]:
    """The score of the compared rows of each sample, from their codes (one pass over the rows)."""
    scores = {index: np.empty(len(inside)) for index, inside in compared.items()}
    for first_row, codes in rows.coded_batches(binnings):
        for index, inside in compared.items():
            wanted = inside[np.searchsorted(inside, first_row):np.searchsorted(inside, first_row + len(codes))]
            start = np.searchsorted(inside, first_row)
            scores[index][start:start + len(wanted)] = score(codes[wanted - first_row])
    return scores


def _protected_attributes(ledger: Ledger, rows, model: _Model, *, kept) -> tuple[tuple, tuple[str, ...]]:
    """Count the protected attributes' levels for the fairness checks; an engine that cannot yet says so in a note."""
    if not ledger.protected:
        return (), ()
    if not hasattr(rows, "level_tables"):
        return (), (f"The fairness checks of {', '.join(map(repr, ledger.protected))} were not computed: they count the "
                    "rows in this process, and this ledger's rows are kept by an engine (build it in process to have them).",)
    return tuple(_protected(name, levels, rows, model.binnings, model.table, kept)
                 for name, levels in ledger.protected.items()), ()


@dataclass(frozen=True)
class _Model:
    """One pass of classing, selection, fit and points over some rows."""

    classed: ClassedLedger
    selection: SelectionResult
    table: PointsTable
    scorecard: Scorecard

    @property
    def binnings(self) -> tuple:
        return self.scorecard.binnings


def _model(ledger: Ledger, rows: InProcessRows, settings: Settings, clock, progress) -> _Model:
    """Class every characteristic, choose and fit the model, and scale it to points."""
    with clock("classing"):
        classed = class_ledger(ledger, settings, rows=rows, progress=progress)
    with clock("pattern table"):
        choice, final_table = _pattern_tables(classed, rows)
    with clock("selection and fit"):
        forced = [name for name in classed.names if settings.characteristic(name).use == "always"]
        selection = select_characteristics(
            choice, {c.name: c.evidence.woe for c in classed.characteristics},
            {c.name: c.evidence.iv for c in classed.characteristics},
            forced=forced, selection=settings.selection, fit=settings.fit, final_patterns=final_table,
        )
    # every column's fate is on record: those intake or the analyst left out come first in the log
    left_out = tuple(Decision("settings" if why.startswith("use = never") else "intake", name, "left out", why)
                     for name, why in ledger.left_out.items())
    selection = replace(selection, log=left_out + selection.log)
    with clock("points and scoring"):
        table = _points(selection, classed, settings)
        scorecard = Scorecard(table, tuple(classed.get(name).binning for name in table.names), settings.ledger.id_column)
    return _Model(classed, selection, table, scorecard)


def _protected(name: str, levels, rows: InProcessRows, binnings, table: PointsTable, kept) -> ProtectedAttribute:
    """Count one protected attribute's levels: their score histograms per sample, and the model's bins by level."""
    found, crossed = rows.level_tables(binnings, table, levels.codes, rows.sample, n_levels=len(levels.levels),
                                       n_parts=len(SAMPLE_NAMES), kept=kept)
    histograms = {sample: {level: found[(index, g)] for g, level in enumerate(levels.levels) if (index, g) in found}
                  for index, sample in enumerate(SAMPLE_NAMES)}
    crosstabs = {b.characteristic: crossed.get((DEVELOPMENT, b.characteristic), np.zeros((b.n_bins, len(levels.levels))))
                 for b in binnings}
    return ProtectedAttribute(name, levels.levels, {s: h for s, h in histograms.items() if h}, crosstabs)


def _infer_rejects(ledger: Ledger, settings: Settings, accepted: _Model, histograms, clock, progress):
    """Infer the in-time rejects' goods and bads from the accepted-only model, and fit the model again with them.

    The classes stay those of the accepted-only classing (so that the build is reproducible from
    its resolved settings); their WoE, the choice of characteristics and the fit are made again on
    the booked applications and the inferred rejects together. Notes of the second pass (a shape
    the inferred rejects bend, say) are kept as notes, not warnings.
    """
    rejected = ledger.rejects
    in_time = np.flatnonzero(rejected.in_time)
    scores = _rejects_scores(ledger, in_time, accepted.scorecard)
    inferred = infer_rejects(_rejects_histogram(ledger, in_time, scores), histograms[DEVELOPMENT_NAME],
                             accepted.table.scaling.pd_of_score, method=settings.rejects.method,
                             factor=settings.rejects.factor, n_bands=settings.checks.bands)
    augmented = with_inferred_rejects(ledger, inferred.bad_share_of(scores))
    fixed = _resolved_settings(settings, accepted.classed)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ScorecardWarning)
        model = _model(augmented, rows_in_memory(augmented), fixed, clock, progress)
    origins = {c.name: c.origin for c in accepted.classed.characteristics}
    characteristics = tuple(replace(c, origin=origins[c.name]) for c in model.classed.characteristics)
    model = replace(model, classed=replace(model.classed, characteristics=characteristics, notes=()))
    notes = tuple(dict.fromkeys(f"With the inferred rejects: {w.message}" for w in caught
                                if issubclass(w.category, ScorecardWarning)))
    result = RejectInference(
        inferred=inferred, accepted_selection=accepted.selection, accepted_scorecard=accepted.scorecard,
        accepted_histograms=histograms, bands=band_rates(histograms[DEVELOPMENT_NAME], inferred, n_bands=settings.checks.bands),
        rejected=_rejects_histogram(ledger, in_time, _rejects_scores(ledger, in_time, model.scorecard)),
        n_rejects=rejected.n_rows,
    )
    return model, result, notes


def _rejects_scores(ledger: Ledger, in_time: np.ndarray, scorecard: Scorecard) -> np.ndarray:
    return score_codes(scorecard.codes(ledger.rejects.frame.iloc[in_time], source=ledger.source), scorecard.table)


def _rejects_histogram(ledger: Ledger, in_time: np.ndarray, scores: np.ndarray) -> ScoreHistogram:
    none = np.zeros(len(in_time), dtype=bool)  # no outcome: every reject counts among the others
    return score_histogram(scores, none, none, ledger.rejects.weight[in_time], sample="rejected")


def _pattern_tables(classed: ClassedLedger, rows: RowSource):
    """The pattern table the choice runs on, and a function making the final fit's table for some characteristics.

    When the choice runs on every development row, the final table is a subset of its table;
    otherwise the development rows are counted again for the chosen characteristics only, so
    that a large ledger's table never holds every candidate.
    """
    def table(subsample: str, columns: Sequence[str], *, final: bool = False) -> PatternTable:
        return rows.pattern_table(subsample, [classed.get(name).binning for name in columns], kept=classed.kept, final=final)

    choice = table("selection", classed.names)
    if "selection" not in rows.subsamples:
        return choice, choice.subset
    # the final table of a large ledger may stay where the rows are (an engine fits it there)
    return choice, lambda columns: table("fitting", tuple(columns), final=True)


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
    """Return the settings with every characteristic's classing written out, and the tool's proposal recorded beside it.

    A build from these settings reproduces this one: the classings, and who made each, with the
    notes and the bad-rate shape the tool's proposals were found with.
    """
    characteristics = dict(settings.characteristics)
    for char in classed.characteristics:
        spec = settings.characteristic(char.name)
        characteristics[char.name] = replace(spec, kind=char.binning.kind, use=spec.use or "auto",
                                             **classing_settings_values(char.binning), proposal=char.proposal)
    return replace(settings, characteristics=characteristics)
