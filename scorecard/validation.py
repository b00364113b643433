"""Every validation check of a scorecard, per sample, from score histograms and bin counts.

This module only applies the functions of ``scorecard.checks`` to the samples of a build (or,
for monitoring, to a new quarter against the development baseline), with one set of score bands
fixed on the development sample so that every sample is cut the same way. The same functions
serve the build report and the monitoring report: monitoring is these checks on a new sample,
not a second implementation.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .checks import (
    AucResult, CalibrationInTheLarge, CalibrationLine, CalibrationTable, CapCurve, CutoffTable, GainsTable,
    HosmerLemeshow, KsResult, PointsShift, PsiResult, RocCurve, auc, brier_score, calibration_in_the_large,
    calibration_line, calibration_table, cap_points, cutoff_table, gains_table, hosmer_lemeshow, ks_statistic,
    points_shift, psi, roc_points, score_bands, score_psi,
)
from .errors import ScorecardError
from .points import Scaling
from .rows import ScoreHistogram
from .settings import CheckSettings
from .terms import DEVELOPMENT_NAME, SAMPLE_NAMES


@dataclass(frozen=True)
class SampleChecks:
    """Discrimination and calibration of one sample (outcomes known).

    ``calibration_line`` is None when it cannot be fitted (a single score level, or goods and
    bads separated); ``notes`` then says why.
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
    hosmer_lemeshow: HosmerLemeshow
    in_the_large: CalibrationInTheLarge
    calibration_line: CalibrationLine | None
    brier: float
    cutoffs: CutoffTable
    notes: tuple[str, ...] = ()

    @property
    def bad_rate(self) -> float:
        """Bads over goods and bads."""
        return self.bads / (self.goods + self.bads)


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
    """

    edges: np.ndarray
    samples: Mapping[str, SampleChecks]
    score_stability: Mapping[str, PsiResult]
    characteristic_stability: Mapping[str, tuple[CharacteristicStability, ...]]


def band_edges(baseline: ScoreHistogram, checks: CheckSettings) -> np.ndarray:
    """Return the score band edges: the analyst's grades, or equal-population bands of the baseline."""
    if checks.grades:
        return np.asarray(checks.grades, dtype=float)
    return score_bands(baseline.scores, baseline.everyone, n_bands=checks.bands)


def sample_checks(histogram: ScoreHistogram, scale: Scaling, edges: np.ndarray, *, in_sample: bool,
                  cutoff_step: float = 0.0) -> SampleChecks:
    """Return discrimination, calibration and cut-offs of one sample's score histogram.

    Parameters
    ----------
    histogram : ScoreHistogram
    scale : Scaling
        Turns each score into its predicted PD.
    edges : numpy.ndarray
        Score band edges (from ``band_edges``).
    in_sample : bool
        True for the sample the model was fitted on: the Hosmer–Lemeshow test then has
        bands − 2 degrees of freedom, else bands.
    cutoff_step : float
        Step between candidate cut-offs (0: every score that occurs).
    """
    keep = (histogram.goods + histogram.bads) > 0
    scores, goods, bads = histogram.scores[keep], histogram.goods[keep], histogram.bads[keep]
    pd_ = scale.pd_of_score(scores)
    table = calibration_table(scores, goods, bads, pd_, edges=edges)
    notes = []
    try:
        line = calibration_line(scores, goods, bads, pd_)
    except ScorecardError as error:
        line = None
        notes.append(f"calibration intercept and slope not computed on the {histogram.sample} sample: {error}")
    return SampleChecks(
        sample=histogram.sample, goods=float(goods.sum()), bads=float(bads.sum()),
        auc=auc(scores, goods, bads), ks=ks_statistic(scores, goods, bads), roc=roc_points(scores, goods, bads),
        cap=cap_points(scores, goods, bads), gains=gains_table(scores, goods, bads, edges=edges),
        calibration=table, hosmer_lemeshow=hosmer_lemeshow(table, in_sample=in_sample),
        in_the_large=calibration_in_the_large(scores, goods, bads, pd_), calibration_line=line,
        brier=brier_score(scores, goods, bads, pd_),
        cutoffs=cutoff_table(scores, goods, bads, step=cutoff_step or None), notes=tuple(notes),
    )


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
             checks: CheckSettings = CheckSettings()) -> Validation:
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

    Returns
    -------
    Validation
    """
    baseline = histograms[DEVELOPMENT_NAME]
    edges = band_edges(baseline, checks)
    samples = {
        name: sample_checks(h, scale, edges, in_sample=name == DEVELOPMENT_NAME, cutoff_step=checks.cutoff_step)
        for name, h in histograms.items() if h.goods.sum() > 0 and h.bads.sum() > 0
    }
    others = [name for name in histograms if name != DEVELOPMENT_NAME]
    score_stability = {
        name: score_psi(baseline.scores, baseline.everyone, histograms[name].scores, histograms[name].everyone,
                        edges=edges, watch=checks.psi_watch, act=checks.psi_act)
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
    return Validation(edges, samples, score_stability, per_characteristic)


def validate_build(build) -> Validation:
    """Run every check on a build's samples (development, hold-out, out-of-time)."""
    table = build.scorecard.table
    names = table.names
    counts = {name: {sample: build.characteristic(name).counts.everyone(index)
                     for index, sample in enumerate(SAMPLE_NAMES) if sample in build.histograms}
              for name in names}
    return validate(
        build.histograms, table.scaling, bin_counts=counts,
        points={name: table.get(name).points for name in names},
        labels={name: table.get(name).labels for name in names},
        missing_bins={b.characteristic: b.missing_bin for b in build.scorecard.binnings},
        checks=build.settings.checks,
    )
