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
- :mod:`~scorecard.checks.fairness`: Cramér's V of a characteristic against a protected attribute,
  and approvals per level of one at a cut-off (the adverse impact ratio).
"""

from __future__ import annotations

import importlib

# names are imported on first use: the calibration checks pull in scipy.stats, which a build
# without reports never needs
_PUBLIC = {
    "CalibrationInTheLarge": "calibration",
    "CalibrationLine": "calibration",
    "CalibrationTable": "calibration",
    "HosmerLemeshow": "calibration",
    "brier_score": "calibration",
    "calibration_in_the_large": "calibration",
    "calibration_line": "calibration",
    "calibration_table": "calibration",
    "holm": "calibration",
    "hosmer_lemeshow": "calibration",
    "CutoffTable": "cutoffs",
    "cutoff_table": "cutoffs",
    "ImpactTable": "fairness",
    "adverse_impact": "fairness",
    "cramers_v": "fairness",
    "AucResult": "discrimination",
    "AucShortfall": "discrimination",
    "CapCurve": "discrimination",
    "GainsTable": "discrimination",
    "KsResult": "discrimination",
    "PairedAucTest": "discrimination",
    "paired_auc_test": "discrimination",
    "RocCurve": "discrimination",
    "auc": "discrimination",
    "auc_shortfall": "discrimination",
    "band_of": "discrimination",
    "cap_points": "discrimination",
    "gains_table": "discrimination",
    "ks_statistic": "discrimination",
    "roc_points": "discrimination",
    "score_bands": "discrimination",
    "ACT_PSI": "stability",
    "EMPTY_CELL": "stability",
    "WATCH_PSI": "stability",
    "PointsShift": "stability",
    "PsiResult": "stability",
    "points_shift": "stability",
    "psi": "stability",
    "psi_status": "stability",
    "score_psi": "stability",
}

__all__ = sorted(_PUBLIC)


def __getattr__(name: str):
    if name in _PUBLIC:
        value = getattr(importlib.import_module(f"scorecard.checks.{_PUBLIC[name]}"), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'scorecard.checks' has no attribute {name!r}")


def __dir__() -> list[str]:
    return __all__
