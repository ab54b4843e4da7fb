"""Cash flow and LCOE against published worked values and numpy-financial."""

from __future__ import annotations

import numpy as np
import pytest

from lcoe.case.reader import Replacement
from lcoe.money.cashflow import build_cashflow, energy_by_year
from lcoe.money.finance import crf


def _params(**over):
    p = {"plant.dc_capacity_kw": 1000.0, "costs.capex_per_kw": 1000.0,
         "costs.fixed_om_per_kw_year": 15.0, "costs.variable_om_per_kwh": 0.0,
         "costs.decommissioning_per_kw": 0.0, "costs.salvage_per_kw": 0.0,
         "costs.insurance_fraction_per_year": 0.0, "costs.land_lease_per_year": 0.0,
         "finance.discount_rate": 0.07, "finance.inflation": 0.0}
    p.update(over)
    return p


def test_worked_lcoe_example():
    # DOMAIN.md section 3 (Short, Packey & Holt 1995 method, NREL/TP-462-5173): capex
    # 1,000,000, O&M 15,000/yr, 1,700,000 kWh/yr, r = 7 %, n = 25 -> LCOE 0.0593003 per kWh.
    e = energy_by_year([1_700_000.0], 0.0, 25)
    cf = build_cashflow(_params(), [], 25, e)
    assert cf.lcoe_nominal[0] == pytest.approx(0.0593003, rel=1e-6)
    assert cf.lcoe_real[0] == pytest.approx(0.0593003, rel=1e-6)  # no inflation: same
    # Published CRF check: r = 7 %, n = 25 -> 0.0858105 (= -numpy_financial.pmt(0.07, 25, 1)).
    assert (1_000_000 * crf(0.07, 25) + 15_000) / 1_700_000 == pytest.approx(0.0593003,
                                                                             rel=1e-6)


def test_present_values_match_numpy_financial():
    # Cross-implementation: numpy_financial.npv discounts from t = 0 like our cash flow.
    npf = pytest.importorskip("numpy_financial")
    e = energy_by_year([1_500_000.0], 0.005, 30)
    reps = [Replacement("inverters", 12, 60.0)]
    p = _params(**{"finance.inflation": 0.025, "finance.discount_rate": 0.08,
                   "costs.decommissioning_per_kw": 30.0, "costs.variable_om_per_kwh": 0.002})
    cf = build_cashflow(p, reps, 30, e)
    assert cf.pv_costs[0] == pytest.approx(npf.npv(0.08, cf.total_cost[0]), rel=1e-12)
    real = 1.08 / 1.025 - 1
    assert cf.pv_energy_real_kwh[0] == pytest.approx(npf.npv(real, e[0]), rel=1e-12)
    # replacements at years 12 and 24, escalated with inflation; decommissioning in year 30
    rep = cf.lines["replacements"][0]
    assert np.nonzero(rep)[0].tolist() == [12, 24]
    assert rep[12] == pytest.approx(60.0 * 1000 * 1.025 ** 12)
    assert cf.lines["decommissioning"][0, 30] == pytest.approx(30.0 * 1000 * 1.025 ** 30)


def test_fisher_real_rate():
    # DOMAIN.md: nominal 5 %, inflation 2 % -> real 2.94118 % (Fisher equation, analytic).
    from lcoe.money.finance import real_rate

    assert real_rate(0.05, 0.02) == pytest.approx(0.0294118, abs=1e-7)


def test_zero_rate_limit():
    # Analytic: at r = 0 the LCOE is total cost / total energy; CRF -> 1/n (no 0/0).
    e = energy_by_year([1_000_000.0], 0.0, 20)
    cf = build_cashflow(_params(**{"finance.discount_rate": 0.0}), [], 20, e)
    assert cf.lcoe_real[0] == pytest.approx((1_000_000 + 20 * 15_000) / 20_000_000, rel=1e-12)
    assert crf(0.0, 20) == pytest.approx(1 / 20, rel=1e-12)
    assert crf(1e-12, 20) == pytest.approx(1 / 20, rel=1e-9)


def test_linear_degradation():
    e = energy_by_year([100.0], 0.01, 5)
    np.testing.assert_allclose(e[0], [0, 100, 99, 98, 97, 96])


def test_real_and_nominal_order():
    # With positive inflation the nominal LCOE (energy discounted faster) exceeds the real one.
    e = energy_by_year([1_000_000.0], 0.005, 25)
    cf = build_cashflow(_params(**{"finance.inflation": 0.02}), [], 25, e)
    assert cf.lcoe_nominal[0] > cf.lcoe_real[0]


def test_insurance_and_lease_lines():
    e = energy_by_year([1_000_000.0], 0.0, 3)
    cf = build_cashflow(_params(**{"costs.insurance_fraction_per_year": 0.004,
                                   "costs.land_lease_per_year": 20_000.0,
                                   "finance.inflation": 0.02}), [], 3, e)
    np.testing.assert_allclose(cf.lines["insurance"][0], [0, 4000 * 1.02, 4000 * 1.02 ** 2,
                                                          4000 * 1.02 ** 3])
    np.testing.assert_allclose(cf.lines["land_lease"][0], [0, 20400, 20808, 21224.16])
