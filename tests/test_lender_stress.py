"""Stress cases of the lender's view: each gives a result and a plain sentence, never a crash."""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import INPUTS, write_case

from lcoe.money.debt import size_debt
from lcoe.money.metrics import project_finance

LENDER = INPUTS / "lender_single_axis.toml"


def _lender_variant(tmp_path, old: str, new: str, name: str = "stress.toml"):
    text = LENDER.read_text(encoding="utf-8")
    assert old in text
    return write_case(tmp_path, text.replace(old, new), name)


def _run_and_write(path, out):
    from lcoe.export.run_outputs import write_outputs
    from lcoe.export.summary import summary_dict
    from lcoe.study.run import run_case

    result = run_case(path, samples=16, sobol_base=0)
    write_outputs(result, out)
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert (out / "workbook.xlsx").is_file() and (out / "report.html").is_file()
    return result, summary, summary_dict(result)


def test_tariff_too_low_carries_no_debt_and_says_why(tmp_path):
    path = _lender_variant(tmp_path, "tariff_per_kwh = 0.083", "tariff_per_kwh = 0.008")
    result, summary, _ = _run_and_write(path, tmp_path / "out")
    b = summary["bankability"]
    assert b["debt"] == 0
    assert b["min_dscr"] is None
    assert b["no_debt_reason"].startswith("no debt can be carried at 1.30x on P50: CFADS in "
                                          "year 1 is negative")
    assert any(r["binding"] for r in b["sizing_table"])
    lines = "\n".join(result.extras["bankability"].table_lines())
    assert "nan" not in lines and "CFADS in year 1 is negative" in lines


def test_capex_entered_as_a_total_carries_no_debt(tmp_path):
    # 56 million per kW: the plant's total typed into the per-kW key; insurance on that capex
    # makes CFADS negative in every year
    path = _lender_variant(tmp_path, "capex_per_kw = 1120.0", "capex_per_kw = 56000000.0")
    path.write_text(path.read_text().split("[uncertain]")[0], encoding="utf-8")
    _, summary, _ = _run_and_write(path, tmp_path / "out")
    b = summary["bankability"]
    assert b["debt"] == 0 and "CFADS in year 1 is negative" in b["no_debt_reason"]


def test_debt_at_the_gearing_cap(tmp_path):
    path = _lender_variant(tmp_path, "max_gearing = 0.80", "max_gearing = 0.30")
    path.write_text(path.read_text().split("[uncertain]")[0], encoding="utf-8")
    _, summary, _ = _run_and_write(path, tmp_path / "out")
    b = summary["bankability"]
    capex = 1120.0 * 50000.0
    assert b["debt"] == pytest.approx(0.30 * capex, rel=1e-12)
    assert b["binding_constraint"] == "gearing cap 30 %"
    binding = [r for r in b["sizing_table"] if r["binding"]]
    assert len(binding) == 1 and binding[0]["constraint"] == "gearing cap 30 %"
    # every DSCR constraint alone would allow more than the cap
    assert all(r["debt"] > b["debt"] for r in b["sizing_table"] if not r["binding"])
    assert b["min_dscr"] > 1.30


N = 10
REVENUE = np.r_[0.0, np.full(N, 100.0)]
OPEX = np.r_[0.0, np.full(N, 40.0)]


def test_zero_debt_all_equity():
    # a given loan of 0: the equity flow is the post-tax project flow, no cover ratios
    f = project_finance(revenue=REVENUE, opex=OPEX, capex=300.0, tax_rate=0.0,
                        depreciation_method="straight_line", depreciation_years=N,
                        interest_rate=0.06, tenor_years=8, debt_amount=0.0, discount_rate=0.08)
    assert f.debt[0] == 0 and np.all(np.isnan(f.dscr)) and np.isnan(f.min_dscr[0])
    np.testing.assert_allclose(f.equity_flow, f.project_flow_post_tax)


def test_negative_cfads_year_annuity_carries_no_debt():
    # a level payment cannot be covered in a year of negative CFADS
    cf = np.r_[0.0, 50.0, 50.0, -20.0, np.full(N - 3, 50.0)]
    s = size_debt({"P50": cf}, [("P50", 1.30)], 0.06, 8, "annuity", 1000.0, 0.8)
    assert s.debt[0] == 0
    assert s.reason[0] == ("no debt can be carried at 1.30x on P50: CFADS in year 3 is "
                           "negative (-20)")


def test_negative_cfads_year_sculpted_skips_service():
    # sculpting schedules no service in the negative year; debt = PV of the other years'
    # CFADS / 1.30 at the loan rate (independent computation of DOMAIN.md section 3)
    cf = np.r_[0.0, 50.0, 50.0, -20.0, np.full(N - 3, 50.0)]
    s = size_debt({"P50": cf}, [("P50", 1.30)], 0.06, 8, "sculpted", 1000.0, 0.8)
    t = np.arange(1, 9)
    expected = sum(max(cf[k], 0.0) / 1.30 / 1.06 ** k for k in t)
    assert s.debt[0] == pytest.approx(expected, rel=1e-12)
    assert s.service[0, 3] == 0 and s.reason[0] == ""


def test_negative_cfads_in_every_year_sculpted():
    cf = np.r_[0.0, np.full(N, -5.0)]
    s = size_debt({"P50": cf, "P99_1yr": cf}, [("P50", 1.30), ("P99_1yr", 1.0)], 0.06, 8,
                  "sculpted", 1000.0, 0.8)
    assert s.debt[0] == 0 and "CFADS in year 1 is negative (-5)" in s.reason[0]
    assert "8 of the 8 tenor years" in s.reason[0]
