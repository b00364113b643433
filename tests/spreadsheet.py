"""LibreOffice Calc as the reference spreadsheet program of the workbook tests.

``recalculated`` opens a saved ``.xlsx`` book in LibreOffice Calc (headless, in a profile of its
own), recalculates every formula and saves a copy; reading the copy with
``openpyxl.load_workbook(..., data_only=True)`` gives the values a real spreadsheet program computed.
Tests that use it skip when LibreOffice is not installed (``make system-deps`` installs it).
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

LIBREOFFICE_SECONDS = 240  # a cold start of LibreOffice in a fresh profile, with room to spare
ATTEMPTS = 3  # conversions tried before the test fails; the first start of a fresh profile may drop one

# Recalculate every formula on loading an .xlsx file, whatever the file says about itself.
RECALC_ALWAYS = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema"
 xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"""


def libreoffice() -> str:
    """Return the LibreOffice program, or skip the test when it is not on PATH."""
    program = shutil.which("soffice") or shutil.which("libreoffice")
    if program is None:
        pytest.skip("LibreOffice (soffice) is not on PATH; `make system-deps` installs it")
    return program


def recalculated(path: Path, folder: Path) -> Path:
    """Open the book in LibreOffice Calc (its own profile), recalculate, save as .xlsx; return the copy.

    LibreOffice exits with 0 even when it wrote nothing: a first start in a fresh profile can
    restart itself half-way and drop the conversion. So the copy is looked for, the conversion is
    tried again (the profile then exists) up to ``ATTEMPTS`` times, and a missing copy fails the
    test with LibreOffice's own words, never with a bare FileNotFoundError later.
    """
    program = libreoffice()
    profile = folder / "profile"
    (profile / "user").mkdir(parents=True, exist_ok=True)
    (profile / "user" / "registrymodifications.xcu").write_text(RECALC_ALWAYS, encoding="utf-8")
    out = folder / "recalculated"
    copy = out / path.name
    said = []
    for _ in range(ATTEMPTS):
        result = subprocess.run([program, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--calc",
                                 "--convert-to", "xlsx", "--outdir", str(out), str(path)],
                                capture_output=True, text=True, timeout=LIBREOFFICE_SECONDS)
        if result.returncode == 0 and copy.is_file() and copy.stat().st_size > 0:
            return copy
        said.append(f"exit {result.returncode}: {result.stdout.strip()} {result.stderr.strip()}".strip())
    pytest.fail(f"LibreOffice wrote no recalculated copy of {path.name} in {ATTEMPTS} attempts: " + " | ".join(said))
