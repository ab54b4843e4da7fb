"""Tests of lcoe.money.metrics: the project-finance cash flow and the break-even tariff."""

import numpy as np
import numpy_financial as npf
import pytest

from lcoe.case.errors import InputError
from lcoe.money.breakeven import breakeven_tariff
from lcoe.money.debt import size_debt
from lcoe.money.metrics import project_finance
from lcoe.money.tax import apply_tax_credits, tax_with_loss_carryforward


def test_worked_example_by_hand():
    """5-year life, 3-year annuity loan, straight-line depreciation, 30 % tax."""
    res = project_finance(
        revenue=[0.0, 250, 400, 400, 400, 400],
        opex=[0.0, 100, 100, 100, 100, 100],
        capex=1000.0,
        tax_rate=0.30,
        depreciation_method="straight_line",
        depreciation_years=5,
        interest_rate=0.10,
        tenor_years=3,
        repayment="annuity",
        upfront_fee_fraction=0.01,
        debt_amount=600.0,
        discount_rate=0.08,
    )
    # analytic, written out by hand:
    # depreciation 1000 / 5 = 200 a year; EBITDA 150, 300, 300, 300, 300
    payment = 600.0 * 0.10 * 1.1**3 / (1.1**3 - 1.0)  # annuity, = 241.2689
    interest1 = 0.10 * 600.0  # 60
    balance1 = 600.0 - (payment - interest1)  # 418.7311
    interest2 = 0.10 * balance1  # 41.8731
    balance2 = balance1 - (payment - interest2)  # 219.3353
    interest3 = 0.10 * balance2  # 21.9335
    taxable1 = 150.0 - 200.0 - interest1  # -110 -> loss 110 carried
    taxable2 = 300.0 - 200.0 - interest2  # 58.127 - 110 < 0 -> no tax, loss 51.873
    loss2 = -taxable1 - taxable2
    taxable3 = 300.0 - 200.0 - interest3  # 78.066 - 51.873 = 26.193 taxed
    tax3 = 0.30 * (taxable3 - loss2)  # 7.858
    tax4 = tax5 = 0.30 * (300.0 - 200.0)  # 30, no interest after year 3
    cfads = [0.0, 150.0, 300.0, 300.0 - tax3, 300.0 - tax4, 300.0 - tax5]
    fee = 0.01 * 600.0
    equity = [
        -(1000.0 - 600.0 + fee),  # -406
        150.0 - payment,
        300.0 - payment,
        300.0 - tax3 - payment,
        300.0 - tax4,
        300.0 - tax5,
    ]
    assert np.allclose(res.interest[0], [0, interest1, interest2, interest3, 0, 0], rtol=1e-12)
    assert np.allclose(res.taxable_income[0, 1:4], [taxable1, taxable2, taxable3], rtol=1e-12)
    assert np.allclose(res.tax[0], [0, 0, 0, tax3, tax4, tax5], rtol=1e-12, atol=1e-12)
    assert np.allclose(res.loss_balance[0], [0, 110.0, loss2, 0, 0, 0], rtol=1e-12, atol=1e-12)
    assert np.allclose(res.cfads[0], cfads, rtol=1e-12)
    assert np.allclose(res.debt_service[0], [0, payment, payment, payment, 0, 0], rtol=1e-12)
    dscr = [150.0 / payment, 300.0 / payment, (300.0 - tax3) / payment]
    assert np.allclose(res.dscr[0, 1:4], dscr, rtol=1e-12)
    assert np.all(np.isnan(res.dscr[0, [0, 4, 5]]))
    assert res.min_dscr[0] == pytest.approx(min(dscr), rel=1e-12)
    assert res.avg_dscr[0] == pytest.approx(sum(dscr) / 3, rel=1e-12)
    llcr = (150.0 / 1.1 + 300.0 / 1.1**2 + (300.0 - tax3) / 1.1**3) / 600.0
    assert res.llcr[0] == pytest.approx(llcr, rel=1e-12)
    assert np.allclose(res.equity_flow[0], equity, rtol=1e-12)
    # cumulative equity: -406, -497.3, -438.5, -387.7, -117.7, +152.3 -> payback in year 5
    assert res.payback_year[0] == 5
    # cross-implementation: numpy_financial.irr / npv on the hand-built flows
    assert res.equity_irr[0] == pytest.approx(npf.irr(equity), abs=1e-10)
    assert res.npv_equity[0] == pytest.approx(npf.npv(0.08, equity), rel=1e-12)
    assert res.project_irr_pre_tax[0] == pytest.approx(
        npf.irr([-1000.0, 150, 300, 300, 300, 300]), abs=1e-10
    )
    assert res.iterations == 2  # a given annuity loan does not depend on CFADS


def _sculpted_kwargs(**over):
    n = 20
    kw = dict(
        revenue=np.r_[0.0, np.full(n, 200.0) * 0.995 ** np.arange(n)],
        opex=np.r_[0.0, np.full(n, 45.0)],
        capex=1500.0,
        tax_rate=0.25,
        depreciation_method="declining_balance",
        depreciation_years=10,
        depreciation_rate=0.2,
        interest_rate=0.06,
        tenor_years=15,
        repayment="sculpted",
        dscr_constraints=[("base", 1.30), ("P99_1yr", 1.00)],
        sizing_revenue={"P99_1yr": np.r_[0.0, np.full(n, 168.0) * 0.995 ** np.arange(n)]},
        max_gearing=0.85,
        upfront_fee_fraction=0.015,
        discount_rate=0.09,
    )
    kw.update(over)
    return kw


def test_fixed_point_converges_and_is_self_consistent():
    kw = _sculpted_kwargs()
    res = project_finance(**kw)
    assert 3 <= res.iterations < 100
    # recompute once more from the final interest: same tax, CFADS and debt
    cases = {"base": kw["revenue"], "P99_1yr": kw["sizing_revenue"]["P99_1yr"]}
    cfads = {}
    for name, rev in cases.items():
        ebitda = rev - kw["opex"]
        tax, _ = tax_with_loss_carryforward(ebitda - res.depreciation - res.interest, 0.25)
        tax, _ = apply_tax_credits(tax, np.zeros_like(tax))
        cfads[name] = ebitda - tax
    assert np.allclose(cfads["base"], res.cfads, rtol=1e-12, atol=1e-9)
    again = size_debt(cfads, kw["dscr_constraints"], 0.06, 15, "sculpted", 1500.0, 0.85)
    assert again.debt == pytest.approx(res.debt, rel=1e-9)
    assert np.allclose(again.service, res.debt_service, rtol=1e-9, atol=1e-9)
    # the binding case sits at its target in every tenor year
    assert res.sizing.binding[0] == "base @ 1.30x"
    assert np.allclose(res.dscr[0, 1:16], 1.30, rtol=1e-9)
    assert res.llcr[0] == pytest.approx(1.30, rel=1e-9)
    assert res.debt_balance[0, 15] == 0.0


def test_not_converged_raises():
    with pytest.raises(RuntimeError, match="did not converge"):
        project_finance(**_sculpted_kwargs(max_iterations=2))


def test_all_equity_post_tax_project_equals_equity():
    kw = _sculpted_kwargs(dscr_constraints=None, sizing_revenue=None, debt_amount=0.0)
    res = project_finance(**kw)
    assert res.debt[0] == 0.0 and np.isnan(res.min_dscr[0]) and np.isnan(res.llcr[0])
    # analytic: without debt, interest is 0, so the equity flow is the post-tax project flow
    assert np.allclose(res.equity_flow, res.project_flow_post_tax, rtol=1e-14)
    assert res.equity_irr[0] == pytest.approx(res.project_irr_post_tax[0], abs=1e-14)


def test_itc_reduces_tax_and_basis():
    kw = _sculpted_kwargs(
        depreciation_method="straight_line", depreciation_rate=None, itc_fraction=0.3
    )
    res = project_finance(**kw)
    # analytic: basis 1500 - 0.5 x 0.3 x 1500 = 1275, straight line over 10 years
    assert np.allclose(res.depreciation[0, 1:11], 127.5, rtol=1e-14)
    # analytic: credit 0.3 x 1500 = 450 arises in year 1; it offsets the tax due after loss
    # relief year by year until used up, and is never paid out
    tax_before, _ = tax_with_loss_carryforward(res.taxable_income, 0.25)
    used = np.minimum(np.cumsum(tax_before[0]), 450.0)
    assert np.allclose(res.credit_balance[0, 1:], 450.0 - used[1:], rtol=1e-12, atol=1e-9)
    assert np.allclose(np.cumsum(res.tax[0]), np.cumsum(tax_before[0]) - used, atol=1e-9)
    assert res.tax[0, 1] == 0.0 and res.credit_balance[0, -1] < 450.0
    no_itc = project_finance(
        **_sculpted_kwargs(depreciation_method="straight_line", depreciation_rate=None)
    )
    assert res.tax.sum() < no_itc.tax.sum()


def test_vectorised_over_samples_equals_one_by_one():
    kw = _sculpted_kwargs()
    scales = np.array([0.9, 1.0, 1.15])
    rev = scales[:, None] * kw["revenue"]
    p99 = scales[:, None] * kw["sizing_revenue"]["P99_1yr"]
    both = project_finance(**{**kw, "revenue": rev, "sizing_revenue": {"P99_1yr": p99}})
    for k in range(3):
        one = project_finance(**{**kw, "revenue": rev[k], "sizing_revenue": {"P99_1yr": p99[k]}})
        assert both.debt[k] == pytest.approx(one.debt[0], rel=1e-9)
        assert both.equity_irr[k] == pytest.approx(one.equity_irr[0], abs=1e-9)
        assert np.allclose(both.tax[k], one.tax[0], rtol=1e-9, atol=1e-9)


def test_breakeven_tariff_gives_target_irr():
    n = 20
    energy = np.r_[0.0, np.full(n, 2000.0)]
    kw = _sculpted_kwargs()
    for key in ("revenue", "sizing_revenue", "discount_rate"):
        kw.pop(key)
    tariff = breakeven_tariff(
        energy_kwh=energy,
        sizing_energy_kwh={"P99_1yr": 0.85 * energy},
        inflation=0.02,
        target_equity_irr=0.11,
        **kw,
    )
    price = tariff[0] * 1.02 ** np.arange(n + 1)
    res = project_finance(
        revenue=price * energy,
        sizing_revenue={"P99_1yr": price * 0.85 * energy},
        discount_rate=0.11,
        **kw,
    )
    assert res.equity_irr[0] == pytest.approx(0.11, abs=1e-6)


def test_input_errors():
    with pytest.raises(InputError, match="exactly one"):
        project_finance(**_sculpted_kwargs(debt_amount=100.0))
    kw = _sculpted_kwargs(dscr_constraints=None, sizing_revenue=None, debt_amount=1400.0)
    with pytest.raises(InputError, match="debt_amount"):
        project_finance(**kw)
    with pytest.raises(InputError, match="did you mean"):
        project_finance(**_sculpted_kwargs(dscr_constraints=[("P99_1y", 1.0)]))
