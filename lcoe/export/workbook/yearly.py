"""Energy and CashFlow sheets of the workbook: the model re-expressed as live formulas.

The CashFlow sheet has one column per year (C = year 0 = financial close, D = year 1, ...).
Every derived cell is a formula of the Inputs sheet (through defined names such as
``capex_per_kw``) and of the first-year energy on the Energy sheet
(``first_year_energy_kwh``, a value from the hourly model). The formulas mirror
:func:`lcoe.money.cashflow.energy_by_year` and :func:`lcoe.money.cashflow.build_cashflow`::

    E_t          = E_1 * max(0, 1 - d (t - 1))                        t = 1..N
    escalation_t = (1 + inflation)^t
    capex_0      = capex_per_kw * kW
    fixed O&M_t  = fixed_om_per_kw_year * kW * escalation_t            t = 1..N
    variable O&M = variable_om_per_kwh * E_t * escalation_t
    insurance_t  = insurance_fraction_per_year * capex_per_kw * kW * escalation_t   t = 1..N
    land lease_t = land_lease_per_year * escalation_t                    t = 1..N
    replacement  = cost_per_kw * kW * escalation_t   at t = k * every_years, 0 < t < N
    decommissioning, -salvage: per kW * kW * escalation_N in year N
    LCOE         = (C_0 + NPV(r_nom, C_1..C_N)) / (E_0 + NPV(r, E_1..E_N)),
                   r = r_real = (1 + r_nom)/(1 + inflation) - 1 (real) or r_nom (nominal)

Cost lines the sheet does not know how to re-express (added by later stages) are written as
the engine's values and said so in their label, so the totals still agree.
"""

from __future__ import annotations

from lcoe.export.workbook.layout import (
    FMT_FACTOR,
    FMT_KWH,
    FMT_MONEY,
    FMT_PRICE,
    FMT_RATE,
    MONTHS,
    define_name,
    engine_columns,
    header,
    put,
    put_formula,
    put_text,
    replacement_name,
    title,
    widths,
)
from lcoe.plant.energy import LOSS_CHAIN
from lcoe.study.results import RunResult

#: First column of year 0 on the CashFlow sheet (C).
YEAR0_COL = 3

#: Formula templates of known cost lines; ``{t} {op} {last} {esc} {E}`` are replaced by cell
#: references of the same column, the names are defined names of the Inputs sheet.
LINE_FORMULAS = {
    "capex": ("Capex", "=IF({t}=0,capex_per_kw*dc_capacity_kw,0)",
              ("capex_per_kw", "dc_capacity_kw")),
    "fixed_om": ("Fixed O&M", "=fixed_om_per_kw_year*dc_capacity_kw*{esc}*{op}",
                 ("fixed_om_per_kw_year", "dc_capacity_kw")),
    "variable_om": ("Variable O&M", "=variable_om_per_kwh*{E}*{esc}",
                    ("variable_om_per_kwh",)),
    "insurance": ("Insurance",
                  "=insurance_fraction_per_year*capex_per_kw*dc_capacity_kw*{esc}*{op}",
                  ("insurance_fraction_per_year", "capex_per_kw", "dc_capacity_kw")),
    "land_lease": ("Land lease", "=land_lease_per_year*{esc}*{op}", ("land_lease_per_year",)),
    "decommissioning": ("Decommissioning", "=decommissioning_per_kw*dc_capacity_kw*{esc}*{last}",
                        ("decommissioning_per_kw", "dc_capacity_kw")),
    "salvage": ("Salvage (negative cost)", "=-salvage_per_kw*dc_capacity_kw*{esc}*{last}",
                ("salvage_per_kw", "dc_capacity_kw")),
}


def product_of(rows: dict, a: str, b: str) -> str:
    """Template of the product of two yearly rows in the same column."""
    return "={L}$" + str(rows[a]) + "*{L}$" + str(rows[b])


def col_letter(col: int) -> str:
    from openpyxl.utils import get_column_letter

    return get_column_letter(col)


def year_col(t: int) -> int:
    """Column number of year ``t`` on the CashFlow sheet."""
    return YEAR0_COL + t


# --------------------------------------------------------------------------------------------
# Energy
# --------------------------------------------------------------------------------------------
def write_energy_sheet(wb, result: RunResult) -> None:
    """Monthly energy, the loss chain and the energy figures derived from them.

    The first-year energy (defined name ``first_year_energy_kwh``) is the engine's value that
    the CashFlow formulas start from.
    """
    from openpyxl.chart import BarChart, Reference

    e = result.base.energy
    ws = wb.create_sheet("Energy")
    header(ws, 1, ("Month", "Delivered energy [kWh]", "Share of the year [-]"))
    for m in range(12):
        put_text(ws, m + 2, 1, MONTHS[m])
        put(ws, m + 2, 2, e.monthly_kwh[0, m], FMT_KWH)
        put_formula(ws, m + 2, 3, f"=B{m + 2}/$B$14", "0.0%")
    put_text(ws, 14, 1, "Year (sum of months)")
    put_formula(ws, 14, 2, "=SUM(B2:B13)", FMT_KWH)

    r0 = 16
    header(ws, r0, ("Loss chain stage", "Energy [kWh/year]", "Loss from previous stage "
                    "[kWh/year]", "Loss [fraction of previous stage]"))
    for i, (key, label) in enumerate(LOSS_CHAIN):
        r = r0 + 1 + i
        put_text(ws, r, 1, label)
        put(ws, r, 2, e.loss_chain_kwh[key][0], FMT_KWH)
        if i:
            put_formula(ws, r, 3, f"=B{r - 1}-B{r}", FMT_KWH)
            put_formula(ws, r, 4, f"=IF(B{r - 1}=0,0,C{r}/B{r - 1})", "0.00%")
    by_key = {key: r0 + 1 + i for i, (key, _) in enumerate(LOSS_CHAIN)}
    r_delivered = by_key["delivered_kwh"]  # before moving-part outages (the cash flow's E1)

    r = r0 + len(LOSS_CHAIN) + 2
    header(ws, r, ("Energy figure", "Workbook", "Engine value", "Relative difference", "Unit"))
    r += 1
    put_text(ws, r, 1, "First-year delivered energy E1 (used by CashFlow)")
    put_formula(ws, r, 2, f"=B{r_delivered}", FMT_KWH)
    engine_columns(ws, r, 2, e.annual_kwh[0], FMT_KWH)
    put_text(ws, r, 5, "kWh")
    define_name(wb, "first_year_energy_kwh", ws, r, 2)
    r += 1
    put_text(ws, r, 1, "Plane-of-array irradiation H_POA")
    put(ws, r, 2, e.poa_kwh_m2[0], "#,##0.0")
    put_text(ws, r, 5, "kWh/m2/year")
    define_name(wb, "poa_irradiation_kwh_m2", ws, r, 2)
    r_poa = r
    r += 1
    rows = (
        ("Specific yield Yf = E1 / P_stc", "=first_year_energy_kwh/dc_capacity_kw",
         e.specific_yield_kwh_per_kw[0], "#,##0.0", "kWh/kW"),
        ("Performance ratio PR = Yf / (H_POA / 1 kW/m2) (IEC 61724-1)",
         f"=B{r}/B{r_poa}", e.performance_ratio[0], "0.0000", "-"),
        ("Capacity factor (DC) = E1 / (P_stc x 8760 h)",
         "=first_year_energy_kwh/(dc_capacity_kw*8760)", e.capacity_factor_dc[0], "0.0000",
         "-"),
        ("Clipping loss (fraction of inverter output)",
         f"=IF(B{by_key['after_inverter_kwh']}=0,0,(B{by_key['after_inverter_kwh']}-"
         f"B{by_key['after_clipping_kwh']})/B{by_key['after_inverter_kwh']})",
         e.clipping_loss_fraction[0], "0.0000", "-"),
    )
    for label, formula, value, fmt, unit in rows:
        put_text(ws, r, 1, label)
        put_formula(ws, r, 2, formula, fmt)
        engine_columns(ws, r, 2, value, fmt)
        put_text(ws, r, 5, unit)
        r += 1

    chart = BarChart()
    chart.type = "col"
    chart.title = "Delivered energy by month"
    chart.y_axis.title = "kWh"
    chart.x_axis.title = "Month"
    chart.add_data(Reference(ws, min_col=2, min_row=1, max_row=13), titles_from_data=True)
    chart.set_categories(Reference(ws, min_col=1, min_row=2, max_row=13))
    chart.legend = None
    chart.height, chart.width = 8, 16
    ws.add_chart(chart, "G2")
    widths(ws, {"A": 58, "B": 20, "C": 22, "D": 22, "E": 14})
    ws.freeze_panes = "B2"


# --------------------------------------------------------------------------------------------
# CashFlow
# --------------------------------------------------------------------------------------------
def write_cashflow_sheet(wb, result: RunResult, names: dict) -> dict:
    """One column per year; every derived cell a formula; LCOE and NPV with engine values.

    Parameters
    ----------
    wb : openpyxl.Workbook
    result : RunResult
    names : dict
        Defined names of the inputs (from :func:`lcoe.export.workbook.book.write_inputs_sheet`).

    Returns
    -------
    dict of str to int
        Row of each yearly line on the sheet (``"energy"``, ``"total_cost"``, ...), for sheets
        that refer to it.
    """
    from openpyxl.styles import Font

    case = result.case
    cur = case["case.currency"]
    c = result.base.cashflow
    n = int(c.years[-1])
    defined = set(names.values())
    ws = wb.create_sheet("CashFlow")
    last_col = col_letter(year_col(n))

    rows: dict[str, int] = {}
    r = 1
    put_text(ws, r, 1, "Year t")
    put_text(ws, r, 2, "unit")
    rows["t"] = r
    for t in range(n + 1):
        if t == 0:
            put(ws, r, year_col(0), 0)
        else:
            put_formula(ws, r, year_col(t), f"={col_letter(year_col(t - 1))}{r}+1")
    for cell in ws[r]:
        cell.font = Font(bold=True)

    def yearly(key, label, unit, template, fmt, bold=False):
        nonlocal r
        r += 1
        rows[key] = r
        put_text(ws, r, 1, label)
        put_text(ws, r, 2, unit)
        for t in range(n + 1):
            L = col_letter(year_col(t))
            refs = {k: f"{L}${rows[k]}" for k in ("t", "op", "last", "esc", "E")
                    if k in rows}
            refs["L"] = L
            put_formula(ws, r, year_col(t), template.format(**refs), fmt)
        if bold:
            ws.cell(row=r, column=1).font = Font(bold=True)

    yearly("op", "Operating year (1 = yes)", "-",
           "=IF(AND({t}>=1,{t}<=lifetime_years),1,0)", "0")
    yearly("last", "Last operating year (1 = yes)", "-", "=IF({t}=lifetime_years,1,0)", "0")
    yearly("esc", "Escalation factor (1 + inflation)^t", "-", "=(1+inflation)^{t}", FMT_FACTOR)
    yearly("deg", "Degradation factor max(0, 1 - d (t - 1))", "-",
           "={op}*MAX(0,1-degradation_per_year*({t}-1))", FMT_FACTOR)
    deg_row = rows["deg"]
    if c.outage_loss_fraction is None:
        yearly("E", "Delivered energy E_t = E1 x degradation factor", "kWh",
               "=first_year_energy_kwh*{L}$" + str(deg_row), FMT_KWH, bold=True)
    else:
        r += 1
        rows["outage"] = r
        put_text(ws, r, 1, "Moving-part outage loss (engine values, renewal theory)")
        put_text(ws, r, 2, "-")
        for t in range(n + 1):
            put(ws, r, year_col(t), c.outage_loss_fraction[0, t], FMT_FACTOR)
        yearly("E", "Delivered energy E_t = E1 x degradation factor x (1 - outage loss)", "kWh",
               "=first_year_energy_kwh*{L}$" + str(deg_row) + "*(1-{L}$" + str(r) + ")",
               FMT_KWH, bold=True)
    rows["energy"] = rows["E"]

    cost_rows = []
    for key in c.lines:
        if key == "replacements":
            sub = []
            for i, rep in enumerate(case.replacements):
                every, cost = replacement_name(i, "every_years"), replacement_name(i, "cost_per_kw")
                yearly(f"replacement_{i}", f"Replacement {i + 1}: {rep.item}", cur,
                       f"=IF(AND({{t}}>0,{{t}}<lifetime_years,MOD({{t}},{every})=0),"
                       f"{cost}*dc_capacity_kw*{{esc}},0)", FMT_MONEY)
                sub.append(r)
            if sub:
                yearly("replacements", "Replacements (sum of the above)", cur,
                       "=" + "+".join(f"{{L}}{s}" for s in sub), FMT_MONEY)
            else:
                yearly("replacements", "Replacements (none scheduled)", cur, "=0", FMT_MONEY)
            cost_rows.append(rows["replacements"])
            continue
        spec = LINE_FORMULAS.get(key)
        if spec is not None and all(nm in defined for nm in spec[2]):
            yearly(key, spec[0], cur, spec[1], FMT_MONEY)
        else:
            r += 1
            rows[key] = r
            put_text(ws, r, 1, f"{key.replace('_', ' ')} (engine values, not re-expressed)")
            put_text(ws, r, 2, cur)
            for t in range(n + 1):
                put(ws, r, year_col(t), c.lines[key][0, t], FMT_MONEY)
        cost_rows.append(rows[key])
    yearly("total_cost", "Total cost", cur, "=" + "+".join(f"{{L}}{s}" for s in cost_rows),
           FMT_MONEY, bold=True)
    yearly("df_nom", "Discount factor at the nominal rate 1/(1+r)^t", "-",
           "=1/(1+discount_rate)^{t}", FMT_FACTOR)
    yearly("df_real", "Discount factor at the real rate 1/(1+r_real)^t", "-",
           "=1/(1+real_discount_rate)^{t}", FMT_FACTOR)
    yearly("pv_cost", "Discounted cost (nominal rate)", cur,
           product_of(rows, "total_cost","df_nom"), FMT_MONEY)
    yearly("pv_e_real", "Discounted energy (real rate)", "kWh",
           product_of(rows, "E","df_real"), FMT_KWH)
    yearly("pv_e_nom", "Discounted energy (nominal rate)", "kWh",
           product_of(rows, "E","df_nom"), FMT_KWH)

    # results block
    r += 2
    title(ws, r, "Results")
    r += 1
    header(ws, r, ("Quantity", "unit", "Workbook formula", "Engine value",
                   "Relative difference"))

    def span(key):
        return f"D{rows[key]}:{last_col}{rows[key]}", f"C{rows[key]}"

    cost_span, cost0 = span("total_cost")
    e_span, e0 = span("E")
    results = (
        ("real_discount_rate", "Real discount rate (Fisher) (1 + r)/(1 + inflation) - 1",
         "1/year", "=(1+discount_rate)/(1+inflation)-1", c.real_rate[0], FMT_RATE),
        ("npv_costs", "NPV of costs = C0 + NPV(r, C1..CN)", cur,
         f"={cost0}+NPV(discount_rate,{cost_span})", c.pv_costs[0], FMT_MONEY),
        ("pv_energy_real_kwh", "Discounted energy, real rate = E0 + NPV(r_real, E1..EN)",
         "kWh", f"={e0}+NPV(real_discount_rate,{e_span})", c.pv_energy_real_kwh[0], FMT_KWH),
        ("pv_energy_nominal_kwh", "Discounted energy, nominal rate", "kWh",
         f"={e0}+NPV(discount_rate,{e_span})", c.pv_energy_nominal_kwh[0], FMT_KWH),
        ("lcoe_real", "LCOE real = NPV of costs / discounted energy (real rate)",
         f"{cur}/kWh", "=npv_costs/pv_energy_real_kwh", c.lcoe_real[0], FMT_PRICE),
        ("lcoe_nominal", "LCOE nominal = NPV of costs / discounted energy (nominal rate)",
         f"{cur}/kWh", "=npv_costs/pv_energy_nominal_kwh", c.lcoe_nominal[0], FMT_PRICE),
    )
    for name, label, unit, formula, value, fmt in results:
        r += 1
        rows[name] = r
        put_text(ws, r, 1, label)
        put_text(ws, r, 2, unit)
        put_formula(ws, r, 3, formula, fmt)
        define_name(wb, name, ws, r, 3)
        engine_columns(ws, r, 3, value, fmt)
        if name.startswith("lcoe"):
            ws.cell(row=r, column=3).font = Font(bold=True)
    r += 1
    put_text(ws, r, 1, "Check: sum of discounted costs")
    put_text(ws, r, 2, cur)
    put_formula(ws, r, 3, f"=SUM(C{rows['pv_cost']}:{last_col}{rows['pv_cost']})", FMT_MONEY)
    engine_columns(ws, r, 3, c.pv_costs[0], FMT_MONEY)

    widths(ws, {"A": 58, "B": 14})
    for t in range(n + 1):
        ws.column_dimensions[col_letter(year_col(t))].width = 14
    ws.freeze_panes = "C2"
    return rows
