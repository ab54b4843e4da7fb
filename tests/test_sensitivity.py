"""Tests of lcoe.uncertainty.sensitivity."""

from __future__ import annotations

import numpy as np
import pytest

from lcoe.case.rng import make_rng
from lcoe.uncertainty.analytic import (
    g_function,
    g_function_indices,
    ishigami,
    ishigami_indices,
    linear,
    linear_indices,
)
from lcoe.uncertainty.distributions import Distribution, parse_distribution
from lcoe.uncertainty.sampling import correlation_matrix
from lcoe.uncertainty.sensitivity import (
    SobolResult,
    morris_screen,
    sobol_analyze,
    sobol_problem,
    sobol_sample,
    tornado,
)

SOURCE = "case.toml"

# Ishigami (a=7, b=0.1, x ~ U(-pi, pi)): published values, Ishigami & Homma 1990;
# Saltelli et al. 2008 (Global Sensitivity Analysis. The Primer); DOMAIN.md section 4
ISHIGAMI_S1 = [0.3139, 0.4424, 0.0]
ISHIGAMI_ST = [0.5576, 0.4424, 0.2437]


def uniform(name, low, high, group=None):
    spec = {"dist": "uniform", "low": low, "high": high}
    if group:
        spec["group"] = group
    return parse_distribution(name, spec, SOURCE)


@pytest.fixture(scope="module")
def ishigami_result():
    dists = [uniform(f"x{i}", -np.pi, np.pi) for i in (1, 2, 3)]
    rng = make_rng(20240601)
    u, x, note = sobol_sample(dists, 4096, rng)
    return sobol_analyze(dists, ishigami(x), 4096, rng, output="ishigami"), u, note


# -- closed forms -----------------------------------------------------------------------------
def test_ishigami_closed_form_matches_published():
    ref = ishigami_indices(7.0, 0.1)
    # published (Ishigami & Homma 1990; Saltelli et al. 2008), 4 decimals -> 1e-3
    np.testing.assert_allclose(ref["S1"], ISHIGAMI_S1, atol=1e-3)
    np.testing.assert_allclose(ref["ST"], ISHIGAMI_ST, atol=1e-3)


def test_closed_form_variances_match_monte_carlo():
    # analytic closed forms vs a plain Monte Carlo variance (2e5 draws; statistical, ~1 %)
    rng = make_rng(1)
    x = rng.uniform(-np.pi, np.pi, size=(200_000, 3))
    assert np.var(ishigami(x)) == pytest.approx(ishigami_indices()["variance"], rel=0.02)
    a = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0])
    g = g_function(rng.random((200_000, 6)), a)
    assert np.mean(g) == pytest.approx(1.0, abs=0.01)  # analytic: E[g] = 1
    assert np.var(g) == pytest.approx(g_function_indices(a)["variance"], rel=0.03)


def test_g_function_indices_closed_form():
    # Saltelli & Sobol 1995: V_i = (1/3)/(1+a_i)^2, V = prod(1+V_i) - 1 (analytic, by hand):
    # a = [0, 1]: V = (4/3)(13/12) - 1 = 4/9; S = (3/4, 3/16); ST = (V_1 (1+V_2)/V, V_2 (1+V_1)/V)
    ref = g_function_indices([0.0, 1.0])
    np.testing.assert_allclose(ref["variance"], 4 / 9, rtol=1e-12)
    np.testing.assert_allclose(ref["S1"], [3 / 4, 3 / 16], rtol=1e-12)
    np.testing.assert_allclose(ref["ST"], [13 / 16, 1 / 4], rtol=1e-12)


def test_linear_indices_closed_form():
    ref = linear_indices([1.0, 2.0], [4.0, 3.0])  # 4 and 12 out of 16 (analytic)
    np.testing.assert_allclose(ref["S1"], [0.25, 0.75])
    np.testing.assert_array_equal(ref["S1"], ref["ST"])


# -- Sobol through our layer ------------------------------------------------------------------
def test_ishigami_through_layer(ishigami_result):
    result, u, note = ishigami_result
    s1 = [row["S1"] for row in result.rows]
    st = [row["ST"] for row in result.rows]
    # published values (see ISHIGAMI_*); N = 4096: agreement within 0.05 (DOMAIN.md section 4)
    np.testing.assert_allclose(s1, ISHIGAMI_S1, atol=0.05)
    np.testing.assert_allclose(st, ISHIGAMI_ST, atol=0.05)
    assert result.base_samples == 4096 and result.n_runs == 4096 * 5 == u.shape[0]
    assert note == ""
    assert [row["input"] for row in result.rows] == ["x1", "x2", "x3"]
    assert result.rows[2]["S1_includes_zero"] and not result.rows[2]["ST_includes_zero"]
    assert not any(row["ST_includes_zero"] for row in result.rows)
    assert not any("ranking" in w for w in result.warnings)
    assert "SALib" in result.method and "4096" in result.method
    assert result.output == "ishigami" and len(result.rows_half) == 3


def test_sobol_sample_shape_bounds_and_rounding():
    dists = [
        uniform("a", 2.0, 3.0),
        parse_distribution("b", {"dist": "normal", "mean": 0.0, "sd": 1.0}, SOURCE),
    ]
    u, x, note = sobol_sample(dists, 1000, make_rng(3))
    assert u.shape == x.shape == (1024 * 4, 2)
    assert np.all((u > 0) & (u < 1))
    assert np.all((x[:, 0] >= 2.0) & (x[:, 0] <= 3.0)) and np.all(np.isfinite(x))
    assert "rounded up to 1024" in note
    _, x2, _ = sobol_sample(dists, 1000, make_rng(3))
    np.testing.assert_array_equal(x, x2)  # same seed -> identical design


def test_g_function_through_layer():
    a = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0])
    dists = [uniform(f"g{i}", 0.0, 1.0) for i in range(6)]
    rng = make_rng(5)
    _, x, _ = sobol_sample(dists, 4096, rng)
    result = sobol_analyze(dists, g_function(x, a), 4096, rng)
    ref = g_function_indices(a)  # Saltelli & Sobol 1995 closed form
    # statistical tolerance at N = 4096 (bootstrap half-widths here are <= 0.035)
    np.testing.assert_allclose([r["S1"] for r in result.rows], ref["S1"], atol=0.03)
    np.testing.assert_allclose([r["ST"] for r in result.rows], ref["ST"], atol=0.03)
    # the two a = 99 inputs are negligible: both intervals are tiny
    assert all(r["ST"] < 0.01 for r in result.rows[4:])


def test_linear_with_normal_and_uniform_inputs():
    dists = [
        parse_distribution("p", {"dist": "normal", "mean": 10.0, "sd": 2.0}, SOURCE),
        uniform("q", 0.0, 6.0),
        parse_distribution("r", {"dist": "normal", "mean": 0.0, "sd": 1.0}, SOURCE),
    ]
    coeffs = np.array([1.0, 2.0, 0.5])
    rng = make_rng(8)
    _, x, _ = sobol_sample(dists, 2048, rng)
    result = sobol_analyze(dists, linear(x, coeffs), 2048, rng)
    # analytic: S_i = a_i^2 Var(X_i) / sum_j a_j^2 Var(X_j), Var = sd^2 or (high-low)^2/12
    ref = linear_indices(coeffs, [4.0, 36.0 / 12.0, 1.0])
    np.testing.assert_allclose([r["S1"] for r in result.rows], ref["S1"], atol=0.03)
    np.testing.assert_allclose([r["ST"] for r in result.rows], ref["ST"], atol=0.03)


def test_groups_singletons_and_group_indices():
    dists = [uniform("a", 0, 1, "costs"), uniform("b", 0, 1), uniform("c", 0, 1, "costs")]
    problem = sobol_problem(dists)
    assert problem["groups"] == ["costs", "b", "costs"]
    assert problem["bounds"] == [[0.0, 1.0]] * 3
    assert "groups" not in sobol_problem([uniform("a", 0, 1), uniform("b", 0, 1)])
    coeffs = np.array([1.0, 1.0, 2.0])
    rng = make_rng(12)
    u, x, _ = sobol_sample(dists, 2048, rng)
    assert u.shape == (2048 * 4, 3)  # two factors: N (2 + 2) runs
    result = sobol_analyze(dists, linear(x, coeffs), 2048, rng)
    # additive model: a group's index is the sum of its members' (analytic): (1 + 4)/6, 1/6
    assert [r["input"] for r in result.rows] == ["costs", "b"]
    assert result.rows[0]["members"] == ["a", "c"]
    np.testing.assert_allclose([r["ST"] for r in result.rows], [5 / 6, 1 / 6], atol=0.03)


def test_group_name_clash_refused():
    with pytest.raises(ValueError, match="share their name with a group"):
        sobol_problem([uniform("a", 0, 1, "b"), uniform("b", 0, 1)])
    with pytest.raises(ValueError, match="appear twice"):
        sobol_problem([uniform("a", 0, 1), uniform("a", 0, 2)])


def test_correlation_note_and_warning():
    dists = [uniform("a", 0, 1), uniform("b", 0, 1), uniform("c", 0, 1)]
    corr = correlation_matrix(["a", "b", "c"], [("a", "b", 0.5)], SOURCE)
    rng = make_rng(2)
    _, x, note = sobol_sample(dists, 64, rng, corr=corr)
    assert "not applied" in note and "independent" in note
    result = sobol_analyze(dists, linear(x, np.ones(3)), 64, rng, corr=corr)
    caveat = [w for w in result.warnings if "independent" in w]
    assert len(caveat) == 1 and "a ~ b (+0.5)" in caveat[0]
    grouped = [uniform("a", 0, 1, "g"), uniform("b", 0, 1, "g"), uniform("c", 0, 1)]
    _, x, _ = sobol_sample(grouped, 64, rng, corr=corr)
    result = sobol_analyze(grouped, linear(x, np.ones(3)), 64, rng, corr=corr)
    assert any("share a group" in w for w in result.warnings)


def test_wide_interval_and_ranking_warnings():
    # two inputs of equal weight: at small N the estimates are noisy, intervals wide, and the
    # order of the tied pair is a coin toss between N/2 and N
    dists = [uniform("a", 0, 1), uniform("b", 0, 1), uniform("c", 0, 1)]
    coeffs = np.array([1.0, 1.0, 0.3])
    seen_rank, seen_wide = False, False
    for seed in range(10):
        rng = make_rng(seed)
        _, x, _ = sobol_sample(dists, 16, rng)
        result = sobol_analyze(dists, linear(x, coeffs), 16, rng)
        seen_rank |= any("ranking by ST changes" in w for w in result.warnings)
        seen_wide |= any("wide interval" in w for w in result.warnings)
        assert all(r["wide"] == (r["S1_wide"] or r["ST_wide"]) for r in result.rows)
    assert seen_rank and seen_wide


def test_flags_follow_definition(ishigami_result):
    result, _, _ = ishigami_result
    for r in result.rows:
        for key in ("S1", "ST"):
            lo, hi = r[key] - r[f"{key}_conf"], r[key] + r[f"{key}_conf"]
            assert r[f"{key}_includes_zero"] == (lo <= 0.0 <= hi)
            assert r[f"{key}_wide"] == (r[f"{key}_conf"] > 0.1 * abs(r[key]))


def test_sobol_analyze_rejects_bad_output():
    dists = [uniform("a", 0, 1), uniform("b", 0, 1)]
    rng = make_rng(1)
    _, x, _ = sobol_sample(dists, 8, rng)
    y = linear(x, np.ones(2))
    y[7] = np.nan
    y[9] = np.inf
    with pytest.raises(ValueError, match="run 7"):
        sobol_analyze(dists, y, 8, rng)
    with pytest.raises(ValueError, match=r"expected \(32,\)"):
        sobol_analyze(dists, np.ones(31), 8, rng)
    with pytest.raises(ValueError, match="constant"):
        sobol_analyze(dists, np.ones(32), 8, rng)
    with pytest.raises(ValueError, match="n_base"):
        sobol_sample(dists, 1, rng)


def test_sobol_result_is_dataclass(ishigami_result):
    result, _, _ = ishigami_result
    assert isinstance(result, SobolResult)
    assert result.conf_level == 0.95 and result.num_resamples == 200


# -- Morris -----------------------------------------------------------------------------------
def test_morris_linear_uniform_exact():
    # analytic: grid levels map to stratum midpoints (l + 1/2)/p, so a jump Delta = p/(2(p-1))
    # moves a U(low, high) input by (high - low)/2; EE = a (high - low)/2 / Delta, sigma = 0
    dists = [uniform("a", 0, 4), uniform("b", 10, 11), uniform("c", -1, 1)]
    coeffs = np.array([2.0, -3.0, 0.1])
    calls = []

    def f(x):
        calls.append(x.shape)
        return linear(x, coeffs)

    rows = morris_screen(dists, f, 20, make_rng(4), num_levels=4)
    assert calls == [(20 * 4, 3)]
    delta = 4 / (2 * 3)
    expected = {"a": 2.0 * 4 / 2 / delta, "b": 3.0 * 1 / 2 / delta, "c": 0.1 * 2 / 2 / delta}
    assert [r["input"] for r in rows] == ["a", "b", "c"]  # sorted by mu_star
    for r in rows:
        assert r["mu_star"] == pytest.approx(expected[r["input"]], rel=1e-9)
        assert r["sigma"] == pytest.approx(0.0, abs=1e-9)
    assert rows[1]["mu"] == pytest.approx(-expected["b"], rel=1e-9)


def test_morris_g_function_ranking_and_unbounded_inputs():
    a = np.array([0.0, 1.0, 9.0, 99.0])
    dists = [uniform(f"g{i}", 0, 1) for i in range(4)]
    rows = morris_screen(dists, lambda x: g_function(x, a), 30, make_rng(6), num_levels=6)
    # Saltelli & Sobol 1995: importance falls as a_i grows
    assert [r["input"] for r in rows] == ["g0", "g1", "g2", "g3"]
    normal = [
        parse_distribution(n, {"dist": "normal", "mean": 0, "sd": 1}, SOURCE) for n in ("u", "v")
    ]
    rows = morris_screen(normal, lambda x: linear(x, np.array([1.0, 5.0])), 5, make_rng(1))
    assert all(np.isfinite(r["mu_star"]) for r in rows) and rows[0]["input"] == "v"
    with pytest.raises(ValueError, match="even"):
        morris_screen(normal, lambda x: x[:, 0], 5, make_rng(1), num_levels=5)


# -- tornado ----------------------------------------------------------------------------------
def test_tornado_one_call_sorted_and_analytic():
    dists = [
        parse_distribution("p", {"dist": "normal", "mean": 10.0, "sd": 2.0}, SOURCE),
        uniform("q", 0.0, 6.0),
        parse_distribution("r", {"dist": "triangular", "low": 0, "mode": 1, "high": 2}, SOURCE),
    ]
    coeffs = np.array([1.0, 0.2, -3.0])
    calls = []

    def f(x):
        calls.append(x.copy())
        return linear(x, coeffs)

    rows = tornado(dists, f, {"p": 10.0, "q": 3.0, "r": 1.0})
    assert len(calls) == 1 and calls[0].shape == (7, 3)
    np.testing.assert_array_equal(calls[0][0], [10.0, 3.0, 1.0])
    # analytic swings |a_i| (P90 - P10): normal 2 * 1.2815516 * sd, uniform 0.8 * 6,
    # symmetric triangular on [0, 2]: P10 = sqrt(0.2), P90 = 2 - sqrt(0.2)
    z90 = 1.2815515655446004  # standard normal 90th percentile (scipy.stats.norm.ppf(0.9))
    expected = {"p": 1.0 * 2 * z90 * 2.0, "q": 0.2 * 0.8 * 6.0, "r": 3.0 * (2 - 2 * np.sqrt(0.2))}
    assert [r["input"] for r in rows] == sorted(expected, key=lambda k: -expected[k])
    for r in rows:
        assert r["swing"] == pytest.approx(expected[r["input"]], rel=1e-9)
        assert r["y_base"] == pytest.approx(10.0 + 0.6 - 3.0)
    r_row = next(r for r in rows if r["input"] == "r")
    assert r_row["low_value"] == pytest.approx(np.sqrt(0.2)) and r_row["y_low"] > r_row["y_high"]
    same = tornado(dists, lambda x: linear(x, coeffs), np.array([10.0, 3.0, 1.0]))
    assert same == rows


def test_tornado_rejects_bad_base_and_nonfinite_output():
    dists = [uniform("a", 0, 1), uniform("b", 0, 1)]
    with pytest.raises(ValueError, match="missing"):
        tornado(dists, lambda x: x[:, 0], {"a": 0.5})
    with pytest.raises(ValueError, match="lo_q"):
        tornado(dists, lambda x: x[:, 0], {"a": 0.5, "b": 0.5}, lo_q=0.9, hi_q=0.1)

    def bad(x):
        y = x[:, 0].copy()
        y[3] = np.nan
        return y

    with pytest.raises(ValueError, match="run 3"):
        tornado(dists, bad, np.array([0.5, 0.5]))
    with pytest.raises(ValueError, match="shape"):
        tornado(dists, lambda x: x, np.array([0.5, 0.5]))


def test_distribution_built_directly_works_in_layer():
    d = [Distribution("x", "uniform", {"low": 0.0, "high": 1.0}), uniform("y", 0, 1)]
    assert sobol_problem(d)["names"] == ["x", "y"]
