"""Debt sheet of the workbook: revenue, tax, CFADS, the loan waterfall, cover ratios, returns.

Re-expresses :func:`lcoe.bank.metrics.project_finance` for the deterministic case of a run's
bankability block (:mod:`lcoe.bankability`) as formulas, one column per year like CashFlow
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

from ..results import RunResult
from .workbook import (
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
from .workbook_sheets import YEAR0_COL, col_letter, year_col

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
        ``extras["bankability"]`` is a :class:`lcoe.bankability.BankabilityBlock`.
    cash_rows : dict
        Row numbers of the CashFlow sheet (from
        :func:`lcoe.export.workbook_sheets.write_cashflow_sheet`).
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
    y.formula("loan_df", "Discount factor at the loan rate (tenor years)", "-",
              "=[tenor]/(1+interest_rate)^[t]", FMT_FACTOR)
    write_sizing = sizing_rows(wb, ws, y, bank, sizing_top, cf + f"$C${cash_rows['capex']}",
                               cur, int(case["debt.tenor_years"]))
    # loan balance first: interest is needed for tax
    y.formula("opening", "Opening loan balance", cur,
              "=IF([tenor]=1,IF([t]=1,debt_amount,[closing<]),0)", FMT_MONEY)
    y.formula("interest", "Interest = opening balance x loan rate", cur,
              "=[opening]*interest_rate", FMT_MONEY)
    y.formula("principal", "Principal repaid (last tenor year: the whole balance)", cur,
              "=IF([t]=tenor_years,[opening],IF([tenor]=1,[sched]-[interest],0))", FMT_MONEY)
    y.formula("service", "Debt service paid = interest + principal", cur,
              "=[interest]+[principal]", FMT_MONEY)
    y.formula("closing", "Closing loan balance", cur, "=[opening]-[principal]", FMT_MONEY,
              year0="=debt_amount")
    capex = f"{cf}$C${cash_rows['capex']}"
    tax_rows(y, "", "[interest]", cur, capex)
    y.formula("cfads", "CFADS = revenue - operating costs - tax", cur,
              "=[revenue]-[opex]-[tax]", FMT_MONEY)
    y.formula("dscr", "DSCR = CFADS / debt service", "-",
              "=IF([service]>0,[cfads]/[service],\"\")", "0.000")
    y.formula("equity", "Cash flow to equity = CFADS - debt service", cur,
              "=[cfads]-[service]", FMT_MONEY,
              year0="=[cfads]-(" + f"{cf}C${cash_rows['capex']}-debt_amount"
                    "+debt_amount*upfront_fee_fraction)")
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
                       "finds every root and reports a value only when there is exactly one "
                       "(a last-year decommissioning cost adds a second sign change).")

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


def sizing_rows(wb, ws, y: YearRows, bank, top: int, capex: str, cur: str,
                tenor_years: int):
    """Debt sizing as live formulas: what each constraint allows, the debt, the service.

    Writes the table at row ``top`` (``len(constraints) + 7`` rows) and, in ``y``, one row of
    engine CFADS per sizing case, the service each constraint allows
    (``MAX(CFADS_t, 0) / target`` in tenor years) and the scheduled service. The CFADS of the
    sizing cases are engine values: with interest deductible they depend on the loan, which
    depends on them (the engine's fixed point); everything after them is a formula.

    Sculpted: the service follows the profile of one case s (the engine tries each case's
    profile and keeps the one that carries the most debt), scaled by
    ``k = MIN(1, lim_c,t / lim_s,t)`` over the other constraints c; debt =
    ``MIN(k x PV(lim_s), gearing cap)``. Annuity: each constraint allows
    ``MIN_t lim_c,t / CRF``; debt = the smallest, capped.
    """
    from ..bank.metrics import BASE_CASE

    sizing = bank.finance.sizing
    names = [BASE_CASE if c == "P50" else c for c, _ in bank.constraints]
    nc = len(names)
    sculpted = sizing.repayment == "sculpted"
    shape = names.index(str(sizing.shape_case[0])) if sculpted else 0
    table = {j: top + 1 + j for j in range(nc)}
    cap_row, k_row, crf_row = top + nc + 1, top + nc + 2, top + nc + 3
    debt_row, bind_row = top + nc + 4, top + nc + 5
    for j, (case, target) in enumerate(bank.constraints):
        y.values(f"cf_{j}", f"Sizing case {case}: CFADS (engine, fixed point of tax and "
                            f"interest)", cur, sizing.cfads[names[j]][0], FMT_MONEY)
        y.formula(f"lim_{j}", f"Sizing case {case}: service it allows = MAX(CFADS, 0) / "
                              f"{target:.2f}", cur, f"=[tenor]*MAX([cf_{j}],0)/$C${table[j]}",
                  FMT_MONEY)
    if sculpted:
        for j in range(nc):
            if j != shape:
                y.formula(f"ratio_{j}", f"Room under {bank.constraints[j][0]} for the "
                                        f"{bank.constraints[shape][0]} profile = ratio of "
                                        "allowed services", "-",
                          f'=IF([lim_{shape}]>0,[lim_{j}]/[lim_{shape}],"")', "0.000000")
        y.formula("sched", f"Scheduled debt service = {bank.constraints[shape][0]} profile x "
                           "debt / its PV", cur,
                  f"=[lim_{shape}]*IF($D${table[shape]}>0,debt_amount/$D${table[shape]},0)",
                  FMT_MONEY)
    else:
        y.formula("sched", "Scheduled debt service = debt x CRF (annuity)", cur,
                  f"=[tenor]*debt_amount*$C${crf_row}", FMT_MONEY)

    def write() -> None:
        header(ws, top, ("Debt sizing: constraint", "target DSCR", "x", "Debt it alone "
                         "allows", "Engine value", "Relative difference"))
        put_text(ws, top, 3, "x")
        first, end = col_letter(year_col(1)), col_letter(year_col(tenor_years))
        for j, (case, target) in enumerate(bank.constraints):
            row = table[j]
            put_text(ws, row, 1, f"{case} @ {target:.2f}x (DSCR constraint)")
            put(ws, row, 3, float(target), "0.00")
            lim = y.rows[f"lim_{j}"]
            if sculpted:
                formula = f"=SUMPRODUCT({y.span(f'lim_{j}')},{y.span('loan_df')})"
            else:
                formula = f"=MIN({first}{lim}:{end}{lim})/$C${crf_row}"
            put_formula(ws, row, 4, formula, FMT_MONEY)
            label = constraint_label_of(names[j], target)
            engine_columns(ws, row, 4, float(sizing.candidates[label][0]), FMT_MONEY)
        put_text(ws, cap_row, 1, "Gearing cap = max_gearing x capex")
        put_formula(ws, cap_row, 4, f"=max_gearing*{capex}", FMT_MONEY)
        cap_label = next(k for k in sizing.candidates if k.startswith("gearing cap"))
        engine_columns(ws, cap_row, 4, float(sizing.candidates[cap_label][0]), FMT_MONEY)
        put_text(ws, crf_row, 1, "Capital recovery factor CRF(loan rate, tenor)")
        put_formula(ws, crf_row, 4, "=IF(interest_rate=0,1/tenor_years,interest_rate/"
                                    "(1-(1+interest_rate)^(-tenor_years)))", FMT_FACTOR)
        if sculpted:
            ratios = [y.span(f"ratio_{j}") for j in range(nc) if j != shape]
            put_text(ws, k_row, 1, f"Scale k of the {bank.constraints[shape][0]} profile "
                                   "that every other constraint allows")
            put_formula(ws, k_row, 4, "=MIN(1," + ",".join(f"MIN({a})" for a in ratios) + ")"
                        if ratios else "=1", "0.000000")
            debt = f"=MIN($D${k_row}*$D${table[shape]},$D${cap_row})"
        else:
            put_text(ws, k_row, 1, "Annuity: the smallest payment allowed sets the debt")
            debt = "=MIN(" + ",".join(f"$D${table[j]}" for j in range(nc)) + \
                f",$D${cap_row})"
        put_text(ws, debt_row, 1, "Debt drawn at financial close")
        put_text(ws, debt_row, 2, cur)
        put_formula(ws, debt_row, 4, debt, FMT_MONEY)
        engine_columns(ws, debt_row, 4, float(bank.finance.debt[0]), FMT_MONEY)
        define_name(wb, "debt_amount", ws, debt_row, 4)
        put_text(ws, bind_row, 1, "Binding (engine)")
        put_text(ws, bind_row, 4, bank.binding or "-")
        if bank.no_debt_reason:
            put_text(ws, bind_row + 1, 1, bank.no_debt_reason)

    return write


def constraint_label_of(case: str, target: float) -> str:
    from ..bank.debt import constraint_label

    return constraint_label(case, float(target))


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
