"""Outputs of ``lcoe compare``: ``comparison.json``, pictures and ``comparison.xlsx``.

The exporters read a :class:`lcoe.study.compare.ComparisonResult` and compute nothing but
formatting: every number is the engine's.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from lcoe.export.staging import staged
from lcoe.export.summary import _clean
from lcoe.study.audit import audit_sentence, worst_verdict
from lcoe.study.claim_ratio import claim_sentence
from lcoe.study.compare import ComparisonResult, drivers, input_labels

SCHEMA_VERSION = 1

METHOD = (
    "Monte Carlo over every case with common random numbers: an uncertain input that cases "
    "share by dotted path and distribution (and the persistent energy components and the "
    "year-to-year weather) is drawn once per trial for all of them; the LCOE ratio is taken "
    "trial by trial. The claim holds in a trial when LCOE_candidate <= claim ratio x "
    "LCOE_baseline. LCOE is affine in the candidate's capex per kW and of the form A/s + B in "
    "a factor s on its energy, so the break-even capex and energy are solved exactly per "
    "trial; the claim holds in 50 % / 90 % of trials at or below the median / 10th percentile "
    "of the break-even capex (at or above the median / 90th percentile of the break-even "
    "energy). Drivers: Sobol indices of the ratio over the inputs of both cases, year-to-year "
    "weather left out."
)

#: Picture file names.
PICTURES = ("lcoe_cumulative.png", "lcoe_ratio.png")


def _stats_block(values: np.ndarray, deterministic: float) -> dict:
    from lcoe.uncertainty.stats import stats

    return {"deterministic": float(deterministic), **stats(values)}


def comparison_dict(result: ComparisonResult, provenance: dict | None = None) -> dict:
    """The content of ``comparison.json`` as a plain dict (see the module docstring)."""
    cur = result.currency
    labels = input_labels(result)
    cases = []
    for o in result.cases:
        e, t = o.base.energy, o.trials
        claim = {k.split(".", 1)[1]: o.case[k] for k in o.case.values
                 if k.startswith("claim.") and o.case[k] is not None}
        cases.append({
            "name": o.name, "source": o.case.source, "sha256": o.case.sha256,
            "mount": o.case["plant.mount"], "dc_capacity_kw": o.case["plant.dc_capacity_kw"],
            "lcoe_real_per_kwh": _stats_block(t.lcoe_real, o.base.cashflow.lcoe_real[0]),
            "lcoe_nominal_per_kwh": _stats_block(t.lcoe_nominal,
                                                 o.base.cashflow.lcoe_nominal[0]),
            "energy_per_kw_kwh": _stats_block(t.energy_per_kw_kwh,
                                              e.specific_yield_kwh_per_kw[0]),
            "energy_per_cell_m2_kwh": _stats_block(t.energy_per_cell_m2_kwh,
                                                   e.energy_per_cell_m2_kwh[0]),
            "energy_per_land_m2_kwh": _stats_block(t.energy_per_land_m2_kwh,
                                                   e.energy_per_land_m2_kwh[0]),
            "first_year_energy_kwh": e.annual_kwh[0],
            "poa_irradiation_kwh_m2": e.poa_kwh_m2[0],
            "cell_area_m2": e.cell_area_m2[0], "land_area_m2": e.land_area_m2[0],
            "n_bodies": None if e.n_bodies is None else e.n_bodies[0],
            "loss_chain_kwh": {k: float(v[0]) for k, v in e.loss_chain_kwh.items()},
            "claim": claim, "audit": o.audit, "audit_worst": worst_verdict(o.audit),
            "cautions": o.cautions,
        })
    candidates = []
    for cl in result.claims:
        o = result.cases[cl.index]
        st = cl.stats
        sob = cl.sobol
        candidates.append({
            **cases[cl.index],
            "claim_ratio": cl.claim_ratio, "claim_ratio_source": cl.claim_ratio_source,
            "lcoe_ratio": {k: st[k] for k in ("q10", "q50", "q90", "mean")},
            "prob_claim_holds": st["prob_claim_holds"],
            **{k: st[k] for k in ("breakeven_capex_per_kw_median", "breakeven_capex_per_kw_p90",
                                  "breakeven_energy_per_kw_kwh_median",
                                  "breakeven_energy_per_kw_kwh_p90")},
            "summary": claim_sentence(o.name, result.baseline.name, cl.claim_ratio, st, cur),
            "drivers": _labelled(drivers(cl, top=len(sob.rows) if sob else 0), labels),
            "drivers_method": None if sob is None else sob.method,
            "drivers_notes": list(cl.sobol_notes) + ([] if sob is None else sob.warnings),
        })
    shared = [{"input": c.dist.name, "distribution": c.dist.describe(), "group": c.dist.group,
               "cases": [result.cases[i].name for i in c.cases], "shared": c.shared}
              for c in result.design.columns]
    return _clean({
        "schema_version": SCHEMA_VERSION, "currency": cur, "samples": result.samples,
        "seed": result.seed, "method": result.method, "how": METHOD,
        "baseline": cases[0], "candidates": candidates, "pairs": result.pairs,
        "inputs": shared, "notes": result.notes, "labels": labels,
        "cautions": _cautions(result), **(provenance or {}),
        **({"value_of_information": result.voi.to_summary()} if result.voi else {}),
    })


def _labelled(rows: list, labels: dict) -> list:
    """Driver rows with a human ``label`` (unit included) beside the dotted ``input``."""
    from lcoe.case.labels import group_label

    out = []
    for r in rows:
        members = r.get("members") or [r["input"]]
        text = labels.get(r["input"], r["input"]) if members == [r["input"]] else \
            group_label(r["input"], len(members))
        out.append({**r, "label": text})
    return out


def _cautions(result: ComparisonResult) -> list[str]:
    from lcoe.export.workbook.layout import CAUTIONS

    out = list(CAUTIONS)
    for o in result.cases:
        out += [c for c in o.cautions if c not in out]
    return out


def comparison_json(result: ComparisonResult, provenance: dict | None = None) -> str:
    """``comparison.json`` text."""
    return json.dumps(comparison_dict(result, provenance), indent=2, ensure_ascii=False) + "\n"


def render_figures(result: ComparisonResult) -> dict[str, bytes]:
    """PNG bytes by file name: the cases' LCOE and the candidates' ratio, as cumulative curves."""
    from lcoe.export.plots import figure_png

    out = {name: figure_png(fig) for name, fig in build_figures(result).items()}
    if result.voi is not None:
        from lcoe.export.voi_outputs import PICTURE, voi_png

        out[PICTURE] = voi_png(result.voi)
    return out


def build_figures(result: ComparisonResult) -> dict:
    """The comparison's pictures as matplotlib Figures by file name.

    Case i keeps colour ``CASE_COLORS[i]`` in both pictures; each claimed bound is drawn once
    (one line per distinct ratio) and each candidate's probability goes in its own legend entry.
    """
    from lcoe.export.plots import CASE_COLORS, GREY, fig_cumulative

    cur = result.currency
    fig = fig_cumulative({o.name: o.trials.lcoe_real for o in result.cases},
                         f"LCOE real [{cur}/kWh]",
                         title=f"LCOE of the compared cases ({result.samples:,} trials, common "
                               f"random numbers)")
    ax = fig.axes[0]
    base_median = float(np.median(result.baseline.trials.lcoe_real))
    ax.axvline(base_median, color=GREY, linewidth=1.0, linestyle="--")
    ax.text(base_median, 0.97, "baseline median ", color=GREY, fontsize=8, rotation=90,
            va="top", ha="right")
    out = {"lcoe_cumulative.png": fig}
    curves = {f"{result.cases[c.index].name}: at most {c.claim_ratio:.3g} in "
              f"{100 * c.stats['prob_claim_holds']:.1f} % of trials": c.ratio
              for c in result.claims}
    fig = fig_cumulative(curves, "LCOE ratio, candidate / baseline (trial by trial) [-]",
                         title=f"Cost per kWh relative to {result.baseline.name}",
                         colors=[CASE_COLORS[c.index % len(CASE_COLORS)]
                                 for c in result.claims])
    ax = fig.axes[0]
    ax.axvline(1.0, color=GREY, linewidth=0.8)
    for bound in sorted({round(c.claim_ratio, 12) for c in result.claims}):
        ax.axvline(bound, color="black", linewidth=1.2, linestyle="--",
                   label=f"claimed bound {bound:.3g}")
    ax.legend(loc="lower right", frameon=False, fontsize=8)
    left = min([c.claim_ratio for c in result.claims] +
               [float(np.quantile(c.ratio, 0.005)) for c in result.claims])
    right = max([1.0] + [float(np.quantile(c.ratio, 0.995)) for c in result.claims])
    pad = 0.05 * (right - left)
    ax.set_xlim(left - pad, right + pad)
    out["lcoe_ratio.png"] = fig
    return out


def write_comparison_workbook(result: ComparisonResult, path: Path,
                              provenance: dict | None = None) -> None:
    """``comparison.xlsx``: About, Comparison, Audit, Drivers, Inputs, Trials (and Value of
    information) sheets."""
    from openpyxl import Workbook

    from lcoe.export.workbook.layout import header, put, put_text, title, widths
    from lcoe.export.workbook.stream import add_number_table, save_workbook

    data = comparison_dict(result, provenance)
    cur = result.currency
    wb = Workbook()
    ws = wb.active
    ws.title = "About"
    title(ws, 1, "Comparison of cases and test of the claims", 14)
    put_text(ws, 2, 1, f"Baseline: {result.baseline.name}. Candidates: "
                       + "; ".join(result.cases[c.index].name for c in result.claims) + ".")
    r = 4
    for c in data["candidates"]:
        put_text(ws, r, 1, c["summary"])
        r += 1
    r += 1
    title(ws, r, "Method")
    put_text(ws, r + 1, 1, METHOD)
    r += 3
    title(ws, r, "Notes and cautions")
    from lcoe.case.labels import humanize

    for line in [humanize(n, data["labels"]) for n in data["notes"]] + data["cautions"]:
        r += 1
        put_text(ws, r, 1, line)
    widths(ws, {"A": 160})

    ws = wb.create_sheet("Comparison")
    names = [o.name for o in result.cases]
    header(ws, 1, ["Quantity", "Unit"] + names)
    rows = [("Role", "-", ["baseline"] + ["candidate"] * (len(names) - 1), None)]
    blocks = (("lcoe_real_per_kwh", "LCOE real", f"{cur}/kWh", "0.00000"),
              ("energy_per_kw_kwh", "Energy per kW", "kWh/kW/year", "#,##0"),
              ("energy_per_cell_m2_kwh", "Energy per m2 of cells", "kWh/m2/year", "#,##0.0"),
              ("energy_per_land_m2_kwh", "Energy per m2 of land", "kWh/m2/year", "#,##0.0"))
    all_cases = [data["baseline"]] + data["candidates"]
    for key, label, unit, fmt in blocks:
        for q, qlabel in (("deterministic", "at the case's values"), ("q10", "10th pct"),
                          ("q50", "median"), ("q90", "90th pct")):
            rows.append((f"{label}, {qlabel}", unit, [c[key][q] for c in all_cases], fmt))
    rows += [("Cell area", "m2", [c["cell_area_m2"] for c in all_cases], "#,##0"),
             ("Land area", "m2", [c["land_area_m2"] for c in all_cases], "#,##0"),
             ("Bodies", "-", [c["n_bodies"] for c in all_cases], "#,##0.0"),
             ("Audit, worst verdict", "-", [c["audit_worst"] for c in all_cases], None)]
    cand = [None] + data["candidates"]

    def per_candidate(get):
        return [None if c is None else get(c) for c in cand]

    rows += [("Claim as stated (quoted from the case file)", "-",
              per_candidate(lambda c: c["claim"].get("text")), None),
             ("Claim ratio tested", "-", per_candidate(lambda c: c["claim_ratio"]), "0.000"),
             ("Source of the claim ratio", "-",
              per_candidate(lambda c: c["claim_ratio_source"]), None)]
    for q, qlabel in (("q10", "10th pct"), ("q50", "median"), ("q90", "90th pct")):
        rows.append((f"LCOE ratio to the baseline, {qlabel}", "-",
                     per_candidate(lambda c, q=q: c["lcoe_ratio"][q]), "0.000"))
    rows += [("Probability that the claim holds", "-",
              per_candidate(lambda c: c["prob_claim_holds"]), "0.0%"),
             ("Break-even capex, claim holds at the median", f"{cur}/kW",
              per_candidate(lambda c: c["breakeven_capex_per_kw_median"]), "#,##0"),
             ("Break-even capex, claim holds with 90 % probability", f"{cur}/kW",
              per_candidate(lambda c: c["breakeven_capex_per_kw_p90"]), "#,##0"),
             ("Break-even energy, claim holds at the median", "kWh/kW/year",
              per_candidate(lambda c: c["breakeven_energy_per_kw_kwh_median"]), "#,##0"),
             ("Break-even energy, claim holds with 90 % probability", "kWh/kW/year",
              per_candidate(lambda c: c["breakeven_energy_per_kw_kwh_p90"]), "#,##0")]
    for i, (label, unit, values, fmt) in enumerate(rows, start=2):
        put_text(ws, i, 1, label)
        put_text(ws, i, 2, unit)
        for j, v in enumerate(values):
            if fmt is None or v is None or isinstance(v, str):
                put_text(ws, i, 3 + j, "" if v is None else v)
            else:
                put(ws, i, 3 + j, v, fmt)
    r = len(rows) + 3
    if data["pairs"]:
        title(ws, r, "Every later case against every earlier one")
        header(ws, r + 1, ["Case", "Reference", "Claim ratio", "Ratio 10th pct", "Ratio median",
                           "Ratio 90th pct", "Probability the claim holds"])
        for i, p in enumerate(data["pairs"], start=r + 2):
            put_text(ws, i, 1, p["case"])
            put_text(ws, i, 2, p["reference"])
            for j, (k, fmt) in enumerate((("claim_ratio", "0.000"), ("q10", "0.000"),
                                          ("q50", "0.000"), ("q90", "0.000"),
                                          ("prob_claim_holds", "0.0%")), start=3):
                put(ws, i, j, p[k], fmt)
    widths(ws, {"A": 52, "B": 14})
    for j in range(len(names)):
        ws.column_dimensions[chr(ord("C") + j)].width = 30
    ws.freeze_panes = "C2"

    ws = wb.create_sheet("Audit")
    header(ws, 1, ["Case", "Check", "Verdict", "Message", "Key"])
    r = 2
    for c in all_cases:
        for f in c["audit"]:
            for j, k in enumerate(("label", "verdict", "message", "check"), start=2):
                put_text(ws, r, j, f.get(k) or f["check"])
            put_text(ws, r, 1, c["name"])
            r += 1
        put_text(ws, r, 1, c["name"])
        put_text(ws, r, 2, "summary")
        put_text(ws, r, 4, audit_sentence(c["audit"]))
        r += 1
    widths(ws, {"A": 34, "B": 26, "C": 12, "D": 150})

    ws = wb.create_sheet("Drivers")
    header(ws, 1, ["Candidate", "Input or group", "Keys of its inputs (as in comparison.json)",
                   "S1", "S1 +/-", "ST", "ST +/-", "ST interval includes 0"])
    r = 2
    for c in data["candidates"]:
        for d in c["drivers"]:
            put_text(ws, r, 1, c["name"])
            put_text(ws, r, 2, d["label"])
            put_text(ws, r, 3, ", ".join(d["members"]))
            for j, k in enumerate(("S1", "S1_conf", "ST", "ST_conf"), start=4):
                put(ws, r, j, d[k], "0.000")
            put(ws, r, 8, d["ST_includes_zero"])
            r += 1
        for note in c["drivers_notes"]:
            put_text(ws, r, 1, c["name"])
            put_text(ws, r, 2, humanize(note, data["labels"]))
            r += 1
    widths(ws, {"A": 34, "B": 60, "C": 60})

    ws = wb.create_sheet("Inputs")
    header(ws, 1, ["Input", "Distribution", "Sobol group", "Cases", "Shared (one draw per "
                   "trial for all these cases)"])
    for i, inp in enumerate(data["inputs"], start=2):
        put_text(ws, i, 1, inp["input"])
        put_text(ws, i, 2, inp["distribution"])
        put_text(ws, i, 3, inp["group"] or "")
        put_text(ws, i, 4, "; ".join(inp["cases"]))
        put(ws, i, 5, inp["shared"])
    widths(ws, {"A": 60, "B": 60, "C": 40, "D": 80})

    ws = wb.create_sheet("Trials")
    labels = [f"LCOE real {o.name} [{cur}/kWh]" for o in result.cases]
    labels += [f"Ratio {result.cases[c.index].name} / baseline [-]" for c in result.claims]
    header(ws, 1, ["Trial"] + labels)
    cols = [o.trials.lcoe_real for o in result.cases] + [c.ratio for c in result.claims]
    add_number_table(ws, 2, 1, [np.arange(1, result.samples + 1)] +
                     [np.asarray(c[:result.samples], dtype=float) for c in cols],
                     ["General"] + ["0.00000"] * len(cols))
    if result.voi is not None:
        from lcoe.export.voi_outputs import write_voi_sheet

        write_voi_sheet(wb, result.voi)
    save_workbook(wb, path)


def write_compare_outputs(result: ComparisonResult, out_dir, force: bool = False,
                          replace_own: bool = False, provenance: dict | None = None) -> Path:
    """Write ``comparison.json``, the pictures and ``comparison.xlsx`` into ``out_dir``.

    ``out_dir`` is a folder, published whole in one rename (:func:`lcoe.export.staging.publish`; a
    non-empty folder is refused unless ``force``), or the stage of a command that holds it.
    """
    with staged(out_dir, force=force, replace_own=replace_own) as out:
        out.write_text("comparison.json", comparison_json(result, provenance))
        figures = render_figures(result)
        for name, png in figures.items():
            out.write_with(name, lambda p, png=png: p.write_bytes(png))
        if result.voi is not None:
            from lcoe.export.voi_outputs import PAGE, PICTURE, voi_page_html

            out.write_text(PAGE, voi_page_html(result.voi, figures[PICTURE]))
        out.write_with("comparison.xlsx",
                       lambda p: write_comparison_workbook(result, p, provenance))
        from lcoe.export.compare_report import compare_report_html

        data = comparison_dict(result, provenance)
        extra, pictures = [], dict(figures)
        if result.voi is not None:  # the section itself, with its chart, on the page
            from lcoe.export.voi_outputs import PICTURE, voi_section_html

            extra.append(voi_section_html(result.voi, pictures.pop(PICTURE, None)))
        out.write_text("report.html", compare_report_html(data, pictures, extra))
    return out.target
