"""Rows, rear side, diffuse angle loss, soiling and the loss chain (lcoe.site.rows,
lcoe.plant.soiling)."""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, INPUTS, MINIMAL_CASE, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import evaluate, prepare
from lcoe.plant.energy import LOSS_CHAIN
from lcoe.plant.soiling import kimber_history
from lcoe.site.irradiance import Geometry, orientation
from lcoe.site.rows import diffuse_iam, row_irradiance

TRACKER = INPUTS / "tech_single_axis.toml"
HSU_RAIN = Path(__import__("pvlib").__file__).parent / "data" / "soiling_hsu_example_inputs.csv"


@pytest.fixture(scope="module")
def tracker_case():
    return load_case(TRACKER)


def _sun_arrays(site):
    d = site.weather.data
    return (site.sun.apparent_zenith_deg, site.sun.azimuth_deg, d["ghi"].to_numpy(),
            d["dhi"].to_numpy(), d["dni"].to_numpy())


def test_front_and_rear_match_pvlib_infinite_sheds(demo_case, demo_site):
    # Cross-implementation: with an isotropic sky, our chain's front and rear irradiance of
    # one row geometry equals pvlib.bifacial.infinite_sheds.get_irradiance at albedo 0.25.
    from pvlib.bifacial import infinite_sheds

    case = demo_case.with_values({"plant.transposition": "isotropic", "plant.gcr": 0.5,
                                  "plant.row_height_m": 1.2, "plant.row_width_m": 2.2,
                                  "plant.tilt_deg": 28.0, "plant.azimuth_deg": 170.0,
                                  "plant.bifaciality": 0.8, "site.albedo": 0.25})
    e = evaluate(case, demo_site, keep_hourly=True).energy.hourly
    z, az, ghi, dhi, dni = _sun_arrays(demo_site)
    ref = infinite_sheds.get_irradiance(28.0, 170.0, z, az, 0.5, 1.2, 2.2 / 0.5, ghi, dhi,
                                        dni, albedo=0.25, model="isotropic")
    up = z < 90
    for ours, theirs in (("poa_front_direct_w_m2", "poa_front_direct"),
                         ("poa_front_sky_w_m2", "poa_front_sky_diffuse"),
                         ("poa_front_ground_w_m2", "poa_front_ground_diffuse"),
                         ("poa_rear_direct_w_m2", "poa_back_direct"),
                         ("poa_rear_sky_w_m2", "poa_back_sky_diffuse"),
                         ("poa_rear_ground_w_m2", "poa_back_ground_diffuse")):
        np.testing.assert_allclose(e[ours][0][up], np.nan_to_num(ref[theirs])[up],
                                   rtol=1e-9, atol=1e-9, err_msg=ours)
    assert ref["poa_back"][up].sum() > 0.05 * ref["poa_front"][up].sum()  # a real rear side


def test_shaded_fraction_closed_form():
    # Analytic: sun in the plane across the rows (azimuth = the rows' azimuth), rows of width
    # w, tilt b, pitch p = w / gcr. Coordinates across the rows (x towards the back, z up),
    # the next row's bottom edge at the origin: the ray grazing the top edge of the row in
    # front, (w cos b - p, w sin b), descends with slope -1/tan(Z) and meets the next row's surface
    # z = x tan b at x*; the shaded share of the slant width is x* / (w cos b).
    b, gcr, zen, w = 30.0, 0.5, 70.0, 2.0
    rb, rz = math.radians(b), math.radians(zen)
    p = w / gcr
    top_x, top_z = w * math.cos(rb) - p, w * math.sin(rb)
    slope = -1.0 / math.tan(rz)  # the ray descends 1 / tan(Z) per unit of x
    x_hit = (top_z - slope * top_x) / (math.tan(rb) - slope)
    expected = x_hit / (w * math.cos(rb))
    assert expected == pytest.approx(0.10705, abs=1e-5)  # 1 - 1/(gcr (cos b + sin b tan Z))
    r = row_irradiance(np.array([b]), np.array([180.0]), np.array([zen]), np.array([180.0]),
                       np.array([300.0]), np.array([100.0]), np.array([600.0]), gcr, 1.5, p)
    assert 1.0 - r.front_unshaded_fraction[0] == pytest.approx(expected, abs=1e-12)


def test_rows_computed_on_lit_hours_only_are_pvlibs_numbers(demo_site):
    # Cross-implementation: row_irradiance evaluates infinite sheds only on hours with light;
    # every component equals pvlib's evaluation of all 8760 hours bit for bit, and hours
    # without light have no irradiance on either side in pvlib either.
    from pvlib.bifacial import infinite_sheds

    z, az, ghi, dhi, dni = _sun_arrays(demo_site)
    n = z.size
    tilt, saz = np.full(n, 25.0), np.full(n, 180.0)
    ours = row_irradiance(tilt, saz, z, az, ghi, dhi, dni, 0.4, 1.5, 5.0)
    ref = {k: np.nan_to_num(np.asarray(v, dtype=float), nan=0.0) for k, v in
           infinite_sheds.get_irradiance(tilt, saz, z, az, 0.4, 1.5, 5.0, ghi, dhi, dni,
                                         albedo=1.0, model="isotropic", iam_front=1.0,
                                         iam_back=1.0, bifaciality=1.0, shade_factor=0.0,
                                         transmission_factor=0.0).items()}
    lit = (ghi > 0) | (dhi > 0) | (dni > 0)
    assert 0.3 < lit.mean() < 0.7
    for mine, theirs in (("front_ground_per_albedo_w_m2", "poa_front_ground_diffuse"),
                         ("rear_direct_w_m2", "poa_back_direct"),
                         ("rear_sky_w_m2", "poa_back_sky_diffuse"),
                         ("rear_ground_per_albedo_w_m2", "poa_back_ground_diffuse")):
        assert np.array_equal(getattr(ours, mine), ref[theirs]), mine
    assert np.array_equal(ours.front_unshaded_fraction[lit],
                          1.0 - ref["shaded_fraction_front"][lit])
    for k in ("poa_front", "poa_back"):
        assert not ref[k][~lit].any(), k


@pytest.mark.parametrize("mount, tilt, gcr, height", [("fixed", 25.0, 0.45, 1.4),
                                                      ("fixed", 12.0, 0.6, 1.5),
                                                      ("fixed", 0.0, 0.3, 2.0),
                                                      ("single_axis", 0.0, 0.35, 1.5),
                                                      ("single_axis", 10.0, 0.5, 2.2)])
def test_sheds_side_is_pvlibs_infinite_sheds_bit_for_bit(demo_site, mount, tilt, gcr, height):
    # Cross-implementation: our infinite sheds (view factors once per distinct tilt) gives
    # pvlib.bifacial.infinite_sheds.get_irradiance's numbers exactly, front and rear, for
    # fixed rows (one tilt) and trackers (a tilt per hour).
    from pvlib.bifacial import infinite_sheds

    from lcoe.site.rows import sheds_side

    z, az, ghi, dhi, dni = _sun_arrays(demo_site)
    lit = (ghi > 0) | (dhi > 0) | (dni > 0)
    ft, fa = orientation(Geometry(mount, tilt, 180.0, gcr=gcr), demo_site.sun)
    sun = (z[lit], az[lit], ghi[lit], dhi[lit], dni[lit])
    pitch = 2.0 / gcr
    ref = infinite_sheds.get_irradiance(ft[lit], fa[lit], z[lit], az[lit], gcr, height, pitch,
                                        ghi[lit], dhi[lit], dni[lit], albedo=1.0,
                                        model="isotropic", iam_front=1.0, iam_back=1.0,
                                        bifaciality=1.0, shade_factor=0.0,
                                        transmission_factor=0.0)
    for side, t, a in (("front", ft[lit], fa[lit]),
                       ("back", 180.0 - ft[lit], (180.0 + fa[lit]) % 360.0)):
        ours = sheds_side(t, a, *sun, gcr, height, pitch)
        for k in ("shaded_fraction", "poa_direct", "poa_sky_diffuse", "poa_ground_diffuse"):
            theirs = ref[k.replace("poa_", f"poa_{side}_") if k != "shaded_fraction"
                         else f"shaded_fraction_{side}"]
            assert np.array_equal(ours[k], np.asarray(theirs), equal_nan=True), (side, k)


def test_ground_parts_linear_in_albedo(demo_site):
    # The property the sampled albedo relies on (infinite sheds has a single reflection).
    from pvlib.bifacial import infinite_sheds

    z, az, ghi, dhi, dni = _sun_arrays(demo_site)
    one = infinite_sheds.get_irradiance(25, 180, z, az, 0.4, 1.5, 5.0, ghi, dhi, dni, albedo=1)
    low = infinite_sheds.get_irradiance(25, 180, z, az, 0.4, 1.5, 5.0, ghi, dhi, dni,
                                        albedo=0.23)
    for k in ("poa_front_ground_diffuse", "poa_back_ground_diffuse"):
        np.testing.assert_allclose(low[k], 0.23 * one[k], rtol=1e-12, atol=1e-12)


def test_backtracking_leaves_no_beam_shading(tracker_case, demo_site):
    z, az, ghi, dhi, dni = _sun_arrays(demo_site)
    shade = {}
    for bt in (True, False):
        g = Geometry("single_axis", 0.0, 180.0, gcr=0.35, max_rotation_deg=60.0, backtrack=bt)
        tilt, saz = orientation(g, demo_site.sun)
        r = row_irradiance(tilt, saz, z, az, ghi, dhi, dni, 0.35, 1.5, 2.0 / 0.35)
        lit = (z < 90) & (dni > 0)
        shade[bt] = (1.0 - r.front_unshaded_fraction)[lit]
    assert shade[True].max() < 1e-9
    assert (shade[False] > 0.01).sum() > 100  # true tracking shades mornings and evenings


def test_switches_off_give_todays_numbers(demo_case, demo_site, tracker_case):
    # Frozen regression: annual energy and LCOE of the bundled cases computed with the code
    # before rows, rear side, diffuse angle loss and soiling existed (main at 12861ed).
    off = {"plant.rows": False, "plant.diffuse_iam": False, "plant.soiling.model": "none"}
    demo_case = demo_case.with_values({"plant.dc_loss_fraction": 0.08})  # its value then
    for case, energy, lcoe in ((demo_case, 29392796.14583271, 0.062810305076411),
                               (tracker_case, 33083289.881632406, 0.05946648716775756)):
        o = evaluate(case.with_values(off), demo_site)
        assert o.energy.annual_kwh[0] == pytest.approx(energy, rel=1e-14)
        assert o.cashflow.lcoe_real[0] == pytest.approx(lcoe, rel=1e-14)


def test_monofacial_is_rows_only(demo_case, demo_site):
    # Bifaciality 0: the rear adds nothing; the row steps are the only change to the chain.
    o = evaluate(demo_case, demo_site, {"plant.bifaciality": np.array([0.0, 0.7])}).energy
    lc = o.loss_chain_kwh
    assert lc["after_bifacial_kwh"][0] == lc["after_soiling_kwh"][0]
    assert lc["after_bifacial_kwh"][1] > 1.02 * lc["after_soiling_kwh"][1]
    assert lc["poa_kwh"][0] == pytest.approx(lc["poa_kwh"][1], rel=1e-15)
    alone = evaluate(demo_case.with_values({"plant.rows": False}), demo_site).energy
    assert alone.loss_chain_kwh["poa_kwh"][0] == pytest.approx(lc["poa_kwh"][0], rel=1e-12)
    assert lc["after_row_shading_kwh"][0] < lc["poa_kwh"][0]


def test_bifacial_gain_of_trackers_in_published_range(tracker_case, demo_site):
    # Published range (DOMAIN.md section 8, from memory; field studies of the late 2010s):
    # single-axis trackers over ground of albedo 0.2-0.3 gain roughly 5-10 % with bifacial
    # modules (bifaciality 0.7 here, rear structure/mismatch loss 10 %).
    for albedo in (0.2, 0.3):
        o = evaluate(tracker_case, demo_site, {"site.albedo": np.full(2, albedo),
                                               "plant.bifaciality": np.array([0.0, 0.7])})
        gain = o.energy.annual_kwh[1] / o.energy.annual_kwh[0] - 1.0
        assert 0.05 <= gain <= 0.10, (albedo, gain)


def test_diffuse_iam_matches_marion_diffuse():
    # Cross-implementation: pvlib.iam.marion_diffuse at tilts between whole degrees.
    import pvlib

    tilts = np.array([0.0, 12.3, 47.8, 90.0, 132.2, 167.5])
    ref = pvlib.iam.marion_diffuse("physical", tilts)
    sky, ground = diffuse_iam(tilts, "physical")
    np.testing.assert_allclose(sky, ref["sky"], atol=3e-4)
    np.testing.assert_allclose(ground, ref["ground"], atol=3e-4)
    ref = pvlib.iam.marion_diffuse("ashrae", 20.0)
    sky, ground = diffuse_iam(20.0, "ashrae")
    assert sky == pytest.approx(ref["sky"], abs=1e-12)
    assert ground == pytest.approx(ref["ground"], abs=1e-12)


def test_diffuse_iam_step_in_chain(demo_case, demo_site):
    on = evaluate(demo_case, demo_site).energy.loss_chain_kwh
    off = evaluate(demo_case.with_values({"plant.diffuse_iam": False}), demo_site
                   ).energy.loss_chain_kwh
    assert on["after_row_shading_kwh"][0] == pytest.approx(off["after_row_shading_kwh"][0])
    # Marion's sky modifier of a 20-30 deg plane is about 0.95, ground about 0.65: a diffuse
    # share of roughly 40 % at this humid site costs 1-3 %.
    ratio = on["after_iam_kwh"][0] / off["after_iam_kwh"][0]
    assert 0.97 < ratio < 0.99


def test_kimber_history_matches_pvlib():
    # Cross-implementation: pvlib.soiling.kimber on the hourly rain of pvlib's bundled soiling
    # example (a year of 8760 hours) equals min(rate x history, max) for several inputs.
    import pvlib

    rain = pd.read_csv(HSU_RAIN, index_col=0, parse_dates=True)["rain"]
    for rate, cap, threshold, grace in ((0.0015, 0.3, 6, 14), (0.003, 0.05, 10, 7)):
        ref = pvlib.soiling.kimber(rain, threshold, rate, grace, cap).to_numpy()
        ours = np.minimum(rate * kimber_history(rain, threshold, grace), cap)
        np.testing.assert_allclose(ours, ref, rtol=0, atol=1e-12)


def _rain_weather_csv(tmp_path, bundled_weather):
    """The bundled TMY3 year with the rain of pvlib's soiling example, as a plain CSV."""
    rain = pd.read_csv(HSU_RAIN, index_col=0, parse_dates=True)["rain"].to_numpy()
    d = bundled_weather.data.copy()
    d["precip_mm"] = rain[: len(d)]
    d.index = [t.isoformat() for t in d.index]
    p = tmp_path / "rain.csv"
    d.rename_axis("timestamp").to_csv(p)
    return p, rain[: len(d)]


def test_kimber_soiling_in_the_chain(tmp_path, bundled_weather):
    import pvlib

    path, rain = _rain_weather_csv(tmp_path, bundled_weather)
    text = MINIMAL_CASE.replace("altitude_m = 273.0", "altitude_m = 273.0\n"
                                "weather = \"rain.csv\"\nweather_time_label = \"start\"")
    text += "[plant.soiling]\nmodel = \"kimber\"\nrate_per_day = 0.003\n"
    case = load_case(write_case(tmp_path, text))
    site = prepare(case)
    e = evaluate(case, site, keep_hourly=True).energy
    series = pd.Series(rain, index=site.weather.data.index)
    ref = pvlib.soiling.kimber(series, 6, 0.003, 14, 0.3).to_numpy()
    day = e.hourly["effective_irradiance_w_m2"][0] > 0
    np.testing.assert_allclose(e.hourly["soiling_loss_fraction"][0][day], ref[day], atol=1e-12)
    lc = e.loss_chain_kwh
    assert lc["after_soiling_kwh"][0] < lc["after_iam_kwh"][0]


def test_monthly_soiling_and_its_scale(demo_case, demo_site):
    from dataclasses import replace

    case = replace(demo_case, soiling_monthly=(0.02,) * 12)
    o = evaluate(case, demo_site, {"plant.soiling.scale": np.array([0.0, 1.0, 2.0])})
    lc = o.energy.loss_chain_kwh
    # Analytic: a flat profile of 2 % takes exactly 2 % (x scale) of the light at that step.
    np.testing.assert_allclose(lc["after_soiling_kwh"] / lc["after_iam_kwh"],
                               [1.0, 0.98, 0.96], rtol=1e-12)
    assert o.energy.annual_kwh[0] > o.energy.annual_kwh[1] > o.energy.annual_kwh[2]


def test_soiling_scale_is_an_uncertain_input(demo_case, demo_site):
    from dataclasses import replace

    from lcoe.study.single import monte_carlo
    from lcoe.study.spec import read_spec

    case = replace(demo_case, correlation=(), uncertain={"plant.soiling.scale": {
        "dist": "uniform", "low": 0.0, "high": 3.0}})
    trials, _ = monte_carlo(case, demo_site, read_spec(case), 64, seed=5)
    x = trials.X[:, trials.names.index("plant.soiling.scale")]
    assert x.min() < 0.3 and x.max() > 2.7
    assert np.corrcoef(x, trials.physics_kwh)[0, 1] < -0.99  # more dirt, less energy


def test_loss_chain_adds_up_to_delivered(demo_site):
    # The chain's steps sum exactly to the delivered energy, here for a body field with
    # moving parts (shading between bodies, a drive's consumption and part outages).
    case = load_case(INPUTS / "compare_rotating_columns.toml")
    o = evaluate(case, demo_site, keep_hourly=True)
    e = o.energy
    lc = {k: e.loss_chain_kwh[k][0] for k, _ in LOSS_CHAIN}
    keys = [k for k, _ in LOSS_CHAIN]
    steps = [lc[a] - lc[b] for a, b in zip(keys, keys[1:])]
    assert lc["poa_kwh"] - math.fsum(steps) == pytest.approx(lc["after_outages_kwh"],
                                                             rel=1e-12)
    assert lc["delivered_kwh"] == pytest.approx(e.annual_kwh[0], rel=1e-15)
    assert e.hourly["delivered_kw"][0].sum() == pytest.approx(e.annual_kwh[0], rel=1e-12)
    lost = o.cashflow.outage_loss_fraction[0, 1:].mean()
    assert lost > 0 and lc["after_outages_kwh"] == pytest.approx(
        e.annual_kwh[0] * (1 - lost), rel=1e-12)
    assert lc["after_body_shading_kwh"] < lc["poa_kwh"]
    assert lc["after_row_shading_kwh"] == lc["poa_kwh"]
    # Independent check of one stage from the hourly arrays: DC before DC losses.
    dc = e.hourly["dc_kw"][0].sum() / (1 - case["plant.dc_loss_fraction"])
    assert dc == pytest.approx(lc["after_temperature_kwh"], rel=1e-9)


def test_orientation_rules_serve_both_hemispheres(tmp_path):
    text = MINIMAL_CASE.replace("latitude_deg = 36.1", "latitude_deg = -33.9").replace(
        "[plant]", "[plant]\ntilt_rule = \"latitude\"\nazimuth_rule = \"equator\"")
    case = load_case(write_case(tmp_path, text))
    assert case["plant.tilt_deg"] == pytest.approx(33.9) and case["plant.azimuth_deg"] == 0.0
    north = case.with_values({"site.latitude_deg": 45.0})
    assert north["plant.tilt_deg"] == 45.0 and north["plant.azimuth_deg"] == 180.0
    with pytest.raises(InputError, match="plant.tilt_deg"):
        load_case(write_case(tmp_path, text.replace("[plant]", "[plant]\ntilt_deg = 20.0")))


def _cli(*args):
    return subprocess.run([sys.executable, "-m", "lcoe.cli", *map(str, args)],
                          capture_output=True, text=True)


@pytest.mark.parametrize("extra,key", [
    ("[plant]\nbifaciality = 1.2", "plant.bifaciality"),
    ("[plant]\nrow_height_m = 0.3\ntilt_deg = 40.0", "plant.row_height_m"),
    ("[plant.soiling]\nmodel = \"monthly\"\nmonthly_loss = [0.01, 0.01, 0.01, 0.01, 0.01, "
     "0.01, 0.01, 0.01, 0.01, 0.01, 0.01]\n[plant]", "plant.soiling.monthly_loss"),
    ("[plant.soiling]\nmodel = \"kimber\"\n[plant]", "plant.soiling.model"),
])
def test_bad_row_and_soiling_input_exit_2(tmp_path, extra, key):
    case = write_case(tmp_path, MINIMAL_CASE.replace("[plant]", extra))
    r = _cli("check", case)
    assert r.returncode == 2, r.stdout
    assert r.stderr.count("\n") == 1 and key in r.stderr and "Traceback" not in r.stderr


def test_sampled_row_height_below_the_ground_is_refused(demo_case, demo_site):
    with pytest.raises(InputError, match="plant.row_height_m = 0.2 in sample 1"):
        evaluate(demo_case, demo_site, {"plant.row_height_m": np.array([1.5, 0.2])})


def test_negative_rain_refused(tmp_path, bundled_weather):
    from lcoe.site.weather import read_weather

    path, _ = _rain_weather_csv(tmp_path, bundled_weather)
    text = path.read_text().splitlines()
    head = text[0].split(",")
    row = text[5].split(",")
    row[head.index("precip_mm")] = "-1.0"
    text[5] = ",".join(row)
    path.write_text("\n".join(text) + "\n")
    with pytest.raises(InputError, match="row 6: precip_mm = -1 mm is negative"):
        read_weather(path, "start")
