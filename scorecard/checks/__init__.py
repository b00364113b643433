"""Validation checks of a points scorecard, computed exactly from score histograms and bin counts.

A score histogram is three aligned 1-D arrays: ``scores`` (strictly ascending), ``goods`` and
``bads`` (non-negative weighted counts at each score). Higher scores mean lower risk.

- :mod:`~scorecard.checks.discrimination`: AUC with DeLong's interval, Gini, KS, ROC and CAP
  points, gains table, and the score bands shared by the other checks.
- :mod:`~scorecard.checks.calibration`: observed against predicted defaults per band (binomial
  and Jeffreys tests), Hosmer–Lemeshow, calibration-in-the-large, Cox's intercept and slope,
  Brier score, Holm's adjustment.
- :mod:`~scorecard.checks.stability`: population stability index of scores and characteristics,
  and the shift in points per characteristic.
- :mod:`~scorecard.checks.cutoffs`: approvals and bad rates at candidate cut-offs.
"""

from scorecard.checks.calibration import (
    CalibrationInTheLarge,
    CalibrationLine,
    CalibrationTable,
    HosmerLemeshow,
    brier_score,
    calibration_in_the_large,
    calibration_line,
    calibration_table,
    holm,
    hosmer_lemeshow,
)
from scorecard.checks.cutoffs import CutoffTable, cutoff_table
from scorecard.checks.discrimination import (
    AucResult,
    AucShortfall,
    CapCurve,
    GainsTable,
    KsResult,
    RocCurve,
    auc,
    auc_shortfall,
    band_of,
    cap_points,
    gains_table,
    ks_statistic,
    roc_points,
    score_bands,
)
from scorecard.checks.stability import (
    ACT_PSI,
    EMPTY_CELL,
    WATCH_PSI,
    PointsShift,
    PsiResult,
    points_shift,
    psi,
    psi_status,
    score_psi,
)

__all__ = [
    "ACT_PSI",
    "EMPTY_CELL",
    "WATCH_PSI",
    "AucResult",
    "AucShortfall",
    "CalibrationInTheLarge",
    "CalibrationLine",
    "CalibrationTable",
    "CapCurve",
    "CutoffTable",
    "GainsTable",
    "HosmerLemeshow",
    "KsResult",
    "PointsShift",
    "PsiResult",
    "RocCurve",
    "auc",
    "auc_shortfall",
    "band_of",
    "brier_score",
    "calibration_in_the_large",
    "calibration_line",
    "calibration_table",
    "cap_points",
    "cutoff_table",
    "gains_table",
    "holm",
    "hosmer_lemeshow",
    "ks_statistic",
    "points_shift",
    "psi",
    "psi_status",
    "roc_points",
    "score_bands",
]
