"""Reserve accounts (MRA, DSRA), cash sweep and cover ratios by year (lcoe.bank)."""

from __future__ import annotations

import numpy as np
import pytest

from lcoe.money.debt import size_debt
from lcoe.money.metrics import project_finance
from lcoe.money.repayment import cover_ratios_by_year, debt_schedule
from lcoe.money.reserves import maintenance_reserve, service_reserve


def test_maintenance_reserve_accrues_ahead_by_hand():
    # by hand: 90 due in year 5 accrued over 3 years -> 30 in years 2, 3, 4, released in 5;
    # 12 due in year 2 can only be accrued in year 1
    renew = np.array([0, 0, 12, 0, 0, 90, 0], float)
    m = maintenance_reserve(renew, 3)
    np.testing.assert_allclose(m.contribution[0], [0, 12, 30, 30, 30, 0, 0])
    np.testing.assert_allclose(m.release[0], [0, 0, 12, 0, 0, 90, 0])
    np.testing.assert_allclose(m.balance[0], [0, 12, 30, 60, 90, 0, 0])
    # CFADS after transfers: the renewal is spread, the total is kept
    assert m.cfads_adjustment.sum() == pytest.approx(0.0)
    assert np.all(maintenance_reserve(renew, 0).contribution == 0)


def test_dsra_sized_on_next_service_by_hand():
    # common practice: 6 months of the next year's debt service, funded at close, released
    # at maturity. service 100, 120, 80 -> targets 50, 60, 40, 0
    service = np.array([0, 100, 120, 80, 0], float)
    cash = np.array([0, 30, -25, 30, 30], float)
    r = service_reserve(service, cash, 6.0)
    np.testing.assert_allclose(r.target[0], [50, 60, 40, 0, 0])
    # year 1: 50 -> top up 10 of the 30 of cash; year 2: shortfall 25 drawn (35 left), then
    # target 40 cannot be topped up from negative cash; year 3: top up 5 -> 40, ... year 3's
    # target is 0 (no service in year 4): the whole balance is released
    np.testing.assert_allclose(r.draw[0], [0, 0, 25, 0, 0])
    np.testing.assert_allclose(r.balance[0], [50, 60, 35, 0, 0])
    np.testing.assert_allclose(r.movement[0], [50, 10, -25, -35, 0])
    built = service_reserve(service, cash, 6.0, funded_at_close=False)
    assert built.initial[0] == 0 and built.balance[0, 1] == 30


def test_cover_ratios_by_year_identity():
    # LLCR_t = NPV at the loan rate of CFADS from t to maturity / balance at the start of t
    # (DOMAIN.md section 8), computed here term by term; PLCR to the end of life
    rng = np.random.default_rng(3)
    n, tenor, i = 12, 9, 0.055
    cf = np.r_[0.0, rng.uniform(80, 120, n)]
    s = size_debt({"P50": cf}, [("P50", 1.25)], i, tenor, "sculpted", 1e6, 1.0)
    sch = debt_schedule(s.debt, i, tenor, n, "sculpted", service_profile=s.service)
    llcr_t, plcr_t = cover_ratios_by_year(cf, sch.opening, i, tenor)
    for t in range(1, tenor + 1):
        pv_loan = sum(cf[k] / (1 + i) ** (k - t + 1) for k in range(t, tenor + 1))
        pv_life = sum(cf[k] / (1 + i) ** (k - t + 1) for k in range(t, n + 1))
        assert llcr_t[0, t] == pytest.approx(pv_loan / sch.opening[0, t], rel=1e-12)
        assert plcr_t[0, t] == pytest.approx(pv_life / sch.opening[0, t], rel=1e-12)
        # sculpted to a flat 1.25x: the balance is the PV of the remaining service, so LLCR
        # equals the target DSCR in every year (analytic)
        assert llcr_t[0, t] == pytest.approx(1.25, rel=1e-10)
    assert np.all(np.isnan(llcr_t[0, tenor + 1:]))


def test_cash_sweep_repays_early():
    n, tenor, i = 10, 8, 0.06
    cf = np.r_[0.0, np.full(n, 100.0)]
    base = debt_schedule(400.0, i, tenor, n, "annuity")
    swept = debt_schedule(400.0, i, tenor, n, "annuity", sweep_cfads=cf, sweep_share=0.5,
                          sweep_above_dscr=1.2)
    # year 1 by hand: interest 24, contractual principal = service - 24, sweep = half of the
    # cash above 1.2 x service
    ds1 = base.service[0, 1]
    assert swept.prepaid[0, 1] == pytest.approx(0.5 * (100 - 1.2 * ds1), rel=1e-12)
    assert swept.principal[0].sum() + swept.prepaid[0].sum() == pytest.approx(400.0)
    assert swept.interest[0].sum() < base.interest[0].sum()
    assert swept.closing[0, -1] == 0 and np.all(swept.closing[0] >= -1e-9)
    # the loan is gone before maturity
    assert np.any(swept.closing[0, 1:tenor] < 1e-9)


def test_project_finance_with_reserves_and_sweep_keeps_cash_identity():
    n = 15
    rev = np.r_[0.0, np.full(n, 200.0)]
    renew = np.zeros(n + 1)
    renew[8] = 120.0
    opex = np.r_[0.0, np.full(n, 60.0)] + renew
    kw = dict(revenue=rev, opex=opex, capex=900.0, tax_rate=0.2,
              depreciation_method="straight_line", depreciation_years=n, interest_rate=0.06,
              tenor_years=10, dscr_constraints=[("base", 1.3)], max_gearing=0.8,
              discount_rate=0.08, upfront_fee_fraction=0.01)
    plain = project_finance(**kw)
    f = project_finance(**kw, renewals=renew, mra_years_ahead=3, dsra_months=6.0,
                        construction_shares=(0.5, 0.5), commitment_fee_fraction=0.005,
                        sweep_share=0.25, sweep_above_dscr=1.0)
    # without the reserve the replacement year's service collapses; with it the cost is
    # spread over the years before and the service profile is much flatter
    def flatness(ds):
        return ds[1:11].min() / ds[1:11].max()

    assert flatness(plain.debt_service[0]) < 0.2 < 0.6 < flatness(f.sizing.service[0])
    # lender's DSCR (after MRA transfers) sits at the target; before the transfers the
    # replacement year shows the hit and the accrual years look better than they are
    assert np.nanmin(f.dscr[0]) == pytest.approx(1.3, rel=1e-8)
    assert f.dscr_before_reserves[0, 8] < 1.0 < 1.3 < f.dscr_before_reserves[0, 7]
    # sources = uses, and equity at close pays what the loan does not
    su = f.sources_uses
    assert sum(v[0] for v in su["uses"].values()) == pytest.approx(
        sum(v[0] for v in su["sources"].values()))
    assert f.equity_flow[0, 0] == pytest.approx(-su["sources"]["equity"][0])
    # every unit of CFADS goes to service, prepayment, reserves or equity
    t = slice(1, None)
    np.testing.assert_allclose(
        f.cfads_before_reserves[0, t],
        f.debt_service[0, t] + f.prepaid[0, t] + f.dsra.movement[0, t]
        + f.mra.contribution[0, t] - f.mra.release[0, t] + f.equity_flow[0, t], atol=1e-9)
    assert f.prepaid[0].sum() > 0 and f.dsra.balance[0, -1] == 0
