"""Monitoring: a saved scorecard re-checked on each new quarter, with ok / watch / act statuses and their words.

- ``periods``: the new ledger scored and counted, per period, and checked against the baseline;
- ``statuses``: each check's status, figure and thresholds;
- ``wording``: what each status means and what to do, how statuses are set, the limits (both
  monitoring deliverables say them in these words).
"""

from .periods import MonitorResult, PeriodMonitor, check_period, monitor_ledger, monitor_rows
from ..validation import CalibrationTest, calibration_family
from .statuses import STATUSES, AucBaseline, CheckStatus, auc_baseline, p_status, worst
from .wording import MEANING, WHAT_TO_DO, driving_checks, monitoring_limits, status_rules

__all__ = [
    "MEANING", "STATUSES", "WHAT_TO_DO", "AucBaseline", "CalibrationTest", "CheckStatus", "MonitorResult", "PeriodMonitor",
    "auc_baseline", "calibration_family", "check_period", "driving_checks", "monitor_ledger", "monitor_rows",
    "monitoring_limits", "p_status", "status_rules", "worst",
]
