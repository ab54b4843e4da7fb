"""``report.html`` of ``lcoe sweep``: one self-contained page for a policy reader.

It reads the plain table of the sweep (:func:`lcoe.export.sweep_outputs.sweep_dict`) and the
two pictures' PNG bytes: the ranking of technologies at every site, the map of the technology
most often cheapest, and the table with units. No script, nothing loaded from outside; every
text from the plan is escaped.
"""

from __future__ import annotations

import base64

from lcoe.export.compare_report import _CSS, _e

CAPTIONS = {
    "sweep_ranking.png": "Median real LCOE with 10th-90th percentile bars at every site; a "
                         "filled marker is the technology most often cheapest there.",
    "sweep_sites.png": "Technology most often cheapest at each site (marker size: its "
                       "probability of being cheapest).",
}


def voi_section_html(rows: list, currency: str, names: dict) -> str:
    """Section of the value of information at each site (``lcoe sweep --voi``).

    Parameters
    ----------
    rows : list of dict
        :func:`lcoe.study.value_of_information.sweep_site_voi` (``value_of_information`` of
        sweep.json).
    currency : str
    names : dict
        Technology label -> its readable name.
    """
    from lcoe.study.value_of_information import CAUTION

    if not rows:
        return ""

    def mwh(x: float) -> str:
        return f"{max(1000 * x, 0.0):.3f}"  # no "-0.000" from rounding noise

    cur = _e(currency)
    lines = []
    for r in rows:
        top = r["evppi"][0] if r["evppi"] else None
        flag = " (below its error)" if top and top["below_se"] else ""
        lines.append(
            f"<tr><td>{_e(r['site'])}</td><td>{_e(names.get(r['choice_now'], r['choice_now']))}"
            f"</td><td class=\"num\">{mwh(r['evpi_per_kwh'])} &plusmn; "
            f"{mwh(r['evpi_se_per_kwh'])}</td>"
            + (f"<td>{_e(top.get('label', top['name']))}{_e(flag)}</td><td class=\"num\">"
               f"{mwh(top['value'])} &plusmn; {mwh(top['se'])}</td>" if top else
               "<td></td><td></td>") + "</tr>")
    return ("<h2>Worth up to ... to learn before choosing the technology</h2>"
            f"<p>{_e(rows[0]['basis'])}. Shown per MWh delivered; {rows[0]['n_trials']:,} "
            "trials per site, none left out. EVPI: everything resolved; EVPPI: one input alone "
            "(regression method of Strong, Oakley &amp; Brennan 2014).</p>"
            f"<table><tr><th>Site</th><th>Choice with what is known now</th><th>EVPI "
            f"[{cur}/MWh]</th><th>Input most worth learning</th><th>Its EVPPI [{cur}/MWh]"
            "</th></tr>" + "".join(lines) + f"</table><p class=\"sub\">{_e(CAUTION)}</p>")


def sweep_report_html(data: dict, figures: dict | None = None) -> str:
    """The sweep's report page as one HTML string (``data``: the content of sweep.json)."""
    plan = data["plan"]
    cols = data["table"]["columns"]
    names = {t["label"]: t["name"] for t in data["technologies"]}
    rows = sorted(data["rows"], key=lambda r: (r["site"], r["lcoe_real_q50"]))
    digits = {"lcoe_real_q10": 4, "lcoe_real_q50": 4, "lcoe_real_q90": 4,
              "lcoe_nominal_q50": 4, "energy_p50_mwh": 1, "energy_p90_mwh": 1,
              "yield_p50_kwh_per_kw": 0, "yield_p90_kwh_per_kw": 0, "prob_cheapest": 3}

    def cell(r, k):
        if k not in digits:
            return f"<td>{_e(r[k])}</td>"
        return f"<td class=\"num\">{r[k]:,.{digits[k]}f}</td>"

    table = ("<table><tr>" + "".join(f"<th>{_e(c['header'])}</th>" for c in cols) + "</tr>"
             + "".join("<tr>" + "".join(cell(r, c["field"]) for c in cols) + "</tr>"
                       for r in rows) + "</table>")
    sites = ("<table><tr><th>Site</th><th>Most often cheapest</th><th>Its probability of being "
             "cheapest [-]</th><th>Cheapest by median LCOE</th></tr>" + "".join(
                 f"<tr><td>{_e(s['name'])}</td><td>{_e(names.get(s['cheapest'], s['cheapest']))}"
                 f"</td><td class=\"num\">{s['prob_cheapest']:.3f}</td><td>"
                 f"{_e(names.get(s['cheapest_by_median'], s['cheapest_by_median']))}</td></tr>"
                 for s in data["sites"]) + "</table>")
    title = f"Sweep: {len(data['sites'])} sites x {len(data['technologies'])} technologies"
    body = [f"<h1>{_e(title)}</h1>",
            f"<p class=\"sub\">{plan['samples']:,} Monte Carlo trials per site x technology "
            f"(seed {_e(plan['seed'])}, {_e(plan['method'])}), common random numbers; costs in "
            f"{_e(plan['currency'])}. Plan <code>{_e(plan['source'])}</code>.</p>",
            "<h2>Which technology is cheapest where</h2>", sites,
            "<h2>Every site x technology</h2>", table,
            voi_section_html(data.get("value_of_information") or [], plan["currency"], names)]
    if data.get("failures"):
        body.append("<h2>Runs that failed</h2><ul>" + "".join(
            f"<li>{_e(f['site'])}, {_e(names.get(f['technology'], f['technology']))}: "
            f"{_e(f['error'])}</li>" for f in data["failures"]) + "</ul>")
    for name, png in (figures or {}).items():
        src = base64.b64encode(png).decode("ascii")
        cap = CAPTIONS.get(name, name)
        body.append(f"<figure><img alt=\"{_e(cap)}\" src=\"data:image/png;base64,{src}\">"
                    f"<figcaption>{_e(cap)}</figcaption></figure>")
    from lcoe.case.labels import humanize, schema_labels

    labels = schema_labels(plan["currency"])
    body.append("<h2>Notes and cautions</h2><ul>" + "".join(
        f"<li>{_e(humanize(n, labels))}</li>" for n in data.get("notes") or []) + "</ul>")
    body.append(f"<p class=\"sub\">Formula: <code>{_e(data.get('formula', ''))}</code></p>")
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{_e(title)} - lcoe sweep</title><style>{_CSS}</style></head>"
            "<body>" + "\n".join(b for b in body if b) + "</body></html>\n")
