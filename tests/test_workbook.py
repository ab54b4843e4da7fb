"""The auditable workbook: formulas agree with the engine, the model is live, text stays text,
the Inputs sheet reads back into a case.

Cross-implementation: the workbook's formulas are recalculated by LibreOffice headless
(``soffice --convert-to xlsx``) and compared with the Python engine (lcoe.money.cashflow). All
workbooks of this module are recalculated in one soffice call (a few seconds each).
"""

from __future__ import annotations

import dataclasses
import shutil
from pathlib import Path

import numpy as np
import pytest
from conftest import DEMO, INPUTS
from helpers.office import pdf_pages, recalculate, soffice_path, to_pdf

from lcoe.case.errors import InputError
from lcoe.case.readback import case_from_workbook
from lcoe.case.reader import case_from_dict, load_case
from lcoe.export.workbook.book import write_workbook
from lcoe.export.workbook.layout import MAX_TRIALS_IN_SHEET, put_text
from lcoe.export.workbook.study_sheets import write_comparison_workbook
from lcoe.model import evaluate
from lcoe.study.run import run_case
from lcoe.study.single import monte_carlo

openpyxl = pytest.importorskip("openpyxl")

needs_soffice = pytest.mark.skipif(soffice_path() is None,
                                   reason="LibreOffice (soffice) is not installed")

HOSTILE = ('=HYPERLINK("http://example.invalid","click")', "+1+1", "-2", "@SUM(A1)",
           "\tTAB first", "=1+1")
REL = 1e-9
NEW_CAPEX = 1111.0


def _test_case(tmp: Path):
    """The demo case with every cost line switched on and a second replacement."""
    text = DEMO.read_text(encoding="utf-8")
    text = text.replace("variable_om_per_kwh = 0.0", "variable_om_per_kwh = 0.0012")
    text = text.replace("salvage_per_kw = 0.0", "salvage_per_kw = 12.0\n"
                        "insurance_fraction_per_year = 0.004\nland_lease_per_year = 30000.0")
    text = text.replace("[finance]", "[[costs.replacement]]\nitem = \"tracker drives\"\n"
                        "every_years = 7\ncost_per_kw = 8.0\n\n[finance]")
    path = tmp / "full_case.toml"
    path.write_text(text, encoding="utf-8")
    return load_case(path)


def _hostile_case(tmp: Path):
    data = {
        "case": {"name": HOSTILE[0], "description": HOSTILE[1], "lifetime_years": 20},
        "site": {"latitude_deg": 36.1, "longitude_deg": -79.95, "altitude_m": 273.0},
        "plant": {"dc_capacity_kw": 1000.0},
        "costs": {"capex_per_kw": 900.0, "fixed_om_per_kw_year": 15.0,
                  "replacement": [{"item": item, "every_years": 5 + i, "cost_per_kw": 10.0}
                                  for i, item in enumerate(HOSTILE[2:])]},
        "finance": {"discount_rate": 0.07},
    }
    return case_from_dict(data, source=str(tmp / "hostile.toml"), base_dir=tmp)


def _row_of(ws, key: str) -> int:
    for row in ws.iter_rows(min_col=1, max_col=1):
        if row[0].value == key:
            return row[0].row
    raise KeyError(key)


def _edit_input(src: Path, dst: Path, key: str, value) -> None:
    wb = openpyxl.load_workbook(src)
    ws = wb["Inputs"]
    ws.cell(row=_row_of(ws, key), column=2, value=value)
    wb.save(dst)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Results and workbooks: full case with a study, hostile case, an edited copy."""
    tmp = tmp_path_factory.mktemp("wb")
    full = run_case(_test_case(tmp), samples=256, sobol_base=16)
    hostile = run_case(_hostile_case(tmp), samples=0)
    lender = run_case(INPUTS / "lender_single_axis.toml", samples=64, sobol_base=0)
    columns = run_case(INPUTS / "compare_rotating_columns.toml", samples=0)
    # the lender demo with a cash sweep, a DSRA built from cash flow and IDC paid by equity
    text = (INPUTS / "lender_single_axis.toml").read_text(encoding="utf-8")
    for old, new in (("min_tail_years = 2", "min_tail_years = 2\nsweep_share = 0.5\n"
                                            "sweep_above_dscr = 1.2"),
                     ("dsra_months = 6.0", 'dsra_months = 6.0\ndsra_funding = "cash_flow"'),
                     ('idc = "capitalised"', 'idc = "equity"')):
        assert old in text
        text = text.replace(old, new)
    swept_path = tmp / "lender_sweep.toml"
    swept_path.write_text(text, encoding="utf-8")
    swept = run_case(load_case(swept_path), samples=0)
    paths = {"full": tmp / "full.xlsx", "hostile": tmp / "hostile.xlsx",
             "edited": tmp / "edited.xlsx", "comparison": tmp / "comparison.xlsx",
             "lender": tmp / "lender.xlsx", "columns": tmp / "columns.xlsx",
             "swept": tmp / "swept.xlsx"}
    write_workbook(swept, paths["swept"])
    write_workbook(columns, paths["columns"])
    write_workbook(full, paths["full"])
    write_workbook(hostile, paths["hostile"])
    write_workbook(lender, paths["lender"])
    _edit_input(paths["full"], paths["edited"], "costs.capex_per_kw", NEW_CAPEX)
    write_comparison_workbook([full, hostile], paths["comparison"])
    return {"full": full, "hostile": hostile, "lender": lender, "columns": columns,
            "swept": swept,
            "paths": paths, "tmp": tmp}


@pytest.fixture(scope="module")
def recalculated(runs):
    """The same workbooks after LibreOffice recalculated them (one soffice call)."""
    if soffice_path() is None:
        pytest.skip("LibreOffice (soffice) is not installed")
    names = list(runs["paths"])
    outs = recalculate([runs["paths"][k] for k in names], runs["tmp"] / "recalc")
    return {k: openpyxl.load_workbook(o, data_only=True) for k, o in zip(names, outs)} | {
        "files": dict(zip(names, outs))}


def _named(wb, name: str):
    """Value of the cell a defined name points to."""
    dn = wb.defined_names[name]
    (sheet, coord), = list(dn.destinations)
    return wb[sheet][coord.replace("$", "")].value


def _close(a, b, rel=REL):
    return a == pytest.approx(b, rel=rel, abs=1e-12)


# --------------------------------------------------------------------------------------------
# structure (no spreadsheet engine needed)
# --------------------------------------------------------------------------------------------
def test_sheets_names_and_formulas(runs):
    wb = openpyxl.load_workbook(runs["paths"]["full"])
    assert wb.sheetnames == ["About", "Inputs", "Energy", "CashFlow", "Distribution",
                             "Sensitivity", "_case"]
    assert wb["_case"].sheet_state == "hidden"
    about = [c.value for c in wb["About"]["A"]]
    for text in ("Cautions", "Provenance", "Headline numbers"):
        assert text in about
    findings = runs["full"].extras.get("audit") or []
    if findings:
        assert "Audit of physical limits" in about
        assert all(f["label"] in about for f in findings)  # in words; the key beside it
    keys = [c.value for c in wb["About"]["D"]]
    assert all(f["check"] in keys for f in findings)
    for name in ("capex_per_kw", "discount_rate", "inflation", "dc_capacity_kw",
                 "degradation_per_year", "fixed_om_per_kw_year", "first_year_energy_kwh",
                 "lcoe_real", "lcoe_nominal", "npv_costs", "replacement_2_every_years"):
        assert name in wb.defined_names, name
    ws = wb["CashFlow"]
    n = runs["full"].case["case.lifetime_years"]
    # every derived yearly cell is a formula (year 0 of the year row is the only value)
    derived = 0
    for row in ws.iter_rows(min_row=2, max_row=_row_of(ws, "Results") - 2, min_col=3,
                            max_col=3 + n):
        for cell in row:
            if cell.value is not None:
                assert cell.data_type == "f", (cell.coordinate, cell.value)
                derived += 1
    assert derived > 20 * (n + 1)
    assert ws.cell(row=1, column=3).value == 0


def test_put_text_never_makes_a_formula():
    wb = openpyxl.Workbook()
    ws = wb.active
    for i, text in enumerate(HOSTILE + ("plain", None, "bad\x01char"), start=1):
        put_text(ws, i, 1, text)
        cell = ws.cell(row=i, column=1)
        assert cell.data_type == "s"
    assert ws.cell(row=8, column=1).value == ""
    assert ws.cell(row=9, column=1).value == "bad\ufffdchar"


def test_hostile_text_written_as_text(runs):
    wb = openpyxl.load_workbook(runs["paths"]["hostile"])
    _assert_hostile_cells(wb)


def _assert_hostile_cells(wb):
    ws = wb["Inputs"]
    for key, text in (("case.name", HOSTILE[0]), ("case.description", HOSTILE[1]),
                      *((f"costs.replacement[{i}].item", t)
                        for i, t in enumerate(HOSTILE[2:]))):
        cell = ws.cell(row=_row_of(ws, key), column=2)
        assert cell.data_type == "s" and cell.value == text, (key, cell.value)
    about = wb["About"]
    assert about["B2"].data_type == "s" and about["B2"].value == HOSTILE[0]
    cf = wb["CashFlow"]
    labels = [c.value for c in cf["A"] if isinstance(c.value, str)]
    assert any(HOSTILE[2] in lab for lab in labels)
    for sheet in wb.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if cell.data_type == "f":
                    assert "HYPERLINK" not in str(cell.value) and "SUM(A1)" not in \
                        str(cell.value), (sheet.title, cell.coordinate)


def test_distribution_lists_at_most_the_cap(runs, tmp_path):
    """A run with more trials than the cap lists exactly the cap (trials.csv has them all)."""
    full = runs["full"]
    unc = full.extras["uncertainty"]
    big, _ = monte_carlo(full.case, full.site, unc.spec, MAX_TRIALS_IN_SHEET + 1500, unc.seed)
    extras = dict(full.extras, uncertainty=dataclasses.replace(unc, trials=big))
    path = tmp_path / "big.xlsx"
    write_workbook(dataclasses.replace(full, extras=extras), path)
    ws = openpyxl.load_workbook(path, read_only=True)["Distribution"]
    trial_numbers = [r[0] for r in ws.iter_rows(min_row=2, min_col=10, max_col=10,
                                                values_only=True) if r[0] is not None]
    assert trial_numbers[-1] == MAX_TRIALS_IN_SHEET == len(trial_numbers)


# --------------------------------------------------------------------------------------------
# recalculated by LibreOffice (cross-implementation)
# --------------------------------------------------------------------------------------------
@needs_soffice
def test_recalculated_workbooks_open_with_all_sheets(runs, recalculated):
    for key in ("full", "hostile", "edited"):
        original = openpyxl.load_workbook(runs["paths"][key], read_only=True).sheetnames
        assert recalculated[key].sheetnames == original


@needs_soffice
def test_cashflow_formulas_agree_with_engine(runs, recalculated):
    """Cross-implementation: LibreOffice recalculation of the CashFlow formulas vs the engine."""
    wb = recalculated["full"]
    c = runs["full"].base.cashflow
    assert _close(_named(wb, "lcoe_real"), c.lcoe_real[0])
    assert _close(_named(wb, "lcoe_nominal"), c.lcoe_nominal[0])
    assert _close(_named(wb, "npv_costs"), c.pv_costs[0])
    assert _close(_named(wb, "pv_energy_real_kwh"), c.pv_energy_real_kwh[0])
    assert _close(_named(wb, "real_discount_rate"), c.real_rate[0])
    ws = wb["CashFlow"]
    n = int(c.years[-1])
    labels = {ws.cell(row=r, column=1).value: r for r in range(1, ws.max_row + 1)}

    def line(label_start):
        r = next(r for lab, r in labels.items() if lab and lab.startswith(label_start))
        return np.array([ws.cell(row=r, column=3 + t).value for t in range(n + 1)], float)

    np.testing.assert_allclose(line("Delivered energy"), c.energy_kwh[0], rtol=REL)
    for label, key in (("Capex", "capex"), ("Fixed O&M", "fixed_om"),
                       ("Variable O&M", "variable_om"), ("Insurance", "insurance"),
                       ("Land lease", "land_lease"), ("Replacements (sum", "replacements"),
                       ("Decommissioning", "decommissioning"), ("Salvage", "salvage"),
                       ("Total cost", None)):
        expected = c.total_cost[0] if key is None else c.lines[key][0]
        assert np.any(expected != 0), label  # the test case switches every line on
        np.testing.assert_allclose(line(label), expected, rtol=REL, atol=1e-6, err_msg=label)
    # the About sheet's headline formulas and their engine values agree
    about = wb["About"]
    for row in about.iter_rows(values_only=True):
        if row[0] in ("LCOE real", "LCOE nominal", "NPV of costs", "First-year energy"):
            assert _close(row[2], row[3]) and abs(row[4]) < REL, row


def test_moving_parts_case_agrees_with_engine(runs, recalculated):
    """Cross-implementation: a case with moving parts (failure costs, outage energy loss)."""
    wb = recalculated["columns"]
    c = runs["columns"].base.cashflow
    assert c.outage_loss_fraction is not None
    assert _close(_named(wb, "lcoe_real"), c.lcoe_real[0])
    assert _close(_named(wb, "lcoe_nominal"), c.lcoe_nominal[0])


@needs_soffice
def test_debt_sheet_agrees_with_engine(runs, recalculated):
    """Cross-implementation: the Debt sheet recalculated by LibreOffice vs lcoe.bank; IRRs
    also vs numpy-financial."""
    npf = pytest.importorskip("numpy_financial")
    bank = runs["lender"].extras["bankability"]
    f = bank.finance
    wb = recalculated["lender"]
    assert wb.sheetnames.index("Debt") == wb.sheetnames.index("CashFlow") + 1
    # the debt itself is a live formula: the binding case's CFADS / target DSCR discounted at
    # the loan rate, scaled to what the other constraints allow, capped by gearing
    assert _close(_named(wb, "debt_amount"), f.debt[0])
    # sources and uses: equity at close (IDC on the quarterly drawdown, fees, DSRA)
    assert _close(_named(wb, "equity_at_close"), f.sources_uses["sources"]["equity"][0])
    for name, value in (("min_dscr", f.min_dscr[0]), ("avg_dscr", f.avg_dscr[0]),
                        ("llcr", f.llcr[0]), ("equity_npv", f.npv_equity[0])):
        assert _close(_named(wb, name), value), name
    irrs = bank.irr_results()
    for name, key, flow in (("equity_irr", "equity", f.equity_flow[0]),
                            ("project_irr_pre_tax", "project_pre_tax",
                             f.project_flow_pre_tax[0]),
                            ("project_irr_post_tax", "project_post_tax",
                             f.project_flow_post_tax[0])):
        got = _named(wb, name)
        # the spreadsheet's root is one of the engine's roots (1e-8) ...
        assert min(abs(got - r) for r in irrs[key].roots) < 1e-8 * max(1.0, abs(got)), name
        # ... and the root numpy-financial finds from the engine's flow
        assert got == pytest.approx(npf.irr(flow), rel=1e-8), name
    # CashFlow foot: NPV and IRR of revenue - total cost (numpy-financial on the engine flow)
    assert _close(_named(wb, "project_npv_pre_tax"),
                  npf.npv(runs["lender"].case["finance.discount_rate"],
                          f.project_flow_pre_tax[0]))
    ws = wb["Debt"]
    labels = {ws.cell(row=r, column=1).value: r for r in range(1, ws.max_row + 1)}
    n = f.cfads.shape[1] - 1

    def line(label_start):
        r = next(r for lab, r in labels.items() if lab and lab.startswith(label_start))
        return np.array([np.nan if v in (None, "") else v for v in
                         (ws.cell(row=r, column=3 + t).value for t in range(n + 1))], float)

    for label, expected in (("Revenue", f.revenue[0]), ("Interest", f.interest[0]),
                            ("Tax paid", f.tax[0]), ("CFADS after", f.cfads[0]),
                            ("CFADS before", f.cfads_before_reserves[0]),
                            ("LLCR in year", f.llcr_by_year[0]),
                            ("PLCR in year", f.plcr_by_year[0]),
                            ("DSRA balance", f.dsra.balance[0]),
                            ("MRA: balance", f.mra.balance[0]),
                            ("Closing loan balance", f.debt_balance[0]),
                            ("Cash flow to equity", f.equity_flow[0]),
                            ("DSCR = CFADS", f.dscr[0]),
                            ("Scheduled debt service", f.sizing.service[0])):
        np.testing.assert_allclose(line(label), expected, rtol=REL, atol=1e-5, err_msg=label)


@needs_soffice
def test_energy_figures_agree_with_engine(runs, recalculated):
    e = runs["full"].base.energy
    ws = recalculated["full"]["Energy"]
    figures = {row[0]: row[1] for row in ws.iter_rows(values_only=True) if row[0]}
    assert _close(figures["Year (sum of months)"], e.monthly_kwh[0].sum())
    key = next(k for k in figures if k.startswith("Performance ratio"))
    assert _close(figures[key], e.performance_ratio[0])
    key = next(k for k in figures if k.startswith("Specific yield"))
    assert _close(figures[key], e.specific_yield_kwh_per_kw[0])


@needs_soffice
def test_model_is_live_capex_edit(runs, recalculated):
    """Change capex in the Inputs sheet: the recalculated LCOE equals a Python run with it."""
    full = runs["full"]
    changed = evaluate(full.case.with_values({"costs.capex_per_kw": NEW_CAPEX}), full.site)
    wb = recalculated["edited"]
    assert _close(_named(wb, "lcoe_real"), changed.cashflow.lcoe_real[0])
    assert _close(_named(wb, "lcoe_nominal"), changed.cashflow.lcoe_nominal[0])
    assert _close(_named(wb, "npv_costs"), changed.cashflow.pv_costs[0])
    assert not _close(_named(wb, "lcoe_real"), full.base.cashflow.lcoe_real[0], rel=1e-3)


@needs_soffice
def test_distribution_formulas_agree_with_engine(runs, recalculated):
    """PERCENTILE/AVERAGE/STDEV over the listed trials equal engine.stats (all trials listed)."""
    unc = runs["full"].extras["uncertainty"]
    assert unc.trials.n <= MAX_TRIALS_IN_SHEET
    ws = recalculated["full"]["Distribution"]
    rows = [r for r in ws.iter_rows(min_col=1, max_col=5, values_only=True)]
    start = next(i for i, r in enumerate(rows) if r[0] and str(r[0]).startswith("Same, by"))
    keys = ["mean", "sd", "q05", "q10", "q50", "q90", "q95"]
    outputs = ["lcoe_real_per_kwh", "lcoe_nominal_per_kwh", "npv_costs",
               "energy_first_year_kwh"]
    for i, key in enumerate(keys):
        row = rows[start + 1 + i]
        for j, out in enumerate(outputs):
            assert _close(row[1 + j], unc.stats[out][key]), (key, out)
    counts = [r[3] for r in rows if isinstance(r[0], float) and isinstance(r[3], int | float)]
    assert sum(counts) == unc.trials.n


@needs_soffice
def test_hostile_text_survives_libreoffice(recalculated):
    wb = openpyxl.load_workbook(recalculated["files"]["hostile"])
    _assert_hostile_cells(wb)


@needs_soffice
def test_comparison_sheet(runs, recalculated):
    ws = recalculated["comparison"]["Comparison"]
    rows = {r[0]: r for r in ws.iter_rows(values_only=True) if r[0]}
    a, b = runs["full"].base.cashflow, runs["hostile"].base.cashflow
    assert _close(rows["LCOE real"][2], a.lcoe_real[0])
    assert _close(rows["LCOE real"][3], b.lcoe_real[0])
    assert rows["Case"][3] == HOSTILE[0]
    diff = rows["LCOE real, relative to run 1"]
    assert diff[2] == 0 and _close(diff[3], b.lcoe_real[0] / a.lcoe_real[0] - 1)


# --------------------------------------------------------------------------------------------
# reading the Inputs sheet back
# --------------------------------------------------------------------------------------------
def test_readback_rebuilds_the_case(runs):
    full = runs["full"]
    case = case_from_workbook(runs["paths"]["full"])
    assert dict(case.values) == dict(full.case.values)
    assert case.replacements == full.case.replacements
    assert dict(case.uncertain) == dict(full.case.uncertain)
    assert list(case.correlation) == list(full.case.correlation)
    assert "full.xlsx" in case.source and len(case.sha256) == 64
    again = evaluate(case, full.site)
    assert again.cashflow.lcoe_real[0] == full.base.cashflow.lcoe_real[0]


def test_readback_keeps_bankability_tables(runs):
    lender = runs["lender"].case
    case = case_from_workbook(runs["paths"]["lender"])
    assert dict(case.values) == dict(lender.values)
    assert case.sections == lender.sections and case.debt_sizing == lender.debt_sizing
    assert case.drawdown == lender.drawdown and len(case.drawdown) == 4


def test_readback_keeps_nested_tables_and_lists(tmp_path):
    """A body of facets: the nested [plant.body] table and [[plant.body.facet]] list."""
    from lcoe.case.schema import FIELD_BY_PATH

    if "plant.body.shape" not in FIELD_BY_PATH:
        pytest.skip("this schema has no [plant.body]")
    data = {
        "case": {"name": "facets", "lifetime_years": 20},
        "site": {"latitude_deg": 36.1, "longitude_deg": -79.95, "altitude_m": 273.0},
        "plant": {"mount": "body", "dc_capacity_kw": 500.0,
                  "body": {"shape": "facets", "spacing_m": 6.0,
                           "facet": [{"tilt_deg": 30.0, "azimuth_deg": 135.0, "area_m2": 2.0},
                                     {"tilt_deg": 30.0, "azimuth_deg": 225.0, "area_m2": 2.0}]}},
        "costs": {"capex_per_kw": 1500.0},
        "finance": {"discount_rate": 0.07},
    }
    case = case_from_dict(data, source=str(tmp_path / "facets.toml"), base_dir=tmp_path)
    path = tmp_path / "facets.xlsx"
    write_workbook(run_case(case, samples=0), path)
    back = case_from_workbook(path)
    assert dict(back.values) == dict(case.values)
    assert back.body_facets == case.body_facets and len(back.body_facets) == 2


def test_readback_hostile_text_round_trips(runs):
    case = case_from_workbook(runs["paths"]["hostile"])
    assert case.name == HOSTILE[0] and case["case.description"] == HOSTILE[1]
    assert [r.item for r in case.replacements] == list(HOSTILE[2:])


def test_readback_takes_an_edit(runs):
    case = case_from_workbook(runs["paths"]["edited"])
    assert case["costs.capex_per_kw"] == NEW_CAPEX
    assert case["finance.discount_rate"] == runs["full"].case["finance.discount_rate"]


@pytest.mark.parametrize("key,value,allowed", [
    ("costs.capex_per_kw", -5.0, ">= 0"),
    ("costs.capex_per_kw", "cheap", "a number"),
    ("plant.mount", "on the roof", "fixed"),
    ("costs.replacement[1].every_years", 40, "shorter than"),
])
def test_readback_bad_value_names_workbook_key_value(runs, tmp_path, key, value, allowed):
    bad = tmp_path / "bad.xlsx"
    _edit_input(runs["paths"]["full"], bad, key, value)
    with pytest.raises(InputError) as err:
        case_from_workbook(bad)
    msg = str(err.value)
    assert "bad.xlsx" in msg and key in msg and str(value) in msg and allowed in msg, msg


def test_readback_refuses_foreign_and_missing(tmp_path):
    with pytest.raises(InputError, match="not found"):
        case_from_workbook(tmp_path / "nope.xlsx")
    wb = openpyxl.Workbook()
    wb.active.title = "Inputs"
    wb.save(tmp_path / "foreign.xlsx")
    with pytest.raises(InputError, match="not a workbook written by lcoe"):
        case_from_workbook(tmp_path / "foreign.xlsx")


def test_run_case_accepts_a_workbook(runs, tmp_path):
    path = tmp_path / "copy.xlsx"
    shutil.copy(runs["paths"]["edited"], path)
    result = run_case(path, samples=0)
    assert result.case["costs.capex_per_kw"] == NEW_CAPEX
    assert result.base.cashflow.lcoe_real[0] > runs["full"].base.cashflow.lcoe_real[0]


@needs_soffice
def test_readback_after_libreoffice_save(runs, recalculated):
    """A workbook saved by a spreadsheet program (LibreOffice) still reads back."""
    case = case_from_workbook(recalculated["files"]["edited"])
    assert case["costs.capex_per_kw"] == NEW_CAPEX
    assert dict(case.uncertain) == dict(runs["full"].case.uncertain)
    hostile = case_from_workbook(recalculated["files"]["hostile"])
    assert [r.item for r in hostile.replacements] == list(HOSTILE[2:])


def test_every_sheet_prints_landscape_one_page_wide(runs):
    wb = openpyxl.load_workbook(runs["paths"]["lender"])
    for ws in wb.worksheets:
        if ws.sheet_state != "visible":
            continue
        assert ws.page_setup.orientation == "landscape", ws.title
        assert ws.page_setup.fitToWidth == 1 and ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.print_area, ws.title
    debt = wb["Debt"]
    assert debt.print_title_cols.replace("$", "") == "A:B" and debt.print_title_rows


@needs_soffice
def test_lender_workbook_prints_in_under_40_pages(runs):
    pdf = to_pdf(runs["paths"]["lender"], runs["tmp"] / "pdf")
    pages = pdf_pages(pdf)
    assert 5 <= pages < 40, pages


@needs_soffice
def test_cash_sweep_reserve_and_equity_paid_idc_agree_with_engine(runs, recalculated):
    """Cross-implementation: the sweep, a DSRA built from cash flow and IDC paid by equity,
    recalculated by LibreOffice, vs lcoe.bank."""
    f = runs["swept"].extras["bankability"].finance
    assert f.prepaid[0].sum() > 0 and f.dsra.initial[0] == 0
    wb = recalculated["swept"]
    assert _close(_named(wb, "debt_amount"), f.debt[0])
    assert _close(_named(wb, "equity_at_close"), f.sources_uses["sources"]["equity"][0])
    ws = wb["Debt"]
    labels = {ws.cell(row=r, column=1).value: r for r in range(1, ws.max_row + 1)}
    n = f.cfads.shape[1] - 1
    # The sweep is the small difference of CFADS-sized flows (cash above a multiple of the
    # service): its rounding is that of CFADS, so money is compared at REL of the CFADS scale.
    scale = float(np.nanmax(np.abs(f.cfads[0])))
    for start, expected in (("Cash sweep", f.prepaid[0]), ("Closing loan", f.debt_balance[0]),
                            ("DSRA balance", f.dsra.balance[0]),
                            ("Cash flow to equity", f.equity_flow[0]),
                            ("LLCR in year", f.llcr_by_year[0])):
        r = next(r for lab, r in labels.items() if lab and lab.startswith(start))
        got = np.array([np.nan if v in (None, "") else v for v in
                        (ws.cell(row=r, column=3 + t).value for t in range(n + 1))], float)
        atol = 1e-5 if start.startswith("LLCR") else max(1e-5, REL * scale)
        np.testing.assert_allclose(got, expected, rtol=REL, atol=atol, err_msg=start)
