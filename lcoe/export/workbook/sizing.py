"""Debt sizing and financial close on the Debt sheet, as live formulas.

:func:`sizing_rows` re-derives the debt from the sizing cases' CFADS (what each constraint and
the gearing cap allows, the scale of the sculpted profile, the debt, the scheduled service);
:func:`close_rows` writes the construction drawdown, interest during construction, fees and
the sources and uses of funds.
"""

from __future__ import annotations

import numpy as np

from lcoe.export.workbook.layout import (
    FMT_FACTOR,
    FMT_MONEY,
    define_name,
    engine_columns,
    header,
    put,
    put_formula,
    put_text,
    title,
)
from lcoe.export.workbook.yearly import col_letter, year_col


def sizing_rows(wb, ws, y, bank, top: int, capex: str, cur: str,
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
    from lcoe.money.metrics import BASE_CASE

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
    from lcoe.money.debt import constraint_label

    return constraint_label(case, float(target))




def close_rows(wb, ws, r: int, bank, case, capex: str, dsra0: str, cur: str) -> int:
    """Construction drawdown, interest during construction, fees and sources and uses.

    Parameters
    ----------
    r : int
        First row to write.
    capex : str
        Cell of the year-0 capex.
    dsra0 : str
        Cell of the DSRA balance funded at close.

    Returns
    -------
    int
        The last row written. Defines ``equity_at_close`` (the balancing source).

    Notes
    -----
    Per :func:`lcoe.money.construction.construction_financing`: capex share s_k drawn at the
    start of period k of n, j = rate x period length. Capitalised: debt share
    g = debt / (capex x SUM s_k (1 + j)^(n - k)), IDC = debt - g x capex; paid by equity:
    g = debt / capex, IDC = g x capex x j x SUM s_k (n - k). Commitment fee = fee x period
    length x SUM (g x capex - principal drawn after each period's draw).
    """
    f = bank.finance
    build = f.construction
    shares = list(case.drawdown)
    n = len(shares)
    period = case["construction.period"]
    title(ws, r, f"Construction and financial close ({n} {period}(s) of construction; "
                 f"interest during construction {case['construction.idc']})")
    r += 1
    rows = {}
    first = col_letter(year_col(1))
    last = col_letter(year_col(n)) if n else first
    if n:
        for key, label, fn in (
            ("k", f"Construction {period}", lambda k: k + 1),
            ("share", "Share of capex drawn at its start (case)", lambda k: shares[k]),
            ("left", f"{period.capitalize()}s of interest to COD", lambda k: n - k),
        ):
            rows[key] = r
            put_text(ws, r, 1, label)
            for k in range(n):
                put(ws, r, year_col(k + 1), float(fn(k)), "0.000" if key == "share" else "0")
            r += 1
        rows["cum"] = r
        put_text(ws, r, 1, "Cumulative share drawn")
        for k in range(n):
            put_formula(ws, r, year_col(k + 1),
                        f"=SUM(${first}${rows['share']}:{col_letter(year_col(k + 1))}"
                        f"{rows['share']})", "0.000")
        r += 1
    put_text(ws, r, 1, "Length of a period")
    put_text(ws, r, 2, "year")
    put(ws, r, 4, build.period_years, FMT_FACTOR)
    d_row = r
    r += 1
    share_span = f"{first}{rows.get('share', 0)}:{last}{rows.get('share', 0)}"
    left_span = f"{first}{rows.get('left', 0)}:{last}{rows.get('left', 0)}"
    j = f"(interest_rate*$D${d_row})"
    if not n or not build.idc_capitalised:
        g = f"=IF({capex}>0,debt_amount/{capex},0)"
    else:
        g = (f"=IF({capex}>0,debt_amount/({capex}*SUMPRODUCT({share_span},"
             f"(1+{j})^{left_span})),0)")
    g_row = r = _checked_row(ws, r, "Share of each draw funded by the loan", "-", g,
                             build.debt_share[0], FMT_FACTOR)
    if not n:
        idc = "=0"
    elif build.idc_capitalised:
        idc = f"=debt_amount-$D${g_row}*{capex}"
    else:
        idc = f"=$D${g_row}*{capex}*{j}*SUMPRODUCT({share_span},{left_span})"
    idc_row = r = _checked_row(ws, r + 1, "Interest during construction", cur, idc,
                               build.idc[0], FMT_MONEY)
    fee = (f"=commitment_fee_fraction*$D${d_row}*$D${g_row}*{capex}*SUMPRODUCT(1-"
           f"{first}{rows['cum']}:{last}{rows['cum']})") if n else "=0"
    fee_row = r = _checked_row(ws, r + 1, "Commitment fee on the undrawn loan", cur, fee,
                               build.commitment_fee[0], FMT_MONEY)
    r += 2
    header(ws, r, ("Sources and uses of funds to COD", "unit", "", "Workbook formula",
                   "Engine value", "Relative difference"))
    su = f.sources_uses
    lines = (("Uses: capex", f"={capex}", su["uses"]["capex"]),
             ("Uses: interest during construction", f"=$D${idc_row}",
              su["uses"]["interest during construction"]),
             ("Uses: upfront fee = upfront_fee_fraction x debt",
              "=upfront_fee_fraction*debt_amount", su["uses"]["upfront fee"]),
             ("Uses: commitment fee", f"=$D${fee_row}", su["uses"]["commitment fee"]),
             ("Uses: DSRA funded at close", f"={dsra0}", su["uses"]["DSRA funded at close"]))
    first_use = r + 1
    for label, formula, value in lines:
        r = _checked_row(ws, r + 1, label, cur, formula, value[0], FMT_MONEY)
    total_row = r = _checked_row(ws, r + 1, "Total uses = total sources", cur,
                                 f"=SUM(D{first_use}:D{r})", su["total"][0], FMT_MONEY)
    r = _checked_row(ws, r + 1, "Sources: senior debt", cur, "=debt_amount",
                     su["sources"]["senior debt"][0], FMT_MONEY)
    r = _checked_row(ws, r + 1, "Sources: equity = total - senior debt", cur,
                     f"=D{total_row}-debt_amount", su["sources"]["equity"][0], FMT_MONEY)
    define_name(wb, "equity_at_close", ws, r, 4)
    r += 1
    put_text(ws, r, 1, "Contributions during construction are counted at COD (year 0), "
                       "without time value; IDC and fees are not depreciated for tax.")
    return r


def _checked_row(ws, r: int, label: str, unit: str, formula: str, engine, fmt: str) -> int:
    """A labelled formula in column D with the engine's value beside it; returns ``r``."""
    put_text(ws, r, 1, label)
    put_text(ws, r, 2, unit)
    put_formula(ws, r, 4, formula, fmt)
    engine_columns(ws, r, 4, float(engine), fmt)
    return r
