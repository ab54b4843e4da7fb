"""Text that comes from users, made safe for spreadsheets: one rule for xlsx cells and CSV.

A spreadsheet program reads a cell that starts with ``=``, ``+``, ``-``, ``@``, a tab or a line
break as a formula (spreadsheet formula injection: ``=HYPERLINK(...)`` in a site name becomes
a live link). The workbook writer keeps such text a text cell with a quote prefix
(:func:`lcoe.export.workbook.layout.put_text`); CSV has no cell types, so :func:`csv_cell` writes
the
same mark the way a spreadsheet shows it, a leading apostrophe. Numbers stay numbers: a
negative value is written as ``-0.5``, not neutralised.

Every CSV lcoe writes goes through :func:`write_csv` (or :func:`csv_cell` for each text cell).

References
----------
OWASP, "CSV Injection" (the leading-apostrophe rule for cells starting with = + - @ tab CR).
"""

from __future__ import annotations

import csv
import numbers
from collections.abc import Iterable
from pathlib import Path

#: First characters that make a spreadsheet read a cell as a formula.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n")


def neutral_text(text) -> str:
    """``str(text)``, with a leading apostrophe when it starts with :data:`FORMULA_START`."""
    value = "" if text is None else str(text)
    return "'" + value if value.startswith(FORMULA_START) else value


def csv_cell(value):
    """A CSV cell: numbers (not bools) unchanged, None empty, anything else neutral text."""
    if isinstance(value, numbers.Real) and not isinstance(value, bool):
        return value
    return neutral_text(value)


def write_csv(path: Path, header: Iterable, rows: Iterable[Iterable]) -> None:
    """Write a CSV file (UTF-8, ``,``, ``\\n``), every text cell through :func:`csv_cell`.

    Parameters
    ----------
    path : pathlib.Path
        File to write (normally in an output stage, see :func:`lcoe.export.staging.publish`).
    header : iterable
        Column names.
    rows : iterable of iterables
        Cell values; floats are written with ``repr`` (shortest round-trip form).
    """
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow([csv_cell(h) for h in header])
        w.writerows([csv_cell(v) for v in row] for row in rows)
