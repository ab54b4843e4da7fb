"""Recalculate workbooks with LibreOffice headless (cross-implementation check of formulas).

``soffice --convert-to xlsx`` loads a workbook, recalculates it and saves a copy whose formula
cells carry cached values, which openpyxl then reads with ``data_only=True``. Pitfalls handled
here: soffice exits 0 even when a conversion fails (so each output file is checked); every call
gets its own fresh user profile and HOME (two instances sharing a profile block each other);
the output folder differs from the input folder; recalculation on load is forced in the
profile's settings rather than left to the default for OOXML files.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

#: Profile setting: always recalculate OOXML workbooks on load (0 = always, 1 = never,
#: 2 = ask).
_REGISTRY = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry"
           xmlns:xs="http://www.w3.org/2001/XMLSchema"
           xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load">
  <prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop>
</item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load">
  <prop oor:name="ODFRecalcMode" oor:op="fuse"><value>0</value></prop>
</item>
</oor:items>
"""


def soffice_path() -> str | None:
    """The LibreOffice executable, or None when it is not installed."""
    return shutil.which("soffice") or shutil.which("libreoffice")


def to_pdf(path, out_dir, timeout: float = 600.0) -> Path:
    """Print a workbook to PDF with LibreOffice (each sheet's page setup applies)."""
    return recalculate([path], out_dir, timeout, target="pdf")[0]


def pdf_pages(path) -> int:
    """Number of pages of a PDF file (counts its page objects)."""
    import re

    return len(re.findall(rb"/Type\s*/Page(?!s)", Path(path).read_bytes()))


def recalculate(paths, out_dir, timeout: float = 600.0, target: str = "xlsx") -> list[Path]:
    """Load, recalculate and save each workbook with LibreOffice, in one soffice call.

    Parameters
    ----------
    paths : sequence of path-like
        ``.xlsx`` files; their names must differ.
    out_dir : path-like
        Folder for the recalculated copies (not the folder of any input).
    timeout : float
        Seconds before the call is abandoned.

    Returns
    -------
    list of pathlib.Path
        The recalculated copies, in the order of ``paths``.

    Raises
    ------
    RuntimeError
        When soffice is missing or a copy was not written.
    """
    exe = soffice_path()
    if exe is None:
        raise RuntimeError("soffice not found")
    paths = [Path(p).resolve() for p in paths]
    out_dir = Path(out_dir).resolve()
    if any(p.parent == out_dir for p in paths):
        raise ValueError("out_dir must differ from the folder of the inputs")
    if len({p.name for p in paths}) != len(paths):
        raise ValueError("input file names must differ")
    out_dir.mkdir(parents=True, exist_ok=True)
    home = Path(tempfile.mkdtemp(prefix="lcoe-soffice-"))
    profile = home / "profile"
    (profile / "user").mkdir(parents=True)
    (profile / "user" / "registrymodifications.xcu").write_text(_REGISTRY, encoding="utf-8")
    env = {k: v for k, v in os.environ.items() if not k.startswith(("UNO_", "URE_"))}
    env["HOME"] = str(home)
    cmd = [exe, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--norestore",
           "--nologo", "--convert-to", target, "--outdir", str(out_dir), *map(str, paths)]
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, env=env,
                              cwd=str(home))
    finally:
        shutil.rmtree(home, ignore_errors=True)
    outs = [out_dir / (p.stem + "." + target) for p in paths]
    missing = [str(o) for o in outs if not o.is_file()]
    if missing:
        raise RuntimeError(f"soffice did not write {missing}: exit {proc.returncode}, "
                           f"stdout {proc.stdout[-2000:]!r}, stderr {proc.stderr[-2000:]!r}")
    return outs
