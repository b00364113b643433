"""The ledgers the benchmarks read: the demo scenario's generator, run once per size and seed.

A ledger is written to ``benchmarks/data/ledger-<rows>-seed<seed>.<csv|parquet>`` by
``python -m scorecard.demo.generator`` and reused while a file of that name exists (the generator
writes under a temporary name and renames, so a file that exists is whole). Parquet ledgers are
written chunk by chunk, in bounded memory, so the streaming sizes can exceed memory.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from . import DATA, REPO


def ledger_file(rows: int, seed: int, suffix: str = ".csv", *, log=print) -> Path:
    """Return the path of the ledger of ``rows`` rows and ``seed``, generating it if missing."""
    path = DATA / f"ledger-{rows}-seed{seed}{suffix}"
    if path.exists():
        return path
    DATA.mkdir(parents=True, exist_ok=True)
    log(f"generating {path.name} ...")
    subprocess.run([sys.executable, "-m", "scorecard.demo.generator", "--rows", str(rows), "--seed", str(seed),
                    "--out", str(path)], cwd=REPO, check=True, stdout=subprocess.DEVNULL)
    return path


def settings_for(ledger: Path, template: Path, folder: Path) -> Path:
    """Write a copy of the settings file ``template`` that names ``ledger``; return its path.

    The classing stays as ``template`` fixed it (the way an analyst rebuilds on more data); only
    ``path`` under ``[ledger]`` changes, written relative to the copy as the settings file expects.
    """
    folder.mkdir(parents=True, exist_ok=True)
    copy = folder / f"settings-{ledger.stem}.toml"
    relative = Path(os.path.relpath(ledger.resolve(), folder.resolve())).as_posix()
    lines, section, replaced = template.read_text(encoding="utf-8").splitlines(), "", False
    for number, line in enumerate(lines):
        if line.startswith("["):
            section = line.strip()
        elif section == "[ledger]" and line.split("=")[0].strip() == "path" and not replaced:
            lines[number], replaced = f'path = "{relative}"', True
    if not replaced:
        raise SystemExit(f"benchmarks: {template} has no path under [ledger]; cannot point it at {ledger.name}.")
    copy.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return copy

