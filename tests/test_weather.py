"""Weather readers and import checks."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from lcoe.case.errors import InputError
from lcoe.site.weather import check_timezone, read_weather


def _csv(tmp_path, df, name="w.csv"):
    p = tmp_path / name
    df.to_csv(p, index=False)
    return p


def _year_frame(year=2021, tz="+02:00", hours=None):
    idx = pd.date_range(f"{year}-01-01 00:00", periods=hours or (8784 if year % 4 == 0
                                                                else 8760), freq="h")
    hour = idx.hour.to_numpy()
    ghi = np.clip(800 * np.sin(np.pi * (hour - 6) / 12), 0, None)
    return pd.DataFrame({"timestamp": [t.strftime("%Y-%m-%dT%H:%M:%S") + tz for t in idx],
                         "ghi": ghi, "dni": ghi * 0.8, "dhi": ghi * 0.2,
                         "temp_air": 20.0, "wind_speed": 2.0})


def test_bundled_tmy3(bundled_weather):
    w = bundled_weather
    assert w.n_hours == 8760 and w.fmt == "tmy3" and w.utc_offset_h == -5
    assert w.data.index[0] == pd.Timestamp("1990-01-01 00:00", tz="Etc/GMT+5")
    assert (w.data[["ghi", "dni", "dhi"]] >= 0).all().all()


def test_plain_csv_and_labels(tmp_path):
    p = _csv(tmp_path, _year_frame())
    start = read_weather(p, "start")
    end = read_weather(p, "end")
    assert start.n_hours == 8760 and start.utc_offset_h == 2
    assert (start.data.index - end.data.index == pd.Timedelta(hours=1)).all()


def test_leap_year_and_multi_year(tmp_path):
    leap = read_weather(_csv(tmp_path, _year_frame(2020)), "start")
    assert leap.n_hours == 8784
    both = pd.concat([_year_frame(2020), _year_frame(2021)])
    w = read_weather(_csv(tmp_path, both, "two.csv"), "start")
    assert not w.typical_year and w.n_years == 2


def test_csv_needs_time_label(tmp_path):
    with pytest.raises(InputError, match="weather_time_label"):
        read_weather(_csv(tmp_path, _year_frame()), None)


@pytest.mark.parametrize("mutate,match", [
    (lambda d: d.drop(columns="dni"), "missing column"),
    (lambda d: d.assign(ghi=d.ghi.where(d.index != 100)), "row 102: ghi is missing"),
    (lambda d: d.assign(dhi=np.where(d.index == 50, -40.0, d.dhi)), "row 52: dhi = -40"),
    (lambda d: d.assign(ghi=np.where(d.index == 12, 1600.0, d.ghi)), "row 14: ghi = 1600"),
    (lambda d: d.drop(index=30), "row 32: step"),
    (lambda d: d.assign(timestamp=d.timestamp.str.slice(0, 19)), "no UTC offset"),
    (lambda d: d.iloc[:5000], "cover neither one year"),
])
def test_import_checks(tmp_path, mutate, match):
    df = mutate(_year_frame())
    with pytest.raises(InputError, match=match) as exc:
        read_weather(_csv(tmp_path, df), "start")
    assert "w.csv" in str(exc.value) and "\n" not in str(exc.value)


def test_small_negative_values_are_zeroed(tmp_path):
    df = _year_frame()
    df.loc[3, "ghi"] = -2.0
    w = read_weather(_csv(tmp_path, df), "start")
    assert w.data["ghi"].min() == 0.0 and any("negative" in n for n in w.notes)


def test_midnight_24_00(tmp_path):
    # Hour-ending files often write midnight as 24:00 of the day that ends.
    idx = pd.date_range("2021-01-01 01:00", periods=8760, freq="h")
    stamps = [(t - pd.Timedelta(days=1)).strftime("%Y-%m-%dT24:00:00+02:00") if t.hour == 0
              else t.strftime("%Y-%m-%dT%H:%M:%S+02:00") for t in idx]
    df = _year_frame()
    df["timestamp"] = stamps
    w = read_weather(_csv(tmp_path, df), "end")
    assert w.data.index[0] == pd.Timestamp("2021-01-01 00:00", tz="+02:00")
    assert w.data.index[-1] == pd.Timestamp("2021-12-31 23:00", tz="+02:00")


def test_timezone_mismatch(bundled_weather):
    check_timezone(bundled_weather, "America/New_York", "c.toml")  # standard time UTC-5
    with pytest.raises(InputError, match="ambiguous"):
        check_timezone(bundled_weather, "Europe/Madrid", "c.toml")
    with pytest.raises(InputError, match="IANA"):
        check_timezone(bundled_weather, "Mars/Olympus", "c.toml")
