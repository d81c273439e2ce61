"""An independent spreadsheet engine for the tests: LibreOffice Calc, headless.

:func:`recalculate` opens workbooks in LibreOffice, recalculates every formula and
saves copies with the computed values, in one ``soffice`` call for many files;
:func:`load_values` reads a copy back with openpyxl. The private profile makes
LibreOffice recalculate on load (it would otherwise trust cached values) and
keeps parallel runs apart.

Tests ask for the engine through :func:`require_engine`: without LibreOffice a
test fails under ``CI=true`` and is skipped, with a loud reason, elsewhere.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile
import warnings
from pathlib import Path
from typing import Iterable

import pytest

#: LibreOffice registry items: always recalculate OOXML and ODF files on load
_PROFILE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema"
 xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"""

#: how error values come back from an engine (the codes differ between engines)
ERROR_VALUE = re.compile(r"^(#(NULL!|DIV/0!|VALUE!|REF!|NAME\?|NUM!|N/A|GETTING_DATA)|Err:\d+)$")


def soffice() -> str | None:
    """Path of the LibreOffice binary, or None."""
    return shutil.which("soffice") or shutil.which("libreoffice")


def require_engine() -> str:
    """The LibreOffice binary; fail under CI=true, skip loudly elsewhere when it is missing."""
    path = soffice()
    if path:
        return path
    reason = ("LibreOffice (soffice) is not installed: the workbook recalculation tests cannot run. "
              "Install libreoffice-calc-nogui.")
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail(reason + " In CI this is an error, never a skip.")
    warnings.warn(reason)
    pytest.skip("SKIPPED LOUDLY: " + reason)


def recalculate(paths: Iterable[str | Path], outdir: str | Path, timeout: float = 240.0) -> list[Path]:
    """Recalculate workbooks in LibreOffice; return the recalculated copies (same names, in ``outdir``).

    One ``soffice`` call converts every file, with a private profile that forces
    recalculation on load. ``outdir`` must not be the folder of any input.
    """
    binary = require_engine()
    paths = [Path(p).resolve() for p in paths]
    outdir = Path(outdir).resolve()
    outdir.mkdir(parents=True, exist_ok=True)
    if any(p.parent == outdir for p in paths):
        raise ValueError("outdir must differ from the folder of the inputs, or they are overwritten")
    with tempfile.TemporaryDirectory(prefix="lo-profile-") as profile:
        user = Path(profile) / "user"
        user.mkdir(parents=True)
        (user / "registrymodifications.xcu").write_text(_PROFILE, encoding="utf-8")
        cmd = [binary, f"-env:UserInstallation={Path(profile).as_uri()}", "--headless", "--norestore",
               "--convert-to", "xlsx:Calc MS Excel 2007 XML", "--outdir", str(outdir), *map(str, paths)]
        run = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
    out = [outdir / p.name for p in paths]
    missing = [str(p) for p in out if not p.exists()]
    if missing:  # soffice exits 0 even when it could not load a file
        raise RuntimeError(f"LibreOffice did not write {missing}: exit {run.returncode}\n{run.stdout}\n{run.stderr}")
    return out


def load_values(path: str | Path):
    """A recalculated workbook read back with its computed values (openpyxl, data_only)."""
    from openpyxl import load_workbook

    return load_workbook(path, data_only=True)


def error_cells(workbook) -> list[str]:
    """Every cell holding an error value, as ``Sheet!A1 = value``."""
    found = []
    for ws in workbook.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                v = cell.value
                if cell.data_type == "e" or (isinstance(v, str) and ERROR_VALUE.match(v)):
                    found.append(f"{ws.title}!{cell.coordinate} = {v!r}")
    return found
