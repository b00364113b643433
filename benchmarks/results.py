"""Everything one benchmark run found, and the figures derived from it.

Ratios of two processes are taken pair by pair (the runs of one round were made next to each
other in time) and the median of those ratios is reported; medians of wall time and peak memory
are over the successful runs.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime

from . import targets as t
from .large import LargeRecord
from .measure import Run, median
from .streaming import MEMORY_CAP_MB
from .sections import BUILD, BUILD_NO_REPORTS, HANDWRITTEN, SCORE, stage_seconds

Pairs = Sequence[tuple[Run, Run]]


@dataclass
class Results:
    """The raw findings of one run, section by section (None: the section did not run)."""

    command: str
    started: datetime
    note: str
    rows: int
    pairs: int
    seed: int
    ledger: str
    ledger_mb: float
    machine: dict[str, str]
    engines: dict[str, Run] = field(default_factory=dict)
    engine: str = ""
    help: list[Run] = field(default_factory=list)
    paired: dict[str, list[tuple[Run, Run]]] = field(default_factory=dict)
    build_auc: float | None = None
    truth: dict = field(default_factory=dict)
    scoring: dict = field(default_factory=dict)
    reports: dict | str | None = None
    credit_workbook: dict = field(default_factory=dict)  # the workbook of credit_data (inmemory.py credit-data)
    streaming: list[tuple[int, Run]] | str | None = None
    row_engines: list[dict] | None = None  # the same build through each engine (rowengines.py)
    finished: datetime | None = None
    code_changes: list[str] = field(default_factory=list)  # tool files that changed during the run
    large: LargeRecord | None = None  # the streamed build of 100M rows as RESULTS-large.md recorded it (make bench-large)

    def runs(self) -> list[Run]:
        """Every timed run, in order."""
        found = [*self.engines.values(), *self.help]
        for pairs in self.paired.values():
            found += [run for pair in pairs for run in pair]
        if isinstance(self.streaming, list):
            found += [run for _, run in self.streaming]
        found += [build["run"] for build in self.row_engines or []]
        return found


def ok_pairs(pairs: Pairs) -> list[tuple[Run, Run]]:
    return [(a, b) for a, b in pairs if a.ok and b.ok]


def time_ratio(pairs: Pairs) -> float | None:
    """Median over pairs of the other process's wall time over the baseline's."""
    return median([b.wall / a.wall for a, b in ok_pairs(pairs)])


def memory_ratio(pairs: Pairs) -> float | None:
    """Median over pairs of the other process's peak RSS over the baseline's."""
    return median([b.peak_mb / a.peak_mb for a, b in ok_pairs(pairs)])


def wall(runs: Sequence[Run]) -> float | None:
    return median([run.wall for run in runs if run.ok])


def peak(runs: Sequence[Run]) -> float | None:
    return median([run.peak_mb for run in runs if run.ok])


def speed_up(results: Results, build: str = BUILD) -> float | None:
    """Median over rounds of the hand-written pipeline's wall time over the build's."""
    rounds = zip(results.paired.get(HANDWRITTEN, []), results.paired.get(build, []))
    return median([hand.wall / built.wall for (_, hand), (_, built) in rounds if hand.ok and built.ok])


def handwritten_auc(results: Results) -> float | None:
    """The hand-written pipeline's hold-out AUC (the same in every run: its split is seeded)."""
    for _, run in results.paired.get(HANDWRITTEN, []):
        if run.ok:
            return float(json.loads(run.stdout.strip().splitlines()[-1])["auc"])
    return None


def stage_medians(runs: Sequence[Run]) -> dict[str, float]:
    """Median seconds per stage over the runs' ``--timings`` tables, stages in the order printed."""
    tables = stage_seconds([run for run in runs if run.ok])
    stages = list(dict.fromkeys(stage for table in tables for stage in table))
    return {stage: median([table.get(stage, 0.0) for table in tables]) for stage in stages}


def scoring_rate(results: Results) -> float | None:
    """Rows per second of in-memory scoring (median of the repeats)."""
    seconds = results.scoring.get("seconds")
    return results.scoring["rows"] / median(seconds) if seconds else None


def report_growth(results: Results, part: str) -> float | None:
    """Seconds of ``part`` at the largest size over the smallest (1 is flat, 10 linear)."""
    if not isinstance(results.reports, dict):
        return None
    measured = {size: found[part] for size, found in results.reports.items() if part in found}
    if len(measured) < 2:
        return None
    return median(measured[max(measured)]) / median(measured[min(measured)])


def credit_workbook_seconds(results: Results) -> float | None:
    """Seconds of the workbook of credit_data (median of the repeats)."""
    seconds = results.credit_workbook.get("workbook")
    return median(seconds) if seconds else None


def streamed_peak(results: Results) -> float | None:
    """Largest peak RSS of the streamed builds; None if a build failed for another reason than memory."""
    if not isinstance(results.streaming, list):
        return None
    if not all(run.ok or run.stopped == "memory" for _, run in results.streaming):
        return None
    return max((run.peak_mb for _, run in results.streaming), default=None)


def streamed_growth(results: Results, per_row_time: bool) -> float | None:
    """Peak RSS (or seconds per row) of the largest streamed size over the smallest's."""
    if not isinstance(results.streaming, list):
        return None
    # a build ended for memory still gives a lower bound of its peak, not a time
    done = [(size, run) for size, run in results.streaming if run.ok or (run.stopped == "memory" and not per_row_time)]
    if len(done) < 2 or len(done) < len(results.streaming):
        return None
    (small, first), (large, last) = min(done, key=lambda item: item[0]), max(done, key=lambda item: item[0])
    if per_row_time:
        return (last.wall / large) / (first.wall / small)
    return last.peak_mb / first.peak_mb


def target_list(results: Results) -> list[t.Target]:
    """Every target with the figure measured for it: issue 18's table first (with its figure before), then the
    standing checks."""
    pairs = results.paired
    handwritten, truth = handwritten_auc(results), results.truth.get("holdout")
    build_auc = results.build_auc
    help_wall = wall(results.help)
    without_reports = speed_up(results, BUILD_NO_REPORTS)
    report_note = "" if isinstance(results.reports, dict) else "(report section not available)"
    large = large_streamed(results)
    return [
        t.Target("`build` with reports ÷ parse-only process ≤ 3×", time_ratio(pairs.get(BUILD, [])), t.BUILD_TIME, True,
                 before="12.2×"),
        t.Target("`build --no-reports` ÷ parse-only process ≤ 2.5×", time_ratio(pairs.get(BUILD_NO_REPORTS, [])),
                 t.BUILD_NO_REPORTS_TIME, True, before="10.9×"),
        t.Target("selection and fit stage ≤ 1 s", stage_median(results, "selection and fit"), t.SELECTION_SECONDS, True,
                 t.seconds, detail="(median of the builds' `--timings`, with reports)", before="4.9 s"),
        t.Target(f"… with hold-out AUC no lower than before ({t.AUC_BEFORE:.4f}) by more than {t.AUC_DROP}",
                 None if build_auc is None else t.AUC_BEFORE - build_auc, t.AUC_DROP, True, t.auc_difference,
                 detail="" if build_auc is None else f"(drop; the build's hold-out AUC {build_auc:.4f})",
                 before=f"{t.AUC_BEFORE:.4f}"),
        t.Target("hand-written pipeline time ÷ `build` time ≥ 3×", speed_up(results), t.SPEED_UP, False,
                 detail=_speed_up_detail(speed_up(results), without_reports), before="0.93×"),
        t.Target("`build` peak memory ÷ parse-only ≤ 1.3× (with reports)", memory_ratio(pairs.get(BUILD, [])),
                 t.BUILD_MEMORY, True, before="1.71×"),
        t.Target("`build` peak memory ÷ parse-only ≤ 1.3× (--no-reports)", memory_ratio(pairs.get(BUILD_NO_REPORTS, [])),
                 t.BUILD_MEMORY, True, before="1.71×"),
        t.Target("`score` process ÷ parse-only ≤ 1.5×", time_ratio(pairs.get(SCORE, [])), t.SCORE_TIME, True,
                 before="3.7×"),
        t.Target("in-memory scoring, coding included ≥ 20M rows/s", scoring_rate(results), t.SCORING_RATE, False, t.rate,
                 before="5.7M rows/s"),
        t.Target("imports and start-up inside a build (outside the stages) ≤ 0.3 s", outside_stages(results),
                 t.START_UP_SECONDS, True, t.seconds, detail="(build with reports: median wall − the stages' medians)",
                 before="1.46 s"),
        t.Target("streamed build of 100M rows × 30 from Parquet: peak RSS ≤ 2 GB", large and large[1].peak_mb,
                 t.LARGE_PEAK_MB, True, t.megabytes, detail=_large_note(results, large), before="not measured"),
        t.Target("… and ≤ 1.3× the 1M streamed build's peak", large and large[1].peak_mb / large[0].peak_mb,
                 t.LARGE_GROWTH, True, detail=_large_note(results, large), before="not measured"),
        t.Target("… time per row at 100M ≤ at 1M", large and (large[1].wall / t.LARGE_ROWS) / (large[0].wall / 1_000_000),
                 t.LARGE_TIME_GROWTH, True, detail=_large_note(results, large), before="not measured"),
        # standing checks
        t.Target("hold-out AUC better than the hand-written pipeline's",
                 _difference(build_auc, handwritten), 0.0, False, t.auc_difference,
                 detail=_auc_detail(build_auc, handwritten, "hand-written")),
        t.Target("hold-out AUC within 0.01 of the true model's", _gap(build_auc, truth), t.TRUE_AUC_GAP, True,
                 t.auc_difference, detail=_auc_detail(build_auc, truth, "true model")),
        t.Target("scorewright --help < 0.3 s", help_wall, t.HELP_SECONDS, True, t.seconds),
        t.Target("HTML report time flat in rows (10× rows: ≤ 1.5×)", report_growth(results, "render_report"),
                 t.REPORT_GROWTH, True, detail=report_note),
        t.Target("workbook time flat in rows (10× rows: ≤ 1.5×)", report_growth(results, "workbook"),
                 t.REPORT_GROWTH, True, detail=report_note),
        t.Target("workbook of credit_data ≤ 2 s", credit_workbook_seconds(results), t.CREDIT_WORKBOOK_SECONDS, True,
                 t.seconds),
        t.Target("streamed build peak RSS ≤ 3 GB at every size", streamed_peak(results), t.STREAM_PEAK_MB, True,
                 t.megabytes, detail=_streaming_note(results)),
        t.Target("streamed peak RSS nearly flat (largest size ≤ 1.5× smallest)", streamed_growth(results, False),
                 t.STREAM_GROWTH, True, detail=_streaming_note(results, "(largest size over smallest)")),
        t.Target("streamed time linear (s per row, largest size ≤ 1.5× smallest)", streamed_growth(results, True),
                 t.STREAM_GROWTH, True, detail=_streaming_note(results, "(largest size over smallest)")),
    ]


def stage_median(results: Results, stage: str, build: str = BUILD) -> float | None:
    """Median seconds of one stage over the timed builds."""
    return stage_medians([b for _, b in results.paired.get(build, [])]).get(stage)


def outside_stages(results: Results, build: str = BUILD) -> float | None:
    """Median wall of the builds less the sum of their stages' medians: start-up, imports and exit."""
    runs = [b for _, b in results.paired.get(build, [])]
    stages, total = stage_medians(runs), wall(runs)
    return total - sum(stages.values()) if stages and total else None


def large_streamed(results: Results) -> tuple[Run, Run] | None:
    """The streamed builds of 1M rows and of 100M rows (or more), when both ran to the end: in this run, else as
    RESULTS-large.md recorded them."""
    own = _large_pair(results.streaming if isinstance(results.streaming, list) else [])
    return own or (_large_pair(results.large.runs) if results.large else None)


def _large_pair(streaming) -> tuple[Run, Run] | None:
    done = {size: run for size, run in streaming if run.ok}
    largest = max((size for size in done if size >= t.LARGE_ROWS), default=None)
    return (done[1_000_000], done[largest]) if largest and 1_000_000 in done else None


def _large_note(results: Results, large) -> str:
    if large is not None and _large_pair(results.streaming if isinstance(results.streaming, list) else []):
        return "(this run)"
    if large is not None:
        return f"(`make bench-large`, recorded {results.large.recorded} in RESULTS-large.md)"
    if results.large is not None:
        return (f"(`make bench-large` of {results.large.recorded} did not finish both builds: "
                "see RESULTS-large.md and PROFILE.md)")
    sizes = [size for size, _ in results.streaming] if isinstance(results.streaming, list) else []
    largest = f"; this run's largest streamed size is {max(sizes):,} rows" if sizes else ""
    return f"(not run: `make bench-large` builds it{largest}; see PROFILE.md)"


def _speed_up_detail(with_reports: float | None, without_reports: float | None) -> str:
    if with_reports is None:
        return ""
    slower = f"; the build is {1 / with_reports:.1f}× slower" if with_reports < 1 else ""
    without = f"; without reports {t.ratio(without_reports)}" if without_reports is not None else ""
    return f"(hand-written time over build time, with reports{without}{slower})"


def _difference(a: float | None, b: float | None) -> float | None:
    return None if a is None or b is None else a - b


def _gap(a: float | None, b: float | None) -> float | None:
    return None if a is None or b is None else abs(a - b)


def _auc_detail(build: float | None, other: float | None, name: str) -> str:
    if build is None or other is None:
        return ""
    return f"(scorewright {build:.4f}, {name} {other:.4f})"


def _streaming_note(results: Results, measured: str = "(largest of the sizes)") -> str:
    if results.streaming is None:
        return "(run with --streaming)"
    if isinstance(results.streaming, str):
        return "(streaming not yet available)"
    over = [f"{size:,}" for size, run in results.streaming if run.stopped == "memory"]
    failed = [f"{size:,}" for size, run in results.streaming if not run.ok and run.stopped != "memory"]
    if failed:
        return f"(failed at {', '.join(failed)} rows)"
    if over:
        return f"(ended by the harness above {t.megabytes(MEMORY_CAP_MB)} at {', '.join(over)} rows; larger sizes not run)"
    return measured
