"""The weather files bundled with pvlib, and a check of weather synthesised from their means.

Used by ``tests/test_synth_weather_bundled.py`` and ``benchmarks/bench_synth_weather.py``:
each file is read with pvlib's own reader, placed in the year 2021 (start-labelled hours, the
file's fixed UTC offset), reduced to its twelve monthly means, and an hourly year is then
synthesised from those means with :func:`lcoe.site.synth_weather.synthesize_year`. Both years run
through the project's energy model (fixed tilt and single-axis) for the comparison.
"""

from __future__ import annotations

import calendar
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pvlib

from lcoe.case.reader import load_case
from lcoe.model import evaluate, prepare
from lcoe.site.synth_weather import decompose_dni, synthesize_year
from lcoe.site.weather import Weather

YEAR = 2021
DATA_DIR = Path(os.path.dirname(pvlib.__file__)) / "data"
CASE_PATH = Path(__file__).resolve().parents[2] / "inputs" / "demo_fixed_tilt.toml"
DAYS = np.array([calendar.monthrange(YEAR, m)[1] for m in range(1, 13)])

#: Months whose mean daily GHI or DNI is above this are held to the monthly DNI bound
#: [kWh/m2/day] (the bound of the brief).
SUNNY_MONTH_KWH_M2_DAY = 2.0
#: Acceptance bound on a sunny month's DNI, synthetic against the file [-] (the brief's bound).
DNI_BOUND = 0.10


def bundled_files() -> list[Path]:
    """Every TMY3, TMY2 and EPW file in pvlib's data folder, sorted by name."""
    keep = []
    for p in sorted(DATA_DIR.iterdir()):
        suffix = p.suffix.lower()
        if suffix in (".tm2", ".epw"):
            keep.append(p)
        elif suffix == ".csv":
            with open(p, encoding="utf-8", errors="replace") as fh:
                first = fh.readline().split(",")
            if len(first) == 7:  # TMY3 station header: USAF, name, state, TZ, lat, lon, elev
                try:
                    float(first[3]), float(first[4]), float(first[5])
                except ValueError:
                    continue
                keep.append(p)
    return keep


def _to_year(index: pd.DatetimeIndex) -> pd.DatetimeIndex:
    """Same month/day/hour in :data:`YEAR` (typical years mix calendar years)."""
    return pd.DatetimeIndex([t.replace(year=YEAR) for t in index])


def read_bundled(path: Path) -> Weather:
    """Read one bundled file into a start-labelled hourly :class:`Weather` of year 2021."""
    suffix = path.suffix.lower()
    if suffix == ".tm2":  # pvlib labels TMY2 hours by their start; DryBulb/Wspd in tenths
        raw, meta = pvlib.iotools.read_tmy2(path)
        df = pd.DataFrame({"ghi": raw["GHI"], "dni": raw["DNI"], "dhi": raw["DHI"],
                           "temp_air": raw["DryBulb"] / 10.0, "wind_speed": raw["Wspd"] / 10.0})
        df.index = _to_year(raw.index)
        tz = float(meta["TZ"])
    else:
        if suffix == ".epw":
            raw, meta = pvlib.iotools.read_epw(path, coerce_year=YEAR)
        else:
            raw, meta = pvlib.iotools.read_tmy3(path, coerce_year=YEAR, map_variables=True)
        # hour-ending labels -> interval start; 24:00 on 31 Dec (coerced into 2022) -> 23:00
        start = raw.index - pd.Timedelta(hours=1)
        df = raw[["ghi", "dni", "dhi", "temp_air", "wind_speed"]].copy()
        df.index = _to_year(start)
        tz = float(meta["TZ"])
    df = df.sort_index().astype(float)
    assert len(df) == 8760 and df.index.is_unique, path
    return Weather(data=df, source=str(path), fmt="file", latitude_deg=float(meta["latitude"]),
                   longitude_deg=float(meta["longitude"]), altitude_m=float(meta["altitude"]),
                   utc_offset_h=tz, name=path.name, typical_year=True)


def timezone_name(weather: Weather) -> str:
    """POSIX Etc/GMT zone of the file's fixed offset (UTC-5 -> 'Etc/GMT+5')."""
    return f"Etc/GMT{-int(round(weather.utc_offset_h)):+d}"


def monthly_daily_kwh_m2(series: pd.Series) -> np.ndarray:
    """Monthly mean daily irradiation [kWh/m2/day] of start-labelled hourly W/m2 in 2021."""
    return series.groupby(series.index.month).sum().to_numpy() / 1000.0 / DAYS


def monthly_means(weather: Weather):
    """(ghi [kWh/m2/day], temp_air [C], wind_speed [m/s]), each (12,)."""
    d = weather.data
    return (monthly_daily_kwh_m2(d["ghi"]),
            d["temp_air"].groupby(d.index.month).mean().to_numpy(),
            d["wind_speed"].groupby(d.index.month).mean().to_numpy())


def sunny_months(weather: Weather) -> np.ndarray:
    """Shape (12,) bool: months held to the DNI bound (GHI or DNI above 2 kWh/m2/day)."""
    ghi = monthly_daily_kwh_m2(weather.data["ghi"])
    dni = monthly_daily_kwh_m2(weather.data["dni"])
    return (ghi > SUNNY_MONTH_KWH_M2_DAY) | (dni > SUNNY_MONTH_KWH_M2_DAY)


def solar_zenith_mid(weather: Weather) -> np.ndarray:
    """True solar zenith [deg] by SPA at the middle of each hour of ``weather``, shape (n,)."""
    mid = weather.data.index + pd.Timedelta(minutes=30)
    pressure = pvlib.atmosphere.alt2pres(weather.altitude_m)
    return pvlib.solarposition.get_solarposition(
        mid, weather.latitude_deg, weather.longitude_deg, altitude=weather.altitude_m,
        pressure=pressure)["zenith"].to_numpy()


def decomposed_dni_ratio(weather: Weather, model: str) -> np.ndarray:
    """Monthly DNI of ``model`` applied to the file's own hourly GHI, over the file's DNI.

    The decomposition (one of :data:`lcoe.site.synth_weather.DECOMPOSITIONS`, pvlib's published
    models) sees the real hours, with the sun by SPA at the middle of each hour and the
    pressure of the site's altitude: what the beam would be if the synthesis reproduced every
    hour of GHI exactly. Shape (12,) [-].
    """
    d = weather.data
    mid = d.index + pd.Timedelta(minutes=30)
    pressure = pvlib.atmosphere.alt2pres(weather.altitude_m)
    dni = decompose_dni(d["ghi"].to_numpy(), solar_zenith_mid(weather), mid, pressure, model)
    return monthly_daily_kwh_m2(pd.Series(dni, index=d.index)) / monthly_daily_kwh_m2(d["dni"])


def synthesise_from(weather: Weather, seed: int, **kwargs) -> Weather:
    """The hourly year synthesised from ``weather``'s own monthly means."""
    ghi, temp, wind = monthly_means(weather)
    tz = timezone_name(weather)
    df = synthesize_year(weather.latitude_deg, weather.longitude_deg, weather.altitude_m, tz,
                         ghi, temp, wind, rng=seed, year=YEAR, **kwargs)
    return Weather(data=df[["ghi", "dni", "dhi", "temp_air", "wind_speed"]],
                   source="synthetic", fmt="synthetic", latitude_deg=weather.latitude_deg,
                   longitude_deg=weather.longitude_deg, altitude_m=weather.altitude_m,
                   utc_offset_h=weather.utc_offset_h, name="synthetic", typical_year=True)


def cases(weather: Weather):
    """Fixed (tilt = latitude, facing the equator) and single-axis (N-S axis) cases."""
    base = load_case(CASE_PATH).with_values({
        "site.latitude_deg": weather.latitude_deg, "site.longitude_deg": weather.longitude_deg,
        "site.altitude_m": weather.altitude_m, "site.timezone": timezone_name(weather)})
    lat = weather.latitude_deg
    fixed = base.with_values({"plant.mount": "fixed", "plant.tilt_deg": round(abs(lat), 1),
                              "plant.azimuth_deg": 180.0 if lat >= 0 else 0.0})
    tracker = base.with_values({"plant.mount": "single_axis", "plant.tilt_deg": 0.0,
                                "plant.azimuth_deg": 180.0})
    return {"fixed": fixed, "single_axis": tracker}


def energy(case, weather: Weather):
    """(annual delivered [kWh], monthly delivered [kWh] (12,)) of the deterministic case."""
    out = evaluate(case, prepare(case, weather)).energy
    return float(out.annual_kwh[0]), out.monthly_kwh[0]


def compare(weather: Weather, synthetic: Weather) -> dict:
    """Synthetic / file ratios: annual energy per mount, monthly DNI and energy per month."""
    res = {}
    for mount, case in cases(weather).items():
        e_file, m_file = energy(case, weather)
        e_syn, m_syn = energy(case, synthetic)
        res[f"energy_{mount}"] = e_syn / e_file
        with np.errstate(divide="ignore", invalid="ignore"):
            res[f"monthly_energy_{mount}"] = m_syn / m_file
    dni_file = monthly_daily_kwh_m2(weather.data["dni"])
    dni_syn = monthly_daily_kwh_m2(synthetic.data["dni"])
    sunny = sunny_months(weather)
    res["dni_file_kwh_m2_day"] = dni_file
    res["dni_ratio"] = np.where(dni_file > 0, dni_syn / np.where(dni_file > 0, dni_file, 1), 1)
    res["sunny"] = sunny
    res["worst_dni_error"] = float(np.max(np.abs(res["dni_ratio"][sunny] - 1.0)))
    res["annual_dni_ratio"] = float(dni_syn @ DAYS / (dni_file @ DAYS))
    return res
