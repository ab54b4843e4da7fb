"""The Monte Carlo engine: reproducibility, chunking, energy P-values, bad input."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import MINIMAL_CASE, write_case
from scipy.stats import norm

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import prepare
from lcoe.study.single import energy_exceedance, monte_carlo
from lcoe.study.spec import read_spec

UNC = """
[uncertain]
"costs.capex_per_kw" = { dist = "triangular", low = 900, mode = 1000, high = 1200 }
"plant.dc_loss_fraction" = { dist = "uniform", low = 0.05, high = 0.12 }
[uncertain.energy]
interannual_cov = 0.04
resource_sd = 0.05
"""


@pytest.fixture(scope="module")
def unc_case(tmp_path_factory):
    path = write_case(tmp_path_factory.mktemp("u"), MINIMAL_CASE + UNC)
    case = load_case(path)
    return case, prepare(case), read_spec(case)


def test_same_seed_same_numbers_any_chunk(unc_case):
    case, site, spec = unc_case
    a, _ = monte_carlo(case, site, spec, 64, seed=7, chunk_size=64)
    b, _ = monte_carlo(case, site, spec, 64, seed=7, chunk_size=5)
    c, _ = monte_carlo(case, site, spec, 64, seed=8, chunk_size=64)
    for k in a.outputs:
        np.testing.assert_array_equal(a.outputs[k], b.outputs[k])
    assert not np.array_equal(a.outputs["lcoe_real_per_kwh"], c.outputs["lcoe_real_per_kwh"])


def test_persistent_drawn_once_yearly_independent(unc_case):
    case, site, spec = unc_case
    t, _ = monte_carlo(case, site, spec, 400, seed=3)
    yearly = t.energy_factors / t.persistent_factor[:, None]
    # year-to-year factors vary within a trial and are uncorrelated between years
    assert np.std(yearly[0]) > 0.01
    r = np.corrcoef(yearly[:, 0], yearly[:, 1])[0, 1]
    assert abs(r) < 0.15
    # persistent factor: mean 1, sd = resource_sd (statistical, LHS)
    assert abs(t.persistent_factor.std() - 0.05) < 0.005


def test_normal_method_matches_scipy_and_samples(tmp_path):
    # Energy-only uncertainty with normal components: sampled P90 agrees with the closed form
    # P50 (1 - z90 sigma) within Monte Carlo error; z from scipy.stats.norm (cross-impl.).
    text = MINIMAL_CASE + "\n[uncertain.energy]\ninterannual_cov = 0.03\nresource_sd = 0.04\n"
    case = load_case(write_case(tmp_path, text))
    spec = read_spec(case)
    t, _ = monte_carlo(case, prepare(case), spec, 20000, seed=11)
    ex = energy_exceedance(t, spec)
    sigma = np.hypot(0.03, 0.04)
    assert ex.sigma_1yr == pytest.approx(sigma, rel=0.03)
    assert ex.normal["p90"] == pytest.approx(ex.sampled["p50"] * (1 + norm.ppf(0.10) * sigma),
                                             rel=3e-3)
    assert ex.sampled["p90"] == pytest.approx(ex.normal["p90"], rel=0.01)
    # DOMAIN.md worked example: P50 100 GWh, sigma 5 % -> P90 93.592 GWh (published method)
    assert 100 * (1 - norm.ppf(0.9) * 0.05) == pytest.approx(93.592, abs=1e-3)
    # ten-year horizon: only the year-to-year part shrinks, by sqrt(10)
    assert ex.sigma_10yr == pytest.approx(np.hypot(0.04, 0.03 / np.sqrt(10)), rel=0.05)
    assert ex.sampled["p90_10yr"] > ex.sampled["p90"]


def test_inputs_drawn_again_are_those_the_trials_ran(unc_case):
    # The study keeps no inputs: Trials.inputs draws them again from the design. Evaluating the
    # model on them (with the energy factors drawn again) gives the kept outputs bit for bit.
    from lcoe.model import evaluate
    from lcoe.study.trials import split_inputs

    case, site, spec = unc_case
    t, _ = monte_carlo(case, site, spec, 300, seed=13, chunk_size=70)
    a, b = 130, 190  # across a chunk's edge
    params, persist = split_inputs(spec, t.inputs(a, b))
    out = evaluate(case, site, params, weather_factors=t.energy_factors[a:b], guard=False)
    np.testing.assert_array_equal(out.cashflow.lcoe_real, t.outputs["lcoe_real_per_kwh"][a:b])
    np.testing.assert_array_equal(out.energy.annual_kwh, t.physics_kwh[a:b])
    np.testing.assert_array_equal(persist, t.persistent_factor[a:b])
    np.testing.assert_array_equal(t.inputs(a, b), t.X[a:b])


def test_kept_energies_and_year_to_year_spread_equal_the_whole_arrays(unc_case):
    # What the chunks keep equals numpy on the whole (n, N) arrays the study no longer holds.
    case, site, spec = unc_case
    t, _ = monte_carlo(case, site, spec, 257, seed=4, chunk_size=31)
    yearly = t.energy_factors / t.persistent_factor[:, None]
    base = t.physics_kwh * t.persistent_factor
    np.testing.assert_array_equal(t.energy_1yr_kwh, base * yearly[:, 0])
    np.testing.assert_array_equal(t.energy_10yr_kwh, base * yearly[:, :10].mean(axis=1))
    assert t.yearly_cov == float(yearly.std(ddof=1))


@pytest.mark.parametrize("entry,match", [
    ('"costs.capex_per_kw" = { dist = "gamma", k = 2 }', "dist"),
    ('"costs.capex_per_kw" = { dist = "uniform", low = 5, high = 1 }', "low"),
    ('"costs.capex_per_kw" = { dist = "normal", mean = 900, sd = 0 }', "sd"),
    ('"costs.capex_per_kw" = { dist = "triangular", low = 1, mode = 9, high = 5 }', "mode"),
    ('"costs.capex_per_kw" = { dist = "discrete", values = [1, 2], weights = [0.5, 0.6] }',
     "weights"),
    ('"plant.mount" = { dist = "uniform", low = 0, high = 1 }', "numeric"),
    ('"plant.tilt_dg" = { dist = "uniform", low = 0, high = 1 }', "tilt_deg"),
    ('"plant.degradation_per_year" = { dist = "normal", mean = 0.005, sd = 0.003 }',
     "truncate"),
])
def test_bad_uncertain_entries(tmp_path, entry, match):
    case = load_case(write_case(tmp_path, MINIMAL_CASE + "\n[uncertain]\n" + entry + "\n"))
    with pytest.raises(InputError, match=match) as exc:
        read_spec(case)
    assert "\n" not in str(exc.value) and "case.toml" in str(exc.value)


def test_bad_correlation(tmp_path):
    text = MINIMAL_CASE + UNC + '\n[[correlation]]\nbetween = ["costs.capex_per_kw", ' \
        '"plant.dc_loss_fraction"]\nrank = 1.5\n'
    with pytest.raises(InputError, match="correlation"):
        read_spec(load_case(write_case(tmp_path, text)))


def test_non_finite_output_names_trial(tmp_path):
    # A non-finite output (planted here) stops the run with the trial and its inputs named,
    # instead of being dropped silently.
    text = MINIMAL_CASE + '\n[uncertain]\n"plant.availability" = { dist = "discrete", ' \
        'values = [1.0, 0.9], weights = [0.5, 0.5] }\n'
    case = load_case(write_case(tmp_path, text))
    spec = read_spec(case)
    from lcoe.study import single as engine

    t, _ = monte_carlo(case, prepare(case), spec, 8, seed=1)
    t.outputs["lcoe_real_per_kwh"][3] = np.nan
    with pytest.raises(InputError, match="trial 3.*plant.availability"):
        engine._check_finite(t)


def test_multi_year_file_supplies_year_to_year_spread(tmp_path):
    # A weather file of several calendar years: each trial-year draws one of the file's years,
    # so the yearly factors are exactly the file's own year ratios.
    import pandas as pd
    import pvlib

    frames = []
    for year, scale in ((2019, 0.9), (2020, 1.0), (2021, 1.1)):
        idx = pd.date_range(f"{year}-01-01", periods=8784 if year == 2020 else 8760, freq="h",
                            tz="Etc/GMT+5")
        # components that add up (DNI cos z + DHI = GHI) with the sun at each hour's centre
        zen = pvlib.solarposition.get_solarposition(idx + pd.Timedelta(minutes=30), 36.1,
                                                    -79.95)["apparent_zenith"].to_numpy()
        cosz = np.clip(np.cos(np.radians(zen)), 0, None)
        dni, dhi = 800 * scale * (cosz > 0), 100 * scale * cosz
        frames.append(pd.DataFrame({"timestamp": [t.strftime("%Y-%m-%dT%H:%M:%S-05:00")
                                                  for t in idx],
                                    "ghi": dni * cosz + dhi, "dni": dni, "dhi": dhi,
                                    "temp_air": 15.0, "wind_speed": 2.0}))
    pd.concat(frames).to_csv(tmp_path / "wx.csv", index=False)
    text = MINIMAL_CASE.replace("altitude_m = 273.0", 'altitude_m = 273.0\nweather = "wx.csv"\n'
                                'weather_time_label = "start"')
    text += "\n[uncertain.energy]\nresource_sd = 0.02\n"
    case = load_case(write_case(tmp_path, text))
    site = prepare(case)
    spec = read_spec(case)
    t, notes = monte_carlo(case, site, spec, 50, seed=5)
    yearly = t.energy_factors / t.persistent_factor[:, None]
    distinct = np.unique(np.round(yearly, 12))
    assert len(distinct) == 3 and "3 calendar years" in notes[0]
    assert distinct.mean() == pytest.approx(1.0, rel=1e-9)
