"""The factored engine against the direct hourly evaluation: same numbers for every mount.

``model.evaluate(method="hourly")`` evaluates every sample hour by hour (the reference
implementation); the default sums factored terms (:mod:`lcoe.plant.factored`). Random parameter sets
go through both, and every output must agree within 1e-12 relative.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from conftest import MINIMAL_CASE, write_case
from test_concentrator_model import CPV

from lcoe.case.reader import load_case
from lcoe.model import evaluate, prepare

ROOT = Path(__file__).resolve().parent.parent
RTOL = 1e-12


#: Sampled physics inputs and their ranges (wide, so that clipping moves a lot).
RANGES = {
    "site.albedo": (0.1, 0.35), "plant.temp_coeff_per_c": (-0.0045, -0.0025),
    "plant.thermal_u0": (18.0, 32.0), "plant.thermal_u1": (3.0, 9.0),
    "plant.dc_loss_fraction": (0.03, 0.13), "plant.inverter_efficiency": (0.95, 0.99),
    "plant.dc_ac_ratio": (1.05, 1.6), "plant.ac_loss_fraction": (0.005, 0.03),
    "plant.availability": (0.95, 1.0), "plant.dc_capacity_kw": (5_000.0, 60_000.0),
    "costs.capex_per_kw": (800.0, 1300.0), "plant.degradation_per_year": (0.002, 0.01),
}


def _sample(rng, n: int, paths) -> dict:
    return {k: rng.uniform(*RANGES[k], n) for k in paths}


def _outputs(out) -> dict:
    e, c = out.energy, out.cashflow
    res = {"annual": e.annual_kwh, "monthly": e.monthly_kwh, "yearly": e.yearly_kwh,
           "poa": e.poa_kwh_m2, "lcoe": c.lcoe_real, "pv_costs": c.pv_costs}
    res.update({f"chain.{k}": v for k, v in e.loss_chain_kwh.items()})
    return res


def _assert_same(case, site, params, weather_factors=None):
    ref = _outputs(evaluate(case, site, params, weather_factors=weather_factors,
                            method="hourly"))
    got = _outputs(evaluate(case, site, params, weather_factors=weather_factors))
    for k, v in ref.items():
        scale = np.max(np.abs(v)) if np.size(v) else 1.0
        np.testing.assert_allclose(got[k], v, rtol=RTOL, atol=RTOL * scale, err_msg=k)


@pytest.fixture(scope="module")
def demo():
    case = load_case(ROOT / "inputs" / "demo_fixed_tilt.toml")
    return case, prepare(case)


@pytest.fixture(scope="module")
def lender():
    case = load_case(ROOT / "inputs" / "lender_single_axis.toml")
    return case, prepare(case)


@pytest.mark.parametrize("seed", [1, 2])
def test_fixed_rows_soiling_random_sets(demo, seed):
    case, site = demo
    case = case.with_values({"plant.soiling.scale": 1.3})
    rng = np.random.default_rng(seed)
    _assert_same(case, site, _sample(rng, 300, RANGES))


def test_rear_factor_and_soiling_scale_per_sample(demo):
    # the rear factor and the monthly soiling scale are per-sample factors of the sums'
    # parts: most samples share a value, some have their own; straight through
    # energy.simulate
    from lcoe.model import _geometry, _soiling, base_params
    from lcoe.plant.energy import ENERGY_PARAMS, simulate

    case, site = demo
    case = case.with_values({"plant.bifaciality": 0.7})
    n = 200
    rng = np.random.default_rng(3)
    full = base_params(case, n)
    full.update(_sample(rng, n, RANGES))
    full["plant.rear_loss_fraction"] = np.where(np.arange(n) < 190, 0.1, rng.uniform(0, 0.2, n))
    full["plant.soiling.scale"] = np.where(np.arange(n) < 180, 1.0, rng.uniform(0, 3, n))
    poa = site.poa(_geometry(case, full, 0), case["plant.transposition"],
                   case["plant.aoi_model"], bool(case["plant.diffuse_iam"]))
    sub = {k: full[k] for k in ENERGY_PARAMS}
    soil = _soiling(case, site, full, np.arange(n))
    ref, got = (simulate(poa, site.weather, sub, soiling=soil, method=m)
                for m in ("hourly", "factored"))
    for k, v in ref.loss_chain_kwh.items():
        np.testing.assert_allclose(got.loss_chain_kwh[k], v, rtol=RTOL, err_msg=k)
    np.testing.assert_allclose(got.monthly_kwh, ref.monthly_kwh, rtol=RTOL,
                               atol=RTOL * ref.monthly_kwh.max())


def test_sampled_kimber_soiling_goes_hour_by_hour(demo):
    from lcoe.model import SUMMED_PER_GROUP

    assert SUMMED_PER_GROUP == {"plant.soiling.rate_per_day", "plant.soiling.max_loss"}


def test_sampled_monthly_soiling_scale_is_summed(demo):
    # monthly dirt scales each month's light per sample: the sums take it (no hourly method),
    # within 1e-12 of the hourly method, including scales that blank whole months (loss 100 %)
    case, site = demo
    rng = np.random.default_rng(13)
    params = _sample(rng, 300, RANGES)
    params["plant.soiling.scale"] = rng.uniform(0.0, 3.0, 300)
    params["plant.soiling.scale"][:5] = 60.0
    _assert_same(case, site, params, weather_factors=rng.uniform(0.9, 1.1, (300, 30)))


def test_sampled_rear_side_and_soiling_are_summed(demo):
    # a bifacial plant (rear light is not soiled) with bifaciality, rear loss and the soiling
    # scale sampled: the sums against the hourly method, and a sample's bits among others
    case, site = demo
    case = case.with_values({"plant.bifaciality": 0.7})
    rng = np.random.default_rng(14)
    ours = _sample(rng, 200, RANGES)
    ours["plant.soiling.scale"] = rng.uniform(0.5, 2.0, 200)
    ours["plant.bifaciality"] = rng.uniform(0.0, 0.9, 200)
    ours["plant.rear_loss_fraction"] = rng.uniform(0.0, 0.3, 200)
    _assert_same(case, site, ours)
    alone = _outputs(evaluate(case, site, {k: v[:30] for k, v in ours.items()}))
    mixed = _outputs(evaluate(case, site, ours))
    for k, v in alone.items():
        np.testing.assert_array_equal(mixed[k][:30], v, err_msg=k)


def test_single_axis_random_sets(lender):
    case, site = lender
    rng = np.random.default_rng(4)
    _assert_same(case, site, _sample(rng, 300, RANGES))


def test_single_axis_open_field_bifacial(lender):
    case, site = lender
    case = case.with_values({"plant.bifaciality": 0.75, "plant.rows": False,
                             "plant.diffuse_iam": False})
    rng = np.random.default_rng(5)
    _assert_same(case, site, _sample(rng, 150, RANGES))


def test_dual_axis_random_sets(demo):
    case, site = demo
    case = case.with_values({"plant.mount": "dual_axis", "plant.tilt_deg": 0.0})
    rng = np.random.default_rng(6)
    _assert_same(case, site, _sample(rng, 200, RANGES))


def test_rotating_body_with_drives(tmp_path):
    case = load_case(ROOT / "inputs" / "compare_rotating_columns.toml")
    site = prepare(case)
    rng = np.random.default_rng(7)
    _assert_same(case, site, _sample(rng, 100, RANGES))


def test_concentrator(tmp_path):
    text = MINIMAL_CASE.replace("[plant]", '[plant]\nmount = "concentrator"') + \
        CPV.format(gamma=-0.0015, error=0.2)
    case = load_case(write_case(tmp_path, text))
    site = prepare(case)
    rng = np.random.default_rng(8)
    params = _sample(rng, 60, RANGES)
    params["plant.concentrator.tracking_error_deg"] = rng.uniform(0.0, 0.5, 60)
    _assert_same(case, site, params)


def test_repeated_physics_rows_and_small_sets(demo):
    # a Sobol design repeats physics rows (only a cost input changes): evaluated once each
    case, site = demo
    rng = np.random.default_rng(9)
    base = _sample(rng, 40, RANGES)
    params = {k: np.concatenate([v, v]) for k, v in base.items()}
    params["costs.capex_per_kw"] = rng.uniform(800, 1300, 80)
    _assert_same(case, site, params, weather_factors=rng.uniform(0.9, 1.1, (80, 30)))
    for n in (1, 2, 7):  # below the group size where sums pay off
        _assert_same(case, site, _sample(rng, n, RANGES))


def test_every_energy_parameter_is_handled_by_the_sums():
    from lcoe.plant.energy import ENERGY_PARAMS
    from lcoe.plant.factored import PARAMS

    assert set(ENERGY_PARAMS) == PARAMS


def test_cached_hours_and_groups_follow_the_soiling_profile(demo, tmp_path):
    # two cases on one prepared site share the plane of array, not the dirt
    case, site = demo
    text = (ROOT / "inputs" / "demo_fixed_tilt.toml").read_text()
    dirtier = text.replace("monthly_loss = [0.015, 0.015, 0.02, 0.03",
                           "monthly_loss = [0.06, 0.06, 0.08, 0.12")
    assert dirtier != text
    other = load_case(write_case(tmp_path, dirtier))
    rng = np.random.default_rng(10)
    params = _sample(rng, 50, RANGES)
    clean = evaluate(case, site, params).energy.annual_kwh
    _assert_same(other, site, params)
    assert np.all(evaluate(other, site, params).energy.annual_kwh < clean)
    _assert_same(case, site, params)


def test_many_wind_speeds_are_summed_hour_by_hour(demo, monkeypatch):
    # the bundled file has 52 distinct wind speeds; below that limit the hourly method runs
    import lcoe.plant.energy

    case, site = demo
    params = _sample(np.random.default_rng(11), 20, RANGES)
    monkeypatch.setattr(lcoe.plant.energy, "MAX_WIND_SPEEDS", 10)
    got = evaluate(case, site, params).energy.loss_chain_kwh
    ref = evaluate(case, site, params, method="hourly").energy.loss_chain_kwh
    for k, v in ref.items():
        np.testing.assert_array_equal(got[k], v)


@pytest.mark.parametrize("fixture", ["demo", "lender"])
def test_a_samples_result_does_not_depend_on_its_companions(fixture, request):
    # chunking and workers must give bit-identical numbers: the same 40 samples evaluated
    # alone, among 600 others (wide ranges: many of them clip), in reverse order and one at a
    # time give the very same bits on every output
    case, site = request.getfixturevalue(fixture)
    rng = np.random.default_rng(12)
    ours = _sample(rng, 40, RANGES)
    others = _sample(rng, 600, RANGES)
    alone = _outputs(evaluate(case, site, ours))
    mixed = {k: np.concatenate([others[k][:300], v, others[k][300:]]) for k, v in ours.items()}
    among = _outputs(evaluate(case, site, mixed))
    backwards = _outputs(evaluate(case, site, {k: v[::-1] for k, v in ours.items()}))
    single = [_outputs(evaluate(case, site, {k: v[i:i + 1] for k, v in ours.items()}))
              for i in (0, 17, 39)]
    for k, v in alone.items():
        np.testing.assert_array_equal(among[k][300:340], v, err_msg=k)
        np.testing.assert_array_equal(backwards[k][::-1], v, err_msg=k)
        for j, i in enumerate((0, 17, 39)):
            np.testing.assert_array_equal(single[j][k][0], v[i], err_msg=k)


THERMAL = ("plant.thermal_u0", "plant.thermal_u1")


@pytest.mark.parametrize("fixture", ["demo", "lender"])
def test_fixed_thermal_coefficients_fold_w_into_the_series(fixture, request, monkeypatch):
    # thermal coefficients not sampled: w = 1 / (U0 + U1 v) is one hourly series folded into
    # the sums, so any number of distinct wind speeds stays summed; against the hourly method
    # with a rear side and the soiling scale sampled too, and bit-identical among companions
    import lcoe.plant.energy
    import lcoe.plant.factored

    case, site = request.getfixturevalue(fixture)
    case = case.with_values({"plant.bifaciality": 0.65, "plant.thermal_u1": 4.5})
    rng = np.random.default_rng(15)
    params = _sample(rng, 300, [k for k in RANGES if k not in THERMAL])
    params["plant.soiling.scale"] = rng.uniform(0.5, 2.0, 300)
    params["plant.rear_loss_fraction"] = rng.uniform(0.0, 0.3, 300)
    monkeypatch.setattr(lcoe.plant.energy, "MAX_WIND_SPEEDS", 3)  # more speeds than that
    calls = []
    real = lcoe.plant.factored.factored_sums
    monkeypatch.setattr(lcoe.plant.factored, "factored_sums",
                        lambda *a, **k: calls.append(a[-1]) or real(*a, **k))
    _assert_same(case, site, params)
    fixed = lcoe.plant.factored.is_fixed
    assert calls and all(fixed(c, lcoe.plant.factored.THERMAL_PARAMS) for c in calls)
    alone = _outputs(evaluate(case, site, {k: v[:20] for k, v in params.items()}))
    mixed = _outputs(evaluate(case, site, params))
    for k, v in alone.items():
        np.testing.assert_array_equal(mixed[k][:20], v, err_msg=k)


@pytest.mark.parametrize("bifaciality", [0.0, 0.7])
def test_fixed_rear_factor_is_folded_in(demo, bifaciality):
    # a rear factor that is not sampled is light of the front part (none at 0); with the
    # monthly soiling scale sampled (dirt on the front only) it stays a part of its own
    case, site = demo
    case = case.with_values({"plant.bifaciality": bifaciality})
    rng = np.random.default_rng(16)
    params = _sample(rng, 200, RANGES)
    _assert_same(case, site, params)
    params["plant.soiling.scale"] = rng.uniform(0.5, 2.0, 200)
    _assert_same(case, site, params)
