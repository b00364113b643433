"""A saved scorecard on new data: does it still rank, still predict, and still see the population it was built on?

A new ledger is scored with the saved model; its score histogram and its bins' counts are
compared with the development baseline stored in the model file, with the same check functions
as the build report (``scorecard.validation``), over the whole ledger and, when it has the
model's date column, per calendar quarter. Every check gets a status (``scorecard.monitor.statuses``).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..checks import AucShortfall, ImpactTable, PsiResult, adverse_impact, auc_shortfall, score_psi
from ..errors import LedgerError
from ..modelfile import SavedModel
from ..rows import InProcessRows, ScoreHistogram
from ..settings import CheckSettings
from ..terms import DEVELOPMENT_NAME
from ..checks.discrimination import band_labels
from ..validation import (
    CharacteristicStability, SampleChecks, band_edges, characteristic_stability, sample_checks, score_range, without_outcomes,
)
from .statuses import (
    AucBaseline, CalibrationTest, CheckStatus, auc_baseline, calibration_status, characteristic_status,
    discrimination_status, score_stability_status, worst,
)


@dataclass(frozen=True)
class PeriodMonitor:
    """Every check of one period (the whole ledger, or one calendar quarter)."""

    period: str
    rows: float
    goods: float
    bads: float
    unknown: float
    histogram: ScoreHistogram
    score_stability: PsiResult
    characteristics: tuple[CharacteristicStability, ...]
    unseen: Mapping[str, Mapping[str, int]]
    outcomes: SampleChecks | None
    auc_fall: AucShortfall | None
    calibration_tests: tuple[CalibrationTest, ...]
    statuses: tuple[CheckStatus, ...]
    not_computed: Mapping[str, str] = field(default_factory=dict)  # check -> why it could not be computed

    @property
    def status(self) -> str:
        """The worst status of any check."""
        return worst(s.status for s in self.statuses)

    @property
    def indeterminate(self) -> float:
        """Weighted rows whose outcome is neither good nor bad (not counting those with none)."""
        return self.rows - self.goods - self.bads - self.unknown


@dataclass(frozen=True)
class MonitorResult:
    """A monitored ledger: the whole, each quarter, and the baseline it was compared with."""

    source: str
    overall: PeriodMonitor
    quarters: tuple[PeriodMonitor, ...]
    baseline: ScoreHistogram  # the development sample's scores: the stability baseline
    baseline_auc: AucBaseline | None  # the build's AUC the fall test compares with, on its most honest sample
    edges: np.ndarray
    checks: CheckSettings
    notes: tuple[str, ...]
    band_names: tuple[str, ...] = ()  # each score band by the scores it can hold, as in the build report
    cutoff: float | None = None  # the build's cut-off of the adverse-impact checks
    impacts: Mapping[str, Mapping[str, ImpactTable]] = field(default_factory=dict)  # attribute -> period -> table

    @property
    def status(self) -> str:
        """The overall status: the worst of the whole ledger's checks."""
        return self.overall.status


def monitor_ledger(saved: SavedModel, frame, outcome: np.ndarray, weight: np.ndarray, dates: np.ndarray | None, *,
                   source: str = "ledger") -> MonitorResult:
    """Score a new ledger with a saved model and check it against the development baseline.

    Parameters
    ----------
    saved : SavedModel
    frame : pandas.DataFrame
        The new ledger; holds every characteristic of the model.
    outcome : numpy.ndarray
        Outcome code per row (``scorecard.terms``: good, bad, indeterminate, unknown).
    weight : numpy.ndarray
        Case weight per row.
    dates : numpy.ndarray or None
        datetime64[D] per row, when the ledger has the model's date column.
    source : str
        The ledger's name.

    Returns
    -------
    MonitorResult

    Raises
    ------
    LedgerError
        A characteristic is missing, the ledger has no rows, or a calendar quarter between the
        first and the last has no rows.
    """
    saved.scorecard.codes(frame.iloc[:0], source=source)  # names a missing characteristic
    if len(outcome) == 0:
        raise LedgerError(f"{source}: the ledger has no rows. Give the quarter's applications.")
    rows = InProcessRows.from_frame(frame, outcome, weight, np.zeros(len(outcome), dtype=np.int8), dates=dates)
    return monitor_rows(saved, rows, by_quarter=dates is not None, source=source)


def monitor_rows(saved: SavedModel, rows, *, by_quarter: bool, source: str = "ledger",
                 protected: Mapping[str, object] | None = None) -> MonitorResult:
    """As ``monitor_ledger``, for the rows of a ledger opened with ``scorecard.intake.open_ledger`` (any engine).

    ``by_quarter``: the ledger has the model's date column, so every check is repeated per calendar quarter.
    ``protected`` gives each protected attribute's levels per row (``Ledger.protected``): with the
    cut-off the model file records, each level's approvals are checked for the whole ledger and each
    quarter (the adverse impact ratio).
    """
    baseline = saved.baseline[DEVELOPMENT_NAME]
    checks = saved.settings.checks
    edges = band_edges(baseline, checks)
    notes = []
    parts, unseen, undated = rows.period_counts(saved.scorecard, by_quarter=by_quarter)
    whole = parts["all"]["histogram"]
    if not (whole.goods.sum() > 0 or whole.bads.sum() > 0):
        notes.append(f"{source}: no row has a known outcome, so only stability is checked (discrimination and calibration need outcomes).")
    if undated:
        notes.append(f"{source}: {undated:,} rows have no date; they count in the whole-ledger checks only.")
    quarters = sorted(key for key in parts if key != "all")
    _check_no_quarter_is_empty(quarters, source)
    periods = [
        check_period("all" if key == "all" else _quarter_label(key), part["histogram"], part["counts"], saved, edges,
                     unseen=unseen if key == "all" else {}, unknown=part["unknown"])
        for key, part in [("all", parts["all"]), *((q, parts[q]) for q in quarters)]
    ]
    impacts, cutoff = _impacts(saved, rows, protected or {}, quarters if by_quarter else [], notes)
    return MonitorResult(source, periods[0], tuple(periods[1:]), baseline, auc_baseline(saved.performance, saved.baseline),
                         edges, checks, tuple(notes), band_labels(edges, score_range=score_range(saved.scorecard.table)),
                         cutoff, impacts)


def _impacts(saved: SavedModel, rows, protected, quarters: Sequence[int], notes: list[str]):
    """Each protected attribute's approvals at the build's cut-off, for the whole ledger and each quarter."""
    fairness = saved.document.get("fairness") or {}
    cutoff = fairness.get("cutoff")
    wanted = {name: levels for name, levels in protected.items() if name in fairness.get("attributes", {})}
    if cutoff is None or not wanted:
        return {}, cutoff
    if not hasattr(rows, "level_tables"):
        notes.append("The adverse-impact checks were not computed: they count the rows in this process, and this "
                     "ledger's rows are kept by an engine.")
        return {}, cutoff
    position = {q: i for i, q in enumerate(quarters)}
    quarter = rows.quarter_of_rows() if quarters else None
    parts = (np.array([position.get(q, -1) for q in range(int(quarter.max()) + 1)] + [-1])[quarter]
             if quarter is not None and len(quarter) else None)
    return {name: _period_impacts(saved, rows, levels, parts, quarters, cutoff) for name, levels in wanted.items()}, cutoff


def _period_impacts(saved: SavedModel, rows, levels, parts, quarters: Sequence[int], cutoff: float) -> dict[str, ImpactTable]:
    """One attribute's approvals at the cut-off: the whole ledger, then each quarter (one pass for each)."""
    binnings, table = saved.scorecard.binnings, saved.scorecard.table

    def by_part(part_of_rows, n_parts):
        found, _ = rows.level_tables(binnings, table, levels.codes, part_of_rows, n_levels=len(levels.levels), n_parts=n_parts)
        return [{level: found[(number, g)] for g, level in enumerate(levels.levels) if (number, g) in found}
                for number in range(n_parts)]

    share = saved.settings.fairness.reference_share
    impacts = {"all": adverse_impact(by_part(np.zeros(len(rows.outcome), dtype=np.int64), 1)[0], cutoff, share)}
    if parts is not None:
        for number, histograms in enumerate(by_part(parts, len(quarters))):
            if histograms:
                impacts[_quarter_label(quarters[number])] = adverse_impact(histograms, cutoff, share)
    return impacts


def _check_no_quarter_is_empty(quarters: Sequence[int], source: str) -> None:
    """Raise LedgerError when a calendar quarter between the first and the last has no rows."""
    if not quarters:
        return
    first, last = quarters[0], quarters[-1]
    empty = [_quarter_label(q) for q in range(first, last + 1) if q not in set(quarters)]
    if empty:
        raise LedgerError(
            f"{source}: quarter {', '.join(empty)} has no rows, between {_quarter_label(first)} and "
            f"{_quarter_label(last)}. The ledger looks incomplete; add the missing applications or monitor the quarters apart."
        )


def _quarter_label(index: int) -> str:
    return f"{1970 + index // 4}Q{index % 4 + 1}"


def check_period(label: str, histogram: ScoreHistogram, counts: Mapping[str, Sequence[float]], saved: SavedModel,
                 edges: np.ndarray, *, unseen: Mapping[str, Mapping[str, int]], unknown: float = 0.0) -> PeriodMonitor:
    """Return every check of one period against the development baseline, with statuses.

    Parameters
    ----------
    label : str
        The period ('all' or a quarter such as '2025Q3').
    histogram : ScoreHistogram
        The period's scores with goods and bads (rows of unknown outcome count in ``others``).
    counts : mapping of characteristic to weighted rows per bin
    saved : SavedModel
        The model, its settings and its baseline.
    edges : numpy.ndarray
        Score band edges fixed on the development sample.
    unseen : mapping
        Per characteristic, levels never seen at build time with their row counts.
    unknown : float
        Weighted rows with no outcome recorded.
    """
    checks = saved.settings.checks
    baseline = saved.baseline[DEVELOPMENT_NAME]
    table = saved.scorecard.table
    names = band_labels(edges, score_range=score_range(table))
    score_stability = score_psi(baseline.scores, baseline.everyone, histogram.scores, histogram.everyone,
                                edges=edges, watch=checks.psi_watch, act=checks.psi_act, labels=names)
    characteristics = tuple(
        characteristic_stability(char.name, label, saved.bin_counts[char.name][DEVELOPMENT_NAME]["everyone"],
                                 counts[char.name], char.points, char.labels, missing_bin=binning.missing_bin, checks=checks)
        for char, binning in zip(table.characteristics, saved.scorecard.binnings)
    )
    statuses = [score_stability_status(score_stability, checks)]
    statuses += [characteristic_status(c, unseen.get(c.characteristic, {}), checks) for c in characteristics]
    outcomes = fall = None
    tests: tuple[CalibrationTest, ...] = ()
    not_computed: dict[str, str] = {}
    missing = without_outcomes(histogram)
    if not missing:
        outcomes = sample_checks(histogram, table.scaling, edges, in_sample=False, cutoff_step=checks.cutoff_step,
                                 names=names)
        not_computed.update(outcomes.not_computed)
        reference = auc_baseline(saved.performance, saved.baseline)
        if reference is None:
            not_computed["discrimination"] = "no sample of the build had goods and bads, so there is no AUC to compare with"
        elif not (np.isfinite(outcomes.auc.std_error) and np.isfinite(reference.std_error)):
            not_computed["discrimination"] = ("the AUC's standard error needs more than one good and one bad in weight, "
                                              "in the period and in the baseline")
        else:
            fall = auc_shortfall(outcomes.auc, reference=reference.auc, reference_std_error=reference.std_error)
            statuses.append(discrimination_status(fall, outcomes, checks, reference))
        tests = outcomes.calibration_tests
        statuses.append(calibration_status(tests, outcomes, checks))
    elif histogram.goods.sum() + histogram.bads.sum() > 0:  # outcomes known, but of one kind only
        not_computed.update({"discrimination": missing, "calibration": missing})
    return PeriodMonitor(
        label, float(histogram.everyone.sum()), float(histogram.goods.sum()), float(histogram.bads.sum()), unknown,
        histogram, score_stability, characteristics, unseen, outcomes, fall, tests, tuple(statuses), not_computed,
    )
