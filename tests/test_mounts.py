"""Mounts beyond fixed tilt and single-axis: dual-axis trackers and 3-D bodies of cells."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import MINIMAL_CASE, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import evaluate, prepare

BODY = """
[plant.body]
shape = "cylinder"
radius_m = 0.25
height_m = 2.5
facets = 12
spacing_m = 2.0
"""


def _case(tmp_path, plant_extra="", body=BODY, name="case.toml"):
    text = MINIMAL_CASE.replace("[plant]", "[plant]\n" + plant_extra) + body
    return load_case(write_case(tmp_path, text, name))


@pytest.fixture(scope="module")
def site():
    case = load_case(write_case(_tmp(), MINIMAL_CASE))
    return prepare(case)


def _tmp():
    import tempfile
    from pathlib import Path

    return Path(tempfile.mkdtemp(prefix="lcoe-mounts-"))


def test_poa_dual_above_single_above_fixed(demo_case, demo_site):
    # Analytic ordering: a surface that always faces the sun receives the most beam, and a
    # tracker more than a fixed plane at a sunny site (DOMAIN.md, common practice for trackers).
    poa = {}
    for mount, tilt in (("fixed", 25.0), ("single_axis", 0.0), ("dual_axis", 0.0)):
        case = demo_case.with_values({"plant.mount": mount, "plant.tilt_deg": tilt})
        poa[mount] = evaluate(case, demo_site).energy.poa_kwh_m2[0]
    assert poa["dual_axis"] >= poa["single_axis"] >= poa["fixed"]
    assert poa["dual_axis"] > 1.05 * poa["fixed"]


def test_dual_axis_faces_the_sun(demo_case, demo_site):
    # Analytic: with the normal on the sun the angle of incidence is 0 and the beam on the
    # plane equals DNI (pvlib's beam component is DNI cos(aoi)).
    from lcoe.site.irradiance import Geometry, orientation, plane_of_array

    tilt, az = orientation(Geometry("dual_axis", 0.0, 180.0), demo_site.sun)
    poa = plane_of_array(demo_site.weather, demo_site.sun, tilt, az, "perez")
    up = demo_site.sun.apparent_zenith_deg < 90.0
    dni = demo_site.weather.data["dni"].to_numpy()
    np.testing.assert_allclose(poa.direct_w_m2[up], dni[up], rtol=1e-9, atol=1e-9)
    assert np.all(poa.aoi_deg[up] < 1e-5) and np.all(poa.surface_tilt_deg[~up] == 0.0)


def test_one_flat_facet_equals_fixed_mount(tmp_path, site):
    # Cross-check of two code paths: a body made of one flat facet (no envelope, so no shading
    # between bodies) is a fixed plane with the same tilt and azimuth standing alone (no rows);
    # both with the diffuse angle loss (default on).
    facet = """
[plant.body]
shape = "facets"
spacing_m = 3.0
[[plant.body.facet]]
tilt_deg = 25.0
azimuth_deg = 200.0
area_m2 = 2.0
"""
    body = _case(tmp_path, 'mount = "body"', facet)
    fixed = _case(tmp_path, "tilt_deg = 25.0\nazimuth_deg = 200.0\nrows = false", "",
                  "fixed.toml")
    a = evaluate(body, site, keep_hourly=True).energy
    b = evaluate(fixed, site, keep_hourly=True).energy
    np.testing.assert_allclose(a.hourly_ac_kw, b.hourly_ac_kw, rtol=1e-12, atol=1e-9)
    assert a.poa_kwh_m2[0] == pytest.approx(b.poa_kwh_m2[0], rel=1e-12)
    assert a.cell_area_m2[0] == pytest.approx(b.cell_area_m2[0], rel=1e-15)


def test_rotation_keeps_irradiance_and_cools_cells(tmp_path, site):
    # Analytic (DOMAIN.md section 5): turning a body about its axis does not change the light
    # it receives (ring averaging is linear: equal to rounding); it evens the irradiance over
    # the cells. DC ~ G (1 + gamma (Ta + G/U - 25)) is concave in G for gamma < 0, so the
    # evened-out irradiance gives at least as much DC after temperature.
    static = evaluate(_case(tmp_path, 'mount = "body"'), site).energy
    turning = evaluate(_case(tmp_path, 'mount = "body"', BODY + "rotating = true\n"),
                       site).energy
    assert turning.poa_kwh_m2[0] == pytest.approx(static.poa_kwh_m2[0], rel=1e-10)
    gain = turning.loss_chain_kwh["after_temperature_kwh"][0] / \
        static.loss_chain_kwh["after_temperature_kwh"][0] - 1.0
    assert 0.0 < gain < 0.02


def test_drive_consumption_is_subtracted_while_sun_is_up(tmp_path, site):
    # Analytic: the drives draw n_bodies x P whenever the sun is above the horizon.
    body = BODY + "rotating = true\n"
    free = evaluate(_case(tmp_path, 'mount = "body"', body), site).energy
    driven = evaluate(_case(tmp_path, 'mount = "body"', body + "drive_power_w = 20.0\n"),
                      site).energy
    hours_up = int(np.count_nonzero(site.sun.apparent_zenith_deg < 90.0))
    expected = driven.n_bodies[0] * 0.020 * hours_up
    assert free.annual_kwh[0] - driven.annual_kwh[0] == pytest.approx(expected, rel=1e-9)
    lc = driven.loss_chain_kwh
    assert lc["after_availability_kwh"][0] - lc["delivered_kwh"][0] == pytest.approx(expected)


def test_body_count_land_and_energy_per_area(tmp_path, site):
    # Analytic: 12 rectangles inscribed in a circle of radius r: perimeter 24 r sin(pi/12);
    # nameplate = cell area x efficiency x 1 kW/m2; land per body = spacing^2.
    e = evaluate(_case(tmp_path, 'mount = "body"\nmodule_efficiency = 0.2'), site).energy
    area_one = 24 * 0.25 * np.sin(np.pi / 12) * 2.5
    n = 1000.0 / (area_one * 0.2)
    assert e.n_bodies[0] == pytest.approx(n, rel=1e-12)
    assert e.land_area_m2[0] == pytest.approx(n * 4.0, rel=1e-12)
    assert e.cell_area_m2[0] == pytest.approx(1000.0 / 0.2, rel=1e-12)
    assert e.energy_per_land_m2_kwh[0] == pytest.approx(e.annual_kwh[0] / (n * 4.0))
    flat = evaluate(_case(tmp_path, "gcr = 0.5", ""), site).energy
    assert flat.land_area_m2[0] == pytest.approx(1000.0 / 0.21 / 0.5, rel=1e-12)
    assert flat.n_bodies is None
    # Common practice: a vertical cylinder's cells get less light per m2 than a tilted plane.
    assert e.energy_per_cell_m2_kwh[0] < flat.energy_per_cell_m2_kwh[0]


def test_closer_spacing_shades_more(tmp_path, site):
    # Analytic: neighbours' shadows only grow as bodies move closer together.
    energies = [evaluate(_case(tmp_path, 'mount = "body"',
                               BODY.replace("spacing_m = 2.0", f"spacing_m = {s}")),
                         site).energy.annual_kwh[0] / 1000.0 for s in (0.6, 1.0, 2.0, 6.0)]
    assert all(a < b for a, b in zip(energies, energies[1:]))


@pytest.mark.parametrize("shape,extra", [("cone", "height_m = 1.5"), ("dome", ""),
                                         ("pyramid", "height_m = 1.5")])
def test_every_shape_runs(tmp_path, site, shape, extra):
    text = f'\n[plant.body]\nshape = "{shape}"\nradius_m = 0.8\n{extra}\nspacing_m = 3.0\n'
    e = evaluate(_case(tmp_path, 'mount = "body"', text), site).energy
    # Common practice: PR of a working plant 0.6-0.9 even for odd shapes.
    assert 0.6 < e.performance_ratio[0] < 0.9


def test_body_samples_vectorised_equal_one_by_one(tmp_path, site):
    # Frozen regression of the vectorisation contract over facets and samples.
    case = _case(tmp_path, 'mount = "body"')
    albedo = np.array([0.1, 0.3, 0.2])
    batch = evaluate(case, site, {"site.albedo": albedo}, chunk_size=2).energy.annual_kwh
    for i in range(3):
        one = evaluate(case, site, {"site.albedo": albedo[i:i + 1]}).energy.annual_kwh[0]
        assert batch[i] == pytest.approx(one, rel=1e-12)


@pytest.mark.parametrize("body,match", [
    ("\n[plant.body]\nradius_m = 0.2\n", "plant.body.shape"),
    ('\n[plant.body]\nshape = "cone"\nradius_m = 0.2\nheight_m = 1.0\n', "spacing_m"),
    ('\n[plant.body]\nshape = "cone"\nheight_m = 1.0\nspacing_m = 2.0\n', "radius_m"),
    ('\n[plant.body]\nshape = "facets"\nspacing_m = 2.0\n', "plant.body.facet"),
    ('\n[plant.body]\nshape = "dome"\nradius_m = 1.0\nheight_m = 1.0\nspacing_m = 3.0\n',
     "plant.body.height_m"),
    (BODY.replace("spacing_m = 2.0", "spacing_m = 0.4"), "overlap"),
    (BODY + "drive_power_w = 10.0\n", "plant.body.drive_power_w"),
    (BODY + "rotation_period_s = 4000.0\n", "plant.body.rotation_period_s"),
    (BODY + "[[plant.body.facet]]\ntilt_deg = 10.0\nazimuth_deg = 0.0\narea_m2 = 1.0\n",
     "plant.body.shape"),
    (BODY.replace("facets = 12", "facet_count = 12"), "plant.body.facet_count"),
])
def test_body_input_errors(tmp_path, body, match):
    with pytest.raises(InputError, match=match) as exc:
        _case(tmp_path, 'mount = "body"', body)
    assert "\n" not in str(exc.value) and "case.toml" in str(exc.value)


def test_body_table_needs_body_mount(tmp_path):
    with pytest.raises(InputError, match="plant.mount"):
        _case(tmp_path, "", BODY)


@pytest.mark.parametrize("b_deg", [10.0, 30.0, 60.0])
def test_sky_view_fraction_uniform_horizon(b_deg):
    # Analytic view factors under a uniform horizon at elevation b: a horizontal plane keeps
    # cos^2 b of its sky, a vertical one (1/2 - b/pi - sin(2b)/(2 pi)) / (1/2).
    from lcoe.plant.body_light import sky_view_fraction

    b = np.radians(b_deg)
    got = sky_view_fraction(np.array([0.0, 90.0, 90.0]), np.array([0.0, 0.0, 135.0]),
                            lambda az: np.full(np.shape(az), b_deg))
    assert got[0] == pytest.approx(np.cos(b) ** 2, abs=1e-6)
    vertical = 1.0 - 2.0 * b / np.pi - np.sin(2.0 * b) / np.pi
    np.testing.assert_allclose(got[1:], vertical, atol=5e-5)


def test_horizon_of_the_nearest_neighbour():
    # Analytic: looking north along a grid axis the nearest neighbour's face is at
    # spacing - width/2 and its top, h/2 above the observer, at atan((h/2) / distance).
    from lcoe.plant.body_light import horizon_elevation_deg

    got = horizon_elevation_deg(2.0, 0.5, 3.0, np.array([0.0, 90.0, 180.0, 30.0]))
    np.testing.assert_allclose(got[:3], np.degrees(np.arctan(1.0 / 2.75)), rtol=1e-12)
    assert got[3] == 0.0  # between the neighbours (a ray at 30 deg misses the 24 nearest)


def test_dense_field_stays_below_the_light_on_its_land(tmp_path, site):
    # Physical bound (the audit's land check, DOMAIN.md section 5): a field many bodies across
    # cannot deliver more than its module efficiency times the light falling on its land.
    dense = BODY.replace("spacing_m = 2.0", "spacing_m = 0.6")
    e = evaluate(_case(tmp_path, 'mount = "body"', dense), site).energy
    ghi_kwh_m2 = site.weather.data["ghi"].sum() / 1000.0
    assert e.energy_per_land_m2_kwh[0] < 0.21 * ghi_kwh_m2
