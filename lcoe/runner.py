"""Orchestration: case -> site -> model -> results -> files. Thin; computes nothing itself."""

from __future__ import annotations

import datetime as _dt
import platform
import sys
from importlib import metadata
from pathlib import Path

from . import __version__
from .case import Case, load_case
from .model import evaluate, prepare
from .output import OutputDir
from .results import RunResult

#: Libraries whose versions are stored with every result.
VERSIONED = ("numpy", "pandas", "scipy", "pvlib", "SALib", "openpyxl", "matplotlib")


def versions() -> dict:
    """Versions of lcoe, Python and the libraries that shape the numbers."""
    out = {"lcoe": __version__, "python": platform.python_version()}
    for name in VERSIONED:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = None
    return out


def provenance(seed=None) -> dict:
    """Versions, seed, command line and UTC date of a run."""
    return {"versions": versions(), "seed": seed, "command": " ".join(sys.argv),
            "date_utc": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")}


def run_case(case: Case | str | Path) -> RunResult:
    """The deterministic run of a case (one sample at the case's values).

    Parameters
    ----------
    case : Case or path
        A validated case or the path of a case file.

    Returns
    -------
    RunResult
    """
    if not isinstance(case, Case):
        case = load_case(case)
    site = prepare(case)
    base = evaluate(case, site)
    notes = list(site.notes)
    return RunResult(case=case, site=site, base=base, notes=notes, provenance=provenance())


def write_outputs(result: RunResult, out_dir: str | Path, force: bool = False,
                  replace_own: bool = False) -> Path:
    """Write ``summary.json`` and ``workbook.xlsx`` (and whatever later stages add).

    Files are staged under temporary names and renamed into ``out_dir``; a non-empty
    ``out_dir`` is refused unless ``force``.
    """
    from .export.summary import summary_json
    from .export.workbook import write_workbook

    with OutputDir(out_dir, force=force, replace_own=replace_own) as out:
        out.write_text("summary.json", summary_json(result))
        out.write_with("workbook.xlsx", lambda p: write_workbook(result, p))
    return Path(out_dir)
