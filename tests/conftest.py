"""Fixtures shared by several test modules, and the rule that CI runs every test."""

from __future__ import annotations

import io
import os

import pytest

from scorecard.cli import main

# .ci/run sets it: a test that skips in CI is a test that does not exist, so there a skip fails the run
NO_SKIPS = bool(os.environ.get("SCOREWRIGHT_NO_SKIPS"))
SKIPPED: list[str] = []


def pytest_runtest_logreport(report):
    if report.skipped and not hasattr(report, "wasxfail"):
        SKIPPED.append(f"{report.nodeid}: {report.longrepr[2] if isinstance(report.longrepr, tuple) else report.longrepr}")


def pytest_sessionfinish(session, exitstatus):
    if NO_SKIPS and SKIPPED:
        print(f"\n{len(SKIPPED)} test(s) skipped where every test must run (SCOREWRIGHT_NO_SKIPS); install what they "
              "name (make system-deps) and run again:\n  " + "\n  ".join(SKIPPED))
        session.exitstatus = pytest.ExitCode.TESTS_FAILED


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """The demo's whole flow at 8000 rows, run once per session: (folder, what it printed)."""
    folder = tmp_path_factory.mktemp("demo")
    out, err = io.StringIO(), io.StringIO()
    assert main(["demo", "--rows", "8000", "--out", str(folder), "--force"], stdout=out, stderr=err) == 0, err.getvalue()
    return folder, out.getvalue()


@pytest.fixture(scope="session")
def awkward_model_file(tmp_path_factory):
    """A saved model with decimals, awkward levels and names, special and unseen routes (tests/exported.py)."""
    from exported import awkward_model

    return awkward_model(tmp_path_factory.mktemp("awkward") / "model.json")
