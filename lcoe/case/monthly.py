"""The ``[site.monthly]`` table: twelve monthly means checked against the extraterrestrial
irradiation of the site (the bound that monthly global irradiation cannot exceed).

Used when a case is read (:mod:`lcoe.case.reader`) and by the synthesis of an hourly
year (:mod:`lcoe.site.synth_weather`).
"""

from __future__ import annotations

import calendar
import functools

import numpy as np
import pandas as pd
import pvlib

from lcoe.case.errors import field_error

MONTH_NAMES = tuple(calendar.month_name[1:])

#: Default monthly mean wind speed [m/s] when none is given (common practice: a value of about
#: 2 m/s is the usual fallback for module temperature models when no wind data exist).
DEFAULT_WIND_SPEED_M_S = 2.0

#: Largest monthly mean clearness index accepted [-]. Monthly means above about 0.80 are rare
#: even at the clearest desert sites; 0.85 leaves a margin (common practice; the physical bound
#: is 1, i.e. GHI equal to the extraterrestrial irradiation).
MAX_MONTHLY_CLEARNESS = 0.85


# --------------------------------------------------------------------------------------------
# Validation
# --------------------------------------------------------------------------------------------


def _twelve(values, field: str, source: str, low: float, high: float, unit: str) -> np.ndarray:
    """Coerce ``values`` to 12 finite floats in [low, high] or raise InputError."""
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        arr = None
    if arr is None or arr.shape != (12,):
        raise field_error(source, field, values, "a list of 12 numbers (January..December)")
    span = f">= {low:g} {unit}" if np.isinf(high) else f"in [{low:g}, {high:g}] {unit}"
    for i, v in enumerate(arr):
        if not (np.isfinite(v) and low <= v <= high):
            raise field_error(
                source, f"{field}[{i}]", float(v), f"a number {span} ({MONTH_NAMES[i]})"
            )
    return arr


def _scalar(value, field: str, source: str, low: float, high: float, unit: str) -> float:
    """Coerce ``value`` to a finite float in [low, high] or raise InputError."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise field_error(source, field, value, f"a number in [{low:g}, {high:g}] {unit}") from None
    if not (np.isfinite(x) and low <= x <= high):
        raise field_error(source, field, value, f"a number in [{low:g}, {high:g}] {unit}")
    return x


def _sunset_hour_angle_rad(latitude_deg, declination_rad):
    """Sunset hour angle [rad], 0 in polar night and pi in polar day (Duffie & Beckman 1.6.10)."""
    cos_ws = -np.tan(np.radians(latitude_deg)) * np.tan(declination_rad)
    return np.arccos(np.clip(cos_ws, -1.0, 1.0))


def _daily_sun(latitude_deg: float, year: int):
    """Per day of ``year``: G_on [W/m2], declination [rad], sunset hour angle [rad] (Spencer)."""
    doy = np.arange(1, (366 if calendar.isleap(year) else 365) + 1)
    g_on = np.asarray(pvlib.irradiance.get_extra_radiation(doy), dtype=float)
    decl = np.asarray(pvlib.solarposition.declination_spencer71(doy), dtype=float)
    return g_on, decl, _sunset_hour_angle_rad(latitude_deg, decl)


def _month_means(daily: np.ndarray, year: int) -> np.ndarray:
    """Mean of a per-day array over each calendar month of ``year``, shape (12,)."""
    months = pd.date_range(f"{year}-01-01", periods=daily.size, freq="D").month.to_numpy()
    return np.array([daily[months == m].mean() for m in range(1, 13)])


def daily_extraterrestrial_kwh_m2(latitude_deg: float, year: int = 2021) -> np.ndarray:
    """Daily extraterrestrial irradiation on a horizontal surface, closed form.

    Parameters
    ----------
    latitude_deg : float
        Site latitude, north positive [deg].
    year : int
        Calendar year (sets the number of days).

    Returns
    -------
    numpy.ndarray
        Shape (n_days,): H0 for each day of the year [kWh/m2/day].

    Notes
    -----
    .. math:: H_0 = \\frac{24}{\\pi} G_{on} \\left(\\cos\\phi\\cos\\delta\\sin\\omega_s
              + \\omega_s \\sin\\phi\\sin\\delta\\right),\\quad
              \\cos\\omega_s = -\\tan\\phi\\tan\\delta

    with :math:`G_{on}` the extraterrestrial normal irradiance (Spencer 1971, via
    ``pvlib.irradiance.get_extra_radiation``), :math:`\\delta` the declination (Spencer 1971)
    and :math:`\\omega_s` the sunset hour angle in radians.

    References
    ----------
    .. [1] Duffie, J.A. and Beckman, W.A., Solar Engineering of Thermal Processes, Wiley,
       section 1.10 (daily extraterrestrial radiation on a horizontal surface).
    .. [2] Spencer, J.W. (1971), Fourier series representation of the position of the sun,
       Search 2(5), 172.
    """
    g_on, decl, ws = _daily_sun(latitude_deg, year)
    phi = np.radians(latitude_deg)
    h0_wh = (
        (24.0 / np.pi)
        * g_on
        * (np.cos(phi) * np.cos(decl) * np.sin(ws) + ws * np.sin(phi) * np.sin(decl))
    )
    return np.maximum(h0_wh, 0.0) / 1000.0


def monthly_extraterrestrial_kwh_m2_day(latitude_deg: float, year: int = 2021) -> np.ndarray:
    """Monthly mean of the daily extraterrestrial horizontal irradiation.

    Parameters
    ----------
    latitude_deg : float
        Site latitude, north positive [deg].
    year : int
        Calendar year.

    Returns
    -------
    numpy.ndarray
        Shape (12,): mean H0 of each month [kWh/m2/day].

    References
    ----------
    .. [1] Duffie, J.A. and Beckman, W.A., Solar Engineering of Thermal Processes, Wiley,
       section 1.10.
    """
    return np.array(_monthly_h0(float(latitude_deg), int(year)))


@functools.lru_cache(maxsize=4096)
def _monthly_h0(latitude_deg: float, year: int) -> tuple:
    """The 12 values of :func:`monthly_extraterrestrial_kwh_m2_day`, kept per latitude and year
    (every case of a sweep's site validates its monthly values against them)."""
    return tuple(_month_means(daily_extraterrestrial_kwh_m2(latitude_deg, year), year))


def monthly_extraterrestrial_normal_kwh_m2_day(latitude_deg: float,
                                               year: int = 2021) -> np.ndarray:
    """Monthly mean of the daily extraterrestrial normal irradiation over the daylight hours.

    An upper bound of a month's direct normal irradiation at the ground: the beam of a sun
    above the horizon all day long with no atmosphere.

    Parameters
    ----------
    latitude_deg : float
        Site latitude, north positive [deg].
    year : int
        Calendar year.

    Returns
    -------
    numpy.ndarray
        Shape (12,): mean of :math:`G_{on}\\,2\\omega_s\\,(24/2\\pi)` over each month's days
        [kWh/m2/day], :math:`\\omega_s` the sunset hour angle [rad] (0 in polar night).

    References
    ----------
    .. [1] Duffie, J.A. and Beckman, W.A., Solar Engineering of Thermal Processes, Wiley,
       sections 1.4 and 1.6 (extraterrestrial radiation, day length).
    .. [2] Spencer, J.W. (1971), Fourier series representation of the position of the sun,
       Search 2(5), 172.
    """
    g_on, _, ws = _daily_sun(latitude_deg, year)
    return _month_means(g_on * (24.0 / np.pi) * ws / 1000.0, year)


def validate_monthly(
    latitude_deg,
    longitude_deg,
    ghi_kwh_m2_day,
    temp_air_c,
    wind_speed_m_s=None,
    year: int = 2021,
    source: str = "synthetic weather",
    dni_kwh_m2_day=None,
):
    """Check the monthly climate inputs of :func:`synthesize_year`.

    Parameters
    ----------
    latitude_deg : float
        Site latitude, north positive, in [-90, 90] [deg].
    longitude_deg : float
        Site longitude, east positive, in [-180, 180] [deg].
    ghi_kwh_m2_day : sequence of 12 float
        Monthly mean daily global horizontal irradiation, January first [kWh/m2/day]. Each must
        be >= 0 and at most ``MAX_MONTHLY_CLEARNESS`` times the month's extraterrestrial value.
    temp_air_c : sequence of 12 float
        Monthly mean air temperature, in [-90, 60] [C].
    wind_speed_m_s : float, sequence of 12 float or None
        Monthly mean wind speed in [0, 50] [m/s]; None gives ``DEFAULT_WIND_SPEED_M_S``.
    year : int
        Non-leap calendar year in [1900, 2100], used for the extraterrestrial reference.
    source : str
        Origin named in error messages (a file name, or a description).
    dni_kwh_m2_day : sequence of 12 float or None
        Optional monthly mean daily direct normal irradiation [kWh/m2/day]: each >= 0 and at
        most the month's extraterrestrial normal irradiation over its daylight hours
        (:func:`monthly_extraterrestrial_normal_kwh_m2_day`); zero where the month's GHI is
        zero.

    Returns
    -------
    tuple of numpy.ndarray
        ``(ghi_kwh_m2_day, temp_air_c, wind_speed_m_s)``, each float of shape (12,), and
        ``dni_kwh_m2_day`` (shape (12,)) as a fourth element when it is given.

    Raises
    ------
    lcoe.case.errors.InputError
        Naming the field (e.g. ``site.monthly.ghi_kwh_m2_day[3]``), the value and what is
        allowed.

    References
    ----------
    .. [1] Duffie, J.A. and Beckman, W.A., Solar Engineering of Thermal Processes, Wiley,
       section 1.10 (extraterrestrial irradiation used as the upper bound).
    """
    lat = _scalar(latitude_deg, "site.latitude_deg", source, -90.0, 90.0, "deg")
    year = _check_year(year, source)
    _scalar(longitude_deg, "site.longitude_deg", source, -180.0, 180.0, "deg")
    ghi = _twelve(ghi_kwh_m2_day, "site.monthly.ghi_kwh_m2_day", source, 0.0, np.inf, "kWh/m2/day")
    temp = _twelve(temp_air_c, "site.monthly.temp_air_c", source, -90.0, 60.0, "C")
    wind_field = "site.monthly.wind_speed_m_s"
    if wind_speed_m_s is None:
        wind = np.full(12, DEFAULT_WIND_SPEED_M_S)
    elif np.ndim(wind_speed_m_s) == 0:
        wind = np.full(12, _scalar(wind_speed_m_s, wind_field, source, 0.0, 50.0, "m/s"))
    else:
        wind = _twelve(wind_speed_m_s, wind_field, source, 0.0, 50.0, "m/s")

    h0 = monthly_extraterrestrial_kwh_m2_day(lat, year)
    too_high = np.flatnonzero(ghi > MAX_MONTHLY_CLEARNESS * h0 + 1e-9)
    if too_high.size:
        i = int(too_high[0])
        limit = MAX_MONTHLY_CLEARNESS * h0[i]
        raise field_error(
            source,
            f"site.monthly.ghi_kwh_m2_day[{i}]",
            float(ghi[i]),
            f"at most {limit:.3f} kWh/m2/day ({MONTH_NAMES[i]}: clearness index <= "
            f"{MAX_MONTHLY_CLEARNESS} of the extraterrestrial {h0[i]:.3f} kWh/m2/day at "
            f"latitude {lat:g})",
        )
    if dni_kwh_m2_day is None:
        return ghi, temp, wind
    dni_field = "site.monthly.dni_kwh_m2_day"
    dni = _twelve(dni_kwh_m2_day, dni_field, source, 0.0, np.inf, "kWh/m2/day")
    h0n = monthly_extraterrestrial_normal_kwh_m2_day(lat, year)
    for i in range(12):
        if ghi[i] <= 0.0 and dni[i] > 0.0:
            raise field_error(source, f"{dni_field}[{i}]", float(dni[i]),
                              f"0 kWh/m2/day ({MONTH_NAMES[i]}: "
                              f"site.monthly.ghi_kwh_m2_day[{i}] is 0, no beam without GHI)")
        if dni[i] > h0n[i] + 1e-9:
            raise field_error(
                source, f"{dni_field}[{i}]", float(dni[i]),
                f"at most {h0n[i]:.3f} kWh/m2/day ({MONTH_NAMES[i]}: the extraterrestrial "
                f"normal irradiation over the daylight hours at latitude {lat:g}; monthly "
                "sums must be divided by the days of the month)",
            )
    return ghi, temp, wind, dni


def _check_year(year, source: str) -> int:
    """Raise InputError unless ``year`` is an integer non-leap year in [1900, 2100]."""
    ok = isinstance(year, (int, np.integer)) and not isinstance(year, bool)
    if not (ok and 1900 <= year <= 2100 and not calendar.isleap(int(year))):
        raise field_error(source, "weather.year", year, "a non-leap year in [1900, 2100]")
    return int(year)
