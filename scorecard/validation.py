"""Every validation check of a scorecard, per sample, from score histograms and bin counts.

This module only applies the functions of ``scorecard.checks`` to the samples of a build (or,
for monitoring, to a new quarter against the development baseline), with one set of score bands
fixed on the development sample so that every sample is cut the same way, and named the same way
(by the scores each band can hold). The same functions serve the build report and the monitoring
report: monitoring is these checks on a new sample, not a second implementation.

No check ends a build: one that cannot be computed on the data at hand (a sample without bads, a
score with too few values for the Hosmer–Lemeshow test) is recorded as not computed, with the
reason, and every report says so.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from .checks import (
    AucResult, CalibrationInTheLarge, CalibrationLine, CalibrationTable, CapCurve, CutoffTable, GainsTable,
    HosmerLemeshow, KsResult, PointsShift, PsiResult, RocCurve, auc, brier_score, calibration_in_the_large,
    calibration_line, calibration_table, cap_points, cutoff_table, gains_table, holm, hosmer_lemeshow, ks_statistic,
    points_shift, psi, roc_points, score_bands, score_psi,
)
from .checks.fairness import ImpactTable, adverse_impact, cramers_v
from .checks.discrimination import band_labels
from .errors import ScorecardError
from .points import Scaling
from .rows import ScoreHistogram
from .settings import CheckSettings
from .intake import ground_of
from .terms import CHECK_LOCAL_LAW, DEVELOPMENT_NAME, SAMPLE_NAMES


@dataclass(frozen=True)
class CalibrationTest:
    """One test of the calibration family, before and after Holm's adjustment."""

    test: str
    p_value: float
    adjusted_p_value: float


@dataclass(frozen=True)
class SampleChecks:
    """Discrimination and calibration of one sample (outcomes known).

    ``hosmer_lemeshow`` and ``calibration_line`` are None when they cannot be computed on the
    sample (too few score bands; a single score level, or goods and bads separated);
    ``not_computed`` then says why, by check.
    """

    sample: str
    goods: float
    bads: float
    auc: AucResult
    ks: KsResult
    roc: RocCurve
    cap: CapCurve
    gains: GainsTable
    calibration: CalibrationTable
    hosmer_lemeshow: HosmerLemeshow | None
    in_the_large: CalibrationInTheLarge
    calibration_line: CalibrationLine | None
    brier: float
    cutoffs: CutoffTable
    calibration_tests: tuple[CalibrationTest, ...] = ()
    not_computed: Mapping[str, str] = field(default_factory=dict)

    @property
    def bad_rate(self) -> float:
        """Bads over goods and bads."""
        return self.bads / (self.goods + self.bads)

    @property
    def notes(self) -> tuple[str, ...]:
        """Each check not computed, with its reason, as a sentence."""
        return tuple(f"{check} not computed on the {self.sample} sample: {why}" for check, why in self.not_computed.items())


@dataclass(frozen=True)
class CharacteristicStability:
    """How one characteristic's bins moved between development and another sample."""

    characteristic: str
    sample: str
    psi: PsiResult
    shift: PointsShift
    missing_share_development: float | None
    missing_share_other: float | None


@dataclass(frozen=True)
class Proxy:
    """How well one model characteristic stands in for one protected attribute (development sample)."""

    characteristic: str
    attribute: str
    cramers_v: float
    flagged: bool


@dataclass(frozen=True)
class Fairness:
    """The fair-lending checks of a build.

    Attributes
    ----------
    cutoff : float
        The cut-off the adverse impact is measured at.
    cutoff_source : str
        Where it comes from: the settings (checks.cutoff), or the first cut-off above the KS score.
    sample : str
        The sample the approvals are counted on (the cut-off table's).
    impacts : dict of attribute to ImpactTable
    proxies : tuple of Proxy
        Every model characteristic against every protected attribute, strongest first.
    """

    cutoff: float
    cutoff_source: str
    sample: str
    impacts: Mapping[str, ImpactTable]
    proxies: tuple[Proxy, ...]


@dataclass(frozen=True)
class Validation:
    """Every check of a build (or a monitored quarter), by sample.

    Attributes
    ----------
    edges : numpy.ndarray
        Score band edges fixed on the development sample (or the analyst's grades).
    samples : dict of str to SampleChecks
        Per sample with goods and bads.
    score_stability : dict of str to PsiResult
        Score PSI of each other sample against development.
    characteristic_stability : dict of str to tuple of CharacteristicStability
        Per other sample, each model characteristic's PSI and points shift.
    band_names : tuple of str
        Each band's name: the scores it can hold ('418–515'), the same on every sample.
    not_computed : dict of str to str
        Samples whose outcome checks could not be computed (no goods or no bads), with the reason.
    """

    edges: np.ndarray
    samples: Mapping[str, SampleChecks]
    score_stability: Mapping[str, PsiResult]
    characteristic_stability: Mapping[str, tuple[CharacteristicStability, ...]]
    band_names: tuple[str, ...] = ()
    not_computed: Mapping[str, str] = field(default_factory=dict)
    fairness: Fairness | None = None


def band_edges(baseline: ScoreHistogram, checks: CheckSettings) -> np.ndarray:
    """Return the score band edges: the analyst's grades, or equal-population bands of the baseline."""
    if checks.grades:
        return np.asarray(checks.grades, dtype=float)
    return score_bands(baseline.scores, baseline.everyone, n_bands=checks.bands)


def score_range(table) -> tuple[float, float, float]:
    """The lowest and highest possible scores of a points table, and the step between scores."""
    return table.min_score, table.max_score, 10.0 ** -table.decimals


def sample_checks(histogram: ScoreHistogram, scale: Scaling, edges: np.ndarray, *, in_sample: bool,
                  cutoff_step: float = 0.0, names: Sequence[str] | None = None) -> SampleChecks:
    """Return discrimination, calibration and cut-offs of one sample's score histogram.

    Parameters
    ----------
    histogram : ScoreHistogram
        Must hold goods and bads.
    scale : Scaling
        Turns each score into its predicted PD.
    edges : numpy.ndarray
        Score band edges (from ``band_edges``).
    in_sample : bool
        True for the sample the model was fitted on: the Hosmer–Lemeshow test then has
        bands − 2 degrees of freedom, else bands.
    cutoff_step : float
        Step between candidate cut-offs (0: every score that occurs).
    names : sequence of str, optional
        The bands' names (``band_names``), for the calibration family's test names.
    """
    keep = (histogram.goods + histogram.bads) > 0
    scores, goods, bads = histogram.scores[keep], histogram.goods[keep], histogram.bads[keep]
    pd_ = scale.pd_of_score(scores)
    table = calibration_table(scores, goods, bads, pd_, edges=edges)
    not_computed = {}
    try:
        line = calibration_line(scores, goods, bads, pd_)
    except ScorecardError as error:
        line = None
        not_computed["calibration intercept and slope"] = str(error).partition(": ")[2]
    area = auc(scores, goods, bads)
    if not np.isfinite(area.std_error):
        not_computed["AUC interval"] = (f"DeLong's standard error needs more than one good and one bad in weight, and "
                                        f"the sample has {_counted(area.n_goods, 'good')} and {_counted(area.n_bads, 'bad')}")
    test = None
    n_bands = int(table.band.size)
    if n_bands - (2 if in_sample else 0) >= 1:
        test = hosmer_lemeshow(table, in_sample=in_sample)
    else:
        not_computed["Hosmer–Lemeshow test"] = (
            f"the scores fall in {n_bands} band{'s' if n_bands != 1 else ''}, which leaves no degree of freedom"
            + (" (bands − 2 on the sample the model was fitted on)" if in_sample else "")
            + "; the scorecard has too few distinct scores for it")
    checks = SampleChecks(
        sample=histogram.sample, goods=float(goods.sum()), bads=float(bads.sum()),
        auc=area, ks=ks_statistic(scores, goods, bads), roc=roc_points(scores, goods, bads),
        cap=cap_points(scores, goods, bads), gains=gains_table(scores, goods, bads, edges=edges),
        calibration=table, hosmer_lemeshow=test, in_the_large=calibration_in_the_large(scores, goods, bads, pd_),
        calibration_line=line, brier=brier_score(scores, goods, bads, pd_),
        cutoffs=cutoff_table(scores, goods, bads, step=cutoff_step or None), not_computed=not_computed,
    )
    return replace(checks, calibration_tests=calibration_family(checks, names=names))


def calibration_family(outcomes: SampleChecks, *, names: Sequence[str] | None = None) -> tuple[CalibrationTest, ...]:
    """Return the calibration tests of a sample with Holm-adjusted p-values.

    The family: calibration-in-the-large (two-sided), Hosmer–Lemeshow (where computed), and each
    score band's exact binomial test (two-sided). The build report and monitoring adjust the same
    family the same way (S. Holm, "A simple sequentially rejective multiple test procedure",
    Scandinavian Journal of Statistics 6, 1979).
    """
    table = outcomes.calibration
    labels = ([names[band] for band in table.band] if names is not None
              else [f"{low:g} to {high:g}" for low, high in zip(table.score_low, table.score_high)])
    tests = [("calibration in the large", outcomes.in_the_large.p_two_sided)]
    if outcomes.hosmer_lemeshow is not None:
        tests.append(("Hosmer-Lemeshow", outcomes.hosmer_lemeshow.p_value))
    tests += [(f"band {label}", p) for label, p in zip(labels, table.binomial_p_two_sided)]
    p_values = np.array([p for _, p in tests], dtype=float)
    adjusted = holm(np.nan_to_num(p_values, nan=1.0))
    return tuple(CalibrationTest(n, float(p), float(a)) for (n, _), p, a in zip(tests, p_values, adjusted))


def without_outcomes(histogram: ScoreHistogram) -> str:
    """Why a sample's outcome checks cannot be computed ('' when they can): it lacks goods or bads."""
    goods, bads = histogram.goods.sum(), histogram.bads.sum()
    if goods > 0 and bads > 0:
        return ""
    held = (f"{_counted(goods, 'good')} and no bads" if goods > 0 else f"{_counted(bads, 'bad')} and no goods" if bads > 0
            else "no goods and no bads")
    return (f"it has {held}; discrimination and calibration compare the scores of goods with those of bads, "
            "so they need some of each")


def _counted(weight: float, noun: str) -> str:
    return f"{weight:,.4g} {noun}" + ("" if weight == 1 else "s")


def characteristic_stability(name: str, sample: str, baseline: Sequence[float], other: Sequence[float],
                             points: Sequence[float], labels: Sequence[str], *, missing_bin: int,
                             checks: CheckSettings) -> CharacteristicStability:
    """Return one characteristic's PSI over its bins and its points shift against development."""
    baseline, other = np.asarray(baseline, float), np.asarray(other, float)
    index = psi(baseline, other, labels=list(labels), watch=checks.psi_watch, act=checks.psi_act)
    shift = points_shift(baseline, other, np.asarray(points, float))

    def missing_share(counts):
        return float(counts[missing_bin] / counts.sum()) if missing_bin >= 0 else None

    return CharacteristicStability(name, sample, index, shift, missing_share(baseline), missing_share(other))


def validate(histograms: Mapping[str, ScoreHistogram], scale: Scaling, *,
             bin_counts: Mapping[str, Mapping[str, Sequence[float]]], points: Mapping[str, Sequence[float]],
             labels: Mapping[str, Sequence[str]], missing_bins: Mapping[str, int],
             checks: CheckSettings = CheckSettings(), scores: tuple[float, float, float] | None = None) -> Validation:
    """Run every check on every sample of a build.

    Parameters
    ----------
    histograms : mapping of sample name to ScoreHistogram
        Must hold 'development'.
    scale : Scaling
    bin_counts : mapping of characteristic to (mapping of sample name to weighted rows per bin)
    points, labels : mappings of characteristic to per-bin points and labels
    missing_bins : mapping of characteristic to its missing bin (-1: none of its own)
    checks : CheckSettings
        Bands, grades and thresholds.
    scores : (lowest, highest, step), optional
        The possible scores (``score_range``): the bands are named by the scores each can hold.

    Returns
    -------
    Validation
        A sample without goods or without bads gets no outcome checks; ``not_computed`` says so.
    """
    baseline = histograms[DEVELOPMENT_NAME]
    edges = band_edges(baseline, checks)
    names = band_labels(edges, score_range=scores)
    not_computed = {name: why for name, h in histograms.items() if (why := without_outcomes(h))}
    samples = {
        name: sample_checks(h, scale, edges, in_sample=name == DEVELOPMENT_NAME, cutoff_step=checks.cutoff_step,
                            names=names)
        for name, h in histograms.items() if name not in not_computed
    }
    others = [name for name in histograms if name != DEVELOPMENT_NAME]
    score_stability = {
        name: score_psi(baseline.scores, baseline.everyone, histograms[name].scores, histograms[name].everyone,
                        edges=edges, watch=checks.psi_watch, act=checks.psi_act, labels=names)
        for name in others
    }
    per_characteristic = {
        name: tuple(
            characteristic_stability(char, name, bin_counts[char][DEVELOPMENT_NAME], bin_counts[char][name], points[char],
                                     labels[char], missing_bin=missing_bins[char], checks=checks)
            for char in points
        )
        for name in others
    }
    return Validation(edges, samples, score_stability, per_characteristic, names, not_computed)


def cutoff_sample(validation: Validation) -> str:
    """The sample the cut-off table and the adverse-impact checks are on: hold-out, else development."""
    return "hold-out" if "hold-out" in validation.samples else DEVELOPMENT_NAME


def marked_cutoff(checks: SampleChecks) -> float | None:
    """The first candidate cut-off above the KS score (None when there is none above it)."""
    cutoffs = checks.cutoffs.cutoffs
    row = int(np.searchsorted(cutoffs, checks.ks.score, side="right"))
    return float(cutoffs[row]) if row < len(cutoffs) else None


def chosen_cutoff(checks: SampleChecks, settings: CheckSettings) -> tuple[float, str]:
    """The cut-off of the adverse-impact checks, and where it comes from: the settings' ``checks.cutoff``, else
    the first cut-off above the KS score of the cut-off table's sample."""
    if settings.cutoff:
        return float(settings.cutoff), "checks.cutoff in the settings"
    found = marked_cutoff(checks)
    chosen = found if found is not None else float(checks.cutoffs.cutoffs[0])
    return chosen, f"the first cut-off above the KS score on the {checks.sample} sample (set checks.cutoff to choose it)"


def build_cutoff(build) -> tuple[float, str]:
    """``chosen_cutoff`` of a build, from its score histograms alone (the model file records it for monitoring)."""
    sample = "hold-out" if not without_outcomes(build.histograms.get("hold-out", _EMPTY)) else DEVELOPMENT_NAME
    histogram = build.histograms[sample]
    keep = (histogram.goods + histogram.bads) > 0
    scores, goods, bads = histogram.scores[keep], histogram.goods[keep], histogram.bads[keep]
    checks = build.settings.checks
    cutoffs = cutoff_table(scores, goods, bads, step=checks.cutoff_step or None)
    table = SimpleSample(sample, ks_statistic(scores, goods, bads), cutoffs)
    return chosen_cutoff(table, checks)


@dataclass(frozen=True)
class SimpleSample:
    """What ``chosen_cutoff`` reads of a sample's checks: its name, its KS and its cut-off table."""

    sample: str
    ks: KsResult
    cutoffs: CutoffTable


_EMPTY = ScoreHistogram("", np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0))


def fairness_checks(build, validation: Validation) -> Fairness | None:
    """Return the proxy and adverse-impact checks of a build's protected attributes (None without any).

    Proxies: Cramér's V of each model characteristic's bins against each attribute's levels, on the
    development sample, flagged above ``fairness.proxy_cramers_v``. Adverse impact: per attribute,
    each level's approvals at the cut-off (``checks.cutoff``, else the first cut-off above the KS
    score) on the cut-off table's sample.
    """
    if not build.protected:
        return None
    settings = build.settings
    sample = cutoff_sample(validation)
    chosen, source = chosen_cutoff(validation.samples[sample], settings.checks)
    threshold = settings.fairness.proxy_cramers_v
    proxies = [Proxy(name, attribute.name, value, value > threshold)
               for attribute in build.protected for name, table in attribute.crosstabs.items()
               for value in [cramers_v(table)]]
    impacts = {attribute.name: adverse_impact(attribute.histograms.get(sample, {}), chosen,
                                              settings.fairness.reference_share)
               for attribute in build.protected if attribute.histograms.get(sample)}
    return Fairness(chosen, source, sample, impacts, tuple(sorted(proxies, key=lambda p: -p.cramers_v)))


def validate_build(build) -> Validation:
    """Run every check on a build's samples (development, hold-out, out-of-time), and the fairness checks."""
    table = build.scorecard.table
    names = table.names
    counts = {name: {sample: build.characteristic(name).counts.everyone(index)
                     for index, sample in enumerate(SAMPLE_NAMES) if sample in build.histograms}
              for name in names}
    validation = validate(
        build.histograms, table.scaling, bin_counts=counts,
        points={name: table.get(name).points for name in names},
        labels={name: table.get(name).labels for name in names},
        missing_bins={b.characteristic: b.missing_bin for b in build.scorecard.binnings},
        checks=build.settings.checks, scores=score_range(table),
    )
    return replace(validation, fairness=fairness_checks(build, validation))


@dataclass(frozen=True)
class Flag:
    """One thing a reviewer should look at first, and where the report shows it.

    Attributes
    ----------
    kind : str
        'leakage', 'special value', 'over-fitting', 'coefficient', 'reversal', 'fit', 'stability',
        'calibration', 'not computed', 'fair lending', 'screen', 'challenger' or 'notes'.
    text : str
        What was found, in a sentence with its figure and threshold.
    section : str
        The part of the report that shows the evidence ('characteristics', 'fit', ...).
    """

    kind: str
    text: str
    section: str


def review_flags(build, validation: Validation) -> tuple[Flag, ...]:
    """Return every flag a build raises, for the report's and the workbook's list "For the reviewer".

    Leakage (IV above ``selection.leakage_iv``), over-fitting (a Gini that falls from development to
    hold-out or out-of-time by more than ``checks.gini_drop``, relatively), coefficients outside
    ``checks.coefficient_range`` or negative, a fit that did not converge, stability and calibration
    statuses other than ok (calibration by the Holm-adjusted family, as monitoring judges it), every
    check not computed, and the notes of the build. The thresholds are common practice, no source.
    """
    settings, table, fit = build.settings, build.scorecard.table, build.selection.fit
    checks = settings.checks
    flags = [Flag("leakage", f"{name!r} is in the model with IV {build.characteristic(name).evidence.iv:.3f}, above the "
                             f"leakage threshold {settings.selection.leakage_iv:g}: confirm it is known when an "
                             "application is made.", "characteristics")
             for name in table.names if build.characteristic(name).evidence.leakage_flag]
    flags += [Flag("special value", f"{binning.characteristic!r} is in the model with special value {value:g}, whose meaning "
                                    "the settings do not give: its bin reads 'code ... (meaning not given)'. Give it in "
                                    "special_values, e.g. {-1 = \"no record\"}.", "characteristics")
              for binning in build.scorecard.binnings
              for value, meaning in zip(binning.special_values, binning.special_meanings or ("",) * len(binning.special_values))
              if not meaning]
    flags += _overfitting_flags(validation, checks)
    flags += _coefficient_flags(fit, checks)
    if not fit.converged:
        flags.append(Flag("fit", f"The fit did not converge in {fit.iterations} iterations.", "fit"))
    flags += [Flag("stability", f"Score PSI of the {sample} sample against development is {result.value:.4f}: "
                                f"{result.status}.", "stability")
              for sample, result in validation.score_stability.items() if result.status != "ok"]
    flags += [Flag("stability", f"PSI of {item.characteristic!r} on the {sample} sample is {item.psi.value:.4f}: "
                                f"{item.psi.status}.", "stability")
              for sample, items in validation.characteristic_stability.items() for item in items if item.psi.status != "ok"]
    for sample, result in validation.samples.items():
        smallest = min(result.calibration_tests, key=lambda test: test.adjusted_p_value, default=None)
        if smallest is not None and smallest.adjusted_p_value < checks.p_watch:
            flags.append(Flag("calibration", f"Calibration on the {sample} sample: the smallest Holm-adjusted p-value "
                                             f"of its family of tests is {smallest.adjusted_p_value:.3g} ({smallest.test}), "
                                             f"below {checks.p_watch:g}.", "calibration"))
    flags += [Flag("not computed", f"Discrimination and calibration not computed on the {sample} sample: {why}.", "discrimination")
              for sample, why in validation.not_computed.items()]
    flags += [Flag("not computed", f"{note[0].upper()}{note[1:]}.", "calibration")
              for result in validation.samples.values() for note in result.notes]
    flags += _fairness_flags(build, validation)
    flags += [Flag("screen", f"{test.characteristic!r} was screened out at IV {test.iv:.3f} but adds to the model: score "
                             f"test p-value {test.p_value:.3g} against the final model.", "selection")
              for test in getattr(build.selection, "screen_tests", ()) if test.significant]
    flags += challenger_flags(build)
    if build.notes:
        flags.append(Flag("notes", f"The build made {len(build.notes)} note{'s' if len(build.notes) != 1 else ''} of what "
                                   "was left out, repaired or merged; read them.", "data"))
    return tuple(flags)


def challenger_flags(build) -> list[Flag]:
    """The challenger above the scorecard on an honest sample by more than ``challenger.auc_gap`` and significantly
    (DeLong's paired test, p below ``checks.p_watch``)."""
    challenger = getattr(build, "challenger", None)
    if challenger is None:
        return []
    gap, p_watch = build.settings.challenger.auc_gap, build.settings.checks.p_watch
    return [Flag("challenger", f"On the {sample} sample the challenger (every candidate on its fine bins) reaches AUC "
                               f"{c.challenger.auc:.4f} against the scorecard's {c.scorecard.auc:.4f}: {c.paired.difference:+.4f} "
                               f"for the challenger, more than challenger.auc_gap = {gap:g}, DeLong's paired p-value "
                               f"{c.paired.p_value:.3g}. The scorecard's format leaves discrimination behind; look at what "
                               "the challenger uses that the scorecard does not.", "discrimination")
            for sample, c in challenger.comparisons.items()
            if sample != DEVELOPMENT_NAME and c.paired.difference > gap and c.paired.p_value < p_watch]


def _fairness_flags(build, validation: Validation) -> list[Flag]:
    """Protected grounds in the model, proxies, and levels approved at under the four-fifths rule of thumb."""
    settings = build.settings
    flags = []
    for name in build.scorecard.table.names:
        binning = next(b for b in build.scorecard.binnings if b.characteristic == name)
        ground = ground_of(name, binning.levels, settings.fairness.grounds)
        note = settings.characteristic(name).note
        if ground and CHECK_LOCAL_LAW in ground:
            flags.append(Flag("fair lending", f"{name!r} is in the model and looks like {ground}: check local law"
                                              + (f" (the settings' note: {note!r})." if note else "."), "fairness"))
        elif ground:
            flags.append(Flag("fair lending", f"{name!r} is in the model and looks like {ground}; the settings allow it "
                                              f"with the note: {note!r}.", "fairness"))
    fairness = validation.fairness
    if fairness is None:
        return flags
    flags += [Flag("fair lending", f"{p.characteristic!r} stands in for the protected attribute {p.attribute!r}: "
                                   f"Cramér's V {p.cramers_v:.3f}, above {settings.fairness.proxy_cramers_v:g}.", "fairness")
              for p in fairness.proxies if p.flagged]
    guide = settings.fairness.impact_ratio
    for attribute, impact in fairness.impacts.items():
        for level, ratio, rate in zip(impact.levels, impact.ratio, impact.approval_rate):
            if np.isfinite(ratio) and ratio < guide:
                flags.append(Flag("fair lending", f"At the cut-off {impact.cutoff:g}, level {level!r} of {attribute!r} is "
                                                  f"approved at {rate:.1%}, {ratio:.2f} of the rate of {impact.reference!r} "
                                                  f"(under the four-fifths guide, {guide:g}; a guide, not a verdict).",
                                  "fairness"))
    return flags


def _overfitting_flags(validation: Validation, checks: CheckSettings) -> list[Flag]:
    development = validation.samples.get(DEVELOPMENT_NAME)
    if development is None or development.auc.gini <= 0:
        return []
    flags = []
    for sample, result in validation.samples.items():
        drop = 1 - result.auc.gini / development.auc.gini
        if sample != DEVELOPMENT_NAME and drop > checks.gini_drop:
            flags.append(Flag("over-fitting", f"The Gini falls from {development.auc.gini:.4f} on development to "
                                              f"{result.auc.gini:.4f} on the {sample} sample, {drop:.1%} less: more "
                                              f"than {checks.gini_drop:.0%}, which can mean over-fitting.", "discrimination"))
    return flags


def _coefficient_flags(fit, checks: CheckSettings) -> list[Flag]:
    low, high = checks.coefficient_range
    flags = []
    for name, coefficient in zip(fit.names[1:], fit.coefficients[1:]):
        if coefficient < 0:
            flags.append(Flag("reversal", f"The coefficient of {name!r} is negative ({coefficient:.4f}): a reversal of "
                                          "its WoE's meaning.", "fit"))
        elif not low <= coefficient <= high:
            flags.append(Flag("coefficient", f"The coefficient of {name!r} is {coefficient:.4f}, outside {low:g} to "
                                             f"{high:g}: alone its WoE would have 1, so it suggests collinearity with "
                                             "other characteristics or over-fitting.", "fit"))
    return flags
