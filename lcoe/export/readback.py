"""Read a workbook written by lcoe back into a case, after a user edited its Inputs sheet.

The Inputs sheet holds one key per row (column A, e.g. ``costs.capex_per_kw``) and its value
(column B). :func:`case_from_workbook` rebuilds the nested tables of a case file from those
rows, adds the list tables kept as JSON in the hidden ``_case`` sheet (``[uncertain]``,
``[[correlation]]``, ``[site.monthly]``, debt sizing) and validates everything exactly like a
case file, through :func:`lcoe.case.case_from_dict`. A bad edited value is an
:class:`~lcoe.errors.InputError` naming the workbook, the key and the value.
"""

from __future__ import annotations

import hashlib
import json
import re
from pathlib import Path
from typing import Any

from ..case import Case, case_from_dict
from ..errors import InputError
from ..schema import FIELD_BY_PATH, REQUIRED
from .workbook import CASE_SHEET, list_fields

_LIST_KEY = re.compile(r"^([a-z_.]+)\[(\d+)\]\.(\w+)$")


def case_from_workbook(path: str | Path) -> Case:
    """Rebuild and validate the case of a workbook written by lcoe.

    Parameters
    ----------
    path : str or pathlib.Path
        ``.xlsx`` file written by :func:`lcoe.export.workbook.write_workbook` (possibly edited
        and saved by a spreadsheet program).

    Returns
    -------
    Case
        Its ``source`` is the workbook path, its ``sha256`` the hash of the workbook's bytes.
        A relative weather path is resolved against the original case's folder when the file
        is there, else against the workbook's folder.

    Raises
    ------
    InputError
        Missing file, not a workbook of lcoe, a formula without a saved value, an unknown key,
        or any value the case validation refuses (one line naming the workbook, the key and
        the value).
    """
    from openpyxl import load_workbook

    p = Path(path)
    src = str(path)
    if not p.is_file():
        raise InputError(f"{src}: workbook not found")
    raw = p.read_bytes()
    try:
        wb = load_workbook(p, read_only=True, data_only=False)
        wb_cached = load_workbook(p, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds for a damaged or foreign file
        raise InputError(f"{src}: cannot read as an .xlsx workbook ({exc})") from None
    try:
        if "Inputs" not in wb.sheetnames or CASE_SHEET not in wb.sheetnames:
            raise InputError(f"{src}: not a workbook written by lcoe (it needs the sheets "
                             f"'Inputs' and '{CASE_SHEET}')")
        tables = _read_tables(wb[CASE_SHEET], src)
        entries = _read_inputs(wb["Inputs"], wb_cached["Inputs"], src, list_fields())
    finally:
        wb.close()
        wb_cached.close()
    data = _nested(entries, tables)
    base_dir = _base_dir(p, tables, data)
    return case_from_dict(data, source=f"{src} (sheet Inputs)", base_dir=base_dir,
                          sha256=hashlib.sha256(raw).hexdigest())


def _read_tables(ws, src: str) -> dict:
    chunks = []
    for row in ws.iter_rows(min_row=2, max_col=1, values_only=True):
        if row[0] is None:
            break
        chunks.append(str(row[0]))
    try:
        tables = json.loads("".join(chunks))
    except json.JSONDecodeError as exc:
        raise InputError(f"{src}: sheet '{CASE_SHEET}' does not hold the case tables "
                         f"({exc.msg}); it must not be edited") from None
    if not isinstance(tables, dict) or tables.get("format") != "lcoe-case-tables":
        raise InputError(f"{src}: sheet '{CASE_SHEET}' does not hold the case tables")
    return tables


def _read_inputs(ws, ws_cached, src: str, lists: dict) -> dict[str, Any]:
    """Key -> value of the rows of the Inputs sheet, down to the first row without a key."""
    out: dict[str, Any] = {}
    rows = ws.iter_rows(min_row=2, max_col=2)
    cached = ws_cached.iter_rows(min_row=2, max_col=2, values_only=True)
    for cells, values in zip(rows, cached):
        key_cell, value_cell = cells[0], cells[1] if len(cells) > 1 else None
        key = key_cell.value
        if key is None or str(key).strip() == "":
            break
        key = str(key).strip()
        where = f"{src}: Inputs!B{key_cell.row} ({key})"
        kind = _kind(key, src, key_cell.row, lists)
        value = None if value_cell is None else value_cell.value
        if value_cell is not None and value_cell.data_type == "f":
            value = values[1] if len(values) > 1 else None
            if value is None:
                raise InputError(f"{where} = {value_cell.value!r}: a formula without a saved "
                                 f"value; type the value, or save the workbook in a spreadsheet "
                                 f"program that calculates it")
        if key in out:
            raise InputError(f"{src}: key '{key}' appears twice on the Inputs sheet")
        out[key] = _typed(kind, value)
    return out


def _kind(key: str, src: str, row: int, lists: dict) -> str:
    f = FIELD_BY_PATH.get(key)
    if f is not None:
        return f.kind
    m = _LIST_KEY.match(key)
    if m and m.group(1) in lists:
        for lf in lists[m.group(1)]:
            if lf.key == m.group(3):
                return lf.kind
    raise InputError(f"{src}: Inputs!A{row}: unknown key {key!r}; keys are the dotted names "
                     f"lcoe wrote in column A (e.g. 'costs.capex_per_kw')")


def _table(data: dict, dotted: str) -> dict:
    """The nested table at a dotted section path, created when missing."""
    table = data
    for part in dotted.split("."):
        table = table.setdefault(part, {})
    return table


def _typed(kind: str, value: Any) -> Any:
    """Undo what a spreadsheet does to values: whole floats, booleans as 0/1, numbers as text.

    Anything that still does not fit is passed on unchanged so that the case validation names
    it in its error.
    """
    if value is None:
        return None
    if isinstance(value, str) and value.strip() == "" and kind not in ("str", "path"):
        return None
    if kind == "bool":
        if isinstance(value, (int, float)) and not isinstance(value, bool) and value in (0, 1):
            return bool(value)
        if isinstance(value, str) and value.strip().lower() in ("true", "false"):
            return value.strip().lower() == "true"
        return value
    if kind in ("str", "path", "choice"):
        if isinstance(value, float) and value.is_integer():
            return str(int(value))
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return str(value)
        return value
    if kind in ("int", "float") and isinstance(value, str):
        try:
            number = float(value.strip())
        except ValueError:
            return value
        return int(number) if kind == "int" and number.is_integer() else number
    if kind == "int" and isinstance(value, float) and value.is_integer():
        return int(value)
    return value


def _nested(entries: dict[str, Any], tables: dict) -> dict:
    """The nested tables of a case file from the Inputs rows and the stored list tables.

    A section that was in the case file is written with all its values; a section that was
    not (its values are the defaults) only when one of its values now differs from the
    default, so that an untouched optional section (e.g. ``[revenue]``) stays absent.
    """
    present = set(tables.get("sections") or ())
    chosen: set[str] = set()
    lists: dict[str, dict[int, dict]] = {}
    for key, value in entries.items():
        m = _LIST_KEY.match(key)
        if m:
            if value is not None:
                lists.setdefault(m.group(1), {}).setdefault(int(m.group(2)), {})[
                    m.group(3)] = value
            continue
        f = FIELD_BY_PATH[key]
        # presence is recorded for top-level tables; a nested one (e.g. [plant.body]) is
        # written when one of its values differs from the default
        if value is not None and (f.section in present or f.default is REQUIRED
                                  or value != f.default):
            chosen.add(f.section)
    data: dict[str, Any] = {}
    for key, value in entries.items():
        f = FIELD_BY_PATH.get(key)
        if f is not None and value is not None and f.section in chosen:
            _table(data, f.section)[f.key] = value
    for path, items in lists.items():
        parent, _, name = path.rpartition(".")
        _table(data, parent)[name] = [items[i] for i in sorted(items)]
    if tables.get("monthly"):
        _table(data, "site")["monthly"] = tables["monthly"]
    if tables.get("soiling_monthly_loss"):
        _table(data, "plant.soiling")["monthly_loss"] = tables["soiling_monthly_loss"]
    if tables.get("debt_sizing") and "debt" in present:
        _table(data, "debt")["sizing"] = [{"case": c, "min_dscr": v}
                                         for c, v in tables["debt_sizing"]]
    if tables.get("uncertain"):
        data["uncertain"] = tables["uncertain"]
    if tables.get("correlation"):
        data["correlation"] = tables["correlation"]
    return data


def _base_dir(workbook: Path, tables: dict, data: dict) -> Path:
    """Folder that a relative weather path is resolved against."""
    here = workbook.resolve().parent
    stored = tables.get("base_dir")
    weather = data.get("site", {}).get("weather")
    if stored and (weather is None or (Path(stored) / str(weather)).exists()):
        return Path(stored)
    return here
