"""Run whole processes under GNU time and read their wall time and peak memory.

Every process the benchmarks compare is started fresh and wrapped in ``/usr/bin/time -v -o FILE``.
The wall time is GNU time's "Elapsed (wall clock) time" (resolution 1/100 s); the peak memory is its
"Maximum resident set size", reported here in MB of 10^6 bytes. Two processes are compared in
alternation (A B A B ...), so that a slow spell of a busy machine falls on both sides, and a ratio
is taken pair by pair before the median is taken.
"""

from __future__ import annotations

import contextlib
import os
import signal
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from . import REPO, RUNS

GNU_TIME = Path("/usr/bin/time")
TIMEOUT_SECONDS = 4 * 3600  # a hung process must not hold the machine forever
POLL_SECONDS = 0.25


@dataclass(frozen=True)
class Run:
    """One process, measured: exit code, wall seconds, peak RSS (MB), CPU seconds and its output."""

    label: str
    argv: tuple[str, ...]
    returncode: int
    wall: float
    peak_mb: float
    cpu: float
    load: float  # 1-minute load average of the machine just before the start
    stdout: str
    stderr: str
    stopped: str = ""  # "memory" or "time" when the harness ended the process before it finished
    session_peak_mb: float = 0.0  # largest resident memory of every process it started together, sampled (a JVM too)

    @property
    def ok(self) -> bool:
        return self.returncode == 0

    def failure(self) -> str:
        """Return the exit code and the last lines of stderr, for a failed run."""
        tail = " / ".join([line for line in self.stderr.splitlines() if line.strip()][-3:])
        return f"exit code {self.returncode}: {tail}"


Command = tuple[str, Sequence[str]]  # (label, argv)


def run_process(label: str, argv: Sequence[str], *, timeout: float = TIMEOUT_SECONDS,
                memory_cap_mb: float | None = None) -> Run:
    """Run one process to its end under ``/usr/bin/time -v`` and return its measurements.

    A process whose resident memory passes ``memory_cap_mb`` (default: three quarters of the
    machine's memory), or that runs longer than ``timeout`` seconds, is ended by the harness, so
    that it cannot push other work on a shared machine out of memory; GNU time still reports it.
    """
    if not GNU_TIME.exists():
        sys.exit("benchmarks: /usr/bin/time is missing; install GNU time (apt-get install -y time).")
    RUNS.mkdir(parents=True, exist_ok=True)
    handle, report = tempfile.mkstemp(prefix="gnu-time-", suffix=".txt", dir=RUNS)
    os.close(handle)
    load = os.getloadavg()[0]
    cap = memory_cap_mb or 0.75 * _machine_memory_mb()
    try:
        returncode, stdout, stderr, stopped, session_peak = _run([str(GNU_TIME), "-v", "-o", report, *map(str, argv)], timeout, cap)
        figures = _gnu_time_figures(Path(report).read_text())
    finally:
        os.unlink(report)
    return Run(label, tuple(map(str, argv)), returncode, figures["wall"], figures["peak_mb"], figures["cpu"],
               load, stdout, stderr, stopped, max(session_peak, figures["peak_mb"]))


def alternate(baseline: Command, others: Sequence[Command], pairs: int, *,
              log: Callable[[str], None] = print) -> dict[str, list[tuple[Run, Run]]]:
    """Run ``pairs`` rounds; in each, the baseline then each other process, baseline first every time.

    Returns, per other label, its (baseline run, other run) pairs in order.
    """
    found: dict[str, list[tuple[Run, Run]]] = {label: [] for label, _ in others}
    for number in range(1, pairs + 1):
        for label, argv in others:
            first = run_process(baseline[0], baseline[1])
            second = run_process(label, argv)
            found[label].append((first, second))
            log(f"pair {number}/{pairs}: {describe(first)} | {describe(second)}")
    return found


def describe(run: Run) -> str:
    """Return a one-line account of a run for the progress log."""
    if not run.ok:
        return f"{run.label}: FAILED ({run.failure()}; peak {run.peak_mb:,.0f} MB)"
    return f"{run.label}: {run.wall:.2f} s, {run.peak_mb:,.0f} MB"


def median(values: Sequence[float]) -> float | None:
    """Return the median, or None for no values."""
    return statistics.median(values) if values else None


def _run(argv: list[str], timeout: float, cap_mb: float) -> tuple[int, str, str, str, float]:
    # A session of its own: the processes in it are exactly GNU time and what it runs.
    process = subprocess.Popen(argv, cwd=REPO, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                               start_new_session=True)
    deadline, stopped, note, peak = time.monotonic() + timeout, "", "", 0.0
    try:
        while True:
            try:
                stdout, stderr = process.communicate(timeout=POLL_SECONDS)
                break
            except subprocess.TimeoutExpired:
                resident = _session_rss_mb(process.pid)
                peak = max(peak, resident)
                if not stopped and resident > cap_mb:
                    stopped, note = "memory", f"benchmarks: stopped at {resident:,.0f} MB resident, above the cap of {cap_mb:,.0f} MB"
                elif not stopped and time.monotonic() > deadline:
                    stopped, note = "time", f"benchmarks: stopped after {timeout:.0f} s"
                if stopped:
                    _end_workload(process.pid)  # GNU time itself lives on to write its report
    except BaseException:  # Ctrl-C: end the processes we started before stopping
        os.killpg(process.pid, signal.SIGKILL)
        raise
    return process.returncode, stdout, stderr + (f"\n{note}" if note else ""), stopped, peak


def _session_members(session: int) -> list[int]:
    members = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:  # the process ended while we looked
                continue
            if int(fields[3]) == session:  # field 6 of stat, the session id
                members.append(int(entry.name))
    return members


def _session_rss_mb(session: int) -> float:
    total = 0
    for pid in _session_members(session):
        try:
            status = Path(f"/proc/{pid}/status").read_text()
        except OSError:
            continue
        total += next((int(line.split()[1]) for line in status.splitlines() if line.startswith("VmRSS:")), 0)
    return total * 1024 / 1e6


def _end_workload(session: int) -> None:
    for pid in _session_members(session):
        if pid != session:
            with contextlib.suppress(ProcessLookupError):
                os.kill(pid, signal.SIGKILL)


def _machine_memory_mb() -> float:
    for line in Path("/proc/meminfo").read_text().splitlines():
        if line.startswith("MemTotal:"):
            return int(line.split()[1]) * 1024 / 1e6
    return float("inf")


def _gnu_time_figures(text: str) -> dict[str, float]:
    fields = dict(line.strip().rsplit(": ", 1) for line in text.splitlines() if ": " in line)
    clock = [float(part) for part in fields.get("Elapsed (wall clock) time (h:mm:ss or m:ss)", "nan").split(":")]
    wall = sum(part * 60 ** power for power, part in enumerate(reversed(clock)))
    cpu = float(fields.get("User time (seconds)", "nan")) + float(fields.get("System time (seconds)", "nan"))
    peak_mb = float(fields.get("Maximum resident set size (kbytes)", "nan")) * 1024 / 1e6
    return {"wall": wall, "cpu": cpu, "peak_mb": peak_mb}
