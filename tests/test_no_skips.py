"""CI runs every test: with SCOREWRIGHT_NO_SKIPS set (.ci/run sets it) a skipped test fails the run."""

import os
import subprocess
import sys
from pathlib import Path

TESTS = Path(__file__).parent


def _pytest(folder: Path, **environment) -> subprocess.CompletedProcess:
    env = {key: value for key, value in os.environ.items() if key != "SCOREWRIGHT_NO_SKIPS"}
    env.update(PYTHONPATH=str(TESTS), **environment)
    return subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "conftest", "-p", "no:cacheprovider",
                           "--rootdir", str(folder), str(folder / "test_probe.py")],
                          capture_output=True, text=True, env=env, cwd=folder, timeout=120)


def test_a_skip_fails_the_run_only_where_every_test_must_run(tmp_path):
    (tmp_path / "test_probe.py").write_text(
        "import pytest\n\ndef test_runs():\n    pass\n\ndef test_needs_a_program():\n    pytest.skip('probe: no such program')\n",
        encoding="utf-8")
    relaxed = _pytest(tmp_path)
    assert relaxed.returncode == 0, relaxed.stdout + relaxed.stderr
    strict = _pytest(tmp_path, SCOREWRIGHT_NO_SKIPS="1")
    assert strict.returncode == 1, strict.stdout + strict.stderr
    assert "1 test(s) skipped where every test must run" in strict.stdout
    assert "test_probe.py::test_needs_a_program: Skipped: probe: no such program" in strict.stdout
