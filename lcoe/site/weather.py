"""Read and check hourly weather: TMY3, EPW and plain CSV.

Every reader returns a :class:`Weather` whose index marks the **start** of each hour-long
interval in the file's own fixed UTC offset; solar geometry is then evaluated at the interval
centre (start + 30 min), the usual treatment of hourly averages. TMY3 and EPW label each hour by
its end; a plain CSV must say how it labels its hours (``site.weather_time_label``).

Checks on import (each a one-line :class:`~lcoe.case.errors.InputError` naming the file and row):
missing columns, gaps or NaN, irradiance below -10 W/m2 (small negatives are night-time sensor
offsets and are set to 0), GHI above 1500 W/m2, steps that are not one hour, timestamps without
a UTC offset (ambiguous time zone), duplicate timestamps, coverage that is neither one year
of consecutive hours (8760 or 8784) nor whole calendar years, 8784 hours without a 29 February,
air temperature outside -60..60 C (kelvin or Fahrenheit), DHI above GHI, no data rows.
With the site's solar position (:func:`check_against_sun`, called by :func:`lcoe.model.prepare`):
irradiance at night and DNI/DHI that do not add up to GHI in daylight. The file's path and
contents are never echoed beyond a short excerpt.
"""

from __future__ import annotations

import datetime
import io
import re
import stat
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from lcoe.case.errors import InputError, short_text

COLUMNS = ("ghi", "dni", "dhi", "temp_air", "wind_speed")
UNITS = {"ghi": "W/m2", "dni": "W/m2", "dhi": "W/m2", "temp_air": "C", "wind_speed": "m/s",
         "precip_mm": "mm"}
#: Columns kept when present: rain in each hour [mm] (plain CSV ``precip_mm``; EPW liquid
#: precipitation depth), used by the rainfall-driven soiling model.
OPTIONAL_COLUMNS = ("precip_mm",)
GHI_MAX_W_M2 = 1500.0
NEGATIVE_TOLERANCE_W_M2 = -10.0
#: Air temperatures accepted [C] (the extremes on record are about -89 and 57 C).
TEMP_AIR_RANGE_C = (-60.0, 60.0)
#: DHI may exceed GHI by this much before it is refused (sensor offsets) [W/m2], [-].
DIFFUSE_EXCESS_W_M2 = 20.0
DIFFUSE_EXCESS_FRACTION = 0.10
#: Zenith at the hour's centre above which the whole hour is night [deg].
NIGHT_ZENITH_DEG = 98.0
#: Irradiance at night accepted as sensor offset [W/m2].
NIGHT_OFFSET_W_M2 = 20.0
#: Closure check of DNI cos(z) + DHI = GHI: sun higher than this zenith [deg], tolerance
#: [W/m2] or share of GHI [-], and the share of daylight hours allowed to miss it [-].
CLOSURE_ZENITH_DEG = 80.0
CLOSURE_TOL_W_M2 = 50.0
CLOSURE_TOL_FRACTION = 0.20
CLOSURE_MAX_SHARE = 0.01
#: A UTC offset at the end of an ISO 8601 time: Z, +HH, +HHMM or +HH:MM.
_ISO_OFFSET = re.compile(r"\d(Z|[+-]\d{2}(:?\d{2})?)$")


def bundled_weather_path() -> Path:
    """The TMY3 file that the pvlib package ships (Greensboro, NC, USA; station 723170)."""
    import pvlib

    return Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"


@dataclass(frozen=True)
class Weather:
    """Hourly weather with its provenance.

    Attributes
    ----------
    data : pandas.DataFrame
        Columns ``ghi, dni, dhi`` [W/m2], ``temp_air`` [C], ``wind_speed`` [m/s], and
        ``precip_mm`` [mm] when the file has rain; index: start of each hour, tz-aware with a
        fixed offset.
    source : str
        File the data came from.
    fmt : str
        ``"tmy3"``, ``"epw"``, ``"csv"`` or ``"synthetic"``.
    latitude_deg, longitude_deg, altitude_m : float or None
        Station coordinates from the file's header, when it has them.
    utc_offset_h : float
        The index's offset from UTC [h].
    name : str
        Station name, when known.
    typical_year : bool
        True for a typical-year file (months from different years), False for measured years.
    notes : list of str
        Corrections made on import (e.g. small negative values set to zero).
    """

    data: pd.DataFrame
    source: str
    fmt: str
    latitude_deg: float | None = None
    longitude_deg: float | None = None
    altitude_m: float | None = None
    utc_offset_h: float = 0.0
    name: str = ""
    typical_year: bool = True
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def n_hours(self) -> int:
        return len(self.data)

    @property
    def years(self) -> np.ndarray:
        """Calendar year of each hour (by interval start, local standard time)."""
        return self.data.index.year.to_numpy()

    @property
    def n_years(self) -> float:
        """Number of years the file covers (1 for a typical year)."""
        return 1.0 if self.typical_year else float(len(np.unique(self.years)))

    @property
    def mid_times(self) -> pd.DatetimeIndex:
        """Interval centres, where solar position is evaluated."""
        return self.data.index + pd.Timedelta(minutes=30)


def read_weather(path: str | Path, time_label: str | None = None) -> Weather:
    """Read a weather file, choosing the reader from its content and extension.

    Parameters
    ----------
    path : str or pathlib.Path
        TMY3 (``.csv`` whose first line is the station header), EPW (``.epw``) or plain CSV
        with a header ``timestamp,ghi,dni,dhi,temp_air,wind_speed`` [W/m2, C, m/s] and
        timestamps carrying a UTC offset (ISO 8601, e.g. ``2021-06-01T12:00:00+02:00``).
    time_label : {"start", "end", "center"} or None
        How a plain CSV labels its hours. Required for plain CSV; TMY3/EPW are hour-ending.

    Returns
    -------
    Weather
    """
    p = Path(path)
    src = short_text(str(path), 120)  # for messages; the Weather keeps the whole path
    _check_file(p, src)
    if p.suffix.lower() == ".epw":
        weather = _read_epw(p, src)
    else:
        with open(p, encoding="utf-8", errors="replace") as fh:
            first = fh.readline(4096)
        weather = _read_tmy3(p, src) if _looks_like_tmy3_header(first) else \
            _read_csv(p, src, time_label)
    return replace(weather, source=str(path))


def _check_file(p: Path, src: str) -> None:
    """Refuse a weather path that is not a readable, non-empty regular text file.

    Nothing of the file is echoed: a path such as ``/proc/self/environ`` holds secrets.
    """
    if "\x00" in str(p):
        raise InputError(f"{src}: a weather path cannot hold a NUL byte")
    try:
        st = p.stat()
    except FileNotFoundError:
        raise InputError(f"{src}: weather file not found") from None
    except (OSError, RuntimeError, ValueError) as exc:  # symlink loop, name too long, ...
        why = getattr(exc, "strerror", None) or "symlink loop or invalid path"
        raise InputError(f"{src}: cannot open the weather file ({why})") from None
    if not stat.S_ISREG(st.st_mode):
        raise InputError(f"{src}: the weather path is not a regular file")
    if st.st_size == 0:
        raise InputError(f"{src}: the weather file is empty (or a special file such as one "
                         f"under /proc); expected TMY3, EPW or plain CSV")
    try:
        with open(p, "rb") as fh:
            head = fh.read(65536)
    except OSError as exc:
        raise InputError(f"{src}: cannot read the weather file ({exc.strerror})") from None
    if b"\x00" in head:
        raise InputError(f"{src}: not a text file (it holds NUL bytes); expected TMY3, EPW or "
                         f"plain CSV")


def _looks_like_tmy3_header(line: str) -> bool:
    parts = line.strip().split(",")
    if len(parts) < 7:
        return False
    try:
        float(parts[3]), float(parts[4]), float(parts[5]), float(parts[6])
    except ValueError:
        return False
    return True


def _read_tmy3(p: Path, src: str) -> Weather:
    import pvlib

    try:
        raw, meta = pvlib.iotools.read_tmy3(p, coerce_year=1990, map_variables=True)
    except Exception as exc:  # pvlib raises many types on malformed files
        raise InputError(f"{src}: not a readable TMY3 file ({type(exc).__name__}: {exc})") \
            from None
    df = _hour_ending_to_start(raw)
    return _finish(df, src, "tmy3", meta.get("latitude"), meta.get("longitude"),
                   meta.get("altitude"), float(meta["TZ"]),
                   str(meta.get("Name", "")).strip('"'), typical=True)


def _read_epw(p: Path, src: str) -> Weather:
    import pvlib

    try:
        raw, meta = pvlib.iotools.read_epw(p, coerce_year=1990)
    except Exception as exc:
        raise InputError(f"{src}: not a readable EPW file ({type(exc).__name__}: {exc})") \
            from None
    df = _hour_ending_to_start(raw)
    rain = df.get("liquid_precipitation_depth")
    if rain is not None and bool(((rain >= 0) & (rain < 999)).all()) and rain.sum() > 0:
        df["precip_mm"] = rain  # 999 marks a missing value in EPW; use only complete columns
    return _finish(df, src, "epw", meta.get("latitude"), meta.get("longitude"),
                   meta.get("altitude"), float(meta["TZ"]), str(meta.get("city", "")),
                   typical=True)


def _hour_ending_to_start(raw: pd.DataFrame) -> pd.DataFrame:
    df = raw.copy()
    df.index = df.index - pd.Timedelta(hours=1)
    return df


def _read_csv(p: Path, src: str, time_label: str | None) -> Weather:
    if time_label is None:
        raise InputError(f"{src}: plain CSV weather needs site.weather_time_label = \"start\", "
                         f"\"end\" or \"center\" in the case file (how each timestamp labels "
                         f"its hour)")
    text = p.read_text(encoding="utf-8", errors="replace")
    try:
        df = pd.read_csv(io.StringIO(text), dtype={0: str})
    except Exception as exc:
        raise InputError(f"{src}: not a readable CSV file ({exc})") from None
    df.columns = [str(c).strip() for c in df.columns]
    if "timestamp" not in df.columns:
        raise InputError(f"{src}: missing column 'timestamp' (found: "
                         f"{short_text(', '.join(df.columns), 60)!r}); expected the header "
                         f"timestamp,{','.join(COLUMNS)}")
    if df.empty:
        raise InputError(f"{src}: no data rows below the header; expected 8760 or 8784 hourly "
                         f"rows")
    stamps = df.pop("timestamp").astype(str).str.strip()
    index = _parse_stamps(stamps, src)
    df.index = index
    if time_label == "end":
        df.index = df.index - pd.Timedelta(hours=1)
    elif time_label == "center":
        df.index = df.index - pd.Timedelta(minutes=30)
    offsets = {ts.utcoffset() for ts in df.index[:: max(1, len(df) // 50)]}
    offset_h = next(iter(offsets)).total_seconds() / 3600.0
    return _finish(df, src, "csv", None, None, None, offset_h, p.stem, typical=False)


def _parse_stamps(stamps: pd.Series, src: str) -> pd.DatetimeIndex:
    """Parse ISO timestamps with offsets; '24:00' means midnight at the end of the day."""
    fixed = stamps.copy()
    is24 = fixed.str.contains(r"[T ]24:00", regex=True)
    fixed[is24] = fixed[is24].str.replace(r"([T ])24:00", r"\g<1>00:00", regex=True)
    parsed = []
    for i, s in enumerate(fixed):
        try:
            ts = pd.Timestamp(s)
        except (ValueError, TypeError, OverflowError):
            raise InputError(f"{src}: row {i + 2}: timestamp {short_text(stamps.iloc[i])!r} is "
                             f"not an ISO 8601 date-time") from None
        if ts.tzinfo is not None and not _ISO_OFFSET.search(s):
            raise InputError(f"{src}: row {i + 2}: timestamp {short_text(stamps.iloc[i])!r} has "
                             f"a malformed UTC offset; expected e.g. 2021-06-01T12:00:00+02:00")
        if ts.tzinfo is None:
            raise InputError(f"{src}: row {i + 2}: timestamp {stamps.iloc[i]!r} has no UTC "
                             f"offset; the time zone is ambiguous (write e.g. "
                             f"2021-06-01T12:00:00+02:00)")
        if is24.iloc[i]:
            ts = ts + pd.Timedelta(days=1)
        parsed.append(ts)
    offsets = {ts.utcoffset() for ts in parsed}
    if len(offsets) > 1:
        raise InputError(f"{src}: timestamps mix several UTC offsets ({len(offsets)}), e.g. "
                         f"daylight saving time; write every hour in one fixed offset")
    tz = datetime.timezone(next(iter(offsets)))
    return pd.DatetimeIndex([ts.tz_convert(tz) for ts in parsed])


def _finish(df: pd.DataFrame, src: str, fmt: str, lat, lon, alt, offset_h: float, name: str,
            typical: bool) -> Weather:
    missing = [c for c in COLUMNS if c not in df.columns]
    if missing:
        raise InputError(f"{src}: missing column(s) {', '.join(missing)} "
                         f"(need {', '.join(COLUMNS)} in W/m2, C, m/s)")
    cols = list(COLUMNS) + [c for c in OPTIONAL_COLUMNS if c in df.columns]
    data = df[cols].apply(pd.to_numeric, errors="coerce").astype(float)
    row0 = first_row(fmt)
    notes: list[str] = []
    if data.empty:
        raise InputError(f"{src}: no data rows; expected 8760 or 8784 hourly rows")
    values = data.to_numpy()
    bad = ~np.isfinite(values)
    if bad.any():
        r, c = np.argwhere(bad)[0]
        raise InputError(f"{src}: row {r + row0}: {cols[c]} is missing or not a number "
                         f"({int(bad.any(axis=1).sum())} rows affected); fill gaps before use")
    idx = data.index
    if idx.has_duplicates:
        r = int(np.argmax(idx.duplicated()))
        raise InputError(f"{src}: row {r + row0}: duplicate timestamp {idx[r]}")
    off_step = (idx[1:] - idx[:-1]) != pd.Timedelta(hours=1)
    if off_step.any():
        r = int(np.argmax(off_step)) + 1
        raise InputError(f"{src}: row {r + row0}: step from {idx[r - 1]} to {idx[r]} is not one "
                         f"hour; hourly data without gaps is required")
    for c in ("ghi", "dni", "dhi"):
        col = data[c].to_numpy()
        if (col < NEGATIVE_TOLERANCE_W_M2).any():
            r = int(np.argmax(col < NEGATIVE_TOLERANCE_W_M2))
            raise InputError(f"{src}: row {r + row0}: {c} = {col[r]:g} W/m2 is negative; "
                             f"allowed: >= 0 (values down to {NEGATIVE_TOLERANCE_W_M2:g} are "
                             f"treated as sensor offsets)")
        n_neg = int((col < 0).sum())
        if n_neg:
            data[c] = np.maximum(col, 0.0)
            notes.append(f"{n_neg} small negative {c} values set to 0")
    if "precip_mm" in data.columns and (data["precip_mm"] < 0).any():
        r = int(np.argmax(data["precip_mm"].to_numpy() < 0))
        raise InputError(f"{src}: row {r + row0}: precip_mm = {data['precip_mm'].iloc[r]:g} "
                         f"mm is negative; allowed: >= 0")
    ghi = data["ghi"].to_numpy()
    if (ghi > GHI_MAX_W_M2).any():
        r = int(np.argmax(ghi > GHI_MAX_W_M2))
        raise InputError(f"{src}: row {r + row0}: ghi = {ghi[r]:g} W/m2 is above "
                         f"{GHI_MAX_W_M2:g} W/m2, physically implausible at ground level")
    _check_temperature(data["temp_air"].to_numpy(), src, row0)
    dhi = data["dhi"].to_numpy()
    over = dhi > ghi + np.maximum(DIFFUSE_EXCESS_W_M2, DIFFUSE_EXCESS_FRACTION * ghi)
    if over.any():
        r = int(np.argmax(over))
        raise InputError(f"{src}: row {r + row0}: dhi = {dhi[r]:g} W/m2 is above ghi = "
                         f"{ghi[r]:g} W/m2 ({int(over.sum())} rows); the diffuse part cannot "
                         f"exceed the global irradiance (columns swapped?)")
    n = len(data)
    if n == 8784 and not ((idx.month == 2) & (idx.day == 29)).any():
        r = 8760
        raise InputError(f"{src}: row {r + row0}: 8784 hourly rows but the span from "
                         f"{idx[0]:%Y-%m-%d} to {idx[-1]:%Y-%m-%d} has no 29 February, so it "
                         f"is not a leap year (8760 hours); row {r + row0} ({idx[r]}) is one "
                         f"day too many")
    years = idx.year
    whole_years = all(
        (years == y).sum() == (8784 if pd.Timestamp(year=y, month=1, day=1).is_leap_year
                               else 8760) for y in np.unique(years))
    if not (n in (8760, 8784) or whole_years):
        raise InputError(f"{src}: {n} hourly rows cover neither one year (8760 or 8784 "
                         f"consecutive hours) nor whole calendar years")
    if lat is not None and not -90 <= float(lat) <= 90:
        raise InputError(f"{src}: header latitude = {lat!r}: expected a number in [-90, 90]")
    return Weather(data=data, source=src, fmt=fmt,
                   latitude_deg=None if lat is None else float(lat),
                   longitude_deg=None if lon is None else float(lon),
                   altitude_m=None if alt is None else float(alt),
                   utc_offset_h=float(offset_h), name=name,
                   typical_year=bool(typical or len(np.unique(years)) == 1 or not whole_years),
                   notes=tuple(notes))


def first_row(fmt: str) -> int:
    """Line number of the first data row in a file of format ``fmt`` (1-based)."""
    return {"csv": 2, "tmy3": 3, "epw": 9}.get(fmt, 1)


def _check_temperature(temp_c: np.ndarray, src: str, row0: int) -> None:
    """Refuse air temperatures outside :data:`TEMP_AIR_RANGE_C`, guessing the unit used."""
    lo, hi = TEMP_AIR_RANGE_C
    out = (temp_c < lo) | (temp_c > hi)
    if not out.any():
        return
    r = int(np.argmax(out))
    mean = float(np.mean(temp_c))
    if 200.0 <= mean <= 340.0:
        hint = f"the mean of {mean:.0f} looks like kelvin (C = K - 273.15)"
    elif temp_c[r] > hi and mean < 120.0:
        hint = "values above 60 look like Fahrenheit (C = (F - 32) / 1.8)"
    else:
        hint = "check the column and its unit"
    raise InputError(f"{src}: row {r + row0}: temp_air = {temp_c[r]:g} is outside "
                     f"{lo:g}..{hi:g} C ({int(out.sum())} rows); {hint}")


def check_against_sun(weather: Weather, zenith_deg: np.ndarray) -> list[str]:
    """Refuse irradiance at night and DNI/DHI that do not add up to GHI in daylight.

    Parameters
    ----------
    weather : Weather
    zenith_deg : numpy.ndarray
        Apparent solar zenith at each interval centre [deg], (n_hours,).

    Returns
    -------
    list of str
        Notes on the few daylight hours whose components do not close (when they are at most
        :data:`CLOSURE_MAX_SHARE` of the daylight hours).

    Notes
    -----
    Night: the sun is below the horizon for the whole hour when its zenith at the centre is
    above :data:`NIGHT_ZENITH_DEG` (the sun moves at most 7.5 deg in half an hour); irradiance
    above :data:`NIGHT_OFFSET_W_M2` then is not a sensor offset but shifted timestamps (a
    wrong UTC offset or hour label). Closure: ``DNI cos(zenith) + DHI = GHI`` for hours with
    the sun higher than :data:`CLOSURE_ZENITH_DEG`, within :data:`CLOSURE_TOL_W_M2` or
    :data:`CLOSURE_TOL_FRACTION` of GHI (common practice for quality control of hourly data).
    """
    src, row0 = weather.source, first_row(weather.fmt)
    d = weather.data
    ghi, dni, dhi = (d[c].to_numpy() for c in ("ghi", "dni", "dhi"))
    z = np.asarray(zenith_deg, dtype=float)
    night = z > NIGHT_ZENITH_DEG
    lit = night & (np.maximum(np.maximum(ghi, dni), dhi) > NIGHT_OFFSET_W_M2)
    if lit.any():
        r = int(np.argmax(lit))
        raise InputError(f"{src}: row {r + row0}: ghi = {ghi[r]:g}, dni = {dni[r]:g} W/m2 at "
                         f"{d.index[r]} with the sun {z[r] - 90:.0f} deg below the horizon "
                         f"({int(lit.sum())} night rows lit); check the UTC offset, "
                         f"site.weather_time_label and the site's coordinates")
    day = z < CLOSURE_ZENITH_DEG
    if not day.any():
        return []
    with np.errstate(invalid="ignore"):
        err = dni * np.cos(np.radians(z)) + dhi - ghi
    bad = day & (np.abs(err) > np.maximum(CLOSURE_TOL_W_M2, CLOSURE_TOL_FRACTION * ghi))
    if not bad.any():
        return []
    r = int(np.argmax(bad))
    share = bad.sum() / day.sum()
    what = (f"row {r + row0}: dni x cos(zenith) + dhi = {ghi[r] + err[r]:.0f} W/m2 but ghi = "
            f"{ghi[r]:g} W/m2 ({int(bad.sum())} of {int(day.sum())} daylight rows differ by "
            f"more than {CLOSURE_TOL_W_M2:g} W/m2 or {100 * CLOSURE_TOL_FRACTION:g} %)")
    if share > CLOSURE_MAX_SHARE:
        raise InputError(f"{src}: {what}; the components do not add up to the global "
                         f"irradiance (columns swapped, wrong units or shifted timestamps?)")
    return [f"weather {what}; accepted as measurement noise"]


def check_timezone(weather: Weather, timezone: str | None, source: str) -> None:
    """Refuse a case time zone whose standard-time offset differs from the weather file's.

    Parameters
    ----------
    weather : Weather
    timezone : str or None
        IANA name or fixed offset from the case; None accepts the file's offset.
    source : str
        Case file, for the message.
    """
    if timezone is None:
        return
    try:
        jan = pd.Timestamp("2021-01-15 12:00").tz_localize(timezone)
        jul = pd.Timestamp("2021-07-15 12:00").tz_localize(timezone)
    except Exception:
        raise InputError(f"{source}: site.timezone = {timezone!r}: expected an IANA time zone "
                         f"name such as 'Europe/Madrid' or 'Etc/GMT+5'") from None
    std = min(jan.utcoffset(), jul.utcoffset()).total_seconds() / 3600.0
    if abs(std - weather.utc_offset_h) > 1e-9:
        raise InputError(f"{source}: site.timezone = {timezone!r} (UTC{std:+g} h standard time) "
                         f"disagrees with the weather file {weather.source} (UTC"
                         f"{weather.utc_offset_h:+g} h); the time zone is ambiguous")
