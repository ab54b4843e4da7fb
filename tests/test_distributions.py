"""Tests of lcoe.uncertainty.distributions."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from lcoe.case.errors import InputError
from lcoe.uncertainty.distributions import Distribution, parse_distribution

SOURCE = "case.toml"
PATH = "costs.capex_per_kw"
KEY = 'uncertain."costs.capex_per_kw"'
U = np.array([1e-9, 0.001, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.999, 1 - 1e-9])


def parse(spec):
    return parse_distribution(PATH, spec, SOURCE)


# -- ppf against scipy.stats (cross-implementation) -------------------------------------------
@pytest.mark.parametrize(
    ("spec", "reference"),
    [
        ({"dist": "normal", "mean": 950.0, "sd": 60.0}, stats.norm(loc=950.0, scale=60.0)),
        # lognormal with median m and log-sd s is scipy's lognorm(s, scale=m)
        ({"dist": "lognormal", "median": 0.005, "sigma": 0.3}, stats.lognorm(0.3, scale=0.005)),
        (
            {"dist": "triangular", "low": 850, "mode": 950, "high": 1150},
            stats.triang((950 - 850) / 300, loc=850, scale=300),
        ),
        # Beta-PERT, lambda = 4: alpha = 1 + 4 (mode - low)/(high - low),
        # beta = 1 + 4 (high - mode)/(high - low)
        (
            {"dist": "pert", "low": 850, "mode": 950, "high": 1150},
            stats.beta(1 + 4 * 100 / 300, 1 + 4 * 200 / 300, loc=850, scale=300),
        ),
        ({"dist": "uniform", "low": 0.2, "high": 0.7}, stats.uniform(loc=0.2, scale=0.5)),
        (
            {"dist": "truncnormal", "mean": 1.0, "sd": 0.5, "low": 0.5, "high": 2.5},
            stats.truncnorm(-1.0, 3.0, loc=1.0, scale=0.5),
        ),
        # normal truncated by low/high is the same truncated normal
        (
            {"dist": "normal", "mean": 1.0, "sd": 0.5, "low": 0.5, "high": 2.5},
            stats.truncnorm(-1.0, 3.0, loc=1.0, scale=0.5),
        ),
        (
            {"dist": "normal", "mean": 1.0, "sd": 0.5, "low": 0.0},
            stats.truncnorm(-2.0, np.inf, loc=1.0, scale=0.5),
        ),
    ],
)
def test_ppf_matches_scipy(spec, reference):
    # cross-implementation: scipy.stats frozen distributions built independently in the test
    d = parse(spec)
    # atol: next to a bound at 0 (1e-9 from it), loc + scale z cancels in both
    # implementations; both are within about 2e-16 of a 50-digit value there, not 1e-9 of it
    np.testing.assert_allclose(d.ppf(U), reference.ppf(U), rtol=1e-9, atol=1e-15)
    assert d.mean() == pytest.approx(reference.mean(), rel=1e-9)
    assert d.var() == pytest.approx(reference.var(), rel=1e-9)
    assert d.median() == pytest.approx(reference.median(), rel=1e-9)


def test_truncated_lognormal_maps_u_into_cdf_window():
    # cross-implementation: ppf(F(low) + u (F(high) - F(low))) with scipy's lognorm
    d = parse({"dist": "lognormal", "median": 2.0, "sigma": 0.5, "low": 1.0, "high": 5.0})
    ref = stats.lognorm(0.5, scale=2.0)
    lo, hi = ref.cdf(1.0), ref.cdf(5.0)
    np.testing.assert_allclose(d.ppf(U), ref.ppf(lo + U * (hi - lo)), rtol=1e-9)
    # mean and variance of the truncated law by numerical integration (scipy.integrate.quad)

    def pdf(x):
        return ref.pdf(x) / (hi - lo)

    mean = integrate.quad(lambda x: x * pdf(x), 1.0, 5.0)[0]
    var = integrate.quad(lambda x: (x - mean) ** 2 * pdf(x), 1.0, 5.0)[0]
    assert d.mean() == pytest.approx(mean, rel=1e-8)
    assert d.var() == pytest.approx(var, rel=1e-8)


def test_lognormal_mean_closed_form():
    # analytic: E[X] = median exp(sigma^2 / 2)
    d = parse({"dist": "lognormal", "median": 0.005, "sigma": 0.3})
    assert d.mean() == pytest.approx(0.005 * math.exp(0.045), rel=1e-12)


def test_pert_mean_is_weighted_three_point():
    # analytic / published: Beta-PERT mean = (low + 4 mode + high)/6 (Malcolm et al. 1959)
    d = parse({"dist": "pert", "low": 850, "mode": 900, "high": 1300})
    assert d.mean() == pytest.approx((850 + 4 * 900 + 1300) / 6, rel=1e-12)


@pytest.mark.parametrize(
    "spec",
    [
        {"dist": "normal", "mean": 0.0, "sd": 1.0, "low": -0.5, "high": 0.25},
        {"dist": "normal", "mean": 0.0, "sd": 1.0, "low": 3.0},
        {"dist": "lognormal", "median": 1.0, "sigma": 1.0, "high": 1.5},
        {"dist": "lognormal", "median": 1.0, "sigma": 1.0, "low": 2.0, "high": 3.0},
        {"dist": "truncnormal", "mean": 5.0, "sd": 2.0, "low": 4.9, "high": 5.0},
        {"dist": "triangular", "low": 1.0, "mode": 1.0, "high": 2.0},
        {"dist": "pert", "low": 1.0, "mode": 2.0, "high": 2.0},
    ],
)
def test_truncation_and_bounds_respected(spec):
    d = parse(spec)
    lo, hi = d.support()
    u = np.concatenate([U, np.linspace(0.0, 1.0, 1001)[1:-1]])
    x = d.ppf(u)
    assert np.all(np.isfinite(x))
    assert np.all((x >= lo) & (x <= hi))
    assert d.ppf(np.array([0.0, 1.0])).tolist() == [lo, hi]
    assert np.all(np.diff(d.ppf(np.linspace(0, 1, 1001))) >= 0)  # monotone


def test_support_unbounded_and_lognormal():
    assert parse({"dist": "normal", "mean": 0, "sd": 1}).support() == (-math.inf, math.inf)
    assert parse({"dist": "lognormal", "median": 1, "sigma": 1}).support() == (0.0, math.inf)
    assert parse({"dist": "normal", "mean": 0, "sd": 1, "high": 2}).support() == (-math.inf, 2.0)


def test_discrete_sorted_monotone_and_weights():
    d = parse({"dist": "discrete", "values": [30, 10, 20, 40], "weights": [0.2, 0.3, 0.5, 0.0]})
    assert d.params["values"] == (10.0, 20.0, 30.0, 40.0)
    assert d.params["weights"] == (0.3, 0.5, 0.2, 0.0)
    # analytic: cumulative weights 0.3, 0.8, 1.0 (40 has zero weight and is never drawn)
    np.testing.assert_array_equal(
        d.ppf(np.array([0.0, 0.1, 0.3, 0.300001, 0.8, 0.81, 1.0])),
        [10, 10, 10, 20, 20, 30, 30],
    )
    u = (np.arange(100_000) + 0.5) / 100_000
    x = d.ppf(u)
    assert np.all(np.diff(x) >= 0)
    for value, weight in zip((10, 20, 30, 40), (0.3, 0.5, 0.2, 0.0)):
        assert np.mean(x == value) == pytest.approx(weight, abs=1e-5)
    assert d.mean() == pytest.approx(0.3 * 10 + 0.5 * 20 + 0.2 * 30)
    assert d.support() == (10.0, 40.0)
    assert d.median() == 20.0
    assert d.percentile(0.9) == 30.0


def test_parse_keeps_group_and_describe():
    d = parse({"dist": "triangular", "low": 850, "mode": 950, "high": 1150, "group": "costs"})
    assert d == Distribution(
        PATH, "triangular", {"low": 850, "mode": 950, "high": 1150}, group="costs"
    )
    assert d.group == "costs" and d.low is None and d.high is None
    assert d.describe() == "triangular(low=850, mode=950, high=1150)"
    assert isinstance(d.params["mode"], float)


def test_params_not_shared_with_caller():
    params = {"mean": 1.0, "sd": 0.1}
    d = Distribution("x", "normal", params)
    params["sd"] = -5
    assert d.params["sd"] == 0.1


def test_ppf_rejects_probabilities_outside_unit_interval():
    d = parse({"dist": "normal", "mean": 0, "sd": 1})
    with pytest.raises(ValueError, match="expected probabilities"):
        d.ppf(np.array([0.5, 1.2]))
    with pytest.raises(ValueError):
        d.ppf(np.array([np.nan]))


# -- errors -----------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("spec", "fragments"),
    [
        ({"dist": "trianglar", "low": 1, "mode": 2, "high": 3}, ["'trianglar'", "'triangular'"]),
        ({"dist": 3}, ["dist = 3"]),
        ({"low": 1, "high": 2}, ["missing key 'dist'"]),
        ({"dist": "normal", "mean": 1.0}, ["missing parameter 'sd'"]),
        ({"dist": "normal", "mean": 1.0, "sd": 0.1, "mode": 1.0}, [".mode = 1.0", "unexpected"]),
        ({"dist": "normal", "mean": 1.0, "sdev": 0.1}, [".sdev = 0.1", "did you mean 'sd'"]),
        ({"dist": "uniform", "low": 1, "high": 2, "mean": 1.5}, [".mean = 1.5", "unexpected"]),
        ({"dist": "normal", "mean": 1.0, "sd": 0.0}, [".sd = 0.0", "> 0"]),
        ({"dist": "truncnormal", "mean": 1, "sd": -1, "low": 0, "high": 2}, [".sd = -1.0"]),
        ({"dist": "lognormal", "median": 1.0, "sigma": 0.0}, [".sigma = 0.0", "> 0"]),
        ({"dist": "lognormal", "median": -2.0, "sigma": 0.1}, [".median = -2.0", "> 0"]),
        ({"dist": "lognormal", "median": 1.0, "sigma": 0.1, "low": 0.0}, [".low = 0.0"]),
        ({"dist": "uniform", "low": 2.0, "high": 2.0}, [".low = 2.0", "< high"]),
        ({"dist": "normal", "mean": 0, "sd": 1, "low": 3.0, "high": -1.0}, [".low = 3.0"]),
        ({"dist": "triangular", "low": 1, "mode": 5, "high": 3}, [".mode = 5.0", "[low, high]"]),
        ({"dist": "pert", "low": 1, "mode": 0.5, "high": 3}, [".mode = 0.5", "[low, high]"]),
        ({"dist": "discrete", "values": [1, 2], "weights": [0.5, 0.6]}, [".weights", "summing"]),
        ({"dist": "discrete", "values": [1, 2], "weights": [1.5, -0.5]}, ["-0.5", ">= 0"]),
        ({"dist": "discrete", "values": [1, 2, 3], "weights": [0.5, 0.5]}, ["as many weights"]),
        ({"dist": "discrete", "values": [], "weights": []}, [".values = []", "non-empty"]),
        ({"dist": "discrete", "values": [1, "b"], "weights": [0.5, 0.5]}, ["'b'", "numbers"]),
        ({"dist": "normal", "mean": "950", "sd": 1}, [".mean = '950'", "finite number"]),
        ({"dist": "normal", "mean": True, "sd": 1}, [".mean = True", "finite number"]),
        ({"dist": "normal", "mean": float("nan"), "sd": 1}, [".mean = nan", "finite number"]),
        ({"dist": "normal", "mean": 1, "sd": 1, "group": 7}, [".group = 7", "string"]),
    ],
)
def test_errors_are_one_line_and_name_key_and_value(spec, fragments):
    with pytest.raises(InputError) as info:
        parse(spec)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(SOURCE + ": ")
    assert KEY in message
    for fragment in fragments:
        assert fragment in message


def test_weights_sum_tolerance_is_1e9():
    # within 1e-9: accepted; beyond: refused
    parse({"dist": "discrete", "values": [1, 2], "weights": [0.5, 0.5 + 5e-10]})
    with pytest.raises(InputError, match="summing to 1"):
        parse({"dist": "discrete", "values": [1, 2], "weights": [0.5, 0.5 + 1e-8]})


def test_not_a_table():
    with pytest.raises(InputError, match=r'uncertain."costs.capex_per_kw" = 3'):
        parse(3)


def test_constructor_validates_too():
    with pytest.raises(InputError, match="sd = -1.0"):
        Distribution("x", "normal", {"mean": 1.0, "sd": -1.0})
    with pytest.raises(InputError, match="expected exactly"):
        Distribution("x", "normal", {"mean": 1.0})
    with pytest.raises(InputError, match="truncation applies"):
        Distribution("x", "uniform", {"low": 0.0, "high": 1.0}, low=0.5)
    with pytest.raises(InputError, match="did you mean 'pert'"):
        Distribution("x", "perts", {})


# -- the vectorised quantiles against scipy over whole ranges ---------------------------------
U_WIDE = np.concatenate([np.random.default_rng(7).random(20_000), np.logspace(-16, -1, 300),
                         1.0 - np.logspace(-16, -1, 300), [0.0, 0.5, 1.0]])


@pytest.mark.parametrize("c", [0.0, 0.001, 0.1, 0.27, 0.5, 0.8, 0.999, 1.0])
def test_pert_table_matches_scipy_beta(c):
    # cross-implementation: scipy.stats.beta.ppf (boost's inverse incomplete beta)
    low, high = 13.0, 24.0
    d = parse({"dist": "pert", "low": low, "mode": low + c * (high - low), "high": high})
    ref = stats.beta(1 + 4 * c, 1 + 4 * (1 - c), loc=low, scale=high - low).ppf(U_WIDE)
    assert np.max(np.abs(d.ppf(U_WIDE) - ref)) <= 1e-10 * (high - low)


#: Normal laws: bounds near and far, narrow windows, a window in the tail, log space.
NORMAL_SPECS = [
    {"dist": "normal", "mean": 0.025, "sd": 0.005, "low": 0.0, "high": 0.06},
    {"dist": "normal", "mean": 25.0, "sd": 2.5, "low": 15.0},
    {"dist": "truncnormal", "mean": 5.0, "sd": 2.0, "low": 4.9, "high": 5.0},
    {"dist": "truncnormal", "mean": 0.0, "sd": 1.0, "low": 2.0, "high": 9.0},
    {"dist": "lognormal", "median": 0.005, "sigma": 0.35, "high": 0.02},
    {"dist": "normal", "mean": -3.0, "sd": 0.4},
    {"dist": "normal", "mean": 1.0, "sd": 0.03, "low": 0.05},  # a bound 31.7 sd out
]


@pytest.mark.parametrize("spec", NORMAL_SPECS)
def test_normal_quantiles_match_scipy(spec):
    # cross-implementation: scipy.stats.truncnorm / norm built independently here
    d = parse(spec)
    if spec["dist"] == "lognormal":
        m, s = np.log(spec["median"]), spec["sigma"]
        ref = np.exp(stats.truncnorm(-np.inf, (np.log(spec["high"]) - m) / s, loc=m,
                                     scale=s).ppf(U_WIDE))
    else:
        lo, hi = spec.get("low", -np.inf), spec.get("high", np.inf)
        ref = stats.truncnorm((lo - spec["mean"]) / spec["sd"], (hi - spec["mean"]) / spec["sd"],
                              loc=spec["mean"], scale=spec["sd"]).ppf(U_WIDE)
    inner = (U_WIDE >= 1e-6) & (U_WIDE <= 1.0 - 1e-6)
    np.testing.assert_allclose(d.ppf(U_WIDE)[inner], ref[inner], rtol=1e-10, atol=1e-300)


def _truncnorm_ppf_50_digits(u: float, a: float, b: float) -> float:
    """Standard normal quantile restricted to [a, b] with mpmath at 50 digits."""
    import mpmath as mp

    mp.mp.dps = 50
    lo = mp.mpf(0) if a == -np.inf else mp.ncdf(a)
    hi = mp.mpf(1) if b == np.inf else mp.ncdf(b)
    if u > 0.5:  # from the upper end: P(Z > z) = (1 - u) (hi - lo) + (1 - hi)
        q = (1 - mp.mpf(u)) * (hi - lo) + (1 - hi)
        return mp.sqrt(2) * mp.erfinv(1 - 2 * q)
    return mp.sqrt(2) * mp.erfinv(2 * (lo + mp.mpf(u) * (hi - lo)) - 1)


@pytest.mark.parametrize("spec", NORMAL_SPECS)
def test_normal_quantiles_in_the_far_tails_to_50_digits(spec):
    # independent reference: mpmath (50 significant digits) on Phi(z) = Phi(a) + u m, at the
    # tails 1e-16 .. 1e-6 from either end (scipy's truncnorm is off there by up to 1e-6)
    import mpmath as mp

    d = parse(spec)
    if spec["dist"] == "lognormal":
        m, s = np.log(spec["median"]), spec["sigma"]
        a, b = -np.inf, (np.log(spec["high"]) - m) / s
    else:
        m, s = spec["mean"], spec["sd"]
        a = (spec.get("low", -np.inf) - m) / s
        b = (spec.get("high", np.inf) - m) / s
    tails = np.concatenate([np.logspace(-16, -6, 41), 1.0 - np.logspace(-16, -6, 41)])
    got = d.ppf(tails)
    for u, x in zip(tails, got):
        z = _truncnorm_ppf_50_digits(float(u), a, b)
        ref = float(mp.exp(m + s * z)) if spec["dist"] == "lognormal" else float(m + s * z)
        # loc + scale z rounds to about 1e-16 of the larger of |loc| and |x|
        assert abs(x - ref) <= 1e-14 * max(abs(ref), abs(m)), (u, x, ref)


@pytest.mark.parametrize("mode", [950.0, 1050.0, 1250.0])
def test_triangular_closed_form_matches_scipy(mode):
    # cross-implementation: scipy.stats.triang
    d = parse({"dist": "triangular", "low": 950.0, "mode": mode, "high": 1250.0})
    ref = stats.triang((mode - 950.0) / 300.0, loc=950.0, scale=300.0).ppf(U_WIDE)
    np.testing.assert_allclose(d.ppf(U_WIDE), ref, rtol=1e-14)
