"""Tests of lcoe.money.tax: depreciation, loss carry-forward, tax credits."""

import numpy as np
import pytest

from lcoe.case.errors import InputError
from lcoe.money.tax import (
    MACRS_5YR_HALF_YEAR,
    apply_tax_credits,
    basis_after_itc,
    depreciation_schedule,
    investment_tax_credit,
    tax_with_loss_carryforward,
)


def test_macrs_table_is_the_published_one_and_sums_to_one():
    # published: IRS Publication 946, Table A-1, 5-year column, half-year convention
    assert MACRS_5YR_HALF_YEAR == (0.20, 0.32, 0.192, 0.1152, 0.1152, 0.0576)
    assert sum(MACRS_5YR_HALF_YEAR) == pytest.approx(1.0, abs=1e-15)


def test_accelerated_tax_shield_hand_calculation():
    basis, rate, n_years = 1_000_000.0, 0.21, 10
    dep = depreciation_schedule("accelerated_5yr", basis, n_years)
    assert dep.shape == (1, 11) and dep[0, 0] == 0.0
    # analytic (hand calculation): deduction = table fraction x 1,000,000
    #   year 1: 0.20   x 1e6 = 200,000 -> shield 0.21 x 200,000 = 42,000
    #   year 2: 0.32   x 1e6 = 320,000 -> shield 67,200
    #   year 3: 0.192  x 1e6 = 192,000 -> shield 40,320
    #   year 4: 0.1152 x 1e6 = 115,200 -> shield 24,192
    #   year 5: 0.1152 x 1e6 = 115,200 -> shield 24,192
    #   year 6: 0.0576 x 1e6 =  57,600 -> shield 12,096
    #   total shield 210,000 = 0.21 x 1,000,000
    hand_shield = [0, 42_000, 67_200, 40_320, 24_192, 24_192, 12_096, 0, 0, 0, 0]
    ebitda = np.r_[0.0, np.full(n_years, 2_000_000.0)]  # always profitable: shield fully used
    tax_without, _ = tax_with_loss_carryforward(ebitda, rate)
    tax_with, _ = tax_with_loss_carryforward(ebitda - dep[0], rate)
    assert np.allclose(tax_without[0] - tax_with[0], hand_shield, rtol=1e-12, atol=1e-9)
    assert (tax_without - tax_with).sum() == pytest.approx(210_000.0, rel=1e-12)


def test_straight_line_hand_values_and_samples_axis():
    dep = depreciation_schedule("straight_line", [1000.0, 2000.0], 6, years=4)
    # analytic: basis / 4 in years 1..4
    assert np.allclose(dep[0], [0, 250, 250, 250, 250, 0, 0])
    assert np.allclose(dep[1], [0, 500, 500, 500, 500, 0, 0])


def test_declining_balance_switches_to_straight_line():
    dep = depreciation_schedule("declining_balance", 1000.0, 6, years=5, rate=0.4)[0]
    # analytic (hand): book 1000 -> DB 400 (SL 200) -> book 600 -> DB 240 (SL 150) -> book 360
    # -> DB 144 (SL 120) -> book 216 -> DB 86.4 < SL 216/2 = 108 -> switch: 108, then 108
    assert np.allclose(dep, [0, 400, 240, 144, 108, 108, 0], rtol=1e-14)
    assert dep.sum() == pytest.approx(1000.0, rel=1e-14)


def test_declining_balance_fully_depreciated_for_any_rate():
    for rate in (0.05, 0.15, 2 / 7, 0.9):
        dep = depreciation_schedule("declining_balance", 500.0, 10, years=7, rate=rate)[0]
        assert dep.sum() == pytest.approx(500.0, rel=1e-13)
        assert np.all(dep[8:] == 0) and np.all(dep[1:8] > 0)
    # analytic: a rate of 1 writes the whole basis off in year 1
    dep = depreciation_schedule("declining_balance", 500.0, 10, years=7, rate=1.0)[0]
    assert np.allclose(dep, np.r_[0, 500, np.zeros(9)])


def test_depreciation_errors():
    with pytest.raises(InputError, match="did you mean 'straight_line'"):
        depreciation_schedule("straightline", 100.0, 10, years=5)
    with pytest.raises(InputError, match="longer than project life"):
        depreciation_schedule("straight_line", 100.0, 10, years=12)
    with pytest.raises(InputError, match="years"):
        depreciation_schedule("straight_line", 100.0, 10, years=0)
    with pytest.raises(InputError, match="rate"):
        depreciation_schedule("declining_balance", 100.0, 10, years=5, rate=0.0)
    with pytest.raises(InputError, match="neither years nor rate"):
        depreciation_schedule("accelerated_5yr", 100.0, 10, years=5)
    with pytest.raises(InputError, match="n_years"):
        depreciation_schedule("accelerated_5yr", 100.0, 5)
    with pytest.raises(InputError, match="depreciable_basis"):
        depreciation_schedule("straight_line", -1.0, 10, years=5)


def test_loss_carryforward_hand_example():
    income = np.array([[0.0, -100, 30, 50, 80], [0.0, 40, 40, 40, 40]])
    tax, loss = tax_with_loss_carryforward(income, 0.3)
    # analytic (hand), sample 0: year 1 loss 100 -> carried; year 2 30 - 100 = -70 -> carried;
    # year 3 50 - 70 = -20 -> carried; year 4 80 - 20 = 60 -> tax 0.3 x 60 = 18
    assert np.allclose(tax[0], [0, 0, 0, 0, 18.0], rtol=1e-14)
    assert np.allclose(loss[0], [0, 100, 70, 20, 0], rtol=1e-14)
    # sample 1 never has a loss: tax 0.3 x 40 = 12 each year
    assert np.allclose(tax[1], [0, 12, 12, 12, 12], rtol=1e-14)
    assert np.all(loss[1] == 0)


def test_tax_never_negative_and_losses_conserved():
    rng = np.random.default_rng(11)
    income = rng.normal(0, 100, size=(200, 16))
    tax, loss = tax_with_loss_carryforward(income, np.full(200, 0.25))
    assert np.all(tax >= 0) and np.all(loss >= 0)
    # analytic: total taxed income = total income + losses still unused at the end
    # (every loss either offsets income or remains in the balance)
    taxed = tax.sum(axis=1) / 0.25
    pos_flow = income.sum(axis=1) + loss[:, -1]
    assert np.allclose(taxed, pos_flow, rtol=1e-12, atol=1e-9)


def test_tax_rate_validated():
    with pytest.raises(InputError, match="tax_rate"):
        tax_with_loss_carryforward([0.0, 1.0], 1.0)


def test_credits_carried_forward():
    tax_before = np.array([[0.0, 10, 10, 10]])
    credit = investment_tax_credit(100.0, 0.25, 3)
    # analytic: credit 0.25 x 100 = 25 in year 1
    assert np.allclose(credit, [[0, 25, 0, 0]])
    tax, balance = apply_tax_credits(tax_before, credit)
    # hand: year 1 uses 10 of 25 (15 left), year 2 uses 10 (5 left), year 3 uses 5 -> tax 5
    assert np.allclose(tax, [[0, 0, 0, 5]])
    assert np.allclose(balance, [[0, 15, 5, 0]])


def test_basis_after_itc():
    # analytic: 1000 - 0.5 x (0.3 x 0.8 x 1000) = 880
    assert basis_after_itc(1000.0, 0.3, 0.8) == pytest.approx(880.0, rel=1e-15)
    assert basis_after_itc(1000.0, 0.3, 1.0, basis_reduction_fraction=0.0) == 1000.0
    with pytest.raises(InputError, match="itc_fraction"):
        basis_after_itc(1000.0, 1.5)
