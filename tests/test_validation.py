"""Tests of scorecard/validation.py: every check applied per sample, on bands fixed on the development sample."""

from __future__ import annotations

import warnings
from types import SimpleNamespace

import numpy as np
import pytest

from scorecard.build import build_scorecard
from scorecard.checks import score_bands
from scorecard.points import scaling
from scorecard.rows import ScoreHistogram
from scorecard.settings import CheckSettings, Settings
from scorecard.checks.discrimination import band_labels
from scorecard.validation import band_edges, characteristic_stability, review_flags, sample_checks, validate_build

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
    # one name per band, by the scores it can hold, the same on every sample (issue 10: three samples
    # once named the same band 418–515, 444–515 and 408–515)
    table = build.scorecard.table
    assert validation.band_names[0].startswith(f"{table.min_score:.0f}–")
    assert validation.band_names[-1].endswith(f"–{table.max_score:.0f}")
    for sample, checks in validation.samples.items():
        names = [validation.band_names[band] for band in checks.gains.band]
        assert [test.test for test in checks.calibration_tests[2:]] == [f"band {name}" for name in names]
    for result in validation.score_stability.values():
        assert result.labels == validation.band_names


def test_bands_are_named_by_the_first_and_last_score_they_can_hold():
    # edges 516 and 533 of whole-point scores from 418 to 690: 418–515, 516–532, 533–690
    assert band_labels([516.0, 533.0], score_range=(418.0, 690.0, 1.0)) == ("418–515", "516–532", "533–690")
    # one decimal; an analyst's grade between two possible scores starts the band at the next one
    assert band_labels([50.05, 60.0], score_range=(41.2, 70.4, 0.1)) == ("41.2–50.0", "50.1–59.9", "60.0–70.4")
    assert band_labels([500.0], score_range=(450.0, 500.0, 1.0)) == ("450–499", "500")


def _flags_of(coefficients, ginis, *, converged=True, notes=(), binnings=()):
    """review_flags on a stand-in build: a fit with these coefficients, samples with these Ginis."""
    fit = SimpleNamespace(names=("intercept", *(f"c{i}" for i in range(len(coefficients)))),
                          coefficients=(0.1, *coefficients), converged=converged, iterations=7)
    build = SimpleNamespace(settings=Settings(), scorecard=SimpleNamespace(table=SimpleNamespace(names=()), binnings=binnings),
                            selection=SimpleNamespace(fit=fit, screen_tests=()), notes=tuple(notes))
    samples = {name: SimpleNamespace(auc=SimpleNamespace(gini=gini), calibration_tests=(), notes=())
               for name, gini in ginis.items()}
    validation = SimpleNamespace(samples=samples, score_stability={}, characteristic_stability={}, not_computed={},
                                 fairness=None)
    return review_flags(build, validation)


def test_over_fitting_is_flagged_when_the_gini_falls_by_more_than_the_threshold():
    # common practice, no source: a relative fall of more than 10% from development deserves a look
    flags = _flags_of([1.0], {"development": 0.60, "hold-out": 0.53, "out-of-time": 0.55})
    assert [f.kind for f in flags] == ["over-fitting"]
    assert "0.6000 on development to 0.5300 on the hold-out sample, 11.7% less" in flags[0].text
    assert _flags_of([1.0], {"development": 0.60, "hold-out": 0.55}) == ()  # 8% less


def test_coefficients_far_from_one_are_flagged_with_both_causes():
    # common practice, no source: outside about 0.5 to 1.5 suggests collinearity or over-fitting
    flags = _flags_of([1.2, 1.7, 0.4, -0.2], {"development": 0.5})
    assert [(f.kind, f.text.split("'")[1]) for f in flags] == [("coefficient", "c1"), ("coefficient", "c2"),
                                                              ("reversal", "c3")]
    assert "collinearity" in flags[0].text and "over-fitting" in flags[0].text


def test_notes_and_an_unconverged_fit_are_flags_too():
    flags = _flags_of([1.0], {"development": 0.5}, converged=False, notes=("'x' left out: constant.",))
    assert [f.kind for f in flags] == ["fit", "notes"]


def test_a_special_value_without_its_meaning_is_a_flag():
    from scorecard.classing import numeric_binning

    binning = numeric_binning("months", [6], special_values=[-1, 999], special_meanings=["no record"])
    flags = _flags_of([1.0], {"development": 0.5}, binnings=(binning,))
    assert [(f.kind, "999" in f.text) for f in flags] == [("special value", True)]
