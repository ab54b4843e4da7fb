"""The lender's value of narrowing the resource uncertainty."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import INPUTS, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import evaluate, prepare
from lcoe.study.spec import read_spec
from lcoe.study.value_of_information import resource_information_value

LENDER = INPUTS / "lender_single_axis.toml"


@pytest.fixture(scope="module")
def lender():
    case = load_case(LENDER)
    return case, evaluate(case, prepare(case)), read_spec(case)


def test_demo_reports_halving_resource_sd(lender):
    block = resource_information_value(*lender)
    assert block.sigma[0] == pytest.approx(0.05) and block.sigma[-1] == pytest.approx(0.025)
    g = block.gains()
    assert g["debt_per_0_01_sigma"] == pytest.approx(g["debt"] / 2.5)
    s = block.to_summary()
    assert s["resource_sd_to"] == pytest.approx(0.025) and len(s["curve"]) == 6
    # the 1-year sigma used for sizing is the root-sum-square of the components
    # (DOMAIN.md section 4, normal method): sqrt(0.025^2 + 0.03^2 + 0.045^2)
    assert block.sigma_1yr[-1] == pytest.approx(np.sqrt(0.025**2 + 0.03**2 + 0.045**2))


def test_downside_sizing_gains_debt_when_sigma_narrows(tmp_path):
    # Sized on P99 alone at 1.00x, the debt must grow as sigma narrows (P99 = P50 (1 - 2.326
    # sigma), DOMAIN.md section 4), and the equity, borrowing more below its target return,
    # gains value.
    text = LENDER.read_text().replace(
        'sizing = [{ case = "P50", min_dscr = 1.30 }, { case = "P99_1yr", min_dscr = 1.00 }]',
        'sizing = [{ case = "P99_1yr", min_dscr = 1.00 }]').replace(
        "max_gearing = 0.80", "max_gearing = 0.95")
    case = load_case(write_case(tmp_path, text, "p99.toml"))
    block = resource_information_value(case, evaluate(case, prepare(case)), read_spec(case),
                                       target_sd=0.02)
    assert np.all(np.diff(block.debt) > 0)
    assert block.gains()["debt"] > 0 and block.gains()["equity_value"] > 0
    assert all(b.startswith("P99_1yr") for b in block.binding)


def test_bad_targets_are_refused(lender):
    case, base, spec = lender
    with pytest.raises(InputError, match="resource_sd target"):
        resource_information_value(case, base, spec, target_sd=0.2)
    from dataclasses import replace

    with pytest.raises(InputError, match="resource_sd is not set"):
        resource_information_value(case, base, replace(spec, energy_components={}))


def test_lender_report_and_workbook_show_the_campaign_value(tmp_path):
    # The block is in the run's page and workbook, not only in summary.json: the sentence with
    # the gains, the sigma curve and the binding constraint at every point.
    from openpyxl import load_workbook

    from lcoe.export.run_outputs import write_outputs
    from lcoe.export.voi_outputs import RESOURCE_SHEET
    from lcoe.study.run import run_case

    result = run_case(LENDER, samples=0)
    write_outputs(result, tmp_path / "o")
    block = result.extras["resource_information"]
    g = block.gains()
    page = (tmp_path / "o" / "report.html").read_text(encoding="utf-8")
    assert "Worth paying to measure the resource" in page
    assert f"{g['debt']:+,.0f} USD" in page and f"{g['equity_value']:+,.0f} USD" in page
    section = page[page.index("<section id='resource-information'>"):]
    section = section[:section.index("</section>")]
    assert all(f"<td>{b}</td>" in section for b in block.binding) and \
        section.count("<tr>") == len(block.sigma) + 1  # header + one row per sigma
    ws = load_workbook(tmp_path / "o" / "workbook.xlsx")[RESOURCE_SHEET]
    col = {ws.cell(4, j).value: j for j in range(1, 7)}
    rows = range(5, 5 + len(block.sigma))
    debt = [ws.cell(r, col["Debt [USD]"]).value for r in rows]
    assert debt == pytest.approx(block.debt.tolist(), rel=1e-12)
    assert [ws.cell(r, 1).value for r in rows] == pytest.approx(block.sigma.tolist())
    assert debt[-1] - debt[0] == pytest.approx(g["debt"], rel=1e-12)
