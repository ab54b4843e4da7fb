"""Case-file validation: one clear line per class of error."""

from __future__ import annotations

import tomllib

import pytest
from conftest import MINIMAL_CASE, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.case.template import template_text


def _bad(tmp_path, text):
    with pytest.raises(InputError) as exc:
        load_case(write_case(tmp_path, text))
    msg = str(exc.value)
    assert "\n" not in msg and "case.toml" in msg
    return msg


def test_minimal_case_gets_defaults(tmp_path):
    case = load_case(write_case(tmp_path, MINIMAL_CASE))
    assert case["plant.mount"] == "fixed" and case["site.albedo"] == 0.2
    assert len(case.sha256) == 64


def test_unknown_key_suggests_closest(tmp_path):
    msg = _bad(tmp_path, MINIMAL_CASE.replace("capex_per_kw", "capex_per_kW"))
    assert "capex_per_kW" in msg and "did you mean 'costs.capex_per_kw'" in msg


def test_unknown_section(tmp_path):
    msg = _bad(tmp_path, MINIMAL_CASE + "\n[plnat]\nx = 1\n")
    assert "plnat" in msg and "plant" in msg


@pytest.mark.parametrize("old,new,key", [
    ("capex_per_kw = 1000.0", "capex_per_kw = -5.0", "costs.capex_per_kw"),
    ("discount_rate = 0.07", "discount_rate = -1.0", "finance.discount_rate"),
    ("lifetime_years = 25", "lifetime_years = 0", "case.lifetime_years"),
    ("lifetime_years = 25", "lifetime_years = 12.5", "case.lifetime_years"),
    ("dc_capacity_kw = 1000.0", "dc_capacity_kw = \"big\"", "plant.dc_capacity_kw"),
    ("[plant]", "[plant]\ntilt_deg = 95.0", "plant.tilt_deg"),
    ("[plant]", "[plant]\ndc_ac_ratio = 0.0", "plant.dc_ac_ratio"),
    ("[plant]", "[plant]\ninverter_efficiency = 1.2", "plant.inverter_efficiency"),
    ("[plant]", "[plant]\nmodule_efficiency = 0.0", "plant.module_efficiency"),
    ("[plant]", "[plant]\nmount = \"floating\"", "plant.mount"),
    ("[plant]", "[plant]\nbacktrack = 1", "plant.backtrack"),
])
def test_out_of_range_and_wrong_type(tmp_path, old, new, key):
    msg = _bad(tmp_path, MINIMAL_CASE.replace(old, new))
    assert key in msg and "expected" in msg


def test_missing_required_key(tmp_path):
    msg = _bad(tmp_path, MINIMAL_CASE.replace("capex_per_kw = 1000.0", ""))
    assert "costs.capex_per_kw" in msg and "missing" in msg


def test_replacement_longer_than_life(tmp_path):
    text = MINIMAL_CASE + "\n[[costs.replacement]]\nitem = \"inv\"\nevery_years = 30\n" \
                          "cost_per_kw = 50.0\n"
    msg = _bad(tmp_path, text)
    assert "every_years" in msg and "lifetime" in msg


def test_invalid_toml(tmp_path):
    msg = _bad(tmp_path, "[case\nname=")
    assert "TOML" in msg


def test_template_is_valid_and_complete(tmp_path):
    from lcoe.case.schema import FIELDS

    text = template_text()
    case = load_case(write_case(tmp_path, text))
    assert case.replacements[0].every_years == 12
    data = tomllib.loads(text)
    for f in FIELDS:  # every key appears in the template, active or commented out
        assert f"{f.key} = " in text, f.path
    assert "costs" in data


def test_with_values_validates(demo_case):
    with pytest.raises(InputError):
        demo_case.with_values({"plant.tilt_deg": 120.0})


MONTHLY = """
[site.monthly]
ghi_kwh_m2_day = [2.6, 3.5, 4.8, 5.9, 7.0, 7.8, 7.9, 7.0, 5.6, 4.0, 2.9, 2.3]
temp_air_c = [10.7, 12.0, 14.5, 16.3, 19.8, 24.0, 27.3, 27.0, 24.1, 19.6, 14.6, 11.6]
"""


def test_monthly_climate_builds_synthetic_weather(tmp_path):
    from lcoe.model import load_weather_for

    text = MINIMAL_CASE.replace("altitude_m = 273.0", "altitude_m = 273.0\n"
                                "timezone = \"Etc/GMT+5\"") + MONTHLY
    case = load_case(write_case(tmp_path, text))
    w = load_weather_for(case)
    assert w.fmt == "synthetic" and w.n_hours == 8760 and w.notes
    daily = w.data["ghi"].groupby(w.data.index.month).sum() / 1000 / \
        w.data["ghi"].groupby(w.data.index.month).size() * 24
    # The synthetic year reproduces the monthly means (lcoe.site.synth_weather contract).
    assert abs(daily.iloc[0] / 2.6 - 1) < 0.01


MONTHLY_DNI = "dni_kwh_m2_day = [3.0, 3.6, 4.5, 5.2, 5.6, 5.9, 5.7, 5.5, 5.0, 4.6, 3.5, 2.9]\n"
TZ = "altitude_m = 273.0\ntimezone = \"Etc/GMT+5\""


def test_monthly_dni_sets_each_months_beam(tmp_path):
    from lcoe.model import load_weather_for

    text = MINIMAL_CASE.replace("altitude_m = 273.0", TZ) + MONTHLY + MONTHLY_DNI
    case = load_case(write_case(tmp_path, text))
    d = load_weather_for(case).data
    days = d.groupby(d.index.month).size().to_numpy() / 24
    # The synthesis meets the given monthly DNI (lcoe.site.synth_weather contract) and the GHI.
    dni = d["dni"].groupby(d.index.month).sum().to_numpy() / 1000 / days
    assert dni == pytest.approx(case.monthly["dni_kwh_m2_day"], rel=1e-9)
    ghi = d["ghi"].groupby(d.index.month).sum().to_numpy() / 1000 / days
    assert ghi == pytest.approx(case.monthly["ghi_kwh_m2_day"], rel=1e-9)


def test_monthly_dni_refused_in_one_line(tmp_path, capsys):
    from lcoe.cli import main

    bad = MONTHLY_DNI.replace("[3.0,", "[-3.0,")
    msg = _bad(tmp_path, MINIMAL_CASE.replace("altitude_m = 273.0", TZ) + MONTHLY + bad)
    assert "site.monthly.dni_kwh_m2_day[0] = -3.0" in msg and "January" in msg
    # more beam than a dull month's GHI can hold: refused when the year is built, exit 2
    dull = MONTHLY.replace("[2.6,", "[0.9,")
    path = write_case(tmp_path, MINIMAL_CASE.replace("altitude_m = 273.0", TZ) + dull
                      + MONTHLY_DNI.replace("[3.0,", "[9.0,"))
    out = tmp_path / "res"
    assert main(["run", str(path), "--samples", "0", "--quiet", "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    assert "site.monthly.dni_kwh_m2_day[0] = 9.0" in err and "January" in err, err
    assert not out.exists()  # nothing half-written


@pytest.mark.parametrize("extra,match", [
    ("", "timezone"),  # timezone missing
    ("timezone = \"Etc/GMT+5\"\nweather = \"w.csv\"", "both given"),
])
def test_monthly_conflicts(tmp_path, extra, match):
    text = MINIMAL_CASE.replace("altitude_m = 273.0", "altitude_m = 273.0\n" + extra) + MONTHLY
    with pytest.raises(InputError, match=match):
        load_case(write_case(tmp_path, text))


def test_monthly_needs_twelve_values(tmp_path):
    text = MINIMAL_CASE.replace("altitude_m = 273.0", "altitude_m = 273.0\n"
                                "timezone = \"Etc/GMT+5\"") + \
        MONTHLY.replace("2.6, 3.5, ", "")
    msg = _bad(tmp_path, text)
    assert "ghi_kwh_m2_day" in msg
