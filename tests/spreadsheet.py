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
    """Open the book in LibreOffice Calc (its own profile), recalculate, save as .xlsx; return the copy."""
    program = libreoffice()
    profile = folder / "profile"
    (profile / "user").mkdir(parents=True, exist_ok=True)
    (profile / "user" / "registrymodifications.xcu").write_text(RECALC_ALWAYS, encoding="utf-8")
    out = folder / "recalculated"
    subprocess.run([program, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--calc",
                    "--convert-to", "xlsx", "--outdir", str(out), str(path)],
                   check=True, capture_output=True, timeout=LIBREOFFICE_SECONDS)
    return out / path.name
