"""Value of information of a comparison: bar chart, workbook sheet and an HTML section.

Reads a :class:`lcoe.compare_voi.VoiBlock` and computes nothing but formatting. The HTML
section is self-contained (:func:`voi_section_html`) so that a report page can include it; the
comparison also writes it as ``value_of_information.html``.
"""

from __future__ import annotations

import base64
import html

#: File names of the outputs.
PICTURE = "value_of_information.png"
PAGE = "value_of_information.html"
SHEET = "Value of information"
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

    from .plots import BLUE, GREY, ORANGE, _figure, _short

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
    from .plots import figure_png

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
        members = "; ".join(block.label(m) for m in r.members) if len(r.members) > 1 else ""
        rows.append(f"<tr><td>{_e(block.label(r.name))}{_e(flag)}</td><td>{_e(members)}</td>"
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
        f"is known now: {_e(block.options[block.best])}. {_e(block.basis)}. Per MWh figures "
        f"divide by the baseline's lifetime energy discounted at its real rate "
        f"({e:,.0f} kWh). {block.n_trials:,} trials, none left out.</p>"
        f"<table><tr><th>Input or group</th><th>Members of a group</th><th>Value [{_e(cur)}]</th>"
        f"<th>Standard error</th><th>95 % bootstrap interval</th><th>[{_e(cur)}/MWh]</th></tr>"
        + "".join(rows) + "</table>" + more + img +
        f"<p>Method: {_e(s['method'])}.</p>"
        f"<p class='caution'>{_e(s['caution'])}</p>"
        + "".join(f"<p class='note'>{_e(n)}</p>" for n in block.notes) + "</section>")


def voi_page_html(block, png: bytes | None = None) -> str:
    """A standalone page around :func:`voi_section_html`."""
    css = ("body{font-family:sans-serif;max-width:60em;margin:2em auto;color:#222}"
           "table{border-collapse:collapse}td,th{border:1px solid #ccc;padding:3px 8px}"
           ".num{text-align:right}img{max-width:100%}.caution{font-weight:bold}")
    return (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>Value of "
            f"information - lcoe</title><style>{css}</style></head><body>"
            f"{voi_section_html(block, png)}</body></html>\n")


def write_voi_sheet(wb, block) -> None:
    """Add the sheet :data:`SHEET` to an openpyxl workbook."""
    from .workbook import header, put, put_text, title, widths

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
