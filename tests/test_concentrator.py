"""Tests for lcoe.plant.concentrator: acceptance, receiver energy balance, power bound."""

import numpy as np
import pytest

from lcoe.case.errors import InputError
from lcoe.plant import concentrator as cpv

BASE = dict(
    aperture_area_m2=1.2,
    optical_efficiency=0.82,
    cell_efficiency=0.38,
    acceptance_half_angle_deg=0.8,
    geometric_concentration=500.0,
    cooling_u_w_m2k=4000.0,
    temp_coeff_per_c=-0.0012,
)


def test_acceptance_fraction_sharp_and_rolled_off():
    aoi = np.array([0.0, 0.5, 1.0, 1.0001, 1.25, 1.5, 2.0])
    np.testing.assert_array_equal(cpv.acceptance_fraction(aoi, 1.0), [1, 1, 1, 0, 0, 0, 0])
    # analytic: linear roll-off over 0.5 deg beyond the half-angle
    np.testing.assert_allclose(
        cpv.acceptance_fraction(aoi, 1.0, edge_width_deg=0.5),
        [1, 1, 1, 1 - 0.0002, 0.5, 0.0, 0.0],
        atol=1e-12,
    )


def test_power_never_exceeds_upper_bound_random_inputs():
    rng = np.random.default_rng(11)
    n_s, n_t = 300, 400
    params = dict(
        aperture_area_m2=rng.uniform(0.1, 5.0, (n_s, 1)),
        optical_efficiency=rng.uniform(0.5, 1.0, (n_s, 1)),
        cell_efficiency=rng.uniform(0.2, 0.45, (n_s, 1)),
        acceptance_half_angle_deg=rng.uniform(0.2, 2.0, (n_s, 1)),
        geometric_concentration=rng.uniform(1.0, 1500.0, (n_s, 1)),
        cooling_u_w_m2k=rng.uniform(50.0, 20000.0, (n_s, 1)),
        temp_coeff_per_c=rng.uniform(-0.006, 0.002, (n_s, 1)),
        cooling_u_wind_w_m3sk=rng.uniform(0.0, 50.0, (n_s, 1)),
    )
    dni = rng.uniform(0.0, 1100.0, n_t)
    aoi = rng.uniform(0.0, 3.0, n_t)
    temp_air = rng.uniform(-30.0, 50.0, n_t)
    wind = rng.uniform(0.0, 15.0, n_t)
    p = cpv.cpv_dc_power_w(dni, aoi, temp_air=temp_air, wind_speed=wind, **params)
    bound = cpv.cpv_upper_bound_w(
        dni, params["aperture_area_m2"], params["optical_efficiency"], params["cell_efficiency"]
    )
    assert p.shape == (n_s, n_t)
    assert np.all(p >= 0.0)
    assert np.all(p <= bound)
    assert np.any(p > 0.0)


def test_zero_outside_acceptance():
    aoi = np.array([0.0, 0.79, 0.81, 5.0, 30.0])
    p = cpv.cpv_dc_power_w(np.full(5, 900.0), aoi, temp_air=20.0, wind_speed=2.0, **BASE)
    assert np.all(p[:2] > 0.0)
    np.testing.assert_array_equal(p[2:], 0.0)


def test_energy_balance_closed_form():
    # analytic: the returned temperature satisfies T = T_air + (q - p_cell) / U with
    # p_cell = q * eta * (1 + gamma (T - 25)) per m2 of cell
    dni, t_air, ws = 850.0, 30.0, 3.0
    u = BASE["cooling_u_w_m2k"] + 10.0 * ws
    t = cpv.cpv_cell_temperature_c(
        dni,
        0.0,
        BASE["optical_efficiency"],
        BASE["cell_efficiency"],
        BASE["acceptance_half_angle_deg"],
        t_air,
        ws,
        BASE["geometric_concentration"],
        BASE["cooling_u_w_m2k"],
        BASE["temp_coeff_per_c"],
        cooling_u_wind_w_m3sk=10.0,
    )
    q = dni * BASE["optical_efficiency"] * BASE["geometric_concentration"]
    p_cell = q * BASE["cell_efficiency"] * (1 + BASE["temp_coeff_per_c"] * (t - 25.0))
    assert float(t) == pytest.approx(t_air + (q - p_cell) / u, rel=1e-12)
    assert float(t) > 25.0
    p = cpv.cpv_dc_power_w(
        dni, 0.0, temp_air=t_air, wind_speed=ws, cooling_u_wind_w_m3sk=10.0, **BASE
    )
    cell_area = BASE["aperture_area_m2"] / BASE["geometric_concentration"]
    assert float(p) == pytest.approx(p_cell * cell_area, rel=1e-12)


def test_zero_temperature_coefficient_gives_bound_and_simple_rise():
    # analytic: gamma = 0 -> T = T_air + q (1 - eta) / U and P = A DNI optical eta
    params = {**BASE, "temp_coeff_per_c": 0.0}
    t = cpv.cpv_cell_temperature_c(
        700.0,
        0.0,
        params["optical_efficiency"],
        params["cell_efficiency"],
        0.8,
        10.0,
        0.0,
        500.0,
        4000.0,
        0.0,
    )
    q = 700.0 * 0.82 * 500.0
    assert float(t) == pytest.approx(10.0 + q * (1 - 0.38) / 4000.0, rel=1e-12)
    p = cpv.cpv_dc_power_w(700.0, 0.0, temp_air=10.0, wind_speed=0.0, **params)
    assert float(p) == pytest.approx(1.2 * 700.0 * 0.82 * 0.38, rel=1e-12)


def test_cold_cell_is_capped_at_bound():
    # the documented cap: a cell below 25 C gains nothing above the bound
    p = cpv.cpv_dc_power_w(200.0, 0.0, temp_air=-25.0, wind_speed=5.0, **BASE)
    bound = cpv.cpv_upper_bound_w(200.0, 1.2, 0.82, 0.38)
    t = cpv.cpv_cell_temperature_c(200.0, 0.0, 0.82, 0.38, 0.8, -25.0, 5.0, 500.0, 4000.0, -0.0012)
    assert float(t) < 25.0
    assert float(p) == pytest.approx(float(bound), rel=1e-12)


def test_receiver_without_cooling_produces_nothing():
    # analytic: with almost no heat loss the linearised balance has no operating point:
    # the receiver is taken as dead, T = T_air + q / U
    params = {**BASE, "cooling_u_w_m2k": 5.0}
    p = cpv.cpv_dc_power_w(900.0, 0.0, temp_air=25.0, wind_speed=0.0, **params)
    t = cpv.cpv_cell_temperature_c(900.0, 0.0, 0.82, 0.38, 0.8, 25.0, 0.0, 500.0, 5.0, -0.0012)
    assert float(p) == 0.0
    assert float(t) == pytest.approx(25.0 + 900.0 * 0.82 * 500.0 / 5.0, rel=1e-12)


def test_hazard_text():
    text = cpv.hazard_text()
    assert "seconds" in text and "eye" in text and "cooling" in text and "tracking" in text
    assert all(s.endswith(".") for s in cpv.hazard_warnings())


def test_validation():
    with pytest.raises(InputError, match="optical_efficiency"):
        cpv.cpv_dc_power_w(
            900.0, 0.0, temp_air=20.0, wind_speed=1.0, **{**BASE, "optical_efficiency": 1.2}
        )
    with pytest.raises(InputError, match="geometric_concentration"):
        cpv.cpv_dc_power_w(
            900.0, 0.0, temp_air=20.0, wind_speed=1.0, **{**BASE, "geometric_concentration": 0.5}
        )
    with pytest.raises(InputError, match="acceptance_half_angle_deg"):
        cpv.acceptance_fraction(0.0, 0.0)
