"""What the workbook writers share: number formats, sheet constants and the cell helpers
(text never written as a formula, headers, titles, widths, defined names).

One small module that every sheet writer imports, so that no writer imports another.
"""

from __future__ import annotations

import re

from lcoe.case.readback import LIST_TABLE_SPECS, list_fields
from lcoe.export.cells import FORMULA_START

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
#: Characters per JSON chunk in the hidden sheet (a cell holds at most 32,767).
JSON_CHUNK = 30000
#: Largest number of trials listed on the Distribution sheet (all are in trials.csv).
MAX_TRIALS_IN_SHEET = 10_000

CAUTIONS = (
    "Results depend entirely on the inputs. They are not investment advice; decisions about "
    "money need your own due diligence.",
    "A bankable energy assessment is made by an independent engineer with measured or "
    "satellite-derived site data; a typical-year file and default losses give a screening "
    "estimate.",
    "Electrical and structural design, grid connection and anything involving concentrated "
    "sunlight follow local codes and licensed professionals.",
)

# formats
FMT_MONEY = "#,##0"
FMT_KWH = "#,##0"
FMT_PRICE = "0.00000"
FMT_RATE = "0.0000%"
FMT_FACTOR = "0.000000"
FMT_PLAIN = "General"
FMT_TEXT = "@"

_ILLEGAL = re.compile(r"[\000-\010]|[\013-\014]|[\016-\037]")


# --------------------------------------------------------------------------------------------
# cell helpers
# --------------------------------------------------------------------------------------------
def put_text(ws, row: int, col: int, text) -> None:
    """Write ``text`` as a literal text cell, never a formula.

    A value starting with ``=``, ``+``, ``-``, ``@``, a tab or a line break stays text: the cell
    type is forced to string, the text number format is set and the cell is marked with a
    quote prefix, so that a spreadsheet keeps it as text even when a user edits it. Control
    characters that a workbook cannot hold are replaced by U+FFFD.

    Parameters
    ----------
    ws : openpyxl.worksheet.worksheet.Worksheet
    row, col : int
        1-based cell position.
    text : object
        Written as ``str(text)``; None gives an empty text cell.
    """
    value = "" if text is None else _ILLEGAL.sub("\ufffd", str(text))
    cell = ws.cell(row=row, column=col)
    cell.value = value
    cell.data_type = "s"
    if value.startswith(FORMULA_START):
        cell.number_format = FMT_TEXT
        cell.quotePrefix = True


def put(ws, row: int, col: int, value, number_format: str | None = None) -> None:
    """Write a number or bool as a value, anything else as safe text (:func:`put_text`).

    Parameters
    ----------
    ws : Worksheet
    row, col : int
        1-based cell position.
    value : object
        Numbers are written as floats (ints as ints), bools as bools, None as an empty cell.
    number_format : str, optional
        Number format of a numeric cell.
    """
    if value is None:
        ws.cell(row=row, column=col, value=None)
    elif isinstance(value, bool):
        ws.cell(row=row, column=col, value=value)
    elif isinstance(value, int):
        cell = ws.cell(row=row, column=col, value=value)
        if number_format:
            cell.number_format = number_format
    elif _is_number(value):
        cell = ws.cell(row=row, column=col, value=float(value))
        if number_format:
            cell.number_format = number_format
    else:
        put_text(ws, row, col, value)


def put_formula(ws, row: int, col: int, formula: str, number_format: str | None = None) -> None:
    """Write a formula built by this package (never from user text).

    Parameters
    ----------
    formula : str
        Starts with ``=``.
    """
    if not formula.startswith("="):
        raise ValueError(f"formula must start with '=': {formula!r}")
    cell = ws.cell(row=row, column=col, value=formula)
    if number_format:
        cell.number_format = number_format


def _is_number(value) -> bool:
    try:
        float(value)
    except (TypeError, ValueError):
        return False
    return not isinstance(value, str)


def header(ws, row: int, labels, col: int = 1) -> None:
    """Bold header labels in one row, starting at ``col``."""
    from openpyxl.styles import Font, PatternFill

    fill = PatternFill("solid", fgColor="DDE3EA")
    for j, lab in enumerate(labels, start=col):
        put_text(ws, row, j, lab)
        cell = ws.cell(row=row, column=j)
        cell.font = Font(bold=True)
        cell.fill = fill


def title(ws, row: int, text: str, size: int = 12) -> None:
    """A bold section title."""
    from openpyxl.styles import Font

    put_text(ws, row, 1, text)
    ws.cell(row=row, column=1).font = Font(bold=True, size=size)


def widths(ws, cols: dict) -> None:
    """Set column widths, ``{"A": 40, "B": 12}``."""
    for letter, w in cols.items():
        ws.column_dimensions[letter].width = w


def ref(ws, row: int, col: int, absolute: bool = True) -> str:
    """``'Sheet'!$C$5`` reference of a cell."""
    from openpyxl.utils import get_column_letter, quote_sheetname

    letter = get_column_letter(col)
    coord = f"${letter}${row}" if absolute else f"{letter}{row}"
    return f"{quote_sheetname(ws.title)}!{coord}"


def define_name(wb, name: str, ws, row: int, col: int) -> None:
    """Define a workbook-level name for one cell."""
    from openpyxl.workbook.defined_name import DefinedName

    wb.defined_names[name] = DefinedName(name, attr_text=ref(ws, row, col))


def engine_columns(ws, row: int, formula_col: int, engine_value, number_format: str) -> None:
    """Write the engine's value next to a formula cell, and their relative difference.

    The engine value goes to ``formula_col + 1`` and ``formula / engine - 1`` (or the plain
    difference when the engine value is 0) to ``formula_col + 2``.
    """
    from openpyxl.styles import Font
    from openpyxl.utils import get_column_letter

    put(ws, row, formula_col + 1, engine_value, number_format)
    ws.cell(row=row, column=formula_col + 1).font = Font(italic=True, color="555555")
    f = f"{get_column_letter(formula_col)}{row}"
    e = f"{get_column_letter(formula_col + 1)}{row}"
    put_formula(ws, row, formula_col + 2, f"=IF({e}=0,{f}-{e},{f}/{e}-1)", "0.0E+00")


# --------------------------------------------------------------------------------------------
# defined names of inputs
# --------------------------------------------------------------------------------------------
_CELL_LIKE = re.compile(r"^([A-Za-z]{1,3}\d+|[Rr]\d*[Cc]\d*|[RrCc])$")


def input_names(paths) -> dict:
    """Defined name of every numeric input path, e.g. ``costs.capex_per_kw`` -> capex_per_kw.

    The key alone is used unless two sections share it, it is a bare word without ``_`` (e.g.
    ``tax.rate``), or it could be read as a cell reference; then the section is prefixed.
    """
    keys = [p.rsplit(".", 1)[1] for p in paths]
    out = {}
    for p, k in zip(paths, keys):
        section = p.rsplit(".", 1)[0].replace(".", "_")
        keep = keys.count(k) == 1 and ("_" in k or k == "inflation") and not _CELL_LIKE.match(k)
        out[p] = k if keep else f"{section}_{k}"
    return out


def list_tables(case) -> list:
    """``(path, entries, fields)`` of every non-empty list of tables of ``case``."""
    fields = list_fields()
    return [(path, getattr(case, attr, ()), fields[path]) for path, attr, _ in LIST_TABLE_SPECS
            if path in fields and getattr(case, attr, ())]


def replacement_name(i: int, key: str) -> str:
    """Defined name of replacement ``i`` (0-based) field ``key``."""
    return f"replacement_{i + 1}_{key}"


def _jsonable(obj):
    """Tables from TOML (mappings, tuples, numbers) as plain JSON-ready values."""
    if isinstance(obj, dict) or hasattr(obj, "items"):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if hasattr(obj, "tolist"):
        return obj.tolist()
    return obj
