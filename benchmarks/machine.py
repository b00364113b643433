"""What the benchmarks ran on: cores, memory, CPU model, Python and library versions, commit.

``code_fingerprint`` hashes the tool's source files, so that a run can tell whether the code it
measured changed while it ran (others work on the tool at the same time).
"""

from __future__ import annotations

import hashlib
import os
import platform
import subprocess
from importlib import metadata
from pathlib import Path

from . import REPO

CODE_FOLDERS = ("scorecard", "templates", "demo")
LIBRARIES = ("numpy", "pandas", "pyarrow", "scipy", "statsmodels", "scikit-learn", "openpyxl", "jinja2")


def machine() -> dict[str, str]:
    """Return the machine and software as label → text."""
    return {
        "cores": str(os.cpu_count()),
        "memory": f"{_meminfo_kib('MemTotal') * 1024 / 1e9:.1f} GB",
        "CPU": _cpu_model(),
        "system": f"{platform.system()} {platform.release()}",
        "Python": platform.python_version(),
        "libraries": ", ".join(f"{name} {_version(name)}" for name in LIBRARIES),
        "scorewright": f"{_version('scorewright')} at commit {_commit()} (uncommitted work of others may be present)",
    }


def _cpu_model() -> str:
    for line in Path("/proc/cpuinfo").read_text().splitlines():
        if line.startswith("model name"):
            return line.split(":", 1)[1].strip()
    return platform.processor() or "unknown"


def _meminfo_kib(field: str) -> int:
    for line in Path("/proc/meminfo").read_text().splitlines():
        if line.startswith(field + ":"):
            return int(line.split()[1])
    return 0


def _version(name: str) -> str:
    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "not installed"


def _commit() -> str:
    # rev-parse only reads the repository
    completed = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=REPO, capture_output=True, text=True)
    return completed.stdout.strip() or "unknown"


def code_fingerprint() -> dict[str, str]:
    """Return the SHA-256 of every file of the tool's code (package, templates, demo), by path."""
    files = sorted(path for folder in CODE_FOLDERS for path in (REPO / folder).rglob("*")
                   if path.is_file() and path.suffix in (".py", ".html", ".css", ".toml"))
    return {str(path.relative_to(REPO)): hashlib.sha256(path.read_bytes()).hexdigest() for path in files}


def changed_files(before: dict[str, str], after: dict[str, str]) -> list[str]:
    """Return the paths added, removed or changed between two fingerprints."""
    return sorted(path for path in before.keys() | after.keys() if before.get(path) != after.get(path))
