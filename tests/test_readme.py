"""The README cannot go stale: its settings table equals the code, and its commands run."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from scorecard.settings import settings_reference

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _blocks(language: str) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", README, flags=re.S)


def test_readme_documents_every_settings_key_with_its_default():
    rows = re.findall(r"^\| `([^`]+)` \| `([^`]+)` \| (.+) \|$", README, flags=re.M)
    assert rows == [(key, default, meaning) for key, default, meaning in settings_reference()]


def test_readme_starts_with_the_job_and_carries_the_caution():
    first_paragraph = README.split("\n\n")[1]
    assert "scorecard" in first_paragraph and "ledger" in first_paragraph
    assert "does not replace" in README and "local regulation and licensed practice" in README
    assert README.index("## Quick start") < README.index("## A walk through the demo")


@pytest.mark.slow
def test_every_shell_command_in_the_readme_runs(tmp_path):
    # make targets are checked with a dry run (running 'make test' here would run these tests
    # again); every other command runs for real, in order, in an empty folder
    environment = dict(os.environ, PATH=f"{Path(sys.executable).parent}{os.pathsep}{os.environ['PATH']}")
    commands = [line.strip() for block in _blocks("sh") for line in block.splitlines() if line.strip()]
    assert any(c.startswith("scorewright ") for c in commands)
    for command in commands:
        if command.startswith("make "):
            result = subprocess.run(["make", "-n", *command.split()[1:]], cwd=ROOT, capture_output=True, text=True)
        else:
            result = subprocess.run(command, shell=True, cwd=tmp_path, env=environment, capture_output=True, text=True)
        assert result.returncode == 0, f"{command}\n{result.stdout[-2000:]}\n{result.stderr[-2000:]}"


@pytest.mark.slow
def test_every_python_example_in_the_readme_runs(tmp_path):
    for block in _blocks("python"):
        result = subprocess.run([sys.executable, "-c", block], cwd=tmp_path, capture_output=True, text=True)
        assert result.returncode == 0, result.stderr[-3000:]
