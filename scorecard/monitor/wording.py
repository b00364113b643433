"""The words of monitoring: what each status means, what to do about it, how statuses are set, the limits.

Shared by the monitoring page and the monitoring workbook, so that the two always say the same.
"""

from __future__ import annotations

import numpy as np

from ..settings import CheckSettings
from .periods import MonitorResult, PeriodMonitor
from .statuses import STATUSES, CheckStatus


MEANING = {
    "ok": "Every check is inside its thresholds.",
    "watch": "At least one check has crossed its watch threshold; none has crossed its act threshold.",
    "act": "At least one check has crossed its act threshold.",
}


WHAT_TO_DO = {
    "ok": "Nothing beyond the routine: file this report with the model's records and check the next quarter.",
    "watch": "Look closer: read the detail of each watch check below, see whether it persists from quarter to "
             "quarter, and note it, with what you found, in the model's monitoring record.",
    "act": "Investigate the cause now. Consider recalibrating the scorecard (refitting how scores map to "
           "default rates) or rebuilding it, and tell model risk management before relying on its scores "
           "unchanged.",
}


def driving_checks(period: PeriodMonitor) -> list[CheckStatus]:
    """Return the checks that set a period's status: every raised one, most serious first.

    When every check is ok, the three headline checks (score stability, discrimination and
    calibration, where computed) are returned instead, so their figures and thresholds still show.
    """
    raised = [s for s in period.statuses if s.status != "ok"]
    if raised:
        return sorted(raised, key=lambda s: (-STATUSES.index(s.status), -_severity(s)))
    return [s for s in period.statuses if s.check in ("score stability", "discrimination", "calibration")]


def status_rules(checks: CheckSettings) -> list[tuple[str, str, str, str, str]]:
    """Return (check, figure, watch, act, source and rule) for each kind of check, in words."""
    psi = ("PSI", f"{checks.psi_watch:g} and above", f"{checks.psi_act:g} and above")
    p = ("p-value", f"below {checks.p_watch:g}", f"below {checks.p_act:g}")
    defaults = CheckSettings()
    psi_source = (f"common practice, no source (defaults {defaults.psi_watch:.2f} and {defaults.psi_act:.2f})"
                  + ("" if (checks.psi_watch, checks.psi_act) == (defaults.psi_watch, defaults.psi_act)
                     else "; set under [checks] in the settings"))
    p_source = (f"common practice, the 5% and 1% test levels, no source (defaults {defaults.p_watch:.2f} and "
                f"{defaults.p_act:.2f})"
                + ("" if (checks.p_watch, checks.p_act) == (defaults.p_watch, defaults.p_act)
                   else "; set under [checks] in the settings"))
    return [
        ("score stability", *psi, f"PSI of the score over bands fixed on the development sample; {psi_source}."),
        ("stability of each characteristic", *psi,
         f"PSI over the characteristic's bins; {psi_source}. A level never seen at build time makes the "
         "characteristic at least watch (our rule)."),
        ("discrimination", *p,
         "One-sided test that the AUC has fallen below the baseline: the build's AUC on its most honest sample "
         "(out-of-time, else hold-out, else development). Both AUCs carry sampling error, so z = difference / "
         "√(variance of the new AUC + variance of the baseline's), each DeLong's variance "
         f"(E. R. DeLong, D. M. DeLong, D. L. Clarke-Pearson, Biometrics 44, 1988); {p_source}."),
        ("calibration", *p,
         "One family of tests: calibration-in-the-large (two-sided), Hosmer–Lemeshow, and each score band's "
         "exact binomial test (two-sided), with Holm's adjustment for testing many at once (S. Holm, "
         "Scandinavian Journal of Statistics 6, 1979). The smallest adjusted p-value sets the status. "
         f"Thresholds: {p_source}."),
    ]


def monitoring_limits(result: MonitorResult) -> list[str]:
    """Return the limits of a monitoring run's figures, in words (the report and the workbook list them)."""
    limits = [
        "Outcomes of recent applications may not have run their full course: a loan that is good today can still "
        "go bad. A young quarter's bad rate is a lower bound, and its calibration can look better than it is.",
        "A test on many thousands of applications can call a difference too small to matter significant, and one "
        "on a few hundred can miss one that matters. Read each p-value beside the size of the gap it tests.",
        "The PSI thresholds are rules of thumb, not tests: a PSI says how far the mix moved, not whether the "
        "move changes how well the scorecard works.",
        "Only applications that were scored and approved have outcomes. When the cut-off or the policy changed, "
        "the approved population moved too, and the outcome checks see only part of the applicants.",
        "Applications with an indeterminate outcome or none yet count in the stability checks only.",
        "Each quarter is checked with the same family of tests; over many quarters some watch statuses will come "
        "by chance alone. A status that persists says more than one that comes and goes.",
    ]
    if result.overall.outcomes is None:
        limits.insert(0, "This ledger has no known outcomes, so only stability was checked: a stable population "
                         "does not show that the scorecard still ranks or predicts well.")
    return limits


def _severity(status: CheckStatus) -> float:
    """How far past its watch threshold a check is, on a scale that grows with the trouble."""
    if status.direction == "above":
        return status.value / status.watch
    return status.watch / max(status.value, np.finfo(float).tiny)
