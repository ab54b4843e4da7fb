"""Construction period: drawdown, interest during construction, fees, sources and uses."""

from __future__ import annotations

import pytest

from lcoe.case.errors import InputError
from lcoe.money.construction import construction_financing, sources_and_uses


def test_idc_capitalised_two_draws_by_hand():
    # Checked by hand (DOMAIN.md section 8): capex 1000 drawn 50 % at the start of each of
    # two quarters, loan rate 8 %/year -> 2 % a quarter, loan worth 800 at COD.
    # Draw 1 bears two quarters, draw 2 one: 800 = g x 1000 x (0.5 x 1.02^2 + 0.5 x 1.02)
    # = g x 1030.2 -> g = 0.7765482; principal drawn 776.54824; IDC = 23.45176.
    # Balance walk: 388.2741 x 1.02 = 396.0396; + 388.2741 = 784.3137; x 1.02 = 800.0000.
    c = construction_financing(1000.0, 800.0, 0.08, [0.5, 0.5], "quarter",
                               idc_capitalised=True, upfront_fee_fraction=0.01)
    g = 800.0 / 1030.2
    assert c.debt_share[0] == pytest.approx(g, rel=1e-12)
    assert c.idc[0] == pytest.approx(800.0 - 1000.0 * g, rel=1e-12)
    assert c.idc[0] == pytest.approx(23.45176, abs=5e-6)
    assert ((388.27412 * 1.02 + 388.27412) * 1.02) == pytest.approx(800.0, abs=1e-3)
    assert c.upfront_fee[0] == pytest.approx(8.0)


def test_idc_paid_by_equity_and_commitment_fee_by_hand():
    # by hand: the loan funds 80 % of each draw (400, 400). Interest paid as it falls due:
    # quarter 1 on 400 -> 8, quarter 2 on 800 -> 16; IDC 24. Commitment fee 1 %/year on the
    # undrawn 400 during quarter 1 -> 1.0, nothing undrawn in quarter 2.
    c = construction_financing(1000.0, 800.0, 0.08, [0.5, 0.5], "quarter",
                               idc_capitalised=False, commitment_fee_fraction=0.01)
    assert c.debt_share[0] == pytest.approx(0.8)
    assert c.idc[0] == pytest.approx(24.0, rel=1e-12)
    assert c.commitment_fee[0] == pytest.approx(1.0, rel=1e-12)


def test_monthly_periods_and_no_construction():
    # one month at 12 %/year on a single draw at the start: 1 % of the principal
    c = construction_financing(100.0, 50.0, 0.12, [1.0], "month", idc_capitalised=False)
    assert c.idc[0] == pytest.approx(0.5)
    none = construction_financing(100.0, 50.0, 0.12, [], "month")
    assert none.idc[0] == 0 and none.commitment_fee[0] == 0


def test_sources_equal_uses():
    c = construction_financing(1000.0, 800.0, 0.08, [0.25, 0.25, 0.5], "quarter",
                               commitment_fee_fraction=0.005, upfront_fee_fraction=0.015)
    su = sources_and_uses(1000.0, 800.0, c, 40.0)
    assert sum(v[0] for v in su["uses"].values()) == pytest.approx(su["total"][0])
    assert su["sources"]["senior debt"][0] + su["sources"]["equity"][0] == \
        pytest.approx(su["total"][0])
    assert su["sources"]["equity"][0] == pytest.approx(
        1000 + c.idc[0] + 12.0 + c.commitment_fee[0] + 40.0 - 800.0)


def test_bad_drawdown_is_refused():
    with pytest.raises(InputError, match="shares"):
        construction_financing(1000.0, 800.0, 0.08, [0.5, 0.4], "quarter")
    with pytest.raises(InputError, match="period"):
        construction_financing(1000.0, 800.0, 0.08, [1.0], "week")
