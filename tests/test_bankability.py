"""The lender's view of a case: sizing, metrics, Monte Carlo odds, bad input."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import INPUTS, MINIMAL_CASE, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case

LENDER = INPUTS / "lender_single_axis.toml"

BANK = """
[revenue]
tariff_per_kwh = 0.07
[tax]
rate = 0.25
[debt]
tenor_years = 15
"""


@pytest.fixture(scope="module")
def lender_result():
    from lcoe.study.run import run_case

    return run_case(LENDER, samples=300, sobol_base=0)


def test_summary_block(lender_result):
    from lcoe.export.summary import summary_dict

    b = summary_dict(lender_result)["bankability"]
    for key in ("debt", "gearing", "binding_constraint", "min_dscr", "avg_dscr", "llcr",
                "project_irr", "equity_irr", "equity_npv_at_discount_rate",
                "equity_npv_at_target_irr", "breakeven_tariff_per_kwh",
                "prob_dscr_below_1", "prob_lockup", "prob_equity_below_target"):
        assert key in b, key
    case = lender_result.case
    capex = case["costs.capex_per_kw"] * case["plant.dc_capacity_kw"]
    assert 0 < b["debt"] <= case["debt.max_gearing"] * capex * (1 + 1e-12)
    assert b["binding_constraint"]
    assert 0 <= b["prob_dscr_below_1"] <= b["prob_lockup"] <= 1
    assert b["min_dscr"] >= 1.0 - 1e-9  # sized with min DSCR >= 1.00 on every case


def test_binding_constraint_is_met_exactly(lender_result):
    # Sizing identity (DOMAIN.md section 3): the binding constraint's case has its minimum DSCR
    # equal to its target; all other constraints are met.
    from lcoe.money.metrics import project_finance
    from lcoe.study.lender_case import finance_inputs

    bank = lender_result.extras["bankability"]
    f = bank.finance
    binding = bank.binding
    assert binding.startswith("P50") or binding.startswith("P99")
    if binding.startswith("P50"):
        assert np.nanmin(f.dscr[0]) == pytest.approx(1.30, rel=1e-6)
    # principal repaid equals the loan and the final balance is zero
    assert f.principal[0].sum() == pytest.approx(f.debt[0], rel=1e-9)
    assert abs(f.debt_balance[0, -1]) < 1e-6 * f.debt[0]
    # P99 case with the same loan keeps DSCR >= 1.00 (its constraint)
    fi = finance_inputs(lender_result.case, lender_result.base)
    from lcoe.study.lender_case import _tax_debt_kwargs

    p99 = project_finance(revenue=fi["revenue"] * bank.factors["P99_1yr"], opex=fi["opex"],
                          renewals=fi["renewals"],
                          capex=fi["capex"], debt_amount=f.debt, service_profile=f.debt_service,
                          discount_rate=0.07, **_tax_debt_kwargs(lender_result.case))
    assert np.nanmin(p99.dscr[0]) >= 1.0 - 1e-6


def test_breakeven_tariff_gives_target_irr(lender_result):
    # Feeding the break-even tariff back gives the equity its target IRR (within 1e-6).
    from lcoe.money.irr import irr
    from lcoe.money.metrics import BASE_CASE, project_finance
    from lcoe.study.lender_case import _tax_debt_kwargs, finance_inputs

    case, bank = lender_result.case, lender_result.extras["bankability"]
    fi = finance_inputs(case, lender_result.base)
    n = fi["revenue"].shape[1] - 1
    rev = bank.breakeven_tariff * (1 + case["finance.inflation"]) ** np.arange(n + 1) * \
        fi["energy_sold_kwh"]
    cons = [(BASE_CASE if c == "P50" else c, m) for c, m in bank.constraints]
    fr = project_finance(revenue=rev, opex=fi["opex"], capex=fi["capex"], renewals=fi["renewals"],
                         dscr_constraints=cons,
                         sizing_revenue={c: rev * bank.factors[c] for c, _ in bank.constraints
                                         if c != "P50"},
                         max_gearing=case["debt.max_gearing"], discount_rate=0.07,
                         **_tax_debt_kwargs(case))
    roots = irr(fr.equity_flow[0]).roots
    assert any(abs(r - case["equity.target_irr"]) < 1e-6 for r in roots)


def test_monte_carlo_fan_and_probabilities(lender_result):
    mc = lender_result.extras["bankability"].mc
    assert mc["trials"] == 300
    fan = mc["dscr_fan"]
    assert len(fan["years"]) == len(fan["q50"]) > 0
    assert all(a <= b for a, b in zip(fan["q10"], fan["q90"]))


@pytest.mark.parametrize("old,new,key", [
    ("tenor_years = 15", "tenor_years = 30", "debt.tenor_years"),
    ("tenor_years = 15", "tenor_years = 15\nmax_gearing = 0.0", "debt.max_gearing"),
    ("tenor_years = 15", "tenor_years = 15\nmax_gearing = 1.2", "debt.max_gearing"),
    ("rate = 0.25", "rate = 1.0", "tax.rate"),
    ("tenor_years = 15", 'tenor_years = 15\nsizing = [{case = "P50", min_dscr = 0.0}]',
     "min_dscr"),
    ("tenor_years = 15", 'tenor_years = 15\nsizing = [{case = "P95", min_dscr = 1.2}]',
     "debt.sizing[0].case"),
    ("tariff_per_kwh = 0.07", "tariff_per_kwh = 0.07\ncontract_years = 40",
     "revenue.contract_years"),
])
def test_bad_bank_inputs(tmp_path, old, new, key):
    text = MINIMAL_CASE + BANK.replace(old, new)
    with pytest.raises(InputError) as exc:
        load_case(write_case(tmp_path, text))
    assert key in str(exc.value) and "\n" not in str(exc.value)


def test_revenue_needs_tariff(tmp_path):
    with pytest.raises(InputError, match="tariff_per_kwh"):
        load_case(write_case(tmp_path, MINIMAL_CASE + "\n[revenue]\ncontract_years = 10\n"))


def test_breakeven_in_the_contracts_own_escalation(lender_result):
    # The year-1 contract price escalating at the contract's rate (merchant price after the
    # contract) that gives the equity its target IRR: fed back, the equity NPV at the target
    # rate is zero (within 1e-6 of the capex)
    from lcoe.money.metrics import BASE_CASE, project_finance
    from lcoe.study.lender_case import _tax_debt_kwargs, finance_inputs, price_by_year

    case, bank = lender_result.case, lender_result.extras["bankability"]
    fi = finance_inputs(case, lender_result.base)
    n = fi["revenue"].shape[1] - 1
    t = np.arange(n + 1)
    contract = case["revenue.contract_years"]
    price = np.where((t >= 1) & (t <= contract), bank.breakeven_contract *
                     (1 + case["revenue.tariff_escalation"]) ** (t - 1.0),
                     price_by_year(case, n))
    rev = price * fi["energy_sold_kwh"]
    cons = [(BASE_CASE if c == "P50" else c, m) for c, m in bank.constraints]
    fr = project_finance(revenue=rev, opex=fi["opex"], capex=fi["capex"],
                         renewals=fi["renewals"], dscr_constraints=cons,
                         sizing_revenue={c: rev * bank.factors[c] for c, _ in bank.constraints
                                         if c != "P50"},
                         max_gearing=case["debt.max_gearing"],
                         discount_rate=case["equity.target_irr"], **_tax_debt_kwargs(case))
    assert abs(fr.npv_equity[0]) < 1e-6 * fi["capex"][0]
    # the contract-escalation figure differs from the flat-real one (different price paths)
    assert bank.breakeven_contract != pytest.approx(bank.breakeven_tariff, rel=1e-3)


def test_by_year_block_and_two_npv_names(lender_result):
    from lcoe.export.summary import summary_dict

    b = summary_dict(lender_result)["bankability"]
    assert "npv" not in b
    assert {"equity_npv_at_discount_rate", "equity_npv_at_target_irr"} <= set(b)
    y = b["by_year"]
    n = len(y["year"])
    assert all(len(y[k]) == n for k in ("cfads", "debt_service", "dscr", "llcr", "plcr"))
    f = lender_result.extras["bankability"].finance
    # LLCR at year 1 equals the LLCR at close (the opening balance of year 1 is the debt)
    assert y["llcr"][1] == pytest.approx(f.llcr[0], rel=1e-12)
    su = b["sources_and_uses"]
    assert sum(su["uses"].values()) == pytest.approx(sum(su["sources"].values()), rel=1e-12)
    assert su["uses"]["interest during construction"] > 0
    assert su["uses"]["DSRA funded at close"] > 0
