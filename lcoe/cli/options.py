"""What several commands share: the bundled inputs folder, whole-number options and the
execution options ``--workers`` / ``--scheduler``.
"""

from __future__ import annotations

import argparse
from pathlib import Path


def add_execution_options(p) -> None:
    """``--workers`` and ``--scheduler`` (run, compare and sweep)."""

    how = p.add_mutually_exclusive_group()
    how.add_argument("--workers", type=_non_negative_int, default=1, metavar="N",
                     help="worker processes on a local dask cluster bound to 127.0.0.1 "
                          "(default 1 = serial in this process); the numbers do not change")
    how.add_argument("--scheduler", metavar="ADDRESS",
                     help="submit the trials to an existing dask scheduler, e.g. "
                          "tcp://127.0.0.1:8786")


#: Folder of the bundled case files (the repository's ``inputs/``).
INPUTS_DIR = Path(__file__).resolve().parents[2] / "inputs"
DEMO_CASE = INPUTS_DIR / "demo_fixed_tilt.toml"


def _non_negative_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"{value} is negative; expected >= 0")
    return value
