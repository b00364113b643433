"""The wheel ships templates/ and demo/ inside the package, and installs a working command."""

from __future__ import annotations

import shutil
import subprocess
import sys
import venv
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    """Build the wheel and install it, without its dependencies, into a fresh virtual environment."""
    folder = tmp_path_factory.mktemp("wheel")
    # build from a copy, so that the build's own folders never land in the checkout
    source = folder / "source"
    shutil.copytree(ROOT, source, ignore=shutil.ignore_patterns(".venv", ".git", "build", "dist", "*.egg-info",
                                                                "demo-run", "benchmarks", ".pytest_cache", "__pycache__"))
    subprocess.run(
        [sys.executable, "-m", "build", "--wheel", "--no-isolation", "--outdir", str(folder / "dist"), str(source)],
        check=True, capture_output=True, cwd=folder,
    )
    wheel = next((folder / "dist").glob("scorewright-*.whl"))
    environment = folder / "venv"
    venv.EnvBuilder(with_pip=True).create(environment)
    subprocess.run([str(environment / "bin" / "python"), "-m", "pip", "install", "--quiet", "--no-deps", "--no-index", str(wheel)],
                   check=True, capture_output=True)
    return environment, wheel


def test_installed_command_shows_help(installed):
    environment, _ = installed
    result = subprocess.run([str(environment / "bin" / "scorewright"), "--help"], capture_output=True, text=True, cwd=environment)
    assert result.returncode == 0, result.stderr
    assert "scorewright build scorecard.toml" in result.stdout
    assert "exit codes" in result.stdout


def test_installed_package_holds_the_templates_and_the_demo(installed):
    environment, _ = installed
    script = (
        "from importlib import resources\n"
        "import scorecard\n"
        "print(resources.files('scorecard.templates').joinpath('base.html').read_text()[:15])\n"
        "print(resources.files('scorecard.demo').joinpath('generator.py').is_file())\n"
        "print(scorecard.__file__)\n"
    )
    result = subprocess.run([str(environment / "bin" / "python"), "-c", script], capture_output=True, text=True, cwd=environment)
    assert result.returncode == 0, result.stderr
    lines = result.stdout.splitlines()
    assert lines[0] == "<!DOCTYPE html>"
    assert lines[1] == "True"
    assert str(environment) in lines[2]  # loaded from the installed wheel, not the checkout


def test_wheel_lists_templates_and_demo(installed):
    import zipfile

    _, wheel = installed
    names = zipfile.ZipFile(wheel).namelist()
    assert "scorecard/templates/base.html" in names
    assert "scorecard/templates/style.css" in names
    assert "scorecard/demo/generator.py" in names
    assert "scorecard/demo/README.md" in names
