"""Value of information of a comparison: wiring, outputs and bad input."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from conftest import MINIMAL_CASE, ROOT, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.study.compare import run_comparison
from lcoe.study.value_of_information import value_of_information

UNCERTAIN = """
[uncertain]
"costs.capex_per_kw" = { dist = "triangular", low = 900, mode = 1000, high = 1150 }
"costs.fixed_om_per_kw_year" = { dist = "uniform", low = 10, high = 20 }
[uncertain.energy]
resource_sd = 0.04
"""
CANDIDATE = """
[uncertain]
"costs.capex_per_kw" = { dist = "triangular", low = 850, mode = 990, high = 1250 }
"costs.fixed_om_per_kw_year" = { dist = "uniform", low = 10, high = 20 }
[uncertain.energy]
resource_sd = 0.04
vendor_sd = 0.06
"""


@pytest.fixture(scope="module")
def comparison(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("cvoi")
    a = load_case(write_case(tmp, MINIMAL_CASE.replace('"t"', '"proven"') + UNCERTAIN, "a.toml"))
    b = load_case(write_case(tmp, MINIMAL_CASE.replace('"t"', '"novel"') + CANDIDATE,
                             "b.toml"))
    # O&M declared once for the comparison (the sharing rule of lcoe.study): one draw for both
    from lcoe.study.shared import SharedInputs

    shared = SharedInputs(source="shared.toml", pairs=[], uncertain={
        "costs.fixed_om_per_kw_year": {"dist": "uniform", "low": 10, "high": 20}})
    return run_comparison([a, b], samples=1000, seed=3, sobol_base=0, shared=shared)


def test_evppi_rows_are_consistent(comparison):
    # Decision theory: learning part of the uncertainty is worth no more than learning all of
    # it (EVPPI <= EVPI, up to estimation error), and inputs the cases share with the same
    # draw (common random numbers) barely touch the choice.
    v = comparison.voi
    assert v.evpi.value > 0 and v.n_trials == 1000
    for r in v.rows:
        assert r.value <= v.evpi.value + 2 * (r.se + v.evpi.se)
    names = {r.name: r for r in v.rows}
    # the candidate's own capex and energy factor differ between the cases: they matter
    top = {v.rows[0].name, v.rows[1].name}
    assert top & {"costs.capex_per_kw [novel]", "energy.vendor",
                  "persistent energy factors (resource, model, ...)", "costs"}
    assert names["costs.fixed_om_per_kw_year"].value < 0.2 * v.evpi.value
    assert "Learning" in v.top_sentence() or "No single" in v.top_sentence()


def test_outputs_carry_the_value_of_information(comparison, tmp_path):
    from openpyxl import load_workbook

    from lcoe.export.compare_outputs import write_compare_outputs

    out = write_compare_outputs(comparison, tmp_path / "out")
    data = json.loads((out / "comparison.json").read_text())["value_of_information"]
    assert data["evpi"]["value"] == pytest.approx(comparison.voi.evpi.value)
    assert data["evpi"]["value_per_kwh"] == pytest.approx(
        comparison.voi.evpi.value / comparison.voi.energy_ref_kwh)
    assert len(data["evppi"]) == len(comparison.voi.rows) and data["caution"]
    assert (out / "value_of_information.png").read_bytes()[:4] == b"\x89PNG"
    page = (out / "value_of_information.html").read_text()
    assert "Worth up to" in page and "distributions are right" in page
    report = (out / "report.html").read_text()  # the section is on the comparison's page
    assert "Worth up to" in report and "value_of_information.html" not in report
    assert report.count("data:image/png;base64,") == 3  # two comparison pictures + its chart
    for row in data["evppi"]:  # a key for machines, a readable label for people
        assert row["label"] and row["name"] in {r.name for r in comparison.voi.rows}
    capex = next(r for r in data["evppi"] if r["name"] == "costs.capex_per_kw [novel]")
    assert capex["label"] == "Capex [USD/kW] [novel]"
    if comparison.voi.inputs[0].name == capex["name"] and not comparison.voi.inputs[0].below_se:
        assert comparison.voi.top_sentence().startswith("Learning Capex of novel before")
    assert comparison.voi.spoken(capex["name"]) == "Capex of novel"
    ws = load_workbook(out / "comparison.xlsx")["Value of information"]
    assert ws.cell(7, 1).value == "Everything (EVPI)" and ws.cell(7, 8).value == "all (EVPI)"
    assert ws.cell(7, 2).value == pytest.approx(comparison.voi.evpi.value)
    keys = {ws.cell(r, 8).value: ws.cell(r, 1).value for r in range(8, ws.max_row + 1)}
    assert keys["costs.capex_per_kw [novel]"] == "Capex [USD/kW] [novel]"


def test_cases_with_a_tariff_are_valued_by_their_equity(tmp_path):
    # Two lender cases that differ only by a fixed land lease: the cheaper one has the higher
    # equity NPV in every trial (same loan sizing rule, same draws), so nothing is worth
    # learning: EVPI = 0 (Raiffa & Schlaifer: no decision changes).
    text = (ROOT / "inputs" / "lender_single_axis.toml").read_text()
    a = load_case(write_case(tmp_path, text, "a.toml"))
    b = load_case(write_case(tmp_path, text.replace(
        'name = "Fallow Creek 50 MW single-axis (lender case)"', 'name = "dearer"').replace(
        "land_lease_per_year = 180000.0", "land_lease_per_year = 900000.0"), "b.toml"))
    r = run_comparison([a, b], samples=64, seed=2, sobol_base=0)
    assert "equity" in r.voi.basis
    assert r.cases[0].trials.equity_npv is not None
    assert np.all(r.cases[0].trials.equity_npv > r.cases[1].trials.equity_npv)
    assert abs(r.voi.evpi.value) < 1e-3 and r.voi.best == 0  # 0 up to float rounding


def test_one_option_or_two_currencies_are_refused():
    x = np.zeros((10, 0))
    with pytest.raises(InputError, match="at least two cases"):
        value_of_information(["a"], ["USD"], np.ones((10, 1)), 1e6, x, [], [])
    with pytest.raises(InputError, match="one currency"):
        value_of_information(["a", "b"], ["USD", "EUR"], np.ones((10, 2)), 1e6, x, [], [])


@pytest.mark.parametrize("second", [None, "EUR"])
def test_cli_bad_value_of_information_request_is_one_line_exit_2(tmp_path, second):
    a = write_case(tmp_path, MINIMAL_CASE + UNCERTAIN, "a.toml")
    args = [str(a)]
    if second:
        b = write_case(tmp_path, MINIMAL_CASE.replace('name = "t"', 'name = "u"').replace(
            "[case]", f'[case]\ncurrency = "{second}"') + UNCERTAIN, "b.toml")
        args.append(str(b))
    p = subprocess.run([sys.executable, "-m", "lcoe.cli", "compare", *args, "--out",
                        str(tmp_path / "o")], capture_output=True, text=True, cwd=ROOT)
    assert p.returncode == 2
    assert len(p.stderr.strip().splitlines()) == 1 and "Traceback" not in p.stderr
    assert not (tmp_path / "o").exists()
