"""Hourly export (``--hourly``) and the monthly tables of ``summary.json``."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
import pytest

from lcoe.cli import main
from lcoe.export.hourly import LOSS_COLUMNS, hourly_table, monthly_tables, write_hourly
from lcoe.plant import energy as energy_module
from lcoe.study.run import run_case

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "inputs" / "demo_fixed_tilt.toml"
# Invented monthly climate (demo data, not a real place), January first.
GHI_M = [2.4, 3.1, 4.3, 5.4, 5.6, 6.2, 6.1, 5.6, 4.4, 3.6, 2.4, 2.2]
TEMP_M = [3, 5, 10, 15, 20, 24, 26, 25, 21, 15, 9, 4]


@pytest.fixture(scope="module")
def demo():
    return run_case(DEMO, samples=0)


@pytest.fixture(scope="module")
def monthly_demo(tmp_path_factory):
    text = DEMO.read_text(encoding="utf-8").split("# ---- What Larkspur is unsure of")[0]
    text += f"\n[site.monthly]\nghi_kwh_m2_day = {GHI_M}\ntemp_air_c = {TEMP_M}\nseed = 7\n"
    path = tmp_path_factory.mktemp("monthly") / "monthly.toml"
    path.write_text(text, encoding="utf-8")
    return run_case(path, samples=0)


def test_table_has_every_hour_and_every_named_array(demo):
    t = hourly_table(demo)
    n = demo.site.weather.n_hours
    assert n == 8760 and len(t["index"]) == n
    cols = t["columns"]
    assert all(v.shape == (n,) for v in cols.values())
    for name in ("sun_apparent_zenith_deg", "sun_azimuth_deg", "ghi_w_m2", "dni_w_m2",
                 "dhi_w_m2", "temp_air_c", "wind_speed_m_s", "delivered_kw"):
        assert name in cols, name
    # Every hourly array the energy model names is exported, whatever it is called.
    for name in getattr(energy_module, "HOURLY_FIELDS", {}):
        assert name in cols, name
    for name, (before, after, _) in LOSS_COLUMNS.items():
        if before in cols:
            np.testing.assert_allclose(cols[name], cols[before] - cols[after])
            assert cols[name].min() >= -1e-9
    assert all(t["units"][c] for c in cols)


def test_hourly_delivered_adds_up_to_the_model_totals(demo):
    # Cross-check with the model's own reductions (annual and monthly delivered energy).
    cols = hourly_table(demo)["columns"]
    e = demo.base.energy
    assert cols["delivered_kw"].sum() == pytest.approx(e.annual_kwh[0], rel=1e-12)
    months = demo.site.weather.data.index.month.to_numpy() - 1
    by_month = np.bincount(months, weights=cols["delivered_kw"], minlength=12)
    np.testing.assert_allclose(by_month, e.monthly_kwh[0], rtol=1e-10)


def test_sun_position_matches_pvlib(demo):
    # Cross-implementation: pvlib SPA at the middle of the hour, at the case's site.
    t = hourly_table(demo)
    case = demo.case
    i = 4380  # 2 July, 12:00-13:00 local standard time
    mid = t["index"][i : i + 1] + pd.Timedelta(minutes=30)
    sp = pvlib.solarposition.get_solarposition(mid, case["site.latitude_deg"],
                                               case["site.longitude_deg"],
                                               altitude=case["site.altitude_m"])
    assert t["columns"]["sun_apparent_zenith_deg"][i] == pytest.approx(
        sp["apparent_zenith"].iloc[0], abs=0.05)
    assert t["columns"]["sun_azimuth_deg"][i] == pytest.approx(sp["azimuth"].iloc[0], abs=0.05)


def test_parquet_round_trip_keeps_values_and_units(demo, tmp_path):
    pq = pytest.importorskip("pyarrow.parquet")
    path = tmp_path / "hourly.parquet"
    write_hourly(demo, path)
    table = pq.read_table(path)
    t = hourly_table(demo)
    assert table.num_rows == 8760
    assert table.schema.names == ["time_start"] + list(t["columns"])
    back = table.to_pandas()
    for name, values in t["columns"].items():
        np.testing.assert_array_equal(back[name].to_numpy(), values)
    assert table.schema.field("ghi_w_m2").metadata[b"unit"] == b"W/m2"
    assert back["time_start"].iloc[0].startswith("1990-01-01T00:00:00-05:00")


def test_csv_fallback(demo, tmp_path):
    path = tmp_path / "hourly.csv"
    write_hourly(demo, path)
    back = pd.read_csv(path)
    assert len(back) == 8760
    assert "ghi_w_m2 [W/m2]" in back.columns and "delivered_kw [kW]" in back.columns
    np.testing.assert_allclose(back["delivered_kw [kW]"].sum(),
                               demo.base.energy.annual_kwh[0], rtol=1e-5)


def test_cli_writes_hourly_only_when_asked(tmp_path, monkeypatch):
    import lcoe.export.hourly as hx

    out = tmp_path / "with"
    assert main(["run", str(DEMO), "--samples", "0", "--hourly", "--quiet", "--out",
                 str(out)]) == 0
    assert (out / hx.hourly_file_name()).is_file()
    out2 = tmp_path / "without"
    assert main(["run", str(DEMO), "--samples", "0", "--quiet", "--out", str(out2)]) == 0
    assert not any(p.name.startswith("hourly") for p in out2.iterdir())
    monkeypatch.setattr(hx, "have_pyarrow", lambda: False)  # as if pyarrow were missing
    out3 = tmp_path / "csv"
    assert main(["run", str(DEMO), "--samples", "0", "--hourly", "--quiet", "--out",
                 str(out3)]) == 0
    assert (out3 / "hourly.csv").is_file() and not (out3 / "hourly.parquet").exists()


def test_summary_monthly_tables(demo):
    m = monthly_tables(demo)
    data = demo.site.weather.data
    # Analytic: monthly sums of the weather file's hourly GHI [kWh/m2].
    expected = data["ghi"].groupby(data.index.month).sum().to_numpy() / 1000.0
    np.testing.assert_allclose(m["ghi_kwh_m2"], expected)
    assert sum(m["energy_kwh"]) == pytest.approx(demo.base.energy.annual_kwh[0], rel=1e-10)
    if "poa_front_kwh_m2" in m:  # the model kept plane-of-array components
        assert sum(m["poa_front_kwh_m2"]) == pytest.approx(demo.base.energy.poa_kwh_m2[0],
                                                           rel=1e-9)
    assert "input_ghi_kwh_m2_day" not in m  # a weather file, not synthesised


def test_summary_lets_a_monthly_user_confirm_the_synthesis(monthly_demo, tmp_path):
    from lcoe.export.summary import summary_json

    s = json.loads(summary_json(monthly_demo))
    m = s["energy"]["monthly"]
    np.testing.assert_allclose(m["input_ghi_kwh_m2_day"], GHI_M)
    np.testing.assert_allclose(m["ghi_kwh_m2_day"], GHI_M, rtol=1e-6)
    np.testing.assert_allclose(m["temp_air_c"], m["input_temp_air_c"], atol=0.2)
    assert len(m["energy_kwh"]) == 12 and len(m["dni_kwh_m2"]) == 12
    assert "input_dni_kwh_m2_day" not in m  # no monthly DNI given


def test_summary_lists_the_given_monthly_dni(tmp_path):
    from lcoe.export.summary import summary_json

    dni = [3.0, 3.6, 4.5, 5.2, 5.6, 5.9, 5.7, 5.5, 5.0, 4.6, 3.5, 2.9]
    text = DEMO.read_text(encoding="utf-8").split("# ---- What Larkspur is unsure of")[0]
    text += (f"\n[site.monthly]\nghi_kwh_m2_day = {GHI_M}\ntemp_air_c = {TEMP_M}\n"
             f"dni_kwh_m2_day = {dni}\n")
    path = tmp_path / "monthly_dni.toml"
    path.write_text(text, encoding="utf-8")
    m = json.loads(summary_json(run_case(path, samples=0)))["energy"]["monthly"]
    np.testing.assert_allclose(m["input_dni_kwh_m2_day"], dni)
    np.testing.assert_allclose(m["dni_kwh_m2_day"], dni, rtol=1e-9)
