"""Every hour of the deterministic case (sun, weather, every array of
``EnergyResult.hourly``, losses) and the monthly tables of ``summary.json``; the file
``hourly.parquet`` (pyarrow, imported here only), or ``hourly.csv`` without pyarrow.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from lcoe.export.cells import neutral_text

#: Columns from the sun and the weather: name -> (source attribute or column, unit, meaning).
SUN_COLUMNS = {
    "sun_apparent_zenith_deg": ("apparent_zenith_deg", "deg",
                                "apparent solar zenith at the middle of the hour"),
    "sun_azimuth_deg": ("azimuth_deg", "deg", "solar azimuth, clockwise from north"),
}
WEATHER_COLUMNS = {
    "ghi_w_m2": ("ghi", "W/m2", "global horizontal irradiance, hourly mean"),
    "dni_w_m2": ("dni", "W/m2", "direct normal irradiance, hourly mean"),
    "dhi_w_m2": ("dhi", "W/m2", "diffuse horizontal irradiance, hourly mean"),
    "temp_air_c": ("temp_air", "C", "air temperature"),
    "wind_speed_m_s": ("wind_speed", "m/s", "wind speed"),
}
#: Per-hour losses between two power stages of ``EnergyResult.hourly``: name -> (before,
#: after, meaning) [kW]; written when both stages are present.
LOSS_COLUMNS = {
    "clipping_loss_kw": ("ac_before_clipping_kw", "ac_kw", "inverter output above the AC rating"),
    "ac_side_loss_kw": ("ac_kw", "delivered_kw",
                        "AC losses, unavailability and the plant's own consumption"),
}


def _hourly_fields() -> dict:
    """Units and meanings of the energy model's hourly arrays (empty if it names none)."""
    from lcoe.plant import energy

    return dict(getattr(energy, "HOURLY_FIELDS", {}))


def hourly_table(result, sample: int = 0) -> dict:
    """Columns of the hourly table of one sample (the deterministic case is sample 0).

    Parameters
    ----------
    result : lcoe.study.results.RunResult
        A run whose base case was evaluated with ``keep_hourly=True``.
    sample : int
        Row of the base case's sample axis.

    Returns
    -------
    dict
        ``{"index": DatetimeIndex (start of each hour, local standard time), "columns":
        {name: numpy.ndarray (n_h,)}, "units": {name: str}, "meanings": {name: str}}``.

    Raises
    ------
    ValueError
        If the base case kept no hourly arrays.
    """
    site, energy = result.site, result.base.energy
    if energy.hourly_ac_kw is None:
        raise ValueError("the base case was evaluated without keep_hourly=True")
    data = site.weather.data
    cols, units, meanings = {}, {}, {}

    def add(name, values, unit, meaning):
        cols[name] = np.asarray(values, dtype=float).reshape(-1)
        units[name], meanings[name] = unit, meaning

    for name, (attr, unit, meaning) in SUN_COLUMNS.items():
        add(name, getattr(site.sun, attr), unit, meaning)
    for name, (col, unit, meaning) in WEATHER_COLUMNS.items():
        add(name, data[col].to_numpy(), unit, meaning)
    fields = _hourly_fields()
    arrays = dict(getattr(energy, "hourly", None) or {})
    arrays.setdefault("delivered_kw", energy.hourly_ac_kw)
    fields.setdefault("delivered_kw", ("kW", "delivered AC power"))
    for name, values in arrays.items():
        unit, meaning = fields.get(name, (_unit_from_name(name), ""))
        add(name, np.asarray(values)[sample], unit, meaning)
    for name, (before, after, meaning) in LOSS_COLUMNS.items():
        if before in cols and after in cols:
            add(name, cols[before] - cols[after], "kW", meaning)
    return {"index": data.index, "columns": cols, "units": units, "meanings": meanings}


def _unit_from_name(name: str) -> str:
    """Unit read from a column name's suffix (``_w_m2``, ``_kw``, ``_c``, ...)."""
    for suffix, unit in (("_w_m2", "W/m2"), ("_kwh", "kWh"), ("_kw", "kW"), ("_deg", "deg"),
                         ("_c", "C"), ("_m_s", "m/s"), ("_fraction", "-")):
        if name.endswith(suffix):
            return unit
    return ""


def _by_month(values, months, n_years) -> np.ndarray:
    """Sum of hourly ``values`` by calendar month, per average year, (12,)."""
    return np.bincount(months, weights=np.asarray(values, dtype=float), minlength=12) / n_years


def monthly_tables(result, sample: int = 0) -> dict:
    """Monthly irradiation and energy of the deterministic case, per average year.

    Parameters
    ----------
    result : lcoe.study.results.RunResult
    sample : int
        Row of the base case's sample axis.

    Returns
    -------
    dict
        Lists of 12 values, January first: ``ghi_kwh_m2`` and ``dni_kwh_m2`` (monthly sums),
        ``ghi_kwh_m2_day`` (mean daily), ``energy_kwh`` (delivered) and, when the model kept
        hourly plane-of-array components, ``poa_front_kwh_m2`` and ``poa_rear_kwh_m2``
        (front after shading; rear before bifaciality) [kWh/m2, kWh]. For weather
        synthesised from ``[site.monthly]``: ``input_ghi_kwh_m2_day`` and
        ``input_temp_air_c`` beside ``temp_air_c`` (monthly means of the synthetic year),
        and, when monthly DNI was given, ``input_dni_kwh_m2_day`` beside ``dni_kwh_m2_day``.
    """
    weather, energy = result.site.weather, result.base.energy
    data = weather.data
    months = data.index.month.to_numpy() - 1
    n_years = weather.n_years
    days = np.bincount(months, minlength=12) / 24.0 / n_years
    ghi = _by_month(data["ghi"], months, n_years) / 1000.0
    out = {
        "ghi_kwh_m2": ghi,
        "ghi_kwh_m2_day": np.divide(ghi, days, out=np.zeros(12), where=days > 0),
        "dni_kwh_m2": _by_month(data["dni"], months, n_years) / 1000.0,
        "temp_air_c": np.bincount(months, weights=data["temp_air"].to_numpy(), minlength=12)
        / np.maximum(np.bincount(months, minlength=12), 1),
        "energy_kwh": np.asarray(energy.monthly_kwh[sample], dtype=float),
    }
    hourly = getattr(energy, "hourly", None) or {}
    for side in ("front", "rear"):
        parts = [k for k in hourly if k.startswith(f"poa_{side}_") and k.endswith("_w_m2")]
        if parts:
            total = sum(np.asarray(hourly[k])[sample] for k in parts)
            out[f"poa_{side}_kwh_m2"] = _by_month(total, months, n_years) / 1000.0
    monthly_in = getattr(result.case, "monthly", None)
    if monthly_in is not None and weather.fmt == "synthetic":
        out["input_ghi_kwh_m2_day"] = np.asarray(monthly_in["ghi_kwh_m2_day"], dtype=float)
        out["input_temp_air_c"] = np.asarray(monthly_in["temp_air_c"], dtype=float)
        if monthly_in.get("dni_kwh_m2_day") is not None:
            out["input_dni_kwh_m2_day"] = np.asarray(monthly_in["dni_kwh_m2_day"], dtype=float)
            out["dni_kwh_m2_day"] = np.divide(out["dni_kwh_m2"], days, out=np.zeros(12),
                                              where=days > 0)
    return {k: [float(x) for x in v] for k, v in out.items()}


PARQUET_NAME = "hourly.parquet"
CSV_NAME = "hourly.csv"


def have_pyarrow() -> bool:
    """True when pyarrow can be imported (the ``hourly`` extra)."""
    try:
        import pyarrow  # noqa: F401
        import pyarrow.parquet  # noqa: F401
    except ImportError:
        return False
    return True


def hourly_file_name() -> str:
    """The file :func:`write_hourly` will produce: Parquet with pyarrow, CSV otherwise."""
    return PARQUET_NAME if have_pyarrow() else CSV_NAME


def _frame(result) -> tuple[pd.DataFrame, dict, dict]:
    t = hourly_table(result)
    index = t["index"]
    frame = pd.DataFrame(t["columns"], index=pd.RangeIndex(len(index)))
    frame.insert(0, "time_start", index.strftime("%Y-%m-%dT%H:%M:%S%z").str.replace(
        r"(\d\d)(\d\d)$", r"\1:\2", regex=True))
    return frame, t["units"], t["meanings"]


def write_hourly(result, path: Path) -> None:
    """Write the hourly table to ``path`` (Parquet when its suffix is .parquet, else CSV).

    Parameters
    ----------
    result : lcoe.study.results.RunResult
        Base case evaluated with ``keep_hourly=True``.
    path : pathlib.Path
        Target file (inside the staging folder of :func:`lcoe.export.staging.publish`).
    """
    frame, units, meanings = _frame(result)
    if Path(path).suffix == ".parquet":
        import pyarrow as pa
        import pyarrow.parquet as pq

        table = pa.Table.from_pandas(frame, preserve_index=False)
        fields = []
        for field in table.schema:
            if field.name == "time_start":
                meta = {"unit": "ISO 8601 with UTC offset",
                        "meaning": "start of the hour-long interval, local standard time"}
            else:
                meta = {"unit": units[field.name], "meaning": meanings[field.name]}
            fields.append(field.with_metadata({k: v.encode() for k, v in meta.items()}))
        pq.write_table(table.cast(pa.schema(fields, metadata=table.schema.metadata)), path)
        return
    header = ["time_start"] + [f"{c} [{units[c]}]" if units[c] else c for c in frame.columns[1:]]
    # text cells (header, timestamps) through the one CSV rule; the numbers stay numbers
    frame["time_start"] = frame["time_start"].map(neutral_text)
    frame.to_csv(path, index=False, header=[neutral_text(h) for h in header],
                 float_format="%.6g", lineterminator="\n")
