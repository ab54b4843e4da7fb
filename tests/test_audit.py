"""Tests for lcoe.study.audit: physics limits applied to results and claims."""

import pvlib
import pytest

from lcoe.case.errors import InputError
from lcoe.study import audit as au

# An invented flat-plate case: 100 m2 of 21 % cells receiving 2,000 kWh/m2 a year.
NORMAL = dict(
    energy_kwh=34_000.0,
    cell_area_m2=100.0,
    irradiation_on_cells_kwh_m2=2000.0,
    rated_efficiency=0.21,
)


def by_check(findings):
    return {f["check"]: f for f in findings}


def test_forty_percent_flat_single_junction_is_impossible():
    # published limit: single junction at one sun about 33.7 % (Shockley & Queisser 1961;
    # Ruhle 2016; value from memory, as in DOMAIN.md section 5)
    f = by_check(
        au.audit(
            energy_kwh=80_000.0,
            cell_area_m2=100.0,
            irradiation_on_cells_kwh_m2=2000.0,
            rated_efficiency=0.21,
        )
    )
    assert f["cell_efficiency"]["verdict"] == "impossible"
    assert "40.0 %" in f["cell_efficiency"]["message"]
    claim = by_check(au.audit(**NORMAL, claim_energy_per_cell_m2_kwh=800.0))
    assert claim["claim_energy_per_cell_m2"]["verdict"] == "impossible"


def test_normal_case_is_ok():
    findings = au.audit(
        **NORMAL,
        land_area_m2=250.0,
        irradiation_on_land_kwh_m2=1900.0,
        claim_energy_per_kw_kwh=1650.0,
    )
    assert [f["verdict"] for f in findings] == ["ok", "ok", "ok"]
    assert au.worst_verdict(findings) == "ok"
    for f in findings:  # plain sentences with numbers and units
        assert f["message"].endswith(".") and any(ch.isdigit() for ch in f["message"])
        assert "kWh" in f["message"]


def test_above_rated_is_doubtful_and_concentrators_skip_one_sun_limit():
    f = by_check(au.audit(**{**NORMAL, "energy_kwh": 46_000.0}))  # 23 % on 21 % cells
    assert f["cell_efficiency"]["verdict"] == "doubtful"
    f = by_check(
        au.audit(
            energy_kwh=40_000.0,
            cell_area_m2=100.0,
            irradiation_on_cells_kwh_m2=1000.0,
            rated_efficiency=0.42,
            concentrating=True,
            multi_junction=True,
        )
    )
    assert f["cell_efficiency"]["verdict"] == "ok"
    assert "rated_efficiency" not in f


def test_rated_efficiency_above_limit():
    f = by_check(au.audit(**{**NORMAL, "rated_efficiency": 0.40}))
    assert f["rated_efficiency"]["verdict"] == "impossible"


def test_aperture_and_land_limits():
    # analytic: nothing delivers more than the light crossing its aperture
    f = by_check(
        au.audit(
            **NORMAL,
            aperture_area_m2=10.0,
            irradiation_on_aperture_kwh_m2=2000.0,
            concentrating=True,
        )
    )
    assert f["aperture_efficiency"]["verdict"] == "impossible"  # 34,000 > 20,000 kWh
    f = by_check(au.audit(**NORMAL, land_area_m2=15.0, irradiation_on_land_kwh_m2=1900.0))
    assert f["land_efficiency"]["verdict"] == "impossible"
    assert "many units across" in f["land_efficiency"]["message"]
    f = by_check(
        au.audit(**NORMAL, claim_energy_per_land_m2_kwh=900.0, irradiation_on_land_kwh_m2=1900.0)
    )
    assert f["claim_energy_per_land_m2"]["verdict"] == "impossible"  # 47 % > 33.7 %


def test_yield_per_kw_claims():
    # analytic: Y / H is the ratio to the light; times rated efficiency = cell efficiency
    f = by_check(au.audit(**NORMAL, claim_energy_per_kw_kwh=2600.0))  # 1.3 x 21 % = 27.3 %
    assert f["claim_energy_per_kw"]["verdict"] == "doubtful"
    f = by_check(au.audit(**NORMAL, claim_energy_per_kw_kwh=4000.0))  # 2.0 x 21 % = 42 %
    assert f["claim_energy_per_kw"]["verdict"] == "impossible"


def test_energy_ratio_claims():
    base = dict(baseline_irradiation_on_cells_kwh_m2=2100.0)
    # light ratio 2000/2100 = 0.952; x 1.05 = 1.0 -> a claim of 0.9 is ok, 1.5 doubtful
    f = by_check(au.audit(**NORMAL, claim_energy_ratio=0.9, **base))
    assert f["claim_energy_ratio"]["verdict"] == "ok"
    f = by_check(au.audit(**NORMAL, claim_energy_ratio=1.5, **base))
    assert f["claim_energy_ratio"]["verdict"] == "doubtful"
    # strict: at most 0.21 x 1.05 x 2000 = 441 kWh/m2 against the baseline's 350 -> 1.26
    f = by_check(
        au.audit(
            **NORMAL,
            claim_energy_ratio=1.5,
            baseline_energy_kwh=35_000.0,
            baseline_cell_area_m2=100.0,
            **base,
        )
    )
    assert f["claim_energy_ratio"]["verdict"] == "impossible"
    assert "1.26" in f["claim_energy_ratio"]["message"]


def test_lcoe_ratio_claim():
    f = by_check(au.audit(**NORMAL, claim_lcoe_ratio=0.6, model_lcoe_ratio=1.3))
    assert f["claim_lcoe_ratio"]["verdict"] == "doubtful"
    f = by_check(au.audit(**NORMAL, claim_lcoe_ratio=1.25, model_lcoe_ratio=1.3))
    assert f["claim_lcoe_ratio"]["verdict"] == "ok"
    with pytest.raises(InputError, match="model_lcoe_ratio"):
        au.audit(**NORMAL, claim_lcoe_ratio=0.6)


def test_cooling_claim():
    # analytic: a cell cooled to air temperature gains at most |gamma| x rise = 0.4 %/K x 20 K
    f = by_check(
        au.audit(**NORMAL, claim_cooling_gain=0.10, temp_coeff_per_c=-0.004, cell_temp_rise_c=20.0)
    )
    assert f["claim_cooling_gain"]["verdict"] == "impossible"
    assert "8.0 %" in f["claim_cooling_gain"]["message"]
    f = by_check(
        au.audit(**NORMAL, claim_cooling_gain=0.05, temp_coeff_per_c=-0.004, cell_temp_rise_c=20.0)
    )
    assert f["claim_cooling_gain"]["verdict"] == "ok"


def test_cooling_rise_from_faiman_matches_pvlib():
    # cross-implementation (pvlib): rise = faiman(800 W/m2, 0 C air, 2 m/s) - 0
    rise = float(pvlib.temperature.faiman(800.0, 0.0, 2.0))
    f = by_check(
        au.audit(
            **NORMAL,
            claim_cooling_gain=0.0,
            temp_coeff_per_c=-0.004,
            poa_irradiance_w_m2=800.0,
            wind_speed=2.0,
        )
    )
    assert f"{rise:.1f} K" in f["claim_cooling_gain"]["message"]
    assert f"{100 * 0.004 * rise:.1f} %" in f["claim_cooling_gain"]["message"]


def test_validation():
    with pytest.raises(InputError, match="rated_efficiency"):
        au.audit(**{**NORMAL, "rated_efficiency": 21.0})  # percent instead of fraction
    with pytest.raises(InputError, match="baseline_irradiation_on_cells_kwh_m2"):
        au.audit(**NORMAL, claim_energy_ratio=1.2)
    with pytest.raises(InputError, match="temp_coeff_per_c"):
        au.audit(**NORMAL, claim_cooling_gain=0.05, cell_temp_rise_c=20.0)
