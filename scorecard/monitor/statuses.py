"""The statuses of monitoring checks: ok, watch or act, each with the figure and the thresholds that set it.

How statuses are set (the reports say the same, in the words of ``scorecard.monitor.wording``):

- Stability: score PSI and each characteristic's PSI against ``checks.psi_watch`` /
  ``checks.psi_act`` (0.10 / 0.25, common practice, no source). Levels never seen at build time
  make a characteristic at least ``watch``.
- Discrimination: the one-sided test that the AUC has fallen below the build's AUC on its most
  honest sample, the baseline (``auc_baseline``): z = difference / sqrt(var_new + var_baseline)
  with DeLong's variance of each; p below ``checks.p_watch`` / ``checks.p_act`` (0.05 / 0.01,
  common practice).
- Calibration: one family of tests — calibration-in-the-large, Hosmer–Lemeshow, and each score
  band's exact binomial test — with Holm's adjustment for testing many at once (S. Holm,
  Scandinavian Journal of Statistics 1979); the smallest adjusted p-value sets the status, so a
  well-calibrated quarter raises a false alarm at most p_watch of the time.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..checks import AucShortfall, PsiResult, auc
from ..settings import CheckSettings
from ..terms import most_honest
from ..validation import CalibrationTest, CharacteristicStability, SampleChecks

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


def worst(statuses) -> str:
    """Return the most serious of some statuses ('ok' when there are none)."""
    return max(statuses, key=STATUSES.index, default="ok")


def p_status(p_value: float, checks: CheckSettings) -> str:
    """Return 'act' below p_act, 'watch' below p_watch, else 'ok'."""
    if p_value < checks.p_act:
        return "act"
    return "watch" if p_value < checks.p_watch else "ok"


@dataclass(frozen=True)
class AucBaseline:
    """The build's figures a new period's AUC is compared with: those of its most honest sample.

    Attributes
    ----------
    sample : str
        The build's sample (out-of-time, else hold-out, else development; ``scorecard.terms.most_honest``).
    auc, std_error : float
        Its AUC and DeLong standard error, as the model file saved them.
    gini, ks : float
        Its Gini and KS, shown beside the new period's.
    """

    sample: str
    auc: float
    std_error: float
    gini: float
    ks: float


def auc_baseline(performance: Mapping[str, Mapping[str, float]],
                 histograms: Mapping[str, object] | None = None) -> AucBaseline | None:
    """Return the build's AUC on its most honest sample, with its standard error (None without any AUC).

    The development figure is optimistic (the model was fitted on it), so an honest sample comes
    first. A model file written before the standard error was saved has it computed again from
    that sample's score histogram (``histograms``), which gives the same number.
    """
    sample = most_honest(name for name, figures in performance.items() if "auc" in figures)
    if not sample:
        return None
    figures = performance[sample]
    std_error = figures.get("auc_std_error")
    if std_error is None:
        histogram = histograms[sample]
        keep = (histogram.goods + histogram.bads) > 0
        std_error = auc(histogram.scores[keep], histogram.goods[keep], histogram.bads[keep]).std_error
    return AucBaseline(sample, float(figures["auc"]), float(std_error), float(figures["gini"]), float(figures["ks"]))


def score_stability_status(result: PsiResult, checks: CheckSettings) -> CheckStatus:
    return CheckStatus(
        "score stability", result.status, "PSI", result.value, checks.psi_watch, checks.psi_act, "above", PSI_SOURCE,
        f"PSI of the score over {len(result.labels)} bands fixed on the development sample",
    )


def characteristic_status(stability: CharacteristicStability, unseen: Mapping[str, int], checks: CheckSettings) -> CheckStatus:
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


def discrimination_status(fall: AucShortfall, outcomes: SampleChecks, checks: CheckSettings, baseline: AucBaseline) -> CheckStatus:
    return CheckStatus(
        "discrimination", p_status(fall.p_value, checks), "p-value", fall.p_value, checks.p_watch, checks.p_act,
        "below", P_SOURCE,
        f"AUC {outcomes.auc.auc:.4f} (standard error {fall.std_error:.4f}) against {fall.reference:.4f} (standard error "
        f"{fall.reference_std_error:.4f}) on the {baseline.sample} sample at build time; z = {fall.z:.2f}; one-sided "
        "test of a fall with DeLong's variance of both",
    )


def calibration_status(tests: Sequence[CalibrationTest], outcomes: SampleChecks, checks: CheckSettings) -> CheckStatus:
    smallest = min(tests, key=lambda t: t.adjusted_p_value)
    observed, expected = outcomes.in_the_large.observed_bads, outcomes.in_the_large.expected_bads
    return CheckStatus(
        "calibration", p_status(smallest.adjusted_p_value, checks), "p-value", smallest.adjusted_p_value,
        checks.p_watch, checks.p_act, "below", P_SOURCE + "; Holm-adjusted over the family of calibration tests",
        f"smallest adjusted p-value: {smallest.test}; {observed:,.0f} bads observed against {expected:,.1f} predicted",
    )
