"""Tests of scorecard/validation.py: every check applied per sample, on bands fixed on the development sample."""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from scorecard.build import build_scorecard
from scorecard.checks import score_bands
from scorecard.points import scaling
from scorecard.rows import ScoreHistogram
from scorecard.settings import CheckSettings, Settings
from scorecard.validation import band_edges, characteristic_stability, sample_checks, validate_build

from ledgers import monitor_frame  # tests/ledgers.py: an invented ledger

AUC_EXACT = 1e-12  # the pair count and the histogram formula add the same whole numbers


def _histogram(sample="hold-out"):
    scores = np.array([520.0, 540, 560, 580, 600, 620])
    return ScoreHistogram(sample, scores, np.array([10.0, 20, 30, 40, 50, 60]), np.array([12.0, 9, 7, 4, 2, 1]),
                          np.array([1.0, 0, 2, 0, 1, 0]))


def test_band_edges_are_the_grades_when_given_else_equal_population_bands():
    histogram = _histogram("development")
    assert band_edges(histogram, CheckSettings(grades=(550.0, 590.0))).tolist() == [550.0, 590.0]
    np.testing.assert_array_equal(band_edges(histogram, CheckSettings(bands=3)),
                                  score_bands(histogram.scores, histogram.everyone, n_bands=3))


def test_sample_checks_count_good_bad_pairs_like_the_slow_oracle():
    histogram = _histogram()
    checks = sample_checks(histogram, scaling(), band_edges(histogram, CheckSettings(bands=3)), in_sample=False)
    # the slow oracle: every good against every bad, a higher score for the good counts 1, a tie 1/2
    wins = sum(g * b * (1.0 if sg > sb else 0.5 if sg == sb else 0.0)
               for sg, g in zip(histogram.scores, histogram.goods) for sb, b in zip(histogram.scores, histogram.bads))
    assert checks.auc.auc == pytest.approx(wins / (histogram.goods.sum() * histogram.bads.sum()), abs=AUC_EXACT)
    assert (checks.goods, checks.bads) == (210.0, 35.0)
    assert checks.bad_rate == pytest.approx(35 / 245)
    assert checks.hosmer_lemeshow.df == 3  # out of sample: as many degrees of freedom as bands


def test_a_characteristic_shift_counts_its_missing_share_on_both_samples():
    stability = characteristic_stability("income", "hold-out", [50.0, 30, 20], [40.0, 30, 30], [10.0, 20, 0],
                                         ["low", "high", "missing"], missing_bin=2, checks=CheckSettings())
    assert (stability.missing_share_development, stability.missing_share_other) == (0.2, 0.3)
    # points shift: mean points on the new sample less on development (common practice, no source)
    assert stability.shift.shift == pytest.approx((0.4 * 10 + 0.3 * 20) - (0.5 * 10 + 0.3 * 20))
    assert characteristic_stability("x", "s", [1.0, 1], [1.0, 1], [0.0, 1], ["a", "b"], missing_bin=-1,
                                    checks=CheckSettings()).missing_share_other is None


def test_a_build_is_checked_on_every_sample_against_development():
    settings = Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)},
                                  ledger={"date_column": "date"}, samples={"out_of_time_from": "2024-03-01"},
                                  checks={"bands": 5})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        build = build_scorecard(monitor_frame(5_000, 41), settings)
    validation = validate_build(build)
    assert list(validation.samples) == ["development", "hold-out", "out-of-time"]
    assert list(validation.score_stability) == ["hold-out", "out-of-time"]
    assert validation.samples["development"].hosmer_lemeshow.df == 5 - 2  # fitted here: two fewer
    assert validation.samples["hold-out"].hosmer_lemeshow.df == 5
    for sample, checks in validation.samples.items():
        assert checks.auc.auc == pytest.approx(build.performance()[sample]["auc"], abs=AUC_EXACT)
    names = build.scorecard.table.names
    assert [c.characteristic for c in validation.characteristic_stability["out-of-time"]] == list(names)
    assert len(validation.edges) == 5 - 1
