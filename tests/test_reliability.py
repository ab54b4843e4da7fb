"""Tests for lcoe.money.reliability: renewal function and moving-part costs."""

import numpy as np
import pytest
from scipy.special import gamma

from lcoe.case.errors import InputError
from lcoe.money import reliability as rel


def test_exponential_expected_failures():
    # analytic: T / m
    assert rel.expected_failures_exponential(8.0, 25.0) == 3.125
    np.testing.assert_array_equal(
        rel.yearly_failures_exponential(np.array([5.0, 10.0]), 3), [[0.2] * 3, [0.1] * 3]
    )


def test_exponential_simulation_gives_t_over_mean():
    # analytic: exponential lives (Weibull shape 1), mean 8 years, 25 years -> 3.125 per unit;
    # statistical, fixed seed: standard error sqrt(3.125 / 100000) = 0.0056 (0.18 %)
    counts = rel.simulate_failures(1.0, 8.0, 25, 100_000, rng=2024)
    assert counts.sum(axis=1).mean() == pytest.approx(3.125, rel=0.02)


def test_weibull_shape_one_is_linear():
    # analytic: shape 1 is exponential with mean = scale, so M(t) = t / scale
    t = np.linspace(0.0, 200.0, 41)
    m = rel.renewal_function_weibull(1.0, 8.0, t)
    np.testing.assert_allclose(m[0], t / 8.0, rtol=1e-5, atol=1e-12)  # measured 5e-7


def test_weibull_renewal_matches_direct_simulation():
    # statistical, fixed seed: renewal function vs direct simulation of 200,000 units within 2 %
    # (shape 2.5, scale 8 years, 25 years); standard error of M(5) is about 0.4 %
    shape, scale, years = 2.5, 8.0, 25
    counts = rel.simulate_failures(shape, scale, years, 200_000, rng=12345)
    simulated = np.cumsum(counts.mean(axis=0))
    m = rel.renewal_function_weibull(shape, scale, np.arange(1, years + 1, dtype=float))[0]
    np.testing.assert_allclose(m[4:], simulated[4:], rtol=0.02)
    assert m[-1] == pytest.approx(simulated[-1], rel=0.005)
    yearly = rel.yearly_failures_weibull(shape, scale, years)[0]
    np.testing.assert_allclose(np.cumsum(yearly), m, rtol=1e-12)


def test_weibull_renewal_asymptote():
    # analytic (renewal theory, Cox 1962): M(t) -> t/mu - 1/2 + CV^2/2 for large t
    shape, scale = 2.5, 8.0
    mu = scale * gamma(1 + 1 / shape)
    cv2 = gamma(1 + 2 / shape) / gamma(1 + 1 / shape) ** 2 - 1
    t = np.array([150.0, 200.0])
    m = rel.renewal_function_weibull(shape, scale, t)[0]
    np.testing.assert_allclose(m, t / mu - 0.5 + cv2 / 2, atol=1e-4)  # measured 1.3e-6
    np.testing.assert_allclose(rel.renewal_asymptote(shape, scale, t)[0], t / mu - 0.5 + cv2 / 2)


def test_renewal_bounds_and_monotone():
    # analytic: M = sum_n F^{*n}, so F <= M <= F / (1 - F) while F < 1, and M is non-decreasing
    shape, scale = 3.0, 10.0
    t = np.linspace(0.0, 12.0, 49)
    f = -np.expm1(-((t / scale) ** shape))
    m = rel.renewal_function_weibull(shape, scale, t)[0]
    assert m[0] == 0.0
    assert np.all(np.diff(m) >= 0.0)
    assert np.all(m >= f - 1e-9)
    assert np.all(m <= f / (1 - f) + 1e-9)


def test_fft_solution_equals_direct_recursion():
    # analytic identity: the FFT power-series solve equals the O(n^2) recursion of the same
    # Riemann-Stieltjes scheme (to round-off)
    shape, scale, horizon, n = 2.5, 8.0, 25.0, 300
    grid, m = rel._renewal_on_grid(np.array([shape]), np.array([scale]), horizon, n)
    f = -np.expm1(-((grid / scale) ** shape))
    d_f = np.diff(f)
    ref = np.zeros(n + 1)
    for i in range(1, n + 1):
        acc = f[i] + 0.5 * ref[i - 1] * d_f[0]
        j = np.arange(2, i + 1)
        acc += np.sum(0.5 * (ref[i - j + 1] + ref[i - j]) * d_f[j - 1])
        ref[i] = acc / (1 - 0.5 * d_f[0])
    np.testing.assert_allclose(m[0], ref, rtol=1e-10, atol=1e-13)


def test_grid_refinement_converges():
    # numerical: a grid four times finer changes M by little (second-order scheme)
    t = np.arange(26.0)
    for shape in (0.7, 2.5, 4.0):
        coarse = rel.renewal_function_weibull(shape, 8.0, t)
        fine = rel.renewal_function_weibull(shape, 8.0, t, steps_per_scale=1600)
        np.testing.assert_allclose(coarse, fine, atol=5e-5)  # measured at most 2.1e-5


def test_vectorised_over_samples():
    shape = np.array([1.5, 2.5, 3.5])
    scale = np.array([6.0, 8.0, 12.0])
    yearly = rel.yearly_failures_weibull(shape, scale, 25)
    assert yearly.shape == (3, 25)
    for s in range(3):
        one = rel.yearly_failures_weibull(shape[s], scale[s], 25)[0]
        np.testing.assert_allclose(yearly[s], one, atol=2e-6)


def test_moving_part_costs():
    # analytic: 100 units x 0.1 failures/unit/yr = 10 failures; 10 x 500 = 5000 replacement;
    # 0.1 x 10/365 of the energy lost; 10 x 0.2 x 2000 = 4000 damage
    rate = np.array([[0.1, 0.1], [0.2, 0.3]])
    out = rel.moving_part_costs(
        100,
        rate,
        cost_each=500.0,
        repair_days=10.0,
        damage_fraction=0.2,
        unit_capex=2000.0,
        energy_per_unit_kwh_year=np.full((2, 2), 3000.0),
    )
    np.testing.assert_allclose(out["failures"][0], [10.0, 10.0])
    np.testing.assert_allclose(out["replacement_cost"][0], [5000.0, 5000.0])
    np.testing.assert_allclose(out["damage_cost"][0], [4000.0, 4000.0])
    np.testing.assert_allclose(out["lost_energy_fraction"][1], [0.2 * 10 / 365, 0.3 * 10 / 365])
    np.testing.assert_allclose(out["lost_energy_kwh"][0], 0.1 * 10 / 365 * 100 * 3000.0)
    per_sample = rel.moving_part_costs(
        100,
        rate,
        cost_each=np.array([[500.0], [1000.0]]),
        repair_days=10.0,
        damage_fraction=0.0,
        unit_capex=0.0,
    )
    np.testing.assert_allclose(per_sample["replacement_cost"][1], [20000.0, 30000.0])
    assert per_sample["damage_cost"].shape == (2, 2)


def test_validation():
    with pytest.raises(InputError, match="shape"):
        rel.renewal_function_weibull(-1.0, 8.0, [1.0])
    with pytest.raises(InputError, match="damage_fraction"):
        rel.moving_part_costs(10, np.zeros((1, 2)), 1.0, 1.0, 1.5, 1.0)
    with pytest.raises(InputError, match="n_years"):
        rel.yearly_failures_weibull(2.0, 8.0, 0)
