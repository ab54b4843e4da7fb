"""``workbook.xlsx``: the auditable workbook of a run (openpyxl).

One workbook per run, sheets in this order: ``About`` (what the workbook is, how to read it,
cautions, provenance, headline numbers), ``Inputs`` (every case value, its unit, its
distribution when uncertain, a note; key inputs as defined names), ``Energy`` (monthly energy
and the loss chain), ``CashFlow`` (one column per year, every derived cell a live formula),
``Debt`` (when the run has a bankability block), ``Resource measurement`` (the lender's
value of narrowing the resource uncertainty), ``Distribution`` and ``Sensitivity`` (when the
run has an uncertainty study), and a hidden ``_case`` sheet holding the case's list tables so
that :func:`lcoe.export.readback.case_from_workbook` can rebuild the case after a user edits
the Inputs sheet.

The formulas re-express the model (:mod:`lcoe.cashflow`); next to each key formula the
engine's own value is written and labelled "engine value", so a reader without a spreadsheet
engine that recalculates can still compare. Only classic functions are used (SUM, NPV, IF,
MAX, MOD, AND, ABS, PERCENTILE, IRR, INDEX).

Text that comes from a case file or a user is always written as a text cell, never as a
formula (spreadsheet formula injection): see :func:`put_text`.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

from ..results import RunResult
from ..schema import FIELD_BY_PATH
from .cells import FORMULA_START

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")

#: Title of the hidden sheet holding the case's list tables as JSON text.
CASE_SHEET = "_case"
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


#: Lists of tables of a case: (dotted path, Case attribute, name of the schema's field table).
LIST_TABLE_SPECS = (("costs.replacement", "replacements", "REPLACEMENT_FIELDS"),
                    ("plant.body.facet", "body_facets", "BODY_FACET_FIELDS"),
                    ("costs.moving_part", "moving_parts", "MOVING_PART_FIELDS"))


def list_fields() -> dict:
    """Fields of each list of tables the schema defines, ``{path: (Field, ...)}``."""
    from .. import schema

    out = {}
    for path, _, table in LIST_TABLE_SPECS:
        fields = getattr(schema, table, None)
        if fields:
            out[path] = tuple(fields)
    return out


def list_tables(case) -> list:
    """``(path, entries, fields)`` of every non-empty list of tables of ``case``."""
    fields = list_fields()
    return [(path, getattr(case, attr, ()), fields[path]) for path, attr, _ in LIST_TABLE_SPECS
            if path in fields and getattr(case, attr, ())]


def replacement_name(i: int, key: str) -> str:
    """Defined name of replacement ``i`` (0-based) field ``key``."""
    return f"replacement_{i + 1}_{key}"


# --------------------------------------------------------------------------------------------
# the workbook
# --------------------------------------------------------------------------------------------
def write_workbook(result: RunResult, path: Path) -> None:
    """Write the auditable workbook of ``result`` to ``path``.

    Parameters
    ----------
    result : RunResult
        The run; ``extras`` blocks ``uncertainty``, ``sensitivity`` and ``bankability`` add
        their sheets when present.
    path : pathlib.Path
        Target ``.xlsx`` file.
    """
    from openpyxl import Workbook

    from . import workbook_sheets, workbook_stats

    wb = Workbook()
    about = wb.active
    about.title = "About"
    names = write_inputs_sheet(wb, result)
    workbook_sheets.write_energy_sheet(wb, result)
    cash_rows = workbook_sheets.write_cashflow_sheet(wb, result, names)
    from . import workbook_debt

    if workbook_debt.has_debt(result):
        workbook_debt.write_debt_sheet(wb, result, cash_rows)
    if result.extras.get("resource_information") is not None:
        from .voi_outputs import write_resource_sheet

        write_resource_sheet(wb, result.extras["resource_information"].to_summary(),
                             result.case["case.currency"])
    if "uncertainty" in result.extras:
        workbook_stats.write_distribution_sheet(wb, result)
    sens = result.extras.get("sensitivity")
    if sens is not None:
        workbook_stats.write_sensitivity_sheet(wb, result)
    write_about_sheet(about, wb, result)
    write_case_sheet(wb, result)
    for ws in wb.worksheets:
        if ws.sheet_state == "visible":
            print_setup(ws)
    from .workbook_stream import save_workbook

    save_workbook(wb, path)  # with the listed trials of the Distribution sheet


def print_setup(ws) -> None:
    """Landscape, one page wide, repeated title rows and columns, a print area.

    The title row repeated on every page is the first row whose column A reads ``Year`` or
    ``Year t`` (yearly sheets), else the first header row; sheets wider than eight columns
    also repeat columns A:B (the labels and units).
    """
    from openpyxl.worksheet.properties import PageSetupProperties

    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.sheet_properties.pageSetUpPr = PageSetupProperties(fitToPage=True)
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.print_options.gridLines = False
    ws.page_margins.left = ws.page_margins.right = 0.4
    ws.page_margins.top = ws.page_margins.bottom = 0.5
    if ws.max_row < 1 or ws.max_column < 1:
        return
    ws.print_area = ws.dimensions
    title_row = None
    for row in range(1, min(ws.max_row, 200) + 1):
        value = ws._cells.get((row, 1))  # looked up without creating empty cells
        value = None if value is None else value.value
        if isinstance(value, str) and value.strip() in ("Year", "Year t"):
            title_row = row
            break
    if title_row is not None:
        ws.print_title_rows = f"{title_row}:{title_row}"
    if ws.max_column > 8:
        ws.print_title_cols = "A:B"


def write_about_sheet(ws, wb, result: RunResult) -> None:
    """The cover: what the workbook is, how to read it, cautions, headline numbers, provenance.

    Written last so that it can list the sheets present.
    """
    from openpyxl.styles import Alignment

    case = result.case
    cur = case["case.currency"]
    prov = result.provenance or {}
    r = 1
    title(ws, r, "Cost of solar electricity - auditable workbook written by lcoe", 14)
    r += 1
    put_text(ws, r, 1, "Case")
    put_text(ws, r, 2, case.name)
    r += 1
    put_text(ws, r, 1, "Description")
    put_text(ws, r, 2, case["case.description"] if "case.description" in case.values else "")
    r += 2
    title(ws, r, "What this workbook is")
    r = _lines(ws, r + 1, (
        "The inputs, energy and lifetime cash flow of one run of lcoe, with the levelised cost "
        "of energy (LCOE) re-expressed as live spreadsheet formulas.",
        "The hourly energy model (sun position, plane-of-array irradiance, cell temperature, "
        "DC and AC power) ran in Python; its first-year energy and loss chain are values on the "
        "Energy sheet. Everything on CashFlow is a formula of the Inputs and Energy sheets.",
        "Next to each key formula stands the engine's own value ('engine value') and the "
        "relative difference, so the workbook can be checked without trusting either side.",
    )) + 1
    title(ws, r, "How to read it")
    r += 1
    for sheet in wb.worksheets:
        if sheet.title in SHEET_GUIDE:
            put_text(ws, r, 1, sheet.title)
            put_text(ws, r, 2, SHEET_GUIDE[sheet.title])
            r += 1
    r = _lines(ws, r, HOW_TO) + 1
    title(ws, r, "Cautions")
    r = _lines(ws, r + 1, CAUTIONS) + 1
    title(ws, r, "Headline numbers")
    r += 1
    header(ws, r, ("Quantity", "Unit", "Workbook formula", "Engine value", "Relative difference"))
    r += 1
    c = result.base.cashflow
    for label, unit, name, value, fmt in (
        ("LCOE real", f"{cur}/kWh", "lcoe_real", c.lcoe_real[0], FMT_PRICE),
        ("LCOE nominal", f"{cur}/kWh", "lcoe_nominal", c.lcoe_nominal[0], FMT_PRICE),
        ("NPV of costs", cur, "npv_costs", c.pv_costs[0], FMT_MONEY),
        ("First-year energy", "kWh", "first_year_energy_kwh", result.base.energy.annual_kwh[0],
         FMT_KWH),
    ):
        put_text(ws, r, 1, label)
        put_text(ws, r, 2, unit)
        put_formula(ws, r, 3, f"={name}", fmt)
        engine_columns(ws, r, 3, value, fmt)
        r += 1
    findings = result.extras.get("audit") or []
    if findings:
        r += 1
        title(ws, r, "Audit of physical limits")
        r += 1
        header(ws, r, ("Check", "Verdict", "Finding"))
        for f in findings:
            r += 1
            for j, key in enumerate(("check", "verdict", "message"), start=1):
                put_text(ws, r, j, f.get(key, ""))
        r += 1
    r += 1
    title(ws, r, "Provenance")
    r += 1
    rows = [("Written by", "lcoe"), ("Case file", case.source),
            ("Case file SHA-256", case.sha256), ("Seed", prov.get("seed")),
            ("Date (UTC)", prov.get("date_utc")), ("Command line", prov.get("command"))]
    rows += [(f"Version of {k}", v) for k, v in (prov.get("versions") or {}).items()]
    for label, value in rows:
        put_text(ws, r, 1, label)
        put(ws, r, 2, "" if value is None else value)
        r += 1
    widths(ws, {"A": 34, "B": 60, "C": 18, "D": 18, "E": 14})
    for row in ws.iter_rows(min_row=1, max_row=r, max_col=2):
        for cell in row:
            cell.alignment = Alignment(wrap_text=False, vertical="top")


def _lines(ws, row: int, lines) -> int:
    """Write each line as text in column A from ``row`` on; return the next free row."""
    for line in lines:
        put_text(ws, row, 1, line)
        row += 1
    return row


SHEET_GUIDE = {
    "About": "this page",
    "Inputs": "every input of the case: value, unit, distribution when uncertain, note; key "
              "inputs are defined names used by the formulas",
    "Energy": "monthly energy and the loss chain from plane-of-array irradiation to delivered "
              "AC energy (values from the hourly model)",
    "CashFlow": "one column per year; every derived cell is a formula; LCOE, NPV and their "
                "engine values at the bottom",
    "Debt": "revenue, tax, CFADS, loan schedule, DSCR, LLCR, NPV and IRRs as formulas (debt "
            "amount and scheduled service sized by the engine)",
    "Resource measurement": "debt and equity value if the resource uncertainty were "
                            "narrowed before sizing (the lender's value of information)",
    "Distribution": "Monte Carlo percentiles, histogram of the LCOE and the listed trials",
    "Sensitivity": "Sobol indices with confidence intervals, tornado swings",
    "Comparison": "several runs side by side",
}

HOW_TO = (
    "Edit values in column B of Inputs: the cash flow and the LCOE recalculate. Inputs that "
    "feed the hourly energy model (site, plant physics) only change the energy after a re-run: "
    "save the workbook and run `lcoe run workbook.xlsx --out DIR`, which reads the Inputs "
    "sheet back as a case.",
    "Year 0 is financial close (capex paid); years 1..N are operating years. Money is nominal "
    "(year-t currency) unless named real. Rates are fractions per year.",
    "Spreadsheet NPV() discounts every flow it is given, so year-0 flows are added outside it: "
    "=CF0 + NPV(r, CF1:CFN).",
)


#: Headings of the information blocks below the keys of the Inputs sheet; read-back stops at
#: the first of them (the blocks repeat what the hidden sheet holds).
INFO_HEADINGS = ("Energy uncertainty (factors with mean 1, drawn in the Monte Carlo; not used "
                 "by the CashFlow formulas)",
                 "Rank correlations (Iman-Conover) between uncertain inputs")


def write_inputs_sheet(wb, result: RunResult) -> dict:
    """Every input with value, unit, distribution, parameters and a note; defined names.

    Returns
    -------
    dict of str to str
        Defined name of each numeric input path (and replacement fields).
    """
    from openpyxl.styles import Font

    from ..energy import ENERGY_PARAMS
    from ..schema import GEOMETRY_PATHS

    case = result.case
    cur = case["case.currency"]
    ws = wb.create_sheet("Inputs")
    header(ws, 1, ("Key", "Value", "Unit", "Distribution", "Parameters", "Defined name",
                   "Meaning", "Note"))
    dists = {}
    unc = result.extras.get("uncertainty")
    if unc is not None:
        dists = {d.name: d for d in unc.spec.dists}
    numeric = [p for p, v in case.values.items()
               if p in FIELD_BY_PATH and FIELD_BY_PATH[p].numeric]
    names = input_names(numeric)
    physics = set(ENERGY_PARAMS) | set(GEOMETRY_PATHS) | {"site.latitude_deg",
                                                          "site.longitude_deg",
                                                          "site.altitude_m",
                                                          "plant.module_efficiency"}
    r = 2
    for path_, value in case.values.items():
        f = FIELD_BY_PATH.get(path_)
        put_text(ws, r, 1, path_)
        put(ws, r, 2, value)
        put_text(ws, r, 3, (f.unit if f else "-").replace("currency", cur))
        note = ""
        if path_ in names:
            define_name(wb, names[path_], ws, r, 2)
            put_text(ws, r, 6, names[path_])
            if path_ in physics:
                note = "feeds the hourly energy model: takes effect after a re-run"
        _distribution_cells(ws, r, dists.get(path_))
        put_text(ws, r, 7, f.doc if f else "")
        put_text(ws, r, 8, note)
        r += 1
    for path, entries, fields in list_tables(case):
        for i, entry in enumerate(entries):
            for f in fields:
                key = f"{path}[{i}].{f.key}"
                put_text(ws, r, 1, key)
                put(ws, r, 2, getattr(entry, f.key, None))
                put_text(ws, r, 3, f.unit.replace("currency", cur))
                if path == "costs.replacement" and f.numeric:
                    name = replacement_name(i, f.key)
                    names[key] = name
                    define_name(wb, name, ws, r, 2)
                    put_text(ws, r, 6, name)
                _distribution_cells(ws, r, dists.get(key))
                put_text(ws, r, 7, f.doc)
                r += 1
    energy_dists = [d for d in dists.values() if d.name.startswith("energy.")]
    if unc is not None and (energy_dists or unc.spec.interannual_cov):
        r += 1
        put_text(ws, r, 1, INFO_HEADINGS[0])
        ws.cell(row=r, column=1).font = Font(bold=True)
        r += 1
        put_text(ws, r, 1, "uncertain.energy.interannual_cov")
        put(ws, r, 2, unc.spec.interannual_cov, FMT_PLAIN)
        put_text(ws, r, 3, "-")
        put_text(ws, r, 7, "Year-to-year weather variability, drawn for every year")
        r += 1
        for d in energy_dists:
            put_text(ws, r, 1, d.name)
            put(ws, r, 2, 1.0)
            put_text(ws, r, 3, "-")
            _distribution_cells(ws, r, d)
            put_text(ws, r, 7, "Persistent energy factor, drawn once per trial")
            r += 1
    if unc is not None and unc.spec.corr is not None:
        r += 1
        put_text(ws, r, 1, INFO_HEADINGS[1])
        ws.cell(row=r, column=1).font = Font(bold=True)
        r += 1
        for entry in case.correlation:
            a, b = entry["between"]
            put_text(ws, r, 1, a)
            put_text(ws, r, 2, b)
            put(ws, r, 3, entry["rank"], "0.00")
            r += 1
    widths(ws, {"A": 36, "B": 16, "C": 14, "D": 13, "E": 38, "F": 26, "G": 60, "H": 52})
    ws.freeze_panes = "B2"
    return names


def _distribution_cells(ws, row: int, dist) -> None:
    if dist is None:
        return
    put_text(ws, row, 4, dist.dist)
    parts = [f"{k}={v}" for k, v in dist.params.items()]
    if dist.low is not None:
        parts.append(f"low={dist.low:g}")
    if dist.high is not None:
        parts.append(f"high={dist.high:g}")
    if dist.group:
        parts.append(f"group={dist.group}")
    put_text(ws, row, 5, ", ".join(parts))


def write_case_sheet(wb, result: RunResult) -> None:
    """Hidden sheet with what the Inputs sheet cannot show as single cells, as JSON text.

    Holds the ``[uncertain]`` and ``[[correlation]]`` tables, ``[site.monthly]``, the
    monthly soiling profile, the debt-sizing constraints, the construction drawdown, the
    top-level tables present in the case file, the case's folder (for a relative weather
    path) and its source and SHA-256.
    """
    case = result.case
    monthly = getattr(case, "monthly", None)
    sizing = getattr(case, "debt_sizing", None)
    payload = {
        "format": "lcoe-case-tables",
        "version": 1,
        "source": case.source,
        "sha256": case.sha256,
        "base_dir": str(case.base_dir),
        "sections": sorted(getattr(case, "sections", ()) or ()),
        "uncertain": _jsonable(dict(case.uncertain)),
        "correlation": _jsonable([dict(c) for c in case.correlation]),
        "monthly": None if monthly is None else _jsonable(dict(monthly)),
        "soiling_monthly_loss": None if getattr(case, "soiling_monthly", None) is None
        else list(case.soiling_monthly),
        "debt_sizing": None if sizing is None else [list(s) for s in sizing],
        "keys": input_keys(case),
        "drawdown": list(getattr(case, "drawdown", ()) or ()),
    }
    text = json.dumps(payload, ensure_ascii=False, sort_keys=True)
    ws = wb.create_sheet(CASE_SHEET)
    ws.sheet_state = "hidden"
    put_text(ws, 1, 1, "Case tables of this workbook as JSON (read back by lcoe; do not edit)")
    put_text(ws, 1, 2, tables_checksum(text))
    for i in range(0, max(len(text), 1), JSON_CHUNK):
        put_text(ws, 2 + i // JSON_CHUNK, 1, text[i:i + JSON_CHUNK])


def input_keys(case) -> list[str]:
    """Keys of the Inputs sheet's rows (column A), in order; read-back requires every one."""
    keys = list(case.values)
    for path, entries, fields in list_tables(case):
        keys += [f"{path}[{i}].{f.key}" for i in range(len(entries)) for f in fields]
    return keys


def tables_checksum(text: str) -> str:
    """``sha256=<hex>`` of the hidden sheet's JSON text (detects an edited hidden sheet)."""
    import hashlib

    return "sha256=" + hashlib.sha256(text.encode("utf-8")).hexdigest()


def _jsonable(obj):
    """Tables from TOML (mappings, tuples, numbers) as plain JSON-ready values."""
    if isinstance(obj, dict) or hasattr(obj, "items"):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if hasattr(obj, "tolist"):
        return obj.tolist()
    return obj
