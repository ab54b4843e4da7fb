"""Energy chain checks against pvlib's own ModelChain and published worked values."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from lcoe.plant.energy import dc_power_kw, faiman_cell_temperature, inverter_ac_kw
from lcoe.site.irradiance import Geometry, orientation, plane_of_array, solar_position


def _params(**over):
    p = {"site.albedo": 0.2, "plant.dc_capacity_kw": 1000.0, "plant.dc_ac_ratio": 1.3,
         "plant.temp_coeff_per_c": -0.0037, "plant.thermal_u0": 25.0, "plant.thermal_u1": 6.84,
         "plant.dc_loss_fraction": 0.0, "plant.inverter_efficiency": 0.97,
         "plant.ac_loss_fraction": 0.0, "plant.availability": 1.0}
    p.update(over)
    return p


def _modelchain_ac_kw(weather, geometry: Geometry, p):
    """Reference: pvlib's ModelChain with the same models and parameters (cross-implementation)."""
    import pvlib
    from pvlib.modelchain import ModelChain
    from pvlib.pvsystem import Array, FixedMount, PVSystem, SingleAxisTrackerMount

    loc = pvlib.location.Location(weather.latitude_deg, weather.longitude_deg,
                                  altitude=weather.altitude_m)
    if geometry.mount == "fixed":
        mount = FixedMount(geometry.tilt_deg, geometry.azimuth_deg)
    else:
        mount = SingleAxisTrackerMount(axis_tilt=geometry.tilt_deg,
                                       axis_azimuth=geometry.azimuth_deg,
                                       max_angle=geometry.max_rotation_deg,
                                       backtrack=geometry.backtrack, gcr=geometry.gcr)
    pdc0_w = p["plant.dc_capacity_kw"] * 1000.0
    array = Array(mount, albedo=p["site.albedo"],
                  module_parameters={"pdc0": pdc0_w, "gamma_pdc": p["plant.temp_coeff_per_c"]},
                  temperature_model_parameters={"u0": p["plant.thermal_u0"],
                                                "u1": p["plant.thermal_u1"]})
    eta = p["plant.inverter_efficiency"]
    pac0_w = pdc0_w / p["plant.dc_ac_ratio"]
    system = PVSystem(arrays=[array], inverter_parameters={"pdc0": pac0_w / eta,
                                                           "eta_inv_nom": eta})
    mc = ModelChain(system, loc, dc_model="pvwatts", ac_model="pvwatts", aoi_model="physical",
                    spectral_model="no_loss", temperature_model="faiman",
                    losses_model="no_loss", transposition_model="perez")
    wx = weather.data.copy()
    wx.index = weather.mid_times
    mc.run_model(wx)
    return mc.results.ac.fillna(0.0).to_numpy() / 1000.0


@pytest.mark.parametrize("geometry", [Geometry("fixed", 30.0, 180.0),
                                      Geometry("single_axis", 0.0, 180.0, gcr=0.35,
                                               max_rotation_deg=55.0, backtrack=True)])
def test_matches_pvlib_modelchain(bundled_weather, geometry):
    # Cross-implementation check: pvlib ModelChain (pvwatts DC/AC, Faiman, physical IAM, Perez)
    # configured with the same parameters; issue target: annual within 0.3 %.
    from lcoe.plant.energy import simulate

    w = bundled_weather
    sun = solar_position(w, w.latitude_deg, w.longitude_deg, w.altitude_m)
    tilt, az = orientation(geometry, sun)
    poa = plane_of_array(w, sun, tilt, az, "perez")
    p = _params()
    ours = simulate(poa, w, p, "physical", keep_hourly=True).hourly_ac_kw[0]
    ref = _modelchain_ac_kw(w, geometry, p)
    assert abs(ours.sum() / ref.sum() - 1.0) < 0.003  # the target
    # Same models and inputs, so the agreement is in fact to rounding (measured: 1e-13 kW).
    np.testing.assert_allclose(ours, ref, rtol=1e-9, atol=1e-9)


def test_faiman_published_value():
    # DOMAIN.md, verified with pvlib.temperature.faiman: faiman(1000, 25, 1) = 56.40704 C
    # (Faiman 2008 default U0 = 25, U1 = 6.84).
    assert faiman_cell_temperature(1000.0, 25.0, 1.0, 25.0, 6.84) == pytest.approx(56.40704,
                                                                                  abs=1e-5)


def test_spa_worked_example():
    # Reda & Andreas 2004 (NREL/TP-560-34302) worked example, apparent zenith 50.11162 deg and
    # azimuth 194.34024 deg (DOMAIN.md, verified with pvlib). Published value.
    import pvlib

    t = pd.DatetimeIndex([pd.Timestamp("2003-10-17 12:30:30", tz="Etc/GMT+7")])
    sp = pvlib.solarposition.spa_python(t, 39.742476, -105.1786, altitude=1830.14,
                                        pressure=82000.0, temperature=11.0, delta_t=67.0)
    assert sp["apparent_zenith"].iloc[0] == pytest.approx(50.11162, abs=1e-4)
    assert sp["azimuth"].iloc[0] == pytest.approx(194.34024, abs=1e-4)


@pytest.mark.parametrize("tz, lat, lon, alt", [("Etc/GMT+5", 36.1, -79.95, 273.0),
                                                ("Etc/GMT-10", -33.2, 151.0, 12.0),
                                                ("UTC", 64.9, -20.0, 1500.5)])
def test_spa_sun_is_pvlibs_solar_position_bit_for_bit(tz, lat, lon, alt):
    # Cross-implementation: our SPA in pvlib's steps (air-independent terms shared by the
    # synthesis at 12 C and the site at its hourly temperature) equals
    # pvlib.solarposition.get_solarposition / Location.get_solarposition exactly.
    import pvlib

    from lcoe.site.irradiance import spa_sun

    t = pd.date_range(pd.Timestamp("2021-01-01", tz=tz), periods=8760, freq="h") + \
        pd.Timedelta(minutes=30)
    temp = np.random.default_rng(3).normal(15.0, 8.0, t.size)
    std = pvlib.solarposition.get_solarposition(t, lat, lon, altitude=alt,
                                                pressure=pvlib.atmosphere.alt2pres(alt))
    site = pvlib.location.Location(lat, lon, altitude=alt).get_solarposition(t, temperature=temp)
    for ours, ref in ((spa_sun(t, lat, lon, alt, 12.0), std), (spa_sun(t, lat, lon, alt, temp),
                                                               site)):
        for k in ("apparent_zenith", "zenith", "azimuth"):
            assert np.array_equal(ours[k], ref[k].to_numpy()), k


def test_temperature_coefficient_rule_of_thumb():
    # Common practice: gamma = -0.4 %/C and a cell at 60 C gives 14 % less DC than at 25 C.
    p25 = dc_power_kw(1000.0, 25.0, 1.0, -0.004)
    p60 = dc_power_kw(1000.0, 60.0, 1.0, -0.004)
    assert 1 - p60 / p25 == pytest.approx(0.14, abs=1e-12)


def test_inverter_matches_pvlib_pvwatts():
    # Cross-implementation: pvlib.inverter.pvwatts (Dobos 2014) on a range of DC inputs.
    import pvlib

    pdc = np.linspace(0, 1500, 301)[None, :]
    _, ours = inverter_ac_kw(pdc, np.array([[1000.0]]), np.array([[0.96]]))
    ref = pvlib.inverter.pvwatts(pdc[0], 1000.0 / 0.96, eta_inv_nom=0.96)
    np.testing.assert_allclose(ours[0], ref, rtol=1e-12, atol=1e-12)


def test_tracker_beats_fixed_at_bundled_site(demo_case, demo_site):
    # Common practice (DOMAIN.md): a single-axis tracker yields more than fixed tilt at a sunny
    # site.
    from lcoe.model import evaluate

    fixed = evaluate(demo_case, demo_site).energy.annual_kwh[0]
    tracker = evaluate(demo_case.with_values({"plant.mount": "single_axis",
                                              "plant.tilt_deg": 0.0}),
                       demo_site).energy.annual_kwh[0]
    assert tracker > 1.05 * fixed


def test_vectorised_equals_one_by_one(demo_case, demo_site):
    # Frozen regression of the vectorisation contract: a batch gives the same numbers as
    # separate single-sample runs, whatever the chunk size.
    from lcoe.model import evaluate

    u0 = np.array([20.0, 25.0, 30.0, 35.0, 29.0])
    albedo = np.array([0.1, 0.2, 0.3, 0.25, 0.15])
    batch = evaluate(demo_case, demo_site, {"plant.thermal_u0": u0, "site.albedo": albedo},
                     chunk_size=2)
    for i in range(5):
        one = evaluate(demo_case, demo_site, {"plant.thermal_u0": u0[i:i + 1],
                                              "site.albedo": albedo[i:i + 1]})
        assert batch.cashflow.lcoe_real[i] == pytest.approx(one.cashflow.lcoe_real[0],
                                                            rel=1e-12)


def test_loss_chain_is_monotone_and_pr_sensible(demo_case, demo_site):
    from lcoe.model import evaluate
    from lcoe.plant.energy import LOSS_CHAIN

    e = evaluate(demo_case, demo_site).energy
    chain = [e.loss_chain_kwh[k][0] for k, _ in LOSS_CHAIN]
    assert all(a >= b for a, b in zip(chain, chain[1:]))
    assert chain[-1] == pytest.approx(e.annual_kwh[0])
    # Common practice: PR of a well-designed crystalline plant 0.75-0.90.
    assert 0.75 < e.performance_ratio[0] < 0.90
    assert e.monthly_kwh[0].sum() == pytest.approx(e.annual_kwh[0], rel=1e-12)


def test_geometry_samples_are_grouped(demo_case, demo_site):
    # Sampling the tilt recomputes the plane of array per distinct tilt and keeps sample order.
    from lcoe.model import evaluate

    tilts = np.array([10.0, 30.0, 10.0])
    out = evaluate(demo_case, demo_site, {"plant.tilt_deg": tilts})
    e = out.energy.annual_kwh
    assert e[0] == pytest.approx(e[2], rel=1e-12)
    one = evaluate(demo_case, demo_site, {"plant.tilt_deg": np.array([30.0])})
    assert e[1] == pytest.approx(one.energy.annual_kwh[0], rel=1e-12)
