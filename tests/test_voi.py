"""Value of information: EVPI, EVPPI by regression, and their checks against outside results."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from conftest import MINIMAL_CASE, write_case
from scipy import integrate
from scipy.interpolate import BSpline
from scipy.stats import norm

from lcoe.case.reader import load_case
from lcoe.model import base_params, cash_flow, evaluate, prepare
from lcoe.study.compare import run_comparison
from lcoe.uncertainty.voi import (
    N_SEGMENTS,
    conditional_means,
    evpi,
    evppi,
    evppi_nested,
    evppi_table,
    normal_evpi,
    spline_basis,
)


def test_spline_basis_matches_scipy():
    # Cross-implementation: the hand-written uniform cubic B-spline pieces equal scipy's
    # BSpline.design_matrix on the same knots.
    u = np.random.default_rng(0).random(500)
    cols, vals = spline_basis(u)
    knots = np.arange(-3, N_SEGMENTS + 4) / N_SEGMENTS
    ref = BSpline.design_matrix(u, knots, 3).toarray()
    mine = np.zeros_like(ref)
    np.put_along_axis(mine, cols, vals, axis=1)
    np.testing.assert_allclose(mine, ref, atol=1e-12)


def test_rank_transform_is_scipys_average_ranks():
    # cross-implementation: scipy.stats.rankdata(method="average"), with many ties
    from scipy.stats import rankdata

    from lcoe.uncertainty.voi import rank_transform

    rng = np.random.default_rng(3)
    x = np.column_stack([rng.integers(0, 7, 500), rng.normal(size=500),
                         np.repeat([2.0, 1.0], 250)])
    ref = (rankdata(x, axis=0, method="average") - 0.5) / 500
    np.testing.assert_array_equal(rank_transform(x), ref)
    np.testing.assert_array_equal(rank_transform(x[:, 1]), ref[:, 1:2])


@pytest.mark.parametrize("m, s", [(0.0, 1.0), (0.7, 2.0), (-3.0, 1.5), (5.0, 0.5)])
def test_normal_evpi_is_the_unit_normal_loss(m, s):
    # Analytic: for INB ~ N(m, s), EVPI = E[max(0, INB)] - max(0, m) (Raiffa & Schlaifer
    # 1961); checked here by numerical integration (scipy.integrate.quad).
    e_max = integrate.quad(lambda x: max(x, 0.0) * norm.pdf(x, m, s), m - 12 * s, m + 12 * s,
                           points=[0.0], limit=200)[0]
    assert normal_evpi(m, s) == pytest.approx(e_max - max(m, 0.0), rel=1e-7, abs=1e-12)


def test_evpi_and_evppi_on_a_synthetic_decision():
    # Analytic: INB = a + noise with a ~ N(1, 2), noise independent N(0, 1): EVPI is the
    # normal loss with s = sqrt(5), EVPPI(a) the normal loss with s = 2, EVPPI(c) = 0 for an
    # input c that does not touch the decision (Raiffa & Schlaifer 1961 for both closed forms).
    rng = np.random.default_rng(11)
    n = 8000
    a, c, e = rng.normal(1.0, 2.0, n), rng.normal(0.0, 1.0, n), rng.normal(0.0, 1.0, n)
    values = np.column_stack([np.zeros(n), a + e])
    whole = evpi(values, seed=1)
    assert whole.value == pytest.approx(normal_evpi(1.0, np.sqrt(5.0)), rel=0.06)
    rows = {r.name: r for r in evppi_table(values, np.column_stack([a, c]), ["a", "c"],
                                           {"both": ["a", "c"]}, seed=2)}
    assert rows["a"].value == pytest.approx(normal_evpi(1.0, 2.0), rel=0.06)
    assert abs(rows["a"].value - normal_evpi(1.0, 2.0)) < 3 * rows["a"].se
    assert rows["c"].value < max(rows["c"].se, 1e-9) * 2
    assert rows["both"].value == pytest.approx(rows["a"].value, abs=3 * rows["a"].se)
    assert all(r.n_trials == n for r in rows.values())


def test_irrelevant_input_is_flagged_near_zero_when_the_choice_is_close():
    # A close call (mean INB 0): noise-fitting bias is largest here. The EVPPI of an input
    # with no effect must stay within its standard error and be flagged.
    rng = np.random.default_rng(5)
    n = 4000
    values = np.column_stack([np.zeros(n), rng.normal(0.0, 1.0, n)])
    r = evppi(values, rng.random(n), "noise", seed=3)
    assert r.value < 2 * r.se
    assert r.value < 0.1 * normal_evpi(0.0, 1.0)


def test_conditional_means_recover_a_smooth_curve():
    # Regression check: E[y | x] = sin(2 pi x) on uniform x, noise sd 0.3; the P-spline fit
    # is within 0.05 of the curve (rms).
    rng = np.random.default_rng(2)
    x = rng.random(3000)
    y = np.sin(2 * np.pi * x) + rng.normal(0, 0.3, x.size)
    fitted, edf = conditional_means(y, x)
    assert np.sqrt(np.mean((fitted[:, 0] - np.sin(2 * np.pi * x)) ** 2)) < 0.05
    assert 3 < edf < N_SEGMENTS + 3


def test_bad_values_are_refused():
    with pytest.raises(ValueError, match="two options"):
        evpi(np.zeros((10, 1)))
    with pytest.raises(ValueError, match="non-finite"):
        evpi(np.array([[0.0, np.nan], [1.0, 2.0]]))


# --------------------------------------------------------------------------------------------
# real cases
# --------------------------------------------------------------------------------------------
CAPEX_A, CAPEX_MEAN_B, CAPEX_SD_B = 1000.0, 1030.0, 60.0


def _capex_cases(tmp_path):
    text_a = MINIMAL_CASE.replace('name = "t"', 'name = "fixed price"')
    text_b = MINIMAL_CASE.replace('name = "t"', 'name = "open quote"') + (
        '[uncertain]\n"costs.capex_per_kw" = { dist = "normal", mean = %g, sd = %g, low = 0 }\n'
        % (CAPEX_MEAN_B, CAPEX_SD_B))  # low = 0 is 17 sd away: the law stays normal
    return (load_case(write_case(tmp_path, text_a, "a.toml")),
            load_case(write_case(tmp_path, text_b, "b.toml")))


def test_compare_evpi_matches_the_normal_closed_form(tmp_path):
    # Analytic (Raiffa & Schlaifer 1961): two case files that differ only by a normally
    # distributed capex. LCOE is affine in capex, so the incremental value
    # -(LCOE_B - LCOE_A) x E_ref is exactly normal with mean -k (mu - capex_A) and sd k sigma,
    # k = dLCOE/dcapex x E_ref; EVPI = s phi(m/s) - |m| Phi(-|m|/s). Within 3 % at 20,000
    # trials. The EVPPI of capex, the only uncertain input, equals the EVPI.
    a, b = _capex_cases(tmp_path)
    r = run_comparison([a, b], samples=20000, seed=7, sobol_base=0)
    site = prepare(a)
    lo = evaluate(a, site, {"costs.capex_per_kw": np.array([900.0])}).cashflow
    hi = evaluate(a, site, {"costs.capex_per_kw": np.array([1100.0])}).cashflow
    slope = (hi.lcoe_real[0] - lo.lcoe_real[0]) / 200.0
    e_ref = r.baseline.base.cashflow.pv_energy_real_kwh[0]
    k = slope * e_ref
    exact = normal_evpi(-k * (CAPEX_MEAN_B - CAPEX_A), k * CAPEX_SD_B)
    v = r.voi
    assert v.energy_ref_kwh == pytest.approx(e_ref)
    assert v.evpi.value == pytest.approx(exact, rel=0.03)
    # the study engine names a per-case input "<path> [<case name>]" (the sharing rule)
    capex = next(row for row in v.rows if row.name.startswith("costs.capex_per_kw"))
    assert capex.value == pytest.approx(v.evpi.value, rel=0.03)
    assert capex.value == pytest.approx(exact, rel=0.03)
    assert v.evpi.n_trials == 20000


def test_nested_monte_carlo_agrees_with_the_regression(tmp_path):
    # Cross-method check: EVPPI of the candidate's capex by regression on one sample of
    # trials, against a nested two-level Monte Carlo (outer: capex; inner: the shared
    # long-term energy factor and O&M), on the real cash-flow model. They must
    # agree within two combined standard errors.
    a, b = _capex_cases(tmp_path)
    site = prepare(a)
    one = evaluate(a, site).energy
    e_ref = float(evaluate(a, site).cashflow.pv_energy_real_kwh[0])
    life = int(a["case.lifetime_years"])

    def values(focus, rest):
        n = focus.shape[0]
        energy = replace(one, annual_kwh=np.repeat(one.annual_kwh, n))  # physics: no inputs
        factors = np.repeat(rest[:, :1], life, axis=1)
        pa = dict(base_params(a, n), **{"costs.fixed_om_per_kw_year": rest[:, 1]})
        pb = dict(base_params(b, n), **{"costs.capex_per_kw": focus[:, 0],
                                        "costs.fixed_om_per_kw_year": rest[:, 1]})
        la = cash_flow(a, pa, energy, factors).lcoe_real
        lb = cash_flow(b, pb, energy, factors).lcoe_real
        return -np.column_stack([la, lb]) * e_ref

    def draw_focus(n, rng):
        return rng.normal(CAPEX_MEAN_B, CAPEX_SD_B, (n, 1))

    def draw_rest(n, rng):
        return np.column_stack([rng.normal(1.0, 0.08, n), rng.uniform(8.0, 22.0, n)])

    nested, nested_se = evppi_nested(values, draw_focus, draw_rest, 300, 40, seed=4)
    rng = np.random.default_rng(9)
    focus, rest = draw_focus(3000, rng), draw_rest(3000, rng)
    reg = evppi(values(focus, rest), focus[:, 0], "capex", seed=5)
    assert nested > 0 and reg.value > 0
    assert abs(reg.value - nested) < 2 * np.hypot(reg.se, nested_se)
    # Semi-analytic: the LCOE difference is k (capex_B - capex_A) / f for a shared energy
    # factor f (O&M cancels), so EVPPI(capex) = E[1/f] x normal loss (Raiffa & Schlaifer
    # 1961), E[1/f] by numerical integration (scipy.integrate.quad).
    probe = values(np.array([[1100.0], [900.0]]), np.array([[1.0, 15.0], [1.0, 15.0]]))
    k = -((probe[0, 1] - probe[0, 0]) - (probe[1, 1] - probe[1, 0])) / 200.0
    inv_f = integrate.quad(lambda f: norm.pdf(f, 1.0, 0.08) / f, 0.5, 1.5)[0]
    exact = inv_f * normal_evpi(-k * (CAPEX_MEAN_B - CAPEX_A), k * CAPEX_SD_B)
    assert abs(reg.value - exact) < 3 * reg.se
