"""Hourly weather year synthesised from twelve monthly climate values.

For screening at sites without an hourly weather file. The year is built in five steps, each a
published method or a stated modelling choice:

1. clear sky: Ineichen & Perez (2002) with the Linke turbidity climatology shipped with pvlib,
   solar position by SPA (Reda & Andreas 2004) at the middle of each hour-long interval;
2. daily clearness index: the generalised distribution of Bendt, Collares-Pereira & Rabl (1981),
   day-to-day persistence through a Gaussian copula with lag-1 autoregression;
3. hourly global irradiance: the day's clear-sky profile scaled to the day's clearness index,
   capped, then each month re-scaled to the input mean exactly;
4. beam and diffuse parts: Erbs, Klein & Duffie (1982);
5. air temperature: a two-piece cosine diurnal cycle (minimum at sunrise, maximum at 15 h solar
   time) around the monthly means; wind speed constant within each month.

The result reproduces monthly means, not the hour-to-hour variability, the year-to-year
variability or the extremes of a real site: see :data:`SYNTHETIC_WEATHER_WARNING`.
"""

from __future__ import annotations

import calendar
import warnings
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import numpy as np
import pandas as pd
import pvlib
from scipy.optimize import brentq
from scipy.special import ndtr

from lcoe.errors import InputError, field_error
from lcoe.rng import make_rng

SYNTHETIC_WEATHER_WARNING = (
    "Synthetic weather: this hourly year was generated from 12 monthly means (daily clearness "
    "drawn from the Bendt-Collares-Pereira-Rabl distribution, clear-sky profiles, Erbs "
    "decomposition). It reproduces the monthly means only; hour-to-hour variability, "
    "year-to-year variability and extremes are not represented. Use it for screening, never "
    "for a bankable energy assessment."
)

MONTH_NAMES = tuple(calendar.month_name[1:])

#: Default monthly mean wind speed [m/s] when none is given (common practice: a value of about
#: 2 m/s is the usual fallback for module temperature models when no wind data exist).
DEFAULT_WIND_SPEED_M_S = 2.0

#: Largest monthly mean clearness index accepted [-]. Monthly means above about 0.80 are rare
#: even at the clearest desert sites; 0.85 leaves a margin (common practice; the physical bound
#: is 1, i.e. GHI equal to the extraterrestrial irradiation).
MAX_MONTHLY_CLEARNESS = 0.85

#: Bendt, Collares-Pereira & Rabl (1981) distribution constants (from memory):
#: K_min = 0.05 and K_max = 0.6313 + 0.267 Kbar - 11.9 (Kbar - 0.75)^8.
BCR_K_MIN = 0.05
BCR_K_MAX_COEFFS = (0.6313, 0.267, -11.9, 0.75, 8)

#: Lag-1 correlation of the Gaussian copula linking consecutive days [-] (from memory: measured
#: lag-1 autocorrelations of daily clearness index are typically 0.2-0.4).
DAY_AUTOCORRELATION = 0.3

#: An hour's GHI may exceed the clean-atmosphere clear sky (see ``CLEAN_LINKE_TURBIDITY``) by at
#: most this factor [-] (modelling choice: leaves room for hourly cloud enhancement).
CLEAR_SKY_CAP_RATIO = 1.1

#: Solar time of the daily temperature maximum [h] (common practice: 14-15 h).
TEMP_MAX_SOLAR_HOUR = 15.0

#: Linke turbidity of a very clean, dry atmosphere [-], used for the cap only (modelling choice:
#: the climatology is a long-term mean and real clear days are often cleaner).
CLEAN_LINKE_TURBIDITY = 2.0

_GAMMA_LIMIT = 300.0  # |gamma| beyond which the BCR distribution is a point mass at an end
_HOURS = 8760


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
    n_days = 366 if calendar.isleap(year) else 365
    doy = np.arange(1, n_days + 1)
    g_on = np.asarray(pvlib.irradiance.get_extra_radiation(doy), dtype=float)
    decl = np.asarray(pvlib.solarposition.declination_spencer71(doy), dtype=float)
    phi = np.radians(latitude_deg)
    ws = _sunset_hour_angle_rad(latitude_deg, decl)
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
    h0 = daily_extraterrestrial_kwh_m2(latitude_deg, year)
    months = pd.date_range(f"{year}-01-01", periods=h0.size, freq="D").month.to_numpy()
    return np.array([h0[months == m].mean() for m in range(1, 13)])


def validate_monthly(
    latitude_deg,
    longitude_deg,
    ghi_kwh_m2_day,
    temp_air_c,
    wind_speed_m_s=None,
    year: int = 2021,
    source: str = "synthetic weather",
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

    Returns
    -------
    tuple of numpy.ndarray
        ``(ghi_kwh_m2_day, temp_air_c, wind_speed_m_s)``, each float of shape (12,).

    Raises
    ------
    lcoe.errors.InputError
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
    return ghi, temp, wind


# --------------------------------------------------------------------------------------------
# Daily clearness index: Bendt, Collares-Pereira & Rabl (1981)
# --------------------------------------------------------------------------------------------


def bcr_k_max(kt_mean):
    """Upper limit of the daily clearness index for a monthly mean [-].

    Parameters
    ----------
    kt_mean : float or array_like
        Monthly mean clearness index :math:`\\bar K_T` [-].

    Returns
    -------
    float or numpy.ndarray
        :math:`K_{max} = 0.6313 + 0.267\\bar K_T - 11.9(\\bar K_T - 0.75)^8` [-] (constants
        from memory).

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), The frequency distribution of
       daily insolation values, Solar Energy 27(1), 1-5.
    """
    a, b, c, k0, p = BCR_K_MAX_COEFFS
    k = np.asarray(kt_mean, dtype=float)
    return a + b * k + c * (k - k0) ** p


def bcr_mean(gamma, k_min, k_max):
    """Mean of the Bendt-Collares-Pereira-Rabl distribution for a given ``gamma`` [-].

    Parameters
    ----------
    gamma : float
        Shape parameter [-]; 0 gives the uniform distribution on [k_min, k_max].
    k_min, k_max : float
        Lower and upper limits of the daily clearness index [-].

    Returns
    -------
    float
        Mean daily clearness index [-].

    Notes
    -----
    The published form
    :math:`\\bar K = \\frac{(K_{min}-1/\\gamma)e^{\\gamma K_{min}} - (K_{max}-1/\\gamma)
    e^{\\gamma K_{max}}}{e^{\\gamma K_{min}} - e^{\\gamma K_{max}}}` is evaluated in the
    algebraically equal, overflow-free form
    :math:`\\bar K = K_{max} - 1/\\gamma + \\Delta / (e^{\\gamma\\Delta} - 1)`,
    :math:`\\Delta = K_{max} - K_{min}`, with its series :math:`K_{min} + \\Delta/2 +
    \\gamma\\Delta^2/12` near :math:`\\gamma = 0`.

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), Solar Energy 27(1), 1-5.
    """
    delta = k_max - k_min
    x = gamma * delta
    if abs(x) < 1e-6:
        return k_min + delta / 2.0 + gamma * delta**2 / 12.0
    return k_max - 1.0 / gamma + delta / np.expm1(x)


def bcr_quantile(u, gamma, k_min, k_max):
    """Inverse cumulative distribution of the daily clearness index.

    Parameters
    ----------
    u : array_like
        Probabilities in [0, 1] [-].
    gamma : float
        Shape parameter [-].
    k_min, k_max : float
        Limits of the daily clearness index [-].

    Returns
    -------
    numpy.ndarray
        Daily clearness index for each ``u`` [-], in [k_min, k_max].

    Notes
    -----
    The distribution function is
    :math:`F(K) = \\frac{e^{\\gamma K_{min}} - e^{\\gamma K}}{e^{\\gamma K_{min}} -
    e^{\\gamma K_{max}}}` on :math:`[K_{min}, K_{max}]`, so
    :math:`K = K_{min} + \\ln(1 + u(e^{\\gamma\\Delta} - 1))/\\gamma` for :math:`\\gamma > 0`
    and, equivalently and without overflow,
    :math:`K = K_{max} + \\ln(1 + (1-u)(e^{-\\gamma\\Delta} - 1))/\\gamma` for
    :math:`\\gamma < 0`.

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), Solar Energy 27(1), 1-5.
    """
    u = np.clip(np.asarray(u, dtype=float), 0.0, 1.0)
    delta = k_max - k_min
    x = gamma * delta
    if abs(x) < 1e-9:
        k = k_min + u * delta
    elif gamma > 0:
        k = k_min + np.log1p(u * np.expm1(x)) / gamma
    else:
        k = k_max + np.log1p((1.0 - u) * np.expm1(-x)) / gamma
    return np.clip(k, k_min, k_max)


def bcr_gamma_from_mean(kt_mean: float, k_min: float = BCR_K_MIN, k_max: float | None = None):
    """Solve the BCR shape parameter that gives the monthly mean clearness index.

    Parameters
    ----------
    kt_mean : float
        Monthly mean clearness index, strictly between k_min and k_max [-].
    k_min : float
        Lower limit [-] (BCR: 0.05, from memory).
    k_max : float or None
        Upper limit [-]; None uses :func:`bcr_k_max`.

    Returns
    -------
    float
        ``gamma`` [-] such that :func:`bcr_mean` equals ``kt_mean``.

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), Solar Energy 27(1), 1-5.
    """
    if k_max is None:
        k_max = float(bcr_k_max(kt_mean))
    if not k_min < kt_mean < k_max:
        raise InputError(
            f"kt_mean = {kt_mean!r}: expected a value strictly between k_min = {k_min:g} and "
            f"k_max = {k_max:g}"
        )
    return brentq(
        lambda g: bcr_mean(g, k_min, k_max) - kt_mean, -_GAMMA_LIMIT, _GAMMA_LIMIT, xtol=1e-12
    )


def ar1_uniforms(n: int, rho: float, rng: np.random.Generator) -> np.ndarray:
    """Uniform variates with lag-1 dependence through a Gaussian AR(1) copula.

    Parameters
    ----------
    n : int
        Number of consecutive days.
    rho : float
        Lag-1 correlation of the underlying standard normal series, in (-1, 1) [-].
    rng : numpy.random.Generator
        Source of randomness.

    Returns
    -------
    numpy.ndarray
        Shape (n,): :math:`u_t = \\Phi(z_t)` with :math:`z_0 \\sim N(0, 1)` and
        :math:`z_t = \\rho z_{t-1} + \\sqrt{1-\\rho^2}\\,\\varepsilon_t`, which is stationary
        with unit variance [-].

    References
    ----------
    .. [1] Nelsen, R.B. (2006), An Introduction to Copulas, 2nd ed., Springer (Gaussian
       copula).
    """
    eps = rng.standard_normal(n)
    z = np.empty(n)
    z[0] = eps[0]
    scale = np.sqrt(1.0 - rho * rho)
    for t in range(1, n):  # sequential by nature: each day depends on the previous one
        z[t] = rho * z[t - 1] + scale * eps[t]
    return ndtr(z)


def _match_month(u, h0_day_wh, kt_mean):
    """Daily clearness indices for one month whose H0-weighted mean equals ``kt_mean``.

    The copula uniforms ``u`` are kept and the BCR shape parameter is solved on the sample
    (the sample analogue of BCR's gamma-mean relation), so every day stays in [K_min, K_max].
    """
    k_max = float(bcr_k_max(kt_mean))
    if kt_mean <= BCR_K_MIN + 1e-6 or np.sum(h0_day_wh) <= 0.0:
        return np.full(u.shape, kt_mean)
    weights = h0_day_wh / np.sum(h0_day_wh)

    def excess(g):
        return float(np.dot(weights, bcr_quantile(u, g, BCR_K_MIN, k_max))) - kt_mean

    lo, hi = excess(-_GAMMA_LIMIT), excess(_GAMMA_LIMIT)
    if lo >= 0.0:
        gamma = -_GAMMA_LIMIT
    elif hi <= 0.0:
        gamma = _GAMMA_LIMIT
    else:
        gamma = brentq(excess, -_GAMMA_LIMIT, _GAMMA_LIMIT, xtol=1e-10)
    return bcr_quantile(u, gamma, BCR_K_MIN, k_max)


# --------------------------------------------------------------------------------------------
# Synthesis
# --------------------------------------------------------------------------------------------


def _fill_to_target(values, caps, target):
    """Scale ``values`` so they sum to ``target`` without exceeding ``caps`` (water filling).

    Returns the scaled array, or None when even the caps do not reach the target.
    """
    out = np.minimum(values, caps)
    if target <= 0.0:
        return np.zeros_like(out)
    if caps.sum() < target * (1.0 - 1e-9):
        return None
    for _ in range(200):  # iterative by nature: each pass may cap more hours
        total = out.sum()
        if abs(total - target) <= 1e-10 * target:
            break
        if total > target:  # scaling down never breaks a cap
            out = out * (target / total)
            continue
        capped = out >= caps * (1.0 - 1e-12)
        room = target - out[capped].sum()
        free = out[~capped].sum()
        if free <= 0.0:
            # the uncapped hours are all zero: lift them proportionally to their caps
            slack = caps - out
            out = out + slack * min(1.0, (target - total) / slack.sum())
            continue
        out = np.where(capped, out, out * room / free)
        out = np.minimum(out, caps)
    return out


def _diurnal_temperature(solar_hour, sunrise_hour, amplitude_c):
    """Two-piece cosine diurnal cycle around zero [C].

    Minimum ``-amplitude`` at sunrise, maximum ``+amplitude`` at ``TEMP_MAX_SOLAR_HOUR``; each
    half-cosine averages zero over its own span, so the continuous daily mean is zero.
    """
    t_max = TEMP_MAX_SOLAR_HOUR
    rising = (solar_hour >= sunrise_hour) & (solar_hour < t_max)
    t_fall = np.where(solar_hour < sunrise_hour, solar_hour + 24.0, solar_hour)
    rise_shape = -np.cos(np.pi * (solar_hour - sunrise_hour) / (t_max - sunrise_hour))
    fall_shape = np.cos(np.pi * (t_fall - t_max) / (sunrise_hour + 24.0 - t_max))
    return amplitude_c * np.where(rising, rise_shape, fall_shape)


def _clear_sky_ghi(app_zenith, am_abs, linke, alt, dni_extra, etr_h):
    """Ineichen-Perez clear-sky GHI [W/m2], zero wherever the true sun is below the horizon."""
    with np.errstate(divide="ignore", invalid="ignore"):  # night hours divide by cos(90 deg)
        cs = pvlib.clearsky.ineichen(app_zenith, am_abs, linke, altitude=alt, dni_extra=dni_extra)
    ghi = np.nan_to_num(np.asarray(cs["ghi"], dtype=float), nan=0.0)
    return np.where(etr_h > 0.0, np.maximum(ghi, 0.0), 0.0)


def _check_year(year, source: str) -> int:
    """Raise InputError unless ``year`` is an integer non-leap year in [1900, 2100]."""
    ok = isinstance(year, (int, np.integer)) and not isinstance(year, bool)
    if not (ok and 1900 <= year <= 2100 and not calendar.isleap(int(year))):
        raise field_error(source, "weather.year", year, "a non-leap year in [1900, 2100]")
    return int(year)


def _check_options(altitude_m, timezone, year, daily_temp_range_c, source):
    """Validate the non-monthly arguments of :func:`synthesize_year`."""
    alt = _scalar(altitude_m, "site.altitude_m", source, -500.0, 9000.0, "m")
    _check_year(year, source)
    try:
        ZoneInfo(str(timezone))
    except (ZoneInfoNotFoundError, ValueError):
        raise field_error(
            source, "site.timezone", timezone, "an IANA time zone name, e.g. 'Etc/GMT+5' for UTC-5"
        ) from None
    rng_c = _scalar(daily_temp_range_c, "weather.daily_temp_range_c", source, 0.0, 40.0, "C")
    return alt, rng_c


def synthesize_year(
    latitude_deg,
    longitude_deg,
    altitude_m,
    timezone,
    ghi_kwh_m2_day,
    temp_air_c,
    wind_speed_m_s=None,
    *,
    rng,
    year: int = 2021,
    daily_temp_range_c: float = 10.0,
    day_autocorrelation: float = DAY_AUTOCORRELATION,
    source: str = "synthetic weather",
) -> pd.DataFrame:
    """Build an hourly weather year from monthly climate values.

    Parameters
    ----------
    latitude_deg : float
        Site latitude, north positive [deg].
    longitude_deg : float
        Site longitude, east positive [deg].
    altitude_m : float
        Site altitude above sea level, in [-500, 9000] [m].
    timezone : str
        IANA time zone of the output index, e.g. ``'Etc/GMT+5'`` (UTC-5, no daylight saving)
        or ``'Europe/Madrid'``.
    ghi_kwh_m2_day : sequence of 12 float
        Monthly mean daily global horizontal irradiation [kWh/m2/day].
    temp_air_c : sequence of 12 float
        Monthly mean air temperature [C].
    wind_speed_m_s : float, sequence of 12 float or None
        Monthly mean wind speed [m/s]; None gives 2.0 m/s (common practice).
    rng : numpy.random.Generator or int
        Required keyword. Randomness for the day sequence, through :func:`lcoe.rng.make_rng`;
        the same seed (or a generator in the same state) gives an identical frame.
    year : int
        Non-leap calendar year of the index.
    daily_temp_range_c : float
        Mean difference between daily maximum and minimum air temperature [C].
    day_autocorrelation : float
        Lag-1 correlation of the Gaussian copula linking consecutive days, in [0, 0.95] [-].
    source : str
        Origin named in error messages.

    Returns
    -------
    pandas.DataFrame
        8760 rows, tz-aware hourly index labelling the START of each hour-long interval (solar
        geometry for an interval belongs at its midpoint, index + 30 min). Columns ``ghi``,
        ``dni``, ``dhi`` [W/m2], ``temp_air`` [C], ``wind_speed`` [m/s]. Each row holds the
        interval mean. ``attrs['warning']`` holds :data:`SYNTHETIC_WEATHER_WARNING`.

    Raises
    ------
    lcoe.errors.InputError
        For invalid inputs (see :func:`validate_monthly`), or a month whose GHI exceeds the
        extraterrestrial irradiation of its sunlit hours.

    Notes
    -----
    *Solar geometry.* SPA at the midpoint of each interval; clear sky by Ineichen-Perez with the
    pvlib Linke turbidity climatology; extraterrestrial horizontal irradiance
    :math:`G_{0h} = G_{on}\\max(\\cos\\theta_z, 0)`.

    *Days.* Hours are grouped into solar days (local mean solar time, so days split at solar
    midnight). The day's extraterrestrial irradiation is :math:`H_{0,d} = \\sum_h G_{0h}\\,1h`.

    *Daily clearness.* The monthly mean clearness index is
    :math:`\\bar K_T = \\bar H / \\bar H_0`. Daily values follow Bendt, Collares-Pereira & Rabl
    (1981): :math:`F(K) = (e^{\\gamma K_{min}} - e^{\\gamma K}) / (e^{\\gamma K_{min}} -
    e^{\\gamma K_{max}})` with :math:`K_{min} = 0.05`,
    :math:`K_{max} = 0.6313 + 0.267\\bar K_T - 11.9(\\bar K_T - 0.75)^8` (constants from
    memory). Consecutive days are linked through a Gaussian AR(1) copula of lag-1 correlation
    ``day_autocorrelation`` (0.3 by default, from memory), :math:`K_d = F^{-1}(\\Phi(z_d))`.
    Within each month :math:`\\gamma` is solved on the drawn days so that
    :math:`\\sum_d K_d H_{0,d} = \\bar K_T \\sum_d H_{0,d}` exactly.

    *Hourly GHI.* :math:`G_h = G_{cs,h}\\,K_d H_{0,d} / \\sum_{h\\in d} G_{cs,h}`, capped at
    :math:`\\min(1.1\\,G^{clean}_{cs,h}, G_{0h})`, where :math:`G^{clean}_{cs}` is the clear
    sky with the Linke turbidity lowered to at most 2 (modelling choice: the climatology is a
    long-term mean and real clear days are often cleaner); then each calendar month is
    re-scaled, by iterated proportional filling below the caps, so its mean daily GHI equals
    the input (to 1e-10 relative). A month the caps cannot reach (mostly near polar night) is
    filled up to :math:`G_{0h}` instead, with a ``UserWarning``.

    *Beam and diffuse.* Erbs et al. (1982) gives DNI; DHI is then set to
    :math:`G_h - DNI\\cos\\theta_z`, so closure holds exactly.

    *Temperature.* Daily means interpolate the monthly means (placed mid-month) linearly; the
    diurnal cycle is a cosine rising from its minimum at sunrise to its maximum at 15 h solar
    time, and a cosine falling back to the next sunrise; amplitude
    :math:`A_d = \\tfrac12 R\\,(\\tfrac12 + \\tfrac12 K_d / \\bar K_T)` with R =
    ``daily_temp_range_c`` (modelling choice: clear days swing wider). Each calendar month is
    finally shifted so its hourly mean equals the input exactly. Wind speed is constant within
    each month (no noise).

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), The frequency distribution of
       daily insolation values, Solar Energy 27(1), 1-5.
    .. [2] Ineichen, P. and Perez, R. (2002), A new airmass independent formulation for the
       Linke turbidity coefficient, Solar Energy 73(3), 151-157.
    .. [3] Remund, J. et al. (2003), Worldwide Linke turbidity information, ISES Solar World
       Congress (the climatology shipped with pvlib).
    .. [4] Reda, I. and Andreas, A. (2004), Solar position algorithm for solar radiation
       applications, Solar Energy 76(5), 577-589.
    .. [5] Erbs, D.G., Klein, S.A. and Duffie, J.A. (1982), Estimation of the diffuse radiation
       fraction for hourly, daily and monthly-average global radiation, Solar Energy 28(4),
       293-302.
    .. [6] Duffie, J.A. and Beckman, W.A., Solar Engineering of Thermal Processes, Wiley,
       section 1.10.
    """
    alt, temp_range = _check_options(altitude_m, timezone, year, daily_temp_range_c, source)
    ghi_in, temp_in, wind_in = validate_monthly(
        latitude_deg, longitude_deg, ghi_kwh_m2_day, temp_air_c, wind_speed_m_s, year, source
    )
    lat, lon = float(latitude_deg), float(longitude_deg)
    rho = _scalar(day_autocorrelation, "weather.day_autocorrelation", source, 0.0, 0.95, "")
    gen = make_rng(rng)

    index = pd.date_range(pd.Timestamp(f"{year}-01-01", tz=str(timezone)), periods=_HOURS, freq="h")
    mid = index + pd.Timedelta(minutes=30)
    month = index.month.to_numpy() - 1  # calendar month of each interval, local time

    # --- solar geometry and clear sky at mid-interval
    pressure = pvlib.atmosphere.alt2pres(alt)
    sp = pvlib.solarposition.get_solarposition(mid, lat, lon, altitude=alt, pressure=pressure)
    zenith = sp["zenith"].to_numpy()
    app_zenith = sp["apparent_zenith"].to_numpy()
    doy_utc = mid.tz_convert("UTC").day_of_year.to_numpy()
    dni_extra = np.asarray(pvlib.irradiance.get_extra_radiation(doy_utc), dtype=float)
    cos_z = np.cos(np.radians(zenith))
    etr_h = dni_extra * np.maximum(cos_z, 0.0)
    am_rel = pvlib.atmosphere.get_relative_airmass(app_zenith)
    am_abs = pvlib.atmosphere.get_absolute_airmass(am_rel, pressure)
    with warnings.catch_warnings():  # pvlib reads DatetimeIndex.dayofyear, deprecated in pandas
        warnings.filterwarnings("ignore", message=".*dayofyear is deprecated.*")
        linke = np.asarray(pvlib.clearsky.lookup_linke_turbidity(mid, lat, lon), dtype=float)
    cs_ghi = _clear_sky_ghi(app_zenith, am_abs, linke, alt, dni_extra, etr_h)
    clean_linke = np.minimum(linke, CLEAN_LINKE_TURBIDITY)
    clean_ghi = _clear_sky_ghi(app_zenith, am_abs, clean_linke, alt, dni_extra, etr_h)
    cap = np.minimum(CLEAR_SKY_CAP_RATIO * clean_ghi, etr_h)

    # --- solar days (split at local mean solar midnight)
    utc_hours = mid.tz_convert("UTC") - pd.Timestamp(f"{year}-01-01", tz="UTC")
    solar_hours_since = utc_hours / pd.Timedelta(hours=1) + lon / 15.0
    day_key = np.floor(solar_hours_since / 24.0).astype(int)
    day_key -= day_key.min()
    n_days = int(day_key.max()) + 1
    solar_date = pd.Timestamp(f"{year}-01-01") + pd.to_timedelta(
        np.floor(solar_hours_since.to_numpy() / 24.0), unit="D"
    )
    day_month = np.zeros(n_days, dtype=int)
    day_month[day_key] = solar_date.month.to_numpy() - 1
    day_doy = np.zeros(n_days, dtype=int)
    day_doy[day_key] = solar_date.day_of_year.to_numpy()
    h0_day = np.bincount(day_key, weights=etr_h, minlength=n_days)  # [Wh/m2]
    cs_day = np.bincount(day_key, weights=cs_ghi, minlength=n_days)

    # --- monthly targets and mean clearness (calendar months of the index)
    days_in_month = np.array([calendar.monthrange(year, m)[1] for m in range(1, 13)])
    target_wh = ghi_in * days_in_month * 1000.0
    h0_month = np.bincount(month, weights=etr_h, minlength=12)
    kt_month = np.divide(target_wh, h0_month, out=np.zeros(12), where=h0_month > 0.0)

    # --- daily clearness index sequence
    u = ar1_uniforms(n_days, rho, gen)
    k_day = np.zeros(n_days)
    for m in range(12):  # one BCR distribution per month
        sel = day_month == m
        k_day[sel] = _match_month(u[sel], h0_day[sel], kt_month[m])

    # --- hourly GHI: clear-sky shape scaled to the day, capped, month re-scaled
    day_scale = np.divide(k_day * h0_day, cs_day, out=np.zeros(n_days), where=cs_day > 0.0)
    ghi = np.minimum(cs_ghi * day_scale[day_key], cap)
    for m in range(12):
        sel = month == m
        filled = _fill_to_target(ghi[sel], cap[sel], target_wh[m])
        if filled is None:  # fall back to the physical bound: hourly clearness index <= 1
            filled = _fill_to_target(ghi[sel], etr_h[sel], target_wh[m])
            if filled is None:
                reachable = etr_h[sel].sum() / days_in_month[m] / 1000.0
                raise field_error(
                    source,
                    f"site.monthly.ghi_kwh_m2_day[{m}]",
                    float(ghi_in[m]),
                    f"at most {reachable:.4f} kWh/m2/day ({MONTH_NAMES[m]}: extraterrestrial "
                    "irradiation of the hours with the sun up at mid-interval)",
                )
            warnings.warn(
                f"{source}: site.monthly.ghi_kwh_m2_day[{m}] = {ghi_in[m]:.4g} kWh/m2/day "
                f"({MONTH_NAMES[m]}) exceeds {CLEAR_SKY_CAP_RATIO} x the clean clear sky (Linke "
                f"turbidity {CLEAN_LINKE_TURBIDITY}); some hours were allowed up to the "
                "extraterrestrial irradiance",
                stacklevel=2,
            )
        ghi[sel] = filled

    # --- beam and diffuse (Erbs et al. 1982), closure enforced
    erbs = pvlib.irradiance.erbs(ghi, zenith, doy_utc)
    dni = np.nan_to_num(np.asarray(erbs["dni"], dtype=float), nan=0.0)
    dni = np.where(ghi > 0.0, np.maximum(dni, 0.0), 0.0)
    dhi = ghi - dni * np.maximum(cos_z, 0.0)
    dhi = np.maximum(dhi, 0.0)

    # --- air temperature
    temp = _hourly_temperature(
        solar_hours_since.to_numpy(),
        day_key,
        day_doy,
        k_day,
        kt_month[day_month],
        month,
        temp_in,
        lat,
        year,
        temp_range,
    )
    frame = pd.DataFrame(
        {"ghi": ghi, "dni": dni, "dhi": dhi, "temp_air": temp, "wind_speed": wind_in[month]},
        index=index,
    )
    frame.attrs["warning"] = SYNTHETIC_WEATHER_WARNING
    frame.attrs["interval"] = "start-labelled 1 h intervals; evaluate sun position at +30 min"
    return frame


def _hourly_temperature(
    solar_hours_since, day_key, day_doy, k_day, kt_mean_day, month, temp_in, lat, year, temp_range
):
    """Hourly air temperature [C]; see the Notes of :func:`synthesize_year`."""
    doy_h = day_doy[day_key]
    eot_min = np.asarray(pvlib.solarposition.equation_of_time_spencer71(doy_h), dtype=float)
    solar_hour = np.mod(solar_hours_since + eot_min / 60.0, 24.0)  # apparent solar time [h]
    decl = np.asarray(pvlib.solarposition.declination_spencer71(day_doy), dtype=float)
    sunrise_day = 12.0 - np.degrees(_sunset_hour_angle_rad(lat, decl)) / 15.0  # [h], in [0, 12]

    # daily baseline: monthly means placed mid-month, interpolated periodically
    n_year_days = 365
    mid_doy = np.array(
        [
            pd.Timestamp(year, m, 1).day_of_year - 1 + calendar.monthrange(year, m)[1] / 2.0
            for m in range(1, 13)
        ]
    )
    base_day = np.interp(day_doy - 0.5, mid_doy, temp_in, period=n_year_days)

    factor = np.divide(k_day, kt_mean_day, out=np.ones_like(k_day), where=kt_mean_day > 0.0)
    amplitude_day = 0.5 * temp_range * (0.5 + 0.5 * factor)
    temp = base_day[day_key] + _diurnal_temperature(
        solar_hour, sunrise_day[day_key], amplitude_day[day_key]
    )
    counts = np.bincount(month, minlength=12)
    shift = temp_in - np.bincount(month, weights=temp, minlength=12) / counts
    return temp + shift[month]
