"""report.html: self-contained, escaped, and rendered by a real browser (headless Chromium)."""

from __future__ import annotations

import dataclasses
import re

import numpy as np
import pytest
from conftest import DEMO, INPUTS
from helpers.browser import chromium_path, render

from lcoe.case.reader import load_case
from lcoe.export.report import report_html, write_report
from lcoe.study.run import run_case

HOSTILE_NAME = '<script>alert("x")</script> =HYPERLINK("http://example.invalid") & co'


@pytest.fixture(scope="module")
def study():
    return run_case(DEMO, samples=128, sobol_base=16)


@pytest.fixture(scope="module")
def hostile(study, tmp_path_factory):
    case = load_case(DEMO)
    values = dict(case.values, **{"case.name": HOSTILE_NAME,
                                  "case.description": "<b>bold</b> & \"quoted\""})
    case = dataclasses.replace(case, values=values)
    audit = [{"check": "efficiency <limit>", "verdict": "impossible",
              "message": "claims 45 % on one junction & more"},
             {"check": "energy ratio", "verdict": "ok", "message": "within range"}]
    return dataclasses.replace(study, case=case, extras=dict(study.extras, audit=audit))


def test_report_is_self_contained(study):
    page = report_html(study)
    assert page.startswith("<!DOCTYPE html>")
    assert "<script" not in page.lower()
    srcs = re.findall(r'src="([^"]+)"', page)
    assert len(srcs) == 5 and all(s.startswith("data:image/png;base64,") for s in srcs)
    assert not re.search(r'(href|src)="(https?:)?//', page)
    for text in ("Headline numbers", "LCOE real", "What drives the result", "Cautions",
                 "concentrated sunlight", "not investment advice", "independent engineer",
                 study.case.sha256, f"{study.base.cashflow.lcoe_real[0]:.4f}"):
        assert text.lower() in page.lower(), text
    assert study.extras["sensitivity"].plain_words() in page


def test_user_text_is_escaped(hostile):
    page = report_html(hostile, figures={})
    assert "<script>" not in page and "<b>bold</b>" not in page
    assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;" in page
    assert "Audit of physical limits" in page and "efficiency &lt;limit&gt;" in page
    assert 'class="verdict-impossible"' in page


@pytest.mark.skipif(chromium_path() is None, reason="Chromium is not installed")
def test_report_renders_in_chromium(hostile, tmp_path):
    from matplotlib.image import imread

    path = tmp_path / "report.html"
    write_report(hostile, path)
    shown = render(path, tmp_path / "shot")
    assert "Uncaught" not in shown.log and "ERROR:CONSOLE" not in shown.log
    assert "Headline numbers" in shown.dom and "Cautions" in shown.dom
    assert "&lt;script&gt;" in shown.dom  # the hostile name stayed text
    assert shown.dom.count("data:image/png;base64,") == 5
    px = imread(shown.screenshot)
    assert px.shape[0] >= 1000 and px.shape[1] >= 1000
    grey = px[..., :3].mean(axis=2)
    assert grey.std() > 0.05  # not a blank page
    assert np.mean(grey < 0.5) > 0.005  # some dark text and drawing


def test_lender_rows_in_the_report():
    lender = run_case(INPUTS / "lender_single_axis.toml", samples=0)
    page = report_html(lender, figures={})
    b = lender.extras["bankability"].to_summary()
    for text in ("Debt", "Minimum / average DSCR", "Equity IRR", "Break-even tariff",
                 f"{b['debt']:,.0f}", f"{b['min_dscr']:.2f}"):
        assert text in page, text
    roots = b["irr_roots"]["equity"]["roots"]
    # the decommissioning cost gives a second root: the investment root, every root beside it
    assert b["equity_irr"] is not None and len(roots) > 1
    assert (f"{100 * b['equity_irr']:.2f} (investment root; all roots "
            + ", ".join(f"{100 * x:.2f}" for x in roots) + ")") in page
    assert "several roots" not in page


def test_lender_report_has_the_debt_section(tmp_path):
    result = run_case(INPUTS / "lender_single_axis.toml", samples=32, sobol_base=0,
                      sobol_output="min_dscr")
    page = report_html(result, figures={})
    for text in ("Debt: the lender's case", "Sources and uses of funds to COD",
                 "Debt each constraint allows on its own", "binds", "Cover ratios by year",
                 "LLCR", "PLCR", "Breach odds over 32 trials", "as a year-1 contract price",
                 "Equity NPV at the discount rate"):
        assert text in page, text
    # the demo's loan (41.4 M) is below what each constraint allows alone (43.6 M, 44.7 M):
    # the page says why, with the smallest of those amounts
    b = result.extras["bankability"].to_summary()
    alone = min(r["debt"] for r in b["sizing_table"] if r["debt"] is not None)
    assert b["debt"] < alone - 1e5
    assert f"smaller than what any one constraint allows alone (at least {alone:,.0f}" in page
    # the tornado ranks the drivers of the minimum DSCR
    sens = result.extras["sensitivity"]
    assert sens.output == "min_dscr" and sens.tornado
    assert all(np.isfinite([t["y_low"], t["y_high"]]).all() for t in sens.tornado)


def test_no_sentence_when_one_constraint_sets_the_loan():
    from lcoe.export.debt_section import _below_each

    table = [{"debt": 100.0}, {"debt": 120.0}]
    assert _below_each(100.0, table, "USD") == ""  # the tighter constraint alone sets it
    assert _below_each(90.0, [{"debt": 100.0}, {"debt": None}], "USD") == ""  # one amount only
    assert "at least 100 USD" in _below_each(90.0, table, "USD")
