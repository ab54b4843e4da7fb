"""Tests of lcoe.money.finance: rates, discounting, CRF, NPV, IRR and LCOE."""

from decimal import Decimal, getcontext

import numpy as np
import numpy_financial as npf
import pytest

from lcoe.case.errors import InputError
from lcoe.money.finance import (
    annuity_payment,
    crf,
    discount_factors,
    lcoe_from_flows,
    nominal_rate,
    npv,
    real_rate,
    sign_changes,
)
from lcoe.money.irr import investment_irr, irr

# numpy-financial docstring example (cross-implementation, verified in DOMAIN.md section 3)
DOC_FLOWS = [-100, 39, 59, 55, 20]


def test_real_rate_fisher():
    # published: Fisher relation, DOMAIN.md section 3: nominal 5 %, inflation 2 % -> 2.94118 %
    assert real_rate(0.05, 0.02) == pytest.approx(0.0294117647, rel=1e-9)
    # analytic: exactly 1.05 / 1.02 - 1
    assert real_rate(0.05, 0.02) == pytest.approx(1.05 / 1.02 - 1.0, rel=1e-15)


def test_nominal_rate_inverts_real_rate():
    # analytic: the two Fisher forms are inverse to each other
    real = np.array([-0.02, 0.0, 0.03, 0.08])
    assert np.allclose(real_rate(nominal_rate(real, 0.025), 0.025), real, rtol=0, atol=1e-15)


def test_rates_reject_minus_one():
    with pytest.raises(InputError, match="inflation"):
        real_rate(0.05, -1.0)
    with pytest.raises(InputError, match="rate"):
        discount_factors(-1.5, 3)


def test_discount_factors_shapes_and_values():
    df = discount_factors(0.1, 3)
    # analytic: (1.1)**-t, t = 0 at financial close
    assert df.shape == (4,)
    assert np.allclose(df, [1.0, 1 / 1.1, 1 / 1.21, 1 / 1.331], rtol=1e-15)
    many = discount_factors(np.array([0.0, 0.1]), 3)
    assert many.shape == (2, 4)
    assert np.array_equal(many[0], np.ones(4))
    assert np.allclose(many[1], df, rtol=1e-15)


def test_npv_numpy_financial_docstring():
    # cross-implementation: numpy_financial.npv docstring, npv(0.281, flows) = -0.00847859163845
    assert npv(0.281, DOC_FLOWS) == pytest.approx(-0.00847859163845, abs=1e-12)


def test_npv_first_flow_undiscounted_like_spreadsheet_cf0_plus_npv():
    # analytic: spreadsheet form =CF0 + NPV(r, CF1:CFn), NPV() discounting CF1 by one period
    r, cf = 0.07, np.array([-500.0, 100.0, 200.0, 300.0])
    sheet = cf[0] + sum(cf[t] / (1 + r) ** t for t in range(1, 4))
    assert npv(r, cf) == pytest.approx(sheet, rel=1e-14)


def test_npv_vectorised_over_samples_matches_numpy_financial():
    rng = np.random.default_rng(3)
    flows = rng.normal(0, 100, size=(50, 12))
    rates = rng.uniform(0.0, 0.15, size=50)
    got = npv(rates, flows)
    # cross-implementation: numpy_financial.npv row by row
    want = [npf.npv(r, f) for r, f in zip(rates, flows, strict=True)]
    assert got.shape == (50,)
    assert np.allclose(got, want, rtol=1e-12, atol=1e-9)


def test_crf_published_value():
    # published (DOMAIN.md section 3, verified): CRF(7 %, 25) = 0.0858105
    assert crf(0.07, 25) == pytest.approx(0.0858105, abs=5e-8)
    # cross-implementation: -numpy_financial.pmt(0.07, 25, 1)
    assert crf(0.07, 25) == pytest.approx(-npf.pmt(0.07, 25, 1), rel=1e-13)


def test_crf_zero_rate_limit_and_small_rates():
    # analytic: r -> 0 gives 1/n, with no 0/0
    assert crf(0.0, 20) == 1.0 / 20
    # analytic: exact CRF in 60-digit decimal arithmetic near r = 0 (series branch and both
    # sides of its threshold)
    getcontext().prec = 60
    for r in (1e-12, -3e-9, 1e-7, 9.9e-6, 1.01e-5, 1e-4, 0.003):
        d = Decimal(r)
        g = (1 + d) ** 30
        exact = float(d * g / (g - 1))
        assert crf(r, 30) == pytest.approx(exact, rel=2e-14), r


def test_crf_vectorised_and_validated():
    rates = np.array([0.0, 0.05, 0.1])
    got = crf(rates, np.array([10, 20, 30]))
    # cross-implementation: numpy_financial.pmt(rate, n, 1); pmt at rate 0 is -1/n
    want = [-npf.pmt(r, n, 1) for r, n in zip(rates, [10, 20, 30], strict=True)]
    assert np.allclose(got, want, rtol=1e-13)
    with pytest.raises(InputError, match="n_years"):
        crf(0.05, 0)


def test_annuity_payment_numpy_financial_docstring():
    # cross-implementation: numpy_financial.pmt docstring, pmt(0.075/12, 180, 200000)
    # = -1854.02472000546 (sign flipped here: a payment is positive)
    assert annuity_payment(0.075 / 12, 180, 200000) == pytest.approx(1854.02472000546, rel=1e-13)


def test_irr_numpy_financial_docstring():
    res = irr(DOC_FLOWS)
    # cross-implementation: numpy_financial.irr docstring -> 0.28094842115996
    assert res.value == pytest.approx(0.28094842115996, abs=1e-12)
    assert res.roots == [res.value]
    assert res.sign_changes == 1 and res.reason == ""


def test_irr_two_roots_reported():
    # analytic: -100 + 230 x - 132 x**2 = 0 with x = 1/(1+r) has x = 10/11 and 5/6,
    # i.e. r = 10 % and 20 %
    res = irr([-100, 230, -132])
    assert res.sign_changes == 2
    assert np.allclose(res.roots, [0.10, 0.20], rtol=0, atol=1e-12)
    # analytic check (DOMAIN.md section 8): NPV is zero at both roots
    assert abs(-100 + 230 / 1.1 - 132 / 1.1 ** 2) < 1e-12
    assert abs(-100 + 230 / 1.2 - 132 / 1.2 ** 2) < 1e-12
    # the investment root: NPV -2 at 0 %, +0.23 at 15 %, -0.97 at 25 %: it falls through zero
    # at 20 % as the rate rises, so 20 % is reported, with both roots beside it
    assert res.value == pytest.approx(0.20, abs=1e-12) and res.reason.startswith("several")


def test_irr_only_rising_roots_has_no_investment_root():
    # analytic: the negated flows +100, -230, +132 have the same roots, but the NPV rises
    # through zero at 20 % and falls at 10 %; the investment root is then 10 %
    res = irr([100, -230, 132])
    assert res.value == pytest.approx(0.10, abs=1e-12)
    # a borrowing-like flow (+100 then -110): NPV rises through zero at 10 %: no investment root
    res = irr([100, -110])
    assert np.isnan(res.value) and res.roots == [pytest.approx(0.10, abs=1e-12)]
    assert "no investment root" in res.reason


def test_mirr_numpy_financial_docstring_and_rows():
    from lcoe.money.irr import mirr

    flows = [-4500, -800, 800, 800, 600, 600, 800, 800, 700, 3000]
    # cross-implementation: numpy_financial.mirr docstring example -> 0.0665972
    assert mirr(flows, 0.08, 0.055)[0] == pytest.approx(0.0665972, abs=1e-7)
    rng = np.random.default_rng(3)
    rows = rng.uniform(-300, 300, size=(50, 12))
    rows[:, 0] = -1000
    rows[:, -1] = -200  # decommissioning: several sign changes
    want = [npf.mirr(r, 0.06, 0.075) for r in rows]
    assert np.allclose(mirr(rows, 0.06, 0.075), want, rtol=0, atol=1e-12, equal_nan=True)
    assert np.isnan(mirr([1, 2, 3], 0.05, 0.05)[0])


def test_irr_none_with_reasons():
    res = irr([10, 20, 30])
    assert res.roots == [] and np.isnan(res.value)
    assert res.reason == "no sign change in cash flows"
    # analytic: -100 + 150 x - 60 x**2 has negative discriminant -> no root at all
    res = irr([-100, 150, -60])
    assert res.sign_changes == 2 and res.roots == []
    assert res.reason == "NPV does not cross zero in (-99 %, 1000 %]"
    # analytic: -1 + 20 / (1 + r) = 0 at r = 19, outside the search interval
    res = irr([-1, 20])
    assert res.roots == [] and "does not cross zero" in res.reason


def test_sign_changes_skip_zeros():
    # analytic: signs (0, -, 0, +, -) -> 2 changes
    assert sign_changes([0, -1, 0, 2, -3]) == 2
    assert list(sign_changes([[1, 0, 1], [-1, 0, 1]])) == [0, 1]


def test_investment_irr_matches_numpy_financial_on_conventional_flows():
    rng = np.random.default_rng(7)
    n = 300
    flows = np.empty((n, 21))
    flows[:, 0] = -rng.uniform(500, 2000, n)
    flows[:, 1:] = rng.uniform(10, 300, size=(n, 20))
    got = investment_irr(flows)
    # cross-implementation: numpy_financial.irr row by row, to 1e-9
    want = np.array([npf.irr(f) for f in flows])
    assert np.allclose(got, want, rtol=0, atol=1e-9)
    # the single-root method agrees with the bisection path
    assert np.allclose([irr(f).value for f in flows[:20]], got[:20], rtol=0, atol=1e-12)


def test_investment_irr_mixed_rows_and_one_dimensional_input():
    flows = np.array(
        [
            [-100, 39, 59, 55, 20],  # one root
            [-100, 230, -132, 0, 0],  # two roots: the investment root
            [1, 2, 3, 4, 5],  # no sign change -> NaN
            [-100, 60, 60, 60, -30],  # replacement-like end cost: two sign changes
        ],
        dtype=float,
    )
    got = investment_irr(flows)
    assert got[0] == pytest.approx(0.28094842115996, abs=1e-12)  # numpy-financial docstring
    assert got[1] == pytest.approx(0.20, abs=1e-12)  # investment root of -100, 230, -132
    assert np.isnan(got[2])
    # cross-implementation: numpy.roots of -100 y**4 + 60 y**3 + 60 y**2 + 60 y - 30 (NPV times
    # y**4, y = 1 + r); its real roots y = 0.35539 and 1.28744 give r = -64.46 % and 28.74 %
    poly = np.roots(flows[3])
    want = np.sort(poly[np.abs(poly.imag) < 1e-12].real - 1.0)
    assert np.allclose(irr(flows[3]).roots, want, rtol=0, atol=1e-10)
    assert got[3] == pytest.approx(want[1], abs=1e-10)  # the investment root, 28.74 %
    assert investment_irr(DOC_FLOWS).shape == (1,)


def test_lcoe_worked_example():
    capex, om, energy, r, n = 1_000_000.0, 15_000.0, 1_700_000.0, 0.07, 25
    costs = np.r_[capex, np.full(n, om)]
    kwh = np.r_[0.0, np.full(n, energy)]
    got = lcoe_from_flows(costs, kwh, r)
    # published: DOMAIN.md section 3 worked example (Short, Packey & Holt 1995 method)
    # -> 0.0593003 per kWh
    assert got == pytest.approx(0.0593003, rel=1e-6)
    # analytic: equals (capex * CRF + O&M) / E for level O&M and energy
    assert got == pytest.approx((capex * crf(r, n) + om) / energy, rel=1e-12)


def test_lcoe_vectorised_over_samples():
    costs = np.array([[1000.0, 10, 10, 10], [1200.0, 20, 20, 20]])
    kwh = np.array([[0.0, 500, 500, 500], [0.0, 400, 400, 400]])
    rates = np.array([0.05, 0.08])
    got = lcoe_from_flows(costs, kwh, rates)
    # analytic: per-sample ratio of present values
    for k in range(2):
        d = (1 + rates[k]) ** -np.arange(4)
        assert got[k] == pytest.approx(costs[k] @ d / (kwh[k] @ d), rel=1e-14)
    with pytest.raises(ValueError, match="energy"):
        lcoe_from_flows(costs, np.zeros((2, 4)), 0.05)


def test_investment_irr_takes_the_root_where_npv_turns_negative():
    from lcoe.money.finance import npv
    from lcoe.money.irr import investment_irr

    # classic textbook flows -100, +230, -132: roots 10 % and 20 % (DOMAIN.md section 8); the
    # NPV turns from + to - as the rate rises at 20 %, the investment root
    assert investment_irr([-100.0, 230.0, -132.0])[0] == pytest.approx(0.20, abs=1e-12)
    # one sign change: the only root (numpy-financial docstring, verified: 0.28094842115996)
    assert investment_irr([-100, 39, 59, 55, 20])[0] == pytest.approx(0.28094842115996,
                                                                      abs=1e-12)
    # an investment with decommissioning: a spurious root near -100 % (- to +) and the real
    # one; vectorised over samples
    flows = np.array([[-100.0, 30, 30, 30, 30, 30, -20], [-100.0, 40, 40, 40, 40, 40, -30]])
    got = investment_irr(flows)
    for row, r in zip(flows, got):
        assert 0 < r < 0.3 and abs(npv(r, row)) < 1e-9
    assert np.isnan(investment_irr([100.0, 50.0])[0])  # never turns negative


def test_one_irr_rule_for_one_flow_and_many():
    # irr() and investment_irr() are one implementation: same root, bit for bit, and a row's
    # root does not depend on the other rows of the call (chunking never changes a number)
    rng = np.random.default_rng(3)
    flows = np.empty((64, 26))
    flows[:, 0] = -rng.uniform(800, 1200, 64)
    flows[:, 1:] = rng.uniform(40, 160, size=(64, 25))
    flows[:, -1] = -rng.uniform(0, 400, 64)  # decommissioning: a second sign change
    many = investment_irr(flows)
    assert [irr(f).value for f in flows[:8]] == list(many[:8])
    assert np.array_equal(investment_irr(flows[5:9]), many[5:9])
    # cross-implementation: numpy_financial.irr finds the same (economic) root here
    assert np.allclose(many, [npf.irr(f) for f in flows], rtol=0, atol=1e-9)


def test_irr_text_names_the_investment_root_and_every_root():
    from lcoe.money.irr import irr_text

    res = irr([-100.0, 230.0, -132.0])
    assert irr_text(res.value, res.roots, res.reason) == \
        "20.00 % (investment root; all roots 10.00 %, 20.00 %)"
    assert irr_text(0.0612, [0.0612]) == "6.12 %"
    rising = irr([100.0, -110.0])  # NPV rises through zero at 10 %: no investment root
    assert irr_text(rising.value, rising.roots, rising.reason, unit="") == \
        f"none ({rising.reason}; roots 10.00)"
