"""Tests of scorecard.checks.fairness: Cramér's V and the adverse impact ratio at a cut-off."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats.contingency import association

from scorecard.checks import adverse_impact, cramers_v
from scorecard.errors import ScorecardError
from scorecard.rows import ScoreHistogram

EXACT = 1e-12  # the same sums of a few counts


def _histogram(scores, goods, bads, others=None):
    others = np.zeros(len(scores)) if others is None else np.asarray(others, float)
    return ScoreHistogram("s", np.asarray(scores, float), np.asarray(goods, float), np.asarray(bads, float), others)


def test_adverse_impact_of_a_hand_worked_table():
    # hand-worked (invented counts): cut-off 600 approves scores 600 and over.
    # level a: 100 applications (60 goods, 30 bads, 10 indeterminate); at or above 600: 40 goods, 10 bads,
    #   5 others, so 55 approved, 55.0%; bad rate among approved 10 / 50 = 20.0%
    # level b: 50 applications; at or above 600: 18 goods, 2 bads, so 20 approved, 40.0%; bad rate 2 / 20 = 10.0%
    # ratio: a is the most approved: 1.0; b: 0.40 / 0.55 = 0.7273, under the four-fifths guide
    a = _histogram([550, 600, 650], [20, 25, 15], [20, 6, 4], [5, 3, 2])
    b = _histogram([550, 620], [22, 18], [8, 2])
    impact = adverse_impact({"a": a, "b": b}, 600)
    assert impact.levels == ("a", "b")
    np.testing.assert_allclose(impact.applications, [100, 50], rtol=EXACT)
    np.testing.assert_allclose(impact.approved, [55, 20], rtol=EXACT)
    np.testing.assert_allclose(impact.approval_rate, [0.55, 0.40], rtol=EXACT)
    np.testing.assert_allclose(impact.ratio, [1.0, 0.40 / 0.55], rtol=EXACT)
    np.testing.assert_allclose(impact.approved_bad_rate, [0.20, 0.10], rtol=EXACT)
    assert impact.to_frame()["ratio"].round(4).tolist() == [1.0, 0.7273]
    assert impact.reference == "a"


def test_a_small_level_cannot_set_the_bar():
    # hand-worked (invented counts), cut-off 600, reference share 5%:
    # a: 600 applications, 360 approved (60.0%); b: 380 applications, 228 approved (60.0% too, but smaller);
    # c: 20 applications (2.0% of 1,000, under 5%), 18 approved (90.0%).
    # c may not be the reference, so a (the first of the equal largest rates among a and b) is: ratios 1, 1, 1.5.
    # With no smallest share, c sets the bar: a and b at 0.60 / 0.90 = 0.6667, under the four-fifths guide.
    a = _histogram([550, 650], [200, 300], [40, 60])
    b = _histogram([550, 650], [130, 200], [22, 28])
    c = _histogram([550, 650], [2, 15], [0, 3])
    levels = {"a": a, "b": b, "c": c}
    kept = adverse_impact(levels, 600, 0.05)
    np.testing.assert_allclose(kept.approval_rate, [0.6, 0.6, 0.9], rtol=EXACT)
    assert kept.reference == "a" and kept.can_be_reference.tolist() == [True, True, False]
    np.testing.assert_allclose(kept.ratio, [1.0, 1.0, 1.5], rtol=EXACT)
    bare = adverse_impact(levels, 600)
    assert bare.reference == "c"
    np.testing.assert_allclose(bare.ratio, [0.6 / 0.9, 0.6 / 0.9, 1.0], rtol=EXACT)
    # every level under the share: the largest may still be the reference
    assert adverse_impact(levels, 600, 0.7).reference == "a"


def test_cramers_v_equals_scipys_association():
    # reference: scipy.stats.contingency.association(method="cramer"), an independent implementation
    rng = np.random.default_rng(3)
    for shape in [(2, 2), (5, 3), (8, 4)]:
        table = rng.integers(1, 60, size=shape).astype(float)
        assert cramers_v(table) == pytest.approx(association(table.astype(int), method="cramer"), rel=1e-12)
    assert cramers_v([[30, 10], [10, 30]]) == pytest.approx(0.5, rel=EXACT)  # hand-worked: χ² 20 of n 80
    assert cramers_v([[5, 0], [7, 0]]) == 0.0  # one column holds weight: no association to measure


def test_bad_input_is_refused():
    with pytest.raises(ScorecardError, match="2-D table"):
        cramers_v([1, 2, 3])
    with pytest.raises(ScorecardError, match="no level holds any application"):
        adverse_impact({"a": _histogram([500], [0], [0])}, 500)
