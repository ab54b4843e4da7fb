"""Value of information: bar chart, workbook sheets and HTML sections.

For a comparison it reads a :class:`lcoe.study.value_of_information.VoiBlock`; for the lender's case
the
summary of a :class:`lcoe.study.value_of_information.ResourceInfoBlock` (the value of narrowing the
resource
uncertainty). It computes nothing but formatting. The HTML sections are self-contained
(:func:`voi_section_html`, :func:`resource_section_html`) so that a report page can include
them; the comparison also writes its section as ``value_of_information.html``.
"""

from __future__ import annotations

import base64
import html

#: File names of the outputs.
PICTURE = "value_of_information.png"
PAGE = "value_of_information.html"
SHEET = "Value of information"
#: Sheet of the lender's value of a resource measurement campaign.
RESOURCE_SHEET = "Resource measurement"
#: Largest number of bars drawn.
TOP = 12


def _e(text) -> str:
    return html.escape("" if text is None else str(text), quote=True)


def fig_voi(block, top: int = TOP):
    """Bars of EVPPI by input and group, with 95 % bootstrap intervals; EVPI as a line.

    Parameters
    ----------
    block : VoiBlock
    top : int
        Largest number of bars.
    """
    import numpy as np

    from lcoe.export.plots import BLUE, GREY, ORANGE, _figure, _short

    rows = block.rows[:top]
    k = 1e-3 if max([block.evpi.value] + [r.value for r in rows]) < 1e6 else 1e-6
    unit = f"{'k' if k == 1e-3 else 'M'} {block.currency}"
    fig = _figure((11.0, max(3.0, 0.42 * len(rows) + 2.0)))
    ax = fig.add_subplot()
    y = np.arange(len(rows))
    vals = np.array([max(r.value, 0.0) for r in rows]) * k
    lo = np.array([max(r.low, 0.0) for r in rows]) * k
    hi = np.array([max(r.high, 0.0) for r in rows]) * k
    colors = [GREY if r.below_se else (BLUE if len(r.members) == 1 else ORANGE) for r in rows]
    ax.barh(y, vals, color=colors, height=0.6)
    ax.errorbar(vals, y, xerr=[np.maximum(vals - lo, 0), np.maximum(hi - vals, 0)], fmt="none",
                ecolor="black", elinewidth=1, capsize=3)
    ax.axvline(block.evpi.value * k, color="black", linestyle="--", linewidth=1,
               label=f"EVPI (everything) {block.evpi.value * k:,.3g} {unit}")
    ax.set_yticks(y, [_short(block.label(r.name), 72) for r in rows])
    ax.invert_yaxis()
    ax.set_xlabel(f"Worth up to ... to learn before choosing (EVPPI) [{unit}]\nwhiskers: 95 % "
                  f"bootstrap interval", fontsize=9)
    ax.set_title("Blue: one input; orange: a group; grey: below its standard error",
                 fontsize=9)
    ax.legend(loc="lower right", frameon=False, fontsize=9)
    ax.grid(True, axis="x", color="#dddddd", linewidth=0.8)
    ax.set_axisbelow(True)
    return fig


def voi_png(block) -> bytes:
    """PNG bytes of :func:`fig_voi`."""
    from lcoe.export.plots import figure_png

    return figure_png(fig_voi(block))


def voi_section_html(block, png: bytes | None = None, src: str | None = None,
                     top: int = 2 * TOP) -> str:
    """An HTML ``<section>`` with the table, the sentence, the chart and the caution.

    Parameters
    ----------
    block : VoiBlock
    png : bytes, optional
        The chart, embedded as a data URI.
    src : str, optional
        Or a link to the chart file.
    top : int
        Largest number of inputs and groups listed (all are in the JSON and the workbook).
    """
    s = block.to_summary()
    cur, e = block.currency, block.energy_ref_kwh
    rows = []
    for r in [block.evpi] + block.rows[:top]:
        flag = " (below its error)" if r.below_se else ""
        rows.append(f"<tr><td>{_e(block.label(r.name))}{_e(flag)}</td>"
                    f"<td class='num'>{r.value:,.0f}</td><td class='num'>{r.se:,.0f}</td>"
                    f"<td class='num'>{r.low:,.0f} to {r.high:,.0f}</td>"
                    f"<td class='num'>{1000 * r.value / e:.3f}</td></tr>")
    more = "" if len(block.rows) <= top else (
        f"<p class='sub'>{len(block.rows) - top} more inputs and groups, each worth at most "
        f"{max(block.rows[top].value, 0.0):,.0f} {_e(cur)}: all are in the JSON and the "
        f"workbook.</p>")
    img = ""
    if png is not None:
        img = (f"<img alt='value of information by input' src='data:image/png;base64,"
               f"{base64.b64encode(png).decode()}'>")
    elif src:
        img = f"<img alt='value of information by input' src='{_e(src)}'>"
    return (
        "<section id='value-of-information'><h2>Worth up to ... to learn before deciding</h2>"
        f"<p>{_e(block.top_sentence())}</p>"
        f"<p>Decision: which case to build ({_e(', '.join(block.options))}); choice with what "
        f"is known now: {_e(block.options[block.best])}. {_e(block.basis[:1].upper())}"
        f"{_e(block.basis[1:])}. Per MWh figures "
        f"divide by the baseline's lifetime energy discounted at its real rate "
        f"({e:,.0f} kWh). {block.n_trials:,} trials, none left out.</p>"
        f"<table><tr><th>Input or group (the members of each group are listed in the JSON "
        f"and the workbook)</th><th>Value [{_e(cur)}]</th><th>Standard error [{_e(cur)}]</th>"
        f"<th>95 % bootstrap interval [{_e(cur)}]</th><th>Value [{_e(cur)}/MWh]</th></tr>"
        + "".join(rows) + "</table>" + more + img +
        f"<p>Method: {_e(s['method'])}.</p>"
        f"<p class='caution'>{_e(s['caution'])}</p>"
        + "".join(f"<p class='note'>{_e(n)}</p>" for n in block.notes) + "</section>")


def voi_page_html(block, png: bytes | None = None) -> str:
    """A standalone page around :func:`voi_section_html`."""
    css = ("body{font-family:sans-serif;max-width:60em;margin:2em auto;color:#222}"
           "table{border-collapse:collapse}td,th{border:1px solid #ccc;padding:3px 8px}"
           ".num{text-align:right}img{max-width:100%}.caution{font-weight:bold}"
           ".sub{color:#5b6670}")
    return (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>Value of "
            f"information - lcoe</title><style>{css}</style></head><body>"
            f"{voi_section_html(block, png)}</body></html>\n")


def write_voi_sheet(wb, block) -> None:
    """Add the sheet :data:`SHEET` to an openpyxl workbook."""
    from lcoe.export.workbook.layout import header, put, put_text, title, widths

    ws = wb.create_sheet(SHEET)
    cur = block.currency
    title(ws, 1, "Worth up to ... to learn before deciding", 14)
    put_text(ws, 2, 1, block.top_sentence())
    put_text(ws, 3, 1, f"Decision: which case to build. {block.basis}.")
    put_text(ws, 4, 1, f"Choice now: {block.options[block.best]}. Trials: {block.n_trials}. "
                       f"Baseline discounted energy (real rate): {block.energy_ref_kwh:,.0f} "
                       f"kWh.")
    header(ws, 6, ["Input or group", f"Value [{cur}]", f"Standard error [{cur}]",
                   f"2.5 % [{cur}]", f"97.5 % [{cur}]", f"Value [{cur}/MWh]",
                   "Below its standard error", "Key (as in comparison.json)",
                   "Keys of the members"])
    r = 7
    for row in [block.evpi] + block.rows:
        put_text(ws, r, 1, block.label(row.name))
        for j, v in enumerate((row.value, row.se, row.low, row.high), start=2):
            put(ws, r, j, float(v), "#,##0")
        put(ws, r, 6, 1000 * row.value / block.energy_ref_kwh, "0.000")
        put(ws, r, 7, bool(row.below_se))
        put_text(ws, r, 8, row.name)
        put_text(ws, r, 9, ", ".join(row.members))
        r += 1
    r += 1
    for line in [block.to_summary()["method"], block.to_summary()["caution"]] + block.notes:
        put_text(ws, r, 1, line)
        r += 1
    widths(ws, {"A": 60, "B": 16, "C": 16, "D": 14, "E": 14, "F": 14, "G": 14, "H": 50,
                "I": 60})


def _pct(x: float) -> str:
    return f"{100 * x:.1f} %"


def resource_sentence(s: dict, cur: str) -> str:
    """Plain sentence of the lender's block (``ResourceInfoBlock.to_summary()``)."""
    g = s["gained"]
    return (f"Narrowing the long-term solar resource uncertainty from {_pct(s['resource_sd_from'])}"
            f" to {_pct(s['resource_sd_to'])} (one standard deviation) before the debt is sized, "
            f"for example with an on-site measurement campaign, changes the debt the project "
            f"can carry by {g['debt']:+,.0f} {cur} ({g['debt_per_0_01_sigma']:+,.0f} {cur} per "
            f"percentage point of sigma) and the equity's value by {g['equity_value']:+,.0f} "
            f"{cur} ({s['equity_value_definition']}; {g['equity_npv_discount']:+,.0f} {cur} at "
            f"the discount rate).")


def resource_section_html(s: dict, currency: str) -> str:
    """HTML ``<section>`` of the lender's value of a resource measurement campaign.

    Parameters
    ----------
    s : dict
        :meth:`lcoe.study.value_of_information.ResourceInfoBlock.to_summary`.
    currency : str
    """
    cur = _e(currency)
    rows = "".join(
        f"<tr><td class='num'>{_pct(c['resource_sd'])}</td><td class='num'>"
        f"{_pct(c['sigma_1yr'])}</td><td class='num'>{c['debt']:,.0f}</td><td class='num'>"
        f"{c['equity_value']:,.0f}</td><td class='num'>{c['equity_npv_at_discount_rate']:,.0f}"
        f"</td><td>{_e(c['binding'])}</td></tr>" for c in s["curve"])
    return ("<section id='resource-information'><h2>Worth paying to measure the resource "
            f"before the debt is sized</h2><p>{_e(resource_sentence(s, currency))}</p>"
            "<table><tr><th>Resource uncertainty (sd) [-]</th><th>One-year energy sd used for "
            f"sizing [-]</th><th>Debt [{cur}]</th><th>Equity value at its target IRR [{cur}]"
            f"</th><th>Equity NPV at the discount rate [{cur}]</th><th>Binding constraint</th>"
            "</tr>" + rows + "</table>"
            f"<p class='sub'>{_e(s['caution'])}</p>"
            + "".join(f"<p class='sub'>Note: {_e(n)}.</p>" for n in s.get("notes") or [])
            + "</section>")


def write_resource_sheet(wb, s: dict, currency: str) -> None:
    """Add the sheet :data:`RESOURCE_SHEET` (the lender's block, gains as formulas)."""
    from lcoe.export.workbook.layout import header, put, put_formula, put_text, title, widths

    ws = wb.create_sheet(RESOURCE_SHEET)
    cur = currency
    title(ws, 1, "Worth paying to measure the resource before the debt is sized", 14)
    put_text(ws, 2, 1, resource_sentence(s, cur))
    header(ws, 4, ["Resource uncertainty (sd) [-]", "One-year energy sd used for sizing [-]",
                   f"Debt [{cur}]", f"Equity value at its target IRR [{cur}]",
                   f"Equity NPV at the discount rate [{cur}]", "Binding constraint"])
    r = 5
    for c in s["curve"]:
        put(ws, r, 1, c["resource_sd"], "0.0000")
        put(ws, r, 2, c["sigma_1yr"], "0.0000")
        put(ws, r, 3, c["debt"], "#,##0")
        put(ws, r, 4, c["equity_value"], "#,##0")
        put(ws, r, 5, c["equity_npv_at_discount_rate"], "#,##0")
        put_text(ws, r, 6, c["binding"])
        r += 1
    first, last = 5, r - 1
    r += 1
    header(ws, r, ["Gained from the first to the last row", "", f"Debt [{cur}]",
                   f"Equity value [{cur}]", f"Equity NPV at the discount rate [{cur}]"])
    put_text(ws, r + 1, 1, "in total")
    put_text(ws, r + 2, 1, "per 0.01 of resource sd")
    for col in "CDE":
        j = ord(col) - ord("A") + 1
        put_formula(ws, r + 1, j, f"={col}{last}-{col}{first}", "#,##0")
        put_formula(ws, r + 2, j, f"=IF($A${first}>$A${last},{col}{r + 1}/(($A${first}-"
                                  f"$A${last})/0.01),\"\")", "#,##0")
    r += 4
    for line in [s["equity_value_definition"], s["caution"]] + list(s.get("notes") or []):
        put_text(ws, r, 1, line)
        r += 1
    widths(ws, {"A": 30, "B": 30, "C": 18, "D": 24, "E": 24, "F": 22})
