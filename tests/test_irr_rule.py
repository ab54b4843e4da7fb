"""The IRR rule and Monte Carlo return statistics that use every trial (lender demo).

Cross-implementation checks against numpy-financial (``irr`` and ``mirr``) on the equity
cash flows of every trial of the bundled lender demo, whose decommissioning cost gives a
second sign change.
"""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest
from conftest import INPUTS

from lcoe.case.reader import load_case
from lcoe.model import evaluate
from lcoe.study.run import run_case
from lcoe.study.trials import prepared, split_inputs

LENDER = INPUTS / "lender_single_axis.toml"
TRIALS = 300


@pytest.fixture(scope="module")
def lender():
    case = load_case(LENDER)
    result = run_case(case, samples=TRIALS, seed=11, sobol_base=0)
    unc = result.extras["uncertainty"]
    bank = result.extras["bankability"]
    # The equity flow of every trial, recomputed from the trial's inputs and energy factors
    # with the loan sized once on the deterministic case (the collector's own function).
    t = unc.trials
    params, _ = split_inputs(unc.spec, t.X)
    out = evaluate(case, prepared(case)[0], params, weather_factors=t.energy_factors)
    fr = bank.trial_finance(case)(out, params)
    return case, result, fr, params


def test_headline_irrs_are_never_null_when_an_investment_root_exists(lender):
    case, result, _, _ = lender
    s = result.extras["bankability"].to_summary()
    f = result.extras["bankability"].finance
    for key, flow in (("project_irr", f.project_flow_post_tax[0]),
                      ("project_irr_pre_tax", f.project_flow_pre_tax[0]),
                      ("equity_irr", f.equity_flow[0])):
        assert s[key] is not None, key
        # cross-implementation: numpy-financial's IRR of the same flow (one root of several)
        assert s[key] == pytest.approx(npf.irr(flow), abs=1e-9), key
    assert len(s["irr_roots"]["equity"]["roots"]) >= 2  # decommissioning: a second root
    # cross-implementation: numpy_financial.mirr, finance = loan rate, reinvest = discount
    assert s["equity_mirr"] == pytest.approx(
        npf.mirr(f.equity_flow[0], case["debt.interest_rate"], case["finance.discount_rate"]),
        abs=1e-12)


def test_monte_carlo_irr_uses_every_trial(lender):
    case, result, fr, params = lender
    mc = result.extras["bankability"].mc
    ours = result.extras["uncertainty"].trials.outputs["equity_irr"]
    want = np.array([npf.irr(row) for row in fr.equity_flow])
    assert np.isfinite(want).all()
    assert mc["equity_irr"]["n"] == TRIALS and "n_excluded" not in mc["equity_irr"]
    # cross-implementation: numpy-financial IRR over all trials, mean within 0.1 point
    assert abs(mc["equity_irr"]["mean"] - want.mean()) < 0.001
    assert np.allclose(ours, want, rtol=0, atol=1e-8)
    mirr_want = np.array([npf.mirr(row, case["debt.interest_rate"], r) for row, r in zip(
        fr.equity_flow, np.broadcast_to(params.get("finance.discount_rate",
                                                   case["finance.discount_rate"]), (TRIALS,)))])
    got = result.extras["uncertainty"].trials.outputs["equity_mirr"]
    assert np.allclose(got, mirr_want, rtol=0, atol=1e-10)
    assert abs(mc["equity_mirr"]["mean"] - mirr_want.mean()) < 0.001
