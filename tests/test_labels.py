"""Readers see labels with units, never dotted keys: the run report and charts of the demo and
the lender case, the comparison page and its charts; Sobol noise reads as 0; the compare page
renders in Chromium; each case keeps its colour; the tornado never hides a bar."""

from __future__ import annotations

import html
import json
import re

import numpy as np
import pytest
from conftest import DEMO, INPUTS
from helpers.browser import chromium_path, render

from lcoe.case.labels import input_label

#: A dotted input key or an output key, as the case file and the JSON spell them.
KEY = re.compile(r"\b(?:case|site|plant|costs|finance|revenue|tax|debt|equity|claim|energy)"
                 r"\.[a-z_]+|\blcoe_(?:real|nominal)_per_kwh\b|\benergy_first_year_kwh\b")


def _page_text(path) -> str:
    page = re.sub(r'src="data:[^"]+"', "", path.read_text(encoding="utf-8"))
    page = re.sub(r"<style>.*?</style>", "", page, flags=re.S)
    return html.unescape(re.sub(r"<[^>]+>", " ", page))


def _chart_text(figures: dict) -> str:
    from matplotlib.text import Text

    return "\n".join(t.get_text() for fig in figures.values() for t in fig.findobj(Text))


def _sheet_keys(path, keep=("Inputs",)) -> list:
    """Dotted keys shown in a workbook outside its key columns.

    A key column is one with a heading starting with "Key" above the cell; the sheets in
    ``keep`` (the Inputs sheets, where keys are the point) and hidden sheets are not read.
    """
    from openpyxl import load_workbook

    found = []
    wb = load_workbook(path)
    for ws in wb.worksheets:
        if ws.title in keep or ws.sheet_state != "visible":
            continue
        key_cols: set = set()
        for row in ws.iter_rows():
            for c in row:
                if not isinstance(c.value, str) or c.value.startswith("="):
                    continue
                if c.value.startswith("Key"):
                    key_cols.add(c.column)
                elif c.column not in key_cols and KEY.search(c.value):
                    found.append((ws.title, c.coordinate, c.value[:60]))
    return found


def test_labels_come_from_the_schema_with_units():
    assert input_label("costs.capex_per_kw", "USD") == "Capex [USD/kW]"
    items = {("costs.replacement", 0): "inverters"}
    assert input_label("costs.replacement[0].cost_per_kw", "USD", items) == \
        "Inverters replacement cost [USD/kW]"
    assert input_label("energy.resource") == "Long-term solar resource (energy factor) [-]"
    assert input_label("plant.dc_loss_fraction") == "DC losses [-]"


@pytest.mark.parametrize("case", [DEMO, INPUTS / "lender_single_axis.toml"])
def test_run_report_and_charts_show_no_dotted_key(tmp_path, case):
    from lcoe.export.plots import build_figures
    from lcoe.export.run_outputs import write_outputs
    from lcoe.study.run import run_case

    result = run_case(case, samples=64, sobol_base=16)
    write_outputs(result, tmp_path / "o")
    text = _page_text(tmp_path / "o" / "report.html")
    assert not KEY.findall(text), KEY.findall(text)
    charts = _chart_text(build_figures(result))
    assert not KEY.findall(charts), KEY.findall(charts)
    assert "Capex [USD/kW]" in charts or "Costs (group" in charts
    assert text.count("assume independent inputs") <= 1  # each caveat once
    # the workbook's headings, factors, tornado rows and notes: labels; keys in key columns
    assert not _sheet_keys(tmp_path / "o" / "workbook.xlsx"), \
        _sheet_keys(tmp_path / "o" / "workbook.xlsx")


@pytest.fixture(scope="module")
def demo_compare(tmp_path_factory):
    from lcoe.cli import main

    out = tmp_path_factory.mktemp("cmp") / "o"
    assert main(["demo", "--compare", "--out", str(out), "--samples", "64",
                 "--sobol-ratio", "16", "--quiet"]) == 0
    return out


def test_compare_page_and_charts_show_no_dotted_key(demo_compare):
    text = _page_text(demo_compare / "report.html")
    assert not KEY.findall(text), KEY.findall(text)
    data = json.loads((demo_compare / "comparison.json").read_text())
    for c in data["candidates"]:  # the claim is quoted verbatim on the page
        if c["claim"].get("text"):
            assert " ".join(c["claim"]["text"].split()) in " ".join(text.split())
        assert all("label" in d for d in c["drivers"])  # JSON keeps key and label
    for heading in ("The claims, tested", "Loss chains side by side", "Break-even capex",
                    "Probability that the claim holds", "Worth up to ... to learn before deciding"):
        assert heading in text  # the value of information is on the page itself
    labels = {r["label"] for r in data["value_of_information"]["evppi"][:5]}
    assert all(label in text for label in labels)
    assert not _sheet_keys(demo_compare / "comparison.xlsx"), \
        _sheet_keys(demo_compare / "comparison.xlsx")


def test_compare_colours_and_one_bound_per_ratio():
    from lcoe.case.reader import load_case
    from lcoe.export.compare_outputs import build_figures
    from lcoe.export.plots import CASE_COLORS
    from lcoe.study.compare import run_comparison

    cases = [load_case(INPUTS / n) for n in ("demo_fixed_tilt.toml",
                                             "compare_single_axis.toml",
                                             "compare_rotating_columns.toml")]
    result = run_comparison(cases, samples=32, sobol_base=0, claim_ratio=0.8)
    figs = build_figures(result)
    first = [ln.get_color() for ln in figs["lcoe_cumulative.png"].axes[0].get_lines()][:3]
    assert first == list(CASE_COLORS[:3])
    ratio_ax = figs["lcoe_ratio.png"].axes[0]
    curves = [ln.get_color() for ln in ratio_ax.get_lines() if len(ln.get_xdata()) > 2]
    assert curves == [CASE_COLORS[1], CASE_COLORS[2]]  # candidates keep their colours
    bounds = [ln for ln in ratio_ax.get_lines() if ln.get_linestyle() == "--"]
    assert len(bounds) == 1  # both candidates test 0.8: the bound is drawn once
    from lcoe.export.voi_outputs import fig_voi

    figs["value_of_information.png"] = fig_voi(result.voi)
    chart = _chart_text(figs)
    assert all(result.voi.label(r.name) in chart for r in result.voi.rows[:5])
    assert not KEY.findall(chart), KEY.findall(chart)


@pytest.mark.skipif(chromium_path() is None, reason="Chromium is not installed")
def test_compare_page_renders_in_chromium(demo_compare, tmp_path):
    from matplotlib.image import imread

    shown = render(demo_compare / "report.html", tmp_path / "shot")
    assert "Uncaught" not in shown.log and "ERROR:CONSOLE" not in shown.log
    assert "The claims, tested" in shown.dom and "Cautions" in shown.dom
    assert shown.dom.count("data:image/png;base64,") >= 2
    grey = imread(shown.screenshot)[..., :3].mean(axis=2)
    assert grey.std() > 0.05 and np.mean(grey < 0.5) > 0.005  # not a blank page


def test_tornado_draws_both_bars_when_both_percentiles_fall_on_one_side():
    from lcoe.export.plots import fig_tornado

    rows = [{"input": "plant.tilt_deg", "y_low": 1.10, "y_high": 1.05, "y_base": 1.0}]
    ax = fig_tornado(rows, "lcoe_real_per_kwh", "USD/kWh", label=input_label).axes[0]
    bars = [p for p in ax.patches]
    assert len(bars) == 2
    (a, b) = sorted(bars, key=lambda p: p.get_y())
    assert a.get_y() + a.get_height() <= b.get_y() + 1e-12  # side by side, not one over other
    assert {round(p.get_width(), 12) for p in bars} == {0.1, 0.05}


def test_sobol_noise_reads_as_zero():
    # An input that does not enter the output at all gives indices of rounding size only:
    # they read as exactly 0 and are not flagged (analytic: S1 = ST = 0 for it).
    from lcoe.case.rng import make_rng
    from lcoe.uncertainty.distributions import Distribution
    from lcoe.uncertainty.sensitivity import sobol_analyze, sobol_sample

    dists = [Distribution(name=n, dist="uniform", params={"low": 0.0, "high": 1.0})
             for n in ("a", "b", "c")]
    _, x, _ = sobol_sample(dists, 256, make_rng(1))
    y = (x[:, 0] + 2.0 * x[:, 1]) / (1.0 + 0.0 * x[:, 2])
    res = sobol_analyze(dists, y, 256, make_rng(2))
    c = next(r for r in res.rows if r["input"] == "c")
    assert c["S1"] == 0.0 and c["ST"] == 0.0
    assert not c["ST_includes_zero"] and not c["wide"]


@pytest.fixture(scope="module")
def small_sweep(tmp_path_factory):
    from lcoe.cli import main

    d = tmp_path_factory.mktemp("sweep")
    plan = d / "plan.toml"
    assert main(["new", str(plan), "--kind", "sweep"]) == 0
    plan.write_text(plan.read_text().replace("samples = 200", "samples = 8")
                    .replace("chunk_trials = 100", "chunk_trials = 8"))
    assert main(["sweep", str(plan), "--out", str(d / "o"), "--quiet"]) == 0
    return d / "o"


def test_sweep_page_has_units_names_and_no_dotted_key(small_sweep):
    text = _page_text(small_sweep / "report.html")
    assert not KEY.findall(text), KEY.findall(text)
    for heading in ("Which technology is cheapest where", "LCOE real P50 [USD/kWh]",
                    "Specific yield P50 [kWh/kW/year]", "Probability cheapest at the site [-]"):
        assert heading in text
    assert "New single-axis tracker plant" in text  # technologies by case name


def test_sweep_demo_page_and_workbook_show_no_dotted_key(tmp_path):
    # The bundled sweep demo (its twelve sites, trials cut to 16) with the value of
    # information per site: readable labels on the page, keys only in the JSON.
    from lcoe.cli import main

    text = (INPUTS / "sweep_demo.toml").read_text(encoding="utf-8")
    for name in ("demo_fixed_tilt.toml", "tech_single_axis.toml", "tech_fixed_dense.toml"):
        text = text.replace(f'"{name}"', json.dumps(str(INPUTS / name)))
    plan = tmp_path / "plan.toml"
    plan.write_text(text.replace("samples = 400", "samples = 16")
                    .replace("chunk_trials = 200", "chunk_trials = 16"), encoding="utf-8")
    assert main(["sweep", str(plan), "--out", str(tmp_path / "o"), "--voi", "--quiet"]) == 0
    page = _page_text(tmp_path / "o" / "report.html")
    assert not KEY.findall(page), KEY.findall(page)
    voi = json.loads((tmp_path / "o" / "sweep.json").read_text())["value_of_information"]
    assert "Worth up to ... to learn before choosing the technology" in page
    assert len(voi) == 12 and all(r["evppi"][0]["label"] in page for r in voi)
    assert not _sheet_keys(tmp_path / "o" / "sweep.xlsx"), _sheet_keys(tmp_path / "o" /
                                                                        "sweep.xlsx")


@pytest.mark.skipif(chromium_path() is None, reason="Chromium is not installed")
def test_sweep_page_renders_in_chromium(small_sweep, tmp_path):
    from matplotlib.image import imread

    shown = render(small_sweep / "report.html", tmp_path / "shot")
    assert "Uncaught" not in shown.log and "ERROR:CONSOLE" not in shown.log
    assert "Every site x technology" in shown.dom
    assert shown.dom.count("data:image/png;base64,") == 2
    grey = imread(shown.screenshot)[..., :3].mean(axis=2)
    assert grey.std() > 0.05 and np.mean(grey < 0.5) > 0.005


HOSTILE = ("=HYPERLINK(\"http://example.invalid\";\"x\") <script>alert(\"x\")</script> "
           "& <b>bold</b> +1 @SUM(A1)")


def test_hostile_claim_text_is_escaped_on_the_page_and_inert_in_the_workbook(tmp_path):
    # A vendor's claim quoted verbatim: on the page as escaped text (no tag, no script), in
    # the workbook as a text cell that a spreadsheet never evaluates as a formula.
    from conftest import MINIMAL_CASE, write_case
    from openpyxl import load_workbook

    from lcoe.cli import main

    unc = '\n[uncertain]\n"costs.capex_per_kw" = { dist = "uniform", low = 900, high = 1100 }\n'
    base = write_case(tmp_path, MINIMAL_CASE.replace('"t"', '"base"') + unc, "base.toml")
    claim = ('\n[claim]\ntext = """' + HOSTILE + '"""\nlcoe_ratio = 0.9\n')
    vendor = write_case(tmp_path, MINIMAL_CASE.replace('"t"', '"vendor"') + unc + claim,
                        "vendor.toml")
    out = tmp_path / "o"
    assert main(["compare", str(base), str(vendor), "--out", str(out), "--samples", "32",
                 "--sobol-ratio", "0", "--quiet"]) == 0
    page = (out / "report.html").read_text(encoding="utf-8")
    assert html.escape(HOSTILE, quote=True) in page
    assert "<script" not in page and "<b>bold" not in page
    assert HOSTILE in _page_text(out / "report.html")  # shown verbatim once unescaped
    ws = load_workbook(out / "comparison.xlsx")["Comparison"]
    row = next(r for r in range(1, ws.max_row + 1)
               if str(ws.cell(r, 1).value).startswith("Claim as stated"))
    cell = ws.cell(row, 4)  # the candidate's column (Quantity, Unit, baseline, candidate)
    assert cell.value == HOSTILE and cell.data_type == "s" and cell.quotePrefix
    assert json.loads((out / "comparison.json").read_text())["candidates"][0]["claim"][
        "text"] == HOSTILE
