"""Distribution, Sensitivity and Comparison sheets of the workbook.

These sheets show what the uncertainty study (:mod:`lcoe.study.case_study`) computed: the
percentiles of the outputs, a histogram of the LCOE, at most
:data:`~lcoe.export.workbook.layout.MAX_TRIALS_IN_SHEET` trials (all of them are in ``trials.csv``),
Sobol indices with their intervals and the tornado swings. Percentiles are repeated as
PERCENTILE formulas over the listed trials, which agree with the engine's when every trial is
listed (both interpolate linearly between order statistics).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from lcoe.export.workbook.layout import (
    FMT_KWH,
    FMT_MONEY,
    FMT_PRICE,
    MAX_TRIALS_IN_SHEET,
    header,
    put,
    put_formula,
    put_text,
    title,
    widths,
)
from lcoe.export.workbook.stream import add_number_table
from lcoe.study.results import RunResult

#: Statistics of :func:`lcoe.uncertainty.stats.stats` shown, with their probability.
PERCENTILES = (("q05", 0.05), ("q10", 0.10), ("q50", 0.50), ("q90", 0.90), ("q95", 0.95))
#: Bins of the LCOE histogram.
HISTOGRAM_BINS = 30
#: First column of the trials table on the Distribution sheet (J).
TRIALS_COL = 10


def _col(col: int) -> str:
    from openpyxl.utils import get_column_letter

    return get_column_letter(col)


def output_columns(cur: str) -> list[tuple[str, str, str]]:
    """(output key, header, number format) of the outputs shown for every trial."""
    return [("lcoe_real_per_kwh", f"LCOE real [{cur}/kWh]", FMT_PRICE),
            ("lcoe_nominal_per_kwh", f"LCOE nominal [{cur}/kWh]", FMT_PRICE),
            ("npv_costs", f"NPV of costs [{cur}]", FMT_MONEY),
            ("energy_first_year_kwh", "First-year energy [kWh]", FMT_KWH)]


def trial_output_labels(cur: str) -> dict:
    """Headings with units of the further per-trial outputs (the lender's), by key."""
    return {"min_dscr": "Minimum DSCR [-]", "equity_irr": "Equity IRR [-]",
            "equity_mirr": "Equity MIRR [-]",
            "equity_npv_at_target": f"Equity NPV at the target IRR [{cur}]"}


def lcoe_histogram(values: np.ndarray, bins: int = HISTOGRAM_BINS):
    """Bin edges and counts of the LCOE trials for display (numpy.histogram, equal widths)."""
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    counts, edges = np.histogram(v, bins=bins)
    return edges, counts


def write_distribution_sheet(wb, result: RunResult) -> None:
    """Percentiles (engine and formulas), energy exceedance, LCOE histogram, listed trials."""
    from openpyxl.chart import BarChart, Reference

    unc = result.extras["uncertainty"]
    trials = unc.trials
    cur = result.case["case.currency"]
    ws = wb.create_sheet("Distribution")
    outs = [o for o in output_columns(cur) if o[0] in trials.outputs]
    n_listed = min(trials.n, MAX_TRIALS_IN_SHEET)

    # ---- trials table (right) -------------------------------------------------------------
    inputs = list(trials.names)
    shown = {k for k, _, _ in outs}
    extra = [k for k, v in trials.outputs.items()
             if k not in shown and np.ndim(v) == 1 and len(v) == trials.n]
    from lcoe.case.labels import labeller

    label = labeller(result.case)  # headings read as labels; the keys are in trials.csv
    more = trial_output_labels(cur)
    hdr = ["Trial"] + [h for _, h, _ in outs] + [label(k) for k in inputs] + \
        [more.get(k, k.replace("_", " ")) for k in extra]
    header(ws, 1, hdr, col=TRIALS_COL)
    first, last = 2, 1 + n_listed
    listed_x = trials.inputs(0, n_listed)  # drawn again from the study's design
    cols = [np.arange(1, n_listed + 1)] + [trials.outputs[k][:n_listed] for k, _, _ in outs] + \
        [listed_x[:, j] for j in range(len(inputs))] + \
        [np.asarray(trials.outputs[k][:n_listed], dtype=float) for k in extra]
    fmts = ["0"] + [f for _, _, f in outs] + ["General"] * (len(inputs) + len(extra))
    # written at save time; a trial without a value (e.g. no unique IRR) is an empty cell
    add_number_table(ws, first, TRIALS_COL, cols, fmts)

    # ---- summary (left) --------------------------------------------------------------------
    r = 1
    title(ws, r, "Monte Carlo distribution of the outputs")
    r += 1
    put_text(ws, r, 1, f"{trials.n} trials ({trials.method}, seed {unc.seed}); "
                       f"{n_listed} listed from column {_col(TRIALS_COL)}; all trials are in "
                       f"trials.csv")
    r += 2
    header(ws, r, ["Statistic (engine, all trials)"] + [h for _, h, _ in outs])
    r += 1
    stat_rows = [("mean", "mean"), ("sd", "standard deviation")] + \
        [(k, f"{int(round(q * 100))}th percentile") for k, q in PERCENTILES]
    for key, label in stat_rows:
        put_text(ws, r, 1, label)
        for j, (k, _, fmt) in enumerate(outs):
            put(ws, r, 2 + j, unc.stats[k][key], fmt)
        r += 1
    r += 1
    header(ws, r, [f"Same, by formula over the {n_listed} listed trials"] +
           [h for _, h, _ in outs])
    r += 1
    formula_rows = [("mean", "AVERAGE({rng})"), ("standard deviation", "STDEV({rng})")] + \
        [(f"{int(round(q * 100))}th percentile", f"PERCENTILE({{rng}},{q})")
         for _, q in PERCENTILES]
    for label, template in formula_rows:
        put_text(ws, r, 1, label)
        for j, (_, _, fmt) in enumerate(outs):
            L = _col(TRIALS_COL + 1 + j)
            put_formula(ws, r, 2 + j, "=" + template.format(rng=f"{L}${first}:{L}${last}"), fmt)
        r += 1

    ex = unc.exceedance
    r += 1
    header(ws, r, ("First-year energy exceeded with probability", "From the trials [kWh]",
                   "Normal method [kWh]"))
    r += 1
    for key, label in (("p50", "P50"), ("p90", "P90, one year"), ("p99", "P99, one year"),
                       ("p90_10yr", "P90, ten-year average"),
                       ("p99_10yr", "P99, ten-year average")):
        put_text(ws, r, 1, label)
        put(ws, r, 2, ex.sampled.get(key), FMT_KWH)
        put(ws, r, 3, ex.normal.get(key), FMT_KWH)
        r += 1
    put_text(ws, r, 1, "Relative sd of the normal method, one year / ten years")
    put(ws, r, 2, ex.sigma_1yr, "0.00%")
    put(ws, r, 3, ex.sigma_10yr, "0.00%")
    r += 1
    for note in list(unc.notes) + list(ex.differences):
        put_text(ws, r, 1, f"note: {note}")
        r += 1

    r += 1
    h0 = r
    header(ws, r, (f"LCOE real bin from [{cur}/kWh]", f"bin to [{cur}/kWh]",
                   f"bin centre [{cur}/kWh]", "Trials (all)", "Share of trials"))
    edges, counts = lcoe_histogram(trials.outputs["lcoe_real_per_kwh"])
    total_row = h0 + len(counts) + 1
    for i, cnt in enumerate(counts):
        r = h0 + 1 + i
        put(ws, r, 1, edges[i], FMT_PRICE)
        put(ws, r, 2, edges[i + 1], FMT_PRICE)
        put(ws, r, 3, 0.5 * (edges[i] + edges[i + 1]), "0.0000")
        put(ws, r, 4, int(cnt))
        put_formula(ws, r, 5, f"=D{r}/$D${total_row}", "0.0%")
    put_text(ws, total_row, 1, "All bins")
    put_formula(ws, total_row, 4, f"=SUM(D{h0 + 1}:D{total_row - 1})")

    chart = BarChart()
    chart.type = "col"
    chart.gapWidth = 10
    chart.title = "LCOE real across the Monte Carlo trials"
    chart.x_axis.title = f"LCOE real [{cur}/kWh], bin centre"
    chart.y_axis.title = "Trials"
    chart.add_data(Reference(ws, min_col=4, min_row=h0, max_row=total_row - 1),
                   titles_from_data=True)
    chart.set_categories(Reference(ws, min_col=3, min_row=h0 + 1, max_row=total_row - 1))
    chart.legend = None
    chart.height, chart.width = 8, 18
    ws.add_chart(chart, f"A{total_row + 2}")
    widths(ws, {"A": 46, "B": 20, "C": 20, "D": 20, "E": 20})
    for j in range(len(hdr)):
        ws.column_dimensions[_col(TRIALS_COL + j)].width = 16
    ws.freeze_panes = "A2"


def write_sensitivity_sheet(wb, result: RunResult) -> None:
    """Sobol S1/ST with intervals, tornado swings and Morris screening when present."""
    from openpyxl.chart import BarChart, Reference

    from lcoe.case.labels import humanize
    from lcoe.export.plots import output_label

    sens = result.extras["sensitivity"]
    out_name = output_label(sens.output)
    ws = wb.create_sheet("Sensitivity")
    r = 1
    title(ws, r, f"Drivers of {out_name}")
    r += 1
    words = sens.plain_words() if hasattr(sens, "plain_words") else ""
    if words:
        put_text(ws, r, 1, words)
        r += 1
    sob = sens.sobol
    if sob is not None:
        put_text(ws, r, 1, f"Method: {sob.method}")
        r += 1
        put_text(ws, r, 1, f"Base samples N = {sob.base_samples}, model runs {sob.n_runs}, "
                           f"intervals: half-width at confidence {sob.conf_level:g} from "
                           f"{sob.num_resamples} bootstrap resamples")
        r += 2
        h0 = r
        header(ws, r, ("Factor", "Keys of its inputs (as in trials.csv)", "S1",
                       "S1 half-width", "S1 low",
                       "S1 high", "ST", "ST half-width", "ST low", "ST high",
                       "S1 interval includes 0", "ST interval includes 0", "Wide interval"))
        for row in sens.ranked():
            r += 1
            put_text(ws, r, 1, sens.label(row["input"]))
            put_text(ws, r, 2, ", ".join(row.get("members", [row["input"]])))
            put(ws, r, 3, row["S1"], "0.0000")
            put(ws, r, 4, row["S1_conf"], "0.0000")
            put_formula(ws, r, 5, f"=C{r}-D{r}", "0.0000")
            put_formula(ws, r, 6, f"=C{r}+D{r}", "0.0000")
            put(ws, r, 7, row["ST"], "0.0000")
            put(ws, r, 8, row["ST_conf"], "0.0000")
            put_formula(ws, r, 9, f"=G{r}-H{r}", "0.0000")
            put_formula(ws, r, 10, f"=G{r}+H{r}", "0.0000")
            for j, key in enumerate(("S1_includes_zero", "ST_includes_zero", "wide")):
                put_text(ws, r, 11 + j, "yes" if row.get(key) else "no")
        if r > h0:
            chart = BarChart()
            chart.type = "bar"
            chart.title = "Sobol indices (S1 first order, ST total)"
            chart.x_axis.title = "Factor"
            chart.y_axis.title = "Share of output variance [-]"
            chart.add_data(Reference(ws, min_col=3, min_row=h0, max_row=r), titles_from_data=True)
            chart.add_data(Reference(ws, min_col=7, min_row=h0, max_row=r), titles_from_data=True)
            chart.set_categories(Reference(ws, min_col=1, min_row=h0 + 1, max_row=r))
            chart.x_axis.scaling.orientation = "maxMin"
            chart.height, chart.width = 9, 18
            ws.add_chart(chart, "O2")
        r += 1
        for w in list(sob.warnings) + list(sens.notes):
            r += 1
            put_text(ws, r, 1, f"note: {humanize(w, sens.labels)}")
    r += 2
    if sens.tornado:
        title(ws, r, f"Tornado: {out_name} with one input at its 10th or 90th percentile, "
                     f"the others at base")
        r += 1
        header(ws, r, ("Input", "Input at 10th percentile", "Input at 90th percentile",
                       "Output, input at 10th", "Output, input at 90th", "Output at base",
                       "Swing |high - low|", "Engine swing", "Key"))
        for row in sens.tornado:
            r += 1
            put_text(ws, r, 1, sens.label(row["input"]))
            put_text(ws, r, 9, row["input"])
            for j, key in enumerate(("low_value", "high_value", "y_low", "y_high", "y_base")):
                put(ws, r, 2 + j, row[key], "General" if j < 2 else "0.00000")
            put_formula(ws, r, 7, f"=ABS(E{r}-D{r})", "0.00000")
            put(ws, r, 8, row["swing"], "0.00000")
    if sens.morris:
        r += 2
        title(ws, r, "Morris screening (elementary effects)")
        r += 1
        keys = list(sens.morris[0].keys())
        header(ws, r, [{"input": "Input"}.get(k, k) for k in keys] + ["Key"])
        for row in sens.morris:
            r += 1
            for j, k in enumerate(keys):
                put(ws, r, 1 + j, sens.label(row[k]) if k == "input" else row[k], "0.00000")
            put_text(ws, r, 1 + len(keys), row.get("input"))
    widths(ws, {"A": 46, "B": 40, "C": 22, "D": 22, "E": 22, "F": 22, "G": 22, "H": 22,
                "I": 12, "J": 12, "K": 22, "L": 22, "M": 16})
    ws.freeze_panes = "A2"


# --------------------------------------------------------------------------------------------
# comparison of runs
# --------------------------------------------------------------------------------------------
#: Rows of the Comparison sheet: label, unit, path in ``summary.json``, number format.
COMPARISON_ROWS = (
    ("Case", "-", ("case", "name"), None),
    ("Case file SHA-256", "-", ("case", "sha256"), None),
    ("Currency", "-", ("case", "currency"), None),
    ("Lifetime", "years", ("case", "lifetime_years"), "0"),
    ("Mount", "-", ("case", "mount"), None),
    ("DC capacity", "kW", ("case", "dc_capacity_kw"), "#,##0"),
    ("First-year energy", "kWh", ("energy", "first_year_kwh"), FMT_KWH),
    ("Specific yield", "kWh/kW", ("energy", "specific_yield_kwh_per_kw"), "#,##0.0"),
    ("Performance ratio (IEC 61724-1)", "-", ("energy", "performance_ratio"), "0.000"),
    ("Capacity factor (DC)", "-", ("energy", "capacity_factor_dc"), "0.000"),
    ("LCOE real", "currency/kWh", ("lcoe", "real_per_kwh"), FMT_PRICE),
    ("LCOE nominal", "currency/kWh", ("lcoe", "nominal_per_kwh"), FMT_PRICE),
    ("Real discount rate", "1/year", ("lcoe", "real_discount_rate"), "0.00%"),
    ("NPV of costs", "currency", ("cost", "npv_costs"), FMT_MONEY),
    ("Monte Carlo trials", "-", ("uncertainty", "samples"), "0"),
    ("LCOE real, mean of trials", "currency/kWh",
     ("uncertainty", "lcoe_real_per_kwh", "mean"), FMT_PRICE),
    ("LCOE real, 10th percentile", "currency/kWh",
     ("uncertainty", "lcoe_real_per_kwh", "q10"), FMT_PRICE),
    ("LCOE real, 50th percentile", "currency/kWh",
     ("uncertainty", "lcoe_real_per_kwh", "q50"), FMT_PRICE),
    ("LCOE real, 90th percentile", "currency/kWh",
     ("uncertainty", "lcoe_real_per_kwh", "q90"), FMT_PRICE),
)


def _summary_of(run) -> dict:
    """``summary.json`` content of a RunResult, or the dict itself."""
    if isinstance(run, dict):
        return run
    from lcoe.export.summary import summary_dict

    return summary_dict(run)


def _dig(d: dict, path: Sequence[str]):
    for k in path:
        if not isinstance(d, dict) or k not in d:
            return None
        d = d[k]
    return d


def write_comparison_sheet(wb, runs: Sequence) -> None:
    """A ``Comparison`` sheet: one column per run, one row per headline number.

    Parameters
    ----------
    wb : openpyxl.Workbook
        The workbook to add the sheet to.
    runs : sequence of RunResult or dict
        Runs to compare, as RunResults or as ``summary.json`` dicts
        (:func:`lcoe.export.summary.summary_dict`). The first run is the reference of the
        difference rows.
    """
    from openpyxl.chart import BarChart, Reference

    if not runs:
        raise ValueError("write_comparison_sheet: no runs to compare")
    sums = [_summary_of(run) for run in runs]
    ws = wb.create_sheet("Comparison")
    header(ws, 1, ["Quantity", "Unit"] + [f"Run {i + 1}" for i in range(len(sums))])
    rows = {}
    r = 1
    for label, unit, path, fmt in COMPARISON_ROWS:
        r += 1
        rows[path] = r
        put_text(ws, r, 1, label)
        put_text(ws, r, 2, unit)
        for j, s in enumerate(sums):
            v = _dig(s, path)
            if fmt is None:
                put_text(ws, r, 3 + j, "" if v is None else v)
            else:
                put(ws, r, 3 + j, v, fmt)
    r += 2
    title(ws, r, "Differences from run 1 (formulas)")
    for label, path in (("LCOE real", ("lcoe", "real_per_kwh")),
                        ("LCOE nominal", ("lcoe", "nominal_per_kwh")),
                        ("First-year energy", ("energy", "first_year_kwh")),
                        ("NPV of costs", ("cost", "npv_costs"))):
        r += 1
        put_text(ws, r, 1, f"{label}, relative to run 1")
        put_text(ws, r, 2, "-")
        src = rows[path]
        for j in range(len(sums)):
            L = _col(3 + j)
            put_formula(ws, r, 3 + j, f"=IF(C{src}=0,0,{L}{src}/C{src}-1)", "0.00%")
    chart = BarChart()
    chart.type = "col"
    chart.title = "LCOE real by run"
    chart.y_axis.title = "currency/kWh"
    lr = rows[("lcoe", "real_per_kwh")]
    chart.add_data(Reference(ws, min_col=3, max_col=2 + len(sums), min_row=lr, max_row=lr),
                   from_rows=True, titles_from_data=False)
    chart.set_categories(Reference(ws, min_col=3, max_col=2 + len(sums), min_row=1, max_row=1))
    chart.legend = None
    chart.height, chart.width = 8, 16
    ws.add_chart(chart, f"A{r + 3}")
    widths(ws, {"A": 36, "B": 14})
    for j in range(len(sums)):
        ws.column_dimensions[_col(3 + j)].width = 24
    ws.freeze_panes = "C2"


def write_comparison_workbook(runs: Sequence, path) -> None:
    """A workbook with a short cover and the Comparison sheet of several runs.

    Parameters
    ----------
    runs : sequence of RunResult or dict
        See :func:`write_comparison_sheet`.
    path : str or pathlib.Path
        Target ``.xlsx`` file.
    """
    from openpyxl import Workbook

    from lcoe.export.workbook.layout import CAUTIONS

    wb = Workbook()
    ws = wb.active
    ws.title = "About"
    title(ws, 1, "Comparison of lcoe runs", 14)
    put_text(ws, 2, 1, "Each column of the Comparison sheet is one run, read from its results; "
                       "the difference rows are formulas relative to run 1.")
    for i, line in enumerate(CAUTIONS):
        put_text(ws, 4 + i, 1, line)
    widths(ws, {"A": 120})
    write_comparison_sheet(wb, runs)
    wb.save(path)

