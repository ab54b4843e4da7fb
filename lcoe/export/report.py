"""``report.html``: one self-contained page of a run, to read or to mail to a colleague.

The page holds the case, the headline numbers, the pictures (PNG embedded as base64, see
:mod:`lcoe.export.plots`), the drivers in plain words, the audit findings when present, the
notes, the cautions and the provenance. It has no script and loads nothing from outside.
Every text that comes from the case or the user is escaped with :func:`html.escape`.
"""

from __future__ import annotations

import base64
import html
from pathlib import Path

from lcoe.export.plots import output_label
from lcoe.export.workbook.layout import CAUTIONS
from lcoe.money.cashflow import LCOE_FORMULA
from lcoe.study.results import RunResult

#: Caution specific to concentrated sunlight, shown after :data:`CAUTIONS`.
CONCENTRATION_CAUTION = (
    "Concentrated sunlight burns skin, eyes and materials within seconds; a concentrator or "
    "receiver that loses tracking or cooling can be destroyed within seconds to minutes. "
    "Such systems are designed, built and operated only under local codes by licensed "
    "professionals."
)

#: Captions of the pictures, by file name.
CAPTIONS = {
    "lcoe_distribution.png": "Real LCOE across the Monte Carlo trials, with the 10th, 50th "
                             "and 90th percentiles.",
    "sobol_indices.png": "Sobol indices: the share of the output's variance each input (or "
                         "group) explains on its own (S1) and with its interactions (ST).",
    "tornado.png": "Tornado: the output when one input sits at its 10th or 90th percentile "
                   "and all others at the base case.",
    "monthly_energy.png": "Delivered energy by month in the first year.",
    "loss_chain.png": "Loss chain from nameplate x plane-of-array irradiation to delivered "
                      "AC energy.",
    "dscr_fan.png": "Debt service cover ratio by year across the trials.",
}

_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,Helvetica,Arial,sans-serif;
 max-width:980px;margin:24px auto;padding:0 16px;color:#1d2329;line-height:1.45}
h1{font-size:1.6em;margin-bottom:.2em}h2{font-size:1.2em;margin-top:1.6em;
 border-bottom:1px solid #ccd3da;padding-bottom:.2em}
table{border-collapse:collapse;margin:.5em 0}td,th{padding:4px 10px;border-bottom:1px solid
 #e3e7eb;text-align:left;vertical-align:top}td.num{text-align:right;white-space:nowrap;
 font-variant-numeric:tabular-nums}th{background:#eef1f4}.headline{font-size:1.15em}.sub{color:#5b6670}
figure{margin:1em 0}figure img{max-width:100%;height:auto;border:1px solid #e3e7eb}
figcaption{color:#5b6670;font-size:.92em}.verdict-impossible{color:#a4161a;font-weight:bold}
.verdict-doubtful{color:#b35c00;font-weight:bold}.verdict-ok{color:#2b6a3a}
code{background:#f3f5f7;padding:1px 4px}
.cautions li{margin-bottom:.3em}
"""


def _e(text) -> str:
    return html.escape("" if text is None else str(text), quote=True)


def _row(label, value, unit="", note="") -> str:
    return (f"<tr><td>{_e(label)}</td><td class=\"num\">{_e(value)}</td><td>{_e(unit)}</td>"
            f"<td class=\"sub\">{_e(note)}</td></tr>")


def _headline_rows(result: RunResult) -> list[str]:
    cur = result.case["case.currency"]
    e, c = result.base.energy, result.base.cashflow
    rows = [
        _row("LCOE real", f"{c.lcoe_real[0]:.4f}", f"{cur}/kWh",
             f"real discount rate {100 * c.real_rate[0]:.2f} %"),
        _row("LCOE nominal", f"{c.lcoe_nominal[0]:.4f}", f"{cur}/kWh",
             f"nominal discount rate {100 * c.nominal_rate[0]:.2f} %"),
        _row("NPV of costs", f"{c.pv_costs[0]:,.0f}", cur, "at the nominal rate"),
        _row("First-year energy", f"{e.annual_kwh[0]:,.0f}", "kWh"),
        _row("Specific yield", f"{e.specific_yield_kwh_per_kw[0]:,.1f}", "kWh/kW"),
        _row("Performance ratio", f"{e.performance_ratio[0]:.3f}", "-", "IEC 61724-1"),
        _row("Clipping loss", f"{100 * e.clipping_loss_fraction[0]:.2f}", "%",
             "of inverter output"),
    ]
    unc = result.extras.get("uncertainty")
    if unc is not None:
        s = unc.stats["lcoe_real_per_kwh"]
        rows.append(_row("LCOE real, 10th / 50th / 90th percentile",
                         f"{s['q10']:.4f} / {s['q50']:.4f} / {s['q90']:.4f}", f"{cur}/kWh",
                         f"{unc.trials.n:,} trials, seed {unc.seed}"))
        ex = unc.exceedance.sampled
        if all(k in ex for k in ("p50", "p90", "p99")):
            rows.append(_row("First-year energy P50 / P90 / P99 (one year)",
                             f"{ex['p50'] / 1e6:,.2f} / {ex['p90'] / 1e6:,.2f} / "
                             f"{ex['p99'] / 1e6:,.2f}", "GWh",
                             "P90 = exceeded with 90 % probability"))
    bank = result.extras.get("bankability")
    if bank is not None and hasattr(bank, "to_summary"):
        rows += _bank_rows(bank.to_summary(), cur)
    return rows


def _pct(x) -> str:
    return "-" if x is None else f"{100 * x:.2f}"


def _irr(b: dict, key: str, roots_key: str) -> tuple[str, str]:
    """Value and unit of an IRR: the investment root with every root beside it
    (:func:`lcoe.money.irr.irr_text`, as in the command line's table)."""
    from lcoe.money.irr import irr_text

    found = (b.get("irr_roots") or {}).get(roots_key) or {}
    text = irr_text(b.get(key), found.get("roots") or [], found.get("reason", ""), unit="")
    return text, ("%" if b.get(key) is not None else "")


def _bank_rows(b: dict, cur: str) -> list[str]:
    """Headline rows of the lender's view (from the bankability block's summary)."""
    rows = [
        _row("Debt", f"{b['debt']:,.0f}", cur, f"gearing {_pct(b['gearing'])} %; binding: "
                                               f"{b.get('binding_constraint') or '-'}"),
        _row("Minimum / average DSCR", f"{b['min_dscr']:.2f} / {b['avg_dscr']:.2f}", "-",
             f"LLCR {b['llcr']:.2f}") if b.get("debt") else
        _row("Minimum / average DSCR", "none", "-", b.get("no_debt_reason") or ""),
        _row("Equity IRR", *_irr(b, "equity_irr", "equity"),
             f"target {_pct(b.get('target_equity_irr'))} %"),
        _row("Project IRR after tax", *_irr(b, "project_irr", "project_post_tax")),
        _row("Break-even tariff", f"{b['breakeven_tariff_per_kwh']:.4f}", f"{cur}/kWh",
             "flat real, equity at its target IRR"),
    ]
    if b.get("prob_dscr_below_1") is not None:
        rows.append(_row("Odds of DSCR below 1.00 in some year",
                         _pct(b["prob_dscr_below_1"]), "%",
                         f"lock-up breach {_pct(b.get('prob_lockup'))} %"))
    return rows


def _case_rows(result: RunResult) -> list[str]:
    """The inputs a reader asks for first."""
    v = result.case.values
    cur = v["case.currency"]
    rows = [
        _row("Site", f"{v['site.latitude_deg']:.3f}, {v['site.longitude_deg']:.3f}", "deg",
             f"altitude {v['site.altitude_m']:g} m"),
        _row("Plant", f"{v['plant.dc_capacity_kw']:,.0f}", "kW DC",
             f"{v['plant.mount']}, DC/AC {v['plant.dc_ac_ratio']:g}"),
        _row("Capex", f"{v['costs.capex_per_kw']:,.0f}", f"{cur}/kW"),
        _row("Fixed O&M", f"{v['costs.fixed_om_per_kw_year']:,.1f}", f"{cur}/kW/year",
             "escalated with inflation"),
        _row("Discount rate (nominal) / inflation",
             f"{100 * v['finance.discount_rate']:.2f} / {100 * v['finance.inflation']:.2f}",
             "%"),
        _row("Life", f"{v['case.lifetime_years']}", "years",
             f"degradation {100 * v['plant.degradation_per_year']:.2f} %/year"),
    ]
    return rows


def _audit_html(findings) -> str:
    if not findings:
        return ""
    rows = []
    for f in findings:
        verdict = str(f.get("verdict", ""))
        rows.append(f"<tr><td>{_e(f.get('label') or f.get('check'))}</td><td class=\"verdict-"
                    f"{_e(verdict.lower())}\">{_e(verdict)}</td><td>{_e(f.get('message'))}"
                    f"</td></tr>")
    return ("<h2>Audit of physical limits</h2><table><tr><th>Check</th><th>Verdict</th>"
            "<th>Finding</th></tr>" + "".join(rows) + "</table>")


def _drivers_html(result: RunResult) -> str:
    sens = result.extras.get("sensitivity")
    if sens is None:
        return ""
    parts = ["<h2>What drives the result</h2>"]
    words = sens.plain_words()
    if words:
        parts.append(f"<p>{_e(words)}</p>")
    if sens.tornado:
        t = sens.tornado[0]
        lo, hi = sorted((t["y_low"], t["y_high"]))
        parts.append(f"<p>Moved alone between its 10th and 90th percentile, "
                     f"<b>{_e(sens.label(t['input']))}</b> moves {_e(output_label(sens.output))} from "
                     f"{lo:.4g} to {hi:.4g} (base case {t['y_base']:.4g}), the largest "
                     f"swing of any single input.</p>")
    return "".join(parts)


def _notes(result: RunResult) -> list[str]:
    notes = list(result.notes)
    unc = result.extras.get("uncertainty")
    if unc is not None:
        notes += list(unc.notes) + list(unc.exceedance.differences)
    sens = result.extras.get("sensitivity")
    if sens is not None:
        notes += list(sens.notes)
        if sens.sobol is not None:
            wide = [w for w in sens.sobol.warnings if "wide interval" in w]
            notes += [w for w in sens.sobol.warnings if "wide interval" not in w]
            if wide:
                notes.append(f"{len(wide)} Sobol indices have a confidence half-width above "
                             f"10 % of the index; more base samples give tighter intervals.")
    from lcoe.case.labels import humanize, labeller

    label = labeller(result.case)
    labels = dict(sens.labels) if sens is not None else {}
    if unc is not None:
        labels.update({d.name: label(d.name) for d in unc.spec.dists if d.name not in labels})
    return list(dict.fromkeys(humanize(n, labels) for n in notes))  # each caveat once


def report_html(result: RunResult, figures: dict[str, bytes] | None = None) -> str:
    """The report page as one HTML string.

    Parameters
    ----------
    result : RunResult
    figures : dict of str to bytes, optional
        PNG bytes by file name (from :func:`lcoe.export.plots.render_figures`); drawn here
        when omitted.

    Returns
    -------
    str
        A complete, self-contained HTML document.
    """
    if figures is None:
        from lcoe.export.plots import render_figures

        figures = render_figures(result)
    case = result.case
    prov = result.provenance or {}
    desc = case.values.get("case.description") or ""
    w = result.site.weather
    body = [
        f"<h1>{_e(case.name)}</h1>",
        f"<p class=\"sub\">{_e(desc)}</p>" if desc else "",
        "<p class=\"sub\">Cost of solar electricity computed by lcoe from hourly physics and a "
        "lifetime cash flow. Case file <code>" + _e(case.source) + "</code>; weather "
        + _e(w.name) + f" ({w.n_hours:,} hours).</p>",
        "<h2>The case</h2>",
        "<table>" + "".join(_case_rows(result)) + "</table>",
        "<h2>Headline numbers</h2>",
        "<table class=\"headline\"><tr><th>Quantity</th><th>Value</th><th>Unit</th>"
        "<th></th></tr>" + "".join(_headline_rows(result)) + "</table>",
        f"<p class=\"sub\">Formula: <code>{_e(LCOE_FORMULA)}</code></p>",
        _drivers_html(result),
        _audit_html(result.extras.get("audit")),
    ]
    bank = result.extras.get("bankability")
    figures = dict(figures)
    if bank is not None and hasattr(bank, "to_summary"):
        from lcoe.export.debt_section import debt_section_html

        body.append(debt_section_html(bank.to_summary(), case["case.currency"],
                                      figures.pop("dscr_fan.png", None)))
    if result.extras.get("resource_information") is not None:  # the lender's campaign value
        from lcoe.export.voi_outputs import resource_section_html

        body.append(resource_section_html(result.extras["resource_information"].to_summary(),
                                          case["case.currency"]))
    if figures:
        body.append("<h2>Pictures</h2>")
        for name, png in figures.items():
            data = base64.b64encode(png).decode("ascii")
            body.append(f"<figure><img alt=\"{_e(CAPTIONS.get(name, name))}\" "
                        f"src=\"data:image/png;base64,{data}\"><figcaption>"
                        f"{_e(CAPTIONS.get(name, name))}</figcaption></figure>")
    notes = _notes(result)
    if notes:
        body.append("<h2>Notes</h2><ul>" + "".join(f"<li>{_e(n)}</li>" for n in notes)
                    + "</ul>")
    body.append("<h2>Cautions</h2><ul class=\"cautions\">"
                + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS + (CONCENTRATION_CAUTION,))
                + "</ul>")
    prov_rows = [("Case file SHA-256", case.sha256), ("Seed", prov.get("seed")),
                 ("Date (UTC)", prov.get("date_utc")), ("Command line", prov.get("command"))]
    prov_rows += [(f"{k}", v) for k, v in (prov.get("versions") or {}).items()]
    body.append("<h2>Provenance</h2><table>" + "".join(
        f"<tr><td>{_e(k)}</td><td>{_e(v)}</td></tr>" for k, v in prov_rows) + "</table>")
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{_e(case.name)} - lcoe report</title><style>{_CSS}</style></head>"
            "<body>" + "\n".join(b for b in body if b) + "</body></html>\n")


def write_report(result: RunResult, path: Path, figures: dict[str, bytes] | None = None) -> None:
    """Write :func:`report_html` to ``path`` (UTF-8)."""
    Path(path).write_text(report_html(result, figures), encoding="utf-8")
