"""The targets the benchmarks check, and how a figure is judged against one.

The targets come from the performance issue (README.md lists them with their reasons). Each is a
limit that a figure must stay under (``at_most``) or reach; a missed target says by how much.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

BUILD_TIME = 2.0                # build with reports, times parse-only
BUILD_NO_REPORTS_TIME = 1.5     # build --no-reports, times parse-only
SPEED_UP = 6.0                  # hand-written pipeline's time over the build's
TRUE_AUC_GAP = 0.01             # hold-out AUC within this of the true model's
BUILD_MEMORY = 1.5              # build peak RSS, times parse-only
SCORE_TIME = 1.5                # score, times parse-only
SCORING_RATE = 20e6             # rows per second scored in memory
HELP_SECONDS = 0.3              # scorewright --help
REPORT_GROWTH = 1.5             # report time at 10x the rows over the time at 1x: "flat" (linear would be 10)
STREAM_PEAK_MB = 3000.0         # streamed build peak RSS at every size (3 GB)
STREAM_GROWTH = 1.5             # "nearly flat" memory and "linear" time: largest size over smallest, ours


def ratio(value: float) -> str:
    return f"{value:.2f}×"


def seconds(value: float) -> str:
    return f"{value:.3f} s"


def auc_difference(value: float) -> str:
    return f"{value:+.4f}"


def rate(value: float) -> str:
    return f"{value / 1e6:.1f}M rows/s"


def megabytes(value: float) -> str:
    return f"{value:,.0f} MB"


@dataclass(frozen=True)
class Target:
    """A promise about one figure: ``value`` must be at most (or at least) ``limit``."""

    promise: str
    value: float | None
    limit: float
    at_most: bool
    shown: Callable[[float], str] = ratio
    detail: str = ""

    def verdict(self) -> str:
        """Return 'met', 'missed by ...' or 'not measured'."""
        if self.value is None:
            return "not measured"
        if (self.value <= self.limit) if self.at_most else (self.value >= self.limit):
            return "met"
        gap = self.shown(abs(self.value - self.limit)).lstrip("+")
        if self.limit == 0:
            return f"missed by {gap}"
        if self.at_most:
            return f"missed by {gap} ({self.value / self.limit:.1f} times the limit)"
        return f"missed by {gap} (reaches {self.value / self.limit:.0%} of it)"

    def figure(self) -> str:
        """Return the measured figure as text (with its detail)."""
        text = "—" if self.value is None else self.shown(self.value)
        return f"{text} {self.detail}".strip()
