"""The build, stage by stage: intake, classing, selection and fit, points, score histograms.

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

from .checks.discrimination import auc, ks_statistic
from .classing import ClassedCharacteristic, ClassedLedger, class_ledger, classing_settings_values
from .errors import ScorecardWarning
from .intake import Fingerprint, Ledger, open_ledger, rows_in_memory
from .points import PointsTable, points_table, scaling
from .rows import InProcessRows, PatternTable, ScoreHistogram
from .scoring import Scorecard
from .selection import Decision, SelectionResult, select_characteristics
from .settings import Settings


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
        """Return AUC (with its DeLong standard error), Gini and KS per sample that has goods and bads.

        The model file keeps them: monitoring tests a new quarter's AUC against the most honest
        sample's, with the variances of both.
        """
        figures = {}
        for sample, histogram in self.histograms.items():
            if histogram.goods.sum() > 0 and histogram.bads.sum() > 0:
                area = auc(histogram.scores, histogram.goods, histogram.bads)
                ks = ks_statistic(histogram.scores, histogram.goods, histogram.bads)
                figures[sample] = {"auc": area.auc, "auc_std_error": area.std_error, "gini": area.gini, "ks": ks.statistic}
        return figures


def build_scorecard(data: Ledger | pd.DataFrame | str | os.PathLike[str], settings: Settings, *,
                    progress: Callable[[Iterable], Iterable] = lambda items: items,
                    timings: dict[str, float] | None = None, stream: bool | None = None,
                    rows: InProcessRows | None = None) -> Build:
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
    rows : InProcessRows, optional
        The rows of ``data`` when it is a ``Ledger`` already opened with ``open_ledger``
        (default: the ledger's own frame, held in memory).

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
    with clock("classing"):
        classed = class_ledger(ledger, settings, rows=rows, progress=progress)
    names = classed.names
    with clock("pattern table"):
        choice, final_table = _pattern_tables(classed, rows)
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
        histograms = rows.score_histograms(binnings, table, kept=classed.kept)
    resolved = _resolved_settings(settings, classed)
    notes = (*ledger.notes, *classed.notes)
    return Build(resolved, ledger.source, ledger.fingerprint, ledger.sample_summary(), classed.characteristics,
                 selection, scorecard, histograms, notes)


def _pattern_tables(classed: ClassedLedger, rows: InProcessRows):
    """The pattern table the choice runs on, and a function making the final fit's table for some characteristics.

    When the choice runs on every development row, the final table is a subset of its table;
    otherwise the development rows are counted again for the chosen characteristics only, so
    that a large ledger's table never holds every candidate.
    """
    fitting, chosen = rows.fitting_rows(), rows.fitting_rows("selection")

    def table(which: np.ndarray, columns: Sequence[str]) -> PatternTable:
        return rows.pattern_table(which, [classed.get(name).binning for name in columns], kept=classed.kept)

    choice = table(chosen, classed.names)
    if len(chosen) == len(fitting):
        return choice, choice.subset
    return choice, lambda columns: table(fitting, tuple(columns))


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
