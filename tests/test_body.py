"""Tests for lcoe.plant.body_shapes and lcoe.plant.body_light: geometry, beam capture,
irradiance per facet, rotation, shading."""

import numpy as np
import pandas as pd
import pvlib
import pytest

from lcoe.case.errors import InputError
from lcoe.plant import body_light, body_shapes


def fibonacci_sphere(n):
    """n nearly uniform unit vectors over the whole sphere (golden-angle spiral)."""
    i = np.arange(n) + 0.5
    z = 1.0 - 2.0 * i / n
    phi = np.pi * (1.0 + 5**0.5) * i
    r = np.sqrt(1.0 - z * z)
    return np.stack((r * np.cos(phi), r * np.sin(phi), z), axis=1)


def clear_day():
    """An invented site and day: clear-sky weather from pvlib (solar position + Ineichen)."""
    times = pd.date_range("2021-06-10 04:00", "2021-06-10 20:00", freq="30min", tz="Etc/GMT-2")
    loc = pvlib.location.Location(41.5, 12.3, altitude=120.0)
    sp = loc.get_solarposition(times)
    am = pvlib.atmosphere.get_relative_airmass(sp["apparent_zenith"])
    am_abs = pvlib.atmosphere.get_absolute_airmass(am)
    cs = pvlib.clearsky.ineichen(sp["apparent_zenith"], am_abs, linke_turbidity=3.0, altitude=120.0)
    extra = pd.Series(pvlib.irradiance.get_extra_radiation(times.day_of_year.to_numpy()), times)
    return {
        "solar_zenith": sp["apparent_zenith"].to_numpy(),
        "solar_azimuth": sp["azimuth"].to_numpy(),
        "dni": cs["dni"].to_numpy(),
        "ghi": cs["ghi"].to_numpy(),
        "dhi": cs["dhi"].to_numpy(),
        "dni_extra": extra.to_numpy(),
        "airmass": am.to_numpy(),
    }


DAY = clear_day()
SUN = (DAY["solar_zenith"], DAY["solar_azimuth"])
SKY = (DAY["dni"], DAY["ghi"], DAY["dhi"])


def day_poa(facets, model, **kwargs):
    """facet_poa on the clear day (extra keywords passed through)."""
    return body_light.facet_poa(facets, *SUN, *SKY, model=model, **kwargs)


def pvlib_poa(tilt_deg, azimuth_deg, model, **kwargs):
    """pvlib.irradiance.get_total_irradiance on the clear day, for one plane."""
    return pvlib.irradiance.get_total_irradiance(
        tilt_deg, azimuth_deg, *SUN, *SKY, model=model, **kwargs
    )


# ---------------------------------------------------------------- Cauchy's surface-area formula


def test_cauchy_unit_cube():
    # analytic: Cauchy's surface-area formula, mean shadow = surface / 4 = 6 / 4 = 1.5 m2
    mean = body_shapes.projected_area_m2(body_shapes.closed_cube(1.0),
                                         fibonacci_sphere(200_000)).mean()
    assert mean == pytest.approx(1.5, rel=5e-3)  # measured deviation 4e-10


def test_cauchy_closed_cone():
    # analytic: (pi r^2 + pi r sqrt(r^2 + h^2)) / 4 = 0.91498 m2 for r = 0.6 m, h = 1.2 m
    # (value also stated in DOMAIN.md section 5)
    r, h = 0.6, 1.2
    expected = (np.pi * r**2 + np.pi * r * np.hypot(r, h)) / 4.0
    assert expected == pytest.approx(0.91498, abs=1e-5)
    facets = body_shapes.closed_cone(r, h, 180)
    mean = body_shapes.projected_area_m2(facets, fibonacci_sphere(100_000)).mean()
    assert mean == pytest.approx(expected, rel=5e-3)  # measured deviation 1.2e-4 (180-gon)


def test_cauchy_seeded_uniform_directions_closed_cylinder():
    # analytic: closed cylinder surface (2 pi r h + 2 pi r^2) / 4; statistical, fixed seed
    rng = np.random.default_rng(20240601)
    d = rng.normal(size=(200_000, 3))
    d /= np.linalg.norm(d, axis=1, keepdims=True)
    r, h = 0.5, 2.0
    facets = body_shapes.cylinder(r, h, 180, include_top=True, include_bottom=True)
    expected = (2 * np.pi * r * h + 2 * np.pi * r**2) / 4.0
    # measured deviation 2.4e-4 (sampling and the 180-gon)
    assert body_shapes.projected_area_m2(facets, d).mean() == pytest.approx(expected, rel=5e-3)


def test_two_sided_flat_plate_mean_shadow_is_half_area():
    # analytic: a flat plate of area A (both faces) has mean shadow A/2 (DOMAIN.md section 5)
    plate = body_shapes.from_list([0.0, 180.0], [0.0, 0.0], [2.0, 2.0])
    mean = body_shapes.projected_area_m2(plate, fibonacci_sphere(100_000)).mean()
    assert mean == pytest.approx(1.0, rel=1e-4)


# ---------------------------------------------------------------- builders


def test_cone_lateral_area_converges():
    # analytic: lateral area pi r sqrt(r^2 + h^2)
    r, h = 0.6, 1.2
    exact = np.pi * r * np.hypot(r, h)
    errors = [abs(body_shapes.cone(r, h, n).total_area_m2 / exact - 1.0) for n in (12, 90, 720)]
    assert errors[0] > errors[1] > errors[2]
    assert errors[2] < 1e-4  # measured 5.1e-6


def test_cone_facet_tilt_and_azimuth():
    # analytic: a triangle's tilt is atan(h / (r cos(pi/n))), facet i faces azimuth i * 360/n
    r, h, n = 1.0, 2.0, 8
    facets = body_shapes.cone(r, h, n)
    tilt = np.degrees(np.arctan(h / (r * np.cos(np.pi / n))))
    np.testing.assert_allclose(facets.tilt_deg, tilt, atol=1e-9)
    np.testing.assert_allclose(facets.azimuth_deg, np.arange(n) * 45.0, atol=1e-9)


def test_sun_overhead_captures_plan_area():
    # analytic: seen from straight above, a cone's and a dome's shadow is pi r^2
    r = 0.6
    cone_area = body_shapes.beam_capture_area_m2(body_shapes.cone(r, 1.2, 720), 0.0, 0.0)
    dome_area = body_shapes.beam_capture_area_m2(body_shapes.dome(r, 30, 720), 0.0, 0.0)
    assert float(cone_area) == pytest.approx(np.pi * r**2, rel=1e-4)
    assert float(dome_area) == pytest.approx(np.pi * r**2, rel=1e-4)


def test_dome_surface_and_rings():
    # analytic: hemisphere area 2 pi r^2 (inscribed facets fall short by O(1/n^2))
    facets = body_shapes.dome(2.0, 30, 360)
    assert facets.total_area_m2 == pytest.approx(2 * np.pi * 4.0, rel=1e-3)
    assert len(np.unique(np.round(facets.tilt_deg, 6))) == 30
    assert facets.tilt_deg.max() < 90.0


def test_pyramid_square():
    # analytic: square pyramid side a, height h: face tilt atan(2h/a), face area a*slant/2
    a, h = 2.0, 1.5
    facets = body_shapes.pyramid(a, h, 4)
    np.testing.assert_allclose(facets.tilt_deg, np.degrees(np.arctan(2 * h / a)), atol=1e-9)
    np.testing.assert_allclose(facets.azimuth_deg, [0, 90, 180, 270], atol=1e-9)
    np.testing.assert_allclose(facets.area_m2, a * np.hypot(h, a / 2) / 2, rtol=1e-12)


def test_cylinder_sides_vertical():
    facets = body_shapes.cylinder(1.0, 3.0, 16)
    np.testing.assert_allclose(facets.tilt_deg, 90.0, atol=1e-9)
    # analytic: side widths 2 r sin(pi/n), height h
    np.testing.assert_allclose(facets.area_m2, 2 * np.sin(np.pi / 16) * 3.0, rtol=1e-12)


def test_cube_shadow_matches_analytic_projection():
    # analytic: unit cube's shadow normal to unit vector d is |dx| + |dy| + |dz|
    rng = np.random.default_rng(7)
    zen = rng.uniform(0, 89, 200)
    az = rng.uniform(0, 360, 200)
    d = body_shapes.direction_vectors(zen, az)
    np.testing.assert_allclose(
        body_shapes.beam_capture_area_m2(body_shapes.closed_cube(1.0), zen, az),
        np.abs(d).sum(axis=1),
        rtol=1e-12,
    )


def test_beam_capture_zero_below_horizon_and_shape():
    facets = body_shapes.cone(1.0, 1.0, 12)
    out = body_shapes.beam_capture_area_m2(facets, np.array([[30.0, 95.0]]),
                                           np.array([[180.0, 180.0]]))
    assert out.shape == (1, 2)
    assert out[0, 1] == 0.0 and out[0, 0] > 0.0


def test_facets_validation():
    with pytest.raises(InputError, match="tilt_deg"):
        body_shapes.from_list([200.0], [0.0], [1.0])
    with pytest.raises(InputError, match="area_m2"):
        body_shapes.from_list([10.0, 20.0], [0.0, 0.0], [1.0])
    with pytest.raises(InputError, match="n_facets"):
        body_shapes.cone(1.0, 1.0, 2)
    with pytest.raises(InputError, match="unit"):
        body_shapes.projected_area_m2(body_shapes.closed_cube(1.0), np.array([[0.0, 0.0, 2.0]]))


# ---------------------------------------------------------------- irradiance per facet


@pytest.mark.parametrize("model", ["perez", "haydavies", "isotropic"])
def test_single_facet_equals_pvlib(model):
    # cross-implementation (pvlib): one facet gives pvlib.irradiance.get_total_irradiance exactly
    extra = dict(albedo=0.2, dni_extra=DAY["dni_extra"], airmass=DAY["airmass"])
    got = day_poa(body_shapes.from_list([30.0], [180.0], [1.0]), model, **extra)
    ref = pvlib_poa(30.0, 180.0, model, **extra)
    for key in ("poa_global", "poa_direct", "poa_sky_diffuse", "poa_ground_diffuse"):
        np.testing.assert_array_equal(got[key][0], np.asarray(ref[key]))
    np.testing.assert_array_equal(got["aoi"][0], pvlib.irradiance.aoi(30.0, 180.0, *SUN))


def test_many_facets_equal_facet_by_facet_pvlib():
    # cross-implementation (pvlib): the broadcast call equals one pvlib call per facet,
    # including facets facing downward (tilt > 90)
    facets = body_shapes.join(body_shapes.closed_cone(1.0, 1.5, 6),
                              body_shapes.from_list([135.0], [90.0], [0.5]))
    extra = dict(albedo=0.3, dni_extra=DAY["dni_extra"])
    got = day_poa(facets, "perez", **extra)
    assert got["poa_global"].shape == (facets.n_facets, DAY["dni"].size)
    for k in range(facets.n_facets):
        ref = pvlib_poa(facets.tilt_deg[k], facets.azimuth_deg[k], "perez", **extra)
        np.testing.assert_allclose(got["poa_global"][k], ref["poa_global"], rtol=1e-12, atol=1e-9)
    assert np.all(got["poa_global"] >= 0.0)


def test_beam_on_facets_equals_dni_times_capture_area():
    # cross-implementation: pvlib's poa_direct summed over facets = DNI x our capture area
    facets = body_shapes.dome(1.0, 6, 24)
    beam_w = facets.area_m2 @ day_poa(facets, "isotropic")["poa_direct"]
    capture = body_shapes.beam_capture_area_m2(facets, *SUN)
    np.testing.assert_allclose(beam_w, DAY["dni"] * capture, rtol=1e-9, atol=1e-9)


def test_perez_needs_dni_extra():
    with pytest.raises(InputError, match="dni_extra"):
        day_poa(body_shapes.closed_cube(1.0), "perez")


# ---------------------------------------------------------------- rotation


def test_ring_average_conserves_energy_and_evens_rings():
    # analytic: rotation moves irradiance between cells of a ring but not in or out of the body
    facets = body_shapes.dome(1.0, 5, 16)
    poa = day_poa(facets, "haydavies", dni_extra=DAY["dni_extra"])["poa_global"]
    ring = body_light.ring_average(facets, poa)
    np.testing.assert_allclose(facets.area_m2 @ ring, facets.area_m2 @ poa, rtol=1e-12)
    for j in range(5):  # each ring of 16 facets is uniform after averaging
        block = ring[16 * j : 16 * (j + 1)]
        np.testing.assert_allclose(block, np.broadcast_to(block[:1], block.shape), rtol=1e-12)
    assert ring.max() < poa.max()  # the hottest spot is gone


def test_rotating_average_single_ring():
    facets = body_shapes.cone(0.6, 1.2, 36)
    poa = day_poa(facets, "isotropic")["poa_global"]
    mean = body_light.rotating_average(poa, facets)
    assert mean.shape == (DAY["dni"].size,)
    np.testing.assert_allclose(
        body_light.ring_average(facets, poa), np.broadcast_to(mean, poa.shape), rtol=1e-12
    )
    np.testing.assert_allclose(mean * facets.total_area_m2, facets.area_m2 @ poa, rtol=1e-12)


# ---------------------------------------------------------------- bodies in a field


def test_mutual_shading_sun_along_grid_axis():
    # analytic: sun due south at 20 deg, neighbour s = 4 m due south, h = 2 m: its shadow covers
    # the full width up to 1 - s tan(20)/h of the height; diagonal neighbours miss (|y| = s > w)
    h, w, s = 2.0, 1.0, 4.0
    lost = body_light.mutual_shading_factor(h, w, s, 20.0, 180.0, rows=2)
    assert float(lost) == pytest.approx(1.0 - s * np.tan(np.radians(20.0)) / h, rel=1e-12)


def test_mutual_shading_partial_lateral_overlap():
    # analytic: rotate the grid so the neighbour towards the sun sits w/2 to the side:
    # half the width is shaded up to 1 - d tan(el)/h
    h, w, s, el = 3.0, 1.0, 2.0, 30.0
    offset = np.degrees(np.arcsin((w / 2) / s))
    lost = body_light.mutual_shading_factor(h, w, s, el, 180.0 + offset, rows=1,
                                            grid_azimuth_deg=0.0)
    d = s * np.cos(np.radians(offset))
    assert float(lost) == pytest.approx(0.5 * (1.0 - d * np.tan(np.radians(el)) / h), rel=1e-9)


def test_mutual_shading_limits():
    el = np.array([-5.0, 0.0, 0.5, 10.0, 45.0, 90.0])
    az = np.full(el.shape, 200.0)
    lost = body_light.mutual_shading_factor(2.0, 1.0, 3.0, el, az)
    assert lost.shape == el.shape
    assert lost[0] == 1.0 and lost[1] == 1.0
    assert lost[-1] == 0.0
    assert np.all(np.diff(lost[2:]) <= 0.0)  # higher sun, less shading
    rng = np.random.default_rng(3)
    lost = body_light.mutual_shading_factor(
        2.0, 1.0, 3.0, rng.uniform(0.1, 90, 500), rng.uniform(0, 360, 500)
    )
    assert np.all((lost >= 0.0) & (lost <= 1.0))
    wide = body_light.mutual_shading_factor(2.0, 1.0, 6.0, 15.0, 180.0)
    tight = body_light.mutual_shading_factor(2.0, 1.0, 3.0, 15.0, 180.0)
    assert wide < tight
    with pytest.raises(InputError, match="body_width_m"):
        body_light.mutual_shading_factor(2.0, 4.0, 3.0, 15.0, 180.0)


def test_land_helpers():
    assert body_shapes.land_area_per_body_m2(3.0) == 9.0
    assert body_shapes.ground_cover_ratio(np.pi * 0.6**2, 3.0) == pytest.approx(np.pi * 0.36 / 9.0)
    with pytest.raises(InputError, match="spacing_m"):
        body_shapes.land_area_per_body_m2(0.0)
