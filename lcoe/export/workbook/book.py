"""``workbook.xlsx``: the auditable workbook of a run (openpyxl).

One workbook per run, sheets in this order: ``About`` (what the workbook is, how to read it,
cautions, provenance, headline numbers), ``Inputs`` (every case value, its unit, its
distribution when uncertain, a note; key inputs as defined names), ``Energy`` (monthly energy
and the loss chain), ``CashFlow`` (one column per year, every derived cell a live formula),
``Debt`` (when the run has a bankability block), ``Resource measurement`` (the lender's
value of narrowing the resource uncertainty), ``Distribution`` and ``Sensitivity`` (when the
run has an uncertainty study), and a hidden ``_case`` sheet holding the case's list tables so
that :func:`lcoe.case.readback.case_from_workbook` can rebuild the case after a user edits
the Inputs sheet.

The formulas re-express the model (:mod:`lcoe.money.cashflow`); next to each key formula the
engine's own value is written and labelled "engine value", so a reader without a spreadsheet
engine that recalculates can still compare. Only classic functions are used (SUM, NPV, IF,
MAX, MOD, AND, ABS, PERCENTILE, IRR, INDEX).

Text that comes from a case file or a user is always written as a text cell, never as a
formula (spreadsheet formula injection): see :func:`put_text`.
"""

from __future__ import annotations

import json
from pathlib import Path

from lcoe.case.readback import CASE_SHEET, INFO_HEADINGS, tables_checksum
from lcoe.case.schema import FIELD_BY_PATH
from lcoe.export.workbook.layout import (
    CAUTIONS,
    FMT_KWH,
    FMT_MONEY,
    FMT_PLAIN,
    FMT_PRICE,
    JSON_CHUNK,
    _jsonable,
    define_name,
    engine_columns,
    header,
    input_names,
    list_tables,
    put,
    put_formula,
    put_text,
    replacement_name,
    title,
    widths,
)
from lcoe.study.results import RunResult


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

    from lcoe.export.workbook import study_sheets, yearly

    wb = Workbook()
    about = wb.active
    about.title = "About"
    names = write_inputs_sheet(wb, result)
    yearly.write_energy_sheet(wb, result)
    cash_rows = yearly.write_cashflow_sheet(wb, result, names)
    from lcoe.export.workbook import debt_sheet

    if debt_sheet.has_debt(result):
        debt_sheet.write_debt_sheet(wb, result, cash_rows)
    if result.extras.get("resource_information") is not None:
        from lcoe.export.voi_outputs import write_resource_sheet

        write_resource_sheet(wb, result.extras["resource_information"].to_summary(),
                             result.case["case.currency"])
    if "uncertainty" in result.extras:
        study_sheets.write_distribution_sheet(wb, result)
    sens = result.extras.get("sensitivity")
    if sens is not None:
        study_sheets.write_sensitivity_sheet(wb, result)
    write_about_sheet(about, wb, result)
    write_case_sheet(wb, result)
    for ws in wb.worksheets:
        if ws.sheet_state == "visible":
            print_setup(ws)
    from lcoe.export.workbook.stream import save_workbook

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
        header(ws, r, ("Check", "Verdict", "Finding", "Key"))
        for f in findings:
            r += 1
            for j, key in enumerate(("label", "verdict", "message", "check"), start=1):
                put_text(ws, r, j, f.get(key) or f.get("check", ""))
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


def write_inputs_sheet(wb, result: RunResult) -> dict:
    """Every input with value, unit, distribution, parameters and a note; defined names.

    Returns
    -------
    dict of str to str
        Defined name of each numeric input path (and replacement fields).
    """
    from openpyxl.styles import Font

    from lcoe.case.schema import GEOMETRY_PATHS
    from lcoe.plant.energy import ENERGY_PARAMS

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
