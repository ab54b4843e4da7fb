"""``workbook.xlsx``: inputs, energy, cash flow and summary of a run (openpyxl).

Text that comes from a case file or a user is always written as a text cell, never as a
formula (spreadsheet formula injection): see :func:`put_text`.
"""

from __future__ import annotations

from pathlib import Path

from ..cashflow import COST_LINES, LCOE_FORMULA
from ..energy import LOSS_CHAIN
from ..results import RunResult
from ..schema import FIELD_BY_PATH

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


def put_text(ws, row: int, col: int, text) -> None:
    """Write ``text`` as a literal text cell, even when it starts with ``= + - @`` or a tab."""
    cell = ws.cell(row=row, column=col)
    cell.value = "" if text is None else str(text)
    cell.data_type = "s"


def put(ws, row: int, col: int, value, number_format: str | None = None) -> None:
    """Write a number/bool as a value, anything else as safe text."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        cell = ws.cell(row=row, column=col, value=float(value))
        if number_format:
            cell.number_format = number_format
    elif isinstance(value, bool):
        ws.cell(row=row, column=col, value=value)
    else:
        put_text(ws, row, col, value)


def _header(ws, row: int, labels) -> None:
    from openpyxl.styles import Font

    for j, lab in enumerate(labels, start=1):
        put_text(ws, row, j, lab)
        ws.cell(row=row, column=j).font = Font(bold=True)


def write_workbook(result: RunResult, path: Path) -> None:
    """Write the values workbook of ``result`` to ``path``."""
    from openpyxl import Workbook

    case = result.case
    cur = case["case.currency"]
    e, c = result.base.energy, result.base.cashflow
    wb = Workbook()
    ws = wb.active
    ws.title = "Summary"
    _header(ws, 1, ("Quantity", "Value", "Unit"))
    rows = [
        ("Case", case.name, ""),
        ("First-year energy", e.annual_kwh[0], "kWh"),
        ("Specific yield", e.specific_yield_kwh_per_kw[0], "kWh/kW"),
        ("Performance ratio (IEC 61724-1)", e.performance_ratio[0], "-"),
        ("Clipping loss", e.clipping_loss_fraction[0], "fraction"),
        ("LCOE real", c.lcoe_real[0], f"{cur}/kWh"),
        ("LCOE nominal", c.lcoe_nominal[0], f"{cur}/kWh"),
        ("NPV of costs", c.pv_costs[0], cur),
        ("Formula", LCOE_FORMULA, ""),
    ]
    for i, (q, v, u) in enumerate(rows, start=2):
        put_text(ws, i, 1, q)
        put(ws, i, 2, v, "0.0000" if "LCOE" in q else "#,##0.000")
        put_text(ws, i, 3, u)

    wi = wb.create_sheet("Inputs")
    _header(wi, 1, ("Key", "Value", "Unit", "Meaning"))
    r = 2
    for path_, value in case.values.items():
        f = FIELD_BY_PATH[path_]
        put_text(wi, r, 1, path_)
        put(wi, r, 2, value)
        put_text(wi, r, 3, f.unit)
        put_text(wi, r, 4, f.doc)
        r += 1
    for i, rep in enumerate(case.replacements):
        for key, unit, val in (("item", "-", rep.item), ("every_years", "years", rep.every_years),
                               ("cost_per_kw", f"{cur}/kW", rep.cost_per_kw)):
            put_text(wi, r, 1, f"costs.replacement[{i}].{key}")
            put(wi, r, 2, val)
            put_text(wi, r, 3, unit)
            r += 1

    we = wb.create_sheet("Energy")
    _header(we, 1, ("Month", "Delivered energy [kWh]"))
    for m in range(12):
        put_text(we, m + 2, 1, MONTHS[m])
        put(we, m + 2, 2, e.monthly_kwh[0, m], "#,##0")
    _header(we, 16, ("Loss chain stage", "Energy [kWh/year]"))
    for i, (key, label) in enumerate(LOSS_CHAIN, start=17):
        put_text(we, i, 1, label)
        put(we, i, 2, e.loss_chain_kwh[key][0], "#,##0")

    wc = wb.create_sheet("CashFlow")
    _header(wc, 1, ["Line"] + [f"Year {t}" for t in c.years])
    for i, line in enumerate(COST_LINES, start=2):
        put_text(wc, i, 1, f"{line} [{cur}]")
        for t in c.years:
            put(wc, i, t + 2, c.lines[line][0, t], "#,##0")
    put_text(wc, 2 + len(COST_LINES), 1, "Energy [kWh]")
    for t in c.years:
        put(wc, 2 + len(COST_LINES), t + 2, c.energy_kwh[0, t], "#,##0")
    for sheet in wb.worksheets:
        sheet.column_dimensions["A"].width = 44
        sheet.freeze_panes = "B2"
    wb.save(path)
