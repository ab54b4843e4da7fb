"""Read a workbook written by lcoe back into a case, after a user edited its Inputs sheet.

The Inputs sheet holds one key per row (column A, e.g. ``costs.capex_per_kw``) and its value
(column B). :func:`case_from_workbook` rebuilds the nested tables of a case file from those
rows, adds the list tables kept as JSON in the hidden ``_case`` sheet (``[uncertain]``,
``[[correlation]]``, ``[site.monthly]``, debt sizing) and validates everything exactly like a
case file, through :func:`lcoe.case.reader.case_from_dict`. A bad edited value is an
:class:`~lcoe.case.errors.InputError` naming the workbook, the key and the value.

Hardening against edited or hostile files:

- Rows are read by key, not by position: rows may be moved and blank rows inserted; every key
  lcoe wrote (listed in the hidden sheet) must still be there.
- The hidden sheet carries the SHA-256 of its JSON text (cell ``B1``); an edited hidden sheet
  is refused.
- The archive's members are checked against :data:`MAX_MEMBER_BYTES`,
  :data:`MAX_TOTAL_BYTES`, :data:`MAX_RATIO` and :data:`MAX_MEMBERS` from the zip directory,
  before anything is inflated (Python's zipfile never inflates more than the size it
  declares, so a lying header ends in a CRC error, not in memory).
- A number cell that is not finite (NaN, infinity) is refused with its cell.
"""

from __future__ import annotations

import hashlib
import json
import math
import re
import zipfile
from pathlib import Path
from typing import Any

from lcoe.case.errors import InputError, cut
from lcoe.case.reader import Case, case_from_dict
from lcoe.case.schema import FIELD_BY_PATH, REQUIRED

_LIST_KEY = re.compile(r"^([a-z_.]+)\[(\d+)\]\.(\w+)$")

#: Largest inflated size of one archive member [bytes]. A 10,000-trial workbook's largest
#: sheet inflates to about 10 MB.
MAX_MEMBER_BYTES = 64 * 2**20
#: Largest inflated size of all members together [bytes].
MAX_TOTAL_BYTES = 256 * 2**20
#: Largest inflation ratio of a member above 1 MB (XML of real workbooks: about 5-30).
MAX_RATIO = 200
#: Most members in the archive (a workbook of lcoe has about 30).
MAX_MEMBERS = 1000


def case_from_workbook(path: str | Path) -> Case:
    """Rebuild and validate the case of a workbook written by lcoe.

    Parameters
    ----------
    path : str or pathlib.Path
        ``.xlsx`` file written by :func:`lcoe.export.workbook.book.write_workbook` (possibly edited
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
    check_archive(p, src)
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
        _require_keys(entries, tables, src)
    except InputError:
        raise
    except Exception as exc:  # openpyxl parses cells lazily: e.g. a number cell holding NaN
        raise InputError(f"{src}: a cell cannot be read ({cut(exc, 80)}); numbers must be "
                         f"finite and text must be text") from None
    finally:
        wb.close()
        wb_cached.close()
    data = _nested(entries, tables)
    base_dir = _base_dir(p, tables, data)
    return case_from_dict(data, source=f"{src} (sheet Inputs)", base_dir=base_dir,
                          sha256=hashlib.sha256(raw).hexdigest())


def check_archive(path: Path, src: str) -> None:
    """Refuse an archive whose members would inflate beyond the limits (zip bomb).

    Reads only the zip directory (declared sizes); see the module docstring.
    """
    try:
        with zipfile.ZipFile(path) as zf:
            infos = zf.infolist()
    except (zipfile.BadZipFile, OSError, ValueError) as exc:
        raise InputError(f"{src}: cannot read as an .xlsx workbook ({exc})") from None
    if len(infos) > MAX_MEMBERS:
        raise InputError(f"{src}: {len(infos)} archive members; a workbook of lcoe has far "
                         f"fewer (at most {MAX_MEMBERS} read)")
    total = 0
    for info in infos:
        total += info.file_size
        ratio = info.file_size / max(info.compress_size, 1)
        if (info.file_size > MAX_MEMBER_BYTES or total > MAX_TOTAL_BYTES
                or (info.file_size > 2**20 and ratio > MAX_RATIO)):
            raise InputError(f"{src}: archive member {info.filename[:80]!r} would inflate to "
                             f"{info.file_size:,} bytes ({ratio:,.0f} times its packed size); "
                             f"refused (limits: {MAX_MEMBER_BYTES // 2**20} MB a member, "
                             f"{MAX_TOTAL_BYTES // 2**20} MB in all, ratio {MAX_RATIO})")


def _read_tables(ws, src: str) -> dict:
    chunks = []
    stamp = None
    for i, row in enumerate(ws.iter_rows(min_row=1, max_col=2, values_only=True)):
        if i == 0:
            stamp = row[1] if len(row) > 1 else None
            continue
        if not row or row[0] is None:
            break
        chunks.append(str(row[0]))
    text = "".join(chunks)

    def edited(why: str) -> InputError:
        return InputError(f"{src}: the hidden sheet '{CASE_SHEET}' was edited or damaged "
                          f"({why}); it must not be edited: run the case file again for a "
                          f"fresh workbook")

    if stamp is None:
        raise edited("no checksum in its cell B1")
    if str(stamp) != tables_checksum(text):
        raise edited("its checksum does not match")
    try:
        tables = json.loads(text)
    except json.JSONDecodeError as exc:
        raise edited(exc.msg) from None
    if not isinstance(tables, dict) or tables.get("format") != "lcoe-case-tables":
        raise InputError(f"{src}: sheet '{CASE_SHEET}' does not hold the case tables")
    return tables


def _require_keys(entries: dict, tables: dict, src: str) -> None:
    """Every key lcoe wrote on the Inputs sheet must still be there (rows may move)."""
    missing = [k for k in tables.get("keys") or () if k not in entries]
    if missing:
        more = f" and {len(missing) - 1} more" if len(missing) > 1 else ""
        raise InputError(f"{src}: sheet Inputs has no row with key '{missing[0][:80]}'{more} in "
                         f"column A above the information blocks; rows may be moved and blank "
                         f"rows inserted, but no key may be deleted or renamed")


def _read_inputs(ws, ws_cached, src: str, lists: dict) -> dict[str, Any]:
    """Key -> value of every row of the Inputs sheet with a key (blank rows skipped), down to
    the first information block (:data:`~lcoe.case.readback.INFO_HEADINGS`)."""
    out: dict[str, Any] = {}
    rows = ws.iter_rows(min_row=2, max_col=2)
    cached = ws_cached.iter_rows(min_row=2, max_col=2, values_only=True)
    for cells, values in zip(rows, cached):
        key_cell, value_cell = cells[0], cells[1] if len(cells) > 1 else None
        key = key_cell.value
        if key is None or str(key).strip() == "":
            continue
        key = str(key).strip()
        if key in INFO_HEADINGS:
            break
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
            raise InputError(f"{src}: key '{key[:80]}' appears twice on the Inputs sheet")
        typed = _typed(kind, value)
        if isinstance(typed, float) and not math.isfinite(typed):
            raise InputError(f"{where} = {str(value)[:80]!r}: expected a finite number")
        out[key] = typed
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
    if tables.get("drawdown"):
        _table(data, "construction")["drawdown"] = tables["drawdown"]
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
    if stored and (weather is None or _exists(Path(stored) / str(weather))):
        return Path(stored)
    return here


def _exists(path: Path) -> bool:
    """``path.exists()``, False for a path the system cannot look up (too long, a loop, NUL):
    the weather reader then names the problem in one line."""
    try:
        return path.exists()
    except (OSError, RuntimeError, ValueError):
        return False


#: Title of the hidden sheet holding the case's list tables as JSON text.
CASE_SHEET = "_case"


#: Lists of tables of a case: (dotted path, Case attribute, name of the schema's field table).
LIST_TABLE_SPECS = (("costs.replacement", "replacements", "REPLACEMENT_FIELDS"),
                    ("plant.body.facet", "body_facets", "BODY_FACET_FIELDS"),
                    ("costs.moving_part", "moving_parts", "MOVING_PART_FIELDS"))


def list_fields() -> dict:
    """Fields of each list of tables the schema defines, ``{path: (Field, ...)}``."""
    from lcoe.case import schema

    out = {}
    for path, _, table in LIST_TABLE_SPECS:
        fields = getattr(schema, table, None)
        if fields:
            out[path] = tuple(fields)
    return out


#: Headings of the information blocks below the keys of the Inputs sheet; read-back stops at
#: the first of them (the blocks repeat what the hidden sheet holds).
INFO_HEADINGS = ("Energy uncertainty (factors with mean 1, drawn in the Monte Carlo; not used "
                 "by the CashFlow formulas)",
                 "Rank correlations (Iman-Conover) between uncertain inputs")


def tables_checksum(text: str) -> str:
    """``sha256=<hex>`` of the hidden sheet's JSON text (detects an edited hidden sheet)."""
    import hashlib

    return "sha256=" + hashlib.sha256(text.encode("utf-8")).hexdigest()
