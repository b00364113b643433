"""Re-checking a saved scorecard on new data: does it still rank, still predict, and still see
the population it was built on?

A new ledger is scored with the saved model; its score histogram and its bins' counts are
compared with the development baseline stored in the model file, with the same check functions
as the build report (``scorecard.validation``), over the whole ledger and, when it has the
model's date column, per calendar quarter. Every check gets a status: ``ok``, ``watch`` or
``act``, from thresholds in the model's settings.

How statuses are set (the report says the same):

- Stability: score PSI and each characteristic's PSI against ``checks.psi_watch`` /
  ``checks.psi_act`` (0.10 / 0.25, common practice, no source). Levels never seen at build time
  make a characteristic at least ``watch``.
- Discrimination: the one-sided test that the AUC has fallen below the development AUC
  (DeLong's variance); p below ``checks.p_watch`` / ``checks.p_act`` (0.05 / 0.01, common practice).
- Calibration: one family of tests — calibration-in-the-large, Hosmer–Lemeshow, and each score
  band's exact binomial test — with Holm's adjustment for testing many at once (S. Holm,
  Scandinavian Journal of Statistics 1979); the smallest adjusted p-value sets the status, so a
  well-calibrated quarter raises a false alarm at most p_watch of the time.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .checks import AucShortfall, PsiResult, auc_shortfall, holm, score_psi
from .errors import LedgerError
from .ledger import BAD, GOOD, UNKNOWN
from .modelfile import SavedModel
from .points import ScoreHistogram, merge_histograms, score_codes, score_histogram
from .settings import CheckSettings
from .validation import CharacteristicStability, SampleChecks, band_edges, characteristic_stability, sample_checks

STATUSES = ("ok", "watch", "act")
PSI_SOURCE = "common practice, no source"
P_SOURCE = "common practice (5% and 1% test levels), no source"


@dataclass(frozen=True)
class CheckStatus:
    """The status of one check, with the figure and the thresholds that set it.

    ``direction`` says which way is worse: 'above' (a PSI at or above ``watch`` is watch) or
    'below' (a p-value below ``watch`` is watch).
    """

    check: str
    status: str
    figure: str  # what ``value`` is: 'PSI' or 'p-value'
    value: float
    watch: float
    act: float
    direction: str
    source: str
    detail: str

    @property
    def thresholds(self) -> str:
        """The thresholds in words, e.g. 'watch at 0.1 and above, act at 0.25 and above'."""
        if self.direction == "above":
            return f"watch at {self.watch:g} and above, act at {self.act:g} and above"
        return f"watch below {self.watch:g}, act below {self.act:g}"


@dataclass(frozen=True)
class CalibrationTest:
    """One test of the calibration family, before and after Holm's adjustment."""

    test: str
    p_value: float
    adjusted_p_value: float


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
    baseline: ScoreHistogram
    baseline_performance: Mapping[str, float]
    auc_reference: str  # the build's sample whose AUC the fall test compares with
    edges: np.ndarray
    checks: CheckSettings
    notes: tuple[str, ...]

    @property
    def status(self) -> str:
        """The overall status: the worst of the whole ledger's checks."""
        return self.overall.status


def worst(statuses) -> str:
    """Return the most serious of some statuses ('ok' when there are none)."""
    return max(statuses, key=STATUSES.index, default="ok")


def p_status(p_value: float, checks: CheckSettings) -> str:
    """Return 'act' below p_act, 'watch' below p_watch, else 'ok'."""
    if p_value < checks.p_act:
        return "act"
    return "watch" if p_value < checks.p_watch else "ok"


# --------------------------------------------------------------------------------------------
# Rows to tables (the only row work here)


def monitor_ledger(saved: SavedModel, frame, outcome: np.ndarray, weight: np.ndarray, dates: np.ndarray | None, *,
                   source: str = "ledger") -> MonitorResult:
    """Score a new ledger with a saved model and check it against the development baseline.

    Parameters
    ----------
    saved : SavedModel
    frame : pandas.DataFrame
        The new ledger; holds every characteristic of the model.
    outcome : numpy.ndarray
        Outcome code per row (``scorecard.ledger``: good, bad, indeterminate, unknown).
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
    return monitor_batches(saved, lambda columns: iter([(0, frame)]), outcome, weight, dates, source=source)


def monitor_batches(saved: SavedModel, batches, outcome: np.ndarray, weight: np.ndarray, dates: np.ndarray | None, *,
                    source: str = "ledger") -> MonitorResult:
    """As ``monitor_ledger``, for a ledger read in batches: ``batches(columns)`` yields (first row, frame)."""
    if len(outcome) == 0:
        raise LedgerError(f"{source}: the ledger has no rows. Give the quarter's applications.")
    baseline = saved.baseline["development"]
    checks = saved.settings.checks
    edges = band_edges(baseline, checks)
    notes = []
    if not ((outcome == GOOD) | (outcome == BAD)).any():
        notes.append(f"{source}: no row has a known outcome, so only stability is checked (discrimination and calibration need outcomes).")
    quarter, labels = _quarters(dates, source, notes) if dates is not None else (None, ())
    parts, unseen = _count_periods(saved, batches, outcome, weight, quarter, labels, source)
    periods = [
        check_period(label, merge_histograms(part["histograms"]), part["counts"], saved, edges,
                     unseen=unseen if label == "all" else {}, unknown=part["unknown"])
        for label, part in parts.items()
    ]
    performance = saved.performance.get("development", {})
    reference, _ = reference_auc(saved.performance)
    return MonitorResult(source, periods[0], tuple(periods[1:]), baseline, performance, reference, edges, checks, tuple(notes))


def _count_periods(saved: SavedModel, batches, outcome, weight, quarter, labels, source):
    """One pass: per period, the score histogram and every model characteristic's weighted rows per bin."""
    scorecard = saved.scorecard
    table = scorecard.table
    parts = {label: {"histograms": [], "counts": {c.name: np.zeros(len(c.points)) for c in table.characteristics},
                     "unknown": 0.0} for label in ("all", *labels)}
    unseen: dict[str, dict[str, int]] = {}
    for first_row, frame in batches([b.characteristic for b in scorecard.binnings]):
        codes = scorecard.codes(frame, source=source)
        scores = score_codes(codes, table)
        rows = slice(first_row, first_row + len(frame))
        for name, levels in scorecard.unseen(frame).items():
            for level, n in levels.items():
                unseen.setdefault(name, {})[level] = unseen.get(name, {}).get(level, 0) + n
        periods = [("all", np.ones(len(frame), bool))]
        if quarter is not None:
            periods += [(label, quarter[rows] == index) for index, label in enumerate(labels)]
        for label, inside in periods:
            o, w = outcome[rows][inside], weight[rows][inside]
            part = parts[label]
            part["histograms"].append(score_histogram(scores[inside], o == GOOD, o == BAD, w, sample=label))
            for j, char in enumerate(table.characteristics):
                part["counts"][char.name] += np.bincount(codes[inside, j], weights=w, minlength=len(char.points))
            part["unknown"] += float(w[o == UNKNOWN].sum())
    return parts, unseen


def _quarters(dates: np.ndarray, source: str, notes: list[str]) -> tuple[np.ndarray, tuple[str, ...]]:
    """Return each row's calendar quarter (-1: no date) counted from the first, and the quarters' labels.

    Raises
    ------
    LedgerError
        A quarter between the first and the last has no rows.
    """
    dated = ~np.isnat(dates)
    if not dated.all():
        notes.append(f"{source}: {int((~dated).sum()):,} rows have no date; they count in the whole-ledger checks only.")
    quarter = np.full(len(dates), -1, dtype=np.int64)
    if not dated.any():
        return quarter, ()
    absolute = dates[dated].astype("datetime64[M]").astype(np.int64) // 3
    first, last = absolute.min(), absolute.max()
    quarter[dated] = absolute - first
    counts = np.bincount(quarter[dated], minlength=last - first + 1)
    empty = [_quarter_label(first + i) for i in np.flatnonzero(counts == 0)]
    if empty:
        raise LedgerError(
            f"{source}: quarter {', '.join(empty)} has no rows, between {_quarter_label(first)} and "
            f"{_quarter_label(last)}. The ledger looks incomplete; add the missing applications or monitor the quarters apart."
        )
    return quarter, tuple(_quarter_label(first + i) for i in range(last - first + 1))


def _quarter_label(index: int) -> str:
    return f"{1970 + index // 4}Q{index % 4 + 1}"


# --------------------------------------------------------------------------------------------
# Tables to checks (pure)


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
    baseline = saved.baseline["development"]
    table = saved.scorecard.table
    score_stability = score_psi(baseline.scores, baseline.everyone, histogram.scores, histogram.everyone,
                                edges=edges, watch=checks.psi_watch, act=checks.psi_act)
    characteristics = tuple(
        characteristic_stability(char.name, label, saved.bin_counts[char.name]["development"]["everyone"],
                                 counts[char.name], char.points, char.labels, missing_bin=binning.missing_bin, checks=checks)
        for char, binning in zip(table.characteristics, saved.scorecard.binnings)
    )
    statuses = [_score_stability_status(score_stability, checks)]
    statuses += [_characteristic_status(c, unseen.get(c.characteristic, {}), checks) for c in characteristics]
    outcomes = fall = None
    tests: tuple[CalibrationTest, ...] = ()
    if histogram.goods.sum() > 0 and histogram.bads.sum() > 0:
        outcomes = sample_checks(histogram, table.scaling, edges, in_sample=False, cutoff_step=checks.cutoff_step)
        sample, reference = reference_auc(saved.performance)
        if reference is not None and np.isfinite(outcomes.auc.std_error):
            fall = auc_shortfall(outcomes.auc, reference=reference)
            statuses.append(_discrimination_status(fall, outcomes, checks, sample))
        tests = calibration_family(outcomes)
        statuses.append(_calibration_status(tests, outcomes, checks))
    return PeriodMonitor(
        label, float(histogram.everyone.sum()), float(histogram.goods.sum()), float(histogram.bads.sum()), unknown,
        histogram, score_stability, characteristics, unseen, outcomes, fall, tests, tuple(statuses),
    )


def calibration_family(outcomes: SampleChecks) -> tuple[CalibrationTest, ...]:
    """Return the calibration tests of a period with Holm-adjusted p-values.

    The family: calibration-in-the-large (two-sided), Hosmer–Lemeshow, and each score band's
    exact binomial test (two-sided).
    """
    table = outcomes.calibration
    names = ["calibration in the large", "Hosmer-Lemeshow"]
    names += [f"band {low:g} to {high:g}" for low, high in zip(table.score_low, table.score_high)]
    p_values = np.array([outcomes.in_the_large.p_two_sided, outcomes.hosmer_lemeshow.p_value,
                         *table.binomial_p_two_sided], dtype=float)
    adjusted = holm(np.nan_to_num(p_values, nan=1.0))
    return tuple(CalibrationTest(n, float(p), float(a)) for n, p, a in zip(names, p_values, adjusted))


def _score_stability_status(result: PsiResult, checks: CheckSettings) -> CheckStatus:
    return CheckStatus(
        "score stability", result.status, "PSI", result.value, checks.psi_watch, checks.psi_act, "above", PSI_SOURCE,
        f"PSI of the score over {len(result.labels)} bands fixed on the development sample",
    )


def _characteristic_status(stability: CharacteristicStability, unseen: Mapping[str, int], checks: CheckSettings) -> CheckStatus:
    status = stability.psi.status
    detail = f"PSI over its bins; points shift {stability.shift.shift:+.2f}"
    if unseen:
        status = worst([status, "watch"])
        shown = ", ".join(f"{level!r} ({n:,} rows)" for level, n in list(unseen.items())[:5])
        detail += f"; levels never seen at build time: {shown}"
    return CheckStatus(
        f"stability of {stability.characteristic}", status, "PSI", stability.psi.value, checks.psi_watch, checks.psi_act,
        "above", PSI_SOURCE + "; a level never seen at build time makes it at least watch (our rule)", detail,
    )


def reference_auc(performance: Mapping[str, Mapping[str, float]]) -> tuple[str, float | None]:
    """The build's AUC a new quarter is compared with: out-of-time, else hold-out, else development.

    The development figure is optimistic (the model was fitted on it), so an honest sample comes first.
    """
    for sample in ("out-of-time", "hold-out", "development"):
        if "auc" in performance.get(sample, {}):
            return sample, float(performance[sample]["auc"])
    return "", None


def _discrimination_status(fall: AucShortfall, outcomes: SampleChecks, checks: CheckSettings, sample: str) -> CheckStatus:
    return CheckStatus(
        "discrimination", p_status(fall.p_value, checks), "p-value", fall.p_value, checks.p_watch, checks.p_act,
        "below", P_SOURCE,
        f"AUC {outcomes.auc.auc:.4f} against {fall.reference:.4f} on the {sample} sample at build time; "
        "one-sided test of a fall (DeLong's variance)",
    )


def _calibration_status(tests: Sequence[CalibrationTest], outcomes: SampleChecks, checks: CheckSettings) -> CheckStatus:
    smallest = min(tests, key=lambda t: t.adjusted_p_value)
    observed, expected = outcomes.in_the_large.observed_bads, outcomes.in_the_large.expected_bads
    return CheckStatus(
        "calibration", p_status(smallest.adjusted_p_value, checks), "p-value", smallest.adjusted_p_value,
        checks.p_watch, checks.p_act, "below", P_SOURCE + "; Holm-adjusted over the family of calibration tests",
        f"smallest adjusted p-value: {smallest.test}; {observed:,.0f} bads observed against {expected:,.1f} predicted",
    )

