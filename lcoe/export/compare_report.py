"""``report.html`` of ``lcoe compare``: one self-contained page to forward to a board.

It reads only the plain data of ``comparison.json`` (:func:`lcoe.export.compare_outputs.
comparison_dict`) and the pictures' PNG bytes, so it does not depend on the result objects of
the engine. Sections, in order: the cases, each candidate's claim (quoted verbatim) with the
verdicts of the physics audit, the LCOE ratio distribution and the probability that the claim
holds, break-even capex and energy, the drivers of the ratio, the loss chains side by side,
the pictures, notes, cautions and provenance. Further sections (e.g. the value of further
information) are appended through the ``extra_sections`` argument of :func:`compare_report_html`.
No script, nothing loaded from outside; every text from a case or a user is escaped.
"""

from __future__ import annotations

import base64
import html

from lcoe.export.plots import LOSS_LABELS

#: Captions of the comparison's pictures, by file name.
CAPTIONS = {
    "lcoe_cumulative.png": "Real LCOE of every case across the same trials (common random "
                           "numbers): share of trials at or below each cost.",
    "lcoe_ratio.png": "Candidate / baseline cost per kWh, trial by trial, with the claimed "
                      "bound; each case keeps its colour in both pictures.",
    "value_of_information.png": "Value of further information: what resolving each "
                                "uncertainty before deciding would be worth.",
}

_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,Helvetica,Arial,sans-serif;
 max-width:1040px;margin:24px auto;padding:0 16px;color:#1d2329;line-height:1.45}
h1{font-size:1.6em;margin-bottom:.2em}h2{font-size:1.2em;margin-top:1.6em;
 border-bottom:1px solid #ccd3da;padding-bottom:.2em}
table{border-collapse:collapse;margin:.5em 0}td,th{padding:4px 10px;border-bottom:1px solid
 #e3e7eb;text-align:left;vertical-align:top}td.num{text-align:right;white-space:nowrap;
 font-variant-numeric:tabular-nums}th{background:#eef1f4}.sub{color:#5b6670}
blockquote{margin:.5em 0;padding:.4em 1em;border-left:4px solid #ccd3da;background:#f7f8fa}
figure{margin:1em 0}figure img{max-width:100%;height:auto;border:1px solid #e3e7eb}
figcaption{color:#5b6670;font-size:.92em}.verdict-impossible{color:#a4161a;font-weight:bold}
.verdict-doubtful{color:#b35c00;font-weight:bold}.verdict-ok{color:#2b6a3a}
"""


def _e(text) -> str:
    return html.escape("" if text is None else str(text), quote=True)


def _num(x, fmt: str) -> str:
    return "" if x is None else format(x, fmt)


def _cases_table(data: dict) -> str:
    cur = data["currency"]
    rows = []
    for role, c in [("baseline", data["baseline"])] + [("candidate", c)
                                                        for c in data["candidates"]]:
        lc, e = c["lcoe_real_per_kwh"], c["energy_per_kw_kwh"]
        rows.append(f"<tr><td>{_e(c['name'])}</td><td>{role}</td><td>{_e(c['mount'])}</td>"
                    f"<td class=\"num\">{_num(lc.get('q10'), '.4f')}</td>"
                    f"<td class=\"num\">{_num(lc.get('q50'), '.4f')}</td>"
                    f"<td class=\"num\">{_num(lc.get('q90'), '.4f')}</td>"
                    f"<td class=\"num\">{_num(e.get('q50'), ',.0f')}</td>"
                    f"<td class=\"num\">{_num(c['energy_per_cell_m2_kwh'].get('q50'), ',.1f')}"
                    f"</td><td class=\"num\">"
                    f"{_num(c['energy_per_land_m2_kwh'].get('q50'), ',.1f')}</td></tr>")
    return ("<table><tr><th>Case</th><th>Role</th><th>Mount</th>"
            f"<th>LCOE real P10 [{_e(cur)}/kWh]</th><th>P50 [{_e(cur)}/kWh]</th>"
            f"<th>P90 [{_e(cur)}/kWh]</th><th>Energy P50 [kWh/kW/year]</th>"
            "<th>Energy P50 [kWh/m2 of cells/year]</th><th>Energy P50 [kWh/m2 of land/year]"
            "</th></tr>" + "".join(rows) + "</table>")


def _claim_section(c: dict, cur: str) -> str:
    claim = c.get("claim") or {}
    parts = [f"<h3>{_e(c['name'])}</h3>"]
    if claim.get("text"):
        parts.append(f"<p>The claim, as stated:</p><blockquote>{_e(claim['text'])}"
                     f"</blockquote>")
    stated = [(k, v) for k, v in claim.items() if k != "text"]
    if stated:
        parts.append("<p class=\"sub\">Stated figures: " + "; ".join(
            f"{_e(k.replace('_', ' '))} = {_e(v)}" for k, v in stated) + "</p>")
    parts.append(f"<p>{_e(c['summary'])}</p>")
    r = c["lcoe_ratio"]
    parts.append(
        "<table><tr><th>Quantity</th><th>Value</th><th>Unit</th></tr>"
        f"<tr><td>Claim ratio tested ({_e(c['claim_ratio_source'])})</td>"
        f"<td class=\"num\">{c['claim_ratio']:.3g}</td><td>-</td></tr>"
        f"<tr><td>LCOE ratio P10 / P50 / P90</td><td class=\"num\">{r['q10']:.3f} / "
        f"{r['q50']:.3f} / {r['q90']:.3f}</td><td>-</td></tr>"
        f"<tr><td>Probability that the claim holds</td><td class=\"num\">"
        f"{100 * c['prob_claim_holds']:.1f}</td><td>% of trials</td></tr>"
        f"<tr><td>Break-even capex: claim holds at the median / with 90 % probability</td>"
        f"<td class=\"num\">{_num(c.get('breakeven_capex_per_kw_median'), ',.0f')} / "
        f"{_num(c.get('breakeven_capex_per_kw_p90'), ',.0f')}</td><td>{_e(cur)}/kW</td></tr>"
        f"<tr><td>Break-even energy: claim holds at the median / with 90 % probability</td>"
        f"<td class=\"num\">{_num(c.get('breakeven_energy_per_kw_kwh_median'), ',.0f')} / "
        f"{_num(c.get('breakeven_energy_per_kw_kwh_p90'), ',.0f')}</td><td>kWh/kW/year</td>"
        "</tr></table>")
    parts.append(_audit_table(c.get("audit") or []))
    drivers = c.get("drivers") or []
    if drivers:
        parts.append("<p>What the ratio depends on (Sobol indices of the ratio; S1 alone, ST "
                     "with interactions):</p><table><tr><th>Input or group</th>"
                     "<th>S1 [-]</th><th>ST [-]</th></tr>" + "".join(
                         f"<tr><td>{_e(d.get('label', d['input']))}</td><td class=\"num\">"
                         f"{d['S1']:.3f} &plusmn; {d['S1_conf']:.3f}</td><td class=\"num\">"
                         f"{d['ST']:.3f} &plusmn; {d['ST_conf']:.3f}</td></tr>"
                         for d in drivers[:8]) + "</table>")
    return "".join(parts)


def _audit_table(findings: list) -> str:
    if not findings:
        return ""
    return ("<table><tr><th>Audit check</th><th>Verdict</th><th>Finding</th></tr>" + "".join(
        f"<tr><td>{_e(f.get('label') or str(f.get('check', '')).replace('_', ' '))}</td>"
        f"<td class=\"verdict-{_e(str(f.get('verdict', '')).lower())}\">"
        f"{_e(f.get('verdict'))}</td><td>{_e(f.get('message'))}</td></tr>"
        for f in findings) + "</table>")


def _loss_chains(data: dict) -> str:
    cases = [data["baseline"]] + list(data["candidates"])
    keys = [k for k in LOSS_LABELS if any(k in (c.get("loss_chain_kwh") or {}) for c in cases)]
    if not keys:
        return ""
    head = "".join(f"<th>{_e(c['name'])} [kWh/kW/year]</th>" for c in cases)
    rows = []
    for k in keys:
        cells = []
        for c in cases:
            v = (c.get("loss_chain_kwh") or {}).get(k)
            text = "" if v is None else format(v / c["dc_capacity_kw"], ",.0f")
            cells.append(f"<td class=\"num\">{text}</td>")
        rows.append(f"<tr><td>{_e(LOSS_LABELS[k])}</td>{''.join(cells)}</tr>")
    return ("<h2>Loss chains side by side</h2><p class=\"sub\">Energy per kW of nameplate in "
            "the first year after each stage, from nameplate x plane-of-array irradiation to "
            "delivered AC energy (deterministic case).</p><table><tr><th>Stage</th>" + head +
            "</tr>" + "".join(rows) + "</table>")


def compare_report_html(data: dict, figures: dict | None = None,
                        extra_sections: list[str] | None = None) -> str:
    """The comparison's report page as one HTML string.

    Parameters
    ----------
    data : dict
        The content of ``comparison.json`` (see :func:`lcoe.export.compare_outputs.
        comparison_dict`).
    figures : dict of str to bytes, optional
        PNG bytes by file name.
    extra_sections : list of str, optional
        HTML sections appended after the loss chains (already escaped by their author).

    Returns
    -------
    str
        A complete, self-contained HTML document.
    """
    cur = data["currency"]
    base = data["baseline"]
    title = f"{', '.join(c['name'] for c in data['candidates'])} against {base['name']}"
    body = [f"<h1>{_e(title)}</h1>",
            f"<p class=\"sub\">{data['samples']:,} Monte Carlo trials ({_e(data['method'])}, "
            f"seed {_e(data['seed'])}) with common random numbers: every case sees the same "
            "draw of every input it shares with another, so the ratio of their costs is "
            "compared trial by trial.</p>",
            "<h2>The cases</h2>", _cases_table(data),
            "<h2>The claims, tested</h2>"]
    body += [_claim_section(c, cur) for c in data["candidates"]]
    body.append("<h3>Physics audit of the baseline</h3>" + _audit_table(base.get("audit")
                                                                         or []))
    body.append(_loss_chains(data))
    body += list(extra_sections or [])
    if figures:
        body.append("<h2>Pictures</h2>")
        for name, png in figures.items():
            src = base64.b64encode(png).decode("ascii")
            cap = CAPTIONS.get(name, name)
            body.append(f"<figure><img alt=\"{_e(cap)}\" src=\"data:image/png;base64,{src}\">"
                        f"<figcaption>{_e(cap)}</figcaption></figure>")
    from lcoe.case.labels import humanize

    labels = data.get("labels") or {}
    notes = list(dict.fromkeys(humanize(n, labels) for n in list(data.get("notes") or []) + [
        n for c in data["candidates"] for n in c.get("drivers_notes") or []]))
    if notes:
        body.append("<h2>Notes</h2><ul>" + "".join(f"<li>{_e(n)}</li>" for n in notes)
                    + "</ul>")
    body.append("<h2>How it is computed</h2><p>" + _e(data.get("how", "")) + "</p>")
    body.append("<h2>Cautions</h2><ul>" + "".join(f"<li>{_e(c)}</li>"
                                                  for c in data.get("cautions") or []) + "</ul>")
    prov = data.get("provenance") or {}
    prov_rows = [("Seed", data.get("seed")), ("Date (UTC)", prov.get("date_utc")),
                 ("Command line", prov.get("command"))]
    prov_rows += [(c["name"], f"{c['source']} (SHA-256 {c['sha256']})")
                  for c in [base] + list(data["candidates"])]
    prov_rows += list((prov.get("versions") or {}).items())
    body.append("<h2>Provenance</h2><table>" + "".join(
        f"<tr><td>{_e(k)}</td><td>{_e(v)}</td></tr>" for k, v in prov_rows) + "</table>")
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{_e(title)} - lcoe comparison</title><style>{_CSS}</style></head>"
            "<body>" + "\n".join(b for b in body if b) + "</body></html>\n")
