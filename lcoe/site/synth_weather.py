"""Hourly weather year synthesised from twelve monthly climate values.

For screening at sites without an hourly weather file. The year is built in five steps, each a
published method or a stated modelling choice:

1. clear sky: Ineichen & Perez (2002) with the Linke turbidity climatology shipped with pvlib,
   solar position by SPA (Reda & Andreas 2004) at the middle of each hour-long interval;
2. daily clearness index: the generalised distribution of Bendt, Collares-Pereira & Rabl (1981),
   day-to-day persistence through a Gaussian copula with lag-1 autoregression;
3. hourly clearness within each day: the TAG model of Aguiar & Collares-Pereira (1992), a
   mean hourly clearness that rises with the sun plus a Gaussian AR(1) residual, kept below
   the site's clear sky; each day then each month scaled to the input exactly;
4. beam and diffuse parts: DIRINT (Perez et al. 1992) by default, or another of pvlib's
   published decompositions (:data:`DECOMPOSITIONS`); when the monthly mean DNI is given as
   well, each month's beam is scaled to it (diffuse by closure, below physical bounds);
5. air temperature: a two-piece cosine diurnal cycle (minimum at sunrise, maximum at 15 h solar
   time) around the monthly means; wind speed constant within each month.

The result reproduces monthly means, not the year-to-year variability or the extremes of a
real site: see :data:`SYNTHETIC_WEATHER_WARNING`.

How the defaults were chosen (in-sample, said plainly). The published models above were
chosen among alternatives by synthesising a year from each weather file bundled with pvlib
(two TMY3 files, one TMY2; pvlib ships no EPW) from that file's own monthly means and comparing
the synthetic year with the file (``tests/test_synth_weather_bundled.py``,
``benchmarks/bench_synth_weather.py``). No constant was fitted to those files: the TAG, BCR,
DIRINT and Ineichen-Perez constants are the published ones, and the two modelling choices
(clear-sky cap, stratified days) are stated where they act. But the choice of model and cap was
made looking at these three files, so the agreement reported there is in-sample; no held-out
file was available in this environment.
"""

from __future__ import annotations

import calendar
import warnings
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import numpy as np
import pandas as pd
import pvlib

from lcoe.case.errors import field_error
from lcoe.case.monthly import (
    MONTH_NAMES,
    _check_year,
    _scalar,
    _sunset_hour_angle_rad,
    validate_monthly,
)
from lcoe.case.rng import make_rng
from lcoe.site.irradiance import spa_sun
from lcoe.site.synth_clearness import (
    ar1_uniforms,
    match_month,
    stratified_uniforms,
    tag_mean_hourly_clearness,
    tag_residual_parameters,
    tag_residuals,
)

SYNTHETIC_WEATHER_WARNING = (
    "Synthetic weather: this hourly year was generated from 12 monthly means (daily clearness "
    "drawn from the Bendt-Collares-Pereira-Rabl distribution, hourly clearness by the TAG "
    "model, DIRINT decomposition). It reproduces the monthly GHI and temperature means; its "
    "beam is a model estimate unless monthly DNI was given (from GHI alone, monthly DNI "
    "typically within 10 % of a measured year, some months up to about 20 %), and "
    "year-to-year variability and extremes are not represented. Use it for screening, never "
    "for a bankable energy assessment."
)


#: Lag-1 correlation of the Gaussian copula linking consecutive days [-] (from memory: measured
#: lag-1 autocorrelations of daily clearness index are typically 0.2-0.4).
DAY_AUTOCORRELATION = 0.3

#: An hour's GHI stays below the clear sky of the site's climatological Linke turbidity; only a
#: month that cannot reach its mean that way may exceed the clean-atmosphere clear sky (see
#: ``CLEAN_LINKE_TURBIDITY``) by at most this factor [-] (modelling choice).
CLEAR_SKY_CAP_RATIO = 1.1

#: Solar time of the daily temperature maximum [h] (common practice: 14-15 h).
TEMP_MAX_SOLAR_HOUR = 15.0

#: Linke turbidity of a very clean, dry atmosphere [-], used for the cap only (modelling choice:
#: the climatology is a long-term mean and real clear days are often cleaner).
CLEAN_LINKE_TURBIDITY = 2.0


#: Decomposition models offered for beam and diffuse (each a published model in pvlib).
DECOMPOSITIONS = ("erbs", "dirint", "disc", "boland", "orgill_hollands", "erbs_driesse")
DEFAULT_DECOMPOSITION = "dirint"

_HOURS = 8760


def decompose_dni(ghi, zenith, times, pressure_pa, model: str = DEFAULT_DECOMPOSITION):
    """Direct normal irradiance from global horizontal with one of pvlib's decompositions.

    Parameters
    ----------
    ghi : numpy.ndarray
        Global horizontal irradiance, hourly means [W/m2], shape (n,).
    zenith : numpy.ndarray
        True solar zenith at the middle of each hour [deg], shape (n,).
    times : pandas.DatetimeIndex
        Middle of each hour (consecutive hours: DIRINT reads the neighbours).
    pressure_pa : float
        Site air pressure [Pa] (DISC, DIRINT).
    model : str
        One of :data:`DECOMPOSITIONS`.

    Returns
    -------
    numpy.ndarray
        DNI [W/m2], >= 0, zero where GHI is zero.

    References
    ----------
    .. [1] Erbs, D.G., Klein, S.A. and Duffie, J.A. (1982), Solar Energy 28(4), 293-302.
    .. [2] Maxwell, E.L. (1987), A quasi-physical model for converting hourly global
       horizontal to direct normal insolation, SERI/TR-215-3087 (DISC).
    .. [3] Perez, R., Ineichen, P., Maxwell, E.L., Seals, R.D. and Zelenka, A. (1992), Dynamic
       global-to-direct irradiance conversion models, ASHRAE Transactions 98(1), 354-369
       (DIRINT).
    .. [4] Boland, J. and Ridley, B. (2008), Models of diffuse solar fraction, in Badescu, V.
       (ed.), Modeling Solar Radiation at the Earth's Surface, Springer (``boland``).
    .. [5] Orgill, J.F. and Hollands, K.G.T. (1977), Correlation equation for hourly diffuse
       radiation on a horizontal surface, Solar Energy 19(4), 357-359.
    .. [6] Driesse, A., Jensen, A. and Perez, R. (2024), A continuous form of the Perez
       diffuse sky model for forward and reverse transposition, Solar Energy 267 (the smooth
       Erbs variant ``erbs_driesse``).
    """
    if model not in DECOMPOSITIONS:
        raise ValueError(f"decomposition = {model!r}: expected one of {', '.join(DECOMPOSITIONS)}")
    ghi_s = pd.Series(np.asarray(ghi, dtype=float), index=times)
    zen_s = pd.Series(np.asarray(zenith, dtype=float), index=times)
    with np.errstate(divide="ignore", invalid="ignore"), warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*dayofyear is deprecated.*")
        if model == "dirint":
            dni = pvlib.irradiance.dirint(ghi_s, zen_s, times, pressure=pressure_pa)
        elif model == "disc":
            dni = pvlib.irradiance.disc(ghi_s, zen_s, times, pressure=pressure_pa)["dni"]
        else:
            dni = getattr(pvlib.irradiance, model)(ghi_s, zen_s, times)["dni"]
    dni = np.nan_to_num(np.asarray(dni, dtype=float), nan=0.0)
    return np.where(np.asarray(ghi) > 0.0, np.maximum(dni, 0.0), 0.0)


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


def _match_monthly_dni(dni, bounds, month, target_wh, source):
    """Scale each month's hourly DNI to ``target_wh`` (its sum [Wh/m2]) below ``bounds``.

    Hours are scaled by one factor per month; hours that reach their bound stay there and the
    rest of the month takes up what they cannot (:func:`_fill_to_target`). ``bounds`` is a
    sequence of hourly bounds, tightest first: a month takes the first that can hold its
    target. Raises InputError naming ``site.monthly.dni_kwh_m2_day[m]`` when not even the
    last can.
    """
    out = dni.copy()
    for m in range(12):
        sel = month == m
        for bound in bounds:
            filled = _fill_to_target(dni[sel], bound[sel], target_wh[m])
            if filled is not None:
                break
        else:
            days = np.count_nonzero(sel) / 24.0
            reachable = bounds[-1][sel].sum() / days / 1000.0
            raise field_error(
                source,
                f"site.monthly.dni_kwh_m2_day[{m}]",
                float(target_wh[m] / days / 1000.0),
                f"at most {reachable:.3f} kWh/m2/day ({MONTH_NAMES[m]}: more direct normal "
                "than the synthesised hours can hold with beam on horizontal <= GHI and below "
                f"{CLEAR_SKY_CAP_RATIO} x the clean clear sky; check it against "
                f"site.monthly.ghi_kwh_m2_day[{m}])",
            )
        out[sel] = filled
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


def _clear_sky(app_zenith, am_abs, linke, alt, dni_extra, etr_h):
    """Ineichen-Perez clear-sky (GHI, DNI) [W/m2], zero wherever the true sun is down."""
    with np.errstate(divide="ignore", invalid="ignore"):  # night hours divide by cos(90 deg)
        cs = pvlib.clearsky.ineichen(app_zenith, am_abs, linke, altitude=alt, dni_extra=dni_extra)
    up = etr_h > 0.0
    return tuple(np.where(up, np.maximum(np.nan_to_num(np.asarray(cs[k], dtype=float), nan=0.0),
                                         0.0), 0.0) for k in ("ghi", "dni"))


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
    decomposition: str = DEFAULT_DECOMPOSITION,
    source: str = "synthetic weather",
    dni_kwh_m2_day=None,
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
        Required keyword. Randomness for the day sequence, through :func:`lcoe.case.rng.make_rng`;
        the same seed (or a generator in the same state) gives an identical frame.
    year : int
        Non-leap calendar year of the index.
    daily_temp_range_c : float
        Mean difference between daily maximum and minimum air temperature [C].
    day_autocorrelation : float
        Lag-1 correlation of the Gaussian copula linking consecutive days, in [0, 0.95] [-].
    decomposition : str
        Beam/diffuse model, one of :data:`DECOMPOSITIONS` (default ``"dirint"``).
    source : str
        Origin named in error messages.
    dni_kwh_m2_day : sequence of 12 float or None
        Optional monthly mean daily direct normal irradiation [kWh/m2/day]. When given, each
        month's DNI sums to it exactly (see Notes, *Monthly DNI given*); None leaves the beam
        to the decomposition alone.

    Returns
    -------
    pandas.DataFrame
        8760 rows, tz-aware hourly index labelling the START of each hour-long interval (solar
        geometry for an interval belongs at its midpoint, index + 30 min). Columns ``ghi``,
        ``dni``, ``dhi`` [W/m2], ``temp_air`` [C], ``wind_speed`` [m/s]. Each row holds the
        interval mean. ``attrs['warning']`` holds :data:`SYNTHETIC_WEATHER_WARNING`.

    Raises
    ------
    lcoe.case.errors.InputError
        For invalid inputs (see :func:`validate_monthly`), a month whose GHI exceeds the
        extraterrestrial irradiation of its sunlit hours, or a month given more DNI than its
        synthesised hours can hold.

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

    *Days are stratified.* Within each month the copula's uniforms are replaced by their
    mid-rank positions :math:`(r + 1/2)/n` (:func:`stratified_uniforms`; modelling choice): the
    days sample the BCR distribution evenly, in the copula's order, which removes most of the
    month-to-month sampling noise of 30 random draws.

    *Hourly GHI.* Hourly clearness follows TAG (Aguiar & Collares-Pereira 1992):
    :math:`k_{t,h} = k_{tm}(K_d, \\alpha_h) + y_h` with :func:`tag_mean_hourly_clearness` and
    :math:`y` a Gaussian AR(1) residual restarted each day (:func:`tag_residuals`, lag-1
    correlation and standard deviation from :func:`tag_residual_parameters`, constants from
    memory), truncated to :math:`[0, G_{cs,h}/G_{0h}]` (out-of-range innovations drawn again)
    with :math:`G_{cs}` the Ineichen-Perez clear sky of the site's climatological Linke
    turbidity (modelling choice: measured hourly clearness rarely exceeds the clear sky;
    letting hours above it, or piling hours up at it, creates beam that the bundled files do
    not have). Each day is scaled to :math:`K_d H_{0,d}` below the same cap,
    then each calendar month re-scaled, by iterated proportional filling below the caps, so its
    mean daily GHI equals the input (to 1e-10 relative). A month the clear sky cannot reach
    may rise to :math:`\\min(1.1\\,G^{clean}_{cs,h}, G_{0h})`, :math:`G^{clean}_{cs}` the clear
    sky with the Linke turbidity lowered to at most 2; a month even that cannot reach (mostly
    near polar night) is filled up to :math:`G_{0h}`, with a ``UserWarning``.

    *Beam and diffuse.* DIRINT (Perez et al. 1992, through pvlib, with the site's pressure and
    the neighbouring hours' clearness) gives DNI by default; ``decomposition`` chooses another
    of pvlib's models. DNI is bounded by :math:`G_h/\\cos\\theta_z` and DHI is set to
    :math:`G_h - DNI\\cos\\theta_z`, so closure holds exactly.

    *Monthly DNI given* (``dni_kwh_m2_day``). The decomposed hourly DNI of each calendar month
    is multiplied by one factor so the month sums to the input, each hour bounded by
    :math:`\\min((G_h - \\min(G_h, D^{clean}_{cs,h}))/\\cos\\theta_z,\\
    1.1\\,B^{clean}_{cs,h},\\ G_{on})` with :math:`B^{clean}_{cs}` and :math:`D^{clean}_{cs}`
    the Ineichen-Perez clear-sky DNI and DHI at Linke turbidity at most 2 (every hour keeps at
    least a clean clear sky's diffuse); hours that reach their bound stay there and the
    month's other hours take up the rest (the same iterated proportional filling as for GHI).
    Only a month that cannot hold its DNI so drops the diffuse floor, bound then by
    :math:`G_h/\\cos\\theta_z` (DHI down to 0). DHI then follows by closure,
    :math:`D_h = G_h - DNI_h\\cos\\theta_z \\ge 0`, so the hourly GHI, the monthly GHI and
    the temperatures are those of the GHI-only year of the same seed, the day-to-day and
    hour-to-hour pattern of the beam is the decomposition's, and only the month's beam/diffuse
    split changes (modelling choice: a monthly ratio correction of the kind used to adapt
    modelled irradiance to a site's long-term means, common practice). Hours the decomposition
    gave no beam keep none unless no other hour of the month has room. A month whose bounds cannot hold its DNI (more beam than its
    synthesised GHI allows) is refused with an :class:`~lcoe.case.errors.InputError` naming the
    largest value it could take for that seed.

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
    .. [5] Aguiar, R. and Collares-Pereira, M. (1992), TAG: a time-dependent, autoregressive,
       Gaussian model for generating synthetic hourly radiation, Solar Energy 49(3), 167-174.
    .. [6] Duffie, J.A. and Beckman, W.A., Solar Engineering of Thermal Processes, Wiley,
       section 1.10.
    .. [7] Perez, R., Ineichen, P., Maxwell, E.L., Seals, R.D. and Zelenka, A. (1992), Dynamic
       global-to-direct irradiance conversion models, ASHRAE Transactions 98(1), 354-369.
    .. [8] McKay, M.D., Beckman, R.J. and Conover, W.J. (1979), Technometrics 21(2), 239-245.
    """
    alt, temp_range = _check_options(altitude_m, timezone, year, daily_temp_range_c, source)
    ghi_in, temp_in, wind_in, *dni_in = validate_monthly(
        latitude_deg, longitude_deg, ghi_kwh_m2_day, temp_air_c, wind_speed_m_s, year, source,
        dni_kwh_m2_day,
    )
    lat, lon = float(latitude_deg), float(longitude_deg)
    rho = _scalar(day_autocorrelation, "weather.day_autocorrelation", source, 0.0, 0.95, "")
    gen = make_rng(rng)

    index = pd.date_range(pd.Timestamp(f"{year}-01-01", tz=str(timezone)), periods=_HOURS, freq="h")
    mid = index + pd.Timedelta(minutes=30)
    month = index.month.to_numpy() - 1  # calendar month of each interval, local time

    # --- solar geometry and clear sky at mid-interval
    pressure = pvlib.atmosphere.alt2pres(alt)
    sp = spa_sun(mid, lat, lon, alt, 12.0)  # pvlib's standard air; the site's sun shares it
    zenith = sp["zenith"]
    app_zenith = sp["apparent_zenith"]
    doy_utc = mid.tz_convert("UTC").day_of_year.to_numpy()
    dni_extra = np.asarray(pvlib.irradiance.get_extra_radiation(doy_utc), dtype=float)
    cos_z = np.cos(np.radians(zenith))
    etr_h = dni_extra * np.maximum(cos_z, 0.0)
    am_rel = pvlib.atmosphere.get_relative_airmass(app_zenith)
    am_abs = pvlib.atmosphere.get_absolute_airmass(am_rel, pressure)
    with warnings.catch_warnings():  # pvlib reads DatetimeIndex.dayofyear, deprecated in pandas
        warnings.filterwarnings("ignore", message=".*dayofyear is deprecated.*")
        linke = np.asarray(pvlib.clearsky.lookup_linke_turbidity(mid, lat, lon), dtype=float)
    cs_ghi, _ = _clear_sky(app_zenith, am_abs, linke, alt, dni_extra, etr_h)
    clean_linke = np.minimum(linke, CLEAN_LINKE_TURBIDITY)
    clean_ghi, clean_dni = _clear_sky(app_zenith, am_abs, clean_linke, alt, dni_extra, etr_h)
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
        k_day[sel] = match_month(stratified_uniforms(u[sel]), h0_day[sel], kt_month[m])

    # --- hourly GHI: TAG hourly clearness around the day's mean, capped, day then month scaled
    sun_up = etr_h > 0.0
    kt_cap = np.divide(cap, etr_h, out=np.zeros(_HOURS), where=sun_up)
    phi, sigma = tag_residual_parameters(k_day[day_key])
    kt_clear = np.divide(cs_ghi, etr_h, out=np.zeros(_HOURS), where=sun_up)
    ktm = tag_mean_hourly_clearness(k_day[day_key], cos_z)
    resid = np.zeros(_HOURS)
    resid[sun_up] = tag_residuals(day_key[sun_up], phi[sun_up], sigma[sun_up], gen,
                                  -ktm[sun_up], (kt_clear - ktm)[sun_up])
    kt_h = np.clip(ktm + resid, 0.0, kt_clear)
    ghi = kt_h * etr_h
    day_sum = np.bincount(day_key, weights=ghi, minlength=n_days)
    day_scale = np.divide(k_day * h0_day, day_sum, out=np.zeros(n_days), where=day_sum > 0.0)
    ghi = np.minimum(ghi * day_scale[day_key], cs_ghi)
    # a day whose hours all came out zero falls back to the clear-sky shape
    flat = (day_sum <= 0.0) & (cs_day > 0.0)
    cs_scale = np.divide(k_day * h0_day, cs_day, out=np.zeros(n_days), where=flat)
    ghi = np.where(flat[day_key], np.minimum(cs_ghi * cs_scale[day_key], cs_ghi), ghi)
    for m in range(12):
        sel = month == m
        filled = _fill_to_target(ghi[sel], cs_ghi[sel], target_wh[m])
        if filled is None:  # a month clearer than the climatological clear sky: the clean cap
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

    # --- beam and diffuse (one of pvlib's decompositions), closure enforced
    dni = decompose_dni(ghi, zenith, mid, pressure, decomposition)
    dni_room = np.divide(ghi, cos_z, out=np.zeros(_HOURS), where=cos_z > 0.0)
    dni = np.minimum(dni, dni_room)
    if dni_in:  # each month's beam scaled to the given DNI, below GHI/cos z and the clear sky
        dni_cap = np.minimum(CLEAR_SKY_CAP_RATIO * clean_dni, dni_extra)
        # first keep at least the clean clear sky's diffuse in every hour; only a month that
        # cannot hold its DNI so may take hours down to no diffuse at all
        clean_dhi = np.maximum(clean_ghi - clean_dni * np.maximum(cos_z, 0.0), 0.0)
        keep_diffuse = np.divide(np.maximum(ghi - clean_dhi, 0.0), cos_z,
                                 out=np.zeros(_HOURS), where=cos_z > 0.0)
        hard = np.minimum(dni_room, dni_cap)
        dni = _match_monthly_dni(dni, (np.minimum(keep_diffuse, hard), hard), month,
                                 dni_in[0] * days_in_month * 1000.0, source)
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
