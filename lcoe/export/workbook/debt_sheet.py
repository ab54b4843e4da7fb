"""Debt sheet of the workbook: revenue, tax, CFADS, the loan waterfall, cover ratios, returns.

Re-expresses :func:`lcoe.money.metrics.project_finance` for the deterministic case of a run's
bankability block (:mod:`lcoe.study.bankability`) as formulas, one column per year like CashFlow
(C = year 0). Two things stay engine values, because the engine finds them by iteration (debt
sized on several DSCR constraints, interest and tax made consistent by a fixed point): the
loan amount and the scheduled debt service; the depreciation schedule is also the engine's.
Everything else is a formula::

    energy sold_t   = E_t (1 - curtailment)
    price_t         = tariff (1 + e)^(t-1) while t <= contract years, then merchant price
    opex_t          = total cost_t - capex_t                       (CashFlow sheet)
    EBITDA_t        = revenue_t - opex_t
    interest_t      = opening balance_t x loan rate
    taxable_t       = EBITDA_t - depreciation_t - interest_t
    tax before      = rate x max(taxable_t - loss brought forward, 0); losses carried forward
    tax_t           = tax before - min(credit available, tax before); credits carried forward
    CFADS_t         = revenue_t - opex_t - tax_t
    principal_t     = scheduled service_t - interest_t (last tenor year: the opening balance)
    DSCR_t          = CFADS_t / (interest_t + principal_t)
    equity_t        = CFADS_t - service_t;  equity_0 = CFADS_0 - (capex - debt + fee)

IRRs use the spreadsheet IRR(); NPV is ``flow_0 + NPV(r, flow_1..flow_N)``.
"""

from __future__ import annotations

import re

import numpy as np

from lcoe.export.workbook.layout import (
    FMT_FACTOR,
    FMT_MONEY,
    FMT_PRICE,
    FMT_RATE,
    define_name,
    engine_columns,
    header,
    put,
    put_formula,
    put_text,
    title,
    widths,
)
from lcoe.export.workbook.sizing import close_rows, sizing_rows
from lcoe.export.workbook.yearly import YEAR0_COL, col_letter, year_col
from lcoe.study.results import RunResult

_TOKEN = re.compile(r"\[([A-Za-z_]\w*)([<>]?)\]")


class YearRows:
    """Rows of yearly formulas on a sheet with year t in column ``YEAR0_COL + t``.

    A template refers to other rows by key: ``[key]`` is the same year's cell of that row,
    ``[key<]`` the previous year's (0 in year 0), ``[key>]`` the next year's (0 in the last
    year); ``{L}`` is this year's column letter. A template may also be a function of the
    year t returning such a text.
    """

    def __init__(self, ws, n_years: int, first_row: int = 1):
        self.ws, self.n, self.row, self.rows = ws, n_years, first_row - 1, {}
        self._pending = []

    def _sheet_ref(self, key: str, t: int) -> str:
        return f"{col_letter(year_col(t))}${self.rows[key]}"

    def formula(self, key, label, unit, template, fmt, year0=None):
        """Add a row of formulas; ``year0`` replaces the template in year 0.

        Templates may refer to rows added later; they are written by :meth:`finish`.
        """
        self.row += 1
        self.rows[key] = self.row
        put_text(self.ws, self.row, 1, label)
        put_text(self.ws, self.row, 2, unit)
        self._pending.append((self.row, template, year0, fmt))
        return self.row

    def finish(self) -> None:
        """Write the formulas of every row added with :meth:`formula`."""
        for row, template, year0, fmt in self._pending:
            for t in range(self.n + 1):
                tpl = year0 if (t == 0 and year0 is not None) else template
                tpl = tpl(t) if callable(tpl) else tpl

                def sub(m, t=t):
                    if m.group(2) == "<":
                        return "0" if t == 0 else self._sheet_ref(m.group(1), t - 1)
                    if m.group(2) == ">":
                        return "0" if t == self.n else self._sheet_ref(m.group(1), t + 1)
                    return self._sheet_ref(m.group(1), t)

                text = _TOKEN.sub(sub, tpl).replace("{L}", col_letter(year_col(t)))
                put_formula(self.ws, row, year_col(t), text, fmt)
        self._pending = []

    def values(self, key, label, unit, values, fmt):
        """Add a row of engine values (label says so)."""
        self.row += 1
        self.rows[key] = self.row
        put_text(self.ws, self.row, 1, label)
        put_text(self.ws, self.row, 2, unit)
        for t in range(self.n + 1):
            v = float(values[t])
            put(self.ws, self.row, year_col(t), v if np.isfinite(v) else None, fmt)
        return self.row

    def span(self, key: str, first: int = 1) -> str:
        """``D5:AG5``: the row of ``key`` from year ``first`` to the last year."""
        r = self.rows[key]
        return f"{col_letter(year_col(first))}{r}:{col_letter(year_col(self.n))}{r}"

    def cell(self, key: str, t: int) -> str:
        return f"{col_letter(year_col(t))}{self.rows[key]}"


def write_debt_sheet(wb, result: RunResult, cash_rows: dict) -> None:
    """The Debt sheet of a run with a bankability block.

    Parameters
    ----------
    wb : openpyxl.Workbook
    result : RunResult
        ``extras["bankability"]`` is a :class:`lcoe.study.bankability.BankabilityBlock`.
    cash_rows : dict
        Row numbers of the CashFlow sheet (from
        :func:`lcoe.export.workbook.yearly.write_cashflow_sheet`).
    """
    from openpyxl.chart import LineChart, Reference
    from openpyxl.styles import Font

    bank = result.extras["bankability"]
    f = bank.finance
    case = result.case
    cur = case["case.currency"]
    n = int(result.base.cashflow.years[-1])
    ws = wb.create_sheet("Debt")
    cf = "CashFlow!"

    r = 1
    title(ws, r, "Loan, tax and returns of the deterministic case (debt sized by the engine on "
                 + ", ".join(f"{c} at {m:.2f}x" for c, m in bank.constraints) + ")")
    r += 2
    sizing_top = r
    r += len(bank.constraints) + 8

    contract = "contract_years" if case.values.get("revenue.contract_years") else \
        "lifetime_years"
    y = YearRows(ws, n, first_row=r)
    y.formula("t", "Year t", "-", f"={cf}{{L}}${cash_rows['t']}", "0")
    for cell in ws[y.rows["t"]]:
        cell.font = Font(bold=True)
    y.formula("tenor", "Year inside the loan tenor (1 = yes)", "-",
              "=IF(AND([t]>=1,[t]<=tenor_years),1,0)", "0")
    y.formula("sold", "Energy sold = delivered x (1 - curtailment)", "kWh",
              f"={cf}{{L}}${cash_rows['E']}*(1-curtailment_fraction)", "#,##0")
    y.formula("price", "Price: contract, then merchant", f"{cur}/kWh",
              f"=IF([t]<=0,0,IF([t]<={contract},tariff_per_kwh*(1+tariff_escalation)^([t]-1),"
              f"merchant_price_per_kwh*(1+merchant_escalation)^([t]-1)))", FMT_PRICE)
    y.formula("revenue", "Revenue", cur, "=[sold]*[price]", FMT_MONEY)
    y.formula("opex", "Operating costs = total cost - capex (CashFlow)", cur,
              f"={cf}{{L}}${cash_rows['total_cost']}-{cf}{{L}}${cash_rows['capex']}", FMT_MONEY)
    y.formula("ebitda", "EBITDA = revenue - operating costs", cur, "=[revenue]-[opex]",
              FMT_MONEY)
    y.values("dep", f"Tax depreciation ({case['tax.depreciation']}; engine schedule)", cur,
             f.depreciation[0], FMT_MONEY)
    mra_rows(y, case, cash_rows, cf, cur)
    y.formula("loan_df", "Discount factor at the loan rate (tenor years)", "-",
              "=[tenor]/(1+interest_rate)^[t]", FMT_FACTOR)
    write_sizing = sizing_rows(wb, ws, y, bank, sizing_top, cf + f"$C${cash_rows['capex']}",
                               cur, int(case["debt.tenor_years"]))
    sweep = case["debt.sweep_share"] > 0
    if sweep:  # the contractual schedule the sweep prepays ahead of
        y.formula("c_open", "Contractual balance without sweep, opening", cur,
                  "=IF([tenor]=1,IF([t]=1,debt_amount,[c_close<]),0)", FMT_MONEY)
        y.formula("c_prin", "Contractual principal (last tenor year: the whole balance)", cur,
                  "=IF([t]=tenor_years,[c_open],IF([tenor]=1,[sched]-[c_open]*interest_rate,"
                  "0))", FMT_MONEY)
        y.formula("c_close", "Contractual balance without sweep, closing", cur,
                  "=[c_open]-[c_prin]", FMT_MONEY, year0="=debt_amount")
        principal = "=IF([t]=tenor_years,[opening],IF([tenor]=1,MIN([c_prin],[opening]),0))"
    else:
        principal = "=IF([t]=tenor_years,[opening],IF([tenor]=1,[sched]-[interest],0))"
    # loan balance first: interest is needed for tax
    y.formula("opening", "Opening loan balance", cur,
              "=IF([tenor]=1,IF([t]=1,debt_amount,[closing<]),0)", FMT_MONEY)
    y.formula("interest", "Interest = opening balance x loan rate", cur,
              "=[opening]*interest_rate", FMT_MONEY)
    y.formula("principal", "Principal repaid (last tenor year: the whole balance)", cur,
              principal, FMT_MONEY)
    y.formula("service", "Debt service paid = interest + principal", cur,
              "=[interest]+[principal]", FMT_MONEY)
    if sweep:
        y.formula("prepaid", "Cash sweep = MIN(sweep_share x MAX(CFADS - sweep_above_dscr x "
                             "service, 0), balance left)", cur,
                  "=IF([tenor]=1,MIN(sweep_share*MAX([cfads]-sweep_above_dscr*[service],0),"
                  "MAX([opening]-[principal],0)),0)", FMT_MONEY, year0="=0")
        closing = "=[opening]-[principal]-[prepaid]"
    else:
        closing = "=[opening]-[principal]"
    y.formula("closing", "Closing loan balance", cur, closing, FMT_MONEY, year0="=debt_amount")
    capex = f"{cf}$C${cash_rows['capex']}"
    tax_rows(y, "", "[interest]", cur, capex)
    y.formula("cfads_raw", "CFADS before reserve transfers = revenue - operating costs - tax",
              cur, "=[revenue]-[opex]-[tax]", FMT_MONEY)
    y.formula("cfads", "CFADS after maintenance-reserve transfers (lender's definition)", cur,
              "=[cfads_raw]-[mra_in]+[mra_out]", FMT_MONEY)
    y.formula("dscr", "DSCR = CFADS after MRA transfers / debt service (lender's definition; "
                      "before DSRA movements)", "-",
              "=IF([service]>0,[cfads]/[service],\"\")", "0.000")
    y.formula("dscr_raw", "DSCR before reserve transfers", "-",
              "=IF([service]>0,[cfads_raw]/[service],\"\")", "0.000")
    y.formula("llcr_t", "LLCR in year t = PV at the loan rate of CFADS t..maturity / opening "
                        "balance", "-",
              lambda t: f"=IF([opening]>0,SUMPRODUCT({y.span('cfads', t)},"
                        f"{y.span('loan_df', t)})*(1+interest_rate)^([t]-1)/[opening],\"\")",
              "0.000")
    y.formula("plcr_t", "PLCR in year t = PV at the loan rate of CFADS t..end of life / opening "
                        "balance", "-",
              lambda t: f"=IF([opening]>0,SUMPRODUCT({y.span('cfads', t)},"
                        f"{y.span('life_df', t)})*(1+interest_rate)^([t]-1)/[opening],\"\")",
              "0.000")
    y.formula("life_df", "Discount factor at the loan rate (whole life)", "-",
              "=IF([t]>=1,1/(1+interest_rate)^[t],0)", FMT_FACTOR)
    dsra_rows(y, case, cur, sweep)
    y.formula("equity", "Cash flow to equity = cash after debt service - DSRA movement", cur,
              "=[cash]-[dsra_move]", FMT_MONEY, year0="=[cfads]-equity_at_close")
    y.formula("pretax", "Project flow before tax = EBITDA - capex", cur,
              "=[ebitda]", FMT_MONEY, year0=f"=[ebitda]-{cf}C${cash_rows['capex']}")
    tax_rows(y, "u_", "0", cur, capex, label=" (unlevered: no interest deducted)")
    y.formula("posttax", "Project flow after unlevered tax", cur, "=[ebitda]-[u_tax]",
              FMT_MONEY, year0=f"=[ebitda]-[u_tax]-{cf}C${cash_rows['capex']}")
    y.values("dscr_engine", "DSCR, engine value (for the chart)", "-", f.dscr[0], "0.000")
    y.finish()
    write_sizing()

    # results
    r = y.row + 2
    title(ws, r, "Results")
    r += 1
    header(ws, r, ("Quantity", "unit", "Workbook formula", "Engine value",
                   "Relative difference"))
    irrs = bank.irr_results()
    c0 = "C"
    results = (
        ("min_dscr", "Minimum DSCR over the tenor", "-", f"=MIN({y.span('dscr')})",
         f.min_dscr[0], "0.0000"),
        ("avg_dscr", "Average DSCR over the tenor", "-", f"=AVERAGE({y.span('dscr')})",
         f.avg_dscr[0], "0.0000"),
        ("llcr", "LLCR = PV of CFADS over the tenor at the loan rate / debt", "-",
         f"=SUMPRODUCT({y.span('cfads')},{y.span('loan_df')})/debt_amount", f.llcr[0],
         "0.0000"),
        ("equity_npv", "NPV of the cash flow to equity at the discount rate", cur,
         f"={c0}{y.rows['equity']}+NPV(discount_rate,{y.span('equity')})", f.npv_equity[0],
         FMT_MONEY),
        ("equity_irr", "Equity IRR", "1/year", f"=IRR({y.span('equity', 0)})",
         irrs["equity"].value, FMT_RATE),
        ("project_irr_pre_tax", "Project IRR before tax", "1/year",
         f"=IRR({y.span('pretax', 0)})", irrs["project_pre_tax"].value, FMT_RATE),
        ("project_irr_post_tax", "Project IRR after unlevered tax", "1/year",
         f"=IRR({y.span('posttax', 0)})", irrs["project_post_tax"].value, FMT_RATE),
    )
    roots = {"equity_irr": irrs["equity"], "project_irr_pre_tax": irrs["project_pre_tax"],
             "project_irr_post_tax": irrs["project_post_tax"]}
    for name, label, unit, formula, value, fmt in results:
        r += 1
        put_text(ws, r, 1, label)
        put_text(ws, r, 2, unit)
        put_formula(ws, r, 3, formula, fmt)
        define_name(wb, name, ws, r, 3)
        if np.isfinite(value):
            engine_columns(ws, r, 3, value, fmt)
        elif name in roots:  # no unique root: list what the engine found
            put_text(ws, r, 4, roots_text(roots[name]))
        else:  # a cover ratio without debt service
            put_text(ws, r, 4, "engine: none (no debt service)")
    r += 1
    put_text(ws, r, 1, "IRR(): the spreadsheet finds one root near its 10 % guess; the engine "
                       "finds every root and reports the investment root (the NPV turns from "
                       "positive to negative as the rate rises), e.g. when a last-year "
                       "decommissioning cost adds a second sign change.")

    r = close_rows(wb, ws, r + 2, bank, case, capex, f"$C${y.rows['dsra']}", cur)
    write_cashflow_returns(wb, y, cash_rows, irrs["project_pre_tax"], cur)

    tenor = int(case["debt.tenor_years"])
    chart = LineChart()
    chart.title = "DSCR by year (engine values)"
    chart.y_axis.title = "DSCR [-]"
    chart.x_axis.title = "Year"
    dr = y.rows["dscr_engine"]
    chart.add_data(Reference(ws, min_col=year_col(1), max_col=year_col(tenor), min_row=dr,
                             max_row=dr), from_rows=True, titles_from_data=False)
    chart.set_categories(Reference(ws, min_col=year_col(1), max_col=year_col(tenor),
                                   min_row=y.rows["t"], max_row=y.rows["t"]))
    for series in chart.series:  # straight segments: a smoothed line invents values
        series.smooth = False
        series.marker.symbol = "circle"
    chart.legend = None
    chart.height, chart.width = 8, 18
    ws.add_chart(chart, f"A{r + 2}")
    widths(ws, {"A": 58, "B": 12})
    for t in range(n + 1):
        ws.column_dimensions[col_letter(year_col(t))].width = 14
    ws.freeze_panes = ws.cell(row=y.rows["t"] + 1, column=YEAR0_COL).coordinate


def mra_rows(y: YearRows, case, cash_rows: dict, cf: str, cur: str) -> None:
    """Maintenance reserve: renewals, accrual, contribution, release and balance.

    A renewal R_T is accrued over ``m_T = MIN(mra_years_ahead, T - 1)`` years before T
    (:func:`lcoe.money.reserves.maintenance_reserve`); the contribution of year t sums the
    accruals of the renewals due in t+1 .. t+k (k = mra_years_ahead at export: the ranges are
    fixed when the workbook is written).
    """
    parts = [f"{cf}{{L}}${cash_rows[k]}" for k in ("replacements", "moving_parts")
             if k in cash_rows]
    y.formula("renew", "Renewals: scheduled replacements + moving parts (CashFlow)", cur,
              "=MAX(" + ("+".join(parts) or "0") + ",0)", FMT_MONEY)
    y.formula("mra_accrual", "MRA: yearly accrual for the renewal of this year = renewal / "
                             "MIN(mra_years_ahead, t - 1)", cur,
              "=IF(AND(mra_years_ahead>0,[t]>=2),[renew]/MIN(mra_years_ahead,[t]-1),0)",
              FMT_MONEY)
    k = int(case["debt.mra_years_ahead"])

    def contribution(t: int) -> str:
        last = min(t + k, y.n)
        if t == 0 or k == 0 or t + 1 > last:
            return "=0"
        first_col, last_col = col_letter(year_col(t + 1)), col_letter(year_col(last))
        row = y.rows["mra_accrual"]
        return f"=SUM({first_col}{row}:{last_col}{row})"

    y.formula("mra_in", f"MRA: contribution = accruals for renewals due in the next {k} "
                        "year(s)", cur, contribution, FMT_MONEY)
    y.formula("mra_out", "MRA: release to pay this year's renewal", cur,
              "=IF(AND(mra_years_ahead>0,[t]>=2),[renew],0)", FMT_MONEY)
    y.formula("mra_bal", "MRA: balance at the end of the year", cur,
              "=[mra_bal<]+[mra_in]-[mra_out]", FMT_MONEY)


def dsra_rows(y: YearRows, case, cur: str, sweep: bool) -> None:
    """Cash after debt service and the debt service reserve (target, draw, balance, movement).

    See :func:`lcoe.money.reserves.service_reserve`.
    """
    prepaid = "-[prepaid]" if sweep else ""
    y.formula("cash", "Cash after debt service" + (" and sweep" if sweep else ""), cur,
              f"=[cfads]-[service]{prepaid}", FMT_MONEY)
    y.formula("dsra_target", "DSRA target = dsra_months / 12 x next year's debt service", cur,
              "=dsra_months/12*[service>]", FMT_MONEY)
    y.formula("dsra_draw", "DSRA drawn to cover a shortfall = MIN(MAX(-cash, 0), balance)", cur,
              "=MIN(MAX(-[cash],0),[dsra<])", FMT_MONEY, year0="=0")
    y.formula("dsra_after", "DSRA after the draw", cur, "=[dsra<]-[dsra_draw]", FMT_MONEY,
              year0="=0")
    at_close = case["debt.dsra_funding"] == "close"
    y.formula("dsra", "DSRA balance: topped up from cash to the target, excess released", cur,
              "=IF([dsra_after]<[dsra_target],[dsra_after]+MIN([dsra_target]-[dsra_after],"
              "MAX([cash],0)),[dsra_target])", FMT_MONEY,
              year0="=[dsra_target]" if at_close else "=0")
    y.formula("dsra_move", "DSRA movement (into the reserve > 0, released < 0)", cur,
              "=[dsra]-[dsra<]", FMT_MONEY)


def roots_text(found) -> str:
    """The engine's IRR roots when there is no unique one, e.g. ``engine: -0.91, 0.075 (...)``."""
    return "engine: " + (", ".join(f"{x:.10f}" for x in found.roots) or "none") + \
        f" ({found.reason})"


def write_cashflow_returns(wb, y: YearRows, cash_rows: dict, pre_tax_irr, cur: str) -> None:
    """Revenue, net cash flow, its NPV and IRR at the foot of the CashFlow sheet.

    The net cash flow before tax and financing is revenue - total cost (capex included), the
    engine's pre-tax project flow; its NPV is at the nominal discount rate.
    """
    ws = wb["CashFlow"]
    n = y.n
    last = col_letter(year_col(n))
    r = ws.max_row + 2
    title(ws, r, "Revenue and project return before tax and financing (bankability)")
    r += 1
    put_text(ws, r, 1, "Revenue (Debt sheet: energy sold x price)")
    put_text(ws, r, 2, cur)
    rev = r
    for t in range(n + 1):
        L = col_letter(year_col(t))
        put_formula(ws, r, year_col(t), f"=Debt!{L}${y.rows['revenue']}", FMT_MONEY)
    r += 1
    put_text(ws, r, 1, "Net cash flow = revenue - total cost")
    put_text(ws, r, 2, cur)
    net = r
    for t in range(n + 1):
        L = col_letter(year_col(t))
        put_formula(ws, r, year_col(t), f"={L}{rev}-{L}{cash_rows['total_cost']}", FMT_MONEY)
    r += 2
    header(ws, r, ("Quantity", "unit", "Workbook formula", "Engine value"))
    r += 1
    put_text(ws, r, 1, "NPV of the net cash flow at the nominal discount rate")
    put_text(ws, r, 2, cur)
    put_formula(ws, r, 3, f"=C{net}+NPV(discount_rate,D{net}:{last}{net})", FMT_MONEY)
    define_name(wb, "project_npv_pre_tax", ws, r, 3)
    r += 1
    put_text(ws, r, 1, "IRR of the net cash flow (project IRR before tax)")
    put_text(ws, r, 2, "1/year")
    put_formula(ws, r, 3, f"=IRR(C{net}:{last}{net})", FMT_RATE)
    if np.isfinite(pre_tax_irr.value):
        engine_columns(ws, r, 3, pre_tax_irr.value, FMT_RATE)
    else:
        put_text(ws, r, 4, roots_text(pre_tax_irr))


def tax_rows(y: YearRows, p: str, interest: str, cur: str, capex: str, label: str = "") -> None:
    """Taxable income, loss carry-forward, tax before credits, credits and tax (prefix ``p``).

    ``interest`` is the template of the deductible interest (``[interest]`` or ``0``);
    ``capex`` the cell of the year-0 capex (basis of the investment tax credit).
    """
    y.formula(f"{p}taxable", f"Taxable income = EBITDA - depreciation - interest{label}", cur,
              f"=[ebitda]-[dep]-{interest}", FMT_MONEY)
    y.formula(f"{p}net", f"Taxable income less losses brought forward{label}", cur,
              f"=[{p}taxable]-[{p}loss<]", FMT_MONEY)
    y.formula(f"{p}loss", f"Tax losses carried forward{label}", cur, f"=MAX(-[{p}net],0)",
              FMT_MONEY)
    y.formula(f"{p}tax_before", f"Tax before credits{label}", cur,
              f"=tax_rate*MAX([{p}net],0)", FMT_MONEY)
    y.formula(f"{p}credit", f"Tax credit available (ITC arises in year 1){label}", cur,
              f"=[{p}credit_left<]+IF([t]=1,itc_fraction*{capex},0)", FMT_MONEY)
    y.formula(f"{p}tax", f"Tax paid{label}", cur,
              f"=[{p}tax_before]-MIN([{p}credit],[{p}tax_before])", FMT_MONEY)
    y.formula(f"{p}credit_left", f"Tax credit carried forward{label}", cur,
              f"=[{p}credit]-MIN([{p}credit],[{p}tax_before])", FMT_MONEY)


def has_debt(result: RunResult) -> bool:
    """True when the run carries a bankability block with a loan schedule."""
    bank = result.extras.get("bankability")
    return bank is not None and hasattr(bank, "finance")
