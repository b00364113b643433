"""Speed and memory benchmarks of scorewright.

Run ``python -m benchmarks`` from the repository root (``make bench`` does); README.md beside this
file says what is measured and against which targets, and RESULTS.md holds the last run's figures.
The benchmarks are never part of the test run.
"""

from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
DATA = HERE / "data"      # generated ledgers, reused across runs (git-ignored)
RUNS = HERE / "runs"      # settings, build folders and scored files of the last run (git-ignored)
RESULTS = HERE / "RESULTS.md"
LARGE_RESULTS = HERE / "RESULTS-large.md"  # the streamed build of 100M rows (make bench-large; large.py)
