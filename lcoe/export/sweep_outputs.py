"""Files of a sweep: ``sweep.csv``, ``sweep.json``, ``sweep.xlsx`` and two charts.

The exporters read a :class:`lcoe.study.sweep.SweepResult` and compute nothing. User text (site and
technology names, notes) goes into the workbook as text cells, never formulas
(:func:`lcoe.export.workbook.layout.put_text`).
"""

from __future__ import annotations

import json
from pathlib import Path

from lcoe.export.cells import write_csv
from lcoe.export.plots import literal_text
from lcoe.export.summary import _clean
from lcoe.export.workbook.layout import put_text
from lcoe.money.cashflow import LCOE_FORMULA

SCHEMA_VERSION = 1
#: Fields of a sweep row (``sweep.json`` keys), in order.
CSV_COLUMNS = ("site", "technology", "lcoe_real_q10", "lcoe_real_q50", "lcoe_real_q90",
               "energy_p50_kwh", "energy_p90_kwh", "prob_cheapest")
#: The readable table of ``sweep.csv`` and the Sweep sheet: header (unit in brackets; the
#: currency replaces "currency"), the row field or derived quantity, decimals shown.
TABLE = (
    ("Site", "site", None),
    ("Technology", "technology_name", None),
    ("LCOE real P10 [currency/kWh]", "lcoe_real_q10", 4),
    ("LCOE real P50 [currency/kWh]", "lcoe_real_q50", 4),
    ("LCOE real P90 [currency/kWh]", "lcoe_real_q90", 4),
    ("LCOE nominal P50 [currency/kWh]", "lcoe_nominal_q50", 4),
    ("Energy P50 [MWh/year]", "energy_p50_mwh", 1),
    ("Energy P90 [MWh/year]", "energy_p90_mwh", 1),
    ("Specific yield P50 [kWh/kW/year]", "yield_p50_kwh_per_kw", 0),
    ("Specific yield P90 [kWh/kW/year]", "yield_p90_kwh_per_kw", 0),
    ("Probability cheapest at the site [-]", "prob_cheapest", 3),
)
#: What each column means (JSON and workbook).
COLUMN_NOTES = {
    "lcoe_real_q10": "10th percentile of the real LCOE over the trials [currency/kWh]",
    "lcoe_real_q50": "median real LCOE [currency/kWh]",
    "lcoe_real_q90": "90th percentile of the real LCOE [currency/kWh]",
    "energy_p50_kwh": "one-year energy exceeded with 50 % probability (no degradation) [kWh]",
    "energy_p90_kwh": "one-year energy exceeded with 90 % probability (no degradation) [kWh]",
    "prob_cheapest": "share of trials in which this technology has the lowest real LCOE at the "
                     "site (trial by trial, common random numbers) [-]",
}
CAUTION = ("Results depend entirely on the inputs; they are not investment advice. Sites built "
           "from monthly climate values use synthetic weather: a screening estimate, not a "
           "bankable energy assessment.")
CRN_NOTE = ("Common random numbers: an uncertain input of the same name takes the same uniform "
            "draw in trial i of every site x technology (the same rank, and the same value where "
            "the distributions agree), and the year-to-year weather scores of trial i are shared "
            "too; prob_cheapest compares technologies trial by trial.")
FILES = ("sweep.csv", "sweep.json", "sweep.xlsx", "sweep_ranking.png", "sweep_sites.png",
         "report.html")


def _header(ws, labels) -> None:
    """Bold text cells across row 1."""
    from openpyxl.styles import Font

    for j, label in enumerate(labels, start=1):
        put_text(ws, 1, j, label)
        ws.cell(row=1, column=j).font = Font(bold=True)


def _put(ws, row: int, col: int, value, number_format: str) -> None:
    """A number as a number cell; anything else as a text cell."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        ws.cell(row=row, column=col, value=float(value)).number_format = number_format
    else:
        put_text(ws, row, col, value)


def tech_names(result) -> dict:
    """Readable name of each technology label: its case name (the label added when two
    technologies share a case name)."""
    techs = result.plan.technologies
    names = [t.case_name for t in techs]
    return {t.label: (t.case_name if names.count(t.case_name) == 1 else
                      f"{t.case_name} ({t.label})") for t in techs}


def table_rows(result) -> list[dict]:
    """Every completed site x technology as a dict of the fields of :data:`TABLE` (and the
    raw row fields), energy per kW from each run's DC capacity."""
    dc_kw = {(r.site, r.technology): float(r.raw["plant"]["dc_capacity_kw"])
             for r in result.plan.runs}
    names = tech_names(result)
    out = []
    for row in result.rows:
        kw = dc_kw[(row.site, row.technology)]
        out.append({**{c: getattr(row, c) for c in CSV_COLUMNS},
                    "lcoe_real_mean": row.lcoe_real_mean,
                    "lcoe_nominal_q50": row.lcoe_nominal_q50,
                    "technology_name": names.get(row.technology, row.technology),
                    "dc_capacity_kw": kw,
                    "energy_p50_mwh": row.energy_p50_kwh / 1000.0,
                    "energy_p90_mwh": row.energy_p90_kwh / 1000.0,
                    "yield_p50_kwh_per_kw": row.energy_p50_kwh / kw,
                    "yield_p90_kwh_per_kw": row.energy_p90_kwh / kw})
    return out


def table_header(result) -> list[str]:
    """Headers of :data:`TABLE` with the plan's currency."""
    return [h.replace("currency", result.plan.currency) for h, _, _ in TABLE]


def write_sweep_csv(result, path: Path) -> None:
    """The readable table (:data:`TABLE`): headers with units, values rounded to the digits
    that mean something (full precision stays in ``sweep.json``); names neutralised, numbers
    stay numbers (:func:`lcoe.export.cells.write_csv`)."""

    def value(v, d):
        if d is None:
            return str(v)
        return int(round(v)) if d == 0 else round(float(v), d)

    write_csv(path, table_header(result),
              ([value(row[k], d) for _, k, d in TABLE] for row in table_rows(result)))


def sweep_dict(result) -> dict:
    """The content of ``sweep.json`` as a plain dict."""
    plan = result.plan
    return _clean({
        "schema_version": SCHEMA_VERSION,
        "kind": "sweep",
        "plan": {"source": plan.path, "sha256": plan.sha256, "samples": plan.samples,
                 "seed": plan.seed, "chunk_trials": plan.chunk_trials, "method": plan.method,
                 "currency": plan.currency, "uncertain_inputs": list(plan.input_names)},
        "technologies": [{"label": t.label, "path": t.path, "sha256": t.sha256,
                          "case_name": t.case_name, "name": tech_names(result)[t.label]}
                         for t in plan.technologies],
        "columns": COLUMN_NOTES,
        "formula": LCOE_FORMULA,
        "table": {"columns": [{"header": h, "field": k} for h, (_, k, _) in
                              zip(table_header(result), TABLE)]},
        "rows": table_rows(result),
        "sites": [{"name": s.name, "latitude_deg": s.latitude_deg,
                   "longitude_deg": s.longitude_deg, "cheapest": s.cheapest,
                   "prob_cheapest": s.prob_cheapest, "cheapest_by_median": s.cheapest_by_median}
                  for s in result.sites],
        "failures": [{"site": f.site, "technology": f.technology, "chunk": f.chunk,
                      "attempts": f.attempts, "error": f.error} for f in result.failures],
        "execution": {"how": result.execution, "elapsed_s": result.elapsed_s},
        **({"value_of_information": result.voi} if getattr(result, "voi", None) else {}),
        "notes": list(result.notes) + [CRN_NOTE, CAUTION],
        "versions": result.provenance.get("versions", {}),
        "provenance": {k: v for k, v in result.provenance.items() if k != "versions"},
    })


def sweep_json(result) -> str:
    """``sweep.json`` text (indented, UTF-8)."""
    return json.dumps(sweep_dict(result), indent=2, ensure_ascii=False) + "\n"


def write_sweep_workbook(result, path: Path) -> None:
    """``sweep.xlsx``: the table, the sites, the failures and what the numbers are."""
    from openpyxl import Workbook

    plan = result.plan
    cur = plan.currency
    wb = Workbook()
    ws = wb.active
    ws.title = "Sweep"
    _header(ws, table_header(result))
    for i, row in enumerate(table_rows(result), start=2):
        for j, (_, key, digits) in enumerate(TABLE, start=1):
            if digits is None:
                put_text(ws, i, j, row[key])
            else:
                _put(ws, i, j, row[key], "#,##0" + ("." + "0" * digits if digits else ""))
    for j in range(1, len(TABLE) + 1):
        ws.column_dimensions[chr(64 + j)].width = 30 if j <= 2 else 17

    wsites = wb.create_sheet("Sites")
    _header(wsites, ("Site", "Latitude [deg]", "Longitude [deg]", "Most often cheapest",
                     "Its probability of being cheapest [-]", "Cheapest by median LCOE"))
    names = tech_names(result)
    for i, s in enumerate(result.sites, start=2):
        put_text(wsites, i, 1, s.name)
        _put(wsites, i, 2, s.latitude_deg, "0.000")
        _put(wsites, i, 3, s.longitude_deg, "0.000")
        put_text(wsites, i, 4, names.get(s.cheapest, s.cheapest) or "(none completed)")
        _put(wsites, i, 5, s.prob_cheapest, "0.000")
        put_text(wsites, i, 6, names.get(s.cheapest_by_median, s.cheapest_by_median) or "")

    if result.failures:
        wf = wb.create_sheet("Failures")
        _header(wf, ("site", "technology", "chunk", "attempts", "error"))
        for i, f in enumerate(result.failures, start=2):
            put_text(wf, i, 1, f.site)
            put_text(wf, i, 2, f.technology)
            _put(wf, i, 3, f.chunk, "0")
            _put(wf, i, 4, f.attempts, "0")
            put_text(wf, i, 5, f.error)

    wa = wb.create_sheet("About")
    _header(wa, ("Item", "Value"))
    about = [("Plan", plan.path), ("Plan SHA-256", plan.sha256),
             ("Trials per site x technology", plan.samples), ("Seed", plan.seed),
             ("Trials per chunk", plan.chunk_trials), ("Sampling", plan.method),
             ("Currency", cur), ("LCOE formula", LCOE_FORMULA), ("Ran on", result.execution)]
    about += [(f"Technology {t.label}", f"{t.path} (sha256 {t.sha256})")
              for t in plan.technologies]
    about += [(c, meaning.replace("currency", cur)) for c, meaning in COLUMN_NOTES.items()]
    from lcoe.case.labels import humanize, schema_labels

    labels = schema_labels(cur)
    about += [("Note", humanize(n, labels)) for n in list(result.notes) + [CRN_NOTE]] + \
        [("Caution", CAUTION)]
    for i, (k, v) in enumerate(about, start=2):
        put_text(wa, i, 1, k)
        _put(wa, i, 2, v, "0")
    wa.column_dimensions["A"].width = 34
    wa.column_dimensions["B"].width = 110
    wb.save(path)


def _tech_colours(result) -> dict:
    from matplotlib import colormaps

    cmap = colormaps["tab10"]
    return {t.label: cmap(i % 10) for i, t in enumerate(result.plan.technologies)}


def plot_ranking(result, path: Path) -> None:
    """Median real LCOE with 10th-90th percentile bars, by site and technology.

    Sites are ordered by their lowest median; a filled marker shows the technology most often
    cheapest at the site.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.lines import Line2D

    colours = _tech_colours(result)
    techs = [t.label for t in result.plan.technologies]
    best = {s.name: s.cheapest for s in result.sites}
    by_site: dict[str, list] = {}
    for r in result.rows:
        by_site.setdefault(r.site, []).append(r)
    order = sorted(by_site, key=lambda s: min(r.lcoe_real_q50 for r in by_site[s]))
    fig, ax = plt.subplots(figsize=(max(8.0, 0.75 * len(order) + 3.0), 6.0))
    width = 0.75 / max(len(techs), 1)
    for x, site in enumerate(order):
        for r in by_site[site]:
            j = techs.index(r.technology)
            xj = x + (j - (len(techs) - 1) / 2) * width
            c = colours[r.technology]
            ax.errorbar(xj, r.lcoe_real_q50,
                        yerr=[[r.lcoe_real_q50 - r.lcoe_real_q10],
                              [r.lcoe_real_q90 - r.lcoe_real_q50]],
                        fmt="o", color=c, ecolor=c, elinewidth=1.6, capsize=3, markersize=6,
                        markerfacecolor=c if best.get(site) == r.technology else "white")
    ax.set_xticks(range(len(order)))
    ax.set_xticklabels(order, rotation=35, ha="right")
    ax.set_xlim(-0.6, len(order) - 0.4)
    ax.set_ylabel(f"Real LCOE [{result.plan.currency}/kWh]")
    ax.set_title(f"Median real LCOE with 10th-90th percentile bars ({result.plan.samples} "
                 f"trials each)\nsites ordered by their cheapest median; filled marker = most "
                 f"often cheapest", fontsize=11)
    ax.grid(axis="y", alpha=0.3)
    names = tech_names(result)
    handles = [Line2D([], [], marker="o", color=colours[t], linestyle="-", label=names[t])
               for t in techs]
    ax.legend(handles=handles, title="Technology", fontsize=9, loc="upper left")
    if not order:
        ax.text(0.5, 0.5, "no site x technology completed", transform=ax.transAxes,
                ha="center")
    fig.tight_layout()
    literal_text(fig).savefig(path, dpi=120)
    plt.close(fig)


def plot_site_map(result, path: Path) -> None:
    """Sites by longitude and latitude, coloured by the technology most often cheapest.

    Marker area grows with that technology's probability of being cheapest. A plain
    longitude-latitude plot (no coastlines).
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.lines import Line2D

    colours = _tech_colours(result)
    fig, ax = plt.subplots(figsize=(10.0, 6.0))
    for s in result.sites:
        if s.cheapest is None:
            ax.scatter(s.longitude_deg, s.latitude_deg, marker="x", s=60, color="grey")
        else:
            ax.scatter(s.longitude_deg, s.latitude_deg, s=40 + 260 * s.prob_cheapest,
                       color=colours[s.cheapest], edgecolor="black", linewidth=0.6, zorder=3)
    lons = [s.longitude_deg for s in result.sites] or [0.0]
    lats = [s.latitude_deg for s in result.sites] or [0.0]
    pad_x = max(5.0, 0.08 * (max(lons) - min(lons)))
    pad_y = max(5.0, 0.08 * (max(lats) - min(lats)))
    ax.set_xlim(max(-180, min(lons) - pad_x), min(180, max(lons) + 3 * pad_x))
    ax.set_ylim(max(-90, min(lats) - pad_y), min(90, max(lats) + pad_y))
    _place_labels(fig, ax, [(s.longitude_deg, s.latitude_deg,
                             s.name if s.cheapest is None else f"{s.name} ({s.prob_cheapest:.2f})")
                            for s in result.sites])
    ax.axhline(0.0, color="grey", linewidth=0.6, linestyle=":")
    ax.set_xlabel("Longitude [deg, east positive]")
    ax.set_ylabel("Latitude [deg, north positive]")
    ax.set_title("Technology most often cheapest at each site (marker size: its probability)",
                 fontsize=11)
    ax.grid(alpha=0.3)
    used = [t.label for t in result.plan.technologies
            if any(s.cheapest == t.label for s in result.sites)]
    names = tech_names(result)
    handles = [Line2D([], [], marker="o", linestyle="", color=colours[t], markeredgecolor="black",
                      markersize=8, label=names[t]) for t in used]
    if any(s.cheapest is None for s in result.sites):
        handles.append(Line2D([], [], marker="x", linestyle="", color="grey",
                              label="no run completed"))
    if handles:
        ax.legend(handles=handles, fontsize=9, loc="best")
    fig.tight_layout()
    literal_text(fig).savefig(path, dpi=120)
    plt.close(fig)


def _place_labels(fig, ax, points) -> None:
    """Label points, each at the first of four offsets that overlaps no marker or label."""
    renderer = fig.canvas.get_renderer()
    marker_px = 14.0  # radius of the largest marker [pixels]
    centres = [ax.transData.transform((x, y)) for x, y, _ in points]
    taken = []
    for i, (x, y, text) in enumerate(points):
        others = [c for j, c in enumerate(centres) if j != i]
        best = None
        for dx, dy, ha in ((8, 4, "left"), (8, -12, "left"), (-8, 4, "right"),
                           (-8, -12, "right"), (0, 10, "center"), (0, -18, "center")):
            ann = ax.annotate(text, (x, y), xytext=(dx, dy), textcoords="offset points",
                              fontsize=8, ha=ha)
            box = ann.get_window_extent(renderer).expanded(1.05, 1.1)
            hits = sum(box.overlaps(b) for b in taken) + sum(
                box.x0 - marker_px < cx < box.x1 + marker_px and
                box.y0 - marker_px < cy < box.y1 + marker_px
                for cx, cy in others)
            if best is None or hits < best[0]:
                if best is not None:
                    best[1].remove()
                best = (hits, ann, box)
            else:
                ann.remove()
            if hits == 0:
                break
        taken.append(best[2])


def write_sweep_outputs(result, out_dir, force: bool = False) -> None:
    """Write every sweep file into a folder published whole (:func:`lcoe.export.staging.publish`) or
    into the :class:`lcoe.export.staging.Stage` of a command that holds it."""
    from lcoe.export.staging import staged

    with staged(out_dir, force=force) as out:
        out.write_with("sweep.csv", lambda p: write_sweep_csv(result, p))
        out.write_text("sweep.json", sweep_json(result))
        out.write_with("sweep.xlsx", lambda p: write_sweep_workbook(result, p))
        import io

        figures = {}
        for name, plot in (("sweep_ranking.png", plot_ranking), ("sweep_sites.png",
                                                                 plot_site_map)):
            buf = io.BytesIO()
            plot(result, buf)
            figures[name] = buf.getvalue()
            out.write_with(name, lambda p, png=figures[name]: p.write_bytes(png))
        from lcoe.export.sweep_report import sweep_report_html

        out.write_text("report.html", sweep_report_html(sweep_dict(result), figures))
