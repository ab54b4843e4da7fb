"""Moving parts in the cash flow: renewal-theory failures, their costs and lost energy."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import MINIMAL_CASE, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import cash_flow, evaluate, prepare

PART = """
[[costs.moving_part]]
item = "drive"
units = 200.0
{life}
cost_each = 500.0
repair_days = {days}
damage_fraction = {damage}
"""


def _case(tmp_path, life="mean_years = 8.0", days=0.0, damage=0.0, extra="", plant="",
          name="case.toml"):
    text = MINIMAL_CASE.replace("[finance]", PART.format(life=life, days=days, damage=damage)
                                + extra + "\n[finance]\ninflation = 0.0")
    text = text.replace("[plant]", "[plant]\n" + plant)
    return load_case(write_case(tmp_path, text, name))


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    return prepare(load_case(write_case(tmp_path_factory.mktemp("mp"), MINIMAL_CASE)))


def test_exponential_costs_and_lost_energy(tmp_path, site):
    # Analytic (renewal theory, exponential lives): units / mean failures a year, each costing
    # cost_each plus damage_fraction x capex per unit, and days / 365 of a unit's year lost.
    case = _case(tmp_path, days=10.0, damage=0.02)
    out = evaluate(case, site)
    line = out.cashflow.lines["moving_parts"][0]
    capex = 1000.0 * 1000.0
    per_year = 200.0 / 8.0 * (500.0 + 0.02 * capex / 200.0)
    assert line[0] == 0.0
    np.testing.assert_allclose(line[1:], per_year, rtol=1e-12)
    plain = evaluate(load_case(write_case(tmp_path, MINIMAL_CASE.replace(
        "[finance]", "[finance]\ninflation = 0.0"), "plain.toml")), site)
    ratio = out.cashflow.energy_kwh[0, 1:] / plain.cashflow.energy_kwh[0, 1:]
    np.testing.assert_allclose(ratio, 1.0 - 10.0 / 365.0 / 8.0, rtol=1e-12)


def test_weibull_shape_one_matches_exponential(tmp_path, site):
    # Analytic: a Weibull life of shape 1 is exponential with mean = scale; the numerical
    # renewal function agrees to its documented accuracy (relative 5e-7, lcoe.money.reliability).
    expo = evaluate(_case(tmp_path, name="e.toml"), site).cashflow.lines["moving_parts"][0]
    weib = evaluate(_case(tmp_path, life="shape = 1.0\nscale_years = 8.0", name="w.toml"),
                    site).cashflow.lines["moving_parts"][0]
    np.testing.assert_allclose(weib[1:], expo[1:], rtol=1e-5)


def test_wear_out_fails_less_early_then_converges(tmp_path, site):
    # Renewal theory (Cox 1962): with wear-out (k > 1) few parts fail in the first years;
    # the yearly rate tends to 1 / mean life.
    from lcoe.money.reliability import weibull_mean_years

    case = _case(tmp_path, life="shape = 3.0\nscale_years = 8.0")
    line = evaluate(case, site).cashflow.lines["moving_parts"][0]
    long_run = 200.0 / weibull_mean_years(3.0, 8.0) * 500.0
    assert line[1] < 0.05 * long_run
    assert line[-1] == pytest.approx(long_run, rel=0.05)


def test_parts_per_body_scale_with_the_bodies(tmp_path, site):
    body = ('\n[plant.body]\nshape = "cylinder"\nradius_m = 0.25\nheight_m = 2.5\n'
            'spacing_m = 2.0\nrotating = true\n')
    text = MINIMAL_CASE.replace("[plant]", '[plant]\nmount = "body"') + body + \
        PART.format(life="mean_years = 10.0", days=0.0, damage=0.0).replace(
            "units = 200.0", 'units = 1.0\nper = "body"')
    out = evaluate(load_case(write_case(tmp_path, text)), site)
    n = out.energy.n_bodies[0]
    np.testing.assert_allclose(out.cashflow.lines["moving_parts"][0, 1], n / 10.0 * 500.0 *
                               (1.0 + 0.02), rtol=1e-12)  # default inflation 2 % in year 1


def test_lcoe_stays_affine_in_capex(tmp_path, site):
    # Analytic: damage is a share of capex, so LCOE stays affine in capex per kW and the
    # break-even capex of lcoe compare stays exact.
    case = _case(tmp_path, damage=0.05, days=3.0)
    out = evaluate(case, site, {"costs.capex_per_kw": np.array([500.0, 1000.0, 1500.0])})
    lcoe = out.cashflow.lcoe_real
    assert lcoe[1] - lcoe[0] == pytest.approx(lcoe[2] - lcoe[1], rel=1e-10)
    again = cash_flow(case, out.params, out.energy).lcoe_real
    np.testing.assert_allclose(again, lcoe, rtol=1e-14)


def test_uncertain_part_inputs_run_through_the_study(tmp_path):
    from lcoe.study.run import run_case

    unc = ('\n[uncertain]\n"costs.moving_part[0].mean_years" = { dist = "triangular", '
           'low = 4, mode = 8, high = 12 }\n"costs.moving_part[0].damage_fraction" = '
           '{ dist = "uniform", low = 0.0, high = 0.05 }\n')
    case = _case(tmp_path, life="mean_years = 8.0", extra=unc)
    res = run_case(case, samples=40, sobol_base=8, seed=4)
    lcoe = res.extras["uncertainty"].trials.outputs["lcoe_real_per_kwh"]
    life = res.extras["uncertainty"].trials.X[:, 0]
    # shorter lives cost more: LCOE falls as the mean life grows (rank correlation < 0)
    from scipy.stats import spearmanr

    assert spearmanr(life, lcoe).statistic < -0.3
    names = {t["input"] for t in res.extras["sensitivity"].tornado}
    assert "costs.moving_part[0].mean_years" in names


@pytest.mark.parametrize("life,extra,match", [
    ("mean_years = 8.0\nshape = 2.0\nscale_years = 9.0", "", "not both"),
    ("shape = 2.0", "", "scale_years"),
    ("mean_years = 8.0\nper = \"body\"", "", "per"),
    ("mean_years = 8.0\nlife_years = 3.0", "", "life_years"),
    ("mean_years = 8.0", '\n[uncertain]\n"costs.moving_part[0].damage_fraction" = '
     '{ dist = "uniform", low = 0.0, high = 1.5 }\n', "damage_fraction"),
    ("mean_years = 8.0", '\n[uncertain]\n"costs.moving_part[3].cost_each" = '
     '{ dist = "uniform", low = 1.0, high = 2.0 }\n', "moving_part"),
])
def test_bad_moving_parts(tmp_path, life, extra, match):
    from lcoe.study.spec import read_spec

    with pytest.raises(InputError, match=match) as exc:
        read_spec(_case(tmp_path, life=life, extra=extra))
    assert "\n" not in str(exc.value) and "case.toml" in str(exc.value)
