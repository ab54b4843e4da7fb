"""The report's debt section: sources and uses, sizing, the yearly cover ratios, the DSCR fan,
breach odds and the break-even tariff, from a bankability block's summary (computes nothing).
"""

from __future__ import annotations

import base64
import html

#: Yearly columns of the debt table: (key of ``by_year``, header, format).
YEAR_COLUMNS = (
    ("cfads", "CFADS", "money"),
    ("debt_service", "Debt service", "money"),
    ("prepaid", "Cash sweep", "money"),
    ("dscr", "DSCR", "ratio"),
    ("dscr_before_reserves", "DSCR before reserves", "ratio"),
    ("llcr", "LLCR", "ratio"),
    ("plcr", "PLCR", "ratio"),
    ("debt_balance", "Loan balance", "money"),
    ("dsra_balance", "DSRA", "money"),
    ("mra_balance", "MRA", "money"),
)


def _e(text) -> str:
    return html.escape("" if text is None else str(text), quote=True)


def _num(value, kind: str) -> str:
    if value is None:
        return ""
    return f"{value:,.0f}" if kind == "money" else f"{value:.3f}"


def _table(head, rows) -> str:
    out = ["<table><tr>" + "".join(f"<th>{_e(h)}</th>" for h in head) + "</tr>"]
    for row in rows:
        out.append("<tr>" + "".join(
            f"<td class=\"num\">{_e(c)}</td>" if i else f"<td>{_e(c)}</td>"
            for i, c in enumerate(row)) + "</tr>")
    return "".join(out) + "</table>"


def _below_each(debt: float, sizing: list, cur: str) -> str:
    """Why the loan drawn can be smaller than what each constraint allows on its own."""
    alone = [r["debt"] for r in sizing if r.get("debt") is not None]
    if len(alone) < 2 or debt >= min(alone) - 0.5:
        return ""
    return (f" It is smaller than what any one constraint allows alone (at least "
            f"{min(alone):,.0f} {_e(cur)}): the debt service follows the shape of one case's "
            f"cash flow and is scaled down until every constraint holds in every year of the "
            f"tenor; the binding constraint stops that scaling in its tightest year, a year "
            f"where the service shaped on another case leaves it less room than its own shape "
            f"would.")


def debt_section_html(b: dict, currency: str, fan_png: bytes | None = None) -> str:
    """HTML of the debt section.

    Parameters
    ----------
    b : dict
        :meth:`lcoe.study.bankability.BankabilityBlock.to_summary`.
    currency : str
    fan_png : bytes, optional
        The DSCR fan picture (PNG).
    """
    cur = currency
    parts = ["<h2>Debt: the lender's case</h2>"]
    if b.get("no_debt_reason"):
        parts.append(f"<p><b>{_e(b['no_debt_reason'])}</b></p>")
    su = b.get("sources_and_uses") or {}
    if su:
        rows = [(f"Use: {k}", f"{v:,.0f}") for k, v in su["uses"].items()]
        rows += [(f"Source: {k}", f"{v:,.0f}") for k, v in su["sources"].items()]
        parts.append(f"<h3>Sources and uses of funds to COD [{_e(cur)}]</h3>"
                     + _table(("Item", "Amount"), rows)
                     + "<p class=\"sub\">Equity's contributions during construction are "
                       "counted at COD, without time value.</p>")
    sizing = b.get("sizing_table") or []
    if sizing:
        rows = [(r["constraint"], f"{r['debt']:,.0f}",
                 "" if r["gearing"] is None else f"{100 * r['gearing']:.1f}",
                 "binds" if r["binding"] else "") for r in sizing]
        parts.append("<h3>Debt each constraint allows on its own</h3>"
                     + _table(("Constraint", f"Debt [{cur}]", "Gearing [%]", ""), rows)
                     + f"<p>Debt drawn: {b['debt']:,.0f} {_e(cur)} (gearing "
                       f"{100 * b['gearing']:.1f} %), the largest loan that meets every "
                       f"constraint at once; binding: {_e(b.get('binding_constraint'))}."
                       + _below_each(b["debt"], sizing, cur) + "</p>")
    by_year = b.get("by_year") or {}
    if by_year:
        served = [t for t in by_year["year"]
                  if by_year["debt_service"][t] or by_year["dsra_balance"][t]]
        last = min(max(served) + 1, by_year["year"][-1]) if served else by_year["year"][-1]
        years = range(1, last + 1)
        head = ("Year",) + tuple(h for _, h, _ in YEAR_COLUMNS)
        rows = [(t,) + tuple(_num(by_year[k][t], kind) for k, _, kind in YEAR_COLUMNS)
                for t in years]
        parts.append(f"<h3>Cover ratios by year [{_e(cur)}; ratios in x]</h3>"
                     + _table(head, rows)
                     + f"<p class=\"sub\">{_e(b.get('dscr_definition'))}. LLCR and PLCR: "
                       "present value at the loan rate of CFADS to maturity (LLCR) or to the "
                       "end of the life (PLCR), over the balance owed at the start of the "
                       "year.</p>")
    mc = b.get("monte_carlo")
    if mc and mc.get("min_dscr"):
        m = mc["min_dscr"]
        parts.append(
            f"<h3>Breach odds over {mc['trials']:,} trials</h3>"
            f"<p>Probability that DSCR falls below 1.00 in some year: "
            f"{100 * mc['prob_dscr_below_1']:.1f} %; below the lock-up level "
            f"{b['lockup_dscr']:.2f}: {100 * mc['prob_lockup']:.1f} %; that the equity misses "
            f"its target IRR: {100 * mc['prob_equity_below_target']:.1f} %. Minimum DSCR "
            f"10th / 50th / 90th percentile: {m['q10']:.2f} / {m['q50']:.2f} / "
            f"{m['q90']:.2f}. The loan is sized once on the deterministic cases and kept in "
            f"every trial.</p>")
    if fan_png:
        data = base64.b64encode(fan_png).decode("ascii")
        parts.append(f"<figure><img alt=\"DSCR fan\" src=\"data:image/png;base64,{data}\">"
                     "<figcaption>Debt service cover ratio by year across the trials."
                     "</figcaption></figure>")
    parts.append(
        "<h3>Tariff and equity</h3>"
        f"<p>Break-even tariff for the target equity IRR "
        f"({100 * b['target_equity_irr']:.1f} %): {b['breakeven_tariff_per_kwh']:.4f} "
        f"{_e(cur)}/kWh flat real (year-0 money rising with inflation), or "
        f"{b['breakeven_contract_price_per_kwh']:.4f} {_e(cur)}/kWh as a year-1 contract "
        f"price escalating at the contract's own rate (merchant price after the contract), "
        f"to set beside the contract. Equity NPV at the discount rate: "
        f"{b['equity_npv_at_discount_rate']:,.0f} {_e(cur)}; at the target IRR: "
        f"{b['equity_npv_at_target_irr']:,.0f} {_e(cur)} (zero or more: the target is met). "
        f"Contract years after maturity (tail): {b.get('tail_years')}.</p>")
    return "".join(parts)
